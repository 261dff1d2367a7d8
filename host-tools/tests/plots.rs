//! The SVG writers: well-formed files with the expected labels and traces, decimation that
//! keeps extremes, atomic writes, and a colour map symmetric around zero.
//!
//! The pictures are written under cargo's per-test scratch directory
//! (`target/tmp/plots/`) and left there, so they can be opened and looked at.

use std::fs;
use std::path::{Path, PathBuf};

use tidewire_host::plot::{
    decimate, diverging_level, level_colour, write_lattice, write_sweep, write_waveforms, LatticeMap, PlotError,
    Series, SweepPlot, WaveformPlot, LEVELS,
};

/// Size limit for a picture (the brief's "< ~1.5 MB").
const MAX_SVG_BYTES: usize = 1_500_000;

fn out_dir(test: &str) -> PathBuf {
    let dir = Path::new(env!("CARGO_TARGET_TMPDIR")).join("plots").join(test);
    let _ = fs::remove_dir_all(&dir);
    fs::create_dir_all(&dir).expect("scratch dir");
    dir
}

/// Checks that `svg` is one `<svg>` element whose tags all nest and close, and returns it.
/// (A minimal tag-balance check; enough for the flat markup plotters writes.)
fn well_formed(svg: &str) -> &str {
    assert!(svg.starts_with("<svg"), "does not start with <svg");
    let mut stack: Vec<&str> = Vec::new();
    let mut rest = svg;
    while let Some(open) = rest.find('<') {
        let close = rest[open..].find('>').expect("unterminated tag") + open;
        let tag = &rest[open + 1..close];
        if let Some(name) = tag.strip_prefix('/') {
            assert_eq!(stack.pop(), Some(name.trim()), "mismatched </{name}>");
        } else if !tag.ends_with('/') {
            let name = tag.split_whitespace().next().expect("empty tag");
            stack.push(name);
        }
        assert!(!tag[1..].contains('<'), "a '<' inside a tag: text is not escaped");
        rest = &rest[close + 1..];
        if stack.is_empty() {
            assert!(rest.trim().is_empty(), "content after </svg>");
        }
    }
    assert!(stack.is_empty(), "unclosed tags: {stack:?}");
    svg
}

/// Polylines with more than `min_points` points: the data traces (legend samples, marker
/// lines and zero lines have two points).
fn data_polylines(svg: &str, min_points: usize) -> usize {
    svg.split("<polyline ")
        .skip(1)
        .filter(|tag| {
            let pts = tag.split("points=\"").nth(1).unwrap_or("");
            let pts = &pts[..pts.find('"').unwrap_or(0)];
            pts.split_whitespace().count() > min_points
        })
        .count()
}

fn texts(svg: &str) -> Vec<String> {
    svg.split("<text")
        .skip(1)
        .map(|t| {
            let body = &t[t.find('>').unwrap() + 1..];
            body[..body.find("</text>").unwrap()].trim().to_string()
        })
        .collect()
}

fn has_text(svg: &str, wanted: &str) -> bool {
    texts(svg).iter().any(|t| t == wanted)
}

/// A 10 V step through a 10 ohm source into a 50 ohm line of one-way delay 50 ns ending in
/// 200 ohm, sampled at the load: the bounce-diagram sum [closed form]
/// v_L = v1 (1 + gL) sum_j (gL gS)^j for each arrival at (2j + 1) T, with
/// v1 = E Z0 / (Z0 + Rs), gS = (Rs - Z0)/(Rs + Z0), gL = (RL - Z0)/(RL + Z0),
/// each arrival a 20 ns linear ramp.
fn bounce_step(n: usize, dt: f64) -> Vec<f64> {
    let (e, rs, z0, rl, t1, rise): (f64, f64, f64, f64, f64, f64) = (10.0, 10.0, 50.0, 200.0, 50e-9, 20e-9);
    let (gs, gl) = ((rs - z0) / (rs + z0), (rl - z0) / (rl + z0));
    let v1 = e * z0 / (z0 + rs);
    (0..n)
        .map(|i| {
            let t = i as f64 * dt;
            (0..40)
                .map(|j| {
                    let arrive = (2 * j + 1) as f64 * t1;
                    let ramp = ((t - arrive) / rise).clamp(0.0, 1.0);
                    let step = v1 * (1.0 + gl) * (gl * gs).powi(j);
                    step * ramp
                })
                .sum()
        })
        .collect()
}

/// The "emulated" twin: quantised to `lsb` steps and half a sample late, as a fixed-point
/// delay-line model would be.
fn emulate(reference: &[f64], lsb: f64) -> Vec<f64> {
    (0..reference.len())
        .map(|i| {
            let prev = reference[i.saturating_sub(1)];
            let v = 0.5 * (reference[i] + prev);
            (v / lsb).round() * lsb
        })
        .collect()
}

#[test]
fn waveforms_svg_has_axes_legend_traces_and_error_panel() {
    let dir = out_dir("waveforms");
    let dt = 0.5e-9;
    let reference = bounce_step(2000, dt);
    let emulated = emulate(&reference, 0.01);
    let source_ref: Vec<f64> = reference.iter().map(|v| (10.0 - v) / 10.0 * 0.08).collect();
    let source_emu = emulate(&source_ref, 1e-4);
    let midpoint: Vec<f64> = reference.iter().map(|v| 0.8 * v).collect();
    let plots = [
        WaveformPlot {
            title: "motor terminal",
            dt,
            t0: 0.0,
            unit: "V",
            emulated: Series { label: "emulated", values: &emulated },
            reference: Series { label: "exact reference", values: &reference },
            extra: vec![Series { label: "cable midpoint", values: &midpoint }],
            whole_run_peak: None,
        },
        WaveformPlot {
            title: "drive output current",
            dt,
            t0: 0.0,
            unit: "A",
            emulated: Series { label: "emulated", values: &source_emu },
            reference: Series { label: "exact reference", values: &source_ref },
            extra: vec![],
            whole_run_peak: None,
        },
    ];
    let path = dir.join("bench_step.svg");
    write_waveforms(&path, &plots).expect("write");
    let svg = fs::read_to_string(&path).expect("read back");
    well_formed(&svg);
    // 2000 samples at 0.5 ns end at 999.5 ns: the time unit is ns.
    for label in [
        "time (ns)",
        "voltage (V)",
        "current (mA)",
        "error (mV)",
        "emulated",
        "exact reference",
        "cable midpoint",
        "motor terminal",
        "drive output current",
    ] {
        assert!(has_text(&svg, label), "missing text '{label}' in {:?}", texts(&svg));
    }
    // Probe 1: emulated, reference, midpoint, error; probe 2: emulated, reference, error.
    assert_eq!(data_polylines(&svg, 2), 7);
    // The reference trace and its legend sample are dashed; the emulated one is not.
    assert!(svg.matches("stroke-dasharray=\"8 5\"").count() >= 4);
    assert!(svg.len() < MAX_SVG_BYTES);
}

#[test]
fn waveform_time_unit_follows_the_range() {
    let dir = out_dir("time_units");
    for (dt, unit) in [(5e-9, "time (µs)"), (2.5e-6, "time (ms)")] {
        let v: Vec<f64> = (0..2000).map(|i| (i as f64 * 0.01).sin()).collect();
        let plot = WaveformPlot {
            title: "probe",
            dt,
            t0: 0.0,
            unit: "V",
            emulated: Series { label: "emulated", values: &v },
            reference: Series { label: "reference", values: &v },
            extra: vec![],
            whole_run_peak: None,
        };
        let path = dir.join(format!("unit_{dt}.svg"));
        write_waveforms(&path, &[plot]).expect("write");
        let svg = fs::read_to_string(&path).unwrap();
        // 2000 samples at 5 ns span 10 µs; at 2.5 µs they span 5 ms.
        assert!(has_text(&svg, unit), "expected {unit}");
        // Identical traces: zero error, still a labelled error axis in the base unit.
        assert!(has_text(&svg, "error (V)"));
    }
}

#[test]
fn long_trace_is_decimated_to_a_small_file() {
    let dir = out_dir("long_trace");
    let dt = 0.5e-9;
    let reference = bounce_step(400_000, dt);
    let emulated = emulate(&reference, 0.01);
    let plot = WaveformPlot {
        title: "long record",
        dt,
        t0: 0.0,
        unit: "V",
        emulated: Series { label: "emulated", values: &emulated },
        reference: Series { label: "reference", values: &reference },
        extra: vec![],
        whole_run_peak: None,
    };
    let path = dir.join("long.svg");
    write_waveforms(&path, &[plot]).expect("write");
    let svg = fs::read_to_string(&path).unwrap();
    well_formed(&svg);
    assert!(svg.len() < MAX_SVG_BYTES, "{} bytes", svg.len());
    assert_eq!(data_polylines(&svg, 2), 3);
}

/// A deterministic pseudo-random sequence (64-bit LCG, Knuth's MMIX constants [memory]).
fn noise(n: usize) -> Vec<f64> {
    let mut s: u64 = 0x2545_F491_4F6C_DD1D;
    (0..n)
        .map(|_| {
            s = s.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
            (s >> 11) as f64 / (1u64 << 53) as f64 - 0.5
        })
        .collect()
}

#[test]
fn decimation_keeps_global_min_max_and_ends() {
    let mut v = noise(123_457);
    v[77_777] = 3.0; // a one-sample spike
    v[1_234] = -2.5; // and a one-sample dip
    let dt = 1e-9;
    let pts = decimate(&v, dt, 1000);
    assert!(pts.len() <= 1000 && pts.len() > 900, "{} points", pts.len());
    assert!(pts.contains(&(77_777.0 * dt, 3.0)));
    assert!(pts.contains(&(1_234.0 * dt, -2.5)));
    assert_eq!(pts.first(), Some(&(0.0, v[0])));
    assert_eq!(pts.last(), Some(&(123_456.0 * dt, v[123_456])));
    assert!(pts.windows(2).all(|w| w[1].0 > w[0].0), "times not increasing");
    // Every kept point is a real sample at its own time.
    assert!(pts.iter().all(|&(t, y)| v[(t / dt).round() as usize] == y));
}

#[test]
fn decimation_leaves_short_traces_alone() {
    let v = noise(500);
    let pts = decimate(&v, 2.0, 1000);
    assert_eq!(pts.len(), 500);
    assert!(pts.iter().enumerate().all(|(i, &(t, y))| t == 2.0 * i as f64 && y == v[i]));
}

#[test]
fn write_into_missing_directory_fails_and_leaves_nothing() {
    let dir = out_dir("atomic");
    let missing = dir.join("no_such_dir");
    let path = missing.join("p.svg");
    let v = [0.0, 1.0, 0.5];
    let plot = WaveformPlot {
        title: "t",
        dt: 1e-9,
        t0: 0.0,
        unit: "V",
        emulated: Series { label: "e", values: &v },
        reference: Series { label: "r", values: &v },
        extra: vec![],
        whole_run_peak: None,
    };
    let err = write_waveforms(&path, std::slice::from_ref(&plot)).expect_err("must fail");
    assert!(matches!(err, PlotError::Io { .. }), "{err:?}");
    assert!(err.to_string().contains("no_such_dir/p.svg"), "{err}");
    assert!(!missing.exists());
    // A successful write leaves the picture and no temporary file beside it.
    let ok = dir.join("ok.svg");
    write_waveforms(&ok, &[plot]).expect("write");
    let names: Vec<_> = fs::read_dir(&dir).unwrap().map(|e| e.unwrap().file_name().into_string().unwrap()).collect();
    assert_eq!(names, vec!["ok.svg".to_string()]);
}

#[test]
fn bad_data_is_an_error_naming_series_and_sample() {
    let dir = out_dir("bad_data");
    let good = [0.0, 1.0, 2.0];
    let bad = [0.0, f64::NAN, 2.0];
    let plot = WaveformPlot {
        title: "probe A",
        dt: 1e-9,
        t0: 0.0,
        unit: "V",
        emulated: Series { label: "emulated", values: &bad },
        reference: Series { label: "reference", values: &good },
        extra: vec![],
        whole_run_peak: None,
    };
    let path = dir.join("nan.svg");
    let msg = write_waveforms(&path, &[plot]).expect_err("NaN").to_string();
    assert!(msg.contains("'emulated'") && msg.contains("sample 1") && msg.contains("nan.svg"), "{msg}");
    assert!(!path.exists());

    let rows = vec![vec![0.0, 1.0], vec![0.0]];
    let map = LatticeMap { title: "m", dt: 1e-9, t0: 0.0, positions: &[0.0, 1.0], values: &rows, boundaries: &[] };
    let msg = write_lattice(&dir.join("l.svg"), &map).expect_err("ragged").to_string();
    assert!(msg.contains("row 1 has 1 values, expected 2"), "{msg}");

    let pts = [(0.0, 1.0), (10.0, 2.0)];
    let sweep = SweepPlot {
        title: "s",
        x_label: "length (m)",
        y_label: "peak (V)",
        series: vec![("a", &pts)],
        x_markers: vec![],
        y_markers: vec![],
        log_x: true,
        failed: ("fails", vec![]),
    };
    let msg = write_sweep(&dir.join("s.svg"), &sweep).expect_err("log of 0").to_string();
    assert!(msg.contains("x = 0") && msg.contains("logarithmic"), "{msg}");
}

/// Relative luminance of an sRGB colour (IEC 61966-2-1 transfer, Rec. 709 weights) [memory].
fn luminance((r, g, b): (u8, u8, u8)) -> f64 {
    let lin = |c: u8| {
        let c = c as f64 / 255.0;
        if c <= 0.04045 {
            c / 12.92
        } else {
            ((c + 0.055) / 1.055).powf(2.4)
        }
    };
    0.2126 * lin(r) + 0.7152 * lin(g) + 0.0722 * lin(b)
}

#[test]
fn lattice_colour_map_is_symmetric_around_zero() {
    let vmax = 7.3;
    for i in 0..=1000 {
        let v = vmax * i as f64 / 1000.0;
        assert_eq!(diverging_level(-v, vmax), -diverging_level(v, vmax), "v = {v}");
    }
    assert_eq!(diverging_level(0.0, vmax), 0);
    assert_eq!(diverging_level(vmax, vmax), LEVELS);
    assert_eq!(diverging_level(-2.0 * vmax, vmax), -LEVELS);
    for k in 1..=LEVELS {
        let (pos, neg) = (level_colour(k), level_colour(-k));
        // Equal magnitude, equal strength: luminance matched within 0.01 on a 0..1 scale.
        assert!((luminance(pos) - luminance(neg)).abs() < 0.01, "level {k}: {pos:?} vs {neg:?}");
        // Each side darkens monotonically away from zero.
        assert!(luminance(level_colour(k)) < luminance(level_colour(k - 1)));
        assert!(luminance(level_colour(-k)) < luminance(level_colour(-k + 1)));
        // Positive is the red side, negative the blue side.
        assert!(pos.0 > pos.2 && neg.2 > neg.0, "level {k}: {pos:?} vs {neg:?}");
    }
}

/// A bouncing 600 ns pulse on a 300 m cable, velocity 1.5e8 m/s, driven at x = 0 through a source
/// with reflection coefficient -0.6 and open at 300 m (reflection +1); images
/// [closed form]: v(x, t) = sum_k (gS gL)^k [u(t - (2kL + x)/c) + gL u(t - (2kL + 2L - x)/c)].
fn bouncing_map(nx: usize, nt: usize, dt: f64) -> (Vec<f64>, Vec<Vec<f64>>) {
    let (len, c, gs, gl, amp): (f64, f64, f64, f64, f64) = (300.0, 1.5e8, -0.6, 1.0, 5.0);
    let positions: Vec<f64> = (0..nx).map(|i| len * i as f64 / (nx - 1) as f64).collect();
    let ramp = |t: f64| (t / 40e-9).clamp(0.0, 1.0);
    let u = |t: f64| ramp(t) - ramp(t - 600e-9);
    let values = (0..nt)
        .map(|n| {
            let t = n as f64 * dt;
            positions
                .iter()
                .map(|&x| {
                    (0..12)
                        .map(|k| {
                            let g = (gs * gl).powi(k);
                            let k = k as f64;
                            amp * g * (u(t - (2.0 * k * len + x) / c) + gl * u(t - (2.0 * k * len + 2.0 * len - x) / c))
                        })
                        .sum()
                })
                .collect()
        })
        .collect();
    (positions, values)
}

#[test]
fn lattice_svg_has_axes_colour_bar_and_named_boundaries() {
    let dir = out_dir("lattice");
    let (positions, values) = bouncing_map(601, 1500, 5e-9);
    let boundaries = [(0.0, "drive"), (120.0, "joint A"), (126.0, "joint B"), (300.0, "motor")];
    let map = LatticeMap {
        title: "packaging line: pulse bouncing along the feeder",
        dt: 5e-9,
        t0: 0.0,
        positions: &positions,
        values: &values,
        boundaries: &boundaries,
    };
    let path = dir.join("feeder_lattice.svg");
    write_lattice(&path, &map).expect("write");
    let svg = fs::read_to_string(&path).unwrap();
    well_formed(&svg);
    // 1500 rows at 5 ns span 7.495 µs.
    for label in ["distance (m)", "time (µs)", "voltage (V)", "drive", "joint A", "joint B", "motor", map.title] {
        assert!(has_text(&svg, label), "missing text '{label}'");
    }
    // Colour bar ends: ±max |v|, the first arrival plus its reflection from the open end: 10 V.
    assert!(has_text(&svg, "10") && has_text(&svg, "-10"), "{:?}", texts(&svg));
    // One dashed line per boundary.
    assert_eq!(svg.matches("stroke-dasharray").count(), boundaries.len());
    // Both signs of the map are drawn: the source reflection (-0.6) makes negative waves.
    let fill = |c: (u8, u8, u8)| format!("fill=\"#{:02X}{:02X}{:02X}\"", c.0, c.1, c.2);
    // The colour bar holds each colour once, so a second use is a map cell.
    let in_map = |k: i32| svg.matches(&fill(level_colour(k))).count() >= 2;
    assert!(in_map(LEVELS), "no cell at +10 V");
    assert!((1..=LEVELS).any(|k| in_map(-k)), "no negative cell");
    assert!(svg.len() < MAX_SVG_BYTES, "{} bytes", svg.len());
}

#[test]
fn busy_lattice_is_binned_coarser_to_stay_small() {
    let dir = out_dir("busy_lattice");
    let positions: Vec<f64> = (0..400).map(|i| i as f64).collect();
    let n = noise(400 * 300);
    let values: Vec<Vec<f64>> = n.chunks(400).map(|c| c.to_vec()).collect();
    let map = LatticeMap { title: "noise", dt: 1e-9, t0: 0.0, positions: &positions, values: &values, boundaries: &[] };
    let path = dir.join("noise.svg");
    write_lattice(&path, &map).expect("write");
    let svg = fs::read_to_string(&path).unwrap();
    well_formed(&svg);
    assert!(svg.len() < MAX_SVG_BYTES, "{} bytes", svg.len());
}

/// Peak motor terminal voltage against cable length for a 600 V step with 100 ns rise on a
/// cable of velocity 1.5e8 m/s into a motor with reflection 0.9 [practice]: the peak grows
/// linearly up to the critical length l_c = v t_r / 2 = 7.5 m and saturates at
/// (1 + gL) E beyond it.
fn peak_curve(lengths: &[f64], rise: f64) -> Vec<(f64, f64)> {
    let (e, v, gl) = (600.0, 1.5e8, 0.9);
    lengths.iter().map(|&l| (l, e * (1.0 + gl * (2.0 * l / (v * rise)).min(1.0)))).collect()
}

#[test]
fn sweep_svg_has_series_markers_and_log_axis() {
    let dir = out_dir("sweep");
    let lengths: Vec<f64> = (0..40).map(|i| 10f64.powf(-0.5 + i as f64 * 3.0 / 39.0)).collect();
    let reference = peak_curve(&lengths, 100e-9);
    let emulated: Vec<(f64, f64)> = reference.iter().map(|&(l, v)| (l, v * 0.995 + 2.0)).collect();
    let slower = peak_curve(&lengths, 400e-9);
    for log_x in [true, false] {
        let plot = SweepPlot {
            title: "irrigation pump drive: peak motor voltage against cable length",
            x_label: "cable length (m)",
            y_label: "peak motor voltage (V)",
            series: vec![
                ("emulated", &emulated),
                ("exact reference", &reference),
                ("400 ns rise (reference)", &slower),
            ],
            x_markers: vec![(7.5, "critical length 7.5 m"), (30.0, "critical length at 400 ns")],
            y_markers: vec![(1200.0, "2 × step"), (600.0, "step")],
            log_x,
            failed: ("fails", vec![]),
        };
        let path = dir.join(if log_x { "peak_log.svg" } else { "peak_lin.svg" });
        write_sweep(&path, &plot).expect("write");
        let svg = fs::read_to_string(&path).unwrap();
        well_formed(&svg);
        for label in [
            "cable length (m)",
            "peak motor voltage (V)",
            "emulated",
            "exact reference",
            "400 ns rise (reference)",
            "critical length 7.5 m",
            "critical length at 400 ns",
            "2 × step",
            "step",
            plot.title,
        ] {
            assert!(has_text(&svg, label), "missing text '{label}'");
        }
        assert_eq!(data_polylines(&svg, 2), 3);
        // Point markers: 40 per series.
        assert_eq!(svg.matches("<circle").count(), 120);
        if log_x {
            // Decade ticks of a log axis.
            assert!(has_text(&svg, "1") && has_text(&svg, "10") && has_text(&svg, "100"));
        }
    }
}
