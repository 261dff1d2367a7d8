//! `tidewire compile`, and the shared writers of the commands.
use super::{io_failure, load_and_prepare, Failure};
use crate::compile::{Compiled, ProfileKind};
use crate::emit::{plant_rust_source, switched_junctions, write_atomic, write_image, EmitError};
use std::path::Path;

/// Write the image and/or Rust source of `c`.
pub(crate) fn write_outputs(
    c: &Compiled,
    title: &str,
    image: Option<&Path>,
    rust: Option<&Path>,
) -> Result<(), Failure> {
    if let Some(p) = image {
        write_image(p, &c.network()).map_err(|e| io_failure(p, e))?;
        println!("wrote image       {} ({} profile)", p.display(), c.profile.name());
    }
    if let Some(p) = rust {
        let text = plant_source(c, title, p)?;
        write_atomic(p, text.as_bytes()).map_err(|e| io_failure(p, e))?;
        println!("wrote Rust source {} (NETWORK for the generic Solver, and specialised::Plant)", p.display());
    }
    Ok(())
}

/// The `--rust` output: the network as `static`s for the generic solver, then the
/// plant-specialised solver. Nothing is written when the specialised form is refused.
pub(crate) fn plant_source(c: &Compiled, title: &str, out: &Path) -> Result<String, Failure> {
    plant_rust_source(&c.network(), c.profile, &switched_junctions(c), title).map_err(|e| {
        let at = match &e {
            EmitError::Unsupported { junction: Some(j), .. } => format!(" (core junction {j})"),
            _ => String::new(),
        };
        Failure { code: 2, message: format!("error: {}: --rust: {e}{at}; no file written", out.display()) }
    })
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
    write_outputs(&c, &plant.name, image, rust)?;
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
