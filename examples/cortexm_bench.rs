//! Cost of the detector on Cortex-M, measured under QEMU.
//!
//! ```text
//! cargo run --profile firmware --example cortexm_bench --target thumbv6m-none-eabi
//! cargo run --profile firmware --example cortexm_bench --target thumbv7em-none-eabihf
//! ```
//!
//! runs through the QEMU runners of `.cargo/config.toml` (`microbit`,
//! Cortex-M0; `mps2-an386`, Cortex-M4F) and prints one line per case:
//!
//! ```text
//! cortexm: target=<triple> profile=<touch|field> channels=<n> case=<mixed|held> insn_per_sample=<float> ram_bytes=<n> flash_bytes=<n>
//! ```
//!
//! for 1, 4 and 8 channels of 2 kHz samples, touch and field profiles, on
//! two signals (their numbers are in `target::source`): `case=mixed`, the
//! representative one (mains 50 Hz drifting ±0.1 Hz, third and fifth
//! harmonics, 3 codes of noise, a full-scale spike every 250 ms on average,
//! 20 codes of ambient hum, and each pad touched to 500 codes a quarter of
//! the time), then `case=held`, the same with a finger held on every pad
//! (the worst case). **QEMU counts instructions, not cycles**: with `-icount
//! shift=10` every instruction advances virtual time by 1024 ns, so SysTick
//! (core clock: 16 MHz on `microbit`, 25 MHz on `mps2-an386`) read before
//! and after a region gives its exact instruction count,
//! `round(ticks · period_ns / 2^10)` (24-bit counter: each region is kept
//! far below its wrap). Two checks can fail the run: 64 more SysTick loads
//! (timed inside one leaf function) must come out as exactly 64 more
//! instructions, and the detector loop run twice from the same state must
//! count the same. `SHIFT` below must match the runners' `-icount shift=`.
//!
//! - `insn_per_sample`: instructions of `Detector::push_block`, the call a
//!   firmware makes for each DMA buffer of a scanning ADC, over 2000 frames
//!   (1 s, after 3 s of warm-up: past start-up and mains lock) in blocks of
//!   200 interleaved frames, divided by samples × channels. The blocks are
//!   generated before each timed call, so the figure holds no generator
//!   cost. Includes the per-cycle work, amortised. (The same input frame
//!   by frame through `Detector::push_frame`, in a loop that generates
//!   each frame, minus that loop without the detector, is
//!   `push_frame_insn_per_sample` below.)
//! - `ram_bytes`: `size_of::<Detector<N>>()` (state only; no stack).
//! - `flash_bytes`: text + data of a minimal firmware (ADC read loop →
//!   `Detector<N>` → events) minus the same firmware without the detector,
//!   built at the `cortexm` profile (opt-level "s"). The binary cannot
//!   measure its own sections: `.ci/cortexm` builds those probes (this file
//!   with `CORTEXM_FLASH_PROBE=0|1|4|8`) and passes the figures in at build
//!   time as `CORTEXM_FLASH="1=…,4=…,8=…"`; without it the field reads `na`.
//!
//! For the edge input (`humsense::edge`, a comparator or GPIO pin timed by
//! a 16-bit timer at 1 MHz), one line per case:
//!
//! ```text
//! cortexm: target=<triple> input=edges profile=<touch|field> channels=<n> insn_per_edge=<f> insn_per_cycle=<f> ram_bytes=<n> flash_bytes=<n|na>
//! ```
//!
//! over 4 s of a representative train (after 3 s of warm-up): per pin
//! ambient pulses, a burst of chatter (100 ms of five pulses a cycle), one
//! edge in 37 pulses lost, and on pin 0 a touch of 0.5 s every 2 s.
//! Every `EdgeDetector::push_edge` call is timed on its own (the call
//! overhead, measured on an empty function of the same signature,
//! subtracted); a copy of the front end, fed outside the timed region,
//! tells which calls ended a window.
//!
//! - `insn_per_edge`: the interrupt-side call, the mean of the calls that
//!   ended no window (the common path only queues the edge; the calls that
//!   take a full queue, an edge to the same level or chatter are in the
//!   mean).
//! - `insn_per_cycle`: everything else, per window and channel: all calls
//!   less `insn_per_edge` each, divided by windows × channels.
//! - `ram_bytes`: `size_of::<EdgeDetector<N>>()` (front end and back end).
//! - `flash_bytes`: one channel only (probes `CORTEXM_FLASH_PROBE=201`,
//!   a firmware whose loop hands SysTick counts to `push_edge` and calls
//!   `advance`, minus 200 without the detector), `na` for more channels.
//!
//! `cortexm-stage: … input=edges …` adds the edge calls, the least and most
//! instructions of one that ended no window, and the calls that ended
//! windows with their mean and most.
//!
//! Further lines are for diagnosis: `cortexm-calib:`, and `cortexm-stage:`
//! with per-call counts from the split pipeline (call overhead subtracted):
//! `sample_path_insn_per_sample` (`Frontend::push_frame` on frames that end
//! no cycle, per channel), `frontend_cycle_end_insn` (the extra on the frame
//! that ends a cycle: normalisation, gate limits, mains tracker),
//! `backend_insn_per_cycle` (`Backend::process`, all channels),
//! `samples_per_cycle`, and `push_frame_insn_per_sample` (the same input
//! through `Detector::push_frame`, one frame per call, generator cost
//! subtracted) and `block_sample_path_insn_per_sample` (`Frontend::push_block`
//! alone, minus its cycle ends at the cost of a frame that ends a cycle,
//! per sample: the block path's per-sample loop).
//!
//! ## Where the instructions go (touch, 1 channel, 2 kHz, 50 Hz, 40 samples a cycle)
//!
//! Measured with this benchmark on the mixed signal (`cortexm-stage:`
//! lines; per-cycle figures divided by 40 to give their share of a sample):
//!
//! | stage | thumbv7em (M4F) | thumbv6m (M0) |
//! |---|---|---|
//! | block loop: pairs, gate, sin/cos, two MACs, sum, phase, run setup (`block_sample_path`) | 11.6 | 27.4 |
//! | front-end cycle end: scaling, DC, gate limit, mains tracker (on the frame path) | 236 /cycle = 5.9 | 476 /cycle = 11.9 |
//! | `Backend::process`: amplitude, noise, faults, baseline, decision | 247 /cycle = 6.2 | 525 /cycle = 13.1 |
//! | **`Detector::push_block`** (`insn_per_sample`), mixed | **25.17** (budget 25: over) | **54.37** (budget 60) |
//! | the same, touch held | 25.05 (budget 30) | 54.78 (budget 60) |
//!
//! On the signal this benchmark used before (exactly 50 Hz, 1 code of
//! noise, no harmonics, spikes or touches) the M4F counted 24.91: the
//! spikes add 0.22 a sample and the drift 0.24 (measured by turning each
//! off). The held touch cost 28.5 until the amplitude's root above 2^32
//! (a touch's power, in Q8 codes squared) took Newton steps from the last
//! amplitude like the root below it (`isqrt_u64_from`).
//!
//! - The M4 loop (disassembly) is 19 instructions a pair: two loads and an
//!   add for the pair, the scaled DC subtracted, the gate's subtract,
//!   shifted compare and branch, and on acceptance a bit clear and a
//!   shifted subtract (the gate keeps `lo` in the pair value's scale, so
//!   no mean is formed), shift and one load for the packed sine/cosine
//!   word, one `smlawt` and one `smlawb`, the sum, the phase, the pointer,
//!   the loop test, and one reload (the phase step). The loop carries 11
//!   values (pointer, end, DC, the gate's two, table address, I, Q, sum,
//!   phase, phase step) and three temporaries; Thumb-2 leaves 13
//!   registers with r7 kept as the frame pointer (the thumb targets'
//!   default). On the M0, which has no shifted operands, the same gate
//!   costs 1.2 instructions a sample more than the mean-based one did
//!   (51.4 then); its budget is 60. Variants measured and dropped: the raise path written on
//!   `m − lo` alone (29.1), leaving the loop at a step above the limit
//!   instead of carrying a hold state (30.8), earlier an unroll by two
//!   (35.7, with the narrow multiply; 31.8 again with the wide one: I, Q
//!   and the sum spill); a body taking four samples a table read, compiled
//!   for its code only (its numerics were not kept), spills the phase and
//!   the sum to the stack; one loop over every cycle end of a block with
//!   the lane stored and reloaded around each (26.96 then, against 26.55:
//!   the per-segment bookkeeping and the one-frame edges cost more than
//!   the run setup they save); the square root stopped by `x² ≤ v` instead
//!   of a confirming Newton step (no change).
//! - From an execution trace (`.ci/profile`, see DEVELOPERS.md; per
//!   cycle, mixed signal): the block path 550, of which the loop's common
//!   path about 395 (20 a pair: 19 and the reloaded phase step), the gate's watermark raises about 18 (1.4 a cycle,
//!   13 extra instructions each: the step peak decays by a quarter a
//!   cycle, so the watermark starts each cycle near the hum's largest
//!   step; it climbed from 0 four times a cycle when the peak restarted
//!   every cycle), and the setup and teardown of the runs about 115 a run
//!   (1.2 runs a cycle with 200-frame blocks) with the block's edges;
//!   `Frontend::end_cycle` with the tracker 198 (the CORDIC, once every 8
//!   cycles, about 14 of it: its directions are a bit mask summed by
//!   nibble lookups on the M4F), `Backend::process` with the baseline
//!   and fault updates 247, and the gate's rare path for the spikes 9:
//!   about 1 005 a cycle, 25.1 a sample, as the SysTick count says.
//! - The per-cycle helpers with one caller (`MainsTracker::end_cycle` and
//!   `learn`, `FaultState::update`, `BaselineState::update`) are always
//!   inlined: with three channel counts in this binary the compiler had
//!   kept them out of line and shared, so this benchmark counted 1.6
//!   instructions a sample more than a one-detector build does.
//! - Flash (thumbv6m, opt-level "s", 1 channel, 7 616 B against 8 192):
//!   `Backend::process` with the baseline and fault updates 1 472; the
//!   firmware loop with `push_frame` and construction inlined 1 472; the
//!   sine table 1 280; `Frontend::end_cycle` 1 152 (the tracker and the
//!   CORDIC inlined); the validation table 400 and field accessor 150;
//!   `MainsTracker::correct` 168; `phase_step` 150. No soft float, no
//!   library division or 64-bit multiply, no 64-bit shift and no `memcpy`
//!   or `memclr` is linked. Four and eight channels take 10 076 and
//!   10 304 B (panel rules, per-channel loops, and `memcpy`/`memclr` for
//!   the construction of the wider detector and its wider `Cycle`): over
//!   8 KiB, a target of our own beyond the one-channel budget, listed open
//!   as `flash-multi`. A one-channel firmware feeding 64-sample blocks
//!   (`CORTEXM_FLASH_PROBE=101` against 100) takes 8 156 B: its loop with
//!   `push_block` inlined is 1 992 B and the gate's rare path 60.
//!
//! On the host this example only prints how to run it.
#![cfg_attr(target_os = "none", no_std, no_main)]
#![allow(clippy::indexing_slicing)]

#[path = "../tests/cortexm/gen.rs"]
#[allow(dead_code)]
mod gen;

#[cfg(not(target_os = "none"))]
fn main() {
    println!(
        "cortexm_bench measures on Cortex-M under QEMU; run it with \
         `cargo run --profile firmware --example cortexm_bench --target thumbv6m-none-eabi` \
         (or thumbv7em-none-eabihf), or `bash .ci/cortexm` for the budgets"
    );
}

/// `CORTEXM_FLASH_PROBE` at build time: 0 builds the flash probe without the
/// detector, 1, 4 or 8 with a `Detector` of that many channels fed frame by
/// frame (`push_frame`); 100 the block-path probe without the detector and
/// 101 with a one-channel `Detector` fed blocks (`push_block`); 200 the
/// edge-only probe without the detector and 201 with a one-channel
/// `EdgeDetector` (`push_edge` and `advance`); 210 (with feature
/// `telemetry`) the telemetry encoder alone; unset (255) builds the
/// benchmark.
#[cfg_attr(not(target_os = "none"), allow(dead_code))]
const PROBE: u8 = match option_env!("CORTEXM_FLASH_PROBE") {
    Some(s) => parse_u8(s),
    None => 255,
};

#[cfg_attr(not(target_os = "none"), allow(dead_code))]
const fn parse_u8(s: &str) -> u8 {
    let b = s.as_bytes();
    let mut i = 0;
    let mut v: u32 = 0;
    while i < b.len() {
        if b[i] < b'0' || b[i] > b'9' || v > 25 {
            return 254;
        }
        v = v * 10 + (b[i] - b'0') as u32;
        i += 1;
    }
    if i == 0 || v > 253 {
        254
    } else {
        v as u8
    }
}

#[cfg(target_os = "none")]
mod target {
    use core::hint::black_box;

    use cortex_m as _;
    use cortex_m::asm::nop;
    use cortex_m::peripheral::{syst::SystClkSource, SYST};
    use cortex_m_rt::entry;
    use cortex_m_semihosting::{debug, hprintln};
    use humsense::edge::{EdgeConfig, EdgeDetector, EdgeFrontend, TimerWidth};
    use humsense::{
        Backend, Config, Cycle, Detector, FieldDetector, Frontend, Profile, WindowStage,
    };

    use super::gen::{
        k, span, ChannelSpec, Disturb, EdgeSource, EdgeSpec, Knot, PinSpec, SignalSpec, Source,
        Span,
    };
    use super::PROBE;

    /// Must match `-icount shift=` in `.cargo/config.toml`.
    const SHIFT: u32 = 10;

    /// Triple, QEMU machine and SysTick core-clock period in picoseconds.
    const MACHINE: (&str, &str, u64) = if cfg!(target_abi = "eabihf") {
        ("thumbv7em-none-eabihf", "mps2-an386", 40_000)
    } else if cfg!(target_feature = "thumb2") {
        ("thumbv7-unknown", "unknown", 40_000)
    } else {
        ("thumbv6m-none-eabi", "microbit", 62_500)
    };
    const TRIPLE: &str = MACHINE.0;

    const RATE_HZ: u32 = 2_000;
    const WARM_FRAMES: u32 = 6_000;
    const FRAMES: u32 = 2_000;
    /// Frames per SysTick measurement: far below the 24-bit wrap.
    const BLOCK: u32 = 200;

    #[inline(always)]
    fn now() -> u32 {
        SYST::get_current()
    }

    /// Instructions between two SysTick reads (down-counter, one wrap at most).
    fn insns(t0: u32, t1: u32) -> u64 {
        let ticks = u64::from(t0.wrapping_sub(t1) & 0x00ff_ffff);
        let den = 1000u64 << SHIFT;
        (ticks * MACHINE.2 + den / 2) / den
    }

    /// Eight SysTick reads, one load instruction each (volatile: all kept,
    /// in order).
    macro_rules! read8 {
        () => {
            now();
            now();
            now();
            now();
            now();
            now();
            now();
            now();
        };
    }

    /// 64 SysTick reads, straight-line.
    macro_rules! read64 {
        () => {
            read8!();
            read8!();
            read8!();
            read8!();
            read8!();
            read8!();
            read8!();
            read8!();
        };
    }

    /// Instructions across 64 SysTick reads, timed inside one leaf function
    /// so that no caller code (spills) lands in the region.
    #[inline(never)]
    fn reads64() -> u64 {
        let t0 = now();
        read64!();
        let t1 = now();
        insns(t0, t1)
    }

    /// The same across 128 reads.
    #[inline(never)]
    fn reads128() -> u64 {
        let t0 = now();
        read64!();
        read64!();
        let t1 = now();
        insns(t0, t1)
    }

    /// Checks the tick-to-instruction conversion: 64 more SysTick reads
    /// (one load each) must come out as exactly 64 more instructions.
    fn calibrate() -> Result<(), ()> {
        let (n64, n128) = (reads64(), reads128());
        hprintln!(
            "cortexm-calib: target={} machine={} icount_shift={} reads64={} reads128={}",
            TRIPLE,
            MACHINE.1,
            SHIFT,
            n64,
            n128
        );
        if n128 == n64 + 64 {
            Ok(())
        } else {
            hprintln!(
                "cortexm-error: 64 loads read as {} instructions: is QEMU running with -icount shift={}?",
                n128 as i64 - n64 as i64,
                SHIFT
            );
            Err(())
        }
    }

    /// Which signal a measurement runs on.
    #[derive(Clone, Copy, PartialEq, Eq)]
    enum Case {
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
    const AMBIENT_CODES: u32 = 20;
    const TOUCH_CODES: u32 = 500;
    /// Touch periods in a signal (one a second).
    const TOUCH_PERIODS: usize = 30;
    const TOUCH_KNOTS: usize = 1 + 4 * TOUCH_PERIODS;

    /// Touches of 250 ms once a second, starting `offset_ms` into each
    /// second, for `TOUCH_PERIODS` seconds: 20 ms ramps up to
    /// `TOUCH_CODES` and back to `AMBIENT_CODES` (a finger pressed and
    /// lifted; a quarter of the time touched).
    const fn touches(offset_ms: u32) -> [Knot; TOUCH_KNOTS] {
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
    static TOUCH: [[Knot; TOUCH_KNOTS]; 8] = [
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
    const HELD: &[Knot] = &[
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
    fn source<const N: usize>(case: Case) -> Source<N> {
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
    fn frame<const N: usize>(src: &mut Source<N>) -> [u16; N] {
        src.frame().map(|x| x as u16)
    }

    // Measured regions are calls of `#[inline(never)]` functions between two
    // SysTick reads; each figure is converted and passed through `black_box`
    // before the next read, so no bookkeeping lands inside a region.

    #[inline(never)]
    fn block_with<const N: usize>(det: &mut Detector<N>, src: &mut Source<N>, events: &mut u32) {
        for _ in 0..BLOCK {
            let f = frame(src);
            det.push_frame(&f, |_| *events += 1);
        }
    }

    #[inline(never)]
    fn block_without<const N: usize>(src: &mut Source<N>) {
        for _ in 0..BLOCK {
            let f = frame(src);
            black_box(&f);
        }
    }

    /// Instructions of `FRAMES` frames through the detector, generator included.
    fn with_detector<const N: usize>(
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
    fn without_detector<const N: usize>(src: &mut Source<N>) -> u64 {
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
    fn block_call<const N: usize, W: WindowStage>(
        det: &mut Detector<N, 0, W>,
        buf: &[u16],
        events: &mut u32,
    ) {
        det.push_block(buf, |_| *events += 1);
    }

    /// Instructions of `Detector::push_block` over `FRAMES` frames, in
    /// blocks of `BLOCK` frames generated beforehand (not measured).
    #[inline(never)]
    fn push_block_cost<const N: usize, W: WindowStage>(
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
    fn front_block_call<const N: usize>(front: &mut Frontend<N, 0>, buf: &[u16], cycles: &mut u32) {
        front.push_block(buf, |c| {
            black_box(c);
            *cycles += 1;
        });
    }

    #[inline(never)]
    /// Instructions of `Frontend::push_block` alone over `FRAMES` frames in
    /// blocks of `BLOCK` frames, and the cycles it completed.
    fn front_block_cost<const N: usize>(
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
    fn front_call<const N: usize>(front: &mut Frontend<N, 0>, f: &[u16; N]) -> Option<Cycle<N, 0>> {
        front.push_frame(f)
    }

    #[inline(never)]
    fn back_call<const N: usize>(back: &mut Backend<N, 0>, c: &Cycle<N, 0>) {
        back.process(c, |e| {
            black_box(e);
        });
    }

    /// The call overhead that `front_call` and `back_call` add: the same
    /// signature, doing nothing.
    #[inline(never)]
    fn empty_call<const N: usize>(front: &mut Frontend<N, 0>, f: &[u16; N]) -> Option<Cycle<N, 0>> {
        black_box((front, f));
        None
    }

    /// Per-call costs of the split pipeline over `FRAMES` frames, call
    /// overhead subtracted: [frames that end no cycle, their instructions,
    /// frames that end one, their instructions, `Backend::process`
    /// instructions].
    fn stages<const N: usize>(
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

    /// `a / b` with two decimals, as integer and hundredths.
    fn ratio(a: u64, b: u64) -> (u64, u64) {
        let b = b.max(1);
        let x100 = (a * 100 + b / 2) / b;
        (x100 / 100, x100 % 100)
    }

    /// The figure handed in by `.ci/cortexm` for `n` channels, if any.
    fn flash_for(n: usize) -> Option<u32> {
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

    fn bench<const N: usize>(profile: Profile, case: Case) -> Result<(), ()> {
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
    fn window_bench(case: Case) -> Result<(), ()> {
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

    // -----------------------------------------------------------------
    // The edge input (`humsense::edge`): per edge and per window.

    /// Timer of the edge benchmark: 16 bits at 1 MHz (wraps every 65.5 ms).
    const EDGE_TICK_HZ: u32 = 1_000_000;
    /// Edge train of the benchmark: warm-up, then the measured part.
    const EDGE_WARM_MS: u32 = 3_000;
    const EDGE_MS: u32 = 4_000;
    /// Edges generated before each run of timed calls.
    const EDGE_BATCH: usize = 32;

    /// The representative train, per pin: ambient pulses (duty 0.22 of a
    /// period: a hum of 1.3 Vt), a burst of chatter (five pulses a cycle
    /// for 100 ms, once in the measured 4 s), one edge in 37 pulses lost;
    /// pin 0 also has a touch of 0.5 s every 2 s (duty 0.45), the other
    /// pins only ambient (so that the strongest-pad rule finds touches
    /// there too). Pin c's pulses are shifted by c/8 of a period.
    const EDGE_TOUCHED: &[Knot] = &[
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
    const EDGE_AMBIENT: &[Knot] = &[k(0, 220)];
    const EDGE_SPANS: &[Span] = &[span(4200, 4300, Disturb::Chatter(5))];

    fn edge_source<const N: usize>() -> EdgeSource<N> {
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
    fn edge_call<const N: usize>(
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
    fn empty_edge_call<const N: usize>(
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
    struct EdgeCost {
        /// Calls that ended no window: count, instructions, most in one.
        plain: u64,
        plain_insn: u64,
        plain_min: u64,
        plain_max: u64,
        /// Calls that ended one or more windows: count, instructions, most.
        ending: u64,
        ending_insn: u64,
        ending_max: u64,
        /// Windows ended.
        windows: u64,
    }

    /// Times every `push_edge` of the measured part of the train, one call
    /// at a time (call overhead subtracted); a shadow front end, outside
    /// the timed region, tells which calls ended windows.
    #[inline(never)]
    fn edge_costs<const N: usize>(
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
        };
        let mut buf = [(0u32, 0usize, false); EDGE_BATCH];
        loop {
            let mut n = 0;
            for slot in buf.iter_mut() {
                let Some(edge) = src.next() else { break };
                *slot = ((edge.tick as u32) & mask, usize::from(edge.ch), edge.active);
                n += 1;
            }
            if n == 0 {
                break;
            }
            for &(count, ch, rising) in black_box(&buf[..n]) {
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
    fn edge_flash() -> Option<u32> {
        option_env!("CORTEXM_EDGE_FLASH")?.trim().parse().ok()
    }

    /// One run: a fresh detector on a fresh train, warmed up, then every
    /// edge of the measured part timed. The detector's size comes back
    /// with the cost.
    #[inline(never)]
    fn edge_run<const N: usize>(cfg: Config, edge: EdgeConfig) -> Result<(EdgeCost, u32), ()> {
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
    fn edge_bench<const N: usize>(profile: Profile) -> Result<(), ()> {
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
        if cost.plain == 0 || cost.windows == 0 {
            hprintln!("cortexm-error: the edge train ended no window or had no plain edge");
            return Err(());
        }
        // Per edge: the mean of the calls that ended no window. Per cycle:
        // everything else (all calls less that per-edge cost each), per
        // window and channel.
        let calls = cost.plain + cost.ending;
        let total = cost.plain_insn + cost.ending_insn;
        let per_edge_x100 = (cost.plain_insn * 100 + cost.plain / 2) / cost.plain;
        let rest_x100 = (total * 100).saturating_sub(calls * per_edge_x100);
        let den = cost.windows * N as u64;
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
        hprintln!(
            "cortexm-stage: target={} input=edges profile={} channels={} edges={} plain_edges={} insn_per_edge_min={} insn_per_edge_max={} window_calls={} windows={} insn_per_window_call={}.{:02} insn_per_window_call_max={} frontend_ram_bytes={} events={}",
            TRIPLE, name, N, calls, cost.plain, cost.plain_min, cost.plain_max, cost.ending, cost.windows,
            ew, ewf, cost.ending_max, front_ram, events
        );
        Ok(())
    }

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

    /// Flash probe: a minimal firmware that reads "ADC" codes (SysTick
    /// stands in for the converter) into a `Detector<N>` and consumes its
    /// events. The configuration goes through `black_box`, so construction
    /// and validation are kept as a firmware that loads its settings would.
    fn probe<const N: usize>() -> ! {
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
    fn probe_without() -> ! {
        loop {
            black_box([now() as u16; 1]);
        }
    }

    /// Samples a block-path probe collects before each call (a DMA
    /// half-buffer, say).
    const PROBE_BLOCK: usize = 64;

    /// A minimal firmware feeding blocks: fills a buffer, one
    /// `Detector::<1>::push_block` a buffer, events out.
    fn probe_block() -> ! {
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
    fn probe_block_without() -> ! {
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
    fn probe_telemetry() -> ! {
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
    fn probe_edges() -> ! {
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
    fn probe_edges_without() -> ! {
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
    fn trace_one(case: Case) -> Result<(), ()> {
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
    fn trace_edges() -> Result<(), ()> {
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
}
