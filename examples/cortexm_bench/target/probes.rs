//! Flash probes (minimal firmware with and without the detector) and the
//! instruction-profile workloads (`CORTEXM_TRACE`).

use core::hint::black_box;

use cortex_m::asm::nop;
use humsense::edge::{EdgeConfig, EdgeDetector, TimerWidth};
use humsense::{Config, Detector};

use super::adc::{block_call, frame, source, Case};
use super::clock::{now, BLOCK};
use super::edges::{edge_call, edge_source, EDGE_TICK_HZ};

/// Flash probe: a minimal firmware that reads "ADC" codes (SysTick
/// stands in for the converter) into a `Detector<N>` and consumes its
/// events. The configuration goes through `black_box`, so construction
/// and validation are kept as a firmware that loads its settings would.
pub(super) fn probe<const N: usize>() -> ! {
    let cfg = black_box(Config::touch());
    let Ok(mut det) = Detector::<N>::new(cfg) else {
        loop {
            nop();
        }
    };
    loop {
        let f = [now() as u16; N];
        det.push_frame(&f, |e| {
            black_box(e);
        });
    }
}

/// The same firmware without the detector.
pub(super) fn probe_without() -> ! {
    loop {
        black_box([now() as u16; 1]);
    }
}

/// Samples a block-path probe collects before each call (a DMA
/// half-buffer, say).
pub(super) const PROBE_BLOCK: usize = 64;

/// A minimal firmware feeding blocks: fills a buffer, one
/// `Detector::<1>::push_block` a buffer, events out.
pub(super) fn probe_block() -> ! {
    let cfg = black_box(Config::touch());
    let Ok(mut det) = Detector::<1>::new(cfg) else {
        loop {
            nop();
        }
    };
    let mut buf = [0u16; PROBE_BLOCK];
    loop {
        for x in buf.iter_mut() {
            *x = now() as u16;
        }
        det.push_block(black_box(&buf[..]), |e| {
            black_box(e);
        });
    }
}

/// The same firmware without the detector.
pub(super) fn probe_block_without() -> ! {
    let mut buf = [0u16; PROBE_BLOCK];
    loop {
        for x in buf.iter_mut() {
            *x = now() as u16;
        }
        black_box(&buf[..]);
    }
}

/// Flash probe of the telemetry encoder (feature `telemetry`,
/// `CORTEXM_FLASH_PROBE=210`, against 0): one channel of 12-bit codes
/// at 2 kHz, 60 frames a record, a 1 KiB buffer, pushed frame by frame
/// and drained 16 bytes at a time (a UART FIFO).
#[cfg(feature = "telemetry")]
pub(super) fn probe_telemetry() -> ! {
    use humsense::telemetry::{StreamHeader, TelemetryEncoder};
    let h = black_box(StreamHeader {
        channels: 1,
        adc_bits: 12,
        rate_hz: 2000,
    });
    let Ok(mut tel) = TelemetryEncoder::<u16, 1024>::new(h, 60) else {
        loop {
            nop();
        }
    };
    let mut fifo = [0u8; 16];
    loop {
        let _ = tel.push_frame(&[now() as u16]);
        let n = tel.read(&mut fifo);
        black_box((&fifo, n));
    }
}

/// Edge-only flash probe: a minimal firmware whose pin interrupt hands
/// the timer count (SysTick stands in for the timer) to a one-channel
/// `EdgeDetector`, and whose main loop calls `advance`; events out.
/// The configurations go through `black_box`, as a firmware that loads
/// its settings would.
pub(super) fn probe_edges() -> ! {
    let cfg = black_box(Config::touch());
    let edge = black_box(EdgeConfig::new(1_000_000, TimerWidth::Bits16));
    let Ok(mut det) = EdgeDetector::<1>::new(cfg, edge) else {
        loop {
            nop();
        }
    };
    let mut rising = true;
    loop {
        det.push_edge(0, rising, now(), |e| {
            black_box(e);
        });
        rising = !rising;
        det.advance(now(), |e| {
            black_box(e);
        });
    }
}

/// The same firmware without the detector.
pub(super) fn probe_edges_without() -> ! {
    let mut rising = true;
    loop {
        black_box((0usize, rising, now()));
        rising = !rising;
        black_box(now());
    }
}

/// `CORTEXM_TRACE=1` at build time: only the touch profile, one
/// channel, the benchmark's mixed signal (`CORTEXM_TRACE=held`: the held
/// touch), through `Detector::push_block` for `TRACE_FRAMES` frames
/// (warm-up included), and no output: a steady workload for an
/// instruction profile from QEMU's execution trace (`-d
/// exec,nochain,in_asm`; see DEVELOPERS.md).
pub(super) fn trace_one(case: Case) -> Result<(), ()> {
    const TRACE_FRAMES: u32 = 48_000;
    let Ok(mut det) = Detector::<1>::new(Config::touch()) else {
        return Err(());
    };
    let mut src = source::<1>(case);
    let mut events = 0u32;
    let mut buf = [0u16; BLOCK as usize];
    for _ in 0..TRACE_FRAMES / BLOCK {
        for x in buf.iter_mut() {
            *x = frame(&mut src)[0];
        }
        block_call(&mut det, black_box(&buf), &mut events);
    }
    black_box(events);
    Ok(())
}

/// `CORTEXM_TRACE=edges` at build time: the edge benchmark's train
/// (7 s: 350 windows) through a one-channel `EdgeDetector` (touch
/// profile), no output: the edge input's workload for the instruction
/// profile (`PROFILE_INPUT=edges .ci/profile`).
pub(super) fn trace_edges() -> Result<(), ()> {
    let cfg = Config::touch();
    let edge = EdgeConfig::new(EDGE_TICK_HZ, TimerWidth::Bits16);
    let Ok(mut det) = EdgeDetector::<1>::new(cfg, edge) else {
        return Err(());
    };
    let mut src = edge_source::<1>();
    let mut events = 0u32;
    let mask = TimerWidth::Bits16.mask();
    while let Some(e) = src.next() {
        edge_call(
            &mut det,
            usize::from(e.ch),
            e.active,
            (e.tick as u32) & mask,
            &mut events,
        );
    }
    black_box(events);
    Ok(())
}
