//! `cargo run --release -p xtask -- scale`: how `verify` grows with the plant and the run.
//!
//! Generates plant files of our own (a bus: a trunk of equal sections with a loaded stub
//! at every tap, so half the segments are trunk and half are stubs), then runs the whole
//! verification of each (compile and analyse, fixed-point core, f64 twin, exact reference)
//! in a fresh child process of this program, so that each peak memory figure is that run's
//! own: the child reads its peak resident size (VmHWM) from /proc/self/status after the
//! run. Prints one line per plant and the time ratio of the two buses.
//!
//! Cases: buses of 20 and 200 segments over 1e5 samples (aim: 200 segments in < 30 s,
//! cost about linear in segments) and one segment over 1e6 samples (aim: < 10 s, < 500 MB).

use std::path::Path;
use std::process::Command;
use std::time::Instant;
use tidewire_host::analysis::prepare;
use tidewire_host::compile::ProfileKind;
use tidewire_host::plant::load_plant;
use tidewire_host::verify::verify;

/// A bus of `segments` segments (even: trunk sections and stubs alternate), `samples` long
/// at 100 MHz. Lossless 50-ohm trunk, 100-ohm stubs to 1 kohm taps, 50-ohm far end; every length
/// a whole number of samples (2 m at v = 2e8 m/s), so the model itself adds no timing error.
pub fn bus_plant(segments: usize, samples: usize) -> String {
    let taps = (segments / 2).max(1);
    let mut s = format!(
        "[plant]\nname = \"generated bus of {} segments\"\nsample_rate = \"100 MHz\"\nduration = \"{} ns\"\n\n\
         [cable.trunk]\nimpedance = \"50 ohm\"\nvelocity_factor = 0.667128\n\n\
         [cable.stub]\nimpedance = \"100 ohm\"\nvelocity_factor = 0.667128\n\n[node.t0]\n",
        2 * taps,
        samples * 10
    );
    for k in 1..=taps {
        let load = if k == taps { "50 ohm" } else { "open" };
        s += &format!("[node.t{k}]\nload = \"{load}\"\n[node.s{k}]\nload = \"1 kohm\"\n");
    }
    for k in 1..=taps {
        s += &format!(
            "\n[[segment]]\nname = \"trunk{k}\"\nfrom = \"t{}\"\nto = \"t{k}\"\ncable = \"trunk\"\nlength = \"{} m\"\n",
            k - 1,
            2 * (1 + k % 3)
        );
        s += &format!(
            "\n[[segment]]\nname = \"stub{k}\"\nfrom = \"t{k}\"\nto = \"s{k}\"\ncable = \"stub\"\nlength = \"2 m\"\n"
        );
    }
    s += "\n[drive]\nkind = \"source\"\nnode = \"t0\"\nresistance = \"50 ohm\"\n\
          waveform = { step = \"1 V\", rise = \"20 ns\", delay = \"50 ns\" }\n\n\
          [[probe]]\nname = \"head\"\nnode = \"t0\"\n";
    s += &format!("\n[[probe]]\nname = \"far end\"\nnode = \"t{taps}\"\n");
    s
}

/// The child: verify one plant in this process, print "seconds peak_kib verdict".
pub fn one(path: &str) -> Result<(), String> {
    let start = Instant::now();
    let plant = load_plant(Path::new(path)).map_err(|e| e.to_string())?;
    let (c, _) = prepare(&plant, path, ProfileKind::Wide).map_err(|e| e.to_string())?;
    let prepared = start.elapsed().as_secs_f64();
    let (v, _) = verify(&plant, path, &c, &[], &|_| {}).map_err(|e| e.to_string())?;
    let secs = start.elapsed().as_secs_f64();
    eprintln!("compile and analyse {prepared:.2} s, verify runs {:.2} s", secs - prepared);
    let status = std::fs::read_to_string("/proc/self/status").map_err(|e| format!("cannot read /proc: {e}"))?;
    let hwm = status
        .lines()
        .find_map(|l| l.strip_prefix("VmHWM:"))
        .and_then(|v| v.split_whitespace().next()?.parse::<u64>().ok())
        .ok_or("no VmHWM in /proc/self/status")?;
    // utime and stime (fields 14 and 15 of /proc/self/stat, in clock ticks of 1/100 s on
    // Linux): the CPU time, which other load on the machine does not inflate.
    let stat = std::fs::read_to_string("/proc/self/stat").map_err(|e| format!("cannot read /proc: {e}"))?;
    let after = stat.rsplit_once(')').map_or("", |p| p.1);
    let f: Vec<f64> = after.split_whitespace().map(|x| x.parse().unwrap_or(0.0)).collect();
    let cpu = (f.get(11).copied().unwrap_or(0.0) + f.get(12).copied().unwrap_or(0.0)) / 100.0;
    println!("{secs:.3} {hwm} {cpu:.2} {}", if v.pass() { "PASS" } else { "FAIL" });
    Ok(())
}

/// The parent: generate the plants, run each in a child, print the table.
pub fn scale() -> Result<(), String> {
    let dir = tempfile_dir()?;
    let cases =
        [("bus of 20 segments", 20, 100_000), ("bus of 200 segments", 200, 100_000), ("one segment", 2, 1_000_000)];
    let exe = std::env::current_exe().map_err(|e| e.to_string())?;
    println!("{:<22} {:>9} {:>10} {:>10} {:>10} {:>8}", "plant", "samples", "wall s", "CPU s", "peak MB", "verdict");
    let mut times = vec![];
    for (name, segs, samples) in cases {
        let text = if segs == 2 { one_segment(samples) } else { bus_plant(segs, samples) };
        let path = dir.join(format!("scale-{segs}-{samples}.toml"));
        std::fs::write(&path, text).map_err(|e| format!("{}: {e}", path.display()))?;
        let out = Command::new(&exe).arg("scale-one").arg(&path).output().map_err(|e| e.to_string())?;
        let line = String::from_utf8_lossy(&out.stdout).trim().to_string();
        eprint!("{name}: {}", String::from_utf8_lossy(&out.stderr));
        if !out.status.success() {
            return Err(format!("{name}: {}", String::from_utf8_lossy(&out.stderr)));
        }
        let f: Vec<&str> = line.split_whitespace().collect();
        let (secs, kib, cpu): (f64, f64, f64) = match f.as_slice() {
            [s, k, c, _] => {
                (s.parse().unwrap_or(f64::NAN), k.parse().unwrap_or(f64::NAN), c.parse().unwrap_or(f64::NAN))
            }
            _ => return Err(format!("{name}: unexpected child output '{line}'")),
        };
        times.push((secs, cpu));
        println!("{name:<22} {samples:>9} {secs:>10.2} {cpu:>10.2} {:>10.1} {:>8}", kib / 1024.0, f[3]);
    }
    let _ = std::fs::remove_dir_all(&dir);
    println!(
        "ratio 200 / 20 segments: wall {:.1}, CPU {:.1} (10 for cost linear in segments)",
        times[1].0 / times[0].0,
        times[1].1 / times[0].1
    );
    Ok(())
}

/// One lossless 50-ohm segment into 200 ohm, stepped; the small plant of the long run.
fn one_segment(samples: usize) -> String {
    format!(
        "[plant]\nname = \"one segment, long run\"\nsample_rate = \"100 MHz\"\nduration = \"{} ns\"\n\n\
         [cable.c]\nimpedance = \"50 ohm\"\nvelocity_factor = 0.66\n\n[node.a]\n[node.b]\nload = \"200 ohm\"\n\n\
         [[segment]]\nname = \"s\"\nfrom = \"a\"\nto = \"b\"\ncable = \"c\"\nlength = \"20 m\"\n\n\
         [drive]\nkind = \"source\"\nnode = \"a\"\nresistance = \"50 ohm\"\n\
         waveform = {{ step = \"1 V\", rise = \"20 ns\", delay = \"50 ns\" }}\n\n\
         [[probe]]\nname = \"far end\"\nnode = \"b\"\n",
        samples * 10
    )
}

fn tempfile_dir() -> Result<std::path::PathBuf, String> {
    let d = std::env::temp_dir().join(format!("tidewire-scale-{}", std::process::id()));
    std::fs::create_dir_all(&d).map_err(|e| format!("{}: {e}", d.display()))?;
    Ok(d)
}
