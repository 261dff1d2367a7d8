//! `tidewire demo`: the main job on a built-in demo plant.
use super::compile_cmd::write_outputs;
use super::inspect::report_text;
use super::verify_cmd::{verdict_text, verify_and_write};
use super::{io_failure, Failure};
use crate::analysis::prepare;
use crate::compile::ProfileKind;
use crate::plant::parse_plant;
use std::path::Path;

/// The built-in demo plant: a packaging-line fieldbus with a missing far-end terminator.
pub const DEMO_PLANT: &str = include_str!("../../../examples/plants/packaging-line.toml");
/// The second built-in plant: a motor drive on a long cable, swept over cable length.
pub const MOTOR_PLANT: &str = include_str!("../../../examples/plants/drive-to-motor.toml");
const DEMO_NAME: &str = "packaging-line.toml";
const MOTOR_NAME: &str = "drive-to-motor.toml";

/// The demo's plant files may be edited by the user after a run: a rerun rewrites its
/// outputs, but a plant file that differs from the built-in one is first moved aside to
/// `NAME.edited` (or `NAME.edited.N`, the first free), so no edit is lost.
fn keep_edited(path: &Path, builtin: &str) -> Result<(), Failure> {
    match std::fs::read(path) {
        Ok(bytes) if bytes != builtin.as_bytes() => {
            let name = path.file_name().map(|n| n.to_string_lossy().into_owned()).unwrap_or_default();
            let aside = (0..1000)
                .map(|k| {
                    path.with_file_name(if k == 0 { format!("{name}.edited") } else { format!("{name}.edited.{k}") })
                })
                .find(|p| std::fs::symlink_metadata(p).is_err())
                .ok_or_else(|| io_failure(path, "no free name to keep the edited copy under"))?;
            std::fs::rename(path, &aside).map_err(|e| io_failure(path, e))?;
            println!("kept your edited {} as {}", path.display(), aside.display());
            Ok(())
        }
        _ => Ok(()),
    }
}

pub(super) fn run(out: &Path) -> Result<i32, Failure> {
    if out.exists() && !out.is_dir() {
        return Err(Failure {
            code: 2,
            message: format!(
                "error: {}: exists and is not a folder; the demo writes its files into a folder (give another --out)",
                out.display()
            ),
        });
    }
    keep_edited(&out.join(DEMO_NAME), DEMO_PLANT)?;
    keep_edited(&out.join(MOTOR_NAME), MOTOR_PLANT)?;
    std::fs::create_dir_all(out).map_err(|e| io_failure(out, e))?;
    let plant_path = out.join(DEMO_NAME);
    crate::emit::write_atomic(&plant_path, DEMO_PLANT.as_bytes()).map_err(|e| io_failure(&plant_path, e))?;
    let file = plant_path.display().to_string();
    let plant = parse_plant(DEMO_PLANT, &file, out)?;
    println!("tidewire demo: the built-in plant \"{}\", written to {}\n", plant.name, plant_path.display());

    let (c, a) = prepare(&plant, &file, ProfileKind::Wide)?;
    print!("{}", report_text(&plant, &c, &a, &file));
    println!();
    write_outputs(&c, &plant, &plant_path, Some(&out.join("plant-wide.bin")), Some(&out.join("plant-wide.rs")))?;
    let (narrow, _) = prepare(&plant, &file, ProfileKind::Narrow)?;
    write_outputs(&narrow, &plant, &plant_path, Some(&out.join("plant-narrow.bin")), None)?;

    let csv = out.join("simulate.csv");
    let r = crate::host_core::run_core(&c, c.samples, &[], &|_| {})
        .map_err(|e| Failure { code: 2, message: format!("error: {e}") })?;
    let bytes = super::simulate::probes_csv(&c.probe_names, c.dt, &[("", &r.recording.probes)])
        .map_err(|e| io_failure(&csv, e))?;
    crate::emit::write_atomic(&csv, &bytes).map_err(|e| io_failure(&csv, e))?;
    println!("wrote simulation  {} ({} samples, fixed-point core)", csv.display(), c.samples);

    let (svg, lat, vcsv) = (out.join("verify-waveforms.svg"), out.join("verify-lattice.svg"), out.join("verify.csv"));
    let v = verify_and_write(&plant, &c, &file, Some(&svg), Some(&lat), Some(&vcsv), None)?;
    println!("wrote pictures    {} and {}", svg.display(), lat.display());
    println!("wrote comparison  {}\n", vcsv.display());
    print!("{}", verdict_text(&plant, &c, &v));

    // The drive-to-motor plant: peak motor terminal voltage against cable length.
    let motor_path = out.join(MOTOR_NAME);
    crate::emit::write_atomic(&motor_path, MOTOR_PLANT.as_bytes()).map_err(|e| io_failure(&motor_path, e))?;
    println!("\n!! {}", super::inspect::CAUTION);
    let sweep_svg = out.join("motor-sweep.svg");
    let target = super::sweep::Target { segment: Some("motor-feed".into()), node: None, cable: None };
    super::sweep::run(
        &motor_path,
        &target,
        "motor terminals",
        "1 m",
        "200 m",
        16,
        Some(&sweep_svg),
        ProfileKind::Wide,
    )?;
    Ok(if super::verify_cmd::run_pass(&plant, &v) { 0 } else { 1 })
}
