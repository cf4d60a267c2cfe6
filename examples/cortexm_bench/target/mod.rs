//! The benchmark proper: built for a bare Cortex-M target only.

mod adc;
mod clock;
mod edges;
mod probes;

use cortex_m as _;
use cortex_m::asm::nop;
use cortex_m::peripheral::syst::SystClkSource;
use cortex_m_rt::entry;
use cortex_m_semihosting::{debug, hprintln};
use humsense::Profile;

use adc::{bench, window_bench, Case};
use clock::calibrate;
use edges::edge_bench;
use probes::*;

use crate::PROBE;

fn run() -> Result<(), ()> {
    calibrate()?;
    // `CORTEXM_BENCH=edges` at build time: the edge input's lines only.
    let adc = !matches!(option_env!("CORTEXM_BENCH"), Some("edges"));
    for profile in [Profile::Touch, Profile::Field] {
        if !adc {
            break;
        }
        for case in [Case::Mixed, Case::Held] {
            bench::<1>(profile, case)?;
        }
        for case in [Case::Mixed, Case::Held] {
            bench::<4>(profile, case)?;
        }
        for case in [Case::Mixed, Case::Held] {
            bench::<8>(profile, case)?;
        }
    }
    if adc {
        window_bench(Case::Mixed)?;
        window_bench(Case::Held)?;
    }
    for profile in [Profile::Touch, Profile::Field] {
        edge_bench::<1>(profile)?;
        edge_bench::<4>(profile)?;
        edge_bench::<8>(profile)?;
    }
    Ok(())
}

#[entry]
fn main() -> ! {
    let Some(mut p) = cortex_m::Peripherals::take() else {
        loop {
            nop();
        }
    };
    p.SYST.set_clock_source(SystClkSource::Core);
    p.SYST.set_reload(0x00ff_ffff);
    p.SYST.clear_current();
    p.SYST.enable_counter();
    match PROBE {
        0 => probe_without(),
        1 => probe::<1>(),
        4 => probe::<4>(),
        8 => probe::<8>(),
        100 => probe_block_without(),
        101 => probe_block(),
        200 => probe_edges_without(),
        201 => probe_edges(),
        #[cfg(feature = "telemetry")]
        210 => probe_telemetry(),
        _ => {}
    }
    let status = if option_env!("CORTEXM_TRACE") == Some("edges") {
        trace_edges()
    } else if option_env!("CORTEXM_TRACE") == Some("held") {
        trace_one(Case::Held)
    } else if option_env!("CORTEXM_TRACE").is_some() {
        trace_one(Case::Mixed)
    } else {
        run()
    };
    debug::exit(match status {
        Ok(()) => debug::EXIT_SUCCESS,
        Err(()) => debug::EXIT_FAILURE,
    });
    loop {
        nop();
    }
}

#[panic_handler]
fn panic(info: &core::panic::PanicInfo) -> ! {
    if PROBE == 255 {
        hprintln!("cortexm-error: panic: {}", info);
        debug::exit(debug::EXIT_FAILURE);
    }
    loop {
        nop();
    }
}
