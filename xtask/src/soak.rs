//! `cargo run -p xtask -- soak [--cases N] [--hours H]`: the property suites for as long as
//! asked. Each round runs every suite below with `PROPTEST_CASES=N` (default 20000) in a
//! release build; proptest seeds each run afresh, so rounds explore new cases. Rounds repeat
//! until H hours (default 0: one round) have passed; the first failure stops the soak with
//! proptest's minimal failing case on the terminal.
use std::process::Command;
use std::time::{Duration, Instant};

/// (package, test target) of every property suite.
const SUITES: [(&str, &str); 5] = [
    ("tidewire-core", "passivity"),
    ("tidewire-core", "loader"),
    ("tidewire-core", "oracle"),
    ("tidewire-core", "settle"),
    ("tidewire-host", "image_loader"),
];

pub fn soak(args: &[&str]) -> Result<(), String> {
    let mut cases: u64 = 20_000;
    let mut hours: f64 = 0.0;
    let mut it = args.iter();
    while let Some(a) = it.next() {
        let value = it.next().ok_or_else(|| format!("{a} needs a value"))?;
        match *a {
            "--cases" => cases = value.parse().map_err(|_| format!("--cases {value}: not a whole number"))?,
            "--hours" => {
                hours = value.parse().map_err(|_| format!("--hours {value}: not a number"))?;
                if !(hours.is_finite() && hours >= 0.0) {
                    return Err(format!("--hours {value}: must be zero or more"));
                }
            }
            _ => return Err(format!("unknown option {a} (soak takes --cases N and --hours H)")),
        }
    }
    let cargo = std::env::var_os("CARGO").unwrap_or_else(|| "cargo".into());
    let until = Instant::now() + Duration::from_secs_f64(hours * 3600.0);
    let mut round = 0u64;
    loop {
        round += 1;
        for (package, test) in SUITES {
            eprintln!("xtask: soak round {round}: {package} --test {test}, {cases} cases per property");
            let status = Command::new(&cargo)
                .env("PROPTEST_CASES", cases.to_string())
                .args(["test", "--release", "-p", package, "--test", test])
                .status()
                .map_err(|e| format!("cannot start cargo: {e}"))?;
            if !status.success() {
                return Err(format!("round {round}: {package} --test {test} failed"));
            }
        }
        if Instant::now() >= until {
            eprintln!("xtask: soak passed {round} round(s)");
            return Ok(());
        }
    }
}
