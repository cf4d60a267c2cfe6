//! The golden-vector cases run by `tests/on_target.rs`, on the host and on
//! the emulated Cortex-M cores alike (`core` only, no allocation).
//!
//! Each case generates its signal with [`crate::gen`], feeds it to a
//! [`Detector`] through one of the public entry points (`push`,
//! `push_frame`, `push_block` with blocks that split frames) and, in
//! parallel, to a [`Frontend`] + [`Backend`] pair. After every mains cycle
//! it folds the cycle's I/Q, every channel's [`ChannelSnapshot`] fields,
//! the DC estimates and the mains tracker's state (including the bits of
//! `frequency_hz`) into a running 64-bit hash, with a checkpoint every 64
//! cycles. The events of the detector are kept in full. The outcome is
//! compared with the golden vectors in `golden.rs`, which the host build
//! writes (`HUMSENSE_BLESS=1 cargo test --test on_target`).

use core::fmt;

use humsense::{
    AdcSample, Backend, ChannelSnapshot, Config, Detector, Event, EventKind, Frontend, MainsMode,
    PanelMode,
};

use crate::gen::{k, ChannelSpec, Knot, SignalSpec, Source};

/// Most events a case may produce (more is a failure).
pub const MAX_EVENTS: usize = 32;
/// Most checkpoints kept (one per 64 cycles).
pub const MAX_CHECKS: usize = 24;
/// Cycles between checkpoints.
pub const CHECK_EVERY: u32 = 64;

/// One event in a form that is easy to write down and compare.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Ev {
    /// Channel.
    pub ch: u8,
    /// 1 touch-on, 2 touch-off, 3 field-on, 4 field-off, 5 level, 6 fault,
    /// 7 fault-clear, 8 overflow, 0 other.
    pub kind: u8,
    /// The level (5), the fault's bit (6, 7), the events lost (8), else 0.
    pub arg: u32,
    /// `Event::sample`.
    pub sample: u64,
    /// `Event::amplitude_q8`.
    pub amp: u32,
    /// `Event::baseline_q8`.
    pub base: u32,
}

/// Shorthand used by the generated golden file.
pub const fn ev(ch: u8, kind: u8, arg: u32, sample: u64, amp: u32, base: u32) -> Ev {
    Ev {
        ch,
        kind,
        arg,
        sample,
        amp,
        base,
    }
}

impl Ev {
    /// No event.
    pub const ZERO: Self = ev(0, 0, 0, 0, 0, 0);

    fn from_event(e: &Event) -> Self {
        let (kind, arg) = match e.kind {
            EventKind::TouchOn => (1, 0),
            EventKind::TouchOff => (2, 0),
            EventKind::FieldOn => (3, 0),
            EventKind::FieldOff => (4, 0),
            EventKind::Level(l) => (5, u32::from(l)),
            EventKind::Fault(f) => (6, u32::from(f.bit())),
            EventKind::FaultClear(f) => (7, u32::from(f.bit())),
            EventKind::Overflow(n) => (8, n),
            _ => (0, 0),
        };
        ev(
            e.channel,
            kind,
            arg,
            e.sample,
            e.amplitude_q8,
            e.baseline_q8,
        )
    }

    /// Whether this is an on event (touch-on or field-on).
    pub const fn is_on(&self) -> bool {
        self.kind == 1 || self.kind == 3
    }
}

impl fmt::Display for Ev {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(
            f,
            "ch{} kind {} arg {} at sample {} amp_q8 {} base_q8 {}",
            self.ch, self.kind, self.arg, self.sample, self.amp, self.base
        )
    }
}

/// The golden vectors of one case, as the host computed them.
#[derive(Clone, Copy, Debug)]
pub struct Golden {
    /// Case name.
    pub name: &'static str,
    /// Samples per channel fed (edge cases: edges fed, all channels; polled
    /// cases: reads of the pins).
    pub samples: u32,
    /// Mains cycles completed.
    pub cycles: u32,
    /// Hash of every input code.
    pub input_hash: u64,
    /// Hash of the per-cycle diagnostics over the whole run.
    pub diag_hash: u64,
    /// The diagnostics hash every 64 cycles.
    pub checks: &'static [u64],
    /// Every event, in order.
    pub events: &'static [Ev],
}

/// What one run of a case produced.
#[derive(Clone, Debug)]
pub struct Outcome {
    /// Samples per channel fed (edge cases: edges fed, all channels; polled
    /// cases: reads of the pins).
    pub samples: u32,
    /// Mains cycles completed.
    pub cycles: u32,
    /// Hash of every input code.
    pub input_hash: u64,
    /// Hash of the per-cycle diagnostics.
    pub diag_hash: u64,
    /// Checkpoints of `diag_hash`.
    pub checks: [u64; MAX_CHECKS],
    /// Checkpoints kept.
    pub n_checks: usize,
    /// The detector's events.
    pub events: [Ev; MAX_EVENTS],
    /// Events kept.
    pub n_events: usize,
    /// More events than `MAX_EVENTS`, or more checkpoints than `MAX_CHECKS`.
    pub overflow: bool,
    /// Whether the `Detector` and the `Frontend` + `Backend` pair gave the
    /// same events and ended in the same state.
    pub split_agrees: bool,
}

impl Outcome {
    /// A fresh outcome: nothing fed, hashes at their offset.
    pub fn new() -> Self {
        Self {
            samples: 0,
            cycles: 0,
            input_hash: FNV_OFFSET,
            diag_hash: FNV_OFFSET,
            checks: [0; MAX_CHECKS],
            n_checks: 0,
            events: [Ev::ZERO; MAX_EVENTS],
            n_events: 0,
            overflow: false,
            split_agrees: true,
        }
    }

    /// The events kept.
    pub fn events(&self) -> &[Ev] {
        self.events.get(..self.n_events).unwrap_or(&[])
    }

    /// The checkpoints kept.
    pub fn checks(&self) -> &[u64] {
        self.checks.get(..self.n_checks).unwrap_or(&[])
    }
}

pub const FNV_OFFSET: u64 = 0xcbf2_9ce4_8422_2325;
const FNV_PRIME: u64 = 0x0000_0100_0000_01b3;

/// FNV-1a over 32-bit words.
#[inline]
pub fn mix(h: &mut u64, w: u32) {
    *h = (*h ^ u64::from(w)).wrapping_mul(FNV_PRIME);
}

/// FNV-1a over a 64-bit word, low half first.
pub fn mix64(h: &mut u64, w: u64) {
    mix(h, w as u32);
    mix(h, (w >> 32) as u32);
}

/// The per-channel decision state of a snapshot (what `Detector` and a bare
/// `Backend` report alike).
pub fn channel_fields(s: &ChannelSnapshot) -> [u32; 8] {
    [
        s.amplitude_q8,
        s.baseline_q8,
        s.noise_q8,
        s.on_q8,
        s.off_q8,
        s.state as u32,
        u32::from(s.level),
        u32::from(s.faults.0),
    ]
}

fn mix_snapshot(h: &mut u64, s: &ChannelSnapshot) {
    for w in channel_fields(s) {
        mix(h, w);
    }
    mix(h, s.mains_hz.to_bits());
    mix(h, u32::from(s.mains_locked));
    mix64(h, s.samples);
}

/// A sample type the cases feed, made from a generated code.
pub trait Code: AdcSample {
    /// The code as this type (the generator already clipped it).
    fn from_code(x: i32) -> Self;
}

impl Code for u16 {
    fn from_code(x: i32) -> Self {
        x as u16
    }
}

impl Code for i16 {
    fn from_code(x: i32) -> Self {
        x as i16
    }
}

/// How a case feeds its detector.
pub enum Feed<const N: usize, const H: usize, S> {
    /// One sample at a time (`Detector::push`; single channel only).
    Single(fn(&mut Detector<N, H>, &[S; N]) -> Option<Event>),
    /// One frame at a time (`push_frame`).
    Frame,
    /// Interleaved blocks of this many samples (`push_block`; at most 64).
    /// A length that is not a multiple of N leaves a partial frame, which
    /// `push_block` hands back and the case puts at the front of the next
    /// block.
    Block(usize),
}

const BLOCK_MAX: usize = 64;

/// Keeps `e` in `out` (or flags the overflow).
pub fn keep(out: &mut [Ev; MAX_EVENTS], n: &mut usize, overflow: &mut bool, e: &Event) {
    match out.get_mut(*n) {
        Some(slot) => {
            *slot = Ev::from_event(e);
            *n += 1;
        }
        None => *overflow = true,
    }
}

/// Runs one case: `ms` milliseconds of `spec` on `chans`.
pub fn run<const N: usize, const H: usize, S: Code>(
    cfg: Config,
    spec: SignalSpec,
    chans: &[ChannelSpec],
    ms: u32,
    feed: Feed<N, H, S>,
) -> Outcome {
    let mut out = Outcome::new();
    let (Ok(mut det), Ok(mut front), Ok(mut back)) = (
        Detector::<N, H>::new(cfg),
        Frontend::<N, H>::new(&cfg),
        Backend::<N, H>::new(&cfg),
    ) else {
        out.split_agrees = false;
        return out;
    };
    let mut src = Source::<N>::new(spec, chans);
    let total = (u64::from(ms) * u64::from(spec.rate_hz) / 1000) as u32;
    let mut split = [Ev::ZERO; MAX_EVENTS];
    let mut n_split = 0usize;
    let mut block = [S::from_code(0); BLOCK_MAX];
    let mut in_block = 0usize;
    let Outcome {
        events,
        n_events,
        overflow,
        ..
    } = &mut out;
    let mut det_events = |e: Event| keep(events, n_events, overflow, &e);
    let mut input_hash = FNV_OFFSET;
    let mut diag = FNV_OFFSET;
    let mut cycles = 0u32;
    let mut checks = [0u64; MAX_CHECKS];
    let mut n_checks = 0usize;
    let mut split_overflow = false;
    for _ in 0..total {
        let codes = src.frame();
        for c in codes {
            mix(&mut input_hash, c as u32);
        }
        let frame: [S; N] = codes.map(S::from_code);
        match &feed {
            Feed::Single(push) => {
                if let Some(e) = push(&mut det, &frame) {
                    det_events(e);
                }
            }
            Feed::Frame => det.push_frame(&frame, &mut det_events),
            Feed::Block(len) => {
                for x in frame {
                    if let Some(slot) = block.get_mut(in_block) {
                        *slot = x;
                        in_block += 1;
                    }
                    if in_block >= (*len).clamp(1, BLOCK_MAX) {
                        let rest =
                            det.push_block(block.get(..in_block).unwrap_or(&[]), &mut det_events);
                        block.copy_within(in_block - rest.min(in_block)..in_block, 0);
                        in_block = rest.min(in_block);
                    }
                }
            }
        }
        let Some(cycle) = front.push_frame(&frame) else {
            continue;
        };
        mix64(&mut diag, cycle.end_sample);
        mix(&mut diag, cycle.samples);
        for (f, hs) in cycle.fund.iter().zip(cycle.harm.iter()) {
            mix(&mut diag, f.i as u32);
            mix(&mut diag, f.q as u32);
            for h in hs {
                mix(&mut diag, h.i as u32);
                mix(&mut diag, h.q as u32);
            }
        }
        back.process(&cycle, |e| {
            keep(&mut split, &mut n_split, &mut split_overflow, &e)
        });
        for ch in 0..N {
            match back.snapshot(ch) {
                Some(s) => mix_snapshot(&mut diag, &s),
                None => mix(&mut diag, u32::MAX),
            }
            mix(&mut diag, front.dc(ch).unwrap_or(i32::MIN) as u32);
        }
        let t = front.tracker();
        mix(&mut diag, t.step());
        mix(&mut diag, u32::from(t.locked()));
        mix(&mut diag, t.system() as u32);
        mix(&mut diag, t.frequency_hz().to_bits());
        mix(&mut diag, t.health() as u32);
        cycles += 1;
        if cycles.is_multiple_of(CHECK_EVERY) {
            match checks.get_mut(n_checks) {
                Some(slot) => {
                    *slot = diag;
                    n_checks += 1;
                }
                None => split_overflow = true,
            }
        }
    }
    let mut left = 0;
    if in_block > 0 {
        left = det.push_block(block.get(..in_block).unwrap_or(&[]), &mut det_events);
    }
    // The detector and the split pipeline must agree exactly.
    let same_state = (0..N).all(|ch| {
        det.snapshot(ch).map(|s| channel_fields(&s))
            == back.snapshot(ch).map(|s| channel_fields(&s))
    }) && left == 0
        && det.samples_seen() == front.samples_seen()
        && det.mains_hz().to_bits() == front.tracker().frequency_hz().to_bits()
        && det.mains_locked() == front.tracker().locked();
    out.split_agrees =
        same_state && out.events() == split.get(..n_split).unwrap_or(&[]) && !split_overflow;
    out.overflow |= split_overflow;
    out.samples = total;
    out.cycles = cycles;
    out.input_hash = input_hash;
    out.diag_hash = diag;
    out.checks = checks;
    out.n_checks = n_checks;
    out
}

/// One case: a name, the number of on events its signal is built to cause
/// (checked, so that a golden file of a case that detects nothing cannot
/// pass unnoticed), and how to run it.
pub struct Case {
    /// Name, also the key in the golden file.
    pub name: &'static str,
    /// On events (touch-on or field-on) the signal is designed to cause.
    pub expect_on: usize,
    /// Runs the case.
    pub run: fn() -> Outcome,
}

/// Checks one outcome, printing each failure through `say`; returns true
/// when it passed. `want: None` (while blessing) skips the comparison with
/// the golden vectors but keeps the other checks.
pub fn check(
    case: &Case,
    got: &Outcome,
    want: Option<&Golden>,
    say: &mut dyn FnMut(fmt::Arguments<'_>),
) -> bool {
    let mut ok = true;
    let name = case.name;
    if got.overflow {
        say(format_args!(
            "{name}: more than {MAX_EVENTS} events or {MAX_CHECKS} checkpoints"
        ));
        ok = false;
    }
    if !got.split_agrees {
        say(format_args!(
            "{name}: Detector and Frontend+Backend disagree (events or final state)"
        ));
        ok = false;
    }
    let on = got.events().iter().filter(|e| e.is_on()).count();
    if on != case.expect_on {
        say(format_args!(
            "{name}: {on} on events, the signal is built for {}",
            case.expect_on
        ));
        ok = false;
    }
    let Some(want) = want else {
        return ok;
    };
    if want.name != name {
        say(format_args!(
            "{name}: golden entry is for {} (regenerate)",
            want.name
        ));
        return false;
    }
    if got.input_hash != want.input_hash || got.samples != want.samples {
        say(format_args!(
            "{name}: input differs: {} samples hash {:016x}, golden {} samples hash {:016x}",
            got.samples, got.input_hash, want.samples, want.input_hash
        ));
        ok = false;
    }
    if got.cycles != want.cycles || got.diag_hash != want.diag_hash {
        let first = got
            .checks()
            .iter()
            .zip(want.checks.iter())
            .position(|(a, b)| a != b);
        match first {
            Some(i) => say(format_args!(
                "{name}: diagnostics differ within cycles {}..{}",
                i as u32 * CHECK_EVERY,
                (i as u32 + 1) * CHECK_EVERY
            )),
            None => say(format_args!(
                "{name}: diagnostics differ after the last checkpoint ({} cycles, golden {})",
                got.cycles, want.cycles
            )),
        }
        ok = false;
    }
    let (g, w) = (got.events(), want.events);
    if g != w {
        match g.iter().zip(w.iter()).position(|(a, b)| a != b) {
            Some(i) => {
                if let (Some(a), Some(b)) = (g.get(i), w.get(i)) {
                    say(format_args!("{name}: event {i}: got {a}, golden {b}"));
                }
            }
            None => say(format_args!(
                "{name}: {} events, golden has {}",
                g.len(),
                w.len()
            )),
        }
        ok = false;
    }
    ok
}

// ---------------------------------------------------------------------------
// The signals.

const MID: SignalSpec = SignalSpec {
    rate_hz: 2_000,
    mains_mhz: 50_000,
    bias: 2048,
    lo: 0,
    hi: 4095,
    spike_ms: 0,
    drift_mhz: 0,
    drift_ms: 0,
    seed: 1,
};

const fn chan(knots: &'static [Knot], noise_x16: i32) -> ChannelSpec {
    ChannelSpec {
        phase: 0,
        knots,
        third_q8: 0,
        fifth_q8: 0,
        noise_x16,
    }
}

/// Ambient `a`, one press of amplitude `p` from `on` to `off` ms with
/// 20 ms edges.
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

const TOUCH50: &[Knot] = &[
    k(0, 20),
    k(2000, 20),
    k(2020, 400),
    k(2400, 400),
    k(2420, 20),
    k(3500, 20),
    k(3520, 250),
    k(4500, 250),
    k(4520, 20),
    k(6000, 20),
    k(6020, 500),
    k(6150, 500),
    k(6170, 20),
];

fn touch50() -> Outcome {
    let chans = [chan(TOUCH50, 16)];
    run::<1, 0, u16>(
        Config::touch(),
        MID,
        &chans,
        8_000,
        Feed::Single(|d, f| d.push(f[0])),
    )
}

const TOUCH60: &[Knot] = &[
    k(0, 15),
    k(1800, 15),
    k(1815, 300),
    k(2300, 300),
    k(2315, 15),
    k(3500, 15),
    k(3510, 200),
    k(4800, 200),
    k(4815, 15),
    k(6000, 15),
    k(6010, 450),
    k(6140, 450),
    k(6150, 15),
];

fn touch60() -> Outcome {
    let spec = SignalSpec {
        mains_mhz: 60_000,
        seed: 2,
        ..MID
    };
    let chans = [ChannelSpec {
        phase: 0x3000_0000,
        knots: TOUCH60,
        third_q8: 20,
        fifth_q8: 0,
        noise_x16: 24,
    }];
    run::<1, 0, u16>(Config::touch(), spec, &chans, 8_000, Feed::Frame)
}

fn touch_clip() -> Outcome {
    // Single supply: bias 0, codes 0..=4095, so the hum is a half-wave;
    // the second touch would reach 9000 codes and is clipped at the rail.
    let spec = SignalSpec {
        bias: 0,
        seed: 3,
        ..MID
    };
    const KNOTS: &[Knot] = &[
        k(0, 40),
        k(2000, 40),
        k(2020, 1500),
        k(3000, 1500),
        k(3020, 40),
        k(4000, 40),
        k(4020, 9000),
        k(5000, 9000),
        k(5020, 40),
    ];
    let chans = [chan(KNOTS, 16)];
    run::<1, 2, u16>(
        Config::touch().with_mains(MainsMode::Hz50),
        spec,
        &chans,
        6_500,
        Feed::Block(53),
    )
}

fn touch_spikes() -> Outcome {
    // Full-scale spikes of one to three samples every 150 ms on average.
    let spec = SignalSpec {
        spike_ms: 150,
        drift_mhz: 0,
        drift_ms: 0,
        seed: 4,
        ..MID
    };
    let chans = [chan(press!(25, 400, 3000, 4000), 16)];
    run::<1, 0, u16>(
        Config::touch(),
        spec,
        &chans,
        6_000,
        Feed::Single(|d, f| d.push(f[0])),
    )
}

fn touch4() -> Outcome {
    let spec = SignalSpec { seed: 5, ..MID };
    const CH0: &[Knot] = &[
        k(0, 18),
        k(1500, 18),
        k(1520, 400),
        k(1900, 400),
        k(1920, 18),
        k(5200, 18),
        k(5220, 380),
        k(5600, 380),
        k(5620, 18),
    ];
    let chans = [
        chan(CH0, 16),
        ChannelSpec {
            phase: 0x4000_0000,
            ..chan(press!(22, 350, 2500, 3300), 20)
        },
        ChannelSpec {
            phase: 0x8000_0000,
            ..chan(press!(15, 500, 4000, 4200), 12)
        },
        ChannelSpec {
            phase: 0xc000_0000,
            ..chan(press!(25, 300, 5000, 6000), 16)
        },
    ];
    // 37 is not a multiple of 4: push_block hands back a partial frame.
    // Default panel rule (strongest pad): the press on channel 0 that
    // starts while channel 3 is on is not a second touch.
    run::<4, 0, u16>(Config::touch(), spec, &chans, 7_000, Feed::Block(37))
}

fn field50() -> Outcome {
    // A slow approach over 3 s, a hold, a retreat over 2 s.
    const KNOTS: &[Knot] = &[k(0, 8), k(3000, 8), k(6000, 300), k(8000, 300), k(10000, 8)];
    let spec = SignalSpec { seed: 6, ..MID };
    let chans = [chan(KNOTS, 16)];
    run::<1, 0, u16>(
        Config::field(),
        spec,
        &chans,
        12_000,
        Feed::Single(|d, f| d.push(f[0])),
    )
}

fn field60x2() -> Outcome {
    // Signed codes (bias 0, ±2048) at 2.5 kHz, 59.7 Hz mains, fixed 60 Hz
    // system; only channel 0 sees the approach.
    let spec = SignalSpec {
        rate_hz: 2_500,
        mains_mhz: 59_700,
        bias: 0,
        lo: -2048,
        hi: 2047,
        spike_ms: 0,
        drift_mhz: 0,
        drift_ms: 0,
        seed: 7,
    };
    const CH0: &[Knot] = &[k(0, 6), k(2000, 6), k(5000, 250), k(7000, 250), k(9000, 6)];
    const CH1: &[Knot] = &[k(0, 10)];
    let chans = [
        chan(CH0, 16),
        ChannelSpec {
            phase: 0x2000_0000,
            ..chan(CH1, 16)
        },
    ];
    run::<2, 0, i16>(
        Config::field()
            .with_mains(MainsMode::Hz60)
            .with_sample_rate(2_500),
        spec,
        &chans,
        10_000,
        Feed::Frame,
    )
}

fn touch8_drift() -> Outcome {
    // 8 channels of a 10-bit ADC at 1 kHz, mains at 50.4 Hz, independent
    // pads; one press per channel, staggered, the last two overlapping.
    let spec = SignalSpec {
        rate_hz: 1_000,
        mains_mhz: 50_400,
        bias: 512,
        lo: 0,
        hi: 1023,
        spike_ms: 0,
        drift_mhz: 0,
        drift_ms: 0,
        seed: 8,
    };
    let chans = [
        chan(press!(6, 120, 1500, 1800), 8),
        chan(press!(5, 110, 2100, 2400), 8),
        chan(press!(7, 130, 2700, 3000), 8),
        chan(press!(6, 100, 3300, 3600), 8),
        chan(press!(5, 125, 3900, 4200), 8),
        chan(press!(8, 140, 4500, 4800), 8),
        chan(press!(6, 115, 5100, 5700), 8),
        chan(press!(7, 120, 5400, 6000), 8),
    ];
    let cfg = Config {
        panel: PanelMode::Independent,
        ..Config::touch()
    };
    run::<8, 0, u16>(
        cfg.with_mains(MainsMode::Hz50)
            .with_sample_rate(1_000)
            .with_adc_bits(10),
        spec,
        &chans,
        7_000,
        Feed::Frame,
    )
}

/// Every case, in golden-file order: the ADC cases, then the edge input's
/// (`edge_cases.rs`).
pub const CASES: &[Case] = &[
    Case {
        name: "touch50",
        expect_on: 3,
        run: touch50,
    },
    Case {
        name: "touch60",
        expect_on: 3,
        run: touch60,
    },
    Case {
        name: "touch_clip",
        expect_on: 2,
        run: touch_clip,
    },
    Case {
        name: "touch_spikes",
        expect_on: 1,
        run: touch_spikes,
    },
    Case {
        name: "touch4",
        expect_on: 4,
        run: touch4,
    },
    Case {
        name: "field50",
        expect_on: 1,
        run: field50,
    },
    Case {
        name: "field60x2",
        expect_on: 1,
        run: field60x2,
    },
    Case {
        name: "touch8_drift",
        expect_on: 8,
        run: touch8_drift,
    },
    Case {
        name: "edges_t16_touch50",
        expect_on: 3,
        run: crate::edge_cases::edges_t16_touch50,
    },
    Case {
        name: "edges_t32_touch60x2",
        expect_on: 2,
        run: crate::edge_cases::edges_t32_touch60x2,
    },
    Case {
        name: "edges_t16_faults",
        expect_on: 2,
        run: crate::edge_cases::edges_t16_faults,
    },
    Case {
        name: "edges_t32_field4",
        expect_on: 1,
        run: crate::edge_cases::edges_t32_field4,
    },
    Case {
        name: "poll_touch50",
        expect_on: 1,
        run: crate::edge_cases::poll_touch50,
    },
    Case {
        name: "poll_level2",
        expect_on: 3,
        run: crate::edge_cases::poll_level2,
    },
];
