//! The two emulated parts: target triple, firmware features, QEMU machine and SysTick clock.

/// One emulated microcontroller.
pub struct Part {
    /// Short name used in the table.
    pub name: &'static str,
    pub target: &'static str,
    pub features: &'static str,
    pub machine: &'static str,
    /// Frequency of the clock QEMU feeds SysTick with CLKSOURCE = 1, in Hz (the board's
    /// system clock in QEMU 7.2: mps2 `SYSCLK_FRQ` 25 MHz, nRF51 `HCLK` 16 MHz [memory];
    /// checked against a calibration loop on every run).
    pub systick_hz: f64,
    /// Profiles the firmware runs on this part.
    pub profiles: &'static [&'static str],
}

/// Cortex-M4 (mps2-an386) and Cortex-M0 (micro:bit).
pub const PARTS: [Part; 2] = [
    Part {
        name: "M4",
        target: "thumbv7em-none-eabihf",
        features: "m4",
        machine: "mps2-an386",
        systick_hz: 25e6,
        profiles: &["wide", "narrow"],
    },
    Part {
        name: "M0",
        target: "thumbv6m-none-eabi",
        features: "m0-wide",
        machine: "microbit",
        systick_hz: 16e6,
        profiles: &["wide", "narrow"],
    },
];
