//! Segments to core lines: delay quantization, lumped conductor resistance, break nodes.
use super::{err, report::SegmentTiming, to_milliohm};
use crate::plant::{Plant, PlantError, Segment};
use tidewire_core::{Junction, JunctionId, Line, LineLoss, Shunt, MAX_LOSS_SECTIONS};

/// Largest R/Z0 of one lumped section. Each section puts its resistance R/n in its middle;
/// a finer cut makes the lumped line approach the distributed one. The value 0.05 keeps one
/// section's step-response error well under 1 % (the reference table in
/// docs/references.md gives 0.05 % matched / 0.8 % mismatched at R/Z0 = 0.1 for one
/// three-point section [computed, numerical Laplace inversion]).
pub const SECTION_R_OVER_Z0: f64 = 0.05;
/// At most this many sections per segment (storage stays bounded).
pub const MAX_SECTIONS: usize = 64;
/// Smallest one-way delay, in samples, that a line realises with a fraction: its ring of
/// N >= 1 whole samples plus a fractional-delay allpass of d in [0.5, 1.5)
/// (`super::fraction`). A segment whose longest line would be shorter keeps a whole-sample
/// delay (rounded; the timing report says so).
pub const MIN_FRACTIONAL_DELAY: f64 = 1.0 + super::fraction::MIN_FRACTION;

/// One core line of a segment: where it lies along the segment, in metres from `from`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LinePiece {
    pub line: u16,
    pub start_m: f64,
    pub end_m: f64,
}

pub(super) struct Builder<'p> {
    plant: &'p Plant,
    file: &'p str,
    dt: f64,
    /// Fraction bits of the profile's loss and allpass coefficients (`Profile::LOSS_FRAC`).
    frac: u32,
    /// The drive's bandwidth, Hz (where the fraction's group-delay error is reported).
    edge_hz: f64,
    pub lines: Vec<Line>,
    pub losses: Vec<LineLoss>,
    pub junctions: Vec<Junction>,
    pub pieces: Vec<Vec<LinePiece>>,
    pub timings: Vec<SegmentTiming>,
    /// Plant node → core junction (nodes joined by a lumped segment share one).
    pub node_junction: Vec<JunctionId>,
    /// Loss designs by (cable index, line length bits): the fit depends only on the cable,
    /// the length, the sample rate and the profile (fixed per build), so a chain of equal
    /// segments of one cable fits once, not once per segment.
    loss_cache: std::collections::HashMap<(usize, u64), Option<super::loss::LossDesign>>,
}

impl<'p> Builder<'p> {
    pub fn new(plant: &'p Plant, file: &'p str, dt: f64, frac: u32, edge_hz: f64) -> Self {
        Builder {
            plant,
            file,
            dt,
            frac,
            edge_hz,
            lines: vec![],
            losses: vec![],
            junctions: vec![],
            pieces: vec![],
            timings: vec![],
            node_junction: (0..plant.nodes.len()).map(|n| n as JunctionId).collect(),
            loss_cache: Default::default(),
        }
    }

    fn new_junction(&mut self, j: Junction) -> Result<JunctionId, PlantError> {
        let id = self.junctions.len();
        if id >= u16::MAX as usize {
            return Err(err(
                self.file,
                Default::default(),
                "segment",
                "plant too large: more than 65535 junctions",
                "split the plant",
            ));
        }
        self.junctions.push(j);
        Ok(id as JunctionId)
    }

    /// Lay out segment `si`; `cuts` are (event index, distance) of breaks; `min_first`
    /// is the rig latency when one end is the rig port. Returns (event index, junction) of
    /// every break.
    pub fn segment(
        &mut self,
        seg: &Segment,
        cuts: &[(usize, f64)],
        rig_latency: Option<u32>,
    ) -> Result<Vec<(usize, JunctionId)>, PlantError> {
        let cable = &self.plant.cables[seg.cable];
        let tau = seg.length / cable.velocity;
        let exact = tau / self.dt;
        let field = format!("segment[{}].length", seg.name);
        if exact < 0.5 {
            let need = 0.5 / tau;
            return Err(err(
                self.file,
                seg.span,
                field,
                format!("segment is {:.3} ns long, shorter than half a sample ({:.3} ns)", tau * 1e9, self.dt * 0.5e9),
                format!(
                    "raise plant.sample_rate to at least \"{}\", or merge this segment into a neighbour",
                    crate::si::at_least(need, "Hz")
                ),
            ));
        }
        let delay = exact.round() as u32;
        let r_total = cable.r_per_m * seg.length;
        self.timings.push(SegmentTiming {
            name: seg.name.clone(),
            cable: cable.name.clone(),
            length: seg.length,
            z0: cable.z0,
            tau,
            delay,
            error_s: delay as f64 * self.dt - tau,
            fraction: None,
            r_total,
            sections: 0,
            r_dropped: false,
            loss_fit_db: None,
            loss_edge_db: 0.0,
            dispersion_s: 0.0,
            dispersion_samples: 0,
            model: super::SegmentModel::DelayLine,
            model_error: 0.0,
            exceeds: false,
        });

        // Sub-runs between breaks: [0, d1], [d1, d2], ..., [dk, length].
        // Cut points: breaks (an open node the event splits) and an in-line choke (a series
        // inductor junction, port resistance 2L/T, between two runs of the same cable).
        let mut cut_d: Vec<(Option<usize>, f64)> = cuts.iter().map(|(e, d)| (Some(*e), *d)).collect();
        if let Some(inl) = seg.inline {
            cut_d.push((None, inl.at));
        }
        cut_d.sort_by(|a, b| a.1.total_cmp(&b.1));
        let mut bounds = vec![0.0];
        bounds.extend(cut_d.iter().map(|c| c.1));
        bounds.push(seg.length);
        let mut ends = vec![self.node_junction[seg.from]];
        for (event, _) in cut_d.iter() {
            let j = match (event, seg.inline) {
                (None, Some(inl)) => Junction::SeriesInductor {
                    port_milliohm: to_milliohm(2.0 * inl.inductance / self.dt),
                    milliohm: (inl.resistance * 1000.0).round().clamp(0.0, u32::MAX as f64) as u32,
                },
                _ => Junction::Node { shunt: Shunt::Open },
            };
            ends.push(self.new_junction(j)?);
        }
        ends.push(self.node_junction[seg.to]);
        // Whole samples per sub-run, keeping the segment's total delay.
        let mut sample_bounds: Vec<u32> =
            bounds.iter().map(|d| ((d / seg.length) * delay as f64).round() as u32).collect();
        *sample_bounds.last_mut().unwrap_or(&mut 0) = delay;
        let mut pieces = vec![];
        let mut sections_total = 0;
        let mut dropped = false;
        for k in 0..bounds.len() - 1 {
            let d = sample_bounds[k + 1].saturating_sub(sample_bounds[k]);
            if d == 0 {
                return Err(err(
                    self.file,
                    seg.span,
                    format!("segment[{}]", seg.name),
                    format!(
                        "a break at {:.2} m leaves a piece shorter than one sample",
                        bounds[k + 1].min(bounds[k].max(0.0))
                    ),
                    "move the break away from the segment's ends and from other breaks, or raise the sample rate",
                ));
            }
            let len = bounds[k + 1] - bounds[k];
            let r = r_total * len / seg.length;
            // The rig node is never joined to another (`lumped::plan` refuses that), so plant
            // node ids compare directly here.
            let at_rig = rig_latency.filter(|_| {
                (k == 0 && self.plant_rig_node() == Some(seg.from))
                    || (k + 2 == bounds.len() && self.plant_rig_node() == Some(seg.to))
            });
            let (n, drop) = sections(r, cable.z0, d, at_rig);
            dropped |= drop;
            sections_total += n;
            self.run(&mut pieces, ends[k], ends[k + 1], cable.z0, d, if drop { 0.0 } else { r }, n, bounds[k], len)?;
        }
        if let Some(t) = self.timings.last_mut() {
            t.sections = sections_total;
            t.r_dropped = dropped;
        }
        if rig_latency.is_none() {
            self.add_fraction(&pieces, exact);
        }
        self.pieces.push(pieces);
        Ok(cut_d.iter().enumerate().filter_map(|(k, (e, _))| e.map(|e| (e, ends[k + 1]))).collect())
    }

    /// A segment lumped by `lumped.rs`: no line, its timing row only (the report fills its
    /// model and error), and an empty piece list so segment indices stay aligned.
    pub fn lumped_segment(&mut self, seg: &Segment) {
        let cable = &self.plant.cables[seg.cable];
        let tau = seg.length / cable.velocity;
        self.timings.push(SegmentTiming {
            name: seg.name.clone(),
            cable: cable.name.clone(),
            length: seg.length,
            z0: cable.z0,
            tau,
            delay: 0,
            error_s: -tau,
            r_total: cable.r_per_m * seg.length,
            sections: 0,
            r_dropped: cable.r_per_m > 0.0,
            loss_fit_db: None,
            loss_edge_db: 0.0,
            dispersion_s: 0.0,
            dispersion_samples: 0,
            model: super::SegmentModel::Lumped(super::LumpKind::Joined),
            model_error: 0.0,
            exceeds: false,
            fraction: None,
        });
        self.pieces.push(vec![]);
    }

    /// Give the segment just laid out (`pieces`, wanted delay `exact` samples plus the lossy
    /// cable's extra delay) its fractional part: the residual r = wanted − whole samples goes
    /// to the segment's longest line, whose ring becomes N = floor(D − 0.5) for its share
    /// D = delay + r, with an allpass of d = D − N in [0.5, 1.5). Lines with D below
    /// [`MIN_FRACTIONAL_DELAY`] and residuals within `WHOLE_TOLERANCE` stay whole. Segments
    /// at a rig port stay whole (the rig's latency is taken out of that line's ring).
    fn add_fraction(&mut self, pieces: &[LinePiece], exact: f64) {
        use super::fraction::{design, timing, WHOLE_TOLERANCE};
        let Some(t) = self.timings.last_mut() else { return };
        let wanted = exact + t.dispersion_s / self.dt;
        // u64: a huge segment's delays saturate at u32::MAX each (the capacity check refuses
        // such a plant later, with a located error).
        let whole: u64 = pieces.iter().map(|p| u64::from(self.lines[p.line as usize].delay)).sum();
        let r = wanted - whole as f64;
        let longest = pieces.iter().map(|p| p.line as usize).max_by_key(|l| (self.lines[*l].delay, usize::MAX - *l));
        let Some(li) = longest else { return };
        let share = self.lines[li].delay as f64 + r;
        // The realised delay without a fraction (the old error, kept when nothing changes).
        t.error_s = (whole as f64 - wanted) * self.dt;
        if r.abs() <= WHOLE_TOLERANCE || !(MIN_FRACTIONAL_DELAY..u32::MAX as f64).contains(&share) {
            return;
        }
        let ring = (share - 0.5).floor().max(1.0) as u32;
        let d = share - ring as f64;
        let ft = timing(d, self.frac, self.edge_hz, self.dt);
        let whole_new = whole.saturating_sub(u64::from(self.lines[li].delay)) + u64::from(ring);
        self.lines[li].delay = ring;
        t.error_s = (whole_new as f64 + ft.realised - wanted) * self.dt;
        t.delay = u32::try_from(whole_new.saturating_sub(u64::from(t.dispersion_samples))).unwrap_or(u32::MAX);
        t.fraction = Some(ft);
        let ap = Some(design(d));
        match self.losses.iter_mut().find(|l| l.line as usize == li) {
            Some(l) => l.allpass = ap,
            None => self.losses.push(LineLoss {
                line: li as u16,
                sections: 0,
                poles: [0; MAX_LOSS_SECTIONS],
                zeros: [0; MAX_LOSS_SECTIONS],
                allpass: ap,
            }),
        }
    }

    fn plant_rig_node(&self) -> Option<usize> {
        match self.plant.drive {
            crate::plant::Drive::Rig { node, .. } => Some(node),
            _ => None,
        }
    }

    /// One run of `d` samples from junction `a` to `b`, with resistance `r` in `n` sections.
    #[allow(clippy::too_many_arguments)]
    fn run(
        &mut self,
        pieces: &mut Vec<LinePiece>,
        a: JunctionId,
        b: JunctionId,
        z0: f64,
        d: u32,
        r: f64,
        n: usize,
        start_m: f64,
        len_m: f64,
    ) -> Result<(), PlantError> {
        let z = to_milliohm(z0);
        let cable = &self.plant.cables[self.plant.segments[self.pieces.len()].cable];
        // Sample positions of the section resistors: the middle of each section.
        let mut cuts: Vec<u32> =
            (0..n).map(|k| ((d as f64) * (2 * k + 1) as f64 / (2 * n) as f64).round() as u32).collect();
        cuts.dedup();
        let mut prev_j = a;
        let mut prev_s = 0u32;
        for c in &cuts {
            let j = self.new_junction(Junction::Series { milliohm: to_milliohm(r / cuts.len() as f64) })?;
            self.push_line(pieces, z, c - prev_s, prev_j, j, start_m, len_m, prev_s, *c, d);
            self.add_loss(cable, pieces)?;
            prev_j = j;
            prev_s = *c;
        }
        self.push_line(pieces, z, d - prev_s, prev_j, b, start_m, len_m, prev_s, d, d);
        self.add_loss(cable, pieces)?;
        Ok(())
    }

    /// Design the loss filter of the line just pushed (its own length of the cable), and
    /// check its quantized gain stays at or below 1 up to Nyquist before anything is written.
    fn add_loss(&mut self, cable: &crate::plant::CableType, pieces: &[LinePiece]) -> Result<(), PlantError> {
        let Some(p) = pieces.last() else { return Ok(()) };
        let fs = 1.0 / self.dt;
        let length = p.end_m - p.start_m;
        let cable_id = self.plant.cables.iter().position(|c| std::ptr::eq(c, cable)).unwrap_or(usize::MAX);
        let key = (cable_id, length.to_bits());
        let design = match self.loss_cache.get(&key) {
            Some(d) => d.clone(),
            None => {
                let d = super::loss::design(cable, length, fs, p.line, self.frac);
                self.loss_cache.insert(key, d.clone());
                d
            }
        };
        if let Some(mut d) = design {
            d.loss.line = p.line;
            if d.peak_gain > 1.0 + 1e-9 {
                let seg = &self.plant.segments[self.pieces.len()];
                return Err(err(
                    self.file,
                    seg.span,
                    format!("segment[{}]", seg.name),
                    format!("the loss filter of this segment would gain {:.6} after quantization", d.peak_gain),
                    "this is a compiler fault; lower the loss or the sample rate and report the plant",
                ));
            }
            let extra = d.extra_delay.round().max(0.0) as u32;
            if let Some(l) = self.lines.last_mut() {
                l.delay += extra;
            }
            if let Some(t) = self.timings.last_mut() {
                t.dispersion_s += d.extra_delay * self.dt;
                t.dispersion_samples += extra;
                t.loss_fit_db = Some(t.loss_fit_db.unwrap_or(0.0).max(d.max_error_db));
                t.loss_edge_db += d.edge_loss_db;
            }
            self.losses.push(d.loss);
        }
        Ok(())
    }

    #[allow(clippy::too_many_arguments)]
    fn push_line(
        &mut self,
        pieces: &mut Vec<LinePiece>,
        z: u32,
        delay: u32,
        a: JunctionId,
        b: JunctionId,
        start_m: f64,
        len_m: f64,
        s0: u32,
        s1: u32,
        d: u32,
    ) {
        pieces.push(LinePiece {
            line: self.lines.len() as u16,
            start_m: start_m + len_m * s0 as f64 / d as f64,
            end_m: start_m + len_m * s1 as f64 / d as f64,
        });
        self.lines.push(Line { z_milliohm: z, delay, a, b });
    }
}

/// Number of sections for resistance `r` on a run of `d` samples, and whether the resistance
/// had to be dropped (a run of one sample cannot hold a series junction).
///
/// Every section needs a line of at least one sample on both sides of its resistor, so
/// n <= d/2; at a rig port the first line must keep latency + 1 samples.
fn sections(r: f64, z0: f64, d: u32, rig_latency: Option<u32>) -> (usize, bool) {
    if r <= 0.0 {
        return (0, false);
    }
    let want = ((r / z0) / SECTION_R_OVER_Z0).ceil().max(1.0) as usize;
    let mut max_n = (d / 2) as usize;
    if let Some(l) = rig_latency {
        // First line = round(d/(2n)) samples >= l + 1.
        let first = l as usize + 1;
        max_n = max_n.min(d as usize / (2 * first).max(1));
    }
    let n = want.min(max_n).min(MAX_SECTIONS);
    if n == 0 {
        (0, true)
    } else {
        (n, false)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn section_count_follows_r_over_z0_and_fits_the_delay() {
        assert_eq!(sections(0.0, 100.0, 50, None), (0, false));
        assert_eq!(sections(4.0, 100.0, 50, None), (1, false)); // R/Z0 = 0.04
        assert_eq!(sections(40.0, 100.0, 50, None), (8, false)); // 0.4 / 0.05
        assert_eq!(sections(40.0, 100.0, 6, None), (3, false)); // capped at d/2
        assert_eq!(sections(1.0, 100.0, 1, None), (0, true)); // one sample: dropped
        assert_eq!(sections(40.0, 100.0, 50, Some(10)), (2, false)); // first line >= 11
    }
}
