//! The edge input (`humsense::edge`): per edge and per window.

use core::hint::black_box;

use cortex_m_semihosting::hprintln;
use humsense::edge::{EdgeConfig, EdgeDetector, EdgeFrontend, TimerWidth};
use humsense::{Config, Profile};

use super::clock::{insns, now, ratio, TRIPLE};
use crate::gen::{k, span, Disturb, EdgeSource, EdgeSpec, Knot, PinSpec, Span};

// -----------------------------------------------------------------
// The edge input (`humsense::edge`): per edge and per window.

/// Timer of the edge benchmark: 16 bits at 1 MHz (wraps every 65.5 ms).
pub(super) const EDGE_TICK_HZ: u32 = 1_000_000;
/// Edge train of the benchmark: warm-up, then the measured part.
pub(super) const EDGE_WARM_MS: u32 = 3_000;
pub(super) const EDGE_MS: u32 = 4_000;
/// Edges generated before each run of timed calls.
pub(super) const EDGE_BATCH: usize = 32;

/// The representative train, per pin: ambient pulses (duty 0.22 of a
/// period: a hum of 1.3 Vt), a burst of chatter (five pulses a cycle
/// for 100 ms, once in the measured 4 s), one edge in 37 pulses lost;
/// pin 0 also has a touch of 0.5 s every 2 s (duty 0.45), the other
/// pins only ambient (so that the strongest-pad rule finds touches
/// there too). Pin c's pulses are shifted by c/8 of a period.
pub(super) const EDGE_TOUCHED: &[Knot] = &[
    k(0, 220),
    k(1000, 220),
    k(1020, 450),
    k(1500, 450),
    k(1520, 220),
    k(3000, 220),
    k(3020, 450),
    k(3500, 450),
    k(3520, 220),
    k(5000, 220),
    k(5020, 450),
    k(5500, 450),
    k(5520, 220),
];
pub(super) const EDGE_AMBIENT: &[Knot] = &[k(0, 220)];
pub(super) const EDGE_SPANS: &[Span] = &[span(4200, 4300, Disturb::Chatter(5))];

pub(super) fn edge_source<const N: usize>() -> EdgeSource<N> {
    let spec = EdgeSpec {
        tick_hz: EDGE_TICK_HZ,
        mains_mhz: 50_000,
        jitter: 2,
        ring_ticks: 0,
        seed: 0x5eed,
    };
    let pins: [PinSpec; 8] = core::array::from_fn(|c| PinSpec {
        phase: (c as u32) << 29,
        knots: if c == 0 { EDGE_TOUCHED } else { EDGE_AMBIENT },
        spans: EDGE_SPANS,
        drop_every: 37,
    });
    EdgeSource::new(spec, &pins[..N], EDGE_WARM_MS + EDGE_MS)
}

#[inline(never)]
pub(super) fn edge_call<const N: usize>(
    det: &mut EdgeDetector<N>,
    ch: usize,
    rising: bool,
    count: u32,
    events: &mut u32,
) {
    det.push_edge(ch, rising, count, |_| *events += 1);
}

/// The call overhead `edge_call` adds: the same signature, doing
/// nothing (its body is a return: `black_box(())` emits no
/// instruction).
#[inline(never)]
pub(super) fn tick_call<const N: usize>(det: &mut EdgeDetector<N>, count: u32, events: &mut u32) {
    det.advance(count, |_| *events += 1);
}

#[inline(never)]
pub(super) fn empty_edge_call<const N: usize>(
    _det: &mut EdgeDetector<N>,
    _ch: usize,
    _rising: bool,
    _count: u32,
    _events: &mut u32,
) {
    black_box(());
}

/// What the timed calls of one run of the train added up to.
#[derive(Clone, Copy, PartialEq, Eq)]
pub(super) struct EdgeCost {
    /// Calls that ended no window: count, instructions, most in one.
    plain: u64,
    plain_insn: u64,
    plain_min: u64,
    plain_max: u64,
    /// Calls that ended one or more windows: count, instructions, most.
    ending: u64,
    ending_insn: u64,
    ending_max: u64,
    /// Windows ended by edges.
    windows: u64,
    /// The periodic `advance` calls: count, instructions, windows they
    /// ended.
    ticks: u64,
    tick_insn: u64,
    tick_windows: u64,
}

/// The firmware's periodic tick that calls `advance`: every 5 ms (the
/// interval `humsim replay` uses for edge logs).
pub(super) const EDGE_TICK_TICKS: u64 = EDGE_TICK_HZ as u64 / 200;

/// Times every `push_edge` of the measured part of the train, one call
/// at a time (call overhead subtracted); a shadow front end, outside
/// the timed region, tells which calls ended windows.
#[inline(never)]
pub(super) fn edge_costs<const N: usize>(
    det: &mut EdgeDetector<N>,
    src: &mut EdgeSource<N>,
    events: &mut u32,
) -> EdgeCost {
    let mask = TimerWidth::Bits16.mask();
    let mut shadow = det.frontend().clone();
    let (mut d, mut e) = (black_box(0usize), black_box(false));
    let t0 = now();
    empty_edge_call(det, d, e, 0, events);
    let t1 = now();
    let overhead = black_box(insns(t0, t1));
    d = black_box(d);
    e = black_box(e);
    let _ = (d, e);
    let mut r = EdgeCost {
        plain: 0,
        plain_insn: 0,
        plain_min: u64::MAX,
        plain_max: 0,
        ending: 0,
        ending_insn: 0,
        ending_max: 0,
        windows: 0,
        ticks: 0,
        tick_insn: 0,
        tick_windows: 0,
    };
    let mut buf = [(0u64, 0usize, false); EDGE_BATCH];
    let mut next_tick: Option<u64> = None;
    loop {
        let mut n = 0;
        for slot in buf.iter_mut() {
            let Some(edge) = src.next() else { break };
            *slot = (edge.tick, usize::from(edge.ch), edge.active);
            n += 1;
        }
        if n == 0 {
            break;
        }
        for &(tick, ch, rising) in black_box(&buf[..n]) {
            // The periodic ticks due before this edge, each timed.
            let mut due = *next_tick.get_or_insert(tick - tick % EDGE_TICK_TICKS + EDGE_TICK_TICKS);
            while due <= tick {
                let at = (due as u32) & mask;
                let t0 = now();
                tick_call(det, at, events);
                let t1 = now();
                r.tick_insn += black_box(insns(t0, t1).saturating_sub(overhead));
                r.ticks += 1;
                shadow.advance(at, |_| r.tick_windows += 1);
                due += EDGE_TICK_TICKS;
            }
            next_tick = Some(due);
            let count = (tick as u32) & mask;
            let t0 = now();
            edge_call(det, ch, rising, count, events);
            let t1 = now();
            let cost = black_box(insns(t0, t1).saturating_sub(overhead));
            let mut windows = 0u64;
            shadow.push_edge(ch, rising, count, |_| windows += 1);
            if windows == 0 {
                r.plain += 1;
                r.plain_insn += cost;
                r.plain_min = r.plain_min.min(cost);
                r.plain_max = r.plain_max.max(cost);
            } else {
                r.ending += 1;
                r.ending_insn += cost;
                r.ending_max = r.ending_max.max(cost);
                r.windows += windows;
            }
        }
    }
    r
}

/// The figure handed in by `.ci/cortexm` for the one-channel edge-only
/// firmware, if any.
pub(super) fn edge_flash() -> Option<u32> {
    option_env!("CORTEXM_EDGE_FLASH")?.trim().parse().ok()
}

/// One run: a fresh detector on a fresh train, warmed up, then every
/// edge of the measured part timed. The detector's size comes back
/// with the cost.
#[inline(never)]
pub(super) fn edge_run<const N: usize>(
    cfg: Config,
    edge: EdgeConfig,
) -> Result<(EdgeCost, u32), ()> {
    let Ok(mut det) = EdgeDetector::<N>::new(cfg, edge) else {
        hprintln!("cortexm-error: edge configuration rejected");
        return Err(());
    };
    let mut src = edge_source::<N>();
    let mut events = 0u32;
    let warm_end = u64::from(EDGE_WARM_MS) * u64::from(EDGE_TICK_HZ) / 1000;
    let mask = TimerWidth::Bits16.mask();
    // Warm-up: every edge before `warm_end`, and the first after it.
    while let Some(e) = src.next() {
        det.push_edge(usize::from(e.ch), e.active, (e.tick as u32) & mask, |_| {
            events += 1
        });
        if e.tick >= warm_end {
            break;
        }
    }
    let cost = edge_costs(&mut det, &mut src, &mut events);
    Ok((cost, events))
}

// Out of line, and each run in a call of its own, so that no more than
// one source and detector of up to 8 channels is on the stack at a time
// (the M0 has 16 KiB of RAM).
#[inline(never)]
pub(super) fn edge_bench<const N: usize>(profile: Profile) -> Result<(), ()> {
    let (cfg, name) = match profile {
        Profile::Touch => (Config::touch(), "touch"),
        Profile::Field => (Config::field(), "field"),
    };
    // stuck_high_cycles above the profile's max_active_cycles.
    let edge = EdgeConfig {
        stuck_high_cycles: cfg.max_active_cycles.saturating_add(1).max(12_000),
        ..EdgeConfig::new(EDGE_TICK_HZ, TimerWidth::Bits16)
    };
    // Same start, same input: the count must repeat exactly.
    let (cost, events) = edge_run::<N>(cfg, edge)?;
    let (again, _) = edge_run::<N>(cfg, edge)?;
    if cost != again {
        hprintln!(
            "cortexm-error: repeated edge runs counted {} then {} instructions (no -icount?)",
            cost.plain_insn + cost.ending_insn,
            again.plain_insn + again.ending_insn
        );
        return Err(());
    }
    if cost.plain == 0 || cost.windows + cost.tick_windows == 0 {
        hprintln!("cortexm-error: the edge train ended no window or had no plain edge");
        return Err(());
    }
    // Per edge: the mean of the calls that ended no window. Per cycle:
    // everything else (all edge calls less that per-edge cost each, and
    // the periodic ticks), per window and channel.
    let calls = cost.plain + cost.ending;
    let total = cost.plain_insn + cost.ending_insn + cost.tick_insn;
    let per_edge_x100 = (cost.plain_insn * 100 + cost.plain / 2) / cost.plain;
    let rest_x100 = (total * 100).saturating_sub(calls * per_edge_x100);
    let den = (cost.windows + cost.tick_windows) * N as u64;
    let per_cycle_x100 = (rest_x100 + den / 2) / den;
    let ram = core::mem::size_of::<EdgeDetector<N>>();
    let front_ram = core::mem::size_of::<EdgeFrontend<N>>();
    match edge_flash().filter(|_| N == 1) {
        Some(flash) => hprintln!(
            "cortexm: target={} input=edges profile={} channels={} insn_per_edge={}.{:02} insn_per_cycle={}.{:02} ram_bytes={} flash_bytes={}",
            TRIPLE, name, N, per_edge_x100 / 100, per_edge_x100 % 100,
            per_cycle_x100 / 100, per_cycle_x100 % 100, ram, flash
        ),
        None => hprintln!(
            "cortexm: target={} input=edges profile={} channels={} insn_per_edge={}.{:02} insn_per_cycle={}.{:02} ram_bytes={} flash_bytes=na",
            TRIPLE, name, N, per_edge_x100 / 100, per_edge_x100 % 100,
            per_cycle_x100 / 100, per_cycle_x100 % 100, ram
        ),
    }
    let (ew, ewf) = ratio(cost.ending_insn, cost.ending);
    let (tw, twf) = ratio(cost.tick_insn, cost.ticks);
    hprintln!(
        "cortexm-stage: target={} input=edges profile={} channels={} edges={} plain_edges={} insn_per_edge_min={} insn_per_edge_max={} window_calls={} windows={} insn_per_window_call={}.{:02} insn_per_window_call_max={} ticks={} tick_windows={} insn_per_tick={}.{:02} frontend_ram_bytes={} events={}",
        TRIPLE, name, N, calls, cost.plain, cost.plain_min, cost.plain_max, cost.ending, cost.windows,
        ew, ewf, cost.ending_max, cost.ticks, cost.tick_windows, tw, twf, front_ram, events
    );
    Ok(())
}
