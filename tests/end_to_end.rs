//! End-to-end checks across both crates: plant file → compiler → image and Rust source →
//! core, and the compiled plant against hand calculation from the cable's nominal values.
use std::path::Path;
use tidewire::core::{image, Solver, Wide};
use tidewire::host::analysis::prepare;
use tidewire::host::compile::ProfileKind;
use tidewire::host::emit::{image_bytes, plant_rust_source, switched_junctions};
use tidewire::host::plant::load_plant;

mod generated {
    include!("generated/bench_rig_wide.rs");
}

fn plant(name: &str) -> (tidewire::host::plant::Plant, String) {
    let p = Path::new(env!("CARGO_MANIFEST_DIR")).join("examples/plants").join(name);
    (load_plant(&p).unwrap(), p.display().to_string())
}

#[test]
fn image_and_rust_source_give_the_same_solver() {
    let (p, file) = plant("bench-rig.toml");
    let c = prepare(&p, &file, ProfileKind::Wide).unwrap().0;
    // The checked-in Rust source is what `tidewire compile --rust` writes today
    // (regenerate with: tidewire compile examples/plants/bench-rig.toml --rust tests/generated/bench_rig_wide.rs).
    let fresh = plant_rust_source(&c.network(), ProfileKind::Wide, &switched_junctions(&c), &p.name).unwrap();
    let checked_in =
        std::fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/generated/bench_rig_wide.rs"))
            .unwrap();
    assert_eq!(fresh, checked_in, "tests/generated/bench_rig_wide.rs is stale");

    // Image round trip: decoding gives back exactly the compiled network.
    let bytes = image_bytes(&c.network());
    let decoded = image::decode::<64, 32>(&bytes).unwrap();
    assert_eq!(decoded.network(), c.network());
    assert_eq!(decoded.network(), generated::NETWORK);

    // Both solvers step identically.
    let mut a: Solver<
        Wide,
        { generated::PORTS },
        { generated::JUNCTIONS },
        { generated::MEMORY },
        { generated::LOSS_ENDS },
    > = Solver::new();
    a.load(&generated::NETWORK).unwrap();
    let mut b: Solver<Wide, 64, 32, 256> = Solver::new();
    b.load_image(&bytes).unwrap();
    let mut x: u32 = 1;
    for _ in 0..3000 {
        x ^= x << 13;
        x ^= x >> 17;
        x ^= x << 5;
        let code = (x >> 16) as i16;
        assert_eq!(a.step(code), b.step(code));
        for k in 0..a.probe_count() {
            assert_eq!(a.probe_raw(k), b.probe_raw(k));
        }
    }
}

#[test]
fn compiled_delays_and_dc_point_match_hand_calculation() {
    // Bench rig: 100 m of CAN-class cable, 5 ns/m and 70 mΩ/m per conductor (ISO 11898-2
    // table, found, quoted in docs/references.md): tau = 500 ns = 50 samples at 100 MHz,
    // loop resistance 2 · 0.07 · 100 = 14 Ω. Device 2 V behind 45 Ω, far end 120 Ω:
    // V_far = 2 · 120 / (45 + 14 + 120) = 1.34078 V [closed form].
    let (p, file) = plant("bench-rig.toml");
    let c = prepare(&p, &file, ProfileKind::Wide).unwrap().0;
    let seg = &c.report.segments[0];
    assert!((seg.tau - 500e-9).abs() < 1e-15);
    let total: u32 = c.segment_pieces[0].iter().map(|pc| c.net.lines[pc.line as usize].delay).sum();
    assert_eq!(total, 50);
    assert!((total as f64 * c.dt - seg.tau).abs() <= seg.error_s.abs() + 1e-15);
    assert!((seg.r_total - 14.0).abs() < 1e-9);
    let run = tidewire::host::host_core::run_core(&c, 6000, &[], &|_| {}).unwrap();
    let far = *run.recording.probes[1].last().unwrap();
    let want = 2.0 * 120.0 / (45.0 + 14.0 + 120.0);
    // Within the ADC quantization of the pin (one code of 5 V / 32768) and 0.1 %.
    assert!((far - want).abs() < 1e-3 * want + 2.0 * c.net.volts_per_code as f64, "far end {far} V, hand {want} V");

    // Packaging line: 60 m of 120 Ω cable at VF 0.66 (RS-485 class [practice]) at 1 GHz:
    // tau = 60 / (0.66 · 299792458) = 303.24 ns = 303.24 samples -> 302 whole samples in
    // the rings and a fractional-delay section of 1.24 samples [closed form], whose
    // quantized coefficients (wide: Q30) leave a timing error below 10⁻⁸ sample.
    let (p, file) = plant("packaging-line.toml");
    let c = prepare(&p, &file, ProfileKind::Wide).unwrap().0;
    let seg = &c.report.segments[0];
    let tau = 60.0 / (0.66 * 299_792_458.0);
    assert!((seg.tau - tau).abs() < 1e-15);
    let total: u32 = c.segment_pieces[0].iter().map(|pc| c.net.lines[pc.line as usize].delay).sum();
    assert_eq!(total, 302);
    let f = seg.fraction.expect("a fractional part");
    assert!((f.wanted - (tau / c.dt - 302.0)).abs() < 1e-9, "fraction {}", f.wanted);
    assert!(seg.error_s.abs() <= 1e-8 * c.dt, "timing error {} s", seg.error_s);
}

#[test]
fn the_core_tests_packaging_line_networks_are_the_compilers_output() {
    // core/tests/packaging_line.rs runs these checked-in sources (the core's tests cannot run
    // the compiler); regenerate with the commands named at the top of that file.
    let (p, file) = plant("packaging-line.toml");
    for (kind, name) in [(ProfileKind::Narrow, "narrow"), (ProfileKind::Wide, "wide")] {
        let c = prepare(&p, &file, kind).unwrap().0;
        let path = Path::new(env!("CARGO_MANIFEST_DIR")).join(format!("core/tests/generated/packaging_line_{name}.rs"));
        let checked_in = std::fs::read_to_string(&path).unwrap();
        assert_eq!(
            plant_rust_source(&c.network(), kind, &switched_junctions(&c), &p.name).unwrap(),
            checked_in,
            "{} is stale",
            path.display()
        );
    }
}
