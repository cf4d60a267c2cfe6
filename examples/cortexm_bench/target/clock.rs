//! SysTick under QEMU `-icount`: instruction counts, and the check that
//! they are exact.

use cortex_m::peripheral::SYST;
use cortex_m_semihosting::hprintln;

/// Must match `-icount shift=` in `.cargo/config.toml`.
pub(super) const SHIFT: u32 = 10;

/// Triple, QEMU machine and SysTick core-clock period in picoseconds.
pub(super) const MACHINE: (&str, &str, u64) = if cfg!(target_abi = "eabihf") {
    ("thumbv7em-none-eabihf", "mps2-an386", 40_000)
} else if cfg!(target_feature = "thumb2") {
    ("thumbv7-unknown", "unknown", 40_000)
} else {
    ("thumbv6m-none-eabi", "microbit", 62_500)
};
pub(super) const TRIPLE: &str = MACHINE.0;

pub(super) const RATE_HZ: u32 = 2_000;
pub(super) const WARM_FRAMES: u32 = 6_000;
pub(super) const FRAMES: u32 = 2_000;
/// Frames per SysTick measurement: far below the 24-bit wrap.
pub(super) const BLOCK: u32 = 200;

#[inline(always)]
pub(super) fn now() -> u32 {
    SYST::get_current()
}

/// Instructions between two SysTick reads (down-counter, one wrap at most).
pub(super) fn insns(t0: u32, t1: u32) -> u64 {
    let ticks = u64::from(t0.wrapping_sub(t1) & 0x00ff_ffff);
    let den = 1000u64 << SHIFT;
    (ticks * MACHINE.2 + den / 2) / den
}

/// Eight SysTick reads, one load instruction each (volatile: all kept,
/// in order).
macro_rules! read8 {
    () => {
        now();
        now();
        now();
        now();
        now();
        now();
        now();
        now();
    };
}

/// 64 SysTick reads, straight-line.
macro_rules! read64 {
    () => {
        read8!();
        read8!();
        read8!();
        read8!();
        read8!();
        read8!();
        read8!();
        read8!();
    };
}

/// Instructions across 64 SysTick reads, timed inside one leaf function
/// so that no caller code (spills) lands in the region.
#[inline(never)]
pub(super) fn reads64() -> u64 {
    let t0 = now();
    read64!();
    let t1 = now();
    insns(t0, t1)
}

/// The same across 128 reads.
#[inline(never)]
pub(super) fn reads128() -> u64 {
    let t0 = now();
    read64!();
    read64!();
    let t1 = now();
    insns(t0, t1)
}

/// Checks the tick-to-instruction conversion: 64 more SysTick reads
/// (one load each) must come out as exactly 64 more instructions.
pub(super) fn calibrate() -> Result<(), ()> {
    let (n64, n128) = (reads64(), reads128());
    hprintln!(
        "cortexm-calib: target={} machine={} icount_shift={} reads64={} reads128={}",
        TRIPLE,
        MACHINE.1,
        SHIFT,
        n64,
        n128
    );
    if n128 == n64 + 64 {
        Ok(())
    } else {
        hprintln!(
            "cortexm-error: 64 loads read as {} instructions: is QEMU running with -icount shift={}?",
            n128 as i64 - n64 as i64,
            SHIFT
        );
        Err(())
    }
}

/// `a / b` with two decimals, as integer and hundredths.
pub(super) fn ratio(a: u64, b: u64) -> (u64, u64) {
    let b = b.max(1);
    let x100 = (a * 100 + b / 2) / b;
    (x100 / 100, x100 % 100)
}
