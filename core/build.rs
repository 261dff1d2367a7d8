//! Sets `tidewire_no_cond_select` on targets without a conditional select instruction
//! (ARMv6-M and ARMv8-M Baseline: no IT blocks, no conditional move). There the optimizer
//! lowers every compare-and-select to a conditional branch, so the per-sample path's masks
//! go through `profile::opaque` to keep the instruction count independent of the data.
//!
//! Sets `tidewire_no_long_mul` on the same targets (no 32x32->64 multiply: every 64-bit
//! product is a sequence of 32-bit ones), where the Wide series junction keeps the form with
//! fewer products (`profile/arith.rs`, `Acc::series_num`).

fn main() {
    println!("cargo::rustc-check-cfg=cfg(tidewire_no_cond_select)");
    println!("cargo::rustc-check-cfg=cfg(tidewire_no_long_mul)");
    println!("cargo::rerun-if-changed=build.rs");
    let target = std::env::var("TARGET").unwrap_or_default();
    if target.starts_with("thumbv6m") || target.starts_with("thumbv8m.base") {
        println!("cargo::rustc-cfg=tidewire_no_cond_select");
        println!("cargo::rustc-cfg=tidewire_no_long_mul");
    }
}
