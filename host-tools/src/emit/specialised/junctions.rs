//! One arm per junction kind: the Rust statements that turn the arriving waves `b{p}` of a
//! junction's ports into its outgoing waves `a{p}`, calling the core's own `Profile`
//! operation for that kind (the same call, the same coefficients as the generic solver).
//! A kind the emitter does not know yet is refused, never approximated: a new kind is one
//! more arm here.
use super::{list, EmitError};
use std::fmt::Write as _;
use tidewire_core::emitted::{JunctionPlan, NodeCoef};

/// Per-junction facts the arms need besides the plan.
pub struct Ctx<'a> {
    /// Port weights, by port.
    pub weights: &'a [u32],
    /// Slot in `self.nodes` if this node is switched by an event, else `None` (constants).
    pub switch_slot: Option<usize>,
    /// Slot in `self.chokes` for a series inductor.
    pub choke_slot: usize,
    /// Every junction's plan (a series branch reads its two nodes' records).
    pub all: &'a [JunctionPlan],
}

/// Emit junction `j`.
pub fn emit(s: &mut String, j: usize, plan: &JunctionPlan, cx: &Ctx<'_>) -> Result<(), EmitError> {
    match *plan {
        JunctionPlan::Node { first, count, g_src, coef, .. } => node(s, j, first, count, g_src, coef, cx),
        JunctionPlan::Series { p, q, c } => {
            let _ = writeln!(s, "        // junction {j}: series resistor, c = {c}");
            let _ = writeln!(s, "        let (a{p}, a{q}) = P::series(b{p}, b{q}, {c}u32);");
            Ok(())
        }
        JunctionPlan::SeriesInductor { p, q, c, rho } => {
            let k = cx.choke_slot;
            let _ = writeln!(s, "        // junction {j}: series inductor, c = {c}, rho = {rho}");
            let _ = writeln!(
                s,
                "        let (a{p}, a{q}, s{k}) = P::series_l(b{p}, b{q}, self.chokes[{k}], {c}u32, {rho}u32);"
            );
            let _ = writeln!(s, "        self.chokes[{k}] = s{k};");
            Ok(())
        }
        JunctionPlan::Rig { port } => {
            let _ = writeln!(s, "        // junction {j}: rig port, a = v − b[n − latency]");
            let _ = writeln!(s, "        let a{port} = P::sub(e, rig_back);");
            Ok(())
        }
        JunctionPlan::Branch { a, b, na, nb, nl, n, recip, shift } => {
            // The generic solver's branch pass (`Solver::scatter_branches`): each node's
            // open wave, the series adaptor, each node with its link wave; b_L' = −a_L.
            let k = cx.choke_slot;
            let side = |node: u16| match cx.all.get(node as usize) {
                Some(JunctionPlan::Node { first, count, g_src, coef, .. }) => {
                    let ports: Vec<usize> = (*first as usize..*first as usize + *count as usize).collect();
                    let g = ports
                        .iter()
                        .map(|p| cx.weights.get(*p).map(|g| format!("{g}u32")))
                        .collect::<Option<Vec<_>>>()?;
                    let div = format!("{}u32, {}u32, {}u64", coef.recip, coef.shift, coef.total);
                    Some((ports, g.join(", "), format!("{g_src}u32"), div, coef.total / 2))
                }
                _ => None,
            };
            let bad = || EmitError::Unsupported {
                what: "a series branch whose ends are not nodes".into(),
                junction: Some(j),
            };
            let (pa, ga, sa, xa, la) = side(a).ok_or_else(bad)?;
            let (pb, gb, sb, xb, lb) = side(b).ok_or_else(bad)?;
            let _ = writeln!(s, "        // junction {j}: series branch from node {a} to node {b}, n = {n}");
            let _ =
                writeln!(s, "        let wa{j}: W = P::branch_open(&[{}], &[{ga}], e, {sa}, {xa});", list(&pa, "b"));
            let _ =
                writeln!(s, "        let wb{j}: W = P::branch_open(&[{}], &[{gb}], e, {sb}, {xb});", list(&pb, "b"));
            let _ = writeln!(
                s,
                "        let (ra{j}, rb{j}, al{j}) = P::branch_series(wa{j}, wb{j}, self.chokes[{k}], {na}u32, {nb}u32, {nl}u32, {recip}u32, {shift}u32, {n}u32);"
            );
            for (ports, g, src, x, link, r) in [(&pa, &ga, &sa, &xa, la, "ra"), (&pb, &gb, &sb, &xb, lb, "rb")] {
                let _ = writeln!(
                    s,
                    "        let [{}] = {{ let mut o = [P::ZERO; {}]; P::branch_node(&[{}], &[{g}], &mut o, e, {src}, {link}u32, {r}{j}, {x}); o }};",
                    list(ports, "a"),
                    ports.len(),
                    list(ports, "b"),
                );
            }
            let _ = writeln!(s, "        self.chokes[{k}] = P::neg(al{j});");
            Ok(())
        }
        _ => {
            Err(EmitError::Unsupported { what: "a junction kind this emitter does not know".into(), junction: Some(j) })
        }
    }
}

fn node(
    s: &mut String,
    j: usize,
    first: u16,
    count: u16,
    g_src: u32,
    coef: NodeCoef,
    cx: &Ctx<'_>,
) -> Result<(), EmitError> {
    if count == 0 {
        return Ok(());
    }
    let ports: Vec<usize> = (first as usize..first as usize + count as usize).collect();
    let weights = ports
        .iter()
        .map(|p| cx.weights.get(*p).map(|g| format!("{g}u32")))
        .collect::<Option<Vec<_>>>()
        .ok_or(EmitError::Unsupported { what: "a node whose ports are out of range".into(), junction: Some(j) })?;
    let a = list(&ports, "a");
    let b = list(&ports, "b");
    let n = ports.len();
    let neg = ports.iter().map(|p| format!("P::neg(b{p})")).collect::<Vec<_>>().join(", ");
    let scatter = |recip: &str, shift: &str, total: &str| {
        format!(
            "{{ let mut o = [P::ZERO; {n}]; P::node_scatter(&[{b}], &[{}], &mut o, e, {g_src}u32, {recip}, {shift}, {total}); o }}",
            weights.join(", ")
        )
    };
    match cx.switch_slot {
        None => {
            let body = if coef.reflects() {
                format!("[{b}]")
            } else if coef.short {
                format!("[{neg}]")
            } else {
                scatter(&format!("{}u32", coef.recip), &format!("{}u32", coef.shift), &format!("{}u64", coef.total))
            };
            let _ = writeln!(s, "        // junction {j}: node of {n} port(s), fixed");
            let _ = writeln!(s, "        let [{a}] = {body};");
        }
        Some(k) => {
            let _ = writeln!(s, "        // junction {j}: node of {n} port(s), switched by the plant's events");
            let _ = writeln!(s, "        let c = self.nodes[{k}];");
            let _ = writeln!(
                s,
                "        let [{a}] = if c.scatters() {{ {} }} else if c.reflects() {{ [{b}] }} else {{ [{neg}] }};",
                scatter("c.recip", "c.shift", "c.total")
            );
        }
    }
    Ok(())
}
