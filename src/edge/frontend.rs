//! The edge front end: timer counts to a 64-bit clock, the per-edge path
//! (order and level checks, glitch filter), the windows of one tracked
//! mains period and the [`Cycle`]s they end in.

use crate::config::{Config, MainsMode};
use crate::demod::Iq;
use crate::detector::{Cycle, MAX_CHANNELS};
use crate::error::ConfigError;
use crate::fixed::div_rem_u32;
use crate::mains::MainsHealth;

use super::channel::{confirm, take, Accept, EdgeChannel, EdgeQueue, EdgeStats};
use super::config::{EdgeConfig, EdgeInput};
use super::divide::ratio_q16;
use super::duty::{duty_to_amplitude_q8, MAX_AMPLITUDE_Q8};
use super::period::{period_q8_of, EdgeMains, Stage};

/// Edges of one channel in one window from which the window counts as
/// chatter (a pulse a cycle gives two).
pub const CHATTER_EDGES: u16 = 8;
/// Windows that may be closed by one call; a call later than this many
/// mains periods after the previous one skips the windows in between.
pub const MAX_CATCH_UP: u32 = 8;

/// The edge input's front end for `N` channels: edges or levels in,
/// [`Cycle`]s out (no harmonic bins). See the [module docs](crate::edge).
///
/// `repr(C)`, the per-edge fields first, so that the per-edge path reaches
/// each of them with one load or store on a Cortex-M0.
#[derive(Clone, Debug)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[repr(C)]
pub struct EdgeFrontend<const N: usize> {
    // Per edge.
    /// The timer's largest count.
    mask: u32,
    /// Latest count seen.
    last_count: u32,
    /// How far `push_edge`'s common path may move the clock: the ticks to
    /// the present window's end, at most `limit` (so that no step back
    /// reads as a step forward); 0 before the first call and once the
    /// window has ended, so that such calls take the slow path.
    room: u32,
    /// The count at which `now_lo` was last brought up to date (`sync`):
    /// the common path moves only `last_count`, and the time of
    /// `last_count` is `now_lo + (last_count − sync_count) mod range`.
    sync_count: u32,
    /// Half the timer's range plus one (a step of this or more is a step
    /// back); 0 before the first call, so that it takes the slow path.
    limit: u32,
    /// Time of `sync_count`, ticks since the first call: the low word, and
    /// the high word as of the low word `lo_mark` (the low word wraps at
    /// most once between two calls that fold it in: see `fold`).
    now_lo: u32,
    /// Low word of the present window's end.
    win_end_lo: u32,
    /// Edges handed over, not yet taken.
    queue: [EdgeQueue; N],
    // Per edge taken, per window.
    now_hi: u32,
    lo_mark: u32,
    /// Glitch filter, ticks.
    glitch: u32,
    /// The tracker's interval bounds and period, for the coherence check.
    accept: Accept,
    /// Pulse-centre intervals accepted in this window (all channels).
    iv_sum: u32,
    iv_n: u32,
    /// The pin is low while active.
    active_low: bool,
    level_mode: bool,
    /// End of the present window, ticks, and its fraction (1/256 tick).
    win_end: u64,
    win_frac: u32,
    eta_q16: u32,
    stuck_after: u32,
    /// Calls with a channel index past the last.
    bad_channel: u32,
    mains: EdgeMains,
    ch: [EdgeChannel; N],
}

/// The clock as the queued counts need it: `last_t` the time (low word)
/// of `last_count`, the latest count, which every queued count is no later
/// than (by less than the timer's range).
#[derive(Clone, Copy)]
struct QueueClock {
    last_t: u32,
    last_count: u32,
    mask: u32,
}

impl QueueClock {
    /// The time of queued count `count`.
    #[inline]
    const fn time_of(self, count: u32) -> u32 {
        self.last_t
            .wrapping_sub(self.last_count.wrapping_sub(count) & self.mask)
    }
}

/// What a channel's window amounted to.
enum Window {
    Measured(u32),
    Constant,
    Held,
}

impl<const N: usize> EdgeFrontend<N> {
    /// Validates `edge` (against `cfg`, the back end's configuration, for
    /// its mains mode, `mains_lost_cycles` and `max_active_cycles`) and
    /// builds the front end. Never panics.
    pub fn new(edge: &EdgeConfig, cfg: &Config) -> Result<Self, ConfigError> {
        const { assert!(N >= 1 && N <= MAX_CHANNELS) };
        edge.validate(cfg)?;
        let mut mains = EdgeMains::new(edge.tick_hz, cfg);
        let level_mode = edge.input == EdgeInput::Level;
        if level_mode {
            let mhz = if cfg.mains == MainsMode::Hz60 {
                60_000
            } else {
                50_000
            };
            mains.period_q8 = period_q8_of(edge.tick_hz, mhz);
        }
        let period = mains.period_q8;
        let win_end = u64::from(period >> 8);
        let mut f = Self {
            mask: edge.timer.mask(),
            // Any value (the first call sets both), so long as they are
            // equal; not zero, which with the zeros around them would have
            // the compiler clear the front end with `memclr` (about 200
            // bytes more of flash on the M0).
            last_count: u32::MAX,
            room: 0,
            sync_count: u32::MAX,
            limit: 0,
            now_lo: 0,
            win_end_lo: win_end as u32,
            // At rest the pin is inactive: low, or high if active low.
            queue: [EdgeQueue::new(edge.active_low); N],
            now_hi: 0,
            lo_mark: 0,
            glitch: edge.glitch_ticks,
            accept: Accept {
                lo: 0,
                span: 0,
                period: 0,
            },
            iv_sum: 0,
            iv_n: 0,
            active_low: edge.active_low,
            level_mode,
            win_end,
            win_frac: period & 0xff,
            // η = h / (2·Vt) in Q16: permille · 2^16 / 2000.
            eta_q16: div_rem_u32(u32::from(edge.hysteresis_permille) << 16, 2_000).0,
            stuck_after: edge.stuck_high_cycles.into(),
            bad_channel: 0,
            mains,
            ch: [EdgeChannel::NEW; N],
        };
        f.sync_accept();
        Ok(f)
    }

    /// Copies the tracker's bounds for the per-edge checks.
    fn sync_accept(&mut self) {
        let (lo, hi) = self.mains.accept;
        self.accept = Accept {
            lo,
            span: hi.saturating_sub(lo),
            period: if self.mains.stage == Stage::Track && !self.level_mode {
                self.mains.period_q8 >> 8
            } else {
                0
            },
        };
    }

    /// Folds a wrap of the low word since the last fold into the high
    /// word. Every call but `push_edge`'s common path folds, and that path
    /// moves the clock less than a period (it never crosses a window's
    /// end), so the low word wraps at most once in between.
    #[inline]
    fn fold(&mut self) {
        if self.now_lo < self.lo_mark {
            self.now_hi = self.now_hi.wrapping_add(1);
        }
        self.lo_mark = self.now_lo;
    }

    /// Moves the clock `ahead` ticks forward, to the time of `last_count`
    /// (after `sync`); the new low word.
    fn step(&mut self, ahead: u32) -> u32 {
        self.fold();
        let (lo, carry) = self.now_lo.overflowing_add(ahead);
        if carry {
            self.now_hi = self.now_hi.wrapping_add(1);
        }
        self.now_lo = lo;
        self.lo_mark = lo;
        self.sync_count = self.last_count;
        lo
    }

    /// Whether the present window has ended at time `t` (the low word of
    /// now: within 2^31 ticks of the window's end, so a wrapping
    /// difference decides).
    #[inline(always)]
    fn window_ended(&self, t: u32) -> bool {
        t.wrapping_sub(self.win_end_lo) as i32 >= 0
    }

    /// Takes one edge of channel `ch` (`rising`: the pin went high) at timer
    /// count `count`; calls `on_cycle` for each window it completes (at most
    /// [`MAX_CATCH_UP`]). Per edge O(1), integer, no division. A channel
    /// past the last is counted and ignored. Never panics.
    ///
    /// The count becomes a tick count by a wrapping difference from the
    /// latest count, half the timer's range or more being a step back
    /// ([module docs](crate::edge)). In the common case (a step forward
    /// within the window, an edge to the other level, room in the
    /// channel's queue of three edges) the call only queues the count and
    /// moves the latest count (one compare against `room`, the ticks left
    /// in the window); the queued edges are taken (glitch filter, pulses)
    /// when the queue is full, the window ends or [`advance`](Self::advance)
    /// is called, with the same result as taking each at once.
    #[inline]
    pub fn push_edge(
        &mut self,
        ch: usize,
        rising: bool,
        count: u32,
        on_cycle: impl FnMut(&Cycle<N, 0>),
    ) {
        // Counts enter only through differences taken modulo the timer's
        // range, so bits above it need no masking here.
        let ahead = count.wrapping_sub(self.last_count) & self.mask;
        if ahead < self.room {
            if let Some(q) = self.queue.get_mut(ch) {
                if q.push(rising, count) {
                    self.last_count = count;
                    self.room -= ahead;
                    return;
                }
            }
        }
        self.push_edge_slow(ch, rising, count, on_cycle);
    }

    /// The time (low word) of `last_count`: `now_lo` moved on by what the
    /// common path of `push_edge` left behind.
    #[inline]
    const fn last_lo(&self) -> u32 {
        self.now_lo
            .wrapping_add(self.last_count.wrapping_sub(self.sync_count) & self.mask)
    }

    /// The clock of the queued counts.
    const fn queue_clock(&self) -> QueueClock {
        QueueClock {
            last_t: self.last_lo(),
            last_count: self.last_count,
            mask: self.mask,
        }
    }

    /// Brings `now_lo` up to the time of `last_count`.
    #[inline]
    fn sync(&mut self) {
        self.now_lo = self.last_lo();
        self.sync_count = self.last_count;
    }

    /// Sets `room` from the clock and the window's end (after `sync`).
    #[inline]
    fn set_room(&mut self) {
        let left = self.win_end_lo.wrapping_sub(self.now_lo);
        self.room = if self.limit == 0 || left as i32 <= 0 {
            0
        } else {
            left.min(self.limit)
        };
    }

    /// [`push_edge`](Self::push_edge) for everything but its common case:
    /// the first call, the end of a window, a full queue, an edge to the
    /// same level, a step back, a channel past the last.
    #[cold]
    #[inline(never)]
    fn push_edge_slow(
        &mut self,
        ch: usize,
        rising: bool,
        count: u32,
        on_cycle: impl FnMut(&Cycle<N, 0>),
    ) {
        self.sync();
        self.take_edge(ch, rising, count, on_cycle);
        self.set_room();
    }

    /// The slow path's work, with the clock brought up to date.
    fn take_edge(
        &mut self,
        ch: usize,
        rising: bool,
        count: u32,
        on_cycle: impl FnMut(&Cycle<N, 0>),
    ) {
        let active = rising != self.active_low;
        if self.limit == 0 {
            self.start(count);
            self.close_windows(on_cycle);
            self.take_now(ch, active, self.now_lo);
            return;
        }
        let ahead = count.wrapping_sub(self.last_count) & self.mask;
        if ahead < self.limit {
            self.last_count = count;
            let t = self.step(ahead);
            if self.window_ended(t) {
                self.close_windows(on_cycle);
            } else {
                self.drain(ch);
            }
            self.take_now(ch, active, t);
            return;
        }
        // A step back of `back` ticks: no time passes.
        self.fold();
        let back = self.last_count.wrapping_sub(count) & self.mask;
        self.drain(ch);
        if self.now() < u64::from(back) {
            // Before the first call.
            if let Some(c) = self.ch.get_mut(ch) {
                c.stats.out_of_order = c.stats.out_of_order.saturating_add(1);
            }
            return;
        }
        let now = self.now_lo;
        if let Some(c) = self.ch.get_mut(ch) {
            // Behind the channel's latest edge: its age is less than `back`.
            if now.wrapping_sub(c.last_t) < back {
                c.stats.out_of_order = c.stats.out_of_order.saturating_add(1);
                return;
            }
        }
        self.take_now(ch, active, now.wrapping_sub(back));
    }

    /// The first call: the clock starts at `count`.
    fn start(&mut self, count: u32) {
        self.limit = (self.mask >> 1) + 1;
        self.last_count = count;
        self.sync_count = count;
    }

    /// Takes channel `ch`'s queued edges, in order.
    fn drain(&mut self, ch: usize) {
        let clock = self.queue_clock();
        let (Some(q), Some(c)) = (self.queue.get_mut(ch), self.ch.get_mut(ch)) else {
            return;
        };
        for i in 0..q.len() {
            let (high, count) = q.get(i);
            let t = clock.time_of(count);
            if let Some((sum, n)) = take(c, high != self.active_low, t, self.glitch, &self.accept) {
                self.iv_sum = self.iv_sum.wrapping_add(sum);
                self.iv_n = self.iv_n.wrapping_add(n);
            }
        }
        q.reset(c.level() != self.active_low);
    }

    /// Takes every channel's queued edges.
    fn drain_all(&mut self) {
        for ch in 0..N {
            self.drain(ch);
        }
    }

    /// Takes one edge of channel `ch` at `t` (its queue empty); a channel
    /// past the last is counted.
    fn take_now(&mut self, ch: usize, active: bool, t: u32) {
        let (Some(q), Some(c)) = (self.queue.get_mut(ch), self.ch.get_mut(ch)) else {
            self.bad_channel = self.bad_channel.saturating_add(1);
            return;
        };
        if let Some((sum, n)) = take(c, active, t, self.glitch, &self.accept) {
            self.iv_sum = self.iv_sum.wrapping_add(sum);
            self.iv_n = self.iv_n.wrapping_add(n);
        }
        q.reset(c.level() != self.active_low);
    }

    /// The timer count `count` as a time: forward (the clock moves), or a
    /// step back (nothing changes).
    fn advance_to(&mut self, count: u32) {
        let count = count & self.mask;
        self.fold();
        if self.limit == 0 {
            self.start(count);
            return;
        }
        let ahead = count.wrapping_sub(self.last_count) & self.mask;
        if ahead < self.limit {
            self.last_count = count;
            self.step(ahead);
        }
    }

    /// Tells the front end the timer has reached `count` with no edge;
    /// closes the windows that ended and confirms the edges the glitch
    /// filter has cleared. Call it at least every half timer
    /// wrap while pins are quiet ([module docs](crate::edge)). Never panics.
    pub fn advance(&mut self, count: u32, on_cycle: impl FnMut(&Cycle<N, 0>)) {
        self.sync();
        self.advance_to(count);
        self.close_windows(on_cycle);
        self.confirm_due();
        self.set_room();
    }

    /// Takes one read of every pin (`true`: high), one tick after the
    /// previous read; changes become edges at this tick. Never panics.
    pub fn push_levels(&mut self, levels: &[bool; N], on_cycle: impl FnMut(&Cycle<N, 0>)) {
        self.sync();
        if self.limit != 0 {
            self.step(1);
        }
        self.limit = (self.mask >> 1) + 1;
        self.close_windows(on_cycle);
        let t = self.now_lo;
        for (i, &high) in levels.iter().enumerate() {
            let active = high != self.active_low;
            if self.ch.get(i).is_some_and(|c| c.level() != active) {
                self.take_now(i, active, t);
            }
        }
        self.set_room();
    }

    /// Confirms the pending edges the glitch filter has cleared by now.
    fn confirm_due(&mut self) {
        let (glitch, now) = (self.glitch, self.now_lo);
        for c in self.ch.iter_mut() {
            if c.pending() && now.wrapping_sub(c.last_t) >= glitch {
                if let Some((sum, n)) = confirm(c, c.last_t, &self.accept) {
                    self.iv_sum = self.iv_sum.wrapping_add(sum);
                    self.iv_n = self.iv_n.wrapping_add(n);
                }
            }
        }
    }

    /// Closes every window that has ended by now (at most
    /// [`MAX_CATCH_UP`]; the rest are skipped).
    #[inline(never)]
    fn close_windows(&mut self, mut on_cycle: impl FnMut(&Cycle<N, 0>)) {
        self.fold();
        self.drain_all();
        let mut closed = 0;
        while self.now() >= self.win_end {
            if closed == MAX_CATCH_UP {
                // Too long without a call: restart the windows now.
                let p = u64::from((self.mains.period_q8 >> 8).max(1));
                self.win_end = self.now() + p;
                for c in self.ch.iter_mut() {
                    c.edges = 0;
                    c.width_sum = 0;
                    c.count_pulses();
                    c.bad = true;
                }
                self.iv_sum = 0;
                self.iv_n = 0;
                break;
            }
            closed += 1;
            let mut cycle = Cycle::EMPTY;
            self.end_window(&mut cycle);
            on_cycle(&cycle);
        }
        let now = self.now_lo;
        for c in self.ch.iter_mut() {
            c.cap_ages(now);
        }
        self.win_end_lo = self.win_end as u32;
    }

    /// Ends the present window: per-channel amplitudes, the tracker, and the
    /// next window's end. Per window.
    fn end_window(&mut self, cycle: &mut Cycle<N, 0>) {
        self.confirm_due();
        let period = self.mains.period_q8;
        let tracking = self.mains.stage == Stage::Track;
        let mut any = false;
        let outs = cycle.fund.iter_mut().zip(cycle.dc.iter_mut());
        let extras = cycle.flat.iter_mut().zip(cycle.dc_step.iter_mut());
        for (c, ((f, dc), (flat, step))) in self.ch.iter_mut().zip(outs.zip(extras)) {
            let quiet = c.edges == 0 && !c.pending() && !c.bad;
            any |= !quiet;
            let w = if self.level_mode || quiet {
                Window::Constant
            } else if tracking && c.widths > 0 && !c.bad {
                let den = (u64::from(c.widths) * u64::from(period)) >> 8;
                Window::Measured(ratio_q16(u64::from(c.width_sum), den))
            } else {
                Window::Held
            };
            // Whether the amplitude is this window's own measurement: not
            // a held one, nor a duty of 1/2 or more (a pulse that straddles
            // a change of the hum, read as the cap). Others go to the back
            // end as unsteady (`Cycle::dc_step` at its largest), so they
            // neither confirm a touch alone nor set a touch's own level.
            let own = match w {
                Window::Measured(d) => {
                    c.amp_q8 = duty_to_amplitude_q8(d, self.eta_q16);
                    d < 1 << 15
                }
                Window::Constant => {
                    c.amp_q8 = if c.active() { MAX_AMPLITUDE_Q8 } else { 0 };
                    true
                }
                Window::Held => {
                    c.stats.held_windows = c.stats.held_windows.saturating_add(1);
                    false
                }
            };
            *step = if own { 0 } else { u16::MAX };
            c.active_run = if (quiet || self.level_mode) && c.active() {
                c.active_run.saturating_add(1)
            } else {
                0
            };
            *flat = c.active_run > self.stuck_after;
            *dc = if u16::from(c.edges) >= CHATTER_EDGES {
                u16::MAX
            } else {
                1 << 15
            };
            *f = Iq {
                i: c.amp_q8.min(i32::MAX as u32) as i32,
                q: 0,
            };
            c.edges = 0;
            c.width_sum = 0;
            c.count_pulses();
            c.bad = false;
        }
        cycle.end_sample = self.win_end;
        cycle.samples = period >> 8;
        cycle.rails = (0, u16::MAX);
        if !self.level_mode {
            self.mains
                .end_window(u64::from(self.iv_sum), self.iv_n, any);
            self.sync_accept();
        }
        self.iv_sum = 0;
        self.iv_n = 0;
        cycle.health = if self.level_mode {
            MainsHealth::Ok
        } else {
            self.mains.health()
        };
        let p = self.mains.period_q8;
        let frac = self.win_frac + (p & 0xff);
        self.win_end += u64::from(p >> 8) + u64::from(frac >> 8);
        self.win_frac = frac & 0xff;
    }

    /// Counts of channel `ch`'s input, or `None` past the last channel.
    pub fn stats(&self, ch: usize) -> Option<EdgeStats> {
        let mut c = *self.ch.get(ch)?;
        let clock = self.queue_clock();
        // The queued edges, taken on a copy.
        if let Some(q) = self.queue.get(ch) {
            for i in 0..q.len() {
                let (high, count) = q.get(i);
                let t = clock.time_of(count);
                let _ = take(
                    &mut c,
                    high != self.active_low,
                    t,
                    self.glitch,
                    &self.accept,
                );
            }
        }
        Some(c.stats())
    }

    /// Calls with a channel index past the last, since construction.
    pub const fn bad_channel(&self) -> u32 {
        self.bad_channel
    }

    /// The mains period tracker.
    pub const fn mains(&self) -> &EdgeMains {
        &self.mains
    }

    /// Ticks since the first call (to the latest count seen).
    pub const fn now(&self) -> u64 {
        let lo = self.last_lo();
        let wrapped = (lo < self.lo_mark) as u64;
        (self.now_hi as u64 + wrapped) << 32 | lo as u64
    }
}

#[cfg(test)]
mod tests {
    extern crate std;
    use super::super::config::TimerWidth;
    use super::*;
    use crate::config::Config;
    use crate::error::ConfigError;
    use crate::mains::MainsSystem;
    use std::vec::Vec;

    fn front(edge: EdgeConfig) -> EdgeFrontend<1> {
        let cfg = Config::touch().with_mains(MainsMode::Hz50);
        EdgeFrontend::new(&edge, &cfg).unwrap()
    }

    #[test]
    fn sixteen_bit_counts_wrap_into_one_clock() {
        let mut f = front(EdgeConfig::new(1_000_000, TimerWidth::Bits16));
        let start = 65_536 - 100;
        let mut windows = 0;
        for k in 0..400u32 {
            let t = start + 20_000 * k;
            f.push_edge(0, true, t & 0xffff, |_| windows += 1);
            f.push_edge(0, false, (t + 3_000) & 0xffff, |_| windows += 1);
        }
        // Exactly the ticks elapsed, through 121 wraps.
        assert_eq!(f.now(), 20_000 * 399 + 3_000);
        assert!((398..=400).contains(&windows), "{windows}");
        let s = f.stats(0).unwrap();
        assert_eq!((s.out_of_order, s.same_level), (0, 0));
        assert!(s.pulses > 390, "{s:?}");
    }

    #[test]
    fn rejections_are_counted() {
        let mut f = front(EdgeConfig::new(1_000_000, TimerWidth::Bits32));
        f.push_edge(0, true, 1_000, |_| {});
        f.push_edge(0, true, 2_000, |_| {}); // same level
        f.push_edge(0, false, 900, |_| {}); // before the last edge
        f.push_edge(3, false, 3_000, |_| {}); // no such channel
        f.push_edge(0, false, 3_000, |_| {});
        let s = f.stats(0).unwrap();
        assert_eq!((s.same_level, s.out_of_order), (1, 1));
        assert_eq!(f.bad_channel(), 1);
    }

    #[test]
    fn glitches_cancel_and_ringing_is_one_edge() {
        let edge = EdgeConfig::new(1_000_000, TimerWidth::Bits32).with_glitch_ticks(50);
        let mut f = front(edge);
        // A 20 µs spike: cancelled.
        f.push_edge(0, true, 1_000, |_| {});
        f.push_edge(0, false, 1_020, |_| {});
        // A ringing rise (three transitions within 30 µs), a clean fall.
        for (i, r) in [true, false, true].iter().enumerate() {
            f.push_edge(0, *r, 5_000 + 15 * i as u32, |_| {});
        }
        f.push_edge(0, false, 8_000, |_| {});
        f.advance(9_000, |_| {});
        let c = f.ch[0];
        assert_eq!(c.stats.glitches, 2);
        assert!(!c.active());
        // Both confirmed edges of the ring's pulse, none of the spike's.
        assert_eq!(c.edges, 2);
    }

    #[test]
    fn acquires_50_and_60_hz_and_locks() {
        for (hz, system) in [(50.0, MainsSystem::Hz50), (60.0, MainsSystem::Hz60)] {
            let cfg = Config::touch();
            let edge = EdgeConfig::new(1_000_000, TimerWidth::Bits32);
            let mut f: EdgeFrontend<1> = EdgeFrontend::new(&edge, &cfg).unwrap();
            let period = 1e6 / hz;
            let mut healths = Vec::new();
            for k in 0..200u32 {
                let c = f64::from(k) * period + 4_000.0;
                f.push_edge(0, true, (c - 1_500.0) as u32, |cy| healths.push(cy.health));
                f.push_edge(0, false, (c + 1_500.0) as u32, |cy| healths.push(cy.health));
            }
            let m = f.mains();
            assert_eq!(m.system(), system);
            assert!(m.locked());
            assert!(
                (m.frequency_hz() - hz as f32).abs() < 0.01,
                "{}",
                m.frequency_hz()
            );
            assert!(healths.iter().all(|h| *h == MainsHealth::Ok));
        }
    }

    #[test]
    fn a_60_hz_supply_with_50_hz_configured_is_out_of_range() {
        let cfg = Config::touch().with_mains(MainsMode::Hz50);
        let edge = EdgeConfig::new(1_000_000, TimerWidth::Bits32);
        let mut f: EdgeFrontend<1> = EdgeFrontend::new(&edge, &cfg).unwrap();
        let mut last = MainsHealth::Ok;
        for k in 0..400u32 {
            let c = f64::from(k) * 1e6 / 60.0 + 4_000.0;
            f.push_edge(0, true, (c - 1_500.0) as u32, |cy| last = cy.health);
            f.push_edge(0, false, (c + 1_500.0) as u32, |cy| last = cy.health);
        }
        assert_eq!(last, MainsHealth::OutOfRange);
        assert!((59_900..=60_100).contains(&f.mains().apparent_mhz()));
    }

    #[test]
    fn construction_errors_name_the_field() {
        let cfg = Config::touch();
        let bad = [
            (EdgeConfig::new(999, TimerWidth::Bits32), "tick_hz"),
            (EdgeConfig::new(2_000_000, TimerWidth::Bits16), "tick_hz"),
            (
                EdgeConfig::new(1_000_000, TimerWidth::Bits32).with_glitch_ticks(1_516),
                "glitch_ticks",
            ),
            (
                EdgeConfig::new(1_000_000, TimerWidth::Bits32).with_hysteresis_permille(1_001),
                "hysteresis_permille",
            ),
            (
                EdgeConfig {
                    stuck_high_cycles: 3_000,
                    ..EdgeConfig::new(1_000_000, TimerWidth::Bits32)
                },
                "stuck_high_cycles",
            ),
        ];
        for (e, field) in bad {
            match EdgeFrontend::<1>::new(&e, &cfg) {
                Err(ConfigError::OutOfRange { field: f, .. }) => assert_eq!(f, field),
                other => panic!("{field}: {other:?}"),
            }
        }
        assert!(
            EdgeFrontend::<1>::new(&EdgeConfig::new(1_000_000, TimerWidth::Bits16), &cfg).is_ok()
        );
        assert!(
            EdgeFrontend::<1>::new(&EdgeConfig::new(1_441_791, TimerWidth::Bits16), &cfg).is_ok()
        );
    }
}
