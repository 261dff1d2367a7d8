//! `cargo run -p xtask -- rig`: the rig end to end under emulation.
//!
//! Builds the rig firmware (`examples/rig`) and the `tidewire` command, starts the firmware
//! in QEMU (`mps2-an386`, `-icount shift=5`) with its UART on a loopback TCP port, and drives
//! it with `tidewire rig` as a test script would:
//!
//! 1. load `examples/plants/rig-break.toml` (image and device model), schedule its break,
//!    arm a capture of two probes, start, read the capture back; it must equal the host
//!    core's run of the same plant and events bit for bit (`read --check`), and its volts
//!    must equal `tidewire simulate`'s CSV cell for cell;
//! 2. throw hostile frames and a corrupted image; every one refused, the plant still running
//!    with the same image;
//! 3. status: zero overruns at the firmware's configured rate; then a period too short for a
//!    sample, and the rig must count overruns.

use crate::tools;
use std::net::TcpListener;
use std::path::{Path, PathBuf};
use std::process::{Child, Command, Stdio};
use std::time::{Duration, Instant};
use tidewire_host::rig::RigConnection;
use tidewire_link::{pack, Reply, Request, MAX_FRAME, PROTOCOL_VERSION};

const TARGET: &str = "thumbv7em-none-eabihf";
const PLANT: &str = "examples/plants/rig-break.toml";
/// Samples captured: the plant's whole default run (12 us at 100 MHz).
const CAPTURE: u32 = 1200;
/// A sample period the emulated part cannot keep (cycles of its 25 MHz clock).
const TOO_SHORT: u32 = 2000;
/// Hostile frames thrown at the running rig.
const HOSTILE: usize = 300;

/// QEMU, killed when dropped.
struct Qemu(Child);
impl Drop for Qemu {
    fn drop(&mut self) {
        let _ = self.0.kill();
        let _ = self.0.wait();
    }
}

fn root() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).parent().unwrap_or(Path::new(".")).to_path_buf()
}

fn cargo() -> std::ffi::OsString {
    std::env::var_os("CARGO").unwrap_or_else(|| "cargo".into())
}

/// Build the firmware and the host command; returns (firmware ELF, tidewire binary).
fn build() -> Result<(PathBuf, PathBuf), String> {
    let root = root();
    let crate_dir = root.join("examples/rig");
    let fw_target = match std::env::var_os("CARGO_TARGET_DIR") {
        Some(d) => PathBuf::from(d).join("rig-fw"),
        None => crate_dir.join("target"),
    };
    eprintln!("xtask: building the rig firmware ({TARGET})");
    let out = Command::new(cargo())
        .current_dir(&crate_dir)
        .env("CARGO_TARGET_DIR", &fw_target)
        .args(["build", "--release", "--target", TARGET])
        .output()
        .map_err(|e| format!("cannot start cargo: {e}"))?;
    if !out.status.success() {
        let err = String::from_utf8_lossy(&out.stderr);
        let hint = if err.contains("tidewire_firmware_panic_is_reachable") { " (a panic is reachable)" } else { "" };
        return Err(format!("rig firmware build failed{hint}:\n{err}"));
    }
    eprintln!("xtask: building the tidewire command");
    tools::run_ok(
        Command::new(cargo()).current_dir(&root).args(["build", "-q", "-p", "tidewire-host", "--bin", "tidewire"]),
        "cargo build tidewire",
    )?;
    let host_target = std::env::var_os("CARGO_TARGET_DIR").map(PathBuf::from).unwrap_or_else(|| root.join("target"));
    Ok((fw_target.join(TARGET).join("release/tidewire-rig"), host_target.join("debug/tidewire")))
}

/// Run `tidewire rig -c ADDR args...`; returns (exit code, stdout, stderr).
fn tw(bin: &Path, addr: &str, args: &[&str]) -> Result<(i32, String, String), String> {
    let out = Command::new(bin)
        .current_dir(root())
        .args(["rig", "-c", addr])
        .args(args)
        .output()
        .map_err(|e| format!("cannot run {}: {e}", bin.display()))?;
    let code = out.status.code().unwrap_or(-1);
    Ok((code, String::from_utf8_lossy(&out.stdout).into_owned(), String::from_utf8_lossy(&out.stderr).into_owned()))
}

/// `tidewire rig ...` that must exit 0; returns its stdout.
fn ok(bin: &Path, addr: &str, args: &[&str]) -> Result<String, String> {
    let (code, out, err) = tw(bin, addr, args)?;
    if code != 0 {
        return Err(format!("tidewire rig {} exited {code}:\n{out}{err}", args.join(" ")));
    }
    Ok(out)
}

/// A number from `status` output: the line `name value`.
fn field(status: &str, name: &str) -> Result<u64, String> {
    status
        .lines()
        .find_map(|l| l.strip_prefix(name).map(str::trim))
        .and_then(|v| v.parse().ok())
        .ok_or_else(|| format!("status has no `{name}`:\n{status}"))
}

/// The value cells of the named columns of a CSV (as text).
fn columns(csv_text: &str, names: &[&str]) -> Result<Vec<Vec<String>>, String> {
    let mut lines = csv_text.lines();
    let header: Vec<&str> = lines.next().unwrap_or("").split(',').collect();
    let idx: Vec<usize> = names
        .iter()
        .map(|n| header.iter().position(|h| h == n).ok_or_else(|| format!("CSV has no column {n:?}: {header:?}")))
        .collect::<Result<_, _>>()?;
    let rows: Vec<Vec<&str>> = lines.map(|l| l.split(',').collect()).collect();
    Ok(idx.iter().map(|&i| rows.iter().map(|r| r.get(i).copied().unwrap_or("").to_string()).collect()).collect())
}

pub fn rig() -> Result<(), String> {
    let t0 = Instant::now();
    tools::ensure_targets(&[TARGET])?;
    tools::ensure_qemu()?;
    let (elf, bin) = build()?;
    let built = t0.elapsed();

    // A free loopback port for QEMU's UART (taken back by QEMU at once).
    let port =
        TcpListener::bind("127.0.0.1:0").and_then(|l| l.local_addr()).map_err(|e| format!("no free port: {e}"))?.port();
    let addr = format!("tcp:127.0.0.1:{port}");
    let serial = format!("tcp:127.0.0.1:{port},server=on,wait=off");
    eprintln!("xtask: qemu-system-arm -M mps2-an386 -icount shift=5 -serial {serial} -kernel {}", elf.display());
    let child = Command::new("qemu-system-arm")
        .args(["-M", "mps2-an386", "-display", "none", "-monitor", "none", "-serial", &serial])
        .args(["-semihosting-config", "enable=on,target=native", "-icount", "shift=5", "-kernel"])
        .arg(&elf)
        .stdin(Stdio::null())
        .stdout(Stdio::null())
        .spawn()
        .map_err(|e| format!("cannot start qemu-system-arm: {e}"))?;
    let _qemu = Qemu(child);
    let deadline = Instant::now() + Duration::from_secs(20);
    let hello = loop {
        match tw(&bin, &addr, &["--timeout", "1000", "hello"])? {
            (0, out, _) => break out,
            (_, _, err) if Instant::now() > deadline => return Err(format!("the emulated rig does not answer: {err}")),
            _ => std::thread::sleep(Duration::from_millis(200)),
        }
    };
    print!("{hello}");

    // 1. Load, schedule, capture, compare.
    let dir = root().join("target/rig-check");
    std::fs::create_dir_all(&dir).map_err(|e| format!("{}: {e}", dir.display()))?;
    let (cap, svg, sim) = (dir.join("capture.csv"), dir.join("capture.svg"), dir.join("simulate.csv"));
    print!("{}", ok(&bin, &addr, &["load", PLANT])?);
    print!("{}", ok(&bin, &addr, &["schedule", "--plant", PLANT])?);
    let length = CAPTURE.to_string();
    ok(
        &bin,
        &addr,
        &["arm", "--plant", PLANT, "--probes", "device pin,far terminator", "--length", &length, "--at", "0"],
    )?;
    ok(&bin, &addr, &["start"])?;
    let read_args = ["read", "--plant", PLANT, "--csv", path_str(&cap)?, "--svg", path_str(&svg)?, "--check"];
    let out = ok(&bin, &addr, &read_args)?;
    print!("{out}");
    if !out.contains(&format!("0 of {} values differ", 2 * CAPTURE)) {
        return Err(format!("the capture is not the host core's run bit for bit:\n{out}"));
    }
    let sim_out = Command::new(&bin)
        .current_dir(root())
        .args(["simulate", PLANT, "--samples", &length, "--csv", path_str(&sim)?])
        .output()
        .map_err(|e| e.to_string())?;
    if !sim_out.status.success() {
        return Err(format!("tidewire simulate failed: {}", String::from_utf8_lossy(&sim_out.stderr)));
    }
    let read = |p: &Path| std::fs::read_to_string(p).map_err(|e| format!("{}: {e}", p.display()));
    let names = ["device pin (V)", "far terminator (V)"];
    let (a, b) = (columns(&read(&cap)?, &names)?, columns(&read(&sim)?, &names)?);
    if a != b || a.iter().any(|c| c.len() != CAPTURE as usize) {
        return Err("the capture's volts differ from `tidewire simulate` of the same plant and events".into());
    }
    let moved = a.iter().all(|c| c.iter().any(|v| v.parse::<f64>().is_ok_and(|x| x.abs() > 0.1)));
    if !moved {
        return Err("the captured probes never left zero: the run shows nothing".into());
    }
    println!("capture = tidewire simulate, cell for cell ({} samples x 2 probes, break at its sample)", CAPTURE);

    // 2. Hostile frames and a corrupted image while the plant runs.
    let before = ok(&bin, &addr, &["status"])?;
    let crc = before.lines().find(|l| l.starts_with("image crc")).unwrap_or("").to_string();
    let refused = hostile(&addr)?;
    println!("{refused} hostile frames, every one refused with an error reply");
    let img = dir.join("bad.bin");
    let c = Command::new(&bin)
        .current_dir(root())
        .args(["compile", PLANT, "--image", path_str(&img)?])
        .output()
        .map_err(|e| e.to_string())?;
    if !c.status.success() {
        return Err("tidewire compile failed".into());
    }
    let mut bytes = std::fs::read(&img).map_err(|e| e.to_string())?;
    let mid = 16 + (bytes.len() - 16) / 2;
    bytes[mid] ^= 0x5a;
    std::fs::write(&img, &bytes).map_err(|e| e.to_string())?;
    match tw(&bin, &addr, &["load", path_str(&img)?])? {
        (1, _, err) if err.contains("Crc") => println!("corrupted image refused: {}", err.trim()),
        (code, out, err) => {
            return Err(format!("the corrupted image was not refused as expected (exit {code}): {out}{err}"))
        }
    }
    let after = ok(&bin, &addr, &["status", "--max-overruns", "0"])?;
    let still = after.contains("running yes")
        && after.contains(&crc)
        && field(&after, "samples ")? > field(&before, "samples ")?;
    if !still {
        return Err(format!("the plant did not keep running unchanged:\nbefore\n{before}after\n{after}"));
    }
    println!(
        "plant still running with the same image ({}), samples {} -> {}",
        crc.trim(),
        field(&before, "samples ")?,
        field(&after, "samples ")?
    );

    // 3. Real-time accounting: zero overruns at the configured rate, overruns when too fast.
    let period = field(&after, "period ticks ")?;
    println!(
        "configured rate: period {period} cycles ({:.0} S/s on the 25 MHz part): overruns {}, worst step {} cycles, last {}",
        25e6 / period as f64,
        field(&after, "overruns ")?,
        field(&after, "worst step cycles ")?,
        field(&after, "last step cycles ")?
    );
    ok(&bin, &addr, &["period", &TOO_SHORT.to_string()])?;
    ok(&bin, &addr, &["start"])?;
    std::thread::sleep(Duration::from_millis(500));
    let fast = match tw(&bin, &addr, &["status", "--max-overruns", "0"])? {
        (1, out, _) => out,
        (code, out, err) => {
            return Err(format!("period {TOO_SHORT}: expected overruns and exit 1, got exit {code}:\n{out}{err}"))
        }
    };
    println!(
        "period {TOO_SHORT} cycles ({:.0} S/s): overruns {} of {} samples, worst step {} cycles (exit 1 from status --max-overruns 0)",
        25e6 / TOO_SHORT as f64,
        field(&fast, "overruns ")?,
        field(&fast, "samples ")?,
        field(&fast, "worst step cycles ")?
    );
    ok(&bin, &addr, &["stop"])?;
    println!(
        "rig: all checks passed in {:.1} s ({:.1} s of it building)",
        t0.elapsed().as_secs_f64(),
        built.as_secs_f64()
    );
    Ok(())
}

fn path_str(p: &Path) -> Result<&str, String> {
    p.to_str().ok_or_else(|| format!("path not UTF-8: {}", p.display()))
}

/// Throw hostile frames over one connection; each must get an error reply. Returns how many.
fn hostile(addr: &str) -> Result<usize, String> {
    let mut c = RigConnection::open(addr, Duration::from_secs(3)).map_err(|e| e.to_string())?;
    let mut x: u32 = 0x9e37_79b9;
    let mut next = move || {
        x ^= x << 13;
        x ^= x >> 17;
        x ^= x << 5;
        x
    };
    let mut wire = [0u8; tidewire_link::MAX_WIRE];
    for k in 0..HOSTILE {
        let frame: Vec<u8> = match k % 5 {
            // Random non-zero bytes, then the delimiter.
            0 => (0..1 + next() % 200).map(|_| (next() as u8).max(1)).chain([0]).collect(),
            // A valid frame with one bit flipped.
            1 => {
                let n = pack(PROTOCOL_VERSION, 1, &Request::Stop, &mut wire).map_err(|e| format!("{e:?}"))?;
                let mut f = wire[..n].to_vec();
                let i = next() as usize % (n - 1);
                f[i] ^= 1 << (next() % 8);
                if f[i] == 0 {
                    f[i] = 0x33;
                }
                f
            }
            // Longer than any frame.
            2 => (0..MAX_FRAME + 100).map(|_| (next() as u8).max(1)).chain([0]).collect(),
            // Another protocol version.
            3 => {
                let n = pack(PROTOCOL_VERSION + 1, 2, &Request::Stop, &mut wire).map_err(|e| format!("{e:?}"))?;
                wire[..n].to_vec()
            }
            // A chunk with no upload in progress.
            _ => {
                let n = pack(PROTOCOL_VERSION, 3, &Request::LoadChunk { offset: 0, data: &[7; 64] }, &mut wire)
                    .map_err(|e| format!("{e:?}"))?;
                wire[..n].to_vec()
            }
        };
        c.send_raw(&frame).map_err(|e| e.to_string())?;
        match c.wait(None).map_err(|e| format!("hostile frame {k}: {e}"))? {
            Reply::Error(_) => {}
            r => return Err(format!("hostile frame {k} was accepted: {r:?}")),
        }
    }
    Ok(HOSTILE)
}
