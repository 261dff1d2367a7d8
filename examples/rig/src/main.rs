//! tidewire rig firmware on the emulated Cortex-M4 (QEMU `mps2-an386`).
//!
//! * the control link (`tidewire-link`) on UART0, polled, one frame at a time;
//! * the sample loop on SysTick: each tick, the software device model (the plant's host
//!   stimulus behind its device resistance, tied to the DAC through the reference resistor)
//!   gives the pin's ADC code, the active plant steps once, the DAC code goes back into the
//!   model; the time from the tick to the DAC write is accounted (worst, last, overruns);
//! * double-buffered plant images, events and captures in [`tidewire_link::Rig`].
//!
//! On a board the device model is replaced by the ADC and the DAC (see `examples/rig-board`).
//! Prints `RIG READY` over semihosting when it listens.
//!
//! No panic path: as in `examples/firmware`, the panic handler calls a function that nothing
//! defines, so the release build links only if no panic is reachable from the link decoder,
//! the request handler or the sample loop.
#![no_std]
#![no_main]

mod clock;
mod uart;

use clock::{SampleClock, MAX_PERIOD, MIN_PERIOD, TICK_HZ};
use core::cell::RefCell;
use cortex_m::interrupt::{self, Mutex};
use cortex_m_rt::entry;
use cortex_m_semihosting::hio;
use tidewire_core::Wide;
use tidewire_link::{Clock, LinkError, Reader, Reply, Rig, MAX_WIRE, NO_SEQ};
use uart::Uart;

/// Capacities: 64 line ends, 32 junctions, 8192 waves of delay, 16 lossy line ends,
/// 8192 captured values, 4096 samples of device-model EMF (about 150 KiB in all).
type TheRig = Rig<Wide, 64, 32, 8192, 16, 8192, 4096>;

/// The default sample period, cycles of the 25 MHz core clock: 2.5 kS/s. The device model
/// runs in software f64 (the M4F's FPU is single precision), so a sample costs about 3000
/// cycles here, and a request is handled in the slack after a sample; `xtask rig` measures it.
const PERIOD: u32 = 10_000;

const CLOCK: Clock = Clock { tick_hz: TICK_HZ, min_period: MIN_PERIOD, max_period: MAX_PERIOD };

/// The rig lives in a static (no stack copy of its 150 KiB); the loop runs with interrupts
/// off and owns it for good.
static RIG: Mutex<RefCell<TheRig>> = Mutex::new(RefCell::new(TheRig::new(CLOCK, PERIOD)));

#[panic_handler]
fn panic(_: &core::panic::PanicInfo) -> ! {
    extern "Rust" {
        /// Defined nowhere: referencing it makes the link fail, naming this function.
        fn tidewire_firmware_panic_is_reachable() -> !;
    }
    // SAFETY: never runs; a build in which this call is reachable does not link.
    unsafe { tidewire_firmware_panic_is_reachable() }
}

/// Diagnosis build (`--features link-panics`): lets a reachable panic link, as a hang.
#[cfg(feature = "link-panics")]
#[no_mangle]
pub extern "Rust" fn tidewire_firmware_panic_is_reachable() -> ! {
    #[allow(clippy::empty_loop)]
    loop {}
}

fn halt() -> ! {
    #[allow(clippy::empty_loop)]
    loop {}
}

#[entry]
fn main() -> ! {
    let Some(p) = cortex_m::Peripherals::take() else { halt() };
    let uart = Uart::open();
    if let Ok(mut h) = hio::hstdout() {
        let _ = h.write_all(b"RIG READY\n");
    }
    interrupt::free(|cs| {
        let Ok(mut rig) = RIG.borrow(cs).try_borrow_mut() else { halt() };
        let mut clock = SampleClock::start(p.SYST, rig.period());
        let mut reader = Reader::new();
        let mut out = [0u8; MAX_WIRE];
        // A frame that arrived mid-period waits here for the slack right after the next
        // sample, so request handling never delays a sample that is already due.
        let mut held = [0u8; MAX_WIRE];
        let mut held_len: Option<Result<usize, LinkError>> = None;
        loop {
            if let Some(missed) = clock.take() {
                // ADC: the device model's pin voltage; DAC: back into the model.
                let pin = rig.model_pin();
                let _dac = rig.sample(pin);
                let (cycles, late) = clock.finish();
                rig.account(cycles, late || missed > 0);
                if let Some(frame) = held_len.take() {
                    let n = match frame {
                        Ok(len) => rig.handle_frame(held.get_mut(..len).unwrap_or(&mut []), &mut out),
                        Err(e) => TheRig::pack_reply(NO_SEQ, &Reply::Error(e), &mut out),
                    };
                    uart.write_all(out.get(..n).unwrap_or(&[]));
                    if rig.period() != clock.period() {
                        clock.set_period(rig.period());
                    }
                    clock.look();
                }
            }
            if held_len.is_none() {
                if let Some(byte) = uart.read() {
                    if let Some(frame) = reader.push(byte) {
                        held_len = Some(frame.map(|f| {
                            let len = f.len().min(MAX_WIRE);
                            if let (Some(d), Some(s)) = (held.get_mut(..len), f.get(..len)) {
                                d.copy_from_slice(s);
                            }
                            len
                        }));
                    }
                    clock.look();
                }
            }
        }
    })
}
