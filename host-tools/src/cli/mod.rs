//! The `tidewire` command line. Exit codes: 0 success (verify: pass), 1 verify failed,
//! 2 bad input or a failed write (a located message on stderr, nothing half-written).
mod compile_cmd;
mod demo;
mod inspect;
mod simulate;
mod sweep;
mod verify_cmd;

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
    /// Run the fixed-point core on the host over the plant's drive; write probes as CSV.
    Simulate {
        plant: PathBuf,
        /// Samples to run (default: the plant's duration).
        #[arg(long)]
        samples: Option<usize>,
        #[arg(long, value_name = "OUT.csv")]
        csv: PathBuf,
        #[arg(long, value_enum, default_value = "wide")]
        profile: ProfileArg,
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
        #[arg(long, value_enum, default_value = "wide")]
        profile: ProfileArg,
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

/// Run the command line; returns the process exit code.
pub fn main() -> i32 {
    let cli = match Cli::try_parse() {
        Ok(c) => c,
        Err(e) => {
            let _ = e.print();
            return if e.use_stderr() { 2 } else { 0 };
        }
    };
    let r = match cli.command {
        Command::Inspect { plant, profile } => inspect::run(&plant, profile.into()),
        Command::Compile { plant, image, rust, profile } => {
            compile_cmd::run(&plant, image.as_deref(), rust.as_deref(), profile.into())
        }
        Command::Simulate { plant, samples, csv, profile } => simulate::run(&plant, samples, &csv, profile.into()),
        Command::Verify { plant, svg, lattice, csv, profile } => {
            verify_cmd::run(&plant, svg.as_deref(), lattice.as_deref(), csv.as_deref(), profile.into())
        }
        Command::Sweep { plant, segment, node, cable, probe, from, to, steps, svg, profile } => {
            let target = sweep::Target { segment, node, cable };
            sweep::run(&plant, &target, &probe, &from, &to, steps, svg.as_deref(), profile.into())
        }
        Command::Demo { out } => demo::run(&out),
    };
    match r {
        Ok(code) => code,
        Err(f) => {
            eprintln!("{}", f.message);
            f.code
        }
    }
}
