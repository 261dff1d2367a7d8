//! Plant files: a TOML description of a cable plant, written for people, read into [`Plant`].
//!
//! Every dimensioned value is a string with its unit (see [`crate::plant::units`]); a value
//! whose unit does not fit its field, a misspelt key, or an impossible value is a
//! [`PlantError`] with file, line, column, field path and a fix hint. The full reference,
//! with examples, is `docs/plant-files.md`. Outline:
//!
//! ```toml
//! [plant]
//! name = "Packaging line fieldbus"
//! sample_rate = "200 MHz"          # emulation rate, > 0
//! duration = "20 us"               # default run length for simulate/verify, > 0
//! notes = ["free text shown by inspect"]
//! characteristic_impedance = "fitted"  # lossy cable: "fitted" Zc(s) networks (default) or
//!                                  # "constant" port impedance (a core built without zc-check)
//!
//! [cable.trunk]                    # a named cable type
//! preset = "twisted-pair-120"      # optional: start from a built-in preset, then override
//! impedance = "120 ohm"            # > 0
//! velocity_factor = 0.66           # in (0, 1]; OR delay = "5 ns/m";
//!                                  # OR inductance = "600 nH/m" + capacitance = "42 pF/m"
//! resistance = "70 mohm/m"         # DC loop resistance (both conductors), >= 0
//! loss = [ { at = "10 MHz", attenuation = "6.5 dB/100m" } ]   # fitted to k_c·√f + k_d·f
//! # OR loss_coefficients = { conductor = "2e-6 Np/(m*sqrt(Hz))", dielectric = "1e-11 Np/(m*Hz)" }
//!
//! [node.plc]                       # every node is declared; default load "open"
//! load = "open"                    # "open" | "short" | "120 ohm" | { capacitor = "47 pF" }
//!                                  # | { resistor = "120 ohm", capacitor = "1 nF", wiring = "series" | "parallel" }
//! [[segment]]
//! name = "plc-tap1"                # optional, default "<from>-<to>"; unique
//! from = "plc"
//! to = "tap1"
//! cable = "trunk"                  # a [cable.x] name, or a preset name directly
//! length = "23 m"                  # > 0
//!
//! [drive]                          # exactly one
//! kind = "source"                  # EMF behind a resistance
//! node = "plc"
//! resistance = "50 ohm"
//! waveform = { step = "5 V", rise = "10 ns", delay = "100 ns" }
//! # or { pulse = "5 V", width = "200 ns", rise = "5 ns" } or { samples = "stim.csv" }
//! # kind = "rig": node, reference, adc_full_scale, dac_full_scale, latency (samples),
//! #               stimulus = { ..waveform.. }, device_resistance
//!
//! [[probe]]
//! name = "at plc"                  # optional, default the node (or segment) name; unique
//! node = "plc"                     # a voltage, OR segment = "plc-tap1", end = "from" | "to"
//!
//! [verify]                         # optional; fractions of the drive step, "%" allowed
//! max_error = "5 %"
//! rms_error = "1 %"
//! final_error = "0.2 %"
//! arrival = "1 sample"             # or a time
//!
//! [[event]]                        # optional scheduled changes, sorted by `at`
//! at = "2 us"
//! node = "tap3"
//! load = "open"                    # OR segment = "tap2-tap3", break_at = "12 m"
//!
//! [lattice]                        # optional; default: longest path from the drive node
//! path = ["plc-tap1", "tap1-tap2"]
//! ```
//!
//! Checks beyond the shape of each value: every node has a segment and is reachable from
//! the drive node; names are unique; a cable's speed does not exceed light; a segment joins
//! two different nodes; the lattice path is a connected walk; an event's break lies inside
//! its segment. Samples files hold one value in volts per line, an optional header first, or
//! are the CSV that `tidewire simulate` writes (time, then volts).

mod cables;
mod drive;
mod events;
mod locate;
pub mod loss;
mod probes;
mod raw;
mod tolerances;
mod topology;
mod values;

use std::path::Path;

pub use loss::fit_loss;

use crate::plant::error::PlantError;
use crate::plant::model::Plant;
use crate::plant::units::UnitKind;
use locate::Source;
use raw::RawFile;

/// The longest default run the reader accepts, in samples (keeps later buffers sane).
const MAX_RUN_SAMPLES: f64 = 1e8;

/// Largest plant file read: 16 MiB is about a hundred times a 1500-segment plant; checked
/// before and while reading, so a device such as `/dev/zero` or a huge file cannot exhaust
/// memory.
pub const MAX_PLANT_FILE: u64 = 16 << 20;

/// Read and check the plant file at `path`; a samples file is looked up beside it.
pub fn load_plant(path: &Path) -> Result<Plant, PlantError> {
    let file = path.display().to_string();
    let text = read_plant_text(path)?;
    let base = path.parent().unwrap_or_else(|| Path::new("."));
    parse_plant(&text, &file, base)
}

/// The text of the plant file at `path`: at most [`MAX_PLANT_FILE`] bytes of UTF-8. A file
/// that is not UTF-8 is refused at the line and column of its first bad byte.
pub fn read_plant_text(path: &Path) -> Result<String, PlantError> {
    use std::io::Read;
    let file = path.display().to_string();
    let whole = |line: usize, column: usize, message: String, hint: &str| PlantError {
        file: file.clone(),
        line,
        column,
        field: String::new(),
        message,
        hint: hint.into(),
    };
    let unreadable = |e: std::io::Error| {
        whole(0, 0, format!("cannot read the plant file: {e}"), "check the path and that the file is readable")
    };
    let too_big = |len: String| {
        whole(
            0,
            0,
            format!("the plant file is {len} bytes, more than the limit of {MAX_PLANT_FILE}"),
            "a plant file is TOML text written by people; check that this is the plant file",
        )
    };
    let meta = std::fs::metadata(path).map_err(unreadable)?;
    if meta.is_dir() {
        return Err(whole(0, 0, "this is a folder, not a plant file".into(), "give the path of a .toml plant file"));
    }
    if meta.is_file() && meta.len() > MAX_PLANT_FILE {
        return Err(too_big(meta.len().to_string()));
    }
    let mut bytes = Vec::new();
    // `take` also bounds a device, a pipe or a file that grows while it is read.
    std::fs::File::open(path).and_then(|f| f.take(MAX_PLANT_FILE + 1).read_to_end(&mut bytes)).map_err(unreadable)?;
    if bytes.len() as u64 > MAX_PLANT_FILE {
        return Err(too_big(format!("at least {}", bytes.len())));
    }
    crate::files::utf8_text(bytes).map_err(|e| {
        whole(
            e.line,
            e.column,
            format!(
                "the plant file is not UTF-8 text: byte 0x{:02x} at offset {} is not a valid character",
                e.byte, e.offset
            ),
            "save the file as UTF-8 (a plant file is TOML, which is always UTF-8)",
        )
    })
}

/// Read and check plant-file `text`; `file_name` names it in errors, `base_dir` is where
/// relative paths (samples files) are resolved.
pub fn parse_plant(text: &str, file_name: &str, base_dir: &Path) -> Result<Plant, PlantError> {
    let src = Source { text, file: file_name };
    // serde_path_to_error records the field path the deserializer was in when it failed.
    let raw: RawFile =
        serde_path_to_error::deserialize(toml::Deserializer::new(text)).map_err(|e| src.toml_error(e))?;

    let header = raw.plant.get_ref();
    let sample_rate =
        values::positive(&src, &header.sample_rate, UnitKind::Frequency, "plant.sample_rate", "sample rate")?;
    let duration = values::positive(&src, &header.duration, UnitKind::Time, "plant.duration", "duration")?;
    if duration * sample_rate > MAX_RUN_SAMPLES {
        return Err(src.error(
            header.duration.span(),
            "plant.duration",
            format!(
                "duration {} is {:.3e} samples at the sample rate, more than {MAX_RUN_SAMPLES:.0e}",
                values::written(&header.duration),
                duration * sample_rate
            ),
            "shorten the duration or lower the sample rate",
        ));
    }

    let zc_networks = match header.characteristic_impedance.as_ref() {
        None => true,
        Some(t) if t.get_ref() == "fitted" => true,
        Some(t) if t.get_ref() == "constant" => false,
        Some(t) => {
            return Err(src.error(
                t.span(),
                "plant.characteristic_impedance",
                format!("unknown choice \"{}\"", t.get_ref()),
                "write \"fitted\" (Zc(s) networks on lossy cable runs, the default) or \"constant\" (a constant port impedance, for a core built without its zc-check feature)",
            ))
        }
    };

    let mut cables = cables::Cables::read(&src, &raw.cable)?;
    let topo = topology::Topology::read(&src, &raw.node, &raw.segment, &mut cables)?;

    let Some(raw_drive) = &raw.drive else {
        let end = text.len();
        return Err(src.error(
            end..end,
            "drive",
            "the plant has no [drive] table",
            "add [drive] with kind = \"source\" (or \"rig\"), node, and its waveform",
        ));
    };
    let drive = drive::drive(&src, raw_drive, &topo, base_dir, sample_rate)?;
    let drive_node = match &drive {
        crate::plant::model::Drive::Source { node, .. } | crate::plant::model::Drive::Rig { node, .. } => *node,
    };
    topo.check_reachable(&src, drive_node)?;
    let probes = probes::probes(&src, &raw.probe, &topo)?;
    let tolerances = tolerances::tolerances(&src, raw.verify.as_ref(), sample_rate)?;
    let events = events::events(&src, &raw.event, &topo)?;
    let lattice_path = topo.lattice_path(&src, raw.lattice.as_ref(), drive_node)?;

    Ok(Plant {
        name: header.name.get_ref().clone(),
        notes: header.notes.clone(),
        sample_rate,
        duration,
        zc_networks,
        cables: cables.list,
        nodes: topo.nodes,
        segments: topo.segments,
        drive,
        probes,
        tolerances,
        events,
        lattice_path,
    })
}
