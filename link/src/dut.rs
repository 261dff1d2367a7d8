//! The software model of the device under test that stands in for the converters on the
//! emulated rig: the plant's host stimulus, an EMF e behind the device resistance R_d, on the
//! rig pin, which the reference resistor R_ref ties to the DAC. The pin voltage is the
//! Millman node of the two sources:
//!
//! ```text
//! v = (e/R_d + V_dac/R_ref) / (1/R_d + 1/R_ref),   V_dac = code_dac · volts_per_code
//! ```
//!
//! and the ADC reads round(v / volts_per_code) (half away from zero), clamped to i16. The
//! DAC shows the drive computed `latency` samples earlier (0 before that many samples); with
//! latency 0 it shows the drive of the sample being computed (`Solver::rig_drive`).
//!
//! The arithmetic is done in f64 in exactly the order the host's run of the core does it
//! (`tidewire_host::run`), and IEEE-754 makes each operation's result unique, so the rig's
//! ADC codes equal the host's bit for bit.

/// Longest latency the model holds (the core's own limit is `MAX_RIG_LATENCY`).
pub const MAX_LATENCY: usize = 64;

/// The device model with room for `N` EMF samples.
pub struct DeviceModel<const N: usize> {
    emf: [f64; N],
    /// Samples uploaded so far, and the length announced.
    len: usize,
    expected: usize,
    r_device: f64,
    r_ref: f64,
    volts_per_code: f64,
    latency: usize,
    /// The DAC codes of the last samples, newest at `pos - 1`.
    hist: [i16; MAX_LATENCY],
    pos: usize,
    count: usize,
}

impl<const N: usize> Default for DeviceModel<N> {
    fn default() -> Self {
        Self::new()
    }
}

/// Round half away from zero and clamp to i16, as `f64::round` then `clamp` then `as i16`
/// (exact: for |x| <= 32768 both the truncation and the difference are exact in f64).
pub fn code_of(x: f64) -> i16 {
    if x.is_nan() {
        return 0;
    }
    let c = x.clamp(i16::MIN as f64, i16::MAX as f64);
    let t = c as i32;
    let frac = c - t as f64;
    let r = if frac >= 0.5 {
        t + 1
    } else if frac <= -0.5 {
        t - 1
    } else {
        t
    };
    r.clamp(i16::MIN as i32, i16::MAX as i32) as i16
}

impl<const N: usize> DeviceModel<N> {
    /// No model loaded (the pin then reads 0).
    pub const fn new() -> Self {
        DeviceModel {
            emf: [0.0; N],
            len: 0,
            expected: 0,
            r_device: 1.0,
            r_ref: 1.0,
            volts_per_code: 1.0,
            latency: 0,
            hist: [0; MAX_LATENCY],
            pos: 0,
            count: 0,
        }
    }

    /// Capacity in EMF samples.
    pub const fn capacity(&self) -> usize {
        N
    }

    /// True when parameters and every announced EMF sample are in.
    pub fn ready(&self) -> bool {
        self.expected > 0 && self.len == self.expected
    }

    /// Parameters are checked by the caller (positive, finite, latency < [`MAX_LATENCY`]).
    pub(crate) fn begin(&mut self, r_device: f64, r_ref: f64, volts_per_code: f64, latency: usize, len: usize) {
        self.r_device = r_device;
        self.r_ref = r_ref;
        self.volts_per_code = volts_per_code;
        self.latency = latency;
        self.expected = len;
        self.len = 0;
        self.restart();
    }

    /// Bytes received so far.
    pub(crate) fn received_bytes(&self) -> usize {
        self.len * 8
    }

    /// True while an upload is announced and not complete.
    pub(crate) fn uploading(&self) -> bool {
        self.len < self.expected
    }

    /// Append whole little-endian f64s (the caller checked order and length).
    pub(crate) fn append(&mut self, data: &[u8]) {
        for c in data.chunks_exact(8) {
            let v = f64::from_le_bytes([c[0], c[1], c[2], c[3], c[4], c[5], c[6], c[7]]);
            if let Some(slot) = self.emf.get_mut(self.len) {
                *slot = v;
                self.len += 1;
            }
        }
    }

    /// Room left, in samples, of the announced upload.
    pub(crate) fn remaining(&self) -> usize {
        self.expected.saturating_sub(self.len)
    }

    /// Forget the DAC history (a new run).
    pub fn restart(&mut self) {
        self.hist = [0; MAX_LATENCY];
        self.pos = 0;
        self.count = 0;
    }

    /// The ADC code of the pin at sample `n`; `drive_now` is the drive the core will output
    /// at this sample (`Solver::rig_drive`).
    pub fn pin_code(&self, n: u64, drive_now: i16) -> i16 {
        if !self.ready() {
            return 0;
        }
        let dac = if self.latency == 0 {
            drive_now
        } else if self.count >= self.latency {
            let i = (self.pos + MAX_LATENCY - self.latency) % MAX_LATENCY;
            self.hist.get(i).copied().unwrap_or(0)
        } else {
            0
        };
        // Past the uploaded EMF the device holds its last value.
        let i = usize::try_from(n).unwrap_or(usize::MAX).min(self.len.saturating_sub(1));
        let e = self.emf.get(i).copied().unwrap_or(0.0);
        let (rd, rr, vpc) = (self.r_device, self.r_ref, self.volts_per_code);
        let v_dac = dac as f64 * vpc;
        let v = (e / rd + v_dac / rr) / (1.0 / rd + 1.0 / rr);
        code_of(v / vpc)
    }

    /// Record the DAC code the core output at this sample.
    pub fn push_dac(&mut self, code: i16) {
        if let Some(h) = self.hist.get_mut(self.pos % MAX_LATENCY) {
            *h = code;
        }
        self.pos = (self.pos + 1) % MAX_LATENCY;
        self.count = self.count.saturating_add(1);
    }
}
