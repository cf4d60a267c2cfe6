//! The ADC path: the benchmark's signals (mixed and held) and the cost of
//! `Detector::push_block`, the split pipeline and a `FieldDetector`.

use core::hint::black_box;

use cortex_m_semihosting::hprintln;
use humsense::{Backend, Config, Cycle, Detector, FieldDetector, Frontend, Profile, WindowStage};

use super::clock::{insns, now, ratio, BLOCK, FRAMES, RATE_HZ, TRIPLE, WARM_FRAMES};
use crate::gen::{k, ChannelSpec, Knot, SignalSpec, Source};

/// Which signal a measurement runs on.
#[derive(Clone, Copy, PartialEq, Eq)]
pub(super) enum Case {
    /// Representative: drift, harmonics, noise, spikes, and each pad
    /// touched a quarter of the time.
    Mixed,
    /// The same with a finger held on every pad through the
    /// measurement (the worst case).
    Held,
}

impl Case {
    const fn name(self) -> &'static str {
        match self {
            Case::Mixed => "mixed",
            Case::Held => "held",
        }
    }
}

/// Ambient hum and a touch, peak codes of the fundamental.
pub(super) const AMBIENT_CODES: u32 = 20;
pub(super) const TOUCH_CODES: u32 = 500;
/// Touch periods in a signal (one a second).
pub(super) const TOUCH_PERIODS: usize = 30;
pub(super) const TOUCH_KNOTS: usize = 1 + 4 * TOUCH_PERIODS;

/// Touches of 250 ms once a second, starting `offset_ms` into each
/// second, for `TOUCH_PERIODS` seconds: 20 ms ramps up to
/// `TOUCH_CODES` and back to `AMBIENT_CODES` (a finger pressed and
/// lifted; a quarter of the time touched).
pub(super) const fn touches(offset_ms: u32) -> [Knot; TOUCH_KNOTS] {
    let mut out = [k(0, AMBIENT_CODES); TOUCH_KNOTS];
    let mut p = 0;
    while p < TOUCH_PERIODS {
        let t = p as u32 * 1000 + offset_ms;
        out[1 + 4 * p] = k(t, AMBIENT_CODES);
        out[2 + 4 * p] = k(t + 20, TOUCH_CODES);
        out[3 + 4 * p] = k(t + 230, TOUCH_CODES);
        out[4 + 4 * p] = k(t + 250, AMBIENT_CODES);
        p += 1;
    }
    out
}

/// Pad c of N is touched at offset `TOUCH[c · 8 / N]`: one pad, or
/// four pads in turn, or eight pads two at a time. The measured second
/// (3 to 4 s) holds one touch of every pad, 100 ms in for pad 0.
pub(super) static TOUCH: [[Knot; TOUCH_KNOTS]; 8] = [
    touches(100),
    touches(225),
    touches(350),
    touches(475),
    touches(600),
    touches(725),
    touches(850),
    touches(975),
];
/// A finger pressed at 2 s and held.
pub(super) const HELD: &[Knot] = &[
    k(0, AMBIENT_CODES),
    k(2000, AMBIENT_CODES),
    k(2020, TOUCH_CODES),
];

/// The benchmark's signal: 2 kHz, 12-bit codes about mid-scale; mains
/// 50 Hz drifting ±0.1 Hz (a triangle of 8 s, starting at 49.9 Hz);
/// third and fifth harmonics of 3.1 % and 2.0 % of the fundamental;
/// noise of 3 codes RMS; a full-scale spike of one to three samples on
/// every channel every 250 ms on average; per pad 20 codes of ambient
/// hum, touches to 500 codes as `case` says, and its own phase.
pub(super) fn source<const N: usize>(case: Case) -> Source<N> {
    let spec = SignalSpec {
        rate_hz: RATE_HZ,
        mains_mhz: 50_000,
        bias: 2048,
        lo: 0,
        hi: 4095,
        spike_ms: 250,
        drift_mhz: 100,
        drift_ms: 8_000,
        seed: 0x5eed,
    };
    let chans: [ChannelSpec; N] = core::array::from_fn(|c| ChannelSpec {
        phase: (c as u32) << 29,
        knots: match case {
            Case::Mixed => TOUCH.get(c * 8 / N).map_or(HELD, |t| &t[..]),
            Case::Held => HELD,
        },
        third_q8: 8,
        fifth_q8: 5,
        noise_x16: 48,
    });
    Source::new(spec, &chans)
}

#[inline(always)]
pub(super) fn frame<const N: usize>(src: &mut Source<N>) -> [u16; N] {
    src.frame().map(|x| x as u16)
}

// Measured regions are calls of `#[inline(never)]` functions between two
// SysTick reads; each figure is converted and passed through `black_box`
// before the next read, so no bookkeeping lands inside a region.

#[inline(never)]
pub(super) fn block_with<const N: usize>(
    det: &mut Detector<N>,
    src: &mut Source<N>,
    events: &mut u32,
) {
    for _ in 0..BLOCK {
        let f = frame(src);
        det.push_frame(&f, |_| *events += 1);
    }
}

#[inline(never)]
pub(super) fn block_without<const N: usize>(src: &mut Source<N>) {
    for _ in 0..BLOCK {
        let f = frame(src);
        black_box(&f);
    }
}

/// Instructions of `FRAMES` frames through the detector, generator included.
pub(super) fn with_detector<const N: usize>(
    det: &mut Detector<N>,
    src: &mut Source<N>,
    events: &mut u32,
) -> u64 {
    let mut total = 0;
    for _ in 0..FRAMES / BLOCK {
        let t0 = now();
        block_with(det, src, events);
        let t1 = now();
        total = black_box(total + insns(t0, t1));
    }
    total
}

/// Instructions of the same loop without the detector.
pub(super) fn without_detector<const N: usize>(src: &mut Source<N>) -> u64 {
    let mut total = 0;
    for _ in 0..FRAMES / BLOCK {
        let t0 = now();
        block_without(src);
        let t1 = now();
        total = black_box(total + insns(t0, t1));
    }
    total
}

#[inline(never)]
pub(super) fn block_call<const N: usize, W: WindowStage>(
    det: &mut Detector<N, 0, W>,
    buf: &[u16],
    events: &mut u32,
) {
    det.push_block(buf, |_| *events += 1);
}

/// Instructions of `Detector::push_block` over `FRAMES` frames, in
/// blocks of `BLOCK` frames generated beforehand (not measured).
#[inline(never)]
pub(super) fn push_block_cost<const N: usize, W: WindowStage>(
    det: &mut Detector<N, 0, W>,
    src: &mut Source<N>,
    events: &mut u32,
) -> u64 {
    let mut buf = [0u16; BLOCK as usize * 8];
    let len = BLOCK as usize * N;
    let mut total = 0;
    for _ in 0..FRAMES / BLOCK {
        for chunk in buf[..len].chunks_exact_mut(N) {
            chunk.copy_from_slice(&frame(src));
        }
        let b = black_box(&buf[..len]);
        let t0 = now();
        block_call(det, b, events);
        let t1 = now();
        total = black_box(total + insns(t0, t1));
    }
    total
}

#[inline(never)]
pub(super) fn front_block_call<const N: usize>(
    front: &mut Frontend<N, 0>,
    buf: &[u16],
    cycles: &mut u32,
) {
    front.push_block(buf, |c| {
        black_box(c);
        *cycles += 1;
    });
}

#[inline(never)]
/// Instructions of `Frontend::push_block` alone over `FRAMES` frames in
/// blocks of `BLOCK` frames, and the cycles it completed.
pub(super) fn front_block_cost<const N: usize>(
    front: &mut Frontend<N, 0>,
    src: &mut Source<N>,
) -> (u64, u32) {
    let mut buf = [0u16; BLOCK as usize * 8];
    let len = BLOCK as usize * N;
    let mut total = 0;
    let mut cycles = 0;
    for _ in 0..FRAMES / BLOCK {
        for chunk in buf[..len].chunks_exact_mut(N) {
            chunk.copy_from_slice(&frame(src));
        }
        let b = black_box(&buf[..len]);
        let t0 = now();
        front_block_call(front, b, &mut cycles);
        let t1 = now();
        total = black_box(total + insns(t0, t1));
    }
    (total, cycles)
}

#[inline(never)]
pub(super) fn front_call<const N: usize>(
    front: &mut Frontend<N, 0>,
    f: &[u16; N],
) -> Option<Cycle<N, 0>> {
    front.push_frame(f)
}

#[inline(never)]
pub(super) fn back_call<const N: usize>(back: &mut Backend<N, 0>, c: &Cycle<N, 0>) {
    back.process(c, |e| {
        black_box(e);
    });
}

/// The call overhead that `front_call` and `back_call` add: the same
/// signature, doing nothing.
#[inline(never)]
pub(super) fn empty_call<const N: usize>(
    front: &mut Frontend<N, 0>,
    f: &[u16; N],
) -> Option<Cycle<N, 0>> {
    black_box((front, f));
    None
}

/// Per-call costs of the split pipeline over `FRAMES` frames, call
/// overhead subtracted: [frames that end no cycle, their instructions,
/// frames that end one, their instructions, `Backend::process`
/// instructions].
pub(super) fn stages<const N: usize>(
    front: &mut Frontend<N, 0>,
    back: &mut Backend<N, 0>,
    src: &mut Source<N>,
) -> [u64; 5] {
    let f = black_box(frame(src));
    let t0 = now();
    let _ = empty_call(front, &f);
    let t1 = now();
    let overhead = black_box(insns(t0, t1));
    let mut r = [0u64; 5];
    for _ in 0..FRAMES {
        black_box(&r);
        let f = black_box(frame(src));
        let t0 = now();
        let c = front_call(front, &f);
        let t1 = now();
        let cost = black_box(insns(t0, t1).saturating_sub(overhead));
        match c {
            None => {
                r[0] += 1;
                r[1] += cost;
            }
            Some(cycle) => {
                r[2] += 1;
                r[3] += cost;
                let cycle = black_box(cycle);
                let t2 = now();
                back_call(back, &cycle);
                let t3 = now();
                r[4] += black_box(insns(t2, t3).saturating_sub(overhead));
            }
        }
    }
    r
}

/// The figure handed in by `.ci/cortexm` for `n` channels, if any.
pub(super) fn flash_for(n: usize) -> Option<u32> {
    let s = option_env!("CORTEXM_FLASH")?;
    for item in s.split(',') {
        let mut kv = item.splitn(2, '=');
        let (Some(key), Some(val)) = (kv.next(), kv.next()) else {
            continue;
        };
        if key.trim().parse::<usize>().ok() == Some(n) {
            return val.trim().parse().ok();
        }
    }
    None
}

pub(super) fn bench<const N: usize>(profile: Profile, case: Case) -> Result<(), ()> {
    let (cfg, name) = match profile {
        Profile::Touch => (Config::touch(), "touch"),
        Profile::Field => (Config::field(), "field"),
    };
    let (Ok(mut det), Ok(mut front), Ok(mut back)) = (
        Detector::<N>::new(cfg),
        Frontend::<N, 0>::new(&cfg),
        Backend::<N, 0>::new(&cfg),
    ) else {
        hprintln!("cortexm-error: configuration rejected");
        return Err(());
    };
    let mut src = source::<N>(case);
    let mut events = 0u32;
    for _ in 0..WARM_FRAMES {
        let f = frame(&mut src);
        det.push_frame(&f, |_| events += 1);
        if let Some(c) = front.push_frame(&f) {
            back.process(&c, |_| {});
        }
    }
    let start = src;
    let det_start = det.clone();
    let with = with_detector(&mut det, &mut src, &mut events);
    // Same start, same input: the count must repeat exactly.
    let (mut det2, mut src2) = (det_start.clone(), start);
    let again = with_detector(&mut det2, &mut src2, &mut events);
    let without = without_detector(&mut start.clone());
    let st = stages(&mut front, &mut back, &mut start.clone());
    let mut front_b = det_start.frontend().clone();
    let (fb, fb_cycles) = front_block_cost(&mut front_b, &mut start.clone());
    let (mut det3, mut src3) = (det_start.clone(), start);
    let block = push_block_cost(&mut det3, &mut src3, &mut events);
    let (mut det4, mut src4) = (det_start, start);
    let block_again = push_block_cost(&mut det4, &mut src4, &mut events);
    if with != again || block != block_again {
        hprintln!(
            "cortexm-error: repeated runs counted {} then {}, {} then {} instructions (no -icount?)",
            with,
            again,
            block,
            block_again
        );
        return Err(());
    }
    let samples = u64::from(FRAMES) * N as u64;
    let (ip, ipf) = ratio(block, samples);
    let ram = core::mem::size_of::<Detector<N>>();
    match flash_for(N) {
        Some(flash) => hprintln!(
            "cortexm: target={} profile={} channels={} case={} insn_per_sample={}.{:02} ram_bytes={} flash_bytes={}",
            TRIPLE, name, N, case.name(), ip, ipf, ram, flash
        ),
        None => hprintln!(
            "cortexm: target={} profile={} channels={} case={} insn_per_sample={}.{:02} ram_bytes={} flash_bytes=na",
            TRIPLE, name, N, case.name(), ip, ipf, ram
        ),
    }
    // Per frame that ends no cycle, per channel; the extra cost of a
    // frame that ends one; Backend::process per cycle.
    let plain = st[1] * 100 / st[0].max(1);
    let ending = st[3] * 100 / st[2].max(1);
    let (s, sf) = ratio(st[1], st[0] * N as u64);
    let extra = ending.saturating_sub(plain);
    let (b, bf) = ratio(st[4], st[2]);
    let (spc, spcf) = ratio(u64::from(FRAMES), st[2]);
    let (pb, pbf) = ratio(with.saturating_sub(without), samples);
    // The block path's per-sample loop: Frontend::push_block minus its
    // cycle ends (at the frame path's cost per cycle end).
    let fb_loop = fb.saturating_sub(u64::from(fb_cycles) * (ending / 100));
    let (bs, bsf) = ratio(fb_loop, samples);
    hprintln!(
        "cortexm-stage: target={} profile={} channels={} case={} sample_path_insn_per_sample={}.{:02} frontend_cycle_end_insn={}.{:02} backend_insn_per_cycle={}.{:02} samples_per_cycle={}.{:02} push_frame_insn_per_sample={}.{:02} block_sample_path_insn_per_sample={}.{:02}",
        TRIPLE, name, N, case.name(), s, sf, extra / 100, extra % 100, b, bf, spc, spcf, pb, pbf, bs, bsf
    );
    Ok(())
}

/// The field profile in a `FieldDetector` (its 0.5 s sliding window),
/// one channel, through `push_block` as `bench` measures it:
/// `cortexm: target=… input=adc-window profile=field channels=1
/// insn_per_sample=… ram_bytes=…` (no budget of its own: the budgets are
/// the plain detector's; this says what the window adds).
pub(super) fn window_bench(case: Case) -> Result<(), ()> {
    let Ok(mut det) = FieldDetector::<1, 0>::new(Config::field()) else {
        hprintln!("cortexm-error: configuration rejected");
        return Err(());
    };
    let mut src = source::<1>(case);
    let mut events = 0u32;
    for _ in 0..WARM_FRAMES {
        let f = frame(&mut src);
        det.push_frame(&f, |_| events += 1);
    }
    let (start, det_start) = (src, det.clone());
    let block = push_block_cost(&mut det, &mut src, &mut events);
    let (mut det2, mut src2) = (det_start, start);
    if block != push_block_cost(&mut det2, &mut src2, &mut events) {
        hprintln!("cortexm-error: repeated window runs differ (no -icount?)");
        return Err(());
    }
    let (ip, ipf) = ratio(block, u64::from(FRAMES));
    hprintln!(
        "cortexm: target={} input=adc-window profile=field channels=1 case={} insn_per_sample={}.{:02} ram_bytes={} flash_bytes=na",
        TRIPLE,
        case.name(),
        ip,
        ipf,
        core::mem::size_of::<FieldDetector<1, 0>>()
    );
    Ok(())
}
