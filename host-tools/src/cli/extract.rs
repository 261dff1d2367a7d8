//! `tidewire extract`: a captured step response in, a plant file (and a picture against
//! distance) out, with the round trip through the exact reference and the core reported.
use super::Failure;
use crate::extract::view::{discontinuities, write_view, View};
use crate::extract::{extract, lossless_cable, read_capture, Options};
use crate::plant::presets;
use crate::plant::units::{parse_quantity, UnitKind};
use std::path::{Path, PathBuf};

/// The command's arguments as given.
#[derive(Debug, clap::Args)]
pub struct ExtractArgs {
    /// The capture: CSV of time (s) and volts at the driven port.
    pub capture: PathBuf,
    /// Resistance of the source behind the EMF, e.g. "50 ohm".
    #[arg(long, value_name = "R")]
    pub source_resistance: String,
    /// The EMF step of the source, e.g. "1 V".
    #[arg(long, value_name = "V")]
    pub emf: String,
    /// Velocity factor of the cable (v/c), e.g. 0.66; or give --cable.
    #[arg(long, value_name = "VF")]
    pub velocity_factor: Option<String>,
    /// A cable preset: its velocity factor and loss are used, and the loss compensated.
    #[arg(long, value_name = "NAME")]
    pub cable: Option<String>,
    /// The plant file to write.
    #[arg(long, value_name = "PLANT.toml")]
    pub out: PathBuf,
    /// Picture: impedance against distance, the capture and the re-simulated response.
    #[arg(long, value_name = "OUT.svg")]
    pub svg: Option<PathBuf>,
    /// 10–90 % rise of the EMF step (default: measured on the capture's first edge).
    #[arg(long, value_name = "TIME")]
    pub rise: Option<String>,
    /// Impedance change that starts a new segment, e.g. "3 %".
    #[arg(long, default_value = "3 %")]
    pub tolerance: String,
}

fn bad(option: &str, msg: impl std::fmt::Display, hint: &str) -> Failure {
    Failure { code: 2, message: format!("error: {option}: {msg}\n  hint: {hint}") }
}

fn quantity(option: &str, text: &str, kind: UnitKind, hint: &str) -> Result<f64, Failure> {
    parse_quantity(text, kind).map_err(|e| bad(option, e, hint))
}

fn options(a: &ExtractArgs) -> Result<Options, Failure> {
    let rs = quantity(
        "--source-resistance",
        &a.source_resistance,
        UnitKind::Resistance,
        "e.g. --source-resistance \"50 ohm\"",
    )?;
    if rs <= 0.0 {
        return Err(bad(
            "--source-resistance",
            format!("must be positive, got \"{}\"", a.source_resistance),
            "e.g. \"50 ohm\"",
        ));
    }
    let emf = quantity("--emf", &a.emf, UnitKind::Voltage, "e.g. --emf \"1 V\"")?;
    if emf == 0.0 {
        return Err(bad("--emf", "the step must not be zero", "give the source's open-circuit step, e.g. \"5 V\""));
    }
    let (cable, preset) = match (&a.cable, &a.velocity_factor) {
        (Some(_), Some(_)) => {
            return Err(bad(
                "--cable",
                "give --cable or --velocity-factor, not both",
                "a preset brings its own velocity factor",
            ))
        }
        (Some(name), None) => match presets::find(name) {
            Some(c) => (c, Some(name.clone())),
            None => {
                return Err(bad(
                    "--cable",
                    format!("no cable preset called \"{name}\""),
                    &format!("one of: {}", presets::NAMES.join(", ")),
                ))
            }
        },
        (None, Some(vf)) => {
            let v = quantity("--velocity-factor", vf, UnitKind::Dimensionless, "e.g. --velocity-factor 0.66")?;
            if !(v > 0.0 && v <= 1.0) {
                return Err(bad(
                    "--velocity-factor",
                    format!("must be in (0, 1], got {vf}"),
                    "e.g. 0.66 for solid PE coax",
                ));
            }
            (lossless_cable(v), None)
        }
        (None, None) => {
            return Err(bad(
                "--velocity-factor",
                "needed to turn echo times into distances",
                "give --velocity-factor 0.66 (say) or --cable <preset>",
            ))
        }
    };
    let rise = match &a.rise {
        Some(r) => {
            let v = quantity("--rise", r, UnitKind::Time, "e.g. --rise \"2 ns\"")?;
            if v < 0.0 {
                return Err(bad(
                    "--rise",
                    format!("must not be negative, got \"{r}\""),
                    "e.g. \"2 ns\", or \"0 s\" for an ideal step",
                ));
            }
            Some(v)
        }
        None => None,
    };
    let tolerance = quantity("--tolerance", &a.tolerance, UnitKind::Fraction, "e.g. --tolerance \"3 %\"")?;
    if !(tolerance > 0.0 && tolerance < 1.0) {
        return Err(bad(
            "--tolerance",
            format!("must be between 0 and 100 %, got \"{}\"", a.tolerance),
            "e.g. \"3 %\"",
        ));
    }
    Ok(Options { rs, emf, cable, preset, rise, tolerance, smooth: None, refine: 12 })
}

fn same_file(a: &Path, b: &Path) -> bool {
    match (a.canonicalize(), b.canonicalize()) {
        (Ok(x), Ok(y)) => x == y,
        _ => a == b,
    }
}

pub(super) fn run(a: &ExtractArgs) -> Result<i32, Failure> {
    let opts = options(a)?;
    let mut outs: Vec<(&str, &Path)> = vec![("--out", a.out.as_path())];
    if let Some(svg) = &a.svg {
        outs.push(("--svg", svg.as_path()));
    }
    super::precheck_outputs(&[a.capture.as_path()], &outs)?;
    for (name, out) in [("--out", Some(&a.out)), ("--svg", a.svg.as_ref())] {
        if let Some(out) = out {
            if same_file(out, &a.capture) {
                return Err(bad(name, "would overwrite the capture", "write the output to another file"));
            }
        }
    }
    let cap = read_capture(&a.capture)?;
    let out_name = a.out.display().to_string();
    let how = vec![
        format!(
            "Extracted by `tidewire extract` from {} ({} samples every {}).",
            cap.file,
            cap.volts.len(),
            crate::extract::plant_out::eng(cap.dt, "s")
        ),
        format!(
            "Source {} behind {}; cable {}.",
            a.emf,
            a.source_resistance,
            match &opts.preset {
                Some(p) => format!("preset {p} (its loss compensated along the profile)"),
                None => format!("lossless, velocity factor {}", opts.cable.velocity / crate::plant::C0),
            }
        ),
        "Method: layer peeling of the reflection response (Bruckstein & Kailath, SIAM Review 29(3), 1987),".into(),
        format!(
            "runs merged at {} tolerance, then runs, load and edge fitted to the whole capture by least squares.",
            a.tolerance
        ),
        "An equivalent line: the device at the port sees the same plant; a branched layout is not recovered.".into(),
    ];
    let x = extract(&cap, &opts, how, &out_name)?;
    let pct = |v: f64| 100.0 * v;
    println!(
        "== extract: {} ==  {} samples every {}",
        cap.file,
        cap.volts.len(),
        crate::extract::plant_out::eng(cap.dt, "s")
    );
    println!(
        "   edge at {} after the first sample, rise {}; offset {:+.4} V removed; noise {:.3} % of the step; smoothing {:.2} samples",
        crate::extract::plant_out::eng(x.refined.delay, "s"),
        crate::extract::plant_out::eng(x.refined.rise, "s"),
        x.edge.offset,
        pct(x.edge.noise / opts.emf.abs()),
        x.smooth
    );
    println!(
        "   profile: {} layers of {} (half a sample's travel); {} runs merged; fit rms {:.3} % -> {:.3} % of the step",
        x.profile.z.len(),
        crate::extract::plant_out::eng(x.profile.layer, "m"),
        x.runs.len(),
        pct(x.refined.rms_before / opts.emf.abs()),
        pct(x.refined.rms_after / opts.emf.abs())
    );
    println!("\n   {:>3}  {:>10}  {:>10}  {:>10}  {:>11}", "run", "from (m)", "to (m)", "length (m)", "impedance");
    for (i, r) in x.lines.iter().enumerate() {
        println!("   {:>3}  {:>10.3}  {:>10.3}  {:>10.3}  {:>9.2} Ω", i + 1, r.start, r.end, r.length(), r.z);
    }
    println!("   end at {:.3} m: {}", x.lines.last().map_or(0.0, |r| r.end), x.load.describe());
    println!("\n   largest discontinuities (distance, impedance before -> after, reflection coefficient):");
    for d in discontinuities(opts.rs, &x.lines, Some(x.load)).iter().take(5) {
        println!("     {:>9.3} m   {:>9.2} Ω -> {:<12}  {:+.3}", d.x, d.z_before, d.after, d.k);
    }
    println!("\n   round trip, driving-point response against the capture (% of the {} step):", a.emf);
    println!(
        "     exact reference   max {:.3} %   rms {:.3} %",
        pct(x.roundtrip.exact_max),
        pct(x.roundtrip.exact_rms)
    );
    match &x.roundtrip.core {
        Ok((_, m, r)) => println!(
            "     core (wide)       max {:.3} %   rms {:.3} %   (includes the core's own model error: delays on the sample grid)",
            pct(*m),
            pct(*r)
        ),
        Err(e) => println!("     core (wide)       not run: {e}"),
    }
    crate::emit::write_atomic(&a.out, x.text.as_bytes()).map_err(|e| super::io_failure(&a.out, e))?;
    println!("\nwrote {}", a.out.display());
    if let Some(svg) = &a.svg {
        let core_v = x.roundtrip.core.as_ref().ok().map(|c| c.0.clone());
        let mut responses: Vec<(&str, &[f64])> =
            vec![("capture (offset removed)", &x.edge.volts), ("extracted plant, exact reference", &x.roundtrip.exact)];
        if let Some(c) = &core_v {
            responses.push(("extracted plant, core", c));
        }
        let title = format!("Impedance against distance: {}", cap.file);
        let view = View {
            title: &title,
            profile: &x.profile,
            rs: opts.rs,
            lines: &x.lines,
            load: Some(x.load),
            runs_label: "extracted plant (runs fitted to the capture)",
            responses,
            dt: cap.dt,
            start: x.refined.delay,
            velocity: opts.cable.velocity,
            readout: 5,
        };
        write_view(svg, &view).map_err(|e| Failure { code: 2, message: format!("error: {e}") })?;
        println!("wrote {}", svg.display());
    }
    Ok(0)
}
