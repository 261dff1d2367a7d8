//! Electrically short segments as lumped wave-digital elements.
//!
//! A segment whose one-way delay τ is below [`LUMP_BELOW_SAMPLES`] samples cannot be a delay
//! line at the plant's rate. It is modelled instead by its shunt capacitance C'·l as a
//! capacitor element at a node, and its two end nodes become one core junction (its series
//! inductance L'·l and resistance R'·l are neglected):
//!
//! * **stub**: one end is a leaf (no other segment, not the drive): the leaf's load moves to
//!   the tap node (resistors in parallel combine, capacitors become elements there) beside
//!   the stub's own C'·l; a stub shorted at its leaf becomes an inductor element L'·l with
//!   R'·l in series at the tap instead (a short there would short the tap);
//! * **joined**: both ends carry other segments or the drive: the two nodes are merged and
//!   C'·l sits at the merged node.
//!
//! * **series**: a piece whose two nodes carry nothing but one other segment each, of one
//!   impedance (no load, drive, probe or event), may instead be the core's series-inductor
//!   junction (L'·l with R'·l in series, between two line ends of equal impedance), its
//!   C'·l neglected: chosen when that model's stated error is the smaller.
//!
//! * **pi**: a piece below `MIN_FRACTIONAL_DELAY` samples between two nodes that keep delay
//!   lines of their own: C'·l/2 at each node, R'·l + L'·l as the core's series branch between
//!   them; chosen where its stated error is smaller than the delay line's or the joined
//!   model's (`super::pi` says where it applies).
//!
//! Chains of short segments merge transitively (union-find over the plant's nodes). The
//! error each model makes is stated per segment ([`lump_error`]).
use super::loads::{realize, ElementSpec};
use super::{checked_milliohm, err, MIN_OHM};
use crate::plant::{Drive, EventAction, Load, Plant, PlantError, ProbeKind};
use num_complex::Complex64;
use tidewire_core::ElementKind;
use tidewire_core::Shunt;

/// Segments with a one-way delay below this many samples are lumped. One constant: the
/// whole-sample delay lines of today carry any delay from half a sample up (rounded); when
/// lines carry fractional delays down to their own minimum, raise this to that minimum.
pub const LUMP_BELOW_SAMPLES: f64 = 0.5;

/// How a short segment was lumped.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum LumpKind {
    /// A stub to a leaf node: the leaf's load and the stub's C at the tap node.
    Stub {
        /// The leaf (plant node) whose load moved to the tap.
        leaf: usize,
    },
    /// A piece between two connected nodes: nodes merged, the piece's C there.
    Joined,
    /// A piece between two line ends of equal impedance and nothing else: its series
    /// inductance L'·l and resistance R'·l as a series-inductor junction (port 2L/T), its C
    /// neglected. Chosen over [`LumpKind::Joined`] where its stated error is smaller (a piece
    /// of higher impedance than the lines it joins).
    Series,
    /// A piece between two nodes that keep delay lines of their own: C'l/2 at each node and
    /// R'l + L'l as a series branch between them (`super::pi`). Chosen over a whole-sample
    /// delay line or [`LumpKind::Joined`] where its stated error is smaller.
    Pi,
}

/// The lumping decided for a plant at one sample period.
#[derive(Debug, Clone, PartialEq)]
pub struct LumpPlan {
    /// Plant node → its class; classes are numbered 0.. in order of their first node, and
    /// class k becomes core junction k.
    pub class_of: Vec<usize>,
    /// Number of classes (core node junctions).
    pub classes: usize,
    /// Per plant segment: `Some` when it is lumped.
    pub lumped: Vec<Option<LumpKind>>,
}

impl LumpPlan {
    /// Plant nodes of class `k`, in plant order.
    pub fn members(&self, k: usize) -> impl Iterator<Item = usize> + '_ {
        self.class_of.iter().enumerate().filter(move |(_, c)| **c == k).map(|(n, _)| n)
    }
}

fn find(parent: &mut [usize], mut x: usize) -> usize {
    while parent[x] != x {
        parent[x] = parent[parent[x]];
        x = parent[x];
    }
    x
}

fn drive_node(plant: &Plant) -> usize {
    match plant.drive {
        Drive::Source { node, .. } | Drive::Rig { node, .. } => node,
    }
}

/// Decide which segments are lumped at sample period `dt`, and which nodes merge.
/// Errors (located at the segment) where a short segment carries something a lumped model
/// cannot hold: a choke, a scheduled break, the rig port, a current probe; or where the
/// merge leaves a node with no delay line at all.
pub fn plan(plant: &Plant, file: &str, dt: f64) -> Result<LumpPlan, PlantError> {
    let n = plant.nodes.len();
    let degree = |node: usize| plant.segments.iter().filter(|s| s.from == node || s.to == node).count();
    let mut parent: Vec<usize> = (0..n).collect();
    let mut lumped = vec![None; plant.segments.len()];
    // Plant nodes already at one end of a pi section (each in at most one).
    let mut pi_nodes: Vec<usize> = vec![];
    for (si, seg) in plant.segments.iter().enumerate() {
        let cable = &plant.cables[seg.cable];
        let samples = seg.length / cable.velocity / dt;
        // NaN (a zero velocity cannot reach here) counts as long: nothing is lumped on it.
        if samples.is_nan() {
            continue;
        }
        if samples >= LUMP_BELOW_SAMPLES {
            // A whole-sample delay line, or a pi section where that states less error.
            if samples < super::MIN_FRACTIONAL_DELAY && super::pi::fits(plant, si, dt, &pi_nodes) {
                let judge = super::pi::judge(plant, dt);
                if super::pi::error(plant, si, judge) < super::pi::line_error(plant, si, dt, judge) {
                    lumped[si] = Some(LumpKind::Pi);
                    pi_nodes.extend([seg.from, seg.to]);
                }
            }
            continue;
        }
        let need = crate::si::at_least(LUMP_BELOW_SAMPLES * cable.velocity / seg.length, "Hz");
        let refuse = |what: &str, field: String| {
            Err(err(
                file,
                seg.span,
                field,
                format!(
                    "segment is {:.3} samples long at this rate, so it is modelled as lumped elements, which cannot hold {what}",
                    samples
                ),
                format!("raise plant.sample_rate to at least \"{need}\" so that it is a delay line"),
            ))
        };
        if seg.inline.is_some() {
            return refuse("a choke inside it", format!("segment[{}].choke", seg.name));
        }
        if plant.events.iter().any(|e| matches!(e.action, EventAction::Break { segment, .. } if segment == si)) {
            return refuse("a scheduled break", format!("segment[{}]", seg.name));
        }
        if matches!(plant.drive, Drive::Rig { node, .. } if node == seg.from || node == seg.to) {
            return refuse("the rig port at its end", format!("segment[{}]", seg.name));
        }
        if let Some(p) = plant.probes.iter().find(|p| matches!(p.kind, ProbeKind::Current(s, _) if s == si)) {
            return refuse("a current probe", format!("probe[{}].segment", p.name));
        }
        let drive = drive_node(plant);
        let leaf = [seg.to, seg.from].into_iter().find(|&e| degree(e) == 1 && e != drive && seg.from != seg.to);
        if leaf.is_none() && super::pi::fits(plant, si, dt, &pi_nodes) {
            let judge = super::pi::judge(plant, dt);
            if super::pi::error(plant, si, judge) < lump_error(plant, si, LumpKind::Joined, judge) {
                lumped[si] = Some(LumpKind::Pi);
                pi_nodes.extend([seg.from, seg.to]);
                continue;
            }
        }
        lumped[si] = Some(match leaf {
            Some(leaf) => LumpKind::Stub { leaf },
            None => LumpKind::Joined,
        });
        let (a, b) = (find(&mut parent, seg.from), find(&mut parent, seg.to));
        if a != b {
            parent[a.max(b)] = a.min(b);
        }
    }
    // Number the classes in order of their first node.
    let mut class_of = vec![usize::MAX; n];
    let mut root_class = vec![usize::MAX; n];
    let mut classes = 0;
    for (node, class) in class_of.iter_mut().enumerate() {
        let r = find(&mut parent, node);
        if root_class[r] == usize::MAX {
            root_class[r] = classes;
            classes += 1;
        }
        *class = root_class[r];
    }
    // Every class that has segments must keep at least one delay line: the core reads a
    // node's voltage at a line end, and a plant of lumped pieces only has no line at all.
    for k in 0..classes {
        let touching: Vec<usize> = (0..plant.segments.len())
            .filter(|&s| class_of[plant.segments[s].from] == k || class_of[plant.segments[s].to] == k)
            .collect();
        if !touching.is_empty() && touching.iter().all(|&s| lumped[s].is_some()) {
            let s = &plant.segments[touching[0]];
            let longest = touching
                .iter()
                .map(|&s| plant.segments[s].length / plant.cables[plant.segments[s].cable].velocity)
                .fold(0.0, f64::max);
            return Err(err(
                file,
                s.span,
                format!("segment[{}].length", s.name),
                format!(
                    "node {} and the nodes joined to it by segments shorter than {LUMP_BELOW_SAMPLES} samples have no longer segment left: the whole part is lumped and has no delay line",
                    plant.nodes[s.from].name
                ),
                format!(
                    "raise plant.sample_rate to at least \"{}\"",
                    crate::si::at_least(LUMP_BELOW_SAMPLES / longest, "Hz")
                ),
            ));
        }
    }
    let mut plan = LumpPlan { class_of, classes, lumped };
    for si in 0..plant.segments.len() {
        if plan.lumped[si] == Some(LumpKind::Joined) && series_fits(plant, &plan, si) {
            let judge = super::model_error::judged_rise(plant, dt);
            if lump_error(plant, si, LumpKind::Series, judge) < lump_error(plant, si, LumpKind::Joined, judge) {
                plan.lumped[si] = Some(LumpKind::Series);
            }
        }
    }
    Ok(plan)
}

/// Whether lumped segment `si` can be a series-inductor junction: its class is exactly its
/// two end nodes, each with no load, drive, probe or scheduled load change, and one other
/// segment each, delay lines of one impedance.
fn series_fits(plant: &Plant, plan: &LumpPlan, si: usize) -> bool {
    let seg = &plant.segments[si];
    if seg.from == seg.to || plan.members(plan.class_of[seg.from]).count() != 2 {
        return false;
    }
    let mut z = vec![];
    for node in [seg.from, seg.to] {
        let quiet = plant.nodes[node].load == Load::Open
            && drive_node(plant) != node
            && !plant.probes.iter().any(|p| p.kind == ProbeKind::Voltage(node))
            && !plant.events.iter().any(|e| matches!(e.action, EventAction::SetLoad(n, _) if n == node));
        let others: Vec<usize> = (0..plant.segments.len())
            .filter(|&k| k != si && (plant.segments[k].from == node || plant.segments[k].to == node))
            .collect();
        if !quiet || others.len() != 1 || plan.lumped[others[0]].is_some() {
            return false;
        }
        z.push(plant.cables[plant.segments[others[0]].cable].z0);
    }
    (z[0] - z[1]).abs() <= 1e-9 * z[0]
}

/// The shunt and elements of class `k`: every member node's load (resistive parts in
/// parallel, a short wins; a series RC as its own element) plus one capacitor for the summed
/// C'·l of the lumped segments inside the class and the members' capacitors to return. `replace` swaps one member's load (a
/// scheduled load change) before combining.
pub(super) fn class_load(
    plant: &Plant,
    plan: &LumpPlan,
    k: usize,
    dt: f64,
    file: &str,
    replace: Option<(usize, Load)>,
) -> Result<(Shunt, Vec<ElementSpec>), PlantError> {
    let mut short = false;
    let mut g = 0.0;
    let mut resistive_members = 0;
    let mut single: Option<Shunt> = None;
    let mut elements = vec![];
    let mut first = None;
    let has_lumped = plant.segments.iter().zip(&plan.lumped).any(|(s, l)| l.is_some() && plan.class_of[s.from] == k);
    let mut extra_c = 0.0;
    let mut inductive = vec![];
    for n in plan.members(k) {
        let node = &plant.nodes[n];
        first.get_or_insert(n);
        let load = match replace {
            Some((r, l)) if r == n => l,
            _ => node.load,
        };
        // In a class with lumped segments, a capacitor to return joins the lumped C (one
        // element per node, not one per part); it is checked as part of that sum.
        // A stub shorted at its leaf is an inductor L'·l (with R'·l in series) to return at
        // the tap, not a short there: its C'·l is left out (the short carries it).
        let shorted_stub = (0..plant.segments.len()).find(|&s| plan.lumped[s] == Some(LumpKind::Stub { leaf: n }));
        let load = match (load, shorted_stub) {
            (Load::Short, Some(si)) if replace.is_none() => {
                let (port, series) = series_l(plant, si, dt, file)?;
                elements.push((ElementKind::Inductor, port, series));
                inductive.push(si);
                Load::Open
            }
            (l, _) => l,
        };
        let load = match load {
            Load::Capacitor(c) if has_lumped => {
                extra_c += c;
                Load::Open
            }
            Load::ParallelRc { r, c } if has_lumped => {
                extra_c += c;
                Load::Resistor(r)
            }
            l => l,
        };
        let (shunt, els) = realize(&load, dt, file, node.span, &format!("node.{}.load", node.name))?;
        match (shunt, load) {
            (Shunt::Short, _) => short = true,
            (Shunt::Resistor { .. }, Load::Resistor(r) | Load::ParallelRc { r, .. }) => {
                g += 1.0 / r;
                resistive_members += 1;
                single = Some(shunt);
            }
            _ => {}
        }
        elements.extend(els);
    }
    let lumped_c: f64 = plant
        .segments
        .iter()
        .zip(&plan.lumped)
        .enumerate()
        .filter(|(si, (s, l))| {
            l.is_some() && (plan.class_of[s.from] == k || plan.class_of[s.to] == k) && !inductive.contains(si)
        })
        .map(|(_, (s, l))| {
            // A pi section puts half its C at each of its two nodes (classes).
            let c = plant.cables[s.cable].c_per_m() * s.length;
            if *l == Some(LumpKind::Pi) {
                c / 2.0 * [s.from, s.to].iter().filter(|&&n| plan.class_of[n] == k).count() as f64
            } else {
                c
            }
        })
        .sum::<f64>()
        + extra_c;
    let Some(first) = first else { return Ok((Shunt::Open, vec![])) };
    if series_class(plant, plan, k).is_some() {
        // A series-inductor junction: no node, no shunt, its C neglected (stated).
        return Ok((Shunt::Open, vec![]));
    }
    let node = &plant.nodes[first];
    if short {
        // A short at the node: every other part of the load carries no voltage.
        return Ok((Shunt::Short, vec![]));
    }
    if lumped_c > 0.0 {
        let field = format!("node.{}", node.name);
        // The capacitance is the lumped segments' C'·length (and any capacitor joined to it),
        // not a capacitor the user wrote: say so, or the message names a part that is not in
        // the file.
        let (_, els) = realize(&Load::Capacitor(lumped_c), dt, file, node.span, &field).map_err(|mut e| {
            e.message = format!(
                // Scientific: this error is for values far outside the prefixes' range.
                "the segments lumped at this node (shorter than half a sample) carry {lumped_c:.3e} F: {}",
                e.message
            );
            e.hint = format!("{}; or, for a segment far too short to matter, join its two nodes instead", e.hint);
            e
        })?;
        elements.extend(els);
    }
    let shunt = match resistive_members {
        0 => Shunt::Open,
        // One resistor keeps the value the node's own load gave (no round trip through S).
        1 => single.unwrap_or(Shunt::Open),
        _ => Shunt::Resistor {
            milliohm: checked_milliohm(1.0 / g, file, node.span, &format!("node.{}.load", node.name))?,
        },
    };
    Ok((shunt, elements))
}

/// The series-lumped segment whose class is `k`, if any.
pub fn series_class(plant: &Plant, plan: &LumpPlan, k: usize) -> Option<usize> {
    (0..plant.segments.len())
        .find(|&s| plan.lumped[s] == Some(LumpKind::Series) && plan.class_of[plant.segments[s].from] == k)
}

/// Admittance of a node's load at angular frequency `w` (None: a short, infinite).
pub fn load_admittance(load: &Load, w: f64) -> Option<Complex64> {
    let jw = Complex64::new(0.0, w);
    Some(match *load {
        Load::Open => Complex64::new(0.0, 0.0),
        Load::Short => return None,
        Load::Resistor(r) => Complex64::new(1.0 / r, 0.0),
        Load::Capacitor(c) => jw * c,
        Load::SeriesRc { r, c } => 1.0 / (r + 1.0 / (jw * c)),
        Load::ParallelRc { r, c } => 1.0 / r + jw * c,
    })
}

/// Resistive impedance on the far side of node `node` as seen from segment `si`: the other
/// segments' Z0, the node's resistive load and the drive's resistance, in parallel.
fn side_resistance(plant: &Plant, node: usize, si: usize) -> f64 {
    let mut g = 0.0;
    for (k, s) in plant.segments.iter().enumerate() {
        if k != si && (s.from == node || s.to == node) {
            g += 1.0 / plant.cables[s.cable].z0;
        }
    }
    g += match plant.nodes[node].load {
        Load::Short => f64::INFINITY,
        Load::Resistor(r) | Load::ParallelRc { r, .. } => 1.0 / r,
        _ => 0.0,
    };
    match plant.drive {
        Drive::Source { node: d, rs, .. } if d == node => g += 1.0 / rs,
        Drive::Rig { node: d, dut_resistance, .. } if d == node => g += 1.0 / dut_resistance,
        _ => {}
    }
    1.0 / g
}

/// Segment `si`'s line constants at the frequency that carries a drive edge of 10–90 % time
/// `rise` (ω = 2π·0.35/rise [practice]): per-metre series impedance R' + jωL' and shunt
/// admittance jωC', Zc = sqrt(Z/Y) and θ = sqrt(Z·Y)·l, as the lumped models' errors use them.
pub(super) struct LineAtEdge {
    pub w: f64,
    pub z_series: Complex64,
    pub y_shunt: Complex64,
    pub zc: Complex64,
    pub theta: Complex64,
}

impl LineAtEdge {
    pub fn of(plant: &Plant, si: usize, rise: f64) -> LineAtEdge {
        let seg = &plant.segments[si];
        let cable = &plant.cables[seg.cable];
        let w = 2.0 * std::f64::consts::PI * 0.35 / rise;
        let jw = Complex64::new(0.0, w);
        let z_series = cable.r_per_m + jw * cable.l_per_m();
        let y_shunt = jw * cable.c_per_m();
        let zc = (z_series / y_shunt).sqrt();
        let theta = (z_series * y_shunt).sqrt() * seg.length;
        LineAtEdge { w, z_series, y_shunt, zc, theta }
    }
}

/// The relative error of the lumped model of segment `si` at the drive's bandwidth
/// f = 0.35/rise (rise: the 10-90 % time; the usual single-pole bandwidth-rise rule
/// [practice]), with the line's propagation γ = sqrt((R' + jωL')·jωC') and impedance
/// Zc = sqrt((R' + jωL')/(jωC')) (telegrapher's equations [closed form]); θ = γ·l.
///
/// * Stub to a leaf with load admittance Y_L: exact input admittance
///   Y_in = (Y_L + tanh θ / Zc) / (1 + Zc·Y_L·tanh θ); the lumped model is
///   Y_L + jωC'l. The figure is |Y_lumped − Y_in| / |Y_in|. For an open stub and a
///   lossless line it is (ωτ)²/3 to leading order (tanh θ = θ − θ³/3 + ...); a resistive
///   load adds (Z0/R_L)²·ωτ relative to its own admittance. It bounds the error of the tap
///   node's voltage from below: the node's other admittance (the trunk) only dilutes it.
/// * Joined piece: the exact chain matrix is [cosh θ, Zc sinh θ; sinh θ / Zc, cosh θ]; the
///   model is [1, 0; jωC'l, 1]. The neglected series impedance Zc·sinh θ ≈ (R' + jωL')·l
///   acts against the smaller resistance R_side seen at either end, and cosh θ − 1 ≈ θ²/2 is
///   the neglected second-order term: |Zc sinh θ| / R_side + |cosh θ − 1|, to leading order
///   ωτ·Z0/R_side + R/R_side + (ωτ)²/2.
pub fn lump_error(plant: &Plant, si: usize, kind: LumpKind, rise: f64) -> f64 {
    let seg = &plant.segments[si];
    let LineAtEdge { w, z_series, y_shunt, zc, theta } = LineAtEdge::of(plant, si, rise);
    match kind {
        LumpKind::Stub { leaf } => {
            let t = theta.tanh();
            let Some(yl) = load_admittance(&plant.nodes[leaf].load, w) else {
                // A shorted stub: exact Y_in = 1/(Zc·tanh θ), modelled as the inductor and
                // resistance 1/((R' + jωL')·l); (ωτ)²/3 to leading order.
                let y_in = 1.0 / (zc * theta.tanh());
                let y_model = 1.0 / (z_series * seg.length);
                return (y_model - y_in).norm() / y_in.norm();
            };
            let y_in = (yl + t / zc) / (1.0 + zc * yl * t);
            let y_lump = yl + y_shunt * seg.length;
            if y_in.norm() == 0.0 {
                return 0.0;
            }
            (y_lump - y_in).norm() / y_in.norm()
        }
        LumpKind::Joined => {
            let r_side = side_resistance(plant, seg.from, si).min(side_resistance(plant, seg.to, si));
            let series = (zc * theta.sinh()).norm();
            let series_part = if r_side > 0.0 { series / r_side } else { f64::INFINITY };
            series_part + (theta.cosh() - 1.0).norm()
        }
        LumpKind::Pi => super::pi::error(plant, si, rise),
        LumpKind::Series => {
            // Model [1, (R' + jωL')·l; 0, 1]: the neglected shunt sinh θ / Zc ≈ jωC'l
            // against the larger resistance at either end, and cosh θ − 1 as above.
            let r_side = side_resistance(plant, seg.from, si).max(side_resistance(plant, seg.to, si));
            let shunt = (theta.sinh() / zc).norm() * r_side;
            let series_err = (zc * theta.sinh() - z_series * seg.length).norm() / r_side.max(1e-300);
            shunt + series_err + (theta.cosh() - 1.0).norm()
        }
    }
}

/// Segment `si` lumped as its inductance with its conductor resistance in series (a shorted
/// stub's inductor element, or a series-inductor junction between two line ends): the port
/// resistance 2L'l/T (bilinear) and R'l, both in mΩ. R'l below the core's 1 mΩ is 0 (far
/// below anything that shows); either value outside the core's range is a located error
/// (never clamped).
pub(super) fn series_l(plant: &Plant, si: usize, dt: f64, file: &str) -> Result<(u32, u32), PlantError> {
    let seg = &plant.segments[si];
    let cable = &plant.cables[seg.cable];
    let field = format!("segment[{}].length", seg.name);
    let port = checked_milliohm(2.0 * cable.l_per_m() * seg.length / dt, file, seg.span, &field)?;
    let r = cable.r_per_m * seg.length;
    let series = if r < MIN_OHM { 0 } else { checked_milliohm(r, file, seg.span, &field)? };
    Ok((port, series))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn open_stub_error_is_a_third_of_omega_tau_squared() {
        // [closed form] tanh θ = θ − θ³/3 + ...: relative error (ωτ)²/3 for a lossless
        // open stub, to leading order.
        let mut p = crate::plant::file::parse_plant(
            r#"
[plant]
name = "t"
sample_rate = "10 MHz"
duration = "1 us"
[cable.c]
impedance = "100 ohm"
velocity_factor = 0.5
[node.a]
[node.b]
[node.s]
[[segment]]
from = "a"
to = "b"
cable = "c"
length = "100 m"
[[segment]]
from = "a"
to = "s"
cable = "c"
length = "3 m"
[drive]
kind = "source"
node = "a"
resistance = "100 ohm"
waveform = { step = "1 V", rise = "200 ns" }
"#,
            "t.toml",
            std::path::Path::new("."),
        )
        .unwrap();
        p.nodes[2].load = Load::Open;
        let plan = plan(&p, "t.toml", 1e-7).unwrap();
        assert_eq!(plan.lumped, vec![None, Some(LumpKind::Stub { leaf: 2 })]);
        assert_eq!(plan.class_of[0], plan.class_of[2]);
        let tau = 3.0 / (0.5 * crate::plant::C0);
        let wt = 2.0 * std::f64::consts::PI * 0.35 / 200e-9 * tau;
        let e = lump_error(&p, 1, LumpKind::Stub { leaf: 2 }, 200e-9);
        assert!((e / (wt * wt / 3.0) - 1.0).abs() < 0.01, "{e} vs {}", wt * wt / 3.0);
    }
}
