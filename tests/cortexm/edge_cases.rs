//! The golden-vector cases of the comparator/GPIO input (`humsense::edge`),
//! run by `tests/on_target.rs` on the host and on the emulated cores alike
//! (`core` only, no allocation).
//!
//! Each case generates an integer edge train ([`crate::gen::EdgeSource`]:
//! ambient pulses, touches widening them, ringing inside the glitch
//! filter, chatter, lost edges, a stuck pin), feeds it to an
//! [`EdgeDetector`] (timer counts of a 16- or 32-bit timer that wraps
//! during the run, with `advance` between edges; or pin reads through
//! `poll`) and, in parallel, to an [`EdgeFrontend`] + [`Backend`] pair.
//! Every cycle's fields and the back end's per-channel state are folded
//! into the diagnostics hash, and after each call that ended a window the
//! front end's counts ([`EdgeStats`](humsense::edge::EdgeStats)) and its
//! period tracker's state (period, lock, system, health, apparent
//! frequency, the bits of `frequency_hz`). Events are kept in full. The
//! outcome is compared with `golden.rs` like the ADC cases'.

use embedded_hal::digital::{ErrorType, InputPin};
use humsense::edge::{EdgeConfig, EdgeDetector, EdgeFrontend, EdgeInput, TimerWidth};
use humsense::{Backend, Config, Cycle, Event, MainsMode};

use crate::cases::{
    channel_fields, keep, mix, mix64, Ev, Outcome, CHECK_EVERY, FNV_OFFSET, MAX_CHECKS, MAX_EVENTS,
};
use crate::gen::{k, span, Disturb, EdgeSource, EdgeSpec, Knot, PinSpec, Span};

/// How a case feeds its pins.
#[derive(Clone, Copy, Debug)]
pub enum EdgeFeed {
    /// Timer-stamped edges through `push_edge`: a free-running timer of
    /// `timer` width whose count is `start` at tick 0, and `advance` every
    /// `advance_ticks` between edges.
    Edges {
        /// Width of the timer.
        timer: TimerWidth,
        /// Count at tick 0.
        start: u32,
        /// Ticks between `advance` calls.
        advance_ticks: u64,
    },
    /// One read of every pin a tick: `EdgeDetector::poll` through
    /// `InputPin`, the front end through `push_levels`.
    Poll,
}

/// The split pipeline's side of a run: the back end, its events and the
/// hash of every cycle.
struct Split<const N: usize> {
    back: Backend<N, 0>,
    events: [Ev; MAX_EVENTS],
    n_events: usize,
    overflow: bool,
    diag: u64,
    cycles: u32,
    checks: [u64; MAX_CHECKS],
    n_checks: usize,
}

impl<const N: usize> Split<N> {
    /// One cycle from the front end: hash it, run the back end, hash its
    /// per-channel state.
    fn cycle(&mut self, c: &Cycle<N, 0>) {
        let h = &mut self.diag;
        mix64(h, c.end_sample);
        mix(h, c.samples);
        for ch in 0..N {
            let f = c.fund.get(ch).copied().unwrap_or_default();
            mix(h, f.i as u32);
            mix(h, f.q as u32);
            mix(h, u32::from(c.dc.get(ch).copied().unwrap_or(0)));
            mix(h, u32::from(c.flat.get(ch).copied().unwrap_or(false)));
        }
        mix(h, c.health as u32);
        mix(h, u32::from(c.rails.0) | u32::from(c.rails.1) << 16);
        let Self {
            back,
            events,
            n_events,
            overflow,
            ..
        } = self;
        back.process(c, |e| keep(events, n_events, overflow, &e));
        for ch in 0..N {
            match self.back.snapshot(ch) {
                Some(s) => {
                    for w in channel_fields(&s) {
                        mix(&mut self.diag, w);
                    }
                }
                None => mix(&mut self.diag, u32::MAX),
            }
        }
        self.cycles += 1;
        if self.cycles.is_multiple_of(CHECK_EVERY) {
            match self.checks.get_mut(self.n_checks) {
                Some(slot) => {
                    *slot = self.diag;
                    self.n_checks += 1;
                }
                None => self.overflow = true,
            }
        }
    }

    /// The front end's counts and tracker after a call that ended a window.
    fn front_state(&mut self, front: &EdgeFrontend<N>) {
        let h = &mut self.diag;
        for ch in 0..N {
            let s = front.stats(ch).unwrap_or_default();
            for w in [
                s.out_of_order,
                s.same_level,
                s.glitches,
                s.pulses,
                s.incoherent_pulses,
                s.held_windows,
            ] {
                mix(h, w);
            }
        }
        let m = front.mains();
        mix(h, m.period_q8());
        mix(h, u32::from(m.locked()));
        mix(h, m.system() as u32);
        mix(h, m.health() as u32);
        mix(h, m.apparent_mhz());
        mix(h, m.frequency_hz().to_bits());
        mix64(h, front.now());
    }
}

/// A pin for `EdgeDetector::poll`: reads the level a shared cell holds.
struct LevelPin<'a> {
    level: &'a core::cell::Cell<bool>,
}

impl ErrorType for LevelPin<'_> {
    type Error = core::convert::Infallible;
}

impl InputPin for LevelPin<'_> {
    fn is_high(&mut self) -> Result<bool, Self::Error> {
        Ok(self.level.get())
    }
    fn is_low(&mut self) -> Result<bool, Self::Error> {
        Ok(!self.level.get())
    }
}

/// Events kept from the detector.
struct Kept {
    events: [Ev; MAX_EVENTS],
    n: usize,
    overflow: bool,
}

impl Kept {
    fn push(&mut self, e: &Event) {
        keep(&mut self.events, &mut self.n, &mut self.overflow, e);
    }
}

/// The detector and the split pipeline, side by side.
struct Both<const N: usize> {
    det: EdgeDetector<N>,
    kept: Kept,
    front: EdgeFrontend<N>,
    split: Split<N>,
}

impl<const N: usize> Both<N> {
    fn after(&mut self, before: u32) {
        if self.split.cycles != before {
            self.split.front_state(&self.front);
        }
    }

    fn advance(&mut self, count: u32) {
        let kept = &mut self.kept;
        self.det.advance(count, |e| kept.push(&e));
        let before = self.split.cycles;
        let split = &mut self.split;
        self.front.advance(count, |c| split.cycle(c));
        self.after(before);
    }

    fn edge(&mut self, ch: usize, rising: bool, count: u32) {
        let kept = &mut self.kept;
        self.det.push_edge(ch, rising, count, |e| kept.push(&e));
        let before = self.split.cycles;
        let split = &mut self.split;
        self.front.push_edge(ch, rising, count, |c| split.cycle(c));
        self.after(before);
    }

    fn levels(&mut self, cells: &[core::cell::Cell<bool>; N]) {
        let mut pins = cells.each_ref().map(|level| LevelPin { level });
        let kept = &mut self.kept;
        let Ok(()) = self.det.poll(&mut pins, |e| kept.push(&e));
        let levels: [bool; N] = core::array::from_fn(|i| cells.get(i).is_some_and(|c| c.get()));
        let before = self.split.cycles;
        let split = &mut self.split;
        self.front.push_levels(&levels, |c| split.cycle(c));
        self.after(before);
    }
}

/// Runs one edge case: `ms` milliseconds of `spec` on `pins`.
pub fn run<const N: usize>(
    cfg: Config,
    edge: EdgeConfig,
    spec: EdgeSpec,
    pins: &[PinSpec],
    ms: u32,
    feed: EdgeFeed,
) -> Outcome {
    let mut out = Outcome::new();
    let back_cfg = Config {
        nohum_codes: 0.0,
        ..cfg
    };
    let (Ok(det), Ok(front), Ok(back)) = (
        EdgeDetector::<N>::new(cfg, edge),
        EdgeFrontend::<N>::new(&edge, &cfg),
        Backend::<N, 0>::new(&back_cfg),
    ) else {
        out.split_agrees = false;
        return out;
    };
    let mut both = Both {
        det,
        kept: Kept {
            events: [Ev::ZERO; MAX_EVENTS],
            n: 0,
            overflow: false,
        },
        front,
        split: Split {
            back,
            events: [Ev::ZERO; MAX_EVENTS],
            n_events: 0,
            overflow: false,
            diag: FNV_OFFSET,
            cycles: 0,
            checks: [0; MAX_CHECKS],
            n_checks: 0,
        },
    };
    let mut src = EdgeSource::<N>::new(spec, pins, ms);
    let end = src.end();
    let mut input_hash = FNV_OFFSET;
    let mut fed = 0u32;
    match feed {
        EdgeFeed::Edges {
            timer,
            start,
            advance_ticks,
        } => {
            let count = |t: u64| (u64::from(start).wrapping_add(t) as u32) & timer.mask();
            let step = advance_ticks.max(1);
            // The first call starts the clock at tick 0.
            both.advance(count(0));
            let mut next_adv = step;
            while let Some(e) = src.next() {
                while next_adv < e.tick {
                    both.advance(count(next_adv));
                    next_adv += step;
                }
                mix64(&mut input_hash, e.tick);
                mix(&mut input_hash, u32::from(e.ch) | u32::from(e.active) << 8);
                fed += 1;
                // The pin's level: the active level unless inverted.
                both.edge(
                    usize::from(e.ch),
                    e.active != edge.active_low,
                    count(e.tick),
                );
            }
            while next_adv <= end {
                both.advance(count(next_adv));
                next_adv += step;
            }
        }
        EdgeFeed::Poll => {
            let cells: [core::cell::Cell<bool>; N] =
                core::array::from_fn(|_| core::cell::Cell::new(edge.active_low));
            let mut next = src.next();
            for tick in 0..end {
                while let Some(e) = next.filter(|e| e.tick <= tick) {
                    if let Some(c) = cells.get(usize::from(e.ch)) {
                        c.set(e.active != edge.active_low);
                    }
                    mix64(&mut input_hash, e.tick);
                    mix(&mut input_hash, u32::from(e.ch) | u32::from(e.active) << 8);
                    next = src.next();
                }
                both.levels(&cells);
                fed += 1;
            }
        }
    }
    // The detector and the split pipeline must agree exactly.
    let Both {
        det,
        kept,
        front,
        split,
    } = both;
    let same_state = (0..N).all(|ch| {
        det.snapshot(ch).map(|s| channel_fields(&s))
            == split.back.snapshot(ch).map(|s| channel_fields(&s))
            && det.stats(ch) == front.stats(ch)
    }) && det.frontend().now() == front.now()
        && det.frontend().bad_channel() == front.bad_channel()
        && det.mains_hz().to_bits() == front.mains().frequency_hz().to_bits()
        && det.mains_locked() == front.mains().locked();
    out.events = kept.events;
    out.n_events = kept.n;
    out.overflow = kept.overflow || split.overflow;
    out.split_agrees =
        same_state && out.events() == split.events.get(..split.n_events).unwrap_or(&[]);
    out.samples = fed;
    out.cycles = split.cycles;
    out.input_hash = input_hash;
    out.diag_hash = split.diag;
    out.checks = split.checks;
    out.n_checks = split.n_checks;
    out
}

// ---------------------------------------------------------------------------
// The trains. Duty in thousandths of a period: 220 is a hum of 1.3 Vt
// (acos(1/1.3)/π = 0.221, standard trigonometry), 450 about 6.4 Vt, 60
// about 1.02 Vt.

const fn pin(knots: &'static [Knot], spans: &'static [Span], drop_every: u32) -> PinSpec {
    PinSpec {
        phase: 0,
        knots,
        spans,
        drop_every,
    }
}

/// Ambient duty `a`, one touch of duty `p` from `on` to `off` ms with
/// 20 ms ramps.
macro_rules! press {
    ($a:expr, $p:expr, $on:expr, $off:expr) => {{
        const KNOTS: &[Knot] = &[
            k(0, $a),
            k($on, $a),
            k($on + 20, $p),
            k($off, $p),
            k($off + 20, $a),
        ];
        KNOTS
    }};
}

const T50: EdgeSpec = EdgeSpec {
    tick_hz: 1_000_000,
    mains_mhz: 50_000,
    jitter: 2,
    ring_ticks: 40,
    seed: 21,
};

/// The `edges_t16_touch50` case (see `cases::CASES`).
pub fn edges_t16_touch50() -> Outcome {
    // A 16-bit timer at 1 MHz that wraps every 65.5 ms (first 5 ms in),
    // `advance` every 10 ms; three touches, ringing on every edge for 1.5
    // s (inside the 200 µs glitch filter), an edge lost every 97 pulses.
    const KNOTS: &[Knot] = &[
        k(0, 220),
        k(2000, 220),
        k(2020, 450),
        k(2500, 450),
        k(2520, 220),
        k(4000, 220),
        k(4020, 440),
        k(5000, 440),
        k(5020, 220),
        k(6500, 220),
        k(6520, 470),
        k(6700, 470),
        k(6720, 220),
    ];
    const SPANS: &[Span] = &[span(1000, 2500, Disturb::Ring)];
    run::<1>(
        Config::touch(),
        EdgeConfig::new(1_000_000, TimerWidth::Bits16),
        T50,
        &[pin(KNOTS, SPANS, 97)],
        8_000,
        EdgeFeed::Edges {
            timer: TimerWidth::Bits16,
            start: 65_536 - 5_000,
            advance_ticks: 10_000,
        },
    )
}

/// The `edges_t32_touch60x2` case (see `cases::CASES`).
pub fn edges_t32_touch60x2() -> Outcome {
    // Two inverted pins (active low) on a 32-bit timer at 16 MHz that
    // wraps 1.5 s in; 59.8 Hz, hysteresis 0.2 Vt, automatic mains;
    // strongest-pad rule; chatter for 0.6 s on pin 1 while pin 0 is
    // touched, an edge lost every 61 pulses on pin 0.
    const SPEC: EdgeSpec = EdgeSpec {
        tick_hz: 16_000_000,
        mains_mhz: 59_800,
        jitter: 20,
        ring_ticks: 400,
        seed: 22,
    };
    const CH1_SPANS: &[Span] = &[span(2200, 2800, Disturb::Chatter(5))];
    let pins = [
        PinSpec {
            phase: 0x1000_0000,
            ..pin(press!(200, 430, 2000, 3000), &[], 61)
        },
        PinSpec {
            phase: 0x9000_0000,
            ..pin(press!(180, 460, 4500, 5200), CH1_SPANS, 0)
        },
    ];
    run::<2>(
        Config::touch(),
        EdgeConfig {
            active_low: true,
            ..EdgeConfig::new(16_000_000, TimerWidth::Bits32).with_hysteresis_permille(200)
        },
        SPEC,
        &pins,
        7_000,
        EdgeFeed::Edges {
            timer: TimerWidth::Bits32,
            start: u32::MAX - 24_000_000,
            advance_ticks: 80_000,
        },
    )
}

/// The `edges_t16_faults` case (see `cases::CASES`).
pub fn edges_t16_faults() -> Outcome {
    // Chatter of five pulses a cycle for 1.5 s, then the pin stuck active
    // for 5 s: read as a touch until max_active_cycles (100) ends it, then
    // reported stuck after stuck_high_cycles (150); a real touch after.
    const KNOTS: &[Knot] = &[
        k(0, 220),
        k(10_000, 220),
        k(10_020, 450),
        k(10_600, 450),
        k(10_620, 220),
    ];
    const SPANS: &[Span] = &[
        span(1500, 3000, Disturb::Chatter(5)),
        span(4000, 9000, Disturb::Stuck),
    ];
    let cfg = Config {
        max_active_cycles: 100,
        ..Config::touch().with_mains(MainsMode::Hz50)
    };
    run::<1>(
        cfg,
        EdgeConfig {
            stuck_high_cycles: 150,
            ..EdgeConfig::new(1_000_000, TimerWidth::Bits16)
        },
        EdgeSpec { seed: 23, ..T50 },
        &[pin(KNOTS, SPANS, 0)],
        12_000,
        EdgeFeed::Edges {
            timer: TimerWidth::Bits16,
            start: 12_345,
            advance_ticks: 20_000,
        },
    )
}

/// The `edges_t32_field4` case (see `cases::CASES`).
pub fn edges_t32_field4() -> Outcome {
    // Field profile, four pins at 50.3 Hz, a 32-bit timer at 1 MHz; pin 2
    // sees a slow approach over 3 s (duty 60 to 400), a hold, a retreat.
    const APPROACH: &[Knot] = &[
        k(0, 60),
        k(2000, 60),
        k(5000, 400),
        k(7000, 400),
        k(9000, 60),
    ];
    const REST: &[Knot] = &[k(0, 80)];
    let pins = [
        pin(REST, &[], 0),
        PinSpec {
            phase: 0x4000_0000,
            ..pin(REST, &[], 0)
        },
        PinSpec {
            phase: 0x8000_0000,
            ..pin(APPROACH, &[], 0)
        },
        PinSpec {
            phase: 0xc000_0000,
            ..pin(REST, &[], 53)
        },
    ];
    // stuck_high_cycles must exceed the field profile's max_active_cycles.
    run::<4>(
        Config::field(),
        EdgeConfig {
            stuck_high_cycles: 40_000,
            ..EdgeConfig::new(1_000_000, TimerWidth::Bits32)
        },
        EdgeSpec {
            mains_mhz: 50_300,
            seed: 24,
            ..T50
        },
        &pins,
        10_000,
        EdgeFeed::Edges {
            timer: TimerWidth::Bits32,
            start: 0,
            advance_ticks: 5_000,
        },
    )
}

/// The `poll_touch50` case (see `cases::CASES`).
pub fn poll_touch50() -> Outcome {
    // The pin read at 10 kHz through InputPin; two touches; a read of
    // bounce on every edge for 1 s (one tick each way, inside the glitch
    // filter of 2 reads).
    const SPANS: &[Span] = &[span(3000, 4000, Disturb::Ring)];
    run::<1>(
        Config::touch().with_mains(MainsMode::Hz50),
        EdgeConfig::new(10_000, TimerWidth::Bits32),
        EdgeSpec {
            tick_hz: 10_000,
            mains_mhz: 50_000,
            jitter: 1,
            ring_ticks: 1,
            seed: 25,
        },
        &[pin(press!(220, 450, 2000, 2600), SPANS, 0)],
        6_000,
        EdgeFeed::Poll,
    )
}

/// The `poll_level2` case (see `cases::CASES`).
pub fn poll_level2() -> Outcome {
    // Level input (a comparator behind a heavy RC), two pins read at
    // 1 kHz: each pin is active while touched (no pulses at all).
    const SPANS0: &[Span] = &[
        span(1000, 1600, Disturb::Stuck),
        span(3000, 3300, Disturb::Stuck),
    ];
    const SPANS1: &[Span] = &[span(2000, 2500, Disturb::Stuck)];
    const NONE: &[Knot] = &[k(0, 0)];
    let pins = [pin(NONE, SPANS0, 0), pin(NONE, SPANS1, 0)];
    let cfg = Config {
        panel: humsense::PanelMode::Independent,
        ..Config::touch()
    };
    run::<2>(
        cfg,
        EdgeConfig::new(1_000, TimerWidth::Bits32)
            .with_glitch_ticks(1)
            .with_input(EdgeInput::Level),
        EdgeSpec {
            tick_hz: 1_000,
            mains_mhz: 50_000,
            jitter: 0,
            ring_ticks: 0,
            seed: 26,
        },
        &pins,
        4_000,
        EdgeFeed::Poll,
    )
}
