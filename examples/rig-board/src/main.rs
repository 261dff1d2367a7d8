//! tidewire rig firmware for the STM32F407 Discovery board (STM32F407VG, Cortex-M4F at
//! 168 MHz, 12-bit ADC and DAC), through the community HAL crate `stm32f4xx-hal`.
//!
//! Built in CI only: it has NOT been run on hardware here.
//!
//! * TIM2 ticks at the sample rate; its trigger output starts an ADC1 conversion of the rig
//!   pin (PA1) on every tick; the loop takes the result, steps the plant, writes DAC channel 1
//!   (PA4), and accounts the time from the tick to the DAC write (TIM2's counter, in timer
//!   ticks, times 2 = core cycles at 168 MHz with an 84 MHz timer clock);
//! * the control link (`tidewire-link`) on USART2 (PA2 TX, PA3 RX) at 460 800 baud, one
//!   frame handled in the slack after a sample;
//! * converters: the analog front end maps the rig's symmetric ADC range to 0..3.3 V around
//!   mid-scale (2048) and the DAC's mid-scale to 0 V; a 12-bit code is the 16-bit core code
//!   shifted by 4 bits. See `docs/rig.md` for the wiring.
//!
//! Caution: the rig port is a low-voltage test connection. Never connect it to drive outputs
//! or mains; follow local codes and licensed practice.
#![no_std]
#![no_main]

mod regs;

use core::cell::RefCell;
use cortex_m::interrupt::{self, Mutex};
use cortex_m_rt::entry;
use stm32f4xx_hal::adc::config::{AdcConfig, ExternalTrigger, Resolution, SampleTime, Sequence, TriggerMode};
use stm32f4xx_hal::adc::Adc;
use stm32f4xx_hal::dac::{DacOut, DacPin};
use stm32f4xx_hal::pac;
use stm32f4xx_hal::prelude::*;
use stm32f4xx_hal::rcc::Config as RccConfig;
use stm32f4xx_hal::serial::config::Config as SerialConfig;
use tidewire_core::Wide;
use tidewire_link::{Clock, LinkError, Reader, Reply, Rig, MAX_WIRE, NO_SEQ};

/// 64 line ends, 32 junctions, 4096 waves of delay, 16 lossy line ends, 4096 captured values,
/// no software device model (the converters are real): about 60 KiB of the 128 KiB SRAM.
type TheRig = Rig<Wide, 64, 32, 4096, 16, 4096, 0>;

/// TIM2's clock: APB1 at 42 MHz, doubled for the timers.
const TIMER_HZ: u32 = 84_000_000;
/// Default sample period: 50 kS/s.
const PERIOD: u32 = TIMER_HZ / 50_000;
const CLOCK: Clock = Clock { tick_hz: TIMER_HZ, min_period: 256, max_period: 1 << 24 };
/// Core cycles per timer tick (168 MHz / 84 MHz).
const CYCLES_PER_TICK: u32 = 2;

static RIG: Mutex<RefCell<TheRig>> = Mutex::new(RefCell::new(TheRig::new(CLOCK, PERIOD)));

#[panic_handler]
fn panic(_: &core::panic::PanicInfo) -> ! {
    // Outputs stop where they are; the link goes silent and the host times out.
    halt()
}

fn halt() -> ! {
    #[allow(clippy::empty_loop)]
    loop {}
}

/// ADC result (12 bits, mid-scale = 0 V at the pin) to the core's 16-bit code.
fn adc_code(sample: u16) -> i16 {
    ((sample.min(4095) as i32 - 2048) << 4) as i16
}

/// The core's 16-bit DAC code to the 12-bit DAC value (mid-scale = 0 V).
fn dac_value(code: i16) -> u16 {
    ((code as i32 >> 4) + 2048).clamp(0, 4095) as u16
}

#[entry]
fn main() -> ! {
    let Some(dp) = pac::Peripherals::take() else { halt() };
    let mut rcc = dp.RCC.freeze(RccConfig::hse(8.MHz()).sysclk(168.MHz()).pclk1(42.MHz()));
    let gpioa = dp.GPIOA.split(&mut rcc);

    let Ok(serial) =
        dp.USART2.serial((gpioa.pa2, gpioa.pa3), SerialConfig::default().baudrate(460_800.bps()), &mut rcc)
    else {
        halt()
    };
    let (mut tx, mut rx) = serial.split();

    let mut dac = stm32f4xx_hal::dac::dac(dp.DAC, gpioa.pa4.into_analog(), &mut rcc);
    dac.enable();
    dac.set_value(2048);

    let pin = gpioa.pa1.into_analog();
    let cfg = AdcConfig::default()
        .resolution(Resolution::Twelve)
        .external_trigger(TriggerMode::RisingEdge, ExternalTrigger::Tim_2_trgo);
    let mut adc = Adc::new(dp.ADC1, true, cfg, &mut rcc);
    adc.configure_channel(&pin, Sequence::One, SampleTime::Cycles_15);
    adc.enable();

    // TIM2: clock enabled by the HAL, period and trigger output set directly.
    let Ok(()) = dp.TIM2.counter_hz(&mut rcc).start(50.kHz()).map(|_| ()) else { halt() };

    interrupt::free(|cs| {
        let Ok(mut rig) = RIG.borrow(cs).try_borrow_mut() else { halt() };
        regs::set_period(rig.period());
        let mut period = rig.period();
        let mut reader = Reader::new();
        let mut out = [0u8; MAX_WIRE];
        let mut held = [0u8; MAX_WIRE];
        let mut held_len: Option<Result<usize, LinkError>> = None;
        loop {
            if regs::adc_done() {
                let lost = regs::take_adc_overrun();
                let _ = regs::take_tick();
                let code = adc_code(adc.current_sample());
                let drive = rig.sample(code);
                dac.set_value(dac_value(drive));
                let late = regs::take_tick();
                let ticks = regs::since_tick() + if late { period } else { 0 };
                rig.account(ticks.saturating_mul(CYCLES_PER_TICK), late || lost);
                if let Some(frame) = held_len.take() {
                    let n = match frame {
                        Ok(len) => rig.handle_frame(held.get_mut(..len).unwrap_or(&mut []), &mut out),
                        Err(e) => TheRig::pack_reply(NO_SEQ, &Reply::Error(e), &mut out),
                    };
                    for b in out.get(..n).unwrap_or(&[]) {
                        while tx.write(*b).is_err() {}
                    }
                    if rig.period() != period {
                        period = rig.period();
                        regs::set_period(period);
                    }
                }
            }
            if held_len.is_none() {
                if let Ok(byte) = rx.read() {
                    if let Some(frame) = reader.push(byte) {
                        held_len = Some(frame.map(|f| {
                            let len = f.len().min(MAX_WIRE);
                            if let (Some(d), Some(s)) = (held.get_mut(..len), f.get(..len)) {
                                d.copy_from_slice(s);
                            }
                            len
                        }));
                    }
                }
            }
        }
    })
}
