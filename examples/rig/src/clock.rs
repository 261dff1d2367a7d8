//! The sample clock and the real-time accounting, both on SysTick.
//!
//! SysTick runs from the core clock (CLKSOURCE = 1) and reloads every `period` cycles: each
//! reload is a sample tick, and the counter's position tells how many core cycles have passed
//! since the last tick. QEMU does not model the DWT cycle counter of the M4, so SysTick,
//! which counts the same core clock, is the cycle counter here.
//!
//! COUNTFLAG (cleared by reading) says "at least one tick since the last look"; the loop
//! looks often (after every received byte, request and sample), so ticks are counted into
//! `pending` as they come. A sample is an overrun when its tick came while an older sample
//! was still pending, or when the next tick came before its DAC write.

use cortex_m::peripheral::{syst::SystClkSource, SYST};

/// Core clock of the emulated part (mps2-an386 SYSCLK in QEMU, 25 MHz).
pub const TICK_HZ: u32 = 25_000_000;
/// Shortest and longest sample period in cycles (SysTick is a 24-bit counter).
pub const MIN_PERIOD: u32 = 64;
pub const MAX_PERIOD: u32 = 1 << 24;

/// SysTick as the sample clock.
pub struct SampleClock {
    syst: SYST,
    period: u32,
    pending: u32,
}

impl SampleClock {
    /// Start ticking every `period` cycles.
    pub fn start(mut syst: SYST, period: u32) -> Self {
        syst.set_clock_source(SystClkSource::Core);
        let mut c = SampleClock { syst, period: 0, pending: 0 };
        c.set_period(period);
        c
    }

    /// Restart with a new period (the count starts over; pending ticks are dropped).
    pub fn set_period(&mut self, period: u32) {
        let p = period.clamp(MIN_PERIOD, MAX_PERIOD);
        // Reload before enabling: QEMU disables a SysTick enabled with a zero reload.
        self.syst.disable_counter();
        self.syst.set_reload(p - 1);
        self.syst.clear_current();
        let _ = self.syst.has_wrapped();
        self.syst.enable_counter();
        self.period = p;
        self.pending = 0;
    }

    /// The period in cycles.
    pub fn period(&self) -> u32 {
        self.period
    }

    /// Count a tick that came since the last look.
    #[inline(always)]
    pub fn look(&mut self) {
        if self.syst.has_wrapped() {
            self.pending = self.pending.saturating_add(1);
        }
    }

    /// Take a due tick: `Some(missed)` with the ticks that came before it and were not
    /// served (each one an overrun), or None if no tick is due.
    #[inline(always)]
    pub fn take(&mut self) -> Option<u32> {
        self.look();
        if self.pending == 0 {
            return None;
        }
        let missed = self.pending - 1;
        self.pending = 0;
        Some(missed)
    }

    /// After the DAC write: cycles since the sample's tick, and whether the next tick came
    /// first (then it is pending, and the sample overran).
    #[inline(always)]
    pub fn finish(&mut self) -> (u32, bool) {
        let now = SYST::get_current();
        let wrapped = self.syst.has_wrapped();
        let into = (self.period - 1).wrapping_sub(now);
        if wrapped {
            self.pending = self.pending.saturating_add(1);
            // The reading may come from either side of the reload; the sample took at least
            // one whole period either way.
            (self.period.saturating_add(into % self.period), true)
        } else {
            (into, false)
        }
    }
}
