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
//! - Host (part of `cargo test --workspace`): compares with the golden file;
//!   `HUMSENSE_BLESS=1 cargo test --test on_target` rewrites it.
//! - Target: `cargo test --profile firmware --test on_target --target
//!   thumbv6m-none-eabi` (QEMU `microbit`, Cortex-M0) or `--target
//!   thumbv7em-none-eabihf` (QEMU `mps2-an386`, Cortex-M4F), through the
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
        hprintln!(
            "on_target: {} golden-vector cases on {}",
            super::CASES.len(),
            TRIPLE
        );
        let (passed, failed) = super::run_all(false, &mut |a| hprintln!("{}", a), |_, _| {});
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

    pub fn main() {
        let bless = std::env::var_os("HUMSENSE_BLESS").is_some_and(|v| v != "0");
        let mut results: Vec<(&'static str, Outcome)> = Vec::new();
        let (passed, failed) = super::run_all(
            bless,
            &mut |a| println!("{a}"),
            |case: &Case, got: &Outcome| results.push((case.name, got.clone())),
        );
        if bless {
            let path = golden_path();
            match std::fs::write(&path, render(&results)) {
                Ok(()) => println!("wrote {}", path.display()),
                Err(e) => {
                    println!("cannot write {}: {e}", path.display());
                    println!("{passed} passed, {} failed", failed + 1);
                    std::process::exit(1);
                }
            }
        }
        println!("{passed} passed, {failed} failed");
        if failed > 0 {
            std::process::exit(1);
        }
    }
}
