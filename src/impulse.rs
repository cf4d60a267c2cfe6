//! Impulse rejection: a slew gate in front of the demodulator.
//!
//! The gate sees the demodulator's groups: pairs of samples (the cycle's
//! samples 0 and 1, 2 and 3, …) and the lone last sample of a cycle of odd
//! length. It compares the group's mean `m` (the pair sum halved, floor; a
//! lone sample as it is) with the last accepted mean. A group whose step
//! exceeds the gate limit is replaced by the last accepted mean (held: the
//! demodulator gets that mean times the group's size), for at most
//! `max_len` groups in a row; the next group is accepted whatever it is, so
//! a real change of level is delayed by at most that many groups. An
//! accepted group passes its exact sum.
//!
//! The limit is set once per mains cycle from the step peak `M`, the
//! largest accepted step so far with a decay of a quarter per cycle: at
//! each cycle end
//!
//! `limit = min((max_len + 1) · M + floor, 65 535)`, then `M ← ⌊3M/4⌋`
//!
//! and during the next cycle `M` rises to any larger accepted step. A
//! steady hum keeps `M` at its largest step; when the hum falls (a pad
//! released), the limit follows it down within a few cycles (tenfold in
//! eight cycles) rather than at once, so spike rejection is a little
//! weaker for those cycles. The decay is what makes the block path cheap:
//! its watermark starts each cycle at `M`, and the steps of a steady hum
//! seldom rise above it.
//!
//! The factor `max_len + 1` lets the true signal move for that many held
//! groups and still be accepted when the hold ends. A sinusoid of
//! amplitude A with n samples per cycle steps at most 2πA/n per sample (so
//! about twice that per pair), so a full-scale spike on ambient hum is
//! held, while a touch that raises the hum tenfold opens the gate within
//! one cycle (the accepted steps of that cycle raise the next limit). A spike
//! of `L` samples touches at most `⌊L/2⌋ + 1` pairs: the detector holds up
//! to that many groups for `spike_max_len = L`. Means are offset-binary
//! codes (`u16`), so every step fits `u16`. The first cycle accepts
//! everything.
//!
//! Two forms give the same output: [`ImpulseState::gate`], one group at a
//! time from memory (the frame path), and [`BlockGate`] with [`BlockHold`]
//! for a run of pairs in registers (the block path), which tests a step
//! against a watermark (the step peak, within the limit) in one
//! compare and leaves the limit and the hold counter to the rare groups
//! above the watermark.

use crate::demod::LANE_SHIFT;

/// Per-channel state of the impulse gate (8 bytes).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct ImpulseState {
    /// Last accepted group mean, offset-binary code.
    last: u16,
    /// Present gate limit in codes; `u16::MAX` accepts everything.
    limit: u16,
    /// Step peak `M` (see the module docs): the largest accepted step
    /// this cycle, or the decayed peak of the cycles before if larger,
    /// codes.
    max_step: u16,
    /// Samples held in a row.
    run: u8,
}

impl ImpulseState {
    /// A gate that accepts everything until its first cycle ends.
    pub const fn new() -> Self {
        Self {
            last: 0,
            limit: u16::MAX,
            max_step: 0,
            run: 0,
        }
    }

    /// Passes one group through the gate: `sum` is the group's sum, `m`
    /// its mean and `shift` the log2 of its size (1 for a pair, 0 for a
    /// lone sample). Returns the sum to demodulate: `sum`, or the held mean
    /// `<< shift`. Never panics. Out of line: the frame path's one copy for
    /// pairs and lone samples (the block path's pairs use [`BlockGate`]).
    #[inline(never)]
    pub fn gate(&mut self, sum: u32, m: u16, shift: u32, max_len: u8) -> u32 {
        // In u32, so no masking to 16 bits is needed between steps.
        let step = u32::from(m).abs_diff(u32::from(self.last));
        if step > u32::from(self.limit) && self.run < max_len {
            self.run += 1;
            return u32::from(self.last) << shift;
        }
        self.run = 0;
        self.last = m;
        if step > u32::from(self.max_step) {
            self.max_step = step as u16;
        }
        sum
    }

    /// [`gate`](Self::gate) for a group of one sample `x`: returns `x` or
    /// the held mean.
    #[inline(always)]
    pub fn filter(&mut self, x: u16, max_len: u8) -> u16 {
        self.gate(u32::from(x), x, 0, max_len) as u16
    }

    /// The block path's gate for a run whose first pair is at position
    /// (reference phase) `start`: a run of held groups at the end of the
    /// last call continues there.
    ///
    /// The block path works on pair sums less twice the demodulator's DC
    /// estimate `dc` (`xc = v − 2·dc`), so the gate's means there are
    /// `m − dc` (exactly, as `2·dc` is even); the gate only compares
    /// differences, so its decisions are the same.
    #[inline(always)]
    pub const fn block(&self, start: u32, dc: u16) -> (BlockGate, BlockHold) {
        self.block_at::<LANE_SHIFT>(start, dc)
    }

    /// [`block`](Self::block) for pair values scaled by `2^LANE`.
    #[inline(always)]
    const fn block_at<const LANE: u32>(&self, start: u32, dc: u16) -> (BlockGate, BlockHold) {
        // The step peak is within the limit unless a step above it was
        // accepted this cycle; either way it is a valid watermark only up
        // to the limit, and `max_over` keeps the whole of it (at most the
        // watermark when within the limit).
        let w = if self.max_step > self.limit {
            self.limit as u32
        } else {
            self.max_step as u32
        };
        let lo = (self.last as u32).wrapping_sub(dc as u32).wrapping_sub(w);
        let gate = BlockGate {
            lo_s: lo << (1 + LANE),
            w2: w << 1,
        };
        let hold = BlockHold {
            limit: self.limit as u32,
            run: self.run as u32,
            held_next: start,
            max_over: self.max_step as u32,
        };
        (gate, hold)
    }

    /// Stores the block path's gate back after a run whose next position
    /// (the position after its last pair) is `end`: the hold counter
    /// survives only if the last pair was held.
    #[inline(always)]
    pub fn store_block(&mut self, gate: &BlockGate, hold: &BlockHold, end: u32, dc: u16) {
        self.store_at::<LANE_SHIFT>(gate, hold, end, dc);
    }

    /// [`store_block`](Self::store_block) for pair values scaled by
    /// `2^LANE`.
    #[inline(always)]
    fn store_at<const LANE: u32>(&mut self, gate: &BlockGate, hold: &BlockHold, end: u32, dc: u16) {
        let w = gate.w2 >> 1;
        self.last = gate
            .lo::<LANE>()
            .wrapping_add(w)
            .wrapping_add(u32::from(dc)) as u16;
        self.max_step = w.max(hold.max_over) as u16;
        self.run = if hold.held_next == end {
            hold.run as u8
        } else {
            0
        };
    }

    /// Ends a mains cycle: sets the limit for the next cycle from the step
    /// peak and decays the peak by a quarter (see the module docs). Per
    /// cycle.
    pub fn end_cycle(&mut self, max_len: u8, floor: u16) {
        let factor = u32::from(max_len) + 1;
        let peak = u32::from(self.max_step);
        let limit = peak * factor + u32::from(floor);
        self.limit = if limit > 0xffff { 0xffff } else { limit as u16 };
        self.max_step = ((peak * 3) >> 2) as u16;
    }

    /// The present gate limit in codes (`u16::MAX` before the first cycle).
    pub const fn limit(&self) -> u16 {
        self.limit
    }
}

/// The same gate for a run of pairs on the block path, arranged so the
/// common pair costs a subtract, a shifted compare, a bit clear and a
/// shifted subtract.
///
/// It keeps a watermark `w`, the step peak within the limit (`w ≤ limit`;
/// see the module docs), and `lo = last − w` (wrapping `u32`). Then for a
/// pair mean `m`, `|m − last| ≤ w` is one unsigned compare, `m − lo ≤ 2w`,
/// and accepting such a pair changes neither the watermark nor the peak:
/// `lo ← m − w`. Only a step above the watermark takes the slower path:
/// within the limit it raises the watermark; above the limit it is held,
/// or accepted when `max_len` groups are held in a row (that step is kept
/// in [`BlockHold`], apart from the watermark). The peak is
/// `max(w, BlockHold::max_over)`, exactly the frame path's.
#[derive(Clone, Copy, Debug, Default)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct BlockGate {
    /// `lo · 2^s` (wrapping), with `s = 1 + LANE_SHIFT`: a pair value
    /// `x = xc << LANE_SHIFT` is `2^s` times the gate's mean `m − dc` (`xc`
    /// is a pair sum, twice a mean), so `lo` is kept in the pair value's own
    /// scale and the common path needs no mean of its own.
    lo_s: u32,
    /// `2w`.
    w2: u32,
}

/// The rarely touched part of the block path's gate (held pairs and
/// steps above the watermark), kept apart from [`BlockGate`] so the common
/// path needs only two registers for the gate.
///
/// Instead of clearing the hold counter on every accepted pair, a held
/// pair records the position of the pair after it, and the next step
/// over the limit continues the run only if it comes at that position.
/// (Before the first held pair of a run, `held_next` is the run's start,
/// where a count carried over from the last run continues; a count of 0
/// needs no marker.)
#[derive(Clone, Copy, Debug, Default)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct BlockHold {
    limit: u32,
    /// Groups held in a row, up to `held_next`.
    run: u32,
    /// Position just after the latest held pair.
    held_next: u32,
    /// The step peak at the run's start, raised by any step accepted
    /// above the limit.
    max_over: u32,
}

impl BlockGate {
    /// The gate for the pair at position `pos` of a run, given as its sum
    /// less twice the DC estimate, `xc` (see [`ImpulseState::block`]),
    /// scaled as the demodulator takes it: `x = xc << LANE_SHIFT`
    /// ([`crate::demod::LANE_SHIFT`]). Returns `x`, or twice the held mean
    /// in the same terms; the same decision as [`ImpulseState::gate`] with
    /// `shift = 1`. Positions are the pairs' reference phases (`pos_step`
    /// is the phase step of a pair): they increase within a run, which
    /// never crosses a phase wrap except after its last pair.
    #[inline(always)]
    pub fn pair(
        &mut self,
        hold: &mut BlockHold,
        x: i32,
        max_len: u32,
        (pos, pos_step): (u32, u32),
    ) -> i32 {
        self.pair_at::<LANE_SHIFT>(hold, x, max_len, (pos, pos_step))
    }

    /// [`pair`](Self::pair) for pair values scaled by `2^LANE`.
    #[inline(always)]
    fn pair_at<const LANE: u32>(
        &mut self,
        hold: &mut BlockHold,
        x: i32,
        max_len: u32,
        (pos, pos_step): (u32, u32),
    ) -> i32 {
        let s = 1 + LANE;
        // With `L = lo · 2^s` and `d = x − L`, exact for
        // |x| < 2^23 and |lo| < 2^18: `m − lo = ⌊d / 2^s⌋` when d ≥ 0, and
        // d < 0 (m < lo) reads as at least 2^(31 − s) > 2w: the modular
        // compare `m − lo ≤ 2w` in one shift and one compare, with no
        // register for `m`.
        let d = (x as u32).wrapping_sub(self.lo_s);
        if d >> s <= self.w2 {
            // lo ← m − w, that is `L ← 2^s·m − 2^s·w`: `2^s·m` is `x`
            // with its low s bits cleared. (Formed in each branch: formed
            // once above the compare, it cost the 4-channel block loop 0.4
            // instructions a sample on the M4F.)
            let floor = (x as u32) & !((1 << s) - 1);
            self.lo_s = floor.wrapping_sub(self.w2 << LANE);
            return x;
        }
        // The step from the last accepted mean: `m − last = ⌊d / 2^s⌋ − w`
        // (d as a signed value, exact).
        let w = self.w2 >> 1;
        let step = ((d as i32) >> s).wrapping_sub(w as i32).unsigned_abs();
        if step <= hold.limit {
            // A new largest step within the limit: lo ← m − step.
            let floor = (x as u32) & !((1 << s) - 1);
            self.w2 = step << 1;
            self.lo_s = floor.wrapping_sub(step << s);
            return x;
        }
        // m − dc and the last mean, as wrapping u32 (modular compares).
        let m = (x >> s) as u32;
        let last = self.lo::<LANE>().wrapping_add(w);
        let (lo, held) = Self::beyond(hold, m, step, last, max_len, (pos, pos_step));
        match held {
            Some(last) => (last as i32).wrapping_mul(2) << LANE,
            None => {
                self.lo_s = lo.wrapping_sub(w) << s;
                x
            }
        }
    }

    /// `lo` (`m − dc − w` of the last accepted pair, wrapping).
    #[inline(always)]
    const fn lo<const LANE: u32>(&self) -> u32 {
        ((self.lo_s as i32) >> (1 + LANE)) as u32
    }

    /// A step above the limit (rare: out of line): holds the pair, or
    /// accepts it when `max_len` groups are held in a row. Returns the
    /// accepted mean (`m`) and the held mean (`Some(last)`) or `None` when
    /// accepted. Means here are `m − dc`: signed values (|·| < 2^16) held
    /// in `u32`.
    #[cold]
    #[inline(never)]
    fn beyond(
        hold: &mut BlockHold,
        m: u32,
        step: u32,
        last: u32,
        max_len: u32,
        (pos, pos_step): (u32, u32),
    ) -> (u32, Option<u32>) {
        if hold.held_next != pos {
            // The group before was accepted: a new run.
            hold.run = 0;
        }
        if hold.run < max_len {
            hold.run += 1;
            hold.held_next = pos.wrapping_add(pos_step);
            return (m, Some(last));
        }
        hold.run = 0;
        hold.max_over = hold.max_over.max(step);
        (m, None)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn run_cycle(g: &mut ImpulseState, xs: &[u16], out: &mut [u16]) {
        for (x, o) in xs.iter().zip(out.iter_mut()) {
            *o = g.filter(*x, 3);
        }
        g.end_cycle(3, 4);
    }

    #[test]
    fn holds_short_spikes_and_passes_long_steps() {
        let mut g = ImpulseState::new();
        let flat = [100u16; 20];
        let mut out = [0u16; 20];
        // The first cycle's first step (from 0) sets a wide limit; flat
        // cycles after it bring it down to the floor as the peak decays.
        for _ in 0..40 {
            run_cycle(&mut g, &flat, &mut out);
        }
        assert_eq!(g.limit(), 4);
        // A three-sample full-scale spike is held at 100.
        let mut spike = [100u16; 20];
        spike[5] = 4095;
        spike[6] = 4095;
        spike[7] = 0;
        run_cycle(&mut g, &spike, &mut out);
        assert!(out.iter().all(|v| *v == 100), "{out:?}");
        // A four-sample disturbance is longer than the gate allows: the
        // fourth sample passes, and the return step is then held in turn.
        let mut long = [100u16; 20];
        long[2..6].copy_from_slice(&[3000, 3000, 3000, 3000]);
        run_cycle(&mut g, &long, &mut out);
        assert_eq!(
            &out[1..11],
            &[100, 100, 100, 100, 3000, 3000, 3000, 3000, 100, 100]
        );
    }

    /// Pair sums through the frame path's gate and through the block
    /// path's, with the pair values at scale `2^LANE` (0 on the host, 6 on
    /// ARMv7E-M): the same output for every pair and the same state after
    /// every run, over runs split at random, cycle ends and DC changes.
    fn block_gate_matches_frame_gate<const LANE: u32>() {
        let mut seed = 0x9e37_79b9_u32;
        let mut rand = move || {
            seed ^= seed << 13;
            seed ^= seed >> 17;
            seed ^= seed << 5;
            seed
        };
        for max_len in [0u8, 1, 2, 5] {
            let (mut frame, mut block) = (ImpulseState::new(), ImpulseState::new());
            let (mut pos, step) = (0u32, 0x0333_3333u32);
            let mut dc = 2048u16;
            let mut level = 4096u32;
            for cycle in 0..300u32 {
                // Pairs of a 12- or 16-bit input: hum, level steps,
                // full-scale spikes of one to three pairs.
                let big = cycle % 3 == 0;
                let span = if big { 131_070 } else { 8190 };
                let mut k = 0;
                while k < 20 {
                    let run = 1 + rand() % 7;
                    let (mut g, mut h) = block.block_at::<LANE>(pos, dc);
                    for _ in 0..run {
                        if k == 20 {
                            break;
                        }
                        let r = rand();
                        if r % 97 == 0 {
                            level = rand() % span;
                        }
                        let hum = (r >> 8) % 64;
                        let mut v = (level + hum).min(span);
                        if r % 13 == 0 {
                            v = if r & 1 == 0 { 0 } else { span };
                        }
                        let want = frame.gate(v, (v >> 1) as u16, 1, max_len);
                        let xc = v as i32 - 2 * i32::from(dc);
                        let got =
                            g.pair_at::<LANE>(&mut h, xc << LANE, u32::from(max_len), (pos, step));
                        let got = (got >> LANE) + 2 * i32::from(dc);
                        assert_eq!(
                            got as u32, want,
                            "LANE {LANE}, max_len {max_len}, cycle {cycle}, pair {k}"
                        );
                        pos = pos.wrapping_add(step);
                        k += 1;
                    }
                    block.store_at::<LANE>(&g, &h, pos, dc);
                    assert_eq!(
                        block, frame,
                        "LANE {LANE}, max_len {max_len}, cycle {cycle}"
                    );
                }
                frame.end_cycle(max_len, 4);
                block.end_cycle(max_len, 4);
                assert_eq!(
                    block, frame,
                    "LANE {LANE}, max_len {max_len}, cycle {cycle}"
                );
                // A new DC estimate for the next cycle (the demodulator's).
                dc = (rand() % (span / 4 + 1)) as u16;
            }
        }
    }

    #[test]
    fn block_gate_matches_frame_gate_at_both_scales() {
        block_gate_matches_frame_gate::<0>();
        block_gate_matches_frame_gate::<6>();
    }

    #[test]
    fn extremes_do_not_overflow() {
        let mut g = ImpulseState::new();
        for x in [0, u16::MAX, 0, u16::MAX] {
            let _ = g.filter(x, 8);
        }
        g.end_cycle(8, u16::MAX);
        assert_eq!(g.limit(), u16::MAX);
        g.end_cycle(8, 0);
        assert_eq!(g.limit(), u16::MAX);
    }

    #[test]
    fn the_step_peak_decays_by_a_quarter_per_cycle() {
        // The module docs' rule, checked cycle by cycle against the
        // recurrence written out here: after one cycle with a largest step
        // of 2000 codes (from the initial mean 0, then a step of 1000),
        // quiet cycles give limits (max_len + 1)·M + floor with
        // M = 2000, 1500, 1125, …
        // down to the floor alone, and a step above the decayed peak
        // raises it again at once.
        let mut g = ImpulseState::new();
        let _ = g.filter(2000, 2);
        let _ = g.filter(3000, 2);
        let mut m = 2000u32;
        for _ in 0..40 {
            g.end_cycle(2, 5);
            assert_eq!(u32::from(g.limit()), 3 * m + 5);
            m = m * 3 / 4;
            for _ in 0..10 {
                let _ = g.filter(3000, 2);
            }
        }
        assert_eq!((m, g.limit()), (0, 5));
        // Steps of 2 (within the floor of 5) raise the peak to 2.
        for x in [3002, 3000, 3002] {
            assert_eq!(g.filter(x, 2), x);
        }
        g.end_cycle(2, 5);
        assert_eq!(g.limit(), 3 * 2 + 5);
    }
}
