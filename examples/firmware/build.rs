//! Puts the memory map of the part chosen by feature (`m4` or `m0`) where `link.x` finds it.
use std::{env, fs, path::PathBuf};

fn main() {
    let m4 = env::var_os("CARGO_FEATURE_M4").is_some();
    let m0 = env::var_os("CARGO_FEATURE_M0").is_some();
    let file = match (m4, m0) {
        (true, false) => "memory-m4.x",
        (false, true) => "memory-m0.x",
        _ => panic!("choose exactly one part: --features m4 or --features m0"),
    };
    let out = PathBuf::from(env::var_os("OUT_DIR").expect("cargo sets OUT_DIR"));
    fs::copy(file, out.join("memory.x")).expect("copy memory.x");
    println!("cargo:rustc-link-search={}", out.display());
    println!("cargo:rerun-if-changed={file}");
    println!("cargo:rerun-if-changed=build.rs");
    println!("cargo:rerun-if-changed=plants");
}
