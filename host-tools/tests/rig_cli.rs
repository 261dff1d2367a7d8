//! `tidewire rig` as a script sees it when things go wrong: a rig that does not answer, no
//! rig at the address, bad arguments. (The working path runs against the emulated rig in
//! `cargo run -p xtask -- rig`.)
use assert_cmd::Command;
use std::net::TcpListener;
use std::path::Path;
use std::time::{Duration, Instant};

fn tidewire() -> Command {
    Command::cargo_bin("tidewire").unwrap()
}

#[test]
fn a_rig_that_does_not_answer_times_out_with_exit_3() {
    // Accepts the connection and never says a word.
    let l = TcpListener::bind("127.0.0.1:0").unwrap();
    let addr = format!("tcp:{}", l.local_addr().unwrap());
    let hold = std::thread::spawn(move || {
        let s = l.accept();
        std::thread::sleep(Duration::from_millis(1500));
        drop(s);
    });
    let t = Instant::now();
    let a = tidewire().args(["rig", "-c", &addr, "--timeout", "300", "status"]).assert().code(3);
    let err = String::from_utf8_lossy(&a.get_output().stderr).into_owned();
    assert!(err.contains("did not answer within 300 ms"), "{err}");
    assert!(t.elapsed() < Duration::from_millis(1400), "the timeout is honoured");
    hold.join().unwrap();
}

#[test]
fn no_rig_at_the_address_is_exit_3_and_says_where() {
    let port = TcpListener::bind("127.0.0.1:0").unwrap().local_addr().unwrap().port();
    let addr = format!("tcp:127.0.0.1:{port}");
    let a = tidewire().args(["rig", "-c", &addr, "hello"]).assert().code(3);
    let err = String::from_utf8_lossy(&a.get_output().stderr).into_owned();
    assert!(err.contains("cannot reach the rig at") && err.contains(&port.to_string()), "{err}");
    let a = tidewire().args(["rig", "-c", "/nonexistent/tty-for-tidewire", "hello"]).assert().code(3);
    assert!(String::from_utf8_lossy(&a.get_output().stderr).contains("/nonexistent/tty-for-tidewire"));
}

#[test]
fn bad_arguments_are_exit_2_before_any_connection() {
    // Nothing listens on port 9: were it to connect first, the exit would be 3.
    let addr = "tcp:127.0.0.1:9";
    let plant = Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/plants/bench-rig.toml");
    let plant = plant.to_str().unwrap();
    let cases: Vec<(Vec<&str>, &str)> = vec![
        (vec!["schedule"], "schedule needs --plant"),
        (vec!["schedule", "--at", "5", "--break", "1", "--join", "1"], "exactly one change"),
        (vec!["schedule", "--at", "5", "--resistor", "3=120"], "JUNCTION:OHMS"),
        (vec!["schedule", "--at", "5", "--resistor", "3:-1"], "positive"),
        (vec!["schedule", "--plant", plant], "no [[event]]"),
        (vec!["arm", "--probes", "pin", "--length", "10", "--at", "0"], "give its number"),
        (vec!["arm", "--probes", "0", "--length", "10"], "one trigger"),
        (vec!["arm", "--probes", "0", "--length", "10", "--level", "1.0"], "--plant"),
        (vec!["arm", "--probes", "0,1,2,3,4", "--length", "10", "--at", "0"], "at most 4"),
        (vec!["arm", "--plant", plant, "--probes", "nowhere", "--length", "10", "--at", "0"], "no probe of that name"),
        (vec!["load", "/nonexistent/plant.toml"], "/nonexistent/plant.toml"),
        // Outputs of `read`: were they checked only after connecting, these would exit 3.
        (vec!["read", "--csv", "/nonexistent/folder/cap.csv"], "does not exist"),
        (vec!["read", "--csv", plant, "--plant", plant], "also the input"),
    ];
    for (args, want) in cases {
        let a = tidewire().args(["rig", "-c", addr]).args(&args).assert().code(2);
        let err = String::from_utf8_lossy(&a.get_output().stderr).into_owned();
        assert!(err.contains(want), "{args:?}: {err}");
        assert!(!err.contains("panicked"), "{args:?}: {err}");
    }
}

#[test]
fn rate_says_whether_a_part_keeps_up_and_names_unknown_parts() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/plants");
    let plant = dir.join("rig-break.toml");
    // 14 line ends at 100 MS/s: about 1 260 instructions per sample (generic step), far from
    // real time on a 168 MHz part, and the plant's first segment cannot be sampled at the
    // ~133 kS/s it keeps.
    let a = tidewire().args(["rate", plant.to_str().unwrap(), "--part", "stm32f407"]).assert().code(1);
    let out = String::from_utf8_lossy(&a.get_output().stdout).into_owned();
    assert!(out.contains("slower than real time") && out.contains("no real-time rate"), "{out}");
    assert!(out.contains("RAM: solver about") && out.contains("flash: rig firmware"), "{out}");
    // A long line sampled slowly: real time on every part, and a highest rate is found. At
    // 10 kS/s: the Cortex-M0's generic step keeps about 20 kS/s on this two-port plant
    // (docs/firmware-figures.json), so the margin is twice the rate, not a few per cent.
    let text = std::fs::read_to_string(dir.join("bench-rig.toml")).unwrap();
    let slow = text
        .replace("sample_rate = \"100 MHz\"", "sample_rate = \"10 kHz\"")
        .replace("duration = \"10 us\"", "duration = \"40 ms\"")
        .replace("length = \"100 m\"", "length = \"80 km\"")
        .replace("rise = \"50 ns\", delay = \"200 ns\"", "rise = \"200 us\", delay = \"400 us\"")
        .replace("arrival = \"10 ns\"", "arrival = \"100 us\"");
    let guard = tempfile::Builder::new().prefix("tidewire-rate-").tempdir().unwrap();
    let d = guard.path().to_path_buf();
    let p = d.join("long-line.toml");
    std::fs::write(&p, slow).unwrap();
    for part in ["m0", "m4", "stm32f407"] {
        let a = tidewire().args(["rate", p.to_str().unwrap(), "--part", part]).assert();
        let out = String::from_utf8_lossy(&a.get_output().stdout).into_owned();
        assert!(out.contains("runs in real time") && out.contains("highest real-time rate"), "{part}: {out}");
        assert!(out.contains("tolerances at"), "{part}: {out}");
    }
    // The specialised form keeps its delay memory in three spans (no copy at the window's
    // wrap): its RAM is the larger of the two forms on the same plant and part.
    let ram = |form: &str| -> f64 {
        let a = tidewire().args(["rate", p.to_str().unwrap(), "--part", "m4", "--form", form]).assert();
        let out = String::from_utf8_lossy(&a.get_output().stdout).into_owned();
        out.split("RAM: solver about ")
            .nth(1)
            .and_then(|t| t.split(' ').next())
            .and_then(|t| t.parse().ok())
            .unwrap_or_else(|| panic!("{form}: no RAM line in {out}"))
    };
    assert!(ram("specialised") > ram("generic"));
    // The specialised step is built into the firmware: the generic rig's flash figure and
    // "plant image loaded at run time" are not its (they were printed for both forms).
    let a = tidewire().args(["rate", p.to_str().unwrap(), "--part", "stm32f407", "--form", "specialised"]).assert();
    let out = String::from_utf8_lossy(&a.get_output().stdout).into_owned();
    assert!(out.contains("flash: not measured for the specialised form"), "{out}");
    assert!(!out.contains("loaded at run time"), "{out}");
    let a = tidewire().args(["rate", plant.to_str().unwrap(), "--part", "z80"]).assert().code(2);
    assert!(String::from_utf8_lossy(&a.get_output().stderr).contains("parts: m0, m4, stm32f407"));
}
