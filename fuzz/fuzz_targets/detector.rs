//! The core detector under arbitrary configurations and sample streams.
//!
//! The input picks a detector shape (`Detector<1,0>`, `<4,0>` or `<2,2>`,
//! or with window memory `FieldDetector<1,0>` or `<2,2>`),
//! every public field of `Config` (mostly inside its documented range,
//! sometimes any value: the constructor must refuse what is invalid with
//! an error, never panic), then a list of operations: raw codes from the
//! input, or synthetic hum (a sine at a chosen amplitude and a frequency
//! near 50 or 60 Hz, so thresholds, debouncing, levels and faults are
//! reached), fed through `push`, `push_frame` or `push_block` as `u16` or
//! `i16`. After every call the invariants in `Checker` must hold, and
//! every event goes through an `EventQueue<4>` whose accounting is checked
//! against a model.
#![no_main]

use std::collections::VecDeque;

use humsense::{
    AdcSample, Config, Detector, Event, EventKind, EventQueue, MainsMode, NoWindow, PanelMode,
    Profile, SlidingWindow, WindowStage, FIELD_WINDOW_WORDS,
};
use libfuzzer_sys::arbitrary::{Result, Unstructured};
use libfuzzer_sys::fuzz_target;

/// Samples per channel fed at most per input, to keep executions fast.
const MAX_SAMPLES: usize = 20_000;

/// One time in `WILD`, a field takes any value of its type instead of one
/// from its range: about half the configs are accepted, and every rule
/// of the validation is exercised.
const WILD: u32 = 48;

/// An integer field: mostly within `lo..=hi` (within the documented range,
/// often narrower, towards values where events happen), sometimes any.
fn int<T>(u: &mut Unstructured, lo: T, hi: T) -> Result<T>
where
    T: libfuzzer_sys::arbitrary::unstructured::Int,
    T: for<'a> libfuzzer_sys::arbitrary::Arbitrary<'a>,
{
    if u.ratio(1, WILD)? {
        u.arbitrary()
    } else {
        u.int_in_range(lo..=hi)
    }
}

/// An `f32` field: mostly within `lo..=hi` (often exactly a limit),
/// sometimes any bits (NaN, infinities, negatives, subnormals, huge).
fn float(u: &mut Unstructured, lo: f32, hi: f32) -> Result<f32> {
    if u.ratio(1, WILD)? {
        return Ok(f32::from_bits(u.arbitrary()?));
    }
    Ok(match u.int_in_range(0u8..=7)? {
        0 => lo,
        1 => hi,
        _ => {
            let t = f32::from(u.arbitrary::<u16>()?) / f32::from(u16::MAX);
            lo + (hi - lo) * t
        }
    })
}

/// Every public field of `Config` (the struct literal below names them
/// all, so a new field fails to compile here).
fn config(u: &mut Unstructured) -> Result<Config> {
    let profile = if u.arbitrary()? {
        Profile::Field
    } else {
        Profile::Touch
    };
    let on_noise = float(u, 0.5, 40.0)?;
    let on_ratio = float(u, 1.01, 20.0)?;
    let level_step_db = float(u, 0.5, 20.0)?;
    let baseline_rise_shift = int(u, 1u8, 16)?;
    Ok(Config {
        sample_rate_hz: int(u, 400u32, 50_000)?,
        adc_bits: int(u, 8u8, 16)?,
        mains: *u.choose(&[MainsMode::Auto, MainsMode::Hz50, MainsMode::Hz60])?,
        profile,
        spike_max_len: int(u, 0u8, 8)?,
        spike_floor_codes: int(u, 0u16, 300)?,
        track_min_codes: float(u, 0.0, 100.0)?,
        avg_shift: int(u, 0u8, 4)?,
        window_ms: int(u, 0u16, 700)?,
        false_alarms_per_hour: float(u, 0.01, 3_600.0)?,
        startup_cycles: int(u, 1u16, 60)?,
        baseline_rise_shift,
        baseline_fall_shift: int(u, 1u8, baseline_rise_shift.clamp(1, 16))?,
        noise_shift: int(u, 1u8, 16)?,
        on_noise,
        off_noise: float(u, 0.0, on_noise * 0.99)?,
        on_ratio,
        off_ratio: float(u, 1.0, 1.0 + (on_ratio - 1.0) * 0.99)?,
        floor_codes: float(u, 0.0, 200.0)?,
        debounce_on: int(u, 1u8, 12)?,
        debounce_off: int(u, 1u8, 12)?,
        min_active_cycles: int(u, 0u16, 40)?,
        max_active_cycles: int(u, 0u16, 400)?,
        levels: int(u, 1u8, 16)?,
        level_step_db,
        level_hysteresis_db: float(u, 0.0, level_step_db * 0.99)?,
        panel: if u.arbitrary()? {
            PanelMode::Independent
        } else {
            PanelMode::StrongestPad
        },
        ambient_ratio: float(u, 1.05, 100.0)?,
        fault_saturation_cycles: int(u, 1u16, 60)?,
        fault_stuck_cycles: int(u, 1u16, 60)?,
        nohum_codes: float(u, 0.0, 50.0)?,
        nohum_cycles: int(u, 1u16, 200)?,
        mains_lost_cycles: int(u, 1u16, 300)?,
    })
}

/// What has been seen of one channel, from its events alone.
#[derive(Default, Clone, Copy)]
struct ChannelModel {
    on: bool,
    level: u8,
    last_sample: u64,
    /// Faults reported and not yet cleared, one bit each.
    faults: u8,
}

/// The invariants, checked against every event and after every call.
struct Checker<const N: usize> {
    cfg: Config,
    ch: [ChannelModel; N],
    queue: EventQueue<4>,
    /// Events the queue accepted and not yet popped, in order.
    queued: VecDeque<Event>,
    /// Pushes the queue refused.
    refused: u64,
    /// Sum of the overflow counts popped.
    reported: u64,
    /// Refused pushes not yet covered by a popped overflow report.
    pending_first: VecDeque<u64>,
    /// Events seen by kind: on, off, level, fault, clear, overflow.
    seen: [u64; 6],
}

impl<const N: usize> Checker<N> {
    fn new(cfg: Config) -> Self {
        Self {
            cfg,
            ch: [ChannelModel::default(); N],
            queue: EventQueue::new(),
            queued: VecDeque::new(),
            refused: 0,
            reported: 0,
            pending_first: VecDeque::new(),
            seen: [0; 6],
        }
    }

    fn event(&mut self, e: Event, samples_seen: u64) {
        let ch = usize::from(e.channel);
        assert!(ch < N, "channel {ch} of {N}: {e:?}");
        let m = &mut self.ch[ch];
        assert!(
            e.sample >= m.last_sample,
            "sample index went back on channel {ch}: {} after {}",
            e.sample,
            m.last_sample
        );
        assert!(
            e.sample < samples_seen,
            "event after the samples seen: {e:?}"
        );
        m.last_sample = e.sample;
        let touch = self.cfg.profile == Profile::Touch;
        match e.kind {
            EventKind::TouchOn | EventKind::FieldOn => {
                self.seen[0] += 1;
                assert_eq!(touch, e.kind == EventKind::TouchOn, "wrong profile: {e:?}");
                assert!(!m.on, "on twice in a row: {e:?}");
                m.on = true;
                m.level = 1;
            }
            EventKind::TouchOff | EventKind::FieldOff => {
                self.seen[1] += 1;
                assert_eq!(touch, e.kind == EventKind::TouchOff, "wrong profile: {e:?}");
                assert!(m.on, "off while off: {e:?}");
                m.on = false;
                m.level = 0;
            }
            EventKind::Level(l) => {
                self.seen[2] += 1;
                assert!(!touch, "level in the touch profile: {e:?}");
                assert!(m.on, "level while off: {e:?}");
                assert!(
                    l >= 1 && l <= self.cfg.levels,
                    "level {l} of {}",
                    self.cfg.levels
                );
                assert_eq!(
                    u32::from(l.abs_diff(m.level)),
                    1,
                    "level jumped from {}: {e:?}",
                    m.level
                );
                m.level = l;
            }
            EventKind::Fault(f) => {
                self.seen[3] += 1;
                assert!(m.faults & f.bit() == 0, "fault reported twice: {e:?}");
                m.faults |= f.bit();
            }
            EventKind::FaultClear(f) => {
                self.seen[4] += 1;
                assert!(m.faults & f.bit() != 0, "clear without fault: {e:?}");
                m.faults &= !f.bit();
            }
            EventKind::Overflow(_) => panic!("the detector reported a queue overflow: {e:?}"),
            _ => {}
        }
        if self.queue.push(e) {
            self.queued.push_back(e);
        } else {
            self.refused += 1;
            self.pending_first.push_back(e.sample);
        }
        assert_eq!(self.queue.total_lost(), self.refused);
    }

    fn pop(&mut self) {
        let Some(e) = self.queue.pop() else {
            assert!(self.queued.is_empty(), "queue empty with events due");
            return;
        };
        if let EventKind::Overflow(n) = e.kind {
            assert_eq!(e.channel, Event::ALL_CHANNELS);
            assert!(n >= 1 && u64::from(n) <= self.pending_first.len() as u64);
            // The report stands where the first lost event was.
            assert_eq!(Some(&e.sample), self.pending_first.front());
            for _ in 0..n {
                self.pending_first.pop_front();
            }
            self.reported += u64::from(n);
            self.seen[5] += 1;
        } else {
            assert_eq!(self.queued.pop_front(), Some(e), "queue out of order");
        }
    }

    fn after_call<const H: usize, W: WindowStage>(&self, det: &Detector<N, H, W>) {
        for (c, m) in self.ch.iter().enumerate() {
            let s = det.snapshot(c).expect("a snapshot for every channel");
            assert_eq!(s.active(), m.on, "state without an event on channel {c}");
            assert_eq!(s.level, m.level, "level without an event on channel {c}");
            assert!(s.level <= self.cfg.levels.max(1));
            assert_eq!(s.samples, det.samples_seen());
        }
        assert!(det.snapshot(N).is_none());
    }

    fn drain(&mut self) {
        for _ in 0..100 {
            self.pop();
        }
        assert!(self.queue.is_empty());
        assert!(self.queued.is_empty());
        assert!(self.pending_first.is_empty(), "lost events never reported");
        assert_eq!(self.reported, self.queue.total_lost());
        // What the input reached, when asked (README: "What the targets
        // reach").
        if std::env::var_os("HUMSENSE_FUZZ_STATS").is_some() {
            let [on, off, level, fault, clear, overflow] = self.seen;
            eprintln!(
                "fuzz-stats: channels={N} on={on} off={off} level={level} fault={fault} \
                 clear={clear} overflow={overflow}"
            );
        }
    }
}

/// Synthetic hum: a sine of `amp` codes around mid-scale at a frequency
/// near 50 or 60 Hz with noise from the input, in three parts: `pre`
/// cycles of ambient, `press` cycles with one channel (`touched`, or none)
/// multiplied by a gain that ramps to `gain` (steps for the field
/// profile's levels), `post` cycles of ambient again. One operation
/// reaches learning, on, levels and off.
fn hum(
    u: &mut Unstructured,
    cfg: &Config,
    channels: usize,
    phase: &mut f32,
    out: &mut Vec<u16>,
) -> Result<()> {
    let hz = *u.choose(&[50.0f32, 60.0, 49.5, 61.0, 47.0, 64.0])?;
    let amp = f32::from(u.int_in_range(0u16..=2_000)?);
    let gain = f32::from(u.int_in_range(1u8..=40)?);
    let ramp = u.arbitrary::<bool>()?;
    let touched = u.int_in_range(0..=channels)?; // `channels`: none
    let noise = u.int_in_range(0u16..=16)?;
    let pre = u32::from(u.int_in_range(0u8..=100)?);
    let press = u32::from(u.int_in_range(0u8..=200)?);
    let post = u32::from(u.int_in_range(0u8..=100)?);
    let rate = cfg.sample_rate_hz.clamp(400, 50_000) as f32;
    let per_cycle = rate / hz;
    let frames = (((pre + press + post) as f32 * per_cycle) as usize).min(MAX_SAMPLES);
    let mid = 2048.0f32;
    let step = core::f32::consts::TAU * hz / rate;
    let mut s = u32::from(u.arbitrary::<u16>()?) | 1;
    for k in 0..frames {
        let cycle = k as f32 / per_cycle;
        let g = if cycle < pre as f32 || cycle >= (pre + press) as f32 {
            1.0
        } else if ramp {
            1.0 + (gain - 1.0) * ((cycle - pre as f32) / press.max(1) as f32)
        } else {
            gain
        };
        let v = phase.sin();
        *phase = (*phase + step) % core::f32::consts::TAU;
        for c in 0..channels {
            s ^= s << 13;
            s ^= s >> 17;
            s ^= s << 5;
            let g = if c == touched { g } else { 1.0 };
            let n = if noise == 0 {
                0
            } else {
                (s % (2 * u32::from(noise) + 1)) as i32 - i32::from(noise)
            };
            let x = mid + amp * g * v + n as f32;
            out.push(x.clamp(0.0, 65_535.0) as u16);
        }
    }
    Ok(())
}

/// `push`, the one-channel entry point, where the shape has it.
trait PushOne<S> {
    /// `Some(result of push)` for one-channel detectors, `None` otherwise.
    fn push_one(&mut self, x: S) -> Option<Option<Event>>;
}

impl<S: AdcSample, W: WindowStage> PushOne<S> for Detector<1, 0, W> {
    fn push_one(&mut self, x: S) -> Option<Option<Event>> {
        Some(self.push(x))
    }
}

impl<S: AdcSample, W: WindowStage> PushOne<S> for Detector<4, 0, W> {
    fn push_one(&mut self, _: S) -> Option<Option<Event>> {
        None
    }
}

impl<S: AdcSample, W: WindowStage> PushOne<S> for Detector<2, 2, W> {
    fn push_one(&mut self, _: S) -> Option<Option<Event>> {
        None
    }
}

fn feed<const N: usize, const H: usize, W: WindowStage, S: AdcSample>(
    det: &mut Detector<N, H, W>,
    chk: &mut Checker<N>,
    xs: &[S],
    how: u8,
    u: &mut Unstructured,
) -> Result<()>
where
    Detector<N, H, W>: PushOne<S>,
{
    match how % 3 {
        0 if N == 1 => {
            for &x in xs {
                let e = det.push_one(x).expect("one channel");
                let seen = det.samples_seen();
                if let Some(e) = e {
                    chk.event(e, seen);
                }
                chk.after_call(det);
            }
        }
        0 | 1 => {
            for f in xs.chunks_exact(N) {
                let frame: [S; N] = core::array::from_fn(|i| f[i]);
                let mut events = Vec::new();
                det.push_frame(&frame, |e| events.push(e));
                // At most one event a channel a call (a frame completes at
                // most one cycle), so `push` loses none.
                for c in 0..N {
                    let k = events
                        .iter()
                        .filter(|e| usize::from(e.channel) == c)
                        .count();
                    assert!(k <= 1, "{k} events on channel {c} from one frame");
                }
                let seen = det.samples_seen();
                for e in events {
                    chk.event(e, seen);
                }
                chk.after_call(det);
            }
        }
        _ => {
            // Blocks of arbitrary lengths; a partial frame left over is
            // handed over again at the front of the next block.
            let mut rest = xs;
            loop {
                let len = if rest.len() <= N {
                    rest.len()
                } else {
                    u.int_in_range(N..=rest.len().min(4096))?
                };
                let block = &rest[..len];
                let before = det.samples_seen();
                let mut events = Vec::new();
                let left = det.push_block(block, |e| events.push(e));
                assert_eq!(left, len % N, "remainder of a block of {len}");
                assert_eq!(det.samples_seen() - before, (len / N) as u64);
                let seen = det.samples_seen();
                for e in events {
                    chk.event(e, seen);
                }
                chk.after_call(det);
                if len == rest.len() {
                    break;
                }
                rest = &rest[len - left..];
            }
        }
    }
    Ok(())
}

fn run<const N: usize, const H: usize, W: WindowStage>(
    u: &mut Unstructured,
    cfg: Config,
) -> Result<()>
where
    Detector<N, H, W>: PushOne<u16> + PushOne<i16>,
{
    let Ok(mut det) = Detector::<N, H, W>::new(cfg) else {
        return Ok(());
    };
    let mut chk = Checker::<N>::new(cfg);
    chk.after_call(&det);
    let mut phase = 0.0f32;
    let mut total = 0usize;
    while !u.is_empty() && total < MAX_SAMPLES * N {
        let op = u.arbitrary::<u8>()?;
        let mut codes = Vec::new();
        if op & 0x80 != 0 {
            hum(u, &cfg, N, &mut phase, &mut codes)?;
        } else {
            let n = u.int_in_range(0..=u.len() / 2)?;
            for _ in 0..n {
                codes.push(u.arbitrary::<u16>()?);
            }
        }
        codes.truncate(MAX_SAMPLES * N - total);
        total += codes.len();
        let how = (op >> 1) % 3;
        if op & 1 == 0 {
            feed(&mut det, &mut chk, &codes, how, u)?;
        } else {
            let signed: Vec<i16> = codes
                .iter()
                .map(|&c| c.wrapping_sub(32_768) as i16)
                .collect();
            feed(&mut det, &mut chk, &signed, how, u)?;
        }
        // The main loop takes a few events now and then.
        for _ in 0..u.int_in_range(0u8..=3)? {
            chk.pop();
        }
    }
    chk.drain();
    Ok(())
}

fn one(data: &[u8]) -> Result<()> {
    let mut u = Unstructured::new(data);
    let shape = u.int_in_range(0u8..=4)?;
    // Half the inputs: every field from the input. The other half: a
    // profile's defaults at a chosen rate and mains mode, where touches,
    // levels and releases are easy to reach with the synthetic hum.
    let cfg = match u.int_in_range(0u8..=3)? {
        0 | 1 => config(&mut u)?,
        k => {
            let base = if k == 2 {
                Config::touch()
            } else {
                Config::field()
            };
            base.with_sample_rate(*u.choose(&[1_000, 2_000, 3_333, 8_000])?)
                .with_mains(*u.choose(&[MainsMode::Auto, MainsMode::Hz50, MainsMode::Hz60])?)
        }
    };
    match shape {
        0 => run::<1, 0, NoWindow>(&mut u, cfg),
        1 => run::<4, 0, NoWindow>(&mut u, cfg),
        2 => run::<2, 2, NoWindow>(&mut u, cfg),
        3 => run::<1, 0, SlidingWindow<1, FIELD_WINDOW_WORDS>>(&mut u, cfg),
        _ => run::<2, 2, SlidingWindow<2, FIELD_WINDOW_WORDS>>(&mut u, cfg),
    }
}

fuzz_target!(|data: &[u8]| {
    let _ = one(data);
});
