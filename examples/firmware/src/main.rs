//! tidewire-core on an emulated microcontroller (QEMU `mps2-an386` Cortex-M4 with feature
//! `m4`, QEMU `microbit` Cortex-M0 with feature `m0`): for every generated test plant and
//! number profile, hashes of every output sample from the source-included and the image-loaded
//! network, and SysTick readings of the per-sample loop, printed over semihosting as lines
//! `HASH profile plant source|image|specialised seed hash`, `TICKS profile plant form seed
//! samples ticks baseline`, `CLOCK cycles ticks`, then `DONE`; exits with semihosting status 0 (1 on error).
//!
//! No panic path: the panic handler calls a function that nothing defines, so a release build
//! (LTO, panic = abort) links only if no panic is reachable from anything this program runs,
//! image decoding and the per-sample loop included.
#![no_std]
#![no_main]

mod bench;
mod out;
mod stimulus;

/// The generated plants (`cargo run -p xtask -- firmware` writes `plants/gen/`). Each part
/// runs only some of them, so the rest is unused there.
#[allow(dead_code, unused_macros)]
mod plants {
    include!(concat!(env!("CARGO_MANIFEST_DIR"), "/plants/gen/mod.rs"));
}

use cortex_m_rt::entry;
use cortex_m_semihosting::debug;
use out::Out;
#[allow(unused_imports)]
use tidewire_core::{Narrow, Wide};

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

/// Run one generated plant module `$m` on profile `$p` (`Wide` or `Narrow`).
macro_rules! run {
    ($syst:ident, $out:ident, $ok:ident, $p:ident, $m:ident, $name:literal) => {
        $ok &= bench::run_plant::<
            $p,
            { plants::$m::PORTS },
            { plants::$m::JUNCTIONS },
            { plants::$m::MEMORY },
            { plants::$m::LOSS_ENDS },
        >(&mut $syst, &mut $out, stringify!($p), $name, &plants::$m::NETWORK, plants::$m::IMAGE);
        $ok &= bench::run_specialised::<plants::$m::specialised::Plant>(&mut $syst, &mut $out, stringify!($p), $name);
    };
}

#[entry]
fn main() -> ! {
    let mut out = Out::open();
    let mut ok = false;
    if let Some(p) = cortex_m::Peripherals::take() {
        let mut syst = p.SYST;
        bench::start_timer(&mut syst);
        bench::calibrate(&mut syst, &mut out, 2_000_000);
        ok = true;
        #[cfg(all(feature = "m4", not(feature = "inject-panic")))]
        plants::wide_plants!(run, syst, out, ok, Wide);
        #[cfg(all(feature = "m0-wide", not(feature = "inject-panic")))]
        plants::m0_wide_plants!(run, syst, out, ok, Wide);
        #[cfg(all(feature = "m4", not(feature = "inject-panic")))]
        plants::narrow_plants!(run, syst, out, ok, Narrow);
        #[cfg(all(feature = "m0", not(feature = "inject-panic")))]
        plants::m0_narrow_plants!(run, syst, out, ok, Narrow);
        // Events on the M0: its largest plant only (flash).
        #[cfg(all(feature = "m0", not(feature = "m4"), not(feature = "inject-panic")))]
        {
            use plants::p34_narrow as p;
            ok &= bench::events_only::<Narrow, { p::PORTS }, { p::JUNCTIONS }, { p::MEMORY }, { p::LOSS_ENDS }>(
                &mut syst,
                &mut out,
                "Narrow",
                "p34_narrow",
                &p::NETWORK,
            );
        }
        // The panic is injected into the bench's timing loop (`bench::time_steps`), which
        // every plant shares: one plant is enough to show that a reachable panic does not
        // link, and spares the check two whole-image LTO builds. That every plant's step is
        // panic-free is what the plain builds above prove by linking.
        #[cfg(feature = "inject-panic")]
        run!(syst, out, ok, Narrow, p2_narrow, "p2_narrow");
    }
    out.str(if ok { "DONE" } else { "FAILED" }).nl();
    debug::exit(if ok { debug::EXIT_SUCCESS } else { debug::EXIT_FAILURE });
    #[allow(clippy::empty_loop)]
    loop {}
}
