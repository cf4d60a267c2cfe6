//! The on-target tests' signal generator (`tests/cortexm/gen.rs`) against
//! its own docs, on the host.
#![allow(
    clippy::unwrap_used,
    clippy::expect_used,
    clippy::indexing_slicing,
    clippy::panic
)]

#[path = "cortexm/gen.rs"]
#[allow(dead_code)]
mod gen;

#[test]
fn integer_sine_is_within_its_documented_error() {
    // Reference: f64::sin (Rust std), scaled to Q15, at 2^22 phases evenly
    // spread over the turn (every 1 024th phase step) and at the quadrant
    // ends. The docs' bound: within 6.2 Q15 codes, peak ±32 764.
    let mut worst = 0.0f64;
    let mut peak = 0i32;
    let phases = (0..1u64 << 22).map(|k| (k << 10) as u32).chain([
        0x3fff_ffff,
        0x4000_0000,
        0x4000_0001,
        0xbfff_ffff,
        0xc000_0000,
        u32::MAX,
    ]);
    for p in phases {
        let s = gen::sin_q15(p);
        let want = 32_768.0 * (core::f64::consts::TAU * f64::from(p) / 4_294_967_296.0).sin();
        worst = worst.max((f64::from(s) - want).abs());
        peak = peak.max(s.abs());
    }
    println!("worst {worst:.3} codes, peak {peak}");
    assert!(worst < 6.2, "worst {worst} codes");
    assert_eq!(peak, 32_764);
}
