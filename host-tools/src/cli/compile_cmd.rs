//! `tidewire compile`, and the shared writers of the commands.
use super::{io_failure, load_and_prepare, Failure};
use crate::compile::{Compiled, ProfileKind};
use crate::emit::{plant_rust_source, switched_junctions, write_atomic, write_image, EmitError};
use crate::plant::Plant;
use std::path::Path;

/// Write the image and/or Rust source of `c`.
pub(crate) fn write_outputs(
    c: &Compiled,
    plant: &Plant,
    file: &Path,
    image: Option<&Path>,
    rust: Option<&Path>,
) -> Result<(), Failure> {
    if let Some(p) = image {
        write_image(p, &c.network()).map_err(|e| io_failure(p, e))?;
        println!("wrote image       {} ({} profile)", p.display(), c.profile.name());
    }
    if let Some(p) = rust {
        let text = plant_source(c, plant, file, p)?;
        write_atomic(p, text.as_bytes()).map_err(|e| io_failure(p, e))?;
        println!("wrote Rust source {} (NETWORK for the generic Solver, and specialised::Plant)", p.display());
    }
    Ok(())
}

/// The `--rust` output: the network as `static`s for the generic solver, then the
/// plant-specialised solver. Nothing is written when the specialised form is refused.
pub(crate) fn plant_source(c: &Compiled, plant: &Plant, file: &Path, out: &Path) -> Result<String, Failure> {
    plant_rust_source(&c.network(), c.profile, &switched_junctions(c), &plant.name)
        .map_err(|e| Failure { code: 2, message: refusal(&e, c, plant, file, out) })
}

/// A refusal of the specialised emitter, located at the plant node of the junction it names
/// where there is one (file:line:column: field), else at the plant file.
fn refusal(e: &EmitError, c: &Compiled, plant: &Plant, file: &Path, out: &Path) -> String {
    let node = match e {
        EmitError::Unsupported { junction: Some(j), .. } => {
            c.node_junction.iter().position(|nj| usize::from(*nj) == *j).and_then(|i| plant.nodes.get(i))
        }
        _ => None,
    };
    let at = match node {
        Some(n) => format!("{}:{}:{}: node.{}", file.display(), n.span.line, n.span.column, n.name),
        None => format!("{}: --rust {}", file.display(), out.display()),
    };
    format!(
        "{at}: {e}\n  hint: `--image` gives an image for the generic solver, which runs every plant the core \
         accepts; no file was written"
    )
}

pub(super) fn run(
    path: &Path,
    image: Option<&Path>,
    rust: Option<&Path>,
    profile: ProfileKind,
) -> Result<i32, Failure> {
    if image.is_none() && rust.is_none() {
        return Err(Failure { code: 2, message: "error: compile needs --image OUT.bin and/or --rust OUT.rs".into() });
    }
    let named: Vec<(&str, &Path)> =
        [("--image", image), ("--rust", rust)].into_iter().filter_map(|(k, p)| p.map(|p| (k, p))).collect();
    let batch = super::outputs::guard(path, &named)?;
    let (plant, c, _) = load_and_prepare(path, profile)?;
    write_outputs(&c, &plant, path, image, rust)?;
    super::outputs::commit(batch)?;
    Ok(0)
}

/// A progress bar on a terminal (stderr), nothing when piped.
pub(crate) fn progress(total: usize, what: &str) -> indicatif::ProgressBar {
    use std::io::IsTerminal;
    if !std::io::stderr().is_terminal() {
        return indicatif::ProgressBar::hidden();
    }
    let pb = indicatif::ProgressBar::new(total as u64);
    if let Ok(style) =
        indicatif::ProgressStyle::with_template("{msg:>10} [{bar:36}] {pos}/{len} samples, about {eta} left")
    {
        pb.set_style(style.progress_chars("=> "));
    }
    pb.set_message(what.to_string());
    pb
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::analysis::prepare;
    use crate::plant::parse_plant;

    /// Every junction kind of today is emitted, so a refusal cannot come from a plant file
    /// yet; its message is checked here: located at the plant node of the refused junction.
    #[test]
    fn a_refused_junction_is_located_at_its_plant_node() {
        let text = "[plant]\nname = \"t\"\nsample_rate = \"100 MHz\"\nduration = \"1 us\"\n\
                    [node.a]\n[node.far]\nload = \"100 ohm\"\n\
                    [[segment]]\nfrom = \"a\"\nto = \"far\"\ncable = \"cat5e\"\nlength = \"20 m\"\n\
                    [drive]\nkind = \"source\"\nnode = \"a\"\nresistance = \"100 ohm\"\nwaveform = { step = \"1 V\" }\n";
        let plant = parse_plant(text, "t.toml", Path::new(".")).unwrap();
        let c = prepare(&plant, "t.toml", ProfileKind::Wide).unwrap().0;
        let far = c.node_junction[1] as usize;
        let e = EmitError::Unsupported { what: "a test element".into(), junction: Some(far) };
        let m = refusal(&e, &c, &plant, Path::new("t.toml"), Path::new("out.rs"));
        assert!(
            m.starts_with("t.toml:6:7: node.far: the plant-specialised solver does not support a test element"),
            "{m}"
        );
        assert!(m.contains("no file was written"), "{m}");
        // Unlocatable: the plant file and the output named.
        let m = refusal(&EmitError::Host("x".into()), &c, &plant, Path::new("t.toml"), Path::new("out.rs"));
        assert!(m.starts_with("t.toml: --rust out.rs: host failure: x"), "{m}");
    }
}
