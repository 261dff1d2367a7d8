//! Limits before work: a plant too big for the host runner is refused from a layout of the
//! network (line ends, junctions, delay storage, loss records) before any loss filter is
//! fitted, with an error located at the segment where the capacity runs out and a hint
//! naming a sample rate at which the plant does fit (tried here); `simulate --samples` is
//! checked from the plant file before the plant is compiled.
//!
//! The plants are generated here (our own scenario: a long daisy chain of Category 5e
//! patch runs, 1 to 6 m each). Nothing here is timed: that the fits were skipped is shown
//! by the compiler's own count of fits run on this thread.
use assert_cmd::Command;
use std::path::Path;
use tidewire_host::analysis::{prepare, sense};
use tidewire_host::compile::{loss::fits_run_on_this_thread, ProfileKind};
use tidewire_host::plant::{parse_plant, Plant, PlantError};

/// A chain of `n` Cat 5e runs at `rate`, lengths spread over 1..6 m (a fixed sequence, so
/// that many different lengths, and with them many loss-fit grid lengths, occur).
fn chain(n: usize, rate: &str) -> String {
    let mut s = format!("[plant]\nname = \"patch chain of {n}\"\nsample_rate = \"{rate}\"\nduration = \"2 us\"\n\n");
    for k in 0..=n {
        s += &format!("[node.n{k}]\n");
    }
    s += "load = \"100 ohm\"\n";
    for k in 1..=n {
        // 1 m + a spread of 5 m in 997 steps (997 is prime: the steps do not repeat soon).
        let length = 1.0 + 5.0 * ((k * 389) % 997) as f64 / 996.0;
        s += &format!(
            "\n[[segment]]\nname = \"run{k}\"\nfrom = \"n{}\"\nto = \"n{k}\"\ncable = \"cat5e\"\nlength = \"{length:.3} m\"\n",
            k - 1
        );
    }
    s += "\n[drive]\nkind = \"source\"\nnode = \"n0\"\nresistance = \"100 ohm\"\n\
          waveform = { step = \"1 V\", rise = \"20 ns\", delay = \"50 ns\" }\n\n\
          [[probe]]\nname = \"far end\"\nnode = \"n";
    s += &format!("{n}\"\n");
    s
}

fn parse(text: &str) -> Plant {
    parse_plant(text, "chain.toml", Path::new(".")).unwrap()
}

/// Prepare `text` and count the loss fits that ran for it on this thread.
fn prepare_counting(text: &str) -> (Result<(), PlantError>, usize) {
    let plant = parse(text);
    let before = fits_run_on_this_thread();
    let r = prepare(&plant, "chain.toml", ProfileKind::Wide).map(|_| ());
    (r, fits_run_on_this_thread() - before)
}

#[test]
fn a_plant_too_big_for_the_host_runner_is_refused_before_any_loss_fit() {
    let text = chain(1500, "250 MHz");
    let (r, fits) = prepare_counting(&text);
    let e = r.expect_err("a 1500-run chain at 250 MHz needs more line ends than the host runner has");
    assert_eq!(fits, 0, "loss fits ran before the capacity check: {e}");
    // Located at a segment of the file, saying what runs out, without internal names.
    assert!(e.line > 0 && e.column > 0 && e.field.starts_with("segment[run"), "{e}");
    assert!(e.message.contains("line ends") && e.message.contains("host runner holds at most"), "{e}");
    assert!(!e.message.contains("tier") && !e.hint.contains("tier"), "{e}");
    let line = text.lines().nth(e.line - 1).unwrap();
    assert!(line.starts_with("[[segment]]"), "the error points at {line}");
    // The hint names a sample rate; the plant written with it passes the capacity check
    // and compiles (its fits run then).
    let rate = e.hint.split('"').nth(1).unwrap_or_else(|| panic!("no rate in {}", e.hint));
    assert!(rate.ends_with("Hz"), "{e}");
    let hinted = text.replacen("sample_rate = \"250 MHz\"", &format!("sample_rate = \"{rate}\""), 1);
    let (r, fits) = prepare_counting(&hinted);
    r.unwrap_or_else(|e| panic!("the hinted rate {rate} still fails: {e}"));
    assert!(fits > 0, "the counter counts fits (a plant that fits runs them)");
}

#[test]
fn the_split_hint_names_a_segment_up_to_which_the_plant_fits() {
    let e = prepare_counting(&chain(1500, "250 MHz")).0.unwrap_err();
    let at: usize = e.field.trim_start_matches("segment[run").trim_end_matches(']').parse().unwrap();
    assert!(e.hint.contains(&format!("split the plant before segment run{at}")), "{e}");
    // The chain cut just before that segment fits (the hint is on the safe side: the
    // count it is found from includes the junctions of the nodes past the cut).
    sense::before_fits(&parse(&chain(at - 1, "250 MHz")), "chain.toml", ProfileKind::Wide).unwrap();
}

#[test]
fn simulate_checks_its_samples_before_compiling_the_plant() {
    // The plant alone is refused for its size (a run of 1e9 m: more delay storage than the
    // host runner has); a hopeless --samples is reported first, because it is checked from
    // the plant file before any compiling.
    let guard = tempfile::Builder::new().prefix("tidewire-limits-").tempdir().unwrap();
    let d = guard.path().to_path_buf();
    let p = d.join("chain.toml");
    let one = chain(1, "250 MHz");
    let huge: Vec<&str> =
        one.lines().map(|l| if l.starts_with("length = ") { "length = \"1e9 m\"" } else { l }).collect();
    let huge = huge.join("\n");
    std::fs::write(&p, huge).unwrap();
    let out = d.join("out.csv");
    let run = |samples: &str| {
        Command::cargo_bin("tidewire")
            .unwrap()
            .args(["simulate", p.to_str().unwrap(), "--samples", samples, "--csv", out.to_str().unwrap()])
            .output()
            .unwrap()
    };
    let o = run("1000000000000");
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(err.contains("hint: use at most --samples"), "{err}");
    // With a sane --samples the plant's own size is what is refused: exit 2, located.
    let o = run("1000");
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(err.contains("chain.toml:") && err.contains("host runner holds at most"), "{err}");
    assert!(!out.exists(), "no output is left behind");
    std::fs::remove_dir_all(&d).unwrap();
}

/// Every file in `dir` with its contents.
fn snapshot(dir: &Path) -> Vec<(String, Vec<u8>)> {
    let mut v: Vec<(String, Vec<u8>)> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .map(|p| (p.file_name().unwrap().to_string_lossy().into_owned(), std::fs::read(&p).unwrap_or_default()))
        .collect();
    v.sort();
    v
}

#[test]
fn resource_limits_exit_2_with_a_clear_message_and_touch_nothing() {
    // The hostile resource cases through the command: each exits 2 with a message
    // saying what is too large, no panic text, the plant and an existing output intact and
    // no temporary left (the folder is byte-for-byte the same).
    const PLANT: &str = "[plant]\nname = \"limits\"\nsample_rate = \"100 MHz\"\nduration = \"40 us\"\n\
        [node.a]\n[node.b]\nload = \"120 ohm\"\n[[segment]]\nname = \"run\"\nfrom = \"a\"\nto = \"b\"\n\
        cable = \"twisted-pair-120\"\nlength = \"20 m\"\n[drive]\nkind = \"source\"\nnode = \"a\"\n\
        resistance = \"120 ohm\"\nwaveform = { step = \"5 V\", rise = \"20 ns\" }\n[[probe]]\nname = \"far\"\nnode = \"b\"\n";
    let guard = tempfile::Builder::new().prefix("tidewire-limits-res-").tempdir().unwrap();
    let d = guard.path().to_path_buf();
    let out = d.join("out.csv");
    std::fs::write(&out, "an older run\n").unwrap();
    let cases: [(&str, &str, &[&str], &str); 6] = [
        (
            "sample_rate = \"100 MHz\"\nduration = \"40 us\"",
            "sample_rate = \"1e17 Hz\"\nduration = \"1 fs\"",
            &["simulate"],
            "delay storage",
        ),
        ("duration = \"40 us\"", "duration = \"1 s\"", &["verify"], "at most 10000000 samples"),
        ("length = \"20 m\"", "length = \"1e12 m\"", &["simulate"], "delay storage"),
        ("{ step = \"5 V\", rise = \"20 ns\" }", "{ samples = \"/dev/zero\" }", &["simulate"], "not a regular file"),
        (
            "",
            "",
            &["sweep", "--segment", "run", "--probe", "far", "--from", "1 m", "--to", "2 m", "--steps", "100000000"],
            "--steps must be between 2 and",
        ),
        (
            "",
            "",
            &["sweep", "--segment", "run", "--probe", "far", "--from", "1 m", "--to", "1e12 m", "--steps", "1000"],
            "delay storage",
        ),
    ];
    for (old, new, cmd, needle) in cases {
        let p = d.join("plant.toml");
        std::fs::write(&p, PLANT.replacen(old, new, 1)).unwrap();
        let before = snapshot(&d);
        let mut args: Vec<&str> = vec![cmd[0], p.to_str().unwrap()];
        args.extend(&cmd[1..]);
        if cmd[0] != "sweep" {
            args.extend(["--csv", out.to_str().unwrap()]);
        }
        let o = Command::cargo_bin("tidewire").unwrap().args(&args).output().unwrap();
        let err = String::from_utf8_lossy(&o.stderr);
        assert_eq!(o.status.code(), Some(2), "{args:?}: {err}");
        assert!(err.contains(needle) && !err.contains("panicked"), "{args:?}: expected {needle:?} in {err}");
        assert_eq!(snapshot(&d), before, "{args:?}: a file changed or a temporary was left");
    }
    std::fs::remove_dir_all(&d).unwrap();
}

#[test]
fn the_loss_fit_runs_once_per_cable_and_grid_length_not_per_segment() {
    // 300 runs of one Cat 5e length: every line is one of a few lengths (a segment's
    // sections split it the same way each time), so a handful of fits serve 300 segments.
    let text = chain(300, "100 MHz")
        .lines()
        .map(|l| if l.starts_with("length = ") { "length = \"4 m\"".to_string() } else { l.to_string() })
        .collect::<Vec<_>>()
        .join("\n");
    let (r, fits) = prepare_counting(&text);
    r.unwrap();
    assert!((1..=4).contains(&fits), "{fits} loss fits for 300 equal segments");
}
