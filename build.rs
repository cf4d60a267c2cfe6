//! Target `cfg`s for the core crate (choices of instructions only: every
//! form gives the same bits).
//!
//! Picks the demodulator's multiply-accumulate form by target (see
//! `src/demod.rs`):
//!
//! `humsense_dsp`: ARMv7E-M and ARMv8-M Mainline (Cortex-M4/M7/M33, the
//! `thumbv7em-*` and `thumbv8m.main-*` targets), whose DSP extension has a
//! 32 × 16-bit multiply-accumulate keeping the top 32 bits of the product
//! (`smlawb`/`smlawt`). Stable Rust does not expose ARM target features to
//! `cfg`, so the target triple decides. (An ARMv8-M Mainline part without
//! the DSP extension still computes the same bits, through a wider multiply.)
//!
//! `humsense_armv6m`: ARMv6-M (Cortex-M0/M0+, `thumbv6m-*`), recognised as
//! an ARM target without 32-bit compare-and-swap atomics (no stable `cfg`
//! names the architecture version): no divide instruction and no 32 × 32 →
//! 64-bit multiply, so the integer helpers in `src/fixed.rs` take loops and
//! short products there.
fn main() {
    println!("cargo:rustc-check-cfg=cfg(humsense_dsp)");
    println!("cargo:rustc-check-cfg=cfg(humsense_armv6m)");
    println!("cargo:rerun-if-changed=build.rs");
    println!("cargo:rerun-if-env-changed=TARGET");
    let target = std::env::var("TARGET").unwrap_or_default();
    if target.starts_with("thumbv7em") || target.starts_with("thumbv8m.main") {
        println!("cargo:rustc-cfg=humsense_dsp");
    }
    // Cargo passes the target's `cfg` values to build scripts: the same
    // test as `cfg(all(target_arch = "arm", not(target_has_atomic = "32")))`.
    let arch = std::env::var("CARGO_CFG_TARGET_ARCH").unwrap_or_default();
    let atomics = std::env::var("CARGO_CFG_TARGET_HAS_ATOMIC").unwrap_or_default();
    if arch == "arm" && !atomics.split(',').any(|w| w == "32") {
        println!("cargo:rustc-cfg=humsense_armv6m");
    }
}
