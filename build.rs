//! Picks the demodulator's multiply-accumulate form by target (a choice of
//! instructions only: both forms give the same bits; see `src/demod.rs`).
//!
//! `humsense_dsp`: ARMv7E-M and ARMv8-M Mainline (Cortex-M4/M7/M33, the
//! `thumbv7em-*` and `thumbv8m.main-*` targets), whose DSP extension has a
//! 32 × 16-bit multiply-accumulate keeping the top 32 bits of the product
//! (`smlawb`/`smlawt`). Stable Rust does not expose ARM target features to
//! `cfg`, so the target triple decides. (An ARMv8-M Mainline part without
//! the DSP extension still computes the same bits, through a wider multiply.)
fn main() {
    println!("cargo:rustc-check-cfg=cfg(humsense_dsp)");
    println!("cargo:rerun-if-changed=build.rs");
    println!("cargo:rerun-if-env-changed=TARGET");
    let target = std::env::var("TARGET").unwrap_or_default();
    if target.starts_with("thumbv7em") || target.starts_with("thumbv8m.main") {
        println!("cargo:rustc-cfg=humsense_dsp");
    }
}
