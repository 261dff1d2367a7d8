//! External tools: rustup targets, qemu-system-arm, and running a child with a timeout.

use std::io::Read;
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

/// Run `cmd`, report its failure to start or its non-zero exit as an error.
pub fn run_ok(cmd: &mut Command, what: &str) -> Result<(), String> {
    let st = cmd.status().map_err(|e| format!("{what}: cannot start: {e}"))?;
    if st.success() {
        Ok(())
    } else {
        Err(format!("{what}: failed ({st})"))
    }
}

/// Make sure both rustup targets are installed (`rustup target add` is a no-op if they are).
pub fn ensure_targets(targets: &[&str]) -> Result<(), String> {
    run_ok(Command::new("rustup").arg("target").arg("add").args(targets), "rustup target add")
}

fn is_root() -> bool {
    Command::new("id").arg("-u").output().map(|o| o.stdout.trim_ascii() == b"0").unwrap_or(false)
}

/// Make sure `qemu-system-arm` runs; as root, install it with apt-get if it is missing.
pub fn ensure_qemu() -> Result<(), String> {
    let present = || Command::new("qemu-system-arm").arg("--version").output().map(|o| o.status.success());
    if let Ok(true) = present() {
        return Ok(());
    }
    if !is_root() {
        return Err("qemu-system-arm is missing: install the Debian/Ubuntu package `qemu-system-arm` \
                    (apt-get install qemu-system-arm) and run again"
            .into());
    }
    eprintln!("xtask: qemu-system-arm missing, installing it with apt-get");
    run_ok(Command::new("apt-get").arg("update"), "apt-get update")?;
    run_ok(Command::new("apt-get").args(["install", "-y", "qemu-system-arm"]), "apt-get install qemu-system-arm")?;
    match present() {
        Ok(true) => Ok(()),
        _ => Err("qemu-system-arm still does not run after installing it".into()),
    }
}

/// Run `cmd` with stdout captured; kill it after `timeout`. Returns (success, stdout).
pub fn run_with_timeout(cmd: &mut Command, timeout: Duration) -> Result<(bool, String), String> {
    let mut child = cmd
        .stdin(Stdio::null())
        .stdout(Stdio::piped())
        .stderr(Stdio::inherit())
        .spawn()
        .map_err(|e| format!("cannot start {:?}: {e}", cmd.get_program()))?;
    let mut stdout = child.stdout.take().ok_or("no stdout pipe")?;
    // Read on a thread so a chatty child cannot block on a full pipe while we wait.
    let reader = std::thread::spawn(move || {
        let mut s = String::new();
        let _ = stdout.read_to_string(&mut s);
        s
    });
    let start = Instant::now();
    let status = loop {
        if let Some(st) = child.try_wait().map_err(|e| e.to_string())? {
            break Some(st);
        }
        if start.elapsed() > timeout {
            let _ = child.kill();
            let _ = child.wait();
            break None;
        }
        std::thread::sleep(Duration::from_millis(50));
    };
    let out = reader.join().unwrap_or_default();
    match status {
        None => Err(format!("timed out after {} s; output so far:\n{out}", timeout.as_secs())),
        Some(st) => Ok((st.success(), out)),
    }
}
