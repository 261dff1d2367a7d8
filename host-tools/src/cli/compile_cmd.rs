//! `tidewire compile`, and the shared writers of the commands.
use super::{io_failure, load_and_prepare, Failure};
use crate::compile::{Compiled, ProfileKind};
use crate::emit::{write_image, write_rust_source};
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
        write_rust_source(p, &c.network(), title).map_err(|e| io_failure(p, e))?;
        println!("wrote Rust source {}", p.display());
    }
    Ok(())
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
