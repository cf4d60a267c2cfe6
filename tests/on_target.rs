//! Golden-vector tests that run on emulated Cortex-M cores and on the host.
//!
//! The same cases (`tests/cortexm/cases.rs`: touch and field profiles, 50
//! and 60 Hz, half-wave and rail clipping, spikes, 1 to 8 channels, `push`,
//! `push_frame` and `push_block`) generate their signals with the integer
//! generator in `tests/cortexm/gen.rs` and compare the detector's events
//! and a hash of its per-cycle diagnostics with `tests/cortexm/golden.rs`,
//! bit for bit.
//!
//! The edge input's cases (`tests/cortexm/edge_cases.rs`: comparator edge
//! trains from `gen.rs` on 16- and 32-bit timers that wrap, ringing,
//! chatter, lost edges, a stuck pin, and polled pins) do the same through
//! `EdgeDetector` and an `EdgeFrontend` + `Backend` pair.
//!
//! With feature `telemetry`, the encoder's cases
//! (`tests/cortexm/telemetry_case.rs`: known signals through
//! `TelemetryEncoder`, drained unevenly, with drops) compare the whole byte
//! stream with `tests/cortexm/golden_telemetry.rs` and check it against
//! the format's description with a decoder of their own. Without the
//! feature they are not built (and blessing leaves their file alone).
//!
//! - Host (part of `cargo test --workspace`, where humsim's dev-dependency
//!   turns `telemetry` on): compares with the golden files;
//!   `HUMSENSE_BLESS=1 cargo test --test on_target --features telemetry`
//!   rewrites them.
//! - Target: `cargo test --profile firmware --test on_target --target
//!   thumbv6m-none-eabi --features telemetry` (QEMU `microbit`, Cortex-M0)
//!   or `--target thumbv7em-none-eabihf` (QEMU `mps2-an386`, Cortex-M4F), through the
//!   runners in `.cargo/config.toml`; prints `N passed, N failed` and exits
//!   with a status through semihosting.
#![cfg_attr(target_os = "none", no_std, no_main)]
#![allow(clippy::indexing_slicing)]

#[path = "cortexm/cases.rs"]
mod cases;
#[path = "cortexm/edge_cases.rs"]
mod edge_cases;
#[path = "cortexm/gen.rs"]
#[allow(dead_code)]
mod gen;
#[rustfmt::skip]
#[path = "cortexm/golden.rs"]
mod golden;
#[cfg(feature = "telemetry")]
#[path = "cortexm/telemetry_case.rs"]
mod telemetry_case;
#[cfg(feature = "telemetry")]
#[rustfmt::skip]
#[path = "cortexm/golden_telemetry.rs"]
mod golden_telemetry;

use cases::{check, CASES};
use golden::GOLDEN;

/// Runs every case and checks it (without the golden comparison while
/// blessing); hands each outcome to `keep`. Returns (passed, failed).
fn run_all(
    bless: bool,
    say: &mut dyn FnMut(core::fmt::Arguments<'_>),
    mut keep: impl FnMut(&cases::Case, &cases::Outcome),
) -> (u32, u32) {
    let (mut passed, mut failed) = (0, 0);
    if !bless && GOLDEN.len() != CASES.len() {
        say(format_args!(
            "golden file has {} cases, the test has {}: regenerate it",
            GOLDEN.len(),
            CASES.len()
        ));
        failed += 1;
    }
    for (i, case) in CASES.iter().enumerate() {
        let got = (case.run)();
        keep(case, &got);
        let ok = match (bless, GOLDEN.get(i)) {
            (true, _) => check(case, &got, None, say),
            (false, Some(want)) => check(case, &got, Some(want), say),
            (false, None) => {
                say(format_args!("{}: no golden vectors", case.name));
                false
            }
        };
        if ok {
            say(format_args!(
                "ok {}: {} samples/ch, {} cycles, {} events",
                case.name, got.samples, got.cycles, got.n_events
            ));
            passed += 1;
        } else {
            say(format_args!("FAILED {}", case.name));
            failed += 1;
        }
    }
    (passed, failed)
}

/// Runs the telemetry encoder's cases (feature `telemetry`) like
/// [`run_all`]; hands each outcome to `keep`. Returns (passed, failed).
#[cfg(feature = "telemetry")]
fn run_telemetry(
    bless: bool,
    say: &mut dyn FnMut(core::fmt::Arguments<'_>),
    mut keep: impl FnMut(&telemetry_case::TelCase, &telemetry_case::TelOutcome),
) -> (u32, u32) {
    use golden_telemetry::TELEMETRY;
    use telemetry_case::{check, TEL_CASES};
    let (mut passed, mut failed) = (0, 0);
    if !bless && TELEMETRY.len() != TEL_CASES.len() {
        say(format_args!(
            "telemetry golden file has {} cases, the test has {}: regenerate it",
            TELEMETRY.len(),
            TEL_CASES.len()
        ));
        failed += 1;
    }
    for (i, case) in TEL_CASES.iter().enumerate() {
        let got = (case.run)();
        keep(case, &got);
        let want = if bless { None } else { TELEMETRY.get(i) };
        let ok = if !bless && want.is_none() {
            say(format_args!("{}: no golden values", case.name));
            false
        } else {
            check(case, &got, want, say)
        };
        if ok {
            say(format_args!(
                "ok {}: {} frames, {} bytes in {} records, {} records dropped",
                case.name, got.frames, got.bytes, got.records, got.dropped_records
            ));
            passed += 1;
        } else {
            say(format_args!("FAILED {}", case.name));
            failed += 1;
        }
    }
    (passed, failed)
}

/// Without the feature: says so, runs nothing.
#[cfg(not(feature = "telemetry"))]
fn run_telemetry(
    _bless: bool,
    say: &mut dyn FnMut(core::fmt::Arguments<'_>),
    _keep: impl FnMut(&(), &()),
) -> (u32, u32) {
    say(format_args!(
        "telemetry cases not built (feature telemetry off; --features telemetry runs them)"
    ));
    (0, 0)
}

#[cfg(target_os = "none")]
mod target {
    use cortex_m as _;
    use cortex_m::asm::wfi;
    use cortex_m_rt::entry;
    use cortex_m_semihosting::{debug, hprintln};

    const TRIPLE: &str = if cfg!(target_abi = "eabihf") {
        "thumbv7em-none-eabihf"
    } else if cfg!(target_feature = "thumb2") {
        "thumbv7 (other)"
    } else {
        "thumbv6m-none-eabi"
    };

    #[entry]
    fn main() -> ! {
        #[cfg(feature = "telemetry")]
        let telemetry = super::telemetry_case::TEL_CASES.len();
        #[cfg(not(feature = "telemetry"))]
        let telemetry = 0;
        hprintln!(
            "on_target: {} golden-vector cases and {} telemetry cases on {}",
            super::CASES.len(),
            telemetry,
            TRIPLE
        );
        let (passed, failed) = super::run_all(false, &mut |a| hprintln!("{}", a), |_, _| {});
        let (tel_passed, tel_failed) =
            super::run_telemetry(false, &mut |a| hprintln!("{}", a), |_, _| {});
        let (passed, failed) = (passed + tel_passed, failed + tel_failed);
        hprintln!("{} passed, {} failed", passed, failed);
        debug::exit(if failed == 0 {
            debug::EXIT_SUCCESS
        } else {
            debug::EXIT_FAILURE
        });
        loop {
            wfi();
        }
    }

    #[panic_handler]
    fn panic(info: &core::panic::PanicInfo) -> ! {
        hprintln!("panic: {}", info);
        hprintln!("0 passed, 1 failed");
        debug::exit(debug::EXIT_FAILURE);
        loop {
            wfi();
        }
    }
}

#[cfg(not(target_os = "none"))]
fn main() {
    host::main();
}

#[cfg(not(target_os = "none"))]
mod host {
    use std::fmt::Write as _;

    use super::cases::{Case, Outcome};

    /// Where the golden file lives.
    fn golden_path() -> std::path::PathBuf {
        std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/cortexm/golden.rs")
    }

    fn render(results: &[(&'static str, Outcome)]) -> String {
        let mut s = String::new();
        s.push_str(
            "// Golden vectors for tests/on_target.rs, written by the host build:\n\
             //     HUMSENSE_BLESS=1 cargo test --test on_target\n\
             // Do not edit by hand; the on-target runs must match them bit for bit.\n\n\
             use crate::cases::{ev, Golden};\n\n\
             /// One entry per case, in `cases::CASES` order.\n\
             pub const GOLDEN: &[Golden] = &[\n",
        );
        for (name, o) in results {
            let _ = writeln!(s, "    Golden {{");
            let _ = writeln!(s, "        name: {name:?},");
            let _ = writeln!(s, "        samples: {},", o.samples);
            let _ = writeln!(s, "        cycles: {},", o.cycles);
            let _ = writeln!(s, "        input_hash: 0x{:016x},", o.input_hash);
            let _ = writeln!(s, "        diag_hash: 0x{:016x},", o.diag_hash);
            let _ = writeln!(s, "        checks: &[");
            for c in o.checks() {
                let _ = writeln!(s, "            0x{c:016x},");
            }
            let _ = writeln!(s, "        ],");
            let _ = writeln!(s, "        events: &[");
            let _ = writeln!(
                s,
                "            // ev(channel, kind, arg, sample, amplitude_q8, baseline_q8)"
            );
            for e in o.events() {
                let _ = writeln!(
                    s,
                    "            ev({}, {}, {}, {}, {}, {}),",
                    e.ch, e.kind, e.arg, e.sample, e.amp, e.base
                );
            }
            let _ = writeln!(s, "        ],");
            let _ = writeln!(s, "    }},");
        }
        s.push_str("];\n");
        s
    }

    /// Where the telemetry cases' golden file lives.
    #[cfg(feature = "telemetry")]
    fn telemetry_golden_path() -> std::path::PathBuf {
        std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/cortexm/golden_telemetry.rs")
    }

    #[cfg(feature = "telemetry")]
    fn render_telemetry(results: &[(&'static str, super::telemetry_case::TelOutcome)]) -> String {
        let mut s = String::new();
        s.push_str(
            "// Golden values of the telemetry cases in tests/on_target.rs, written by the\n\
             // host build:\n\
             //     HUMSENSE_BLESS=1 cargo test --test on_target --features telemetry\n\
             // Do not edit by hand; the on-target runs must match them byte for byte.\n\n\
             use crate::telemetry_case::TelGolden;\n\n\
             /// One entry per case, in `telemetry_case::TEL_CASES` order.\n\
             pub const TELEMETRY: &[TelGolden] = &[\n",
        );
        for (name, o) in results {
            let _ = writeln!(s, "    TelGolden {{");
            let _ = writeln!(s, "        name: {name:?},");
            let _ = writeln!(s, "        frames: {},", o.frames);
            let _ = writeln!(s, "        input_hash: 0x{:016x},", o.input_hash);
            let _ = writeln!(s, "        bytes: {},", o.bytes);
            let _ = writeln!(s, "        records: {},", o.records);
            let _ = writeln!(s, "        stream_hash: 0x{:016x},", o.stream_hash);
            let _ = writeln!(s, "        checks: &[");
            for c in o.checks() {
                let _ = writeln!(s, "            0x{c:016x},");
            }
            let _ = writeln!(s, "        ],");
            let _ = writeln!(s, "        dropped_records: {},", o.dropped_records);
            let _ = writeln!(s, "        dropped_frames: {},", o.dropped_frames);
            let _ = writeln!(s, "    }},");
        }
        s.push_str("];\n");
        s
    }

    /// Writes a golden file; false (after saying why) if it cannot.
    fn write_golden(path: &std::path::Path, text: &str) -> bool {
        match std::fs::write(path, text) {
            Ok(()) => {
                println!("wrote {}", path.display());
                true
            }
            Err(e) => {
                println!("cannot write {}: {e}", path.display());
                false
            }
        }
    }

    pub fn main() {
        let bless = std::env::var_os("HUMSENSE_BLESS").is_some_and(|v| v != "0");
        let mut results: Vec<(&'static str, Outcome)> = Vec::new();
        let (passed, mut failed) = super::run_all(
            bless,
            &mut |a| println!("{a}"),
            |case: &Case, got: &Outcome| results.push((case.name, got.clone())),
        );
        #[cfg(feature = "telemetry")]
        let mut tel_results = Vec::new();
        #[cfg(feature = "telemetry")]
        let (tel_passed, tel_failed) =
            super::run_telemetry(bless, &mut |a| println!("{a}"), |case, got| {
                tel_results.push((case.name, got.clone()))
            });
        #[cfg(not(feature = "telemetry"))]
        let (tel_passed, tel_failed) =
            super::run_telemetry(bless, &mut |a| println!("{a}"), |_, _| {});
        let passed = passed + tel_passed;
        failed += tel_failed;
        if bless && !write_golden(&golden_path(), &render(&results)) {
            failed += 1;
        }
        #[cfg(feature = "telemetry")]
        if bless && !write_golden(&telemetry_golden_path(), &render_telemetry(&tel_results)) {
            failed += 1;
        }
        println!("{passed} passed, {failed} failed");
        if failed > 0 {
            std::process::exit(1);
        }
    }
}
