//! `cargo run -p xtask -- stream [--samples N]`: the streaming `simulate` measured as a user
//! runs it. Builds the `tidewire` binary (debug, like the tests), runs `simulate` on the
//! bench-rig demo plant for N samples (default 1e7) once to CSV and once to the run file,
//! and reports wall time, output size and peak resident memory. The peak is the child's
//! `VmHWM` (Linux `/proc/PID/status`, the high-water mark of its resident set), polled
//! until it exits; the mark only grows, so the last reading is the peak to within the
//! poll interval's growth.
use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::{Duration, Instant};

fn peak_kib(pid: u32) -> Option<u64> {
    let s = std::fs::read_to_string(format!("/proc/{pid}/status")).ok()?;
    let line = s.lines().find(|l| l.starts_with("VmHWM:"))?;
    line.split_whitespace().nth(1)?.parse().ok()
}

fn measure(bin: &Path, plant: &Path, samples: u64, flag: &str, out: &Path) -> Result<(f64, u64, u64), String> {
    let start = Instant::now();
    let mut child = Command::new(bin)
        .args(["simulate", &plant.display().to_string(), "--samples", &samples.to_string(), flag])
        .arg(out)
        .stdout(std::process::Stdio::null())
        .spawn()
        .map_err(|e| format!("cannot run {}: {e}", bin.display()))?;
    let mut peak = 0;
    let status = loop {
        if let Some(k) = peak_kib(child.id()) {
            peak = peak.max(k);
        }
        if let Some(st) = child.try_wait().map_err(|e| e.to_string())? {
            break st;
        }
        std::thread::sleep(Duration::from_millis(5));
    };
    if !status.success() {
        return Err(format!("simulate {flag} failed: {status}"));
    }
    let size = std::fs::metadata(out).map_err(|e| e.to_string())?.len();
    Ok((start.elapsed().as_secs_f64(), size, peak))
}

pub fn stream(args: &[&str]) -> Result<(), String> {
    let samples: u64 = match args {
        [] => 10_000_000,
        ["--samples", n] => n.parse().map_err(|_| format!("--samples: not a whole number: {n}"))?,
        _ => return Err("usage: cargo run -p xtask -- stream [--samples N]".into()),
    };
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).parent().unwrap_or(Path::new(".")).to_path_buf();
    let cargo = std::env::var_os("CARGO").unwrap_or_else(|| "cargo".into());
    let ok = Command::new(cargo)
        .current_dir(&root)
        .args(["build", "-p", "tidewire-host", "--bin", "tidewire"])
        .status()
        .map_err(|e| e.to_string())?;
    if !ok.success() {
        return Err("building tidewire failed".into());
    }
    let target = std::env::var_os("CARGO_TARGET_DIR").map(PathBuf::from).unwrap_or_else(|| root.join("target"));
    let bin = target.join("debug/tidewire");
    let plant = root.join("examples/plants/bench-rig.toml");
    let dir = std::env::temp_dir().join(format!("tidewire-xtask-stream-{}", std::process::id()));
    std::fs::create_dir_all(&dir).map_err(|e| e.to_string())?;
    println!("simulate {samples} samples of examples/plants/bench-rig.toml (3 probes), debug build");
    println!("{:<10} {:>10} {:>14} {:>16}", "output", "wall (s)", "size (MB)", "peak RSS (MB)");
    for (flag, name) in [("--csv", "run.csv"), ("--bin", "run.twrun")] {
        let out = dir.join(name);
        let r = measure(&bin, &plant, samples, flag, &out);
        let _ = std::fs::remove_file(&out);
        let (t, size, peak) = r?;
        println!("{flag:<10} {t:>10.2} {:>14.1} {:>16.1}", size as f64 / 1e6, peak as f64 / 1024.0);
    }
    let _ = std::fs::remove_dir_all(&dir);
    Ok(())
}
