//! Bad plant files: every problem is a located error with a hint, never a panic.

use std::path::Path;

use tidewire_host::plant::{load_plant, parse_plant, EventAction, Load, PlantError};

use super::{demo_dir, parse, with_cable, MINIMAL};

fn bad(file: &str) -> PlantError {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/bad_plants").join(file);
    match load_plant(&path) {
        Ok(_) => panic!("{file} must be rejected"),
        Err(e) => e,
    }
}

#[test]
fn bad_plant_files_give_located_errors() {
    // (fixture, line, column, field, words the message must contain). Lines and columns
    // point at the offending value in the fixture text.
    let cases: &[(&str, usize, usize, &str, &str)] = &[
        ("syntax.toml", 3, 18, "plant.name", "invalid basic string"),
        ("negative-length.toml", 15, 10, "segment[a-b].length", "length must be positive, got \"-3 m\""),
        ("zero-length.toml", 15, 10, "segment[a-b].length", "length must be positive"),
        ("zero-impedance.toml", 8, 13, "cable.trunk.impedance", "impedance must be positive"),
        ("negative-impedance.toml", 8, 13, "cable.trunk.impedance", "got \"-50 ohm\""),
        ("velocity-factor-above-one.toml", 9, 19, "cable.trunk.velocity_factor", "(0, 1], got 1.2"),
        ("velocity-factor-zero.toml", 9, 19, "cable.trunk.velocity_factor", "(0, 1], got 0"),
        ("faster-than-light.toml", 9, 9, "cable.trunk.delay", "faster than light"),
        ("unknown-cable.toml", 14, 9, "segment[a-b].cable", "unknown cable \"twisted-pair-150\""),
        ("unknown-node.toml", 13, 6, "segment[a-c].to", "unknown node \"c\""),
        ("dangling-node.toml", 10, 7, "node.spare", "has no segment connected"),
        ("no-drive.toml", 16, 1, "drive", "no [drive] table"),
        ("two-drives.toml", 23, 1, "drive", "duplicate key"),
        ("unknown-drive-kind.toml", 18, 8, "drive.kind", "unknown drive kind \"generator\""),
        ("wrong-unit.toml", 15, 10, "segment[a-b].length", "unit `ohm` is a resistance"),
        ("missing-unit.toml", 15, 10, "segment[a-b].length", "20 has no unit"),
        ("unknown-field.toml", 15, 1, "segment.lenght", "unknown field `lenght`"),
        ("probe-unknown-node.toml", 25, 8, "probe[far end].node", "unknown node \"z\""),
        ("probe-unknown-segment.toml", 24, 11, "probe[1].segment", "unknown segment \"a-c\""),
        ("negative-loss.toml", 12, 35, "cable.trunk.loss[1].attenuation", "cannot be fitted"),
        ("zero-sample-rate.toml", 4, 15, "plant.sample_rate", "sample rate must be positive"),
        ("negative-sample-rate.toml", 4, 15, "plant.sample_rate", "got \"-100 MHz\""),
        ("duplicate-segment.toml", 17, 1, "segment[a-b].name", "duplicate segment name \"a-b\""),
        ("duplicate-probe.toml", 28, 8, "probe[p].name", "duplicate probe name \"p\""),
    ];
    let fixtures = std::fs::read_dir(Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/bad_plants"))
        .unwrap()
        .filter(|e| e.as_ref().unwrap().path().extension().is_some_and(|x| x == "toml"))
        .count();
    assert_eq!(fixtures, cases.len(), "every fixture has a case here");
    for &(file, line, column, field, words) in cases {
        let e = bad(file);
        assert!(e.file.ends_with(file), "{file}: {e}");
        assert_eq!((e.line, e.column), (line, column), "{file}: {e}");
        assert_eq!(e.field, field, "{file}: {e}");
        assert!(e.message.contains(words), "{file}: {e}");
        assert!(!e.hint.is_empty() && !e.hint.contains('\n'), "{file}: {e}");
        assert!(!e.message.contains('\n'), "{file}: {e}");
        assert_eq!(e.exit_code(), 2);
        let shown = e.to_string();
        assert!(shown.contains(&format!(":{line}:{column}: {field}: ")), "{shown}");
        assert!(shown.contains("\n  hint: "), "{shown}");
    }
}

/// Parse `MINIMAL` with one replacement and return the error it must give.
fn bad_edit(from: &str, to: &str) -> PlantError {
    assert!(MINIMAL.contains(from), "test edit does not apply: {from}");
    match parse(&MINIMAL.replacen(from, to, 1)) {
        Ok(_) => panic!("edit {from:?} -> {to:?} must be rejected"),
        Err(e) => e,
    }
}

fn expect(e: &PlantError, field: &str, words: &str) {
    assert_eq!(e.field, field, "{e}");
    assert!(e.message.contains(words), "{e}");
    assert!(e.line > 0 && e.column > 0, "{e}");
}

#[test]
fn more_bad_values_are_caught_where_they_are_written() {
    let e = bad_edit("length = \"2500 mm\"", "length = \"2500 mm\"\nname = \"\"");
    expect(&e, "segment[].name", "empty");
    let e = bad_edit("to = \"b\"", "to = \"a\"");
    expect(&e, "segment[a-a].to", "starts and ends at node \"a\"");
    let e = bad_edit("wiring = \"series\"", "wiring = \"diagonal\"");
    expect(&e, "node.b.load", "\"series\" or \"parallel\"");
    let e =
        bad_edit("load = { resistor = \"120 ohm\", capacitor = \"1 nF\", wiring = \"series\" }", "load = \"0 ohm\"");
    expect(&e, "node.b.load", "write \"short\"");
    let e = bad_edit(
        "load = { resistor = \"120 ohm\", capacitor = \"1 nF\", wiring = \"series\" }",
        "load = { inductor = \"1 uH\" }",
    );
    expect(&e, "node.b.load", "unknown load field `inductor`");
    let e = bad_edit("width = \"0.2 us\", ", "");
    expect(&e, "drive.waveform", "needs a `width`");
    let e = bad_edit("rise = \"5 ns\"", "rise = \"-5 ns\"");
    expect(&e, "drive.waveform.rise", "must not be negative");
    let e = bad_edit("resistance = \"0.05 kohm\"", "resistance = \"0.05 kohm\"\nlatency = 2");
    expect(&e, "drive.latency", "belongs to kind = \"rig\"");
    let e = bad_edit("resistance = \"0.05 kohm\"\n", "");
    expect(&e, "drive", "needs `resistance`");
    let e = bad_edit("end = \"to\"", "end = \"middle\"");
    expect(&e, "probe[2].end", "unknown end \"middle\"");
    let e = bad_edit("end = \"to\"\n", "");
    expect(&e, "probe[2].end", "needs `end");
    let e = bad_edit("[[probe]]\nnode = \"b\"", "[[probe]]\nnode = \"b\"\nsegment = \"a-b\"");
    expect(&e, "probe[1]", "exactly one of `node` or `segment`");
    let e = bad_edit("duration = \"5 us\"", "duration = \"5 m\"");
    expect(&e, "plant.duration", "expects a time in s");
    let e = bad_edit("duration = \"5 us\"", "duration = \"5 s\"");
    expect(&e, "plant.duration", "samples at the sample rate");
    let e = bad_edit("cable = \"twisted-pair-120\"", "cable = \"c\"");
    expect(&e, "segment[a-b].cable", "unknown cable \"c\"");
}

#[test]
fn bad_cables_rigs_events_and_lattices() {
    let e = parse(&with_cable("impedance = \"100 ohm\"\nvelocity_factor = 0.7\ndelay = \"5 ns/m\"")).unwrap_err();
    expect(&e, "cable.c.velocity_factor", "more than one way");
    let e = parse(&with_cable("impedance = \"100 ohm\"")).unwrap_err();
    expect(&e, "cable.c.velocity_factor", "no propagation speed");
    let e = parse(&with_cable("velocity_factor = 0.7")).unwrap_err();
    expect(&e, "cable.c.impedance", "no impedance");
    let e = parse(&with_cable("impedance = \"1 ohm\"\ninductance = \"1 uH/m\"\ncapacitance = \"1 pF/m\"")).unwrap_err();
    expect(&e, "cable.c.impedance", "over-determines");
    let e = parse(&with_cable("inductance = \"600 nH/m\"")).unwrap_err();
    expect(&e, "cable.c.capacitance", "must be given together");
    let e = parse(&with_cable("preset = \"cat7\"")).unwrap_err();
    expect(&e, "cable.c.preset", "unknown preset \"cat7\"");
    let e = parse(&with_cable("preset = \"cat5e\"\nresistance = \"-1 ohm/m\"")).unwrap_err();
    expect(&e, "cable.c.resistance", "must not be negative");
    let e =
        parse(&with_cable("preset = \"cat5e\"\nloss = [ { at = \"0 Hz\", attenuation = \"1 dB/m\" } ]")).unwrap_err();
    expect(&e, "cable.c.loss[0].at", "cannot be fitted");
    let e =
        parse(&with_cable("preset = \"cat5e\"\nloss = [ { at = \"1 MHz\", attenuation = \"1 dB\" } ]")).unwrap_err();
    expect(&e, "cable.c.loss[0].attenuation", "unknown unit `dB`");

    let rig = |extra: &str| {
        MINIMAL.replace(
            "kind = \"source\"\nnode = \"a\"\nresistance = \"0.05 kohm\"\n\
             waveform = { pulse = \"3.3 V\", width = \"0.2 us\", rise = \"5 ns\", delay = \"0 s\" }",
            &format!(
                "kind = \"rig\"\nnode = \"a\"\nreference = \"120 ohm\"\nadc_full_scale = \"5 V\"\n\
                 dac_full_scale = \"10 V\"\nstimulus = {{ step = \"1 V\" }}\n\
                 device_resistance = \"10 ohm\"\n{extra}"
            ),
        )
    };
    assert!(parse(&rig("latency = 2")).is_ok());
    expect(&parse(&rig("latency = 2.5")).unwrap_err(), "drive.latency", "whole number");
    expect(&parse(&rig("latency = \"2 ns\"")).unwrap_err(), "drive.latency", "plain number");
    expect(&parse(&rig("")).unwrap_err(), "drive", "needs `latency`");
    let e = parse(&rig("latency = 2\nwaveform = { step = \"1 V\" }")).unwrap_err();
    expect(&e, "drive.waveform", "belongs to kind = \"source\"");

    let events = |ev: &str| MINIMAL.to_string() + "\n[[event]]\n" + ev;
    let p = parse(&events("at = \"1 us\"\nnode = \"b\"\nload = \"short\"")).unwrap();
    assert_eq!(p.events[0].action, EventAction::SetLoad(1, Load::Short));
    let e = parse(&events("at = \"1 us\"\nsegment = \"a-b\"\nbreak_at = \"3 m\"")).unwrap_err();
    expect(&e, "event[1].break_at", "not inside segment \"a-b\"");
    let e = parse(&events("at = \"-1 us\"\nnode = \"b\"\nload = \"open\"")).unwrap_err();
    expect(&e, "event[1].at", "must not be negative");
    let e = parse(&events("at = \"1 us\"\nnode = \"b\"")).unwrap_err();
    expect(&e, "event[1]", "either `node` + `load`");

    let two = MINIMAL.replace(
        "[[segment]]",
        "[node.c]\n\n[[segment]]\nfrom = \"b\"\nto = \"c\"\ncable = \"cat5e\"\nlength = \"5 m\"\n\n[[segment]]",
    );
    let p = parse(&(two.clone() + "\n[lattice]\npath = [\"a-b\", \"b-c\"]")).unwrap();
    assert_eq!(p.lattice_path, vec![1, 0]);
    let e = parse(&(two.clone() + "\n[lattice]\npath = [\"a-b\", \"nope\"]")).unwrap_err();
    expect(&e, "lattice.path[1]", "unknown segment \"nope\"");
    let e = parse(&(two.clone() + "\n[lattice]\npath = []")).unwrap_err();
    expect(&e, "lattice.path", "empty");
    let island = two.replace("[node.c]", "[node.c]\n[node.d]\n[node.e]")
        + "\n[[segment]]\nfrom = \"d\"\nto = \"e\"\ncable = \"cat5e\"\nlength = \"5 m\"\n";
    expect(&parse(&island).unwrap_err(), "node.d", "not connected to the drive node \"a\"");
    let e = parse(&(two + "\n[verify]\nmax_error = \"150 %\"")).unwrap_err();
    expect(&e, "verify.max_error", "more than 100 %");
}

#[test]
fn a_broken_lattice_walk_is_rejected() {
    // a - b - c plus a branch b - d: the walk a-b, b-c, b-d jumps back to b.
    let text = MINIMAL.replace(
        "[[segment]]",
        "[node.c]\n[node.d]\n\n[[segment]]\nfrom = \"b\"\nto = \"c\"\ncable = \"cat5e\"\nlength = \"5 m\"\n\n\
         [[segment]]\nfrom = \"b\"\nto = \"d\"\ncable = \"cat5e\"\nlength = \"5 m\"\n\n[[segment]]",
    ) + "\n[lattice]\npath = [\"a-b\", \"b-c\", \"b-d\"]";
    let e = parse(&text).unwrap_err();
    expect(&e, "lattice.path[2]", "does not start at node \"c\"");
}

#[test]
fn no_prefix_of_a_plant_file_panics() {
    // Truncating a valid file at every character, and swapping bytes at many places, must
    // always give Ok or a located error; a panic fails the test.
    let text = std::fs::read_to_string(demo_dir().join("irrigation-network.toml")).unwrap();
    let mut cut = 0;
    for (i, _) in text.char_indices() {
        if let Err(e) = parse_plant(&text[..i], "cut.toml", Path::new(".")) {
            assert!(e.line > 0, "{e}");
            cut += 1;
        }
    }
    assert!(cut > 0);
    // Deterministic byte edits (a small linear congruential generator, no timing).
    let mut seed: u64 = 0x5eed;
    let noise = b"=[]{}\"\n-0.,#x ";
    for _ in 0..3000 {
        seed = seed.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
        let mut bytes = text.clone().into_bytes();
        let at = (seed >> 33) as usize % bytes.len();
        bytes[at] = noise[(seed >> 20) as usize % noise.len()];
        if let Ok(t) = String::from_utf8(bytes) {
            let _ = parse_plant(&t, "noise.toml", Path::new("."));
        }
    }
}
