//! The `tidewire` command line. Exit codes: 0 success (verify: pass), 1 verify failed,
//! 2 bad input or a failed write (a located message on stderr, nothing half-written).
mod compile_cmd;
mod demo;
mod extract;
mod inspect;
mod json;
mod outputs;
mod rate;
mod rig;
mod simulate;
mod sweep;
mod verify_cmd;
mod window;

use crate::analysis::{prepare, Analysis};
use crate::compile::{Compiled, ProfileKind};
use crate::plant::{load_plant, Plant, PlantError};
use clap::{Parser, Subcommand, ValueEnum};
use std::path::{Path, PathBuf};

/// Number profile on the command line.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum ProfileArg {
    /// 32-bit waves, 64-bit sums (Cortex-M4 class).
    Wide,
    /// 16-bit waves, 32-bit sums (Cortex-M0 class).
    Narrow,
}

impl From<ProfileArg> for ProfileKind {
    fn from(p: ProfileArg) -> Self {
        match p {
            ProfileArg::Wide => ProfileKind::Wide,
            ProfileArg::Narrow => ProfileKind::Narrow,
        }
    }
}

#[derive(Debug, Parser)]
#[command(
    name = "tidewire",
    version,
    about = "Emulate cable plants in real time: plant files in, fixed-point configurations out, checked against the physics"
)]
pub struct Cli {
    #[command(subcommand)]
    pub command: Command,
}

#[derive(Debug, Subcommand)]
pub enum Command {
    /// Validate a plant and report timing, reflections, DC point, fixed-point scale, storage.
    Inspect {
        plant: PathBuf,
        /// Also write the report for machines (schema: docs/json-output.md).
        #[arg(long, value_name = "OUT.json")]
        json: Option<PathBuf>,
        #[arg(long, value_enum, default_value = "wide")]
        profile: ProfileArg,
    },
    /// Write the core configuration: a binary image and/or Rust source with a static network.
    Compile {
        plant: PathBuf,
        #[arg(long, value_name = "OUT.bin")]
        image: Option<PathBuf>,
        #[arg(long, value_name = "OUT.rs")]
        rust: Option<PathBuf>,
        #[arg(long, value_enum, default_value = "wide")]
        profile: ProfileArg,
    },
    /// Run the fixed-point core on the host over the plant's drive; stream probes to CSV
    /// and/or a compact run file (docs/run-file.md) as it runs.
    Simulate {
        plant: PathBuf,
        /// Samples to run (default: the plant's duration).
        #[arg(long)]
        samples: Option<u64>,
        #[arg(long, value_name = "OUT.csv")]
        csv: Option<PathBuf>,
        /// The core's probe integers, 4 bytes per value, exact (docs/run-file.md).
        #[arg(long, value_name = "OUT.twrun")]
        bin: Option<PathBuf>,
        #[arg(long, value_enum, default_value = "wide")]
        profile: ProfileArg,
        /// Impedance against distance seen from the probe at the drive (exact reference).
        #[arg(long, value_name = "OUT.svg")]
        profile_svg: Option<PathBuf>,
    },
    /// Compare the core with the exact reference and the f64 twin; judge the tolerances.
    Verify {
        plant: PathBuf,
        #[arg(long, value_name = "OUT.svg")]
        svg: Option<PathBuf>,
        /// Distance-time map of the voltage along the plant's lattice path.
        #[arg(long, value_name = "OUT.svg")]
        lattice: Option<PathBuf>,
        #[arg(long, value_name = "OUT.csv")]
        csv: Option<PathBuf>,
        /// Figures and verdict for machines (schema: docs/json-output.md).
        #[arg(long, value_name = "OUT.json")]
        json: Option<PathBuf>,
        /// Samples to run and compare (default: the plant's duration).
        #[arg(long)]
        samples: Option<u64>,
        /// The part of the run the pictures show, e.g. 10us..40us (figures cover the whole run).
        #[arg(long, value_name = "START..END", value_parser = window::parse)]
        window: Option<window::Window>,
        #[arg(long, value_enum, default_value = "wide")]
        profile: ProfileArg,
        /// Impedance against distance seen from the probe at the drive (exact reference).
        #[arg(long, value_name = "OUT.svg")]
        profile_svg: Option<PathBuf>,
    },
    /// Vary one segment's length and report the peak of one probe (e.g. motor terminal
    /// voltage against cable length).
    Sweep {
        plant: PathBuf,
        /// Vary this segment's length (values in metres: "10 m", "0.2 km").
        #[arg(long, conflicts_with_all = ["node", "cable"])]
        segment: Option<String>,
        /// Vary this node's load as a resistor (values in ohms: "50 ohm", "1 kohm").
        #[arg(long, conflicts_with = "cable")]
        node: Option<String>,
        /// Vary this cable's characteristic impedance (values in ohms).
        #[arg(long)]
        cable: Option<String>,
        #[arg(long)]
        probe: String,
        /// First value, with its unit.
        #[arg(long, default_value = "1 m")]
        from: String,
        /// Last value, with its unit.
        #[arg(long, default_value = "200 m")]
        to: String,
        #[arg(long, default_value_t = 16)]
        steps: usize,
        #[arg(long, value_name = "OUT.svg")]
        svg: Option<PathBuf>,
        #[arg(long, value_enum, default_value = "wide")]
        profile: ProfileArg,
    },
    /// Which sample rate does this plant need (verify against the exact reference on a
    /// ladder of rates), and can a part run it in real time?
    Rate {
        plant: PathBuf,
        /// The part: m0, m4 (the emulated parts) or stm32f407 (the reference board).
        #[arg(long)]
        part: Option<String>,
        /// Lowest rate tried (default: the longest segment is one sample).
        #[arg(long)]
        from: Option<String>,
        /// Highest rate tried (default: four times the plant's rate).
        #[arg(long)]
        to: Option<String>,
        /// The step's form the budget assumes: generic (loads images, a rig) or specialised.
        #[arg(long, value_enum, default_value = "generic")]
        form: crate::rig::parts::Form,
    },
    /// Drive a rig over its control link: load, start, stop, schedule, capture, status.
    Rig(rig::RigArgs),
    /// From a step response captured at the driven port to a plant file (layer peeling),
    /// with the impedance against distance and the round trip checked.
    Extract(extract::ExtractArgs),
    /// The main job on a built-in demo plant: inspect, compile, simulate, verify.
    Demo {
        /// Folder for the files the demo writes.
        #[arg(long, default_value = "tidewire-demo")]
        out: PathBuf,
    },
}

/// A failure with its exit code.
pub struct Failure {
    pub code: i32,
    pub message: String,
}

impl From<PlantError> for Failure {
    fn from(e: PlantError) -> Self {
        Failure { code: e.exit_code(), message: format!("error: {e}") }
    }
}

pub(crate) fn io_failure(path: &Path, e: impl std::fmt::Display) -> Failure {
    Failure { code: 2, message: format!("error: {}: {e}", path.display()) }
}

/// Read the plant file at `path`, compile and analyse it.
pub(crate) fn load_and_prepare(path: &Path, profile: ProfileKind) -> Result<(Plant, Compiled, Analysis), Failure> {
    let plant = load_plant(path)?;
    let file = path.display().to_string();
    let (c, a) = prepare(&plant, &file, profile)?;
    Ok((plant, c, a))
}

/// After `simulate` or `verify` (exit `code`): the view against distance, if asked for.
/// Refuse, before any work, an output that is an input, two outputs on one path, or a target
/// that must not be replaced (a link, a device, a folder, a read-only file): `files`' rules.
pub(crate) fn precheck_outputs(inputs: &[&Path], outputs: &[(&str, &Path)]) -> Result<(), Failure> {
    crate::files::check_outputs(inputs, outputs).map_err(|e| Failure { code: 2, message: format!("error: {e}") })
}

/// The outputs of `simulate` / `verify` named on the command line, with the profile picture.
fn with_profile<'a>(mut outs: Vec<(&'a str, &'a Path)>, svg: Option<&'a Path>) -> Vec<(&'a str, &'a Path)> {
    if let Some(svg) = svg {
        outs.push(("--profile-svg", svg));
    }
    outs
}

fn profile_view(path: &Path, svg: Option<&Path>, code: i32) -> Result<i32, Failure> {
    if let Some(svg) = svg {
        let plant = load_plant(path)?;
        crate::extract::plant_view::write_plant_profile(&plant, &path.display().to_string(), svg)
            .map_err(|e| Failure { code: 2, message: format!("error: {e}") })?;
        println!("wrote {}", svg.display());
    }
    Ok(code)
}

/// Run the command line; returns the process exit code.
pub fn main() -> i32 {
    let cli = match Cli::try_parse() {
        Ok(c) => c,
        Err(e) => {
            let _ = e.print();
            return if e.use_stderr() { 2 } else { 0 };
        }
    };
    // Ctrl-C or a termination signal: delete the temporaries of unfinished outputs (the
    // targets are untouched until the final rename), then exit as an interrupted command.
    let _ = ctrlc::set_handler(|| {
        crate::files::remove_temporaries();
        std::process::exit(130);
    });
    let r = match cli.command {
        Command::Inspect { plant, json, profile } => inspect::run(&plant, json.as_deref(), profile.into()),
        Command::Compile { plant, image, rust, profile } => {
            compile_cmd::run(&plant, image.as_deref(), rust.as_deref(), profile.into())
        }
        Command::Simulate { plant, samples, csv, bin, profile, profile_svg } => {
            let named = [("--csv", csv.as_deref()), ("--bin", bin.as_deref())];
            let outs =
                with_profile(named.into_iter().filter_map(|(n, p)| Some((n, p?))).collect(), profile_svg.as_deref());
            let out = simulate::SimOutputs { csv: csv.as_deref(), bin: bin.as_deref() };
            precheck_outputs(&[plant.as_path()], &outs)
                .and_then(|()| simulate::run(&plant, samples, out, profile.into()))
                .and_then(|c| profile_view(&plant, profile_svg.as_deref(), c))
        }
        Command::Verify { plant, svg, lattice, csv, json, samples, window, profile, profile_svg } => {
            let out = verify_cmd::VerifyOutputs {
                svg: svg.as_deref(),
                lattice: lattice.as_deref(),
                csv: csv.as_deref(),
                json: json.as_deref(),
                window,
            };
            let named = [
                ("--svg", svg.as_deref()),
                ("--lattice", lattice.as_deref()),
                ("--csv", csv.as_deref()),
                ("--json", json.as_deref()),
            ];
            let outs =
                with_profile(named.into_iter().filter_map(|(n, p)| Some((n, p?))).collect(), profile_svg.as_deref());
            precheck_outputs(&[plant.as_path()], &outs)
                .and_then(|()| verify_cmd::run(&plant, out, samples, profile.into()))
                .and_then(|c| profile_view(&plant, profile_svg.as_deref(), c))
        }
        Command::Sweep { plant, segment, node, cable, probe, from, to, steps, svg, profile } => {
            let target = sweep::Target { segment, node, cable };
            sweep::run(&plant, &target, &probe, &from, &to, steps, svg.as_deref(), profile.into())
        }
        Command::Demo { out } => demo::run(&out),
        Command::Rig(args) => rig::run(args),
        Command::Rate { plant, part, from, to, form } => {
            rate::run(&plant, part.as_deref(), from.as_deref(), to.as_deref(), form)
        }
        Command::Extract(args) => extract::run(&args),
    };
    match r {
        Ok(code) => code,
        Err(f) => {
            eprintln!("{}", f.message);
            f.code
        }
    }
}
