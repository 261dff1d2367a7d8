//! `cargo run -p xtask -- generic-profile [PLANT] [m4|m0]`: where the instructions of the
//! generic `Solver::step` go for one firmware plant, counted as they run.
//!
//! The generic step loops over junctions, ports and loss sections, so (unlike the
//! specialised step, `profile.rs`) its static listing says little: this command counts what
//! executes. QEMU runs the firmware ELF of the last `firmware` build with one instruction per
//! translation block and logs every executed instruction inside the plant's generic `step`
//! (`-singlestep -d exec,nochain -dfilter START+SIZE`, the log on its stderr). The first
//! `LOG_LINES` addresses are counted per address (whole calls apart from the last one),
//! attributed with `llvm-addr2line -i -f` to their inline chain, and summed by the `Profile`
//! operation they come from and by the solver function (ring pass, junction pass, line pass,
//! read-out) they are inlined into. Per sample = count / calls, calls = executions of the
//! step's first instruction.
//!
//! Which symbol: the firmware holds one generic `step` per capacity set, all with the same
//! name; the plant's is the one whose code compares indices with its `PORTS` (an immediate
//! `#PORTS`) and whose waves are words (wide) or halfwords (narrow). Plants that share a port
//! count and profile (the 8-port variants) cannot be told apart this way and are refused.
//! Needs `qemu-system-arm`, `llvm-nm`, `llvm-objdump` and `llvm-addr2line` on the PATH.

use std::collections::{BTreeMap, HashMap};
use std::io::{BufRead as _, BufReader, Write as _};
use std::process::{Command, Stdio};

use super::profile::{method, target, tool, Target};

/// Logged instructions to count (about 2000 calls of the 85-port plant's step, 30 s).
const LOG_LINES: usize = 16_000_000;

/// The address and size of `plant`'s generic step in the ELF disassembled by `dis`.
fn find_step(elf: &str, ports: usize, narrow: bool) -> Result<(u64, u64), String> {
    let nm = tool("llvm-nm", &["-C", "-S", elf])?;
    let imm = [format!("#{ports}\n"), format!("#{ports} "), format!("#0x{ports:x}\n")];
    let mut found = Vec::new();
    for l in nm.lines().filter(|l| l.contains("solver..Solver") && l.contains("PlantStep") && l.contains("::step::")) {
        let mut it = l.split_whitespace();
        let (Some(a), Some(s)) = (it.next(), it.next()) else { continue };
        let (Ok(a), Ok(s)) = (u64::from_str_radix(a, 16), u64::from_str_radix(s, 16)) else { continue };
        let (start, stop) = (format!("--start-address={a}"), format!("--stop-address={}", a + s));
        let dis = tool("llvm-objdump", &["-d", "--no-show-raw-insn", &start, &stop, elf])?;
        let compares =
            dis.lines().filter(|l| l.contains("cmp") && imm.iter().any(|i| format!("{l}\n").contains(i))).count();
        let halfwords = dis.lines().any(|l| l.contains("ldrsh") || l.contains("strh"));
        if compares > 0 && halfwords == narrow {
            found.push((a, s));
        }
    }
    match found.as_slice() {
        [one] => Ok(*one),
        [] => Err(format!("no generic step with {ports} ports in {elf}")),
        _ => Err(format!("{} generic steps with {ports} ports: this plant cannot be told apart", found.len())),
    }
}

/// Executed-instruction counts per address inside [addr, addr + size) from a QEMU run.
fn trace(machine: &str, elf: &str, addr: u64, size: u64) -> Result<HashMap<u64, u64>, String> {
    let filter = format!("0x{addr:x}+0x{size:x}");
    let mut child = Command::new("qemu-system-arm")
        .args(["-M", machine, "-display", "none", "-monitor", "none", "-serial", "null"])
        .args(["-semihosting-config", "enable=on,target=native", "-icount", "shift=0", "-singlestep"])
        .args(["-d", "exec,nochain", "-dfilter", &filter, "-kernel", elf])
        .stdout(Stdio::null())
        .stderr(Stdio::piped())
        .spawn()
        .map_err(|e| format!("qemu-system-arm: cannot start ({e})"))?;
    let log = child.stderr.take().ok_or("qemu-system-arm: no log pipe")?;
    let mut counts = HashMap::new();
    // A log line: `Trace 0: 0x... [00800400/000080fc/00000010/ff020201] symbol`.
    for line in BufReader::new(log).lines().map_while(Result::ok).take(LOG_LINES) {
        if let Some(pc) = line.split('/').nth(1).and_then(|pc| u64::from_str_radix(pc, 16).ok()) {
            *counts.entry(pc).or_insert(0u64) += 1;
        }
    }
    // Enough lines counted (or the firmware ended): stop QEMU, which need not run to its end.
    let _ = child.kill();
    let _ = child.wait();
    Ok(counts)
}

pub fn generic_profile(args: &[&str]) -> Result<(), String> {
    let Target { plant, part, elf, gen, src } = target(args)?;
    let elf_s = elf.as_str();
    let ports: usize = src
        .lines()
        .find_map(|l| l.strip_prefix("pub const PORTS: usize = ")?.trim_end_matches(';').parse().ok())
        .ok_or(format!("{}: no `pub const PORTS`", gen.display()))?;
    let (addr, size) = find_step(elf_s, ports, plant.ends_with("_narrow"))?;
    let counts = trace(part.machine, elf_s, addr, size)?;
    let calls = counts.get(&addr).copied().filter(|c| *c > 0).ok_or("the step never ran under QEMU")?;
    let mut pcs: Vec<u64> = counts.keys().copied().collect();
    pcs.sort_unstable();
    let hex: Vec<String> = pcs.iter().map(|a| format!("0x{a:x}")).collect();
    let mut a2l = vec!["-a", "-i", "-f", "-C", "-e", elf_s];
    a2l.extend(hex.iter().map(String::as_str));
    let out = tool("llvm-addr2line", &a2l)?;
    // Per address: its frames (function, file:line), innermost first.
    let mut frames: HashMap<u64, Vec<(String, String)>> = HashMap::new();
    let (mut cur, mut lines) = (None, out.lines().filter(|l| !l.is_empty()).peekable());
    while let Some(l) = lines.next() {
        if let Some(a) = l.strip_prefix("0x") {
            cur = u64::from_str_radix(a, 16).ok();
        } else if let (Some(a), Some(loc)) = (cur, lines.next()) {
            frames.entry(a).or_default().push((l.to_string(), loc.to_string()));
        }
    }
    let (mut by_op, mut by_fn) = (BTreeMap::<String, u64>::new(), BTreeMap::<String, u64>::new());
    for (a, c) in &counts {
        let fr = frames.get(a).map(Vec::as_slice).unwrap_or(&[]);
        // The outermost `Profile` operation (the arithmetic the solver calls), else none.
        let op =
            fr.iter().rev().find(|(f, _)| f.contains("profile")).map_or("(solver code)".into(), |(f, _)| method(f));
        // The innermost solver function: where in the step the instruction belongs.
        let place = fr
            .iter()
            .find(|(_, loc)| loc.contains("core/src/solver"))
            .map(|(f, loc)| {
                let file = loc.rsplit("core/src/").next().unwrap_or(loc);
                format!("{} {}", file.split(':').next().unwrap_or(file), method(f))
            })
            .unwrap_or_else(|| "(call, outside the solver)".into());
        *by_op.entry(op).or_default() += c;
        *by_fn.entry(place).or_default() += c;
    }
    let total: u64 = counts.values().sum();
    let per = |c: u64| c as f64 / calls as f64;
    let mut out = std::io::stdout().lock();
    let closed = |e: std::io::Error| format!("writing the listing: {e}");
    writeln!(
        out,
        "{plant} on {} ({}): generic step, {:.1} instructions per sample over {calls} calls ({ports} ports: {:.2} per port-update)",
        part.name,
        part.target,
        per(total),
        per(total) / ports as f64
    )
    .map_err(closed)?;
    for (title, table) in [("by solver function (innermost)", &by_fn), ("by Profile operation (outermost)", &by_op)] {
        writeln!(out, "\n{title}:").map_err(closed)?;
        let mut rows: Vec<_> = table.iter().collect();
        rows.sort_by(|a, b| b.1.cmp(a.1));
        for (k, c) in rows {
            writeln!(out, "  {:8.1}  {:5.1} %  {k}", per(*c), 100.0 * *c as f64 / total as f64).map_err(closed)?;
        }
    }
    Ok(())
}
