//! Capture buffers: chosen probes recorded sample by sample after a trigger.
//!
//! Storage is interleaved: value of column c at capture sample k is at `k * columns + c`.

use crate::message::{CaptureState, Trigger, MAX_CAPTURE_PROBES};
use heapless::Vec;

/// A capture of up to `CAP` values (samples × probes).
pub struct Capture<const CAP: usize> {
    buf: [i32; CAP],
    pub(crate) probes: Vec<u8, MAX_CAPTURE_PROBES>,
    pub(crate) length: u32,
    pub(crate) trigger: Trigger,
    pub(crate) state: CaptureState,
    /// Previous value of the level-trigger probe (None before the first sample after arming).
    prev: Option<i32>,
}

impl<const CAP: usize> Default for Capture<CAP> {
    fn default() -> Self {
        Self::new()
    }
}

impl<const CAP: usize> Capture<CAP> {
    /// Idle, empty.
    pub const fn new() -> Self {
        Capture {
            buf: [0; CAP],
            probes: Vec::new(),
            length: 0,
            trigger: Trigger::OnEvent,
            state: CaptureState::Idle,
            prev: None,
        }
    }

    /// Arm (the caller checked probes, length and trigger).
    pub(crate) fn arm(&mut self, probes: Vec<u8, MAX_CAPTURE_PROBES>, length: u32, trigger: Trigger) {
        self.probes = probes;
        self.length = length;
        self.trigger = trigger;
        self.state = CaptureState::Armed;
        self.prev = None;
    }

    /// Back to idle (a new plant took effect).
    pub(crate) fn abort(&mut self) {
        self.state = CaptureState::Idle;
    }

    /// After sample `n` was computed: trigger and record. `event_applied` is true when an
    /// event was applied before this sample; `probe(k)` reads plant probe k.
    pub(crate) fn after_sample(&mut self, n: u64, event_applied: bool, probe: impl Fn(usize) -> i32) {
        if self.state == CaptureState::Armed {
            let fire = match self.trigger {
                Trigger::AtSample(s) => s == n,
                Trigger::OnEvent => event_applied,
                Trigger::OnLevel { probe: p, level, rising } => {
                    let now = probe(p as usize);
                    let crossed = match self.prev {
                        Some(before) if rising => before < level && now >= level,
                        Some(before) => before > level && now <= level,
                        None => false,
                    };
                    self.prev = Some(now);
                    crossed
                }
            };
            if fire {
                self.state = CaptureState::Filling { start: n, filled: 0 };
            }
        }
        if let CaptureState::Filling { start, filled } = self.state {
            let cols = self.probes.len();
            let base = filled as usize * cols;
            for (c, p) in self.probes.iter().enumerate() {
                if let Some(slot) = self.buf.get_mut(base + c) {
                    *slot = probe(*p as usize);
                }
            }
            let filled = filled + 1;
            self.state = if filled >= self.length {
                let mut probes = [0u8; MAX_CAPTURE_PROBES];
                probes.iter_mut().zip(self.probes.iter()).for_each(|(d, s)| *d = *s);
                CaptureState::Done { start, length: self.length, columns: cols as u8, probes }
            } else {
                CaptureState::Filling { start, filled }
            };
        }
    }

    /// Values of column `column` from capture sample `offset` on, into `out` (as many as fit).
    pub(crate) fn read(&self, column: usize, offset: usize, out: &mut Vec<i32, { crate::message::READ_MAX }>) -> bool {
        let CaptureState::Done { length, columns, .. } = self.state else {
            return false;
        };
        let (length, cols) = (length as usize, columns as usize);
        if column >= cols || offset >= length {
            return false;
        }
        for k in offset..length {
            let v = self.buf.get(k * cols + column).copied().unwrap_or(0);
            if out.push(v).is_err() {
                break;
            }
        }
        true
    }

    /// Capacity in values.
    pub const fn capacity(&self) -> usize {
        CAP
    }
}
