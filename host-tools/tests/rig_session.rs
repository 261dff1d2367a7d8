//! `tidewire rig` end to end against the rig-side handler of `tidewire-link` served on a
//! loopback TCP port by this test (the same code the firmware runs, with its software device
//! model, stepping 50 samples between reads): load, schedule the plant's break, arm, start,
//! read back bit for bit equal to the host core's run; a corrupted image refused with the
//! plant still running. The firmware itself runs in `cargo run -p xtask -- rig`.
use assert_cmd::Command;
use std::io::{ErrorKind, Read, Write};
use std::net::TcpListener;
use std::path::Path;
use std::time::Duration;
use tidewire_core::Wide;
use tidewire_link::{Clock, Reader, Reply, Rig, MAX_WIRE, NO_SEQ};

type HostRig = Rig<Wide, 64, 32, 8192, 16, 8192, 4096>;

/// Serve a rig on a loopback port for the rest of the test process; returns its address.
fn serve() -> String {
    let l = TcpListener::bind("127.0.0.1:0").unwrap();
    let addr = format!("tcp:{}", l.local_addr().unwrap());
    std::thread::Builder::new()
        .stack_size(16 << 20)
        .spawn(move || {
            let clock = Clock { tick_hz: 1_000_000, min_period: 10, max_period: 1 << 24 };
            let mut rig = Box::new(HostRig::new(clock, 100));
            for conn in l.incoming() {
                let Ok(mut s) = conn else { continue };
                s.set_read_timeout(Some(Duration::from_millis(1))).unwrap();
                let mut reader = Reader::new();
                let mut buf = [0u8; 512];
                let mut out = [0u8; MAX_WIRE];
                loop {
                    match s.read(&mut buf) {
                        Ok(0) => break,
                        Ok(n) => {
                            for &b in &buf[..n] {
                                if let Some(f) = reader.push(b) {
                                    let k = match f {
                                        Ok(f) => rig.handle_frame(f, &mut out),
                                        Err(e) => HostRig::pack_reply(NO_SEQ, &Reply::Error(e), &mut out),
                                    };
                                    if s.write_all(&out[..k]).is_err() {
                                        break;
                                    }
                                }
                            }
                        }
                        Err(e) if matches!(e.kind(), ErrorKind::WouldBlock | ErrorKind::TimedOut) => {}
                        Err(_) => break,
                    }
                    for _ in 0..50 {
                        let pin = rig.model_pin();
                        rig.sample(pin);
                    }
                }
            }
        })
        .unwrap();
    addr
}

fn rig(addr: &str, args: &[&str]) -> (i32, String, String) {
    let o = Command::cargo_bin("tidewire").unwrap().args(["rig", "-c", addr]).args(args).output().unwrap();
    (
        o.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&o.stdout).into_owned(),
        String::from_utf8_lossy(&o.stderr).into_owned(),
    )
}

#[test]
fn load_break_capture_equals_the_host_run_and_a_bad_image_changes_nothing() {
    let addr = serve();
    let plant = Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/plants/rig-break.toml");
    let plant = plant.to_str().unwrap();
    let guard = tempfile::Builder::new().prefix("tidewire-rig-session-").tempdir().unwrap();
    let dir = guard.path().to_path_buf();
    let csv = dir.join("cap.csv");

    let (code, out, err) = rig(&addr, &["load", plant]);
    assert_eq!(code, 0, "{out}{err}");
    assert!(out.contains("device model loaded"), "{out}");
    assert_eq!(rig(&addr, &["schedule", "--plant", plant]).0, 0);
    let arm = ["arm", "--plant", plant, "--probes", "device pin,far terminator", "--length", "1200", "--at", "0"];
    assert_eq!(rig(&addr, &arm).0, 0);
    assert_eq!(rig(&addr, &["start"]).0, 0);
    let (code, out, err) = rig(&addr, &["read", "--plant", plant, "--csv", csv.to_str().unwrap(), "--check"]);
    assert_eq!(code, 0, "{out}{err}");
    assert!(out.contains("0 of 2400 values differ"), "{out}");
    let text = std::fs::read_to_string(&csv).unwrap();
    assert_eq!(text.lines().count(), 1201);
    assert!(text.starts_with("sample,time (s),device pin (V),far terminator (V),device pin (raw),far terminator (raw)"));

    // A corrupted image: refused (exit 1, named), the plant keeps running with its image.
    let (_, before, _) = rig(&addr, &["status"]);
    let img = dir.join("bad.bin");
    Command::cargo_bin("tidewire")
        .unwrap()
        .args(["compile", plant, "--image", img.to_str().unwrap()])
        .assert()
        .success();
    let mut bytes = std::fs::read(&img).unwrap();
    let last = bytes.len() - 1;
    bytes[last] ^= 0x20;
    std::fs::write(&img, bytes).unwrap();
    let (code, _, err) = rig(&addr, &["load", img.to_str().unwrap()]);
    assert_eq!(code, 1, "{err}");
    assert!(err.contains("refused the image: Crc"), "{err}");
    let (_, after, _) = rig(&addr, &["status"]);
    let crc = |s: &str| s.lines().find(|l| l.starts_with("image crc")).map(str::to_string);
    assert_eq!(crc(&before), crc(&after));
    assert!(after.contains("running yes"), "{after}");

    // A request the rig refuses is exit 1 with the rig's reason.
    let (code, _, err) = rig(&addr, &["schedule", "--at", "0", "--break", "1"]);
    assert_eq!(code, 1, "{err}");
    assert!(err.contains("that sample has passed"), "{err}");
}
