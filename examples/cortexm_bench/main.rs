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
//! subtracted), and so is every `EdgeDetector::advance` of a periodic tick
//! every 5 ms of timer time (a firmware's main-loop tick; the interval
//! `humsim replay` uses), which takes the queued edges and closes the
//! windows that ended; a copy of the front end, fed the same calls outside
//! the timed region, tells which calls ended a window.
//!
//! - `insn_per_edge`: the interrupt-side call, the mean of the calls that
//!   ended no window (the common path only queues the edge; the calls that
//!   take a full queue, an edge to the same level or chatter are in the
//!   mean).
//! - `insn_per_cycle`: everything else, per window and channel: all edge
//!   calls less `insn_per_edge` each, and the ticks, divided by windows ×
//!   channels.
//! - `ram_bytes`: `size_of::<EdgeDetector<N>>()` (front end and back end).
//! - `flash_bytes`: one channel only (probes `CORTEXM_FLASH_PROBE=201`,
//!   a firmware whose loop hands SysTick counts to `push_edge` and calls
//!   `advance`, minus 200 without the detector), `na` for more channels.
//!
//! `cortexm-stage: … input=edges …` adds the edge calls, the least and most
//! instructions of one that ended no window, the calls that ended
//! windows with their mean and most, and the ticks, the windows they
//! closed and their mean.
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
//! | block loop: pairs, gate, sin/cos, two MACs, sum, phase, run setup (`block_sample_path`) | 11.7 | 27.5 |
//! | front-end cycle end: scaling, DC, gate limit, mains tracker (on the frame path) | 233 /cycle = 5.8 | 481 /cycle = 12.0 |
//! | `Backend::process`: amplitude, noise, faults, baseline, decision | 226 /cycle = 5.6 | 525 /cycle = 13.1 |
//! | **`Detector::push_block`** (`insn_per_sample`), mixed | **24.62** (budget 25) | **54.51** (budget 60) |
//! | the same, touch held | 24.49 (budget 30) | 54.91 (budget 60) |
//!
//! On the signal this benchmark used before (exactly 50 Hz, 1 code of
//! noise, no harmonics, spikes or touches) the M4F counted 24.91; the mixed
//! signal first gave 25.92 and the held touch 28.5. Three changes brought
//! them down: the amplitude's root above 2^32 (a touch's power, in Q8 codes
//! squared) by Newton steps from the last amplitude like the root below it
//! (`isqrt_u64_from`: 25.17 and 25.05; the spikes then cost 0.22 a sample
//! and the drift 0.24, measured by turning each off), the pair corrections
//! kept across cycles of another length at the same phase step (a drifting
//! mains), and an early return of the fault stage on the common cycle (the
//! last two on the M4F only, for the M0's flash).
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
//!   cycle, mixed signal, before the last two changes above): the block
//!   path 550, of which the loop's common path about 395 (20 a pair: 19
//!   and the reloaded phase step), the gate's watermark raises about 18 (1.4 a cycle,
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

#[path = "../../tests/cortexm/gen.rs"]
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
mod target;
