//! The few register accesses the HAL does not offer: TIM2's period, trigger output and
//! counter, and the ADC1 status flags.
//!
//! SAFETY (every function): the HAL owns TIM2 and ADC1 and configured them; these accesses
//! touch only the named registers of those peripherals through their PAC register blocks,
//! from the one thread of this program (no interrupts are enabled), so nothing else writes
//! them concurrently.

use stm32f4xx_hal::pac;

fn tim2() -> &'static pac::tim2::RegisterBlock {
    // SAFETY: see the module comment; the PAC's pointer is the peripheral's fixed address.
    unsafe { &*pac::TIM2::ptr() }
}

fn adc1() -> &'static pac::adc1::RegisterBlock {
    // SAFETY: as above.
    unsafe { &*pac::ADC1::ptr() }
}

/// TIM2 counts timer-clock ticks from 0 to `period - 1`; its update event is the sample tick
/// and its trigger output (MMS = update) starts an ADC1 conversion.
pub fn set_period(period: u32) {
    let t = tim2();
    t.cr1().modify(|_, w| w.cen().clear_bit());
    // SAFETY: any 16-bit prescaler and 32-bit reload are valid for TIM2.
    t.psc().write(|w| unsafe { w.bits(0) });
    t.arr().write(|w| unsafe { w.bits(period.saturating_sub(1)) });
    t.cr2().modify(|_, w| unsafe { w.mms().bits(0b010) });
    t.cnt().write(|w| unsafe { w.bits(0) });
    t.egr().write(|w| w.ug().set_bit());
    t.sr().write(|w| unsafe { w.bits(0) });
    t.cr1().modify(|_, w| w.cen().set_bit());
}

/// Timer ticks since the last sample tick.
#[inline(always)]
pub fn since_tick() -> u32 {
    tim2().cnt().read().bits()
}

/// Take the update flag: true if a tick came since the last call.
#[inline(always)]
pub fn take_tick() -> bool {
    let t = tim2();
    let set = t.sr().read().uif().bit_is_set();
    if set {
        // SAFETY: writing 0 to UIF clears it; the other flags are rc_w0 and kept at 1.
        t.sr().write(|w| unsafe { w.bits(!1) });
    }
    set
}

/// End of conversion: a new ADC result is waiting.
#[inline(always)]
pub fn adc_done() -> bool {
    adc1().sr().read().eoc().bit_is_set()
}

/// Take the ADC overrun flag (a result was overwritten before it was read: a lost sample).
#[inline(always)]
pub fn take_adc_overrun() -> bool {
    let a = adc1();
    let set = a.sr().read().ovr().bit_is_set();
    if set {
        a.sr().modify(|_, w| w.ovr().clear_bit());
    }
    set
}
