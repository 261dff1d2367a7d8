//! Segments to core lines: delay quantization, lumped conductor resistance, break nodes.
use super::{err, report::SegmentTiming, to_milliohm, MAX_OHM, MIN_OHM};
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
    /// Loss designs by (cable index, grid length): the fit depends only on the cable, the
    /// length, the sample rate and the profile (fixed per build); lengths go to the cable's
    /// grid (`loss::grid_step`), so a chain of one cable fits once per grid length it
    /// uses, not once per line, whatever the spread of its segment lengths.
    loss_cache: std::collections::HashMap<(usize, u64), Option<super::loss::LossDesign>>,
    /// Fit the loss filters (`true`), or only lay the network out to size it (`false`: a
    /// line that would get a filter gets an empty loss record, no dispersion delay).
    pub fit_losses: bool,
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
            fit_losses: true,
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
            r_dropped: None,
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
                    port_milliohm: self.choke_port(seg, inl.inductance)?,
                    // The plant reader holds the choke's resistance to >= 0; zero is a
                    // plain inductor (the core takes 0 mΩ here).
                    milliohm: if inl.resistance == 0.0 {
                        0
                    } else {
                        to_milliohm(inl.resistance).ok_or_else(|| {
                            err(
                                self.file,
                                seg.span,
                                format!("segment[{}].inline.resistance", seg.name),
                                format!(
                                    "{} is outside the core's resistances, 1 mohm to {}",
                                    crate::si::format(inl.resistance, "ohm"),
                                    crate::si::at_most(MAX_OHM, "ohm")
                                ),
                                "write 0 ohm for an ideal choke, or a value from 1 mohm to 4.29 Mohm",
                            )
                        })?
                    },
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
        let mut dropped = None;
        for k in 0..bounds.len() - 1 {
            let d = sample_bounds[k + 1].saturating_sub(sample_bounds[k]);
            if d == 0 {
                return Err(err(
                    self.file,
                    seg.span,
                    format!("segment[{}]", seg.name),
                    format!(
                        "a break at {:.2} m leaves a piece shorter than one sample",
                        // The piece's bound that is a break: its far end, except for the
                        // last piece, which ends at the segment's `to` end.
                        if k + 2 < bounds.len() { bounds[k + 1] } else { bounds[k] }
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
            dropped = dropped.or(drop);
            sections_total += n;
            let r_placed = if drop.is_some() { 0.0 } else { r };
            self.run(&mut pieces, ends[k], ends[k + 1], cable.z0, d, r_placed, n, bounds[k], len)?;
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
            r_dropped: None,
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
                zc: None,
            }),
        }
    }

    /// The port resistance 2L/T of an in-line choke in mΩ, or a located error when it is
    /// outside the core's range (never clamped).
    fn choke_port(&self, seg: &Segment, inductance: f64) -> Result<u32, PlantError> {
        let r = 2.0 * inductance / self.dt;
        to_milliohm(r).ok_or_else(|| {
            // 2L/T in [MIN_OHM, MAX_OHM]  <=>  fs in [MIN_OHM/(2L), MAX_OHM/(2L)].
            let hint = if r < MIN_OHM {
                format!("raise plant.sample_rate to at least \"{}\"", crate::si::at_least(MIN_OHM / (2.0 * inductance), "Hz"))
            } else {
                format!("lower plant.sample_rate to at most \"{}\"", crate::si::at_most(MAX_OHM / (2.0 * inductance), "Hz"))
            };
            err(
                self.file,
                seg.span,
                format!("segment[{}].inline.inductance", seg.name),
                format!(
                    "at this sample rate the choke {} acts through a port resistance 2L/T = {}, outside the core's 1 mohm to {}",
                    crate::si::format(inductance, "H"),
                    crate::si::format(r, "ohm"),
                    crate::si::at_most(MAX_OHM, "ohm")
                ),
                hint,
            )
        })
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
        let seg = &self.plant.segments[self.pieces.len()];
        let cable = &self.plant.cables[seg.cable];
        let z = to_milliohm(z0).ok_or_else(|| {
            err(
                self.file,
                seg.span,
                format!("cable.{}.impedance", cable.name),
                format!(
                    "the impedance {} is outside the core's 1 mohm to {}",
                    crate::si::format(z0, "ohm"),
                    crate::si::at_most(MAX_OHM, "ohm")
                ),
                "give the cable an impedance from 1 mohm to 4.29 Mohm (cables are 10 ohm to 1 kohm)",
            )
        })?;
        let r_each = if cuts_len(d, n) == 0 { 0.0 } else { r / cuts_len(d, n) as f64 };
        let r_milli = match to_milliohm(r_each) {
            Some(m) => m,
            None if n == 0 => 0,
            // sections() keeps every section within the core's range.
            None => {
                return Err(err(
                    self.file,
                    seg.span,
                    format!("segment[{}].length", seg.name),
                    format!("a lumped section of {} is outside the core's range", crate::si::format(r_each, "ohm")),
                    "this is a compiler fault for a plant file that parsed: please report it with the plant file",
                ))
            }
        };
        let cuts = section_cuts(d, n);
        let mut prev_j = a;
        let mut prev_s = 0u32;
        for c in &cuts {
            let j = self.new_junction(Junction::Series { milliohm: r_milli })?;
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
        // The grid length; a line shorter than half a step keeps its own length (its fit
        // is cheap to repeat and rare: such a line carries almost no loss).
        let grid = super::loss::grid_step(cable, fs)
            .map(|step| (length / step).round() * step)
            .filter(|g| *g > 0.0 && g.is_finite())
            .unwrap_or(length);
        if !self.fit_losses {
            if super::loss::gets_filter(cable, grid, fs) {
                self.losses.push(LineLoss {
                    line: p.line,
                    sections: 0,
                    poles: [0; MAX_LOSS_SECTIONS],
                    zeros: [0; MAX_LOSS_SECTIONS],
                    allpass: None,
                    zc: None,
                });
            }
            return Ok(());
        }
        let key = (cable_id, grid.to_bits());
        let design = match self.loss_cache.get(&key) {
            Some(d) => d.clone(),
            None => {
                let d = super::loss::design(cable, grid, fs, p.line, self.frac);
                self.loss_cache.insert(key, d.clone());
                d
            }
        };
        if let Some(mut d) = design.map(|d| d.measured_on(cable, length, fs, self.frac)) {
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

/// Sample positions of the section resistors of a run of `d` samples in `n` sections: the
/// middle of each section (equal positions merged).
fn section_cuts(d: u32, n: usize) -> Vec<u32> {
    let mut cuts: Vec<u32> =
        (0..n).map(|k| ((d as f64) * (2 * k + 1) as f64 / (2 * n) as f64).round() as u32).collect();
    cuts.dedup();
    cuts
}

/// How many series junctions a run of `d` samples in `n` sections has.
fn cuts_len(d: u32, n: usize) -> usize {
    section_cuts(d, n).len()
}

/// Why a segment's conductor resistance was left out of the model.
pub const DROPPED_ONE_SAMPLE: &str = "one-sample segment";
/// Why a segment's conductor resistance was left out of the model.
pub const DROPPED_BELOW_CORE: &str = "below the core's 1 mohm";

/// Why a segment's conductor resistance was left out of the model.
pub const DROPPED_ABOVE_CORE: &str = "above the core's 4.29 Mohm in each of its sections";

/// Number of sections for resistance `r` on a run of `d` samples, and why the resistance
/// had to be dropped, if it was (a run of one sample cannot hold a series junction; a
/// resistance below the core's 1 mΩ cannot be held, and is not rounded up to it).
///
/// Every section needs a line of at least one sample on both sides of its resistor, so
/// n <= d/2; at a rig port the first line must keep latency + 1 samples; every section's
/// resistor r/n must be at least 1 mΩ, so n <= r/1 mΩ.
fn sections(r: f64, z0: f64, d: u32, rig_latency: Option<u32>) -> (usize, Option<&'static str>) {
    if r <= 0.0 {
        return (0, None);
    }
    if r < MIN_OHM {
        return (0, Some(DROPPED_BELOW_CORE));
    }
    let want = ((r / z0) / SECTION_R_OVER_Z0).ceil().max(1.0) as usize;
    let mut max_n = (d / 2) as usize;
    if let Some(l) = rig_latency {
        // First line = round(d/(2n)) samples >= l + 1.
        let first = l as usize + 1;
        max_n = max_n.min(d as usize / (2 * first).max(1));
    }
    // floor(r/MIN_OHM) >= 1 here; the small margin keeps r/n from rounding below 1 mΩ.
    let n = want.min(max_n).min(MAX_SECTIONS).min((r / MIN_OHM * (1.0 - 1e-12)).floor().max(1.0) as usize);
    if n == 0 {
        (0, Some(DROPPED_ONE_SAMPLE))
    } else if r / n as f64 > MAX_OHM * (1.0 - 1e-12) {
        // Only a run far longer than any plant (or a cable of absurd resistance) gets here;
        // the storage check refuses the first, the warning names the second.
        (0, Some(DROPPED_ABOVE_CORE))
    } else {
        (n, None)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn section_count_follows_r_over_z0_and_fits_the_delay() {
        assert_eq!(sections(0.0, 100.0, 50, None), (0, None));
        assert_eq!(sections(4.0, 100.0, 50, None), (1, None)); // R/Z0 = 0.04
        assert_eq!(sections(40.0, 100.0, 50, None), (8, None)); // 0.4 / 0.05
        assert_eq!(sections(40.0, 100.0, 6, None), (3, None)); // capped at d/2
        assert_eq!(sections(1.0, 100.0, 1, None), (0, Some(DROPPED_ONE_SAMPLE))); // one sample
        assert_eq!(sections(40.0, 100.0, 50, Some(10)), (2, None)); // first line >= 11
    }

    #[test]
    fn no_section_resistor_is_rounded_up_to_the_core_minimum() {
        // 0.4 mΩ cannot be held: dropped and said why, not made 1 mΩ.
        assert_eq!(sections(0.4e-3, 0.01, 50, None), (0, Some(DROPPED_BELOW_CORE)));
        // 3.5 mΩ on a 1 mΩ-impedance busbar would want 70 sections; at most 3 of >= 1 mΩ.
        let (n, why) = sections(3.5e-3, 1e-3, 500, None);
        assert_eq!((n, why), (3, None));
        assert!(to_milliohm(3.5e-3 / n as f64).is_some_and(|m| m >= 1));
        assert_eq!(to_milliohm(0.4e-3), None);
        assert_eq!(to_milliohm(5e6), None);
        assert_eq!(to_milliohm(f64::NAN), None);
        assert_eq!(to_milliohm(120.0), Some(120_000));
    }
}
