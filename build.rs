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
//!
//! For the crate's own tests and examples built for a bare Cortex-M target
//! (the on-target tests and the benchmark under QEMU, `.ci/cortexm`), it
//! also passes the link script and the emulated machine's `memory.x`
//! (`.cargo/cortexm/<machine>/`). They are link arguments of this
//! package's test and example targets only, not flags in
//! `.cargo/config.toml`: cargo merges that file into every build run
//! below the repository root, and the board packages in `examples/boards/`
//! bring their own link script arguments and memory maps.
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
    let os = std::env::var("CARGO_CFG_TARGET_OS").unwrap_or_default();
    let machine = if target.starts_with("thumbv6m") {
        Some("microbit")
    } else if target.starts_with("thumbv7em") {
        Some("mps2-an386")
    } else {
        None
    };
    if let (true, Some(machine)) = (os == "none", machine) {
        let dir = std::env::var("CARGO_MANIFEST_DIR").unwrap_or_default();
        for kind in ["tests", "examples"] {
            println!("cargo:rustc-link-arg-{kind}=-Tlink.x");
            println!("cargo:rustc-link-arg-{kind}=-L{dir}/.cargo/cortexm/{machine}");
        }
        println!("cargo:rerun-if-changed=.cargo/cortexm/{machine}/memory.x");
    }
}
