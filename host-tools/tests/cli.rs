//! The `tidewire` command as a user runs it: every demo plant inspects, compiles and
//! simulates; every bad plant gives exit 2 with a located message and no panic text; no
//! command leaves a partial output file behind.
use assert_cmd::Command;
use std::path::{Path, PathBuf};

fn plants() -> Vec<PathBuf> {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/plants");
    let mut v: Vec<PathBuf> = std::fs::read_dir(dir).unwrap().map(|e| e.unwrap().path()).filter(|p| p.extension().is_some_and(|e| e == "toml")).collect();
    v.sort();
    assert!(v.len() >= 3, "at least three demo plants");
    v
}

fn tidewire() -> Command {
    Command::cargo_bin("tidewire").unwrap()
}

fn tmp(name: &str) -> PathBuf {
    let d = std::env::temp_dir().join(format!("tidewire-cli-{}-{name}", std::process::id()));
    let _ = std::fs::remove_dir_all(&d);
    std::fs::create_dir_all(&d).unwrap();
    d
}

#[test]
fn every_demo_plant_inspects_compiles_and_simulates() {
    let out = tmp("demo-plants");
    for p in plants() {
        let name = p.file_stem().unwrap().to_string_lossy().into_owned();
        for profile in ["wide", "narrow"] {
            let a = tidewire().args(["inspect", p.to_str().unwrap(), "--profile", profile]).assert().success();
            let text = String::from_utf8_lossy(&a.get_output().stdout).into_owned();
            assert!(text.contains("-- segments") && text.contains("-- fixed point"), "{name}: {text}");
            let (img, rs) = (out.join(format!("{name}-{profile}.bin")), out.join(format!("{name}-{profile}.rs")));
            tidewire()
                .args(["compile", p.to_str().unwrap(), "--profile", profile, "--image", img.to_str().unwrap(), "--rust", rs.to_str().unwrap()])
                .assert()
                .success();
            assert!(std::fs::read(&img).unwrap().starts_with(b"TIDW"));
            assert!(std::fs::read_to_string(&rs).unwrap().contains("pub static NETWORK"));
            let csv = out.join(format!("{name}-{profile}.csv"));
            tidewire().args(["simulate", p.to_str().unwrap(), "--samples", "500", "--profile", profile, "--csv", csv.to_str().unwrap()]).assert().success();
            let text = std::fs::read_to_string(&csv).unwrap();
            assert_eq!(text.lines().count(), 501, "{name}: header + 500 rows");
            assert!(text.lines().next().unwrap().starts_with("time (s),"));
        }
    }
}

#[test]
fn the_drive_plant_states_the_high_voltage_caution() {
    let p = plants().into_iter().find(|p| p.to_string_lossy().contains("drive-to-motor")).unwrap();
    let a = tidewire().args(["inspect", p.to_str().unwrap()]).assert().success();
    let text = String::from_utf8_lossy(&a.get_output().stdout).into_owned();
    assert!(text.contains("CAUTION") && text.contains("local electrical codes"), "{text}");
}

#[test]
fn bad_plants_exit_2_with_a_located_message_and_leave_no_file() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/bad_plants");
    let out = tmp("bad");
    let mut n = 0;
    for e in std::fs::read_dir(dir).unwrap() {
        let p = e.unwrap().path();
        let img = out.join("never.bin");
        let a = tidewire().args(["compile", p.to_str().unwrap(), "--image", img.to_str().unwrap()]).assert().code(2);
        let err = String::from_utf8_lossy(&a.get_output().stderr).into_owned();
        let fname = p.file_name().unwrap().to_string_lossy().into_owned();
        assert!(err.contains(&format!("{fname}:")), "{fname}: message names the file: {err}");
        // file:line:column
        let located = err.split(&format!("{fname}:")).nth(1).is_some_and(|rest| {
            let mut it = rest.split(':');
            it.next().is_some_and(|l| l.parse::<usize>().is_ok()) && it.next().is_some_and(|c| c.parse::<usize>().is_ok())
        });
        assert!(located, "{fname}: line and column: {err}");
        assert!(err.contains("hint:"), "{fname}: a fix hint: {err}");
        assert!(!err.contains("panicked"), "{fname}: no panic: {err}");
        assert!(!img.exists(), "{fname}: no output file");
        n += 1;
    }
    assert!(n >= 20);
}

#[test]
fn failed_writes_leave_nothing_half_written() {
    let p = plants().remove(0);
    let out = tmp("nowrite");
    let missing = out.join("no/such/folder/out.csv");
    let a = tidewire().args(["simulate", p.to_str().unwrap(), "--samples", "10", "--csv", missing.to_str().unwrap()]).assert().code(2);
    let err = String::from_utf8_lossy(&a.get_output().stderr).into_owned();
    assert!(err.contains("out.csv") && !err.contains("panicked"), "{err}");
    assert_eq!(std::fs::read_dir(&out).unwrap().count(), 0, "nothing written");
    tidewire().args(["compile", p.to_str().unwrap()]).assert().code(2);
    tidewire().args(["inspect", "/no/such/plant.toml"]).assert().code(2);
    tidewire().args(["frobnicate"]).assert().code(2);
}
