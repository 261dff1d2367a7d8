//! The plant-specialised solver: Rust source for one plant and profile, a type implementing
//! `tidewire_core::PlantStep` with the coefficients as constants, the junction sequence
//! unrolled (no dispatch), every ring addressed from one sample counter as a base and a
//! constant offset (no per-port cursors, no bounds check that can fail; `layout`), and the same arithmetic as the generic
//! `Solver`: the same `Profile` calls in the same order on the coefficients the core itself
//! computed when it loaded the plant (`loaded`), so the two forms agree bit for bit.
//!
//! Structure: `loaded` reads the generic solver's plan, `layout` places the rings,
//! `junctions` has one arm per junction kind; this module writes the type around them.
mod junctions;
mod layout;
mod loaded;

use crate::compile::ProfileKind;
use layout::{Arrival, Layout};
use loaded::Loaded;
use std::fmt::Write as _;
use tidewire_core::emitted::{DrivePlan, JunctionPlan};
use tidewire_core::{BuildError, JunctionId, Network};

/// Why no specialised solver was written.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum EmitError {
    /// The core refused the network (the compiler should have said so first).
    #[error("the core refused the network: {0}")]
    Refused(BuildError),
    /// Something the specialised form does not support yet (junction index where known).
    #[error("the plant-specialised solver does not support {what} yet")]
    Unsupported { what: String, junction: Option<usize> },
    /// The host could not run the plan reader.
    #[error("host failure: {0}")]
    Host(String),
}

/// The ports a junction scatters (a series branch: both of its nodes' ports; `all` is every
/// junction's plan).
fn junction_ports(all: &[JunctionPlan], jp: &JunctionPlan) -> Vec<usize> {
    match *jp {
        JunctionPlan::Node { first, count, .. } => (first as usize..first as usize + count as usize).collect(),
        JunctionPlan::Series { p, q, .. } | JunctionPlan::SeriesInductor { p, q, .. } => {
            (p as usize..(q as usize).max(p as usize) + 1).collect()
        }
        JunctionPlan::Rig { port } => vec![port as usize],
        JunctionPlan::Branch { a, b, .. } => [a, b]
            .iter()
            .flat_map(|n| all.get(*n as usize).map(|x| junction_ports(all, x)).unwrap_or_default())
            .collect(),
        _ => vec![],
    }
}

/// The nodes a series branch scatters (skipped in their own place).
fn linked_nodes(all: &[JunctionPlan]) -> Vec<usize> {
    all.iter()
        .flat_map(|jp| match *jp {
            JunctionPlan::Branch { a, b, .. } => vec![a as usize, b as usize],
            _ => vec![],
        })
        .collect()
}

/// Junctions that keep a state wave in `self.chokes` (series inductors and series branches).
fn has_choke(jp: &JunctionPlan) -> bool {
    matches!(jp, JunctionPlan::SeriesInductor { .. } | JunctionPlan::Branch { .. })
}

/// `a3, a4, a5` for ports [3, 4, 5] and prefix "a".
pub(crate) fn list(ports: &[usize], prefix: &str) -> String {
    ports.iter().map(|p| format!("{prefix}{p}")).collect::<Vec<_>>().join(", ")
}

/// What `tidewire compile --rust` writes: the network as `static`s for the generic solver
/// (`rust_source`), then the plant-specialised solver (`pub mod specialised`).
pub fn plant_rust_source(
    net: &Network<'_>,
    profile: ProfileKind,
    switched: &[JunctionId],
    title: &str,
) -> Result<String, EmitError> {
    let spec = specialised_source(net, profile, switched)?;
    Ok(super::rust_source(net, title) + &spec)
}

/// The junctions a compiled plant's events switch.
pub fn switched_junctions(c: &crate::compile::Compiled) -> Vec<JunctionId> {
    c.events
        .iter()
        .map(|e| match e.action {
            crate::compile::CoreAction::SetShunt(j, _) | crate::compile::CoreAction::Break(j) => j,
        })
        .collect()
}

/// Waves of delay memory the specialised form of `net` keeps (three spans, see `layout`), or
/// `None` where it cannot be emitted.
pub fn specialised_memory_waves(net: &Network<'_>, profile: ProfileKind) -> Option<u64> {
    let l = loaded::load(net, profile).ok()?;
    Layout::of(&l).map(|x| 3 * u64::from(x.span))
}

/// The source of `pub mod specialised { pub struct Plant }` for `net` compiled for
/// `profile`; `switched` are the junctions the plant's events change (their nodes keep
/// run-time coefficients, every other node is constants).
pub fn specialised_source(
    net: &Network<'_>,
    profile: ProfileKind,
    switched: &[JunctionId],
) -> Result<String, EmitError> {
    let l = loaded::load(net, profile)?;
    let layout = Layout::of(&l)
        .ok_or(EmitError::Unsupported { what: "a delay memory of 2^31 waves or more".into(), junction: None })?;
    Writer { l: &l, layout: &layout, profile, switched }.write()
}

/// The first statement of every read of the rings: the window of the coming sample. The
/// `min` costs one compare per sample and lets the compiler prove every `mem[i + offset]` in
/// bounds (i < SPAN, offset < 2·SPAN, MEM = 3·SPAN): no bounds check that can fail.
const WINDOW: &str = "let i = (self.i as usize).min(SPAN - 1);";

/// Between two junctions: no load or store moves across it, and it
/// is no instruction. The step is one basic block, and without it the instruction scheduler
/// hoists later junctions' ring loads far ahead of their use, where they spill to the stack
/// (the firmware's p85_wide step on the M4: 252 stack accesses without it, 76 with it;
/// `cargo run -p xtask -- step-profile`). Not between lossy line ends, where it cost more
/// than it saved.
const FENCE: &str = "core::sync::atomic::compiler_fence(core::sync::atomic::Ordering::SeqCst);";

struct Writer<'a> {
    l: &'a Loaded,
    layout: &'a Layout,
    profile: ProfileKind,
    switched: &'a [JunctionId],
}

impl Writer<'_> {
    /// Node slots of the switched nodes, by junction.
    fn switch_slots(&self) -> Vec<Option<usize>> {
        let mut next = 0usize;
        self.l
            .junctions
            .iter()
            .enumerate()
            .map(|(j, jp)| {
                let switched = self.switched.iter().any(|s| *s as usize == j);
                (switched && matches!(jp, JunctionPlan::Node { .. })).then(|| {
                    next += 1;
                    next - 1
                })
            })
            .collect()
    }

    /// A wave into the ring at write offset `w`: at the window's upper copy (offset SPAN + w,
    /// where this period reads it) and one span lower (offset w, where the next period reads
    /// it if it is still in flight at the wrap; see `layout`).
    fn to_ring(&self, s: &mut String, w: u32, wave: &str) {
        let _ = writeln!(s, "            self.mem[i + {}] = {wave};", self.layout.span + w);
        let _ = writeln!(s, "            self.mem[i + {w}] = {wave};");
    }

    /// The expression of port p's arriving wave at the start of a sample (counter `n`).
    fn arrival(&self, p: usize) -> String {
        match self.layout.arrival.get(p) {
            Some(Arrival::Memory { offset }) => format!("self.mem[i + {}]", self.layout.span + offset),
            Some(Arrival::State { slot }) => format!("self.b[{slot}]"),
            None => "P::ZERO".into(),
        }
    }

    fn write(&self) -> Result<String, EmitError> {
        let l = self.l;
        let (pname, wave) = match self.profile {
            ProfileKind::Wide => ("Wide", "i32"),
            ProfileKind::Narrow => ("Narrow", "i16"),
        };
        let slots = self.switch_slots();
        let n_switched = slots.iter().flatten().count();
        let n_chokes = l.junctions.iter().filter(|j| has_choke(j)).count();
        let n_sections: usize = l.losses.iter().map(|x| x.sections as usize).sum();
        // Loss state (see `step`): the first section's previous input per end, and the previous
        // outputs the sections cannot read elsewhere.
        let n_lx = l.losses.iter().filter(|x| x.sections > 0).count();
        let n_ly: usize = l
            .losses
            .iter()
            .map(|x| x.sections as usize - usize::from(x.sections > 0 && x.allpass.is_none() && x.zc.is_none()))
            .sum();
        let n_allpass = l.losses.iter().filter(|x| x.allpass.is_some()).count();
        let n_zc = l.losses.iter().filter(|x| x.zc.is_some()).count();
        let rig = match l.drive {
            DrivePlan::Rig { port, latency } => Some((port, latency)),
            _ => None,
        };
        let hist = if rig.is_some() { 64 } else { 0 };
        let mut s = String::new();
        let _ = writeln!(
            s,
            "\n/// The plant-specialised solver of this plant ({} profile): the generic solver's",
            self.profile.name()
        );
        let _ =
            writeln!(s, "/// arithmetic with the coefficients as constants and the junctions unrolled; bit-exact with");
        let _ =
            writeln!(s, "/// `Solver` loaded from `NETWORK`. Only the nodes the plant's events switch can change at");
        let _ = writeln!(
            s,
            "/// run time (`set_shunt`, `set_broken`); every other node is fixed (`ConfigError::FixedNode`)."
        );
        let _ = writeln!(
            s,
            "#[allow(clippy::all, unused_imports, unused_variables, unused_mut, non_snake_case, dead_code)]"
        );
        let _ = writeln!(s, "pub mod specialised {{");
        let _ = writeln!(s, "    use tidewire_core::emitted::{{node_coefficients, NodeCoef}};");
        let _ = writeln!(s, "    use tidewire_core::{{ConfigError, PlantStep, Profile, Shunt, MAX_ZC_SECTIONS}};\n");
        let _ = writeln!(s, "    type P = tidewire_core::{pname};");
        let _ = writeln!(s, "    type W = {wave};");
        let _ =
            writeln!(s, "    /// The rings' span, waves: the window of one sample, and the period of its position.");
        let _ = writeln!(s, "    pub const SPAN: usize = {};", self.layout.span);
        let _ = writeln!(
            s,
            "    /// Delay memory, waves: three spans. Every ring write also lands one span lower, where\n    /// the window finds the waves still in flight after it wraps, so no sample copies memory\n    /// and every sample costs the same (docs/firmware.md, \"The slowest sample\")."
        );
        let _ = writeln!(s, "    pub const MEM: usize = 3 * SPAN;");
        let _ = writeln!(s, "    const IO_SHIFT: u32 = {};", l.io_shift);
        let _ = writeln!(s, "    const EXPONENT: u32 = {};", l.exponent);
        let _ = writeln!(s, "    const PROBES: usize = {};", l.probes.len());
        let _ = writeln!(s, "    const HIST: usize = {hist};");
        let _ = writeln!(s, "    const INITIAL_NODES: [NodeCoef; {n_switched}] = [");
        for jp in l.junctions.iter().zip(&slots).filter(|(_, s)| s.is_some()).map(|(j, _)| j) {
            if let JunctionPlan::Node { coef: c, .. } = jp {
                let _ = writeln!(
                    s,
                    "        NodeCoef {{ recip: {}, shift: {}, total: {}, short: {}, broken: {}, open: {} }},",
                    c.recip, c.shift, c.total, c.short, c.broken, c.open
                );
            }
        }
        let _ = writeln!(s, "    ];\n");
        let _ = writeln!(
            s,
            "    /// The plant's state: one delay memory, one sample counter, the states that outlive a sample."
        );
        let _ = writeln!(s, "    pub struct Plant {{");
        let _ = writeln!(
            s,
            "        n: u32,\n        i: u32,\n        mem: [W; MEM],\n        b: [W; {}],",
            self.layout.states
        );
        let _ = writeln!(
            s,
            "        chokes: [W; {n_chokes}],\n        lx: [W; {n_lx}],\n        ly: [W; {n_ly}],\n        lr: [W; {n_sections}],\n        aps: [W; {n_allpass}],\n        zcs: [[W; MAX_ZC_SECTIONS]; {n_zc}],\n        zcc: [W; {n_zc}],"
        );
        let _ = writeln!(s, "        hist: [W; HIST],\n        probes: [i32; PROBES],\n        nodes: [NodeCoef; {n_switched}],\n    }}\n");
        let _ = writeln!(s, "    impl Plant {{");
        let _ = writeln!(s, "        /// The plant at rest (`const`, so it can live in a `static`).");
        let _ = writeln!(s, "        pub const fn new() -> Self {{");
        let _ = writeln!(
            s,
            "            Plant {{ n: 0, i: 0, mem: [P::ZERO; MEM], b: [P::ZERO; {}], chokes: [P::ZERO; {n_chokes}], lx: [P::ZERO; {n_lx}], ly: [P::ZERO; {n_ly}], lr: [P::ZERO; {n_sections}], aps: [P::ZERO; {n_allpass}], zcs: [[P::ZERO; MAX_ZC_SECTIONS]; {n_zc}], zcc: [P::ZERO; {n_zc}], hist: [P::ZERO; HIST], probes: [0; PROBES], nodes: INITIAL_NODES }}",
            self.layout.states
        );
        let _ = writeln!(s, "        }}\n    }}\n");
        let _ = writeln!(s, "    impl Default for Plant {{\n        fn default() -> Self {{\n            Self::new()\n        }}\n    }}\n");
        let _ = writeln!(s, "    impl PlantStep for Plant {{");
        self.step(&mut s, &slots)?;
        self.rest(&mut s, &slots, rig);
        let _ = writeln!(s, "    }}\n}}");
        Ok(s)
    }

    /// Send port p's outgoing wave on: into the ring of its partner (the line carries it to the
    /// far end), or through an element's adaptor into the element's state (its next arriving
    /// wave: the generic solver's ring of one sample that feeds itself).
    fn send(&self, s: &mut String, p: usize) {
        let Some(port) = self.l.ports.get(p) else { return };
        if let Some(el) = self.l.elements.iter().find(|e| e.port as usize == p) {
            if let Some(Arrival::State { slot }) = self.layout.arrival.get(p) {
                let _ = writeln!(s, "            let a{p} = P::adapt(b{p}, a{p}, {}u32, {});", el.mu, el.negate);
                let _ = writeln!(s, "            self.b[{slot}] = a{p};");
            }
            return;
        }
        if let Some(w) = self.layout.write.get(port.partner as usize).copied().flatten() {
            // A Zc(s) end: its post-step (the sections take d = a_p − b_p) and the wave into
            // the line a_p + c; a{p} itself stays the junction's a_p for read-out.
            let zc = self.l.losses.iter().filter(|x| x.zc.is_some()).position(|x| x.port as usize == p);
            match (zc, self.l.losses.iter().find(|x| x.port as usize == p).and_then(|x| x.zc)) {
                (Some(z), Some(zp)) => {
                    let _ = writeln!(
                        s,
                        "            let line{p} = P::zc_post(a{p}, b{p}, self.zcc[{z}], &mut self.zcs[{z}], &{:?}, &{:?}, {});",
                        zp.pole, zp.rho, zp.sections
                    );
                    self.to_ring(s, w, &format!("line{p}"));
                }
                _ => self.to_ring(s, w, &format!("a{p}")),
            }
        }
    }

    /// `fn step`: per junction its arrivals, scatter and sends; read-out; loss filters.
    fn step(&self, s: &mut String, slots: &[Option<usize>]) -> Result<(), EmitError> {
        let l = self.l;
        let _ = writeln!(s, "        #[inline]\n        fn step(&mut self, input: i16) -> i16 {{");
        let _ = writeln!(
            s,
            "            let n = self.n;\n            {WINDOW}\n            let e: W = P::from_code(input, IO_SHIFT);"
        );
        // The rig port's arriving wave goes into the latency history before any junction runs.
        if let DrivePlan::Rig { port, .. } = l.drive {
            let _ = writeln!(s, "            let b{port}: W = {};", self.arrival(port as usize));
        }
        if let DrivePlan::Rig { port, latency } = l.drive {
            let _ = writeln!(
                s,
                "            // rig port: the pin was read while the DAC showed the wave of `latency` samples ago"
            );
            let _ = writeln!(s, "            self.hist[(n as usize) & (HIST - 1)] = b{port};");
            let _ =
                writeln!(s, "            let rig_back = self.hist[(n.wrapping_sub({latency}) as usize) & (HIST - 1)];");
        }
        let weights: Vec<u32> = l.ports.iter().map(|p| p.weight).collect();
        let mut chokes = 0usize;
        let rig_port = match l.drive {
            DrivePlan::Rig { port, .. } => Some(port as usize),
            _ => None,
        };
        let linked = linked_nodes(&l.junctions);
        for (j, jp) in l.junctions.iter().enumerate() {
            // A node a series branch joins is scattered by its branch (as the generic solver's
            // branch pass does); a switched one cannot be (the core refuses to switch it).
            if linked.contains(&j) {
                if slots.get(j).copied().flatten().is_some() {
                    return Err(EmitError::Unsupported {
                        what: "an event at a node a series branch joins".into(),
                        junction: Some(j),
                    });
                }
                continue;
            }
            // Per junction: read its ports' arriving waves, scatter, and send every outgoing
            // wave on at once (into the partner's ring, or an element's adaptor and state), so
            // only a junction's own waves are live at a time.
            let ports = junction_ports(&l.junctions, jp);
            for p in ports.iter().copied().filter(|p| Some(*p) != rig_port) {
                let _ = writeln!(s, "            let b{p}: W = {};", self.arrival(p));
            }
            let cx = junctions::Ctx {
                weights: &weights,
                switch_slot: slots.get(j).copied().flatten(),
                choke_slot: chokes,
                all: &l.junctions,
            };
            let mut body = String::new();
            junctions::emit(&mut body, j, jp, &cx)?;
            for line in body.lines() {
                let _ = writeln!(s, "    {line}");
            }
            chokes += usize::from(has_choke(jp));
            for p in ports.iter().copied() {
                self.send(s, p);
            }
            let _ = writeln!(s, "            {FENCE}");
        }
        for (k, pr) in l.probes.iter().enumerate() {
            let f = if pr.current { "diff" } else { "sum" };
            // At the rig port the pin shows b[n − latency] (the generic solver's read-out).
            let b = if Some(pr.port as usize) == rig_port { "rig_back".to_string() } else { format!("b{}", pr.port) };
            let _ = writeln!(s, "            self.probes[{k}] = P::{f}(a{p}, {b});", p = pr.port);
        }
        let output = match l.drive {
            DrivePlan::Source { port } => format!("P::to_code(P::sum(a{port}, b{port}), IO_SHIFT)"),
            DrivePlan::Rig { port, .. } => format!("P::to_code(P::sum(b{port}, b{port}), IO_SHIFT)"),
            DrivePlan::None => "0".into(),
        };
        let _ = writeln!(s, "            let output = {output};");
        // Loss filters, in the generic solver's order, on the waves that just arrived.
        let (mut sec, mut ap, mut zc, mut lx, mut ly) = (0usize, 0usize, 0usize, 0usize, 0usize);
        for lp in &l.losses {
            let p = lp.port as usize;
            let (Some(r), Some(Arrival::State { slot })) =
                (self.layout.read.get(p).copied().flatten(), self.layout.arrival.get(p))
            else {
                return Err(EmitError::Unsupported { what: "a loss filter on an element port".into(), junction: None });
            };
            let _ = writeln!(s, "            let mut x: W = self.mem[i + {}];", self.layout.span + r + 1);
            // Section k's previous input is section k − 1's previous output, so only the first
            // section keeps its input (`lx`, one per end); the last section's previous output is
            // the wave it left in `b[slot]` when nothing follows it (`ly` only where needed).
            let sections = lp.sections as usize;
            let last_in_b = lp.allpass.is_none() && lp.zc.is_none();
            if sections > 0 {
                let _ = writeln!(s, "            let mut x1: W = self.lx[{lx}];\n            self.lx[{lx}] = x;");
                lx += 1;
            }
            for k in 0..sections {
                let (g, gb, a) = (lp.g[k], lp.gb[k], lp.a[k]);
                let last = k + 1 == sections;
                let y1 = if last && last_in_b { format!("self.b[{slot}]") } else { format!("self.ly[{ly}]") };
                let _ = writeln!(s, "            let y1: W = {y1};");
                let _ = writeln!(
                    s,
                    "            let (y, r) = P::loss_section(x, x1, y1, self.lr[{sec}], {g}u32, {gb}i32, {a}u32);"
                );
                let _ = writeln!(s, "            self.lr[{sec}] = r;");
                if !(last && last_in_b) {
                    let _ = writeln!(s, "            self.ly[{ly}] = y;");
                    ly += 1;
                }
                if !last {
                    let _ = writeln!(s, "            x1 = y1;");
                }
                let _ = writeln!(s, "            x = y;");
                sec += 1;
            }
            if let Some((a, c)) = lp.allpass {
                let _ = writeln!(
                    s,
                    "            let (y, s_next) = P::allpass(x, self.aps[{ap}], {a}i32, {c}u32);\n            self.aps[{ap}] = s_next;\n            x = y;"
                );
                ap += 1;
            }
            if let Some(zp) = lp.zc {
                let _ = writeln!(
                    s,
                    "            let (c, bp) = P::zc_pre(x, &self.zcs[{zc}], &{:?}, {});\n            self.zcc[{zc}] = c;\n            x = bp;",
                    zp.k, zp.sections
                );
                zc += 1;
            }
            let _ = writeln!(s, "            self.b[{slot}] = x;");
        }
        let _ = writeln!(s, "            self.n = n.wrapping_add(1);");
        // The window moves up by one and wraps to 0 at the end of the span; the waves in
        // flight are already where the next period reads them (see `layout`), so no sample
        // does more work than another.
        let _ = writeln!(s, "            self.i = if i + 1 < SPAN {{ (i + 1) as u32 }} else {{ 0 }};");
        let _ = writeln!(s, "            output\n        }}\n");
        Ok(())
    }

    /// Read-out, reset and the events.
    fn rest(&self, s: &mut String, slots: &[Option<usize>], rig: Option<(u16, u16)>) {
        let _ = writeln!(s, "        fn probe_raw(&self, k: usize) -> i32 {{\n            self.probes.get(k).copied().unwrap_or(0)\n        }}\n");
        let _ = writeln!(s, "        fn probe_count(&self) -> usize {{\n            PROBES\n        }}\n");
        let drive = match rig {
            Some((port, _)) => format!(
                "{WINDOW}\n            let b: W = {};\n            P::to_code(P::sum(b, b), IO_SHIFT)",
                self.arrival(port as usize)
            ),
            None => "0".into(),
        };
        let _ = writeln!(s, "        fn rig_drive(&self) -> i16 {{\n            {drive}\n        }}\n");
        let _ = writeln!(s, "        fn reset(&mut self) {{");
        // In place: no temporary of the plant's size on the stack (a Cortex-M0 has little).
        let _ = writeln!(s, "            self.n = 0;\n            self.i = 0;");
        for field in ["mem", "b", "chokes", "lx", "ly", "lr", "aps", "zcc", "hist"] {
            let _ = writeln!(s, "            self.{field}.iter_mut().for_each(|w| *w = P::ZERO);");
        }
        let _ = writeln!(s, "            self.zcs.iter_mut().for_each(|z| *z = [P::ZERO; MAX_ZC_SECTIONS]);");
        let _ = writeln!(s, "            self.probes.iter_mut().for_each(|w| *w = 0);\n        }}\n");
        let mut shunt_arms = String::new();
        let mut broken_arms = String::new();
        let mut fixed = Vec::new();
        for (j, (jp, slot)) in self.l.junctions.iter().zip(slots).enumerate() {
            match (jp, slot) {
                (JunctionPlan::Node { g_src, port_sum, port_min, .. }, Some(k)) => {
                    let _ = writeln!(
                        shunt_arms,
                        "                {j} => {{\n                    self.nodes[{k}] = node_coefficients::<P>(junction, {g_src}, {port_sum}, {port_min}, EXPONENT, self.nodes[{k}], shunt)?;\n                    Ok(())\n                }}"
                    );
                    let _ = writeln!(broken_arms, "                {j} => {{\n                    self.nodes[{k}].broken = broken;\n                    Ok(())\n                }}");
                }
                (JunctionPlan::Node { .. }, None) => fixed.push(j.to_string()),
                _ => {}
            }
        }
        let fixed_arm = if fixed.is_empty() {
            String::new()
        } else {
            format!("                {} => Err(ConfigError::FixedNode {{ junction }}),\n", fixed.join(" | "))
        };
        let _ =
            writeln!(s, "        fn set_shunt(&mut self, junction: u16, shunt: Shunt) -> Result<(), ConfigError> {{");
        let _ = writeln!(s, "            match junction {{\n{shunt_arms}{fixed_arm}                _ => Err(ConfigError::NotANode {{ junction }}),\n            }}\n        }}\n");
        let _ =
            writeln!(s, "        fn set_broken(&mut self, junction: u16, broken: bool) -> Result<(), ConfigError> {{");
        let _ = writeln!(s, "            match junction {{\n{broken_arms}{fixed_arm}                _ => Err(ConfigError::NotANode {{ junction }}),\n            }}\n        }}");
    }
}
