//! The rig side of the link: a request handler and the per-sample work around the solver,
//! as plain code (no hardware), so the host tests exactly what the firmware runs.
//!
//! Two solvers hold the plant images (double buffering): a new image is decoded and
//! validated into the standby solver while the active one keeps running, and the two swap
//! between two samples ([`Rig::sample`]), so a plant is never half-loaded and a refused image
//! leaves the running plant untouched. Every request either succeeds or is refused with a
//! [`LinkError`] before anything changed.

use crate::capture::Capture;
use crate::dut::{DeviceModel, MAX_LATENCY};
use crate::frame::{pack, unpack, MAX_WIRE, NO_SEQ};
use crate::message::{Action, CaptureState, Hello, ImageFault, LinkError, Reply, Request, Status, Trigger, MAX_EVENTS};
use crate::PROTOCOL_VERSION;
use heapless::Vec;
use tidewire_core::image::{self, body as image_body};
use tidewire_core::{Junction, Profile, Solver};

/// Largest image the rig stores, bytes.
pub const MAX_IMAGE: usize = 8192;

/// What the sample clock can do: ticks per sample.
#[derive(Debug, Clone, Copy)]
pub struct Clock {
    /// Timer ticks per second.
    pub tick_hz: u32,
    /// Allowed sample periods in ticks.
    pub min_period: u32,
    pub max_period: u32,
}

/// The rig: solver capacities `PORTS`, `JUNCS`, `MEM`, `LOSSES` (as [`Solver`]), `CAP`
/// captured values, `DUT` samples of device-model EMF (0 on a rig with real converters).
pub struct Rig<
    P: Profile,
    const PORTS: usize,
    const JUNCS: usize,
    const MEM: usize,
    const LOSSES: usize,
    const CAP: usize,
    const DUT: usize,
> {
    solvers: [Solver<P, PORTS, JUNCS, MEM, LOSSES>; 2],
    image_crc: [u32; 2],
    /// Per solver, which junctions are nodes.
    nodes: [[bool; JUNCS]; 2],
    active: usize,
    swap_pending: bool,
    staging: [u8; MAX_IMAGE],
    /// Announced image length and bytes received (None: no upload).
    upload: Option<(usize, usize)>,
    running: bool,
    samples: u64,
    period: u32,
    clock: Clock,
    events: Vec<(u64, Action), MAX_EVENTS>,
    capture: Capture<CAP>,
    dut: DeviceModel<DUT>,
    overruns: u32,
    worst: u32,
    last: u32,
    saturations: u32,
}

impl<
        P: Profile,
        const PORTS: usize,
        const JUNCS: usize,
        const MEM: usize,
        const LOSSES: usize,
        const CAP: usize,
        const DUT: usize,
    > Rig<P, PORTS, JUNCS, MEM, LOSSES, CAP, DUT>
{
    /// An empty rig (no plant, stopped) on `clock`, with sample period `period` ticks.
    pub const fn new(clock: Clock, period: u32) -> Self {
        Rig {
            solvers: [Solver::new(), Solver::new()],
            image_crc: [0; 2],
            nodes: [[false; JUNCS]; 2],
            active: 0,
            swap_pending: false,
            staging: [0; MAX_IMAGE],
            upload: None,
            running: false,
            samples: 0,
            period,
            clock,
            events: Vec::new(),
            capture: Capture::new(),
            dut: DeviceModel::new(),
            overruns: 0,
            worst: 0,
            last: 0,
            saturations: 0,
        }
    }

    /// True while the plant runs.
    pub fn running(&self) -> bool {
        self.running
    }

    /// The sample period in ticks (the firmware programs its timer with it).
    pub fn period(&self) -> u32 {
        self.period
    }

    /// Samples run since the last start.
    pub fn samples(&self) -> u64 {
        self.samples
    }

    /// The active solver (read-only: for probes and tests).
    pub fn solver(&self) -> &Solver<P, PORTS, JUNCS, MEM, LOSSES> {
        &self.solvers[self.active & 1]
    }

    /// Counters and state.
    pub fn status(&self) -> Status {
        Status {
            running: self.running,
            samples: self.samples,
            overruns: self.overruns,
            worst_cycles: self.worst,
            last_cycles: self.last,
            saturations: self.saturations,
            period_ticks: self.period,
            image_crc: self.image_crc[self.active & 1],
            events_pending: self.events.len() as u8,
            capture: self.capture.state,
        }
    }

    /// The ADC code the software device model puts on the pin for the next sample (0 when
    /// no model is loaded). Rigs with real converters read their ADC instead.
    pub fn model_pin(&self) -> i16 {
        self.dut.pin_code(self.samples, self.solver().rig_drive())
    }

    /// One sample: a pending image takes effect, due events are applied, the solver steps
    /// on the ADC code `input`, the capture records. Returns the DAC code (0 when stopped).
    pub fn sample(&mut self, input: i16) -> i16 {
        self.apply_swap();
        if !self.running {
            return 0;
        }
        let n = self.samples;
        let solver = &mut self.solvers[self.active & 1];
        let mut applied = false;
        // The queue is sorted latest first: the next event is the last one.
        while let Some(&(at, action)) = self.events.last() {
            if at > n {
                break;
            }
            // Junctions were checked when the event was scheduled, on this same plant.
            let _ = match action {
                Action::SetShunt { junction, shunt } => solver.set_shunt(junction, shunt),
                Action::Break { junction } => solver.set_broken(junction, true),
                Action::Join { junction } => solver.set_broken(junction, false),
            };
            self.events.pop();
            applied = true;
        }
        let out = solver.step(input);
        let solver = &self.solvers[self.active & 1];
        self.capture.after_sample(n, applied, |k| solver.probe_raw(k));
        self.dut.push_dac(out);
        if matches!(input, i16::MIN | i16::MAX) || matches!(out, i16::MIN | i16::MAX) {
            self.saturations = self.saturations.saturating_add(1);
        }
        self.samples = n.wrapping_add(1);
        out
    }

    /// A committed image takes effect: events and an armed capture belonged to the old plant.
    fn apply_swap(&mut self) {
        if self.swap_pending {
            self.active ^= 1;
            self.swap_pending = false;
            self.events.clear();
            self.capture.abort();
            self.dut.restart();
        }
    }

    /// Account one sample's time: `cycles` from its tick to the DAC write; `overrun` when it
    /// finished after the next tick or started after it.
    pub fn account(&mut self, cycles: u32, overrun: bool) {
        if !self.running {
            return;
        }
        self.last = cycles;
        self.worst = self.worst.max(cycles);
        if overrun {
            self.overruns = self.overruns.saturating_add(1);
        }
    }

    /// Handle one packed frame (without its delimiter) and pack the reply into `out`;
    /// returns the reply's length in bytes (0 if `out` is too small for it).
    pub fn handle_frame(&mut self, packed: &mut [u8], out: &mut [u8; MAX_WIRE]) -> usize {
        let (seq, reply) = match unpack(packed) {
            Err(e) => (NO_SEQ, Reply::Error(e)),
            Ok(f) if f.version != PROTOCOL_VERSION => {
                (f.seq, Reply::Error(LinkError::Version { rig: PROTOCOL_VERSION }))
            }
            Ok(f) => match postcard::take_from_bytes::<Request<'_>>(f.body) {
                Ok((req, [])) => (f.seq, self.handle(req)),
                _ => (f.seq, Reply::Error(LinkError::Body)),
            },
        };
        Self::pack_reply(seq, &reply, out)
    }

    /// Pack a reply (also used for a frame the reader found oversized).
    pub fn pack_reply(seq: u16, reply: &Reply, out: &mut [u8; MAX_WIRE]) -> usize {
        pack(PROTOCOL_VERSION, seq, reply, out).unwrap_or(0)
    }

    /// Handle one decoded request.
    pub fn handle(&mut self, req: Request<'_>) -> Reply {
        match self.try_handle(req) {
            Ok(r) => r,
            Err(e) => Reply::Error(e),
        }
    }

    fn try_handle(&mut self, req: Request<'_>) -> Result<Reply, LinkError> {
        match req {
            Request::Hello => Ok(Reply::Hello(Hello {
                version: PROTOCOL_VERSION,
                ports: PORTS as u32,
                junctions: JUNCS as u32,
                memory: MEM as u32,
                losses: LOSSES as u32,
                max_image: MAX_IMAGE as u32,
                capture_values: CAP as u32,
                dut_samples: DUT as u32,
                tick_hz: self.clock.tick_hz,
                period_ticks: self.period,
            })),
            Request::LoadBegin { len } => {
                let len = len as usize;
                if len > MAX_IMAGE {
                    return Err(LinkError::TooLarge { max: MAX_IMAGE as u32 });
                }
                self.upload = Some((len, 0));
                Ok(Reply::Ok)
            }
            Request::LoadChunk { offset, data } => {
                let (len, got) = self.upload.ok_or(LinkError::NoUpload)?;
                if offset as usize != got {
                    return Err(LinkError::OutOfOrder { expected: got as u32 });
                }
                let end =
                    got.checked_add(data.len()).filter(|e| *e <= len).ok_or(LinkError::TooLarge { max: len as u32 })?;
                self.staging
                    .get_mut(got..end)
                    .ok_or(LinkError::TooLarge { max: MAX_IMAGE as u32 })?
                    .copy_from_slice(data);
                self.upload = Some((len, end));
                Ok(Reply::Ok)
            }
            Request::LoadCommit => self.commit(),
            Request::Start => {
                if self.image_crc[self.active & 1] == 0 && !self.swap_pending {
                    return Err(LinkError::NotLoaded);
                }
                self.apply_swap();
                self.solvers[self.active & 1].reset();
                self.dut.restart();
                self.samples = 0;
                self.overruns = 0;
                self.worst = 0;
                self.last = 0;
                self.saturations = 0;
                self.running = true;
                Ok(Reply::Ok)
            }
            Request::Stop => {
                self.running = false;
                Ok(Reply::Ok)
            }
            Request::SetPeriod { ticks } => {
                let (min, max) = (self.clock.min_period, self.clock.max_period);
                if !(min..=max).contains(&ticks) {
                    return Err(LinkError::BadPeriod { min, max });
                }
                self.period = ticks;
                Ok(Reply::Ok)
            }
            Request::Schedule { at, action } => self.schedule(at, action),
            Request::ClearEvents => {
                self.events.clear();
                Ok(Reply::Ok)
            }
            Request::Arm { probes, length, trigger } => self.arm(probes, length, trigger),
            Request::ReadCapture { column, offset } => {
                if !matches!(self.capture.state, CaptureState::Done { .. }) {
                    return Err(LinkError::CaptureNotReady);
                }
                let mut values = Vec::new();
                if !self.capture.read(column as usize, offset as usize, &mut values) {
                    return Err(LinkError::OutOfRange);
                }
                Ok(Reply::Capture { column, offset, values })
            }
            Request::Status => Ok(Reply::Status(self.status())),
            Request::DutBegin { r_device, r_ref, volts_per_code, latency, len } => {
                if DUT == 0 {
                    return Err(LinkError::NoDeviceModel);
                }
                let good = |x: f64| x.is_finite() && x > 0.0;
                if !(good(r_device) && good(r_ref) && good(volts_per_code))
                    || latency as usize >= MAX_LATENCY
                    || len == 0
                {
                    return Err(LinkError::BadModel);
                }
                if len as usize > DUT {
                    return Err(LinkError::TooLarge { max: (DUT * 8) as u32 });
                }
                self.dut.begin(r_device, r_ref, volts_per_code, latency as usize, len as usize);
                Ok(Reply::Ok)
            }
            Request::DutChunk { offset, data } => {
                if DUT == 0 {
                    return Err(LinkError::NoDeviceModel);
                }
                if !self.dut.uploading() {
                    return Err(LinkError::NoUpload);
                }
                let got = self.dut.received_bytes();
                if offset as usize != got {
                    return Err(LinkError::OutOfOrder { expected: got as u32 });
                }
                if data.len() % 8 != 0 || data.len() / 8 > self.dut.remaining() {
                    return Err(LinkError::Body);
                }
                self.dut.append(data);
                Ok(Reply::Ok)
            }
        }
    }

    fn commit(&mut self) -> Result<Reply, LinkError> {
        let (len, got) = self.upload.ok_or(LinkError::NoUpload)?;
        if got != len {
            return Err(LinkError::OutOfOrder { expected: got as u32 });
        }
        if self.swap_pending {
            return Err(LinkError::Busy);
        }
        let bytes = self.staging.get(..len).ok_or(LinkError::TooLarge { max: MAX_IMAGE as u32 })?;
        // Header and CRC first, so a corrupt image never reaches the standby solver.
        let body = image_body(bytes).map_err(|e| LinkError::Image(e.into()))?;
        let crc = image::body_crc(body);
        let standby = (self.active & 1) ^ 1;
        let net = image::decode::<PORTS, JUNCS>(bytes).map_err(|e| LinkError::Image(e.into()))?;
        self.upload = None;
        let net = net.network();
        if self.solvers[standby].load(&net).is_err() {
            self.image_crc[standby] = 0;
            return Err(LinkError::Image(ImageFault::Network));
        }
        // Which junctions are nodes (events may only touch nodes).
        for (k, slot) in self.nodes[standby].iter_mut().enumerate() {
            *slot = matches!(net.junctions.get(k), Some(Junction::Node { .. }));
        }
        // A zero CRC would read as "nothing loaded"; 1 in 2^32 images, recorded as 1.
        self.image_crc[standby] = crc.max(1);
        self.swap_pending = true;
        if !self.running {
            self.apply_swap();
        }
        Ok(Reply::Loaded { crc })
    }

    fn schedule(&mut self, at: u64, action: Action) -> Result<Reply, LinkError> {
        if self.image_crc[self.active & 1] == 0 {
            return Err(LinkError::NotLoaded);
        }
        if self.running && at < self.samples {
            return Err(LinkError::InThePast { samples: self.samples });
        }
        let junction = match action {
            Action::SetShunt { junction, .. } | Action::Break { junction } | Action::Join { junction } => junction,
        };
        let is_node = self.nodes[self.active & 1].get(junction as usize).copied().unwrap_or(false);
        if !is_node {
            return Err(LinkError::BadJunction { junction });
        }
        if let Action::SetShunt { shunt, .. } = action {
            if matches!(shunt, tidewire_core::Shunt::Resistor { milliohm: 0 }) {
                return Err(LinkError::BadJunction { junction });
            }
        }
        if self.events.is_full() {
            return Err(LinkError::QueueFull);
        }
        // Keep the queue sorted latest first (the next event at the end); among equal samples
        // the earlier arrival stays nearer the end, so it is applied first.
        self.events.push((at, action)).map_err(|_| LinkError::QueueFull)?;
        let s = self.events.as_mut_slice();
        let mut i = s.len().saturating_sub(1);
        while i > 0 {
            match s.get_mut(i - 1..=i) {
                Some([before, new]) if before.0 <= new.0 => core::mem::swap(before, new),
                _ => break,
            }
            i -= 1;
        }
        Ok(Reply::Ok)
    }

    fn arm(
        &mut self,
        probes: Vec<u8, { crate::message::MAX_CAPTURE_PROBES }>,
        length: u32,
        trigger: Trigger,
    ) -> Result<Reply, LinkError> {
        if self.image_crc[self.active & 1] == 0 {
            return Err(LinkError::NotLoaded);
        }
        let count = self.solver().probe_count();
        let unique = probes.iter().enumerate().all(|(i, p)| !probes.iter().take(i).any(|q| q == p));
        if probes.is_empty() || !unique || probes.iter().any(|p| *p as usize >= count) {
            return Err(LinkError::BadProbe);
        }
        if let Trigger::OnLevel { probe, .. } = trigger {
            if probe as usize >= count {
                return Err(LinkError::BadProbe);
            }
        }
        if let Trigger::AtSample(s) = trigger {
            if self.running && s < self.samples {
                return Err(LinkError::InThePast { samples: self.samples });
            }
        }
        let values = (length as usize).checked_mul(probes.len());
        if length == 0 || values.is_none_or(|v| v > CAP) {
            return Err(LinkError::CaptureSize { max: CAP as u32 });
        }
        self.capture.arm(probes, length, trigger);
        Ok(Reply::Ok)
    }
}
