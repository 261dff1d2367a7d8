//! `cargo run -p xtask -- step-profile [PLANT] [m4|m0]`: where the instructions of a
//! plant-specialised `step` go, from the firmware ELF the last `firmware` run built.
//!
//! The specialised step is straight-line code (every junction unrolled, no copy at the ring
//! window's wrap), so each instruction in it runs once per sample: its static count is the
//! instruction count per sample. Each instruction is attributed
//! with `llvm-addr2line -i` to its inline chain: the outermost frame is a line of the
//! generated `examples/firmware/plants/gen/PLANT.rs` (which junction, loss filter or read-out
//! it belongs to), the next one the `Profile` operation it comes from. Needs `llvm-nm`,
//! `llvm-objdump` and `llvm-addr2line` (the Debian package `llvm`) on the PATH.

use std::collections::BTreeMap;
use std::io::Write as _;
use std::process::Command;

pub(crate) fn tool(name: &str, args: &[&str]) -> Result<String, String> {
    let out = Command::new(name)
        .args(args)
        .output()
        .map_err(|e| format!("{name}: cannot start ({e}); install the Debian package `llvm`"))?;
    if !out.status.success() {
        return Err(format!("{name} failed: {}", String::from_utf8_lossy(&out.stderr)));
    }
    Ok(String::from_utf8_lossy(&out.stdout).into_owned())
}

/// What a line of the generated source belongs to: the junction comment above it (its port
/// reads are emitted just before the comment, so they belong to the junction below them), a
/// loss filter, or the rest.
fn line_kinds(src: &str) -> Vec<String> {
    let lines: Vec<&str> = src.lines().collect();
    let mut kind = vec![String::from("step: counter, input, read-out"); lines.len() + 1];
    let mut current = String::from("step: counter, input, read-out");
    for (k, l) in lines.iter().enumerate() {
        if let Some(pos) = l.find("// junction ") {
            let what = l[pos..].split_once(": ").map(|x| x.1).unwrap_or("");
            current = what.split(',').next().unwrap_or(what).trim().to_string();
        } else if l.contains("let mut x: W = self.mem") {
            current = "loss filters (arrival)".into();
        } else if l.contains("self.probes[") && !l.contains("fn ") {
            current = "step: counter, input, read-out".into();
        }
        kind[k + 1] = current.clone();
    }
    let mut next: Option<String> = None;
    for k in (0..lines.len()).rev() {
        if lines[k].contains("// junction ") {
            next = Some(kind[k + 1].clone());
        }
        if lines[k].trim_start().starts_with("let b") && lines[k].contains(": W = ") {
            if let Some(n) = &next {
                kind[k + 1] = n.clone();
            }
        }
    }
    kind
}

/// The `Profile` operation of an inline chain (second-outermost frame), or for the generated
/// code itself what its line does (`line` is that line of the generated source).
fn operation(frames: &[(String, String)], line: &str) -> String {
    if frames.len() < 2 {
        let what = if line.contains("self.mem[") {
            "ring loads and stores (generated)"
        } else if ["self.lx[", "self.ly[", "self.lr[", "x1 = ", "x = y"].iter().any(|k| line.contains(k)) {
            "loss-filter state (generated)"
        } else if line.contains("self.b[") || line.contains("self.chokes[") {
            "other state loads and stores (generated)"
        } else {
            "counter, window, read-out (generated)"
        };
        return what.into();
    }
    method(&frames[frames.len() - 2].0)
}

/// The method name of a demangled (or partly demangled) function name, without its hash.
pub(crate) fn method(f: &str) -> String {
    let is_hash = |s: &str| s.len() == 17 && s.starts_with('h') && s[1..].chars().all(|c| c.is_ascii_hexdigit());
    let last = f.rsplit("::").find(|s| !is_hash(s)).unwrap_or(f);
    last.split('$').next().unwrap_or(last).to_string()
}

/// What a profiling command reads: the plant (first argument, default `p85_wide`), the part
/// (second, `m4` or `m0`), its firmware ELF and the plant's generated source, both written by
/// `cargo run -p xtask -- firmware`.
pub(crate) struct Target {
    pub plant: String,
    pub part: &'static super::parts::Part,
    pub elf: String,
    pub gen: std::path::PathBuf,
    pub src: String,
}

/// The [`Target`] of a profiling command's arguments.
pub(crate) fn target(args: &[&str]) -> Result<Target, String> {
    let plant = args.first().copied().unwrap_or("p85_wide").to_string();
    let part = match args.get(1).copied().unwrap_or("m4") {
        "m4" => &super::PARTS[0],
        "m0" => &super::PARTS[1],
        other => return Err(format!("unknown part `{other}` (m4 or m0)")),
    };
    let p = super::paths();
    let elf = p.target_dir.join(part.target).join("release/tidewire-firmware");
    let elf = elf.to_str().ok_or("non-UTF-8 path")?.to_string();
    let gen = p.crate_dir.join(format!("plants/gen/{plant}.rs"));
    let src = std::fs::read_to_string(&gen)
        .map_err(|e| format!("{}: {e} (run `cargo run -p xtask -- firmware` first)", gen.display()))?;
    Ok(Target { plant, part, elf, gen, src })
}

pub fn step_profile(args: &[&str]) -> Result<(), String> {
    let Target { plant, part, elf, gen: _, src } = target(args)?;
    let elf_s = elf.as_str();
    let needle = format!("plants..{plant}..specialised..Plant");
    let nm = tool("llvm-nm", &["-C", "-S", elf_s])?;
    let (addr, size) = nm
        .lines()
        .filter(|l| l.contains(&needle) && l.contains("::step::"))
        .find_map(|l| {
            let mut it = l.split_whitespace();
            Some((u64::from_str_radix(it.next()?, 16).ok()?, u64::from_str_radix(it.next()?, 16).ok()?))
        })
        .ok_or(format!("no specialised step of {plant} in {elf}"))?;
    let (start, stop) = (format!("--start-address={addr}"), format!("--stop-address={}", addr + size));
    let dis = tool("llvm-objdump", &["-d", "--no-show-raw-insn", &start, &stop, elf_s])?;
    let insns: Vec<(String, String)> = dis
        .lines()
        .filter_map(|l| {
            let (a, rest) = l.trim_start().split_once(':')?;
            u64::from_str_radix(a, 16).ok()?;
            Some((format!("0x{a}"), rest.trim().to_string()))
        })
        .collect();
    let mut a2l = vec!["-a", "-i", "-f", "-C", "-e", elf_s];
    a2l.extend(insns.iter().map(|(a, _)| a.as_str()));
    let out = tool("llvm-addr2line", &a2l)?;
    // Per address: its frames (function, file:line), innermost first.
    let mut frames: Vec<Vec<(String, String)>> = Vec::new();
    let mut lines = out.lines().filter(|l| !l.is_empty()).peekable();
    while let Some(l) = lines.next() {
        if l.starts_with("0x") {
            frames.push(Vec::new());
        } else if let (Some(cur), Some(loc)) = (frames.last_mut(), lines.next()) {
            cur.push((l.to_string(), loc.to_string()));
        }
    }
    let kinds = line_kinds(&src);
    let file = format!("{plant}.rs");
    let (mut by_kind, mut by_op) = (BTreeMap::<String, u64>::new(), BTreeMap::<String, u64>::new());
    let (mut spills, mut consts) = (0u64, 0u64);
    for ((_, ins), fr) in insns.iter().zip(&frames) {
        let line = fr
            .last()
            .filter(|(_, loc)| loc.contains(&file))
            .and_then(|(_, loc)| loc.rsplit(':').next()?.parse::<usize>().ok());
        let kind = line.and_then(|n| kinds.get(n)).cloned().unwrap_or_else(|| "(other)".into());
        *by_kind.entry(kind).or_default() += 1;
        let text = line.and_then(|n| src.lines().nth(n.wrapping_sub(1))).unwrap_or("");
        *by_op.entry(operation(fr, text)).or_default() += 1;
        spills += u64::from(ins.contains("[sp"));
        consts += u64::from(ins.starts_with("movw") || ins.starts_with("movt"));
    }
    let count = |k: &str| src.lines().filter(|l| l.contains("// junction ") && l.contains(&format!(": {k}"))).count();
    let total = insns.len() as u64;
    // Printing to a closed pipe (`| head`) ends the listing, not in a panic.
    let mut out = std::io::stdout().lock();
    let closed = |e: std::io::Error| format!("writing the listing: {e}");
    writeln!(
        out,
        "{plant} on {} ({}): specialised step, {total} instructions (straight line: one pass per sample)",
        part.name, part.target
    )
    .map_err(closed)?;
    writeln!(out, "\nby junction kind (with its ports' ring and state accesses):").map_err(closed)?;
    let mut kinds_sorted: Vec<_> = by_kind.into_iter().collect();
    kinds_sorted.sort_by_key(|x| std::cmp::Reverse(x.1));
    for (k, n) in kinds_sorted {
        let c = count(&k);
        let per = if c > 0 { format!("{c} × {:.1}", n as f64 / c as f64) } else { String::new() };
        writeln!(out, "  {n:6} {:5.1} %  {k} {per}", 100.0 * n as f64 / total as f64).map_err(closed)?;
    }
    writeln!(out, "\nby operation (the Profile call each instruction is inlined from):").map_err(closed)?;
    let mut ops: Vec<_> = by_op.into_iter().collect();
    ops.sort_by_key(|x| std::cmp::Reverse(x.1));
    for (k, n) in ops.iter().take(16) {
        writeln!(out, "  {n:6} {:5.1} %  {k}", 100.0 * *n as f64 / total as f64).map_err(closed)?;
    }
    let sections = src.matches("P::loss_section(").count();
    writeln!(out, "\nloss sections: {sections}").map_err(closed)?;
    writeln!(out, "\nstack accesses (register spills and reloads): {spills}; movw/movt (32-bit constants): {consts}")
        .map_err(closed)?;
    Ok(())
}
