//! One channel's edge state: the queue of edges not yet taken, the
//! confirmed level, the edge waiting for the glitch filter, the pulse in
//! progress, this window's sums, and the taking of an edge (level check,
//! glitch filter, confirmation into a pulse with its coherence check).
//!
//! Times here are the low 32 bits of the front end's 64-bit tick count,
//! compared by wrapping differences (the age of a time is `now − t`). That
//! is exact while every age is below 2^32 ticks; [`EdgeChannel::cap_ages`],
//! run at each window end, holds the ages of the stored times at 2^31 or
//! less, which keeps them so (see there).

/// State bit: the confirmed level is active (the hum above the threshold).
pub(super) const ACTIVE: u8 = 1;
/// State bit: an edge (to the other level) waits for the glitch filter.
pub(super) const PENDING: u8 = 2;
/// State bit: a reference pulse centre is stored.
pub(super) const CENTRE: u8 = 4;
/// Added to the state for the new edge's level, to test both in one
/// compare.
pub(super) const TO_ACTIVE: u8 = 8;

/// Largest age kept for a stored time (2^31 ticks; see
/// [`EdgeChannel::cap_ages`]).
const AGE_CAP: u32 = 1 << 31;

/// Counts of what one channel's input looked like, since construction
/// (each saturating).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct EdgeStats {
    /// Edges rejected for a time before the channel's previous edge.
    pub out_of_order: u32,
    /// Edges rejected for going to the level the channel was already at.
    pub same_level: u32,
    /// Edge pairs cancelled by the glitch filter.
    pub glitches: u32,
    /// Coherent pulses measured.
    pub pulses: u32,
    /// Pulses that were not coherent (interval off the period, or too
    /// wide).
    pub incoherent_pulses: u32,
    /// Windows whose amplitude was held (incoherent or no complete pulse).
    pub held_windows: u32,
}

/// Per-channel state of the edge front end. `repr(C)` with the bytes
/// first: the per-edge path reaches every field with one load or store on
/// a Cortex-M0 (byte offsets below 32, word offsets below 128).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[repr(C)]
pub(super) struct EdgeChannel {
    /// [`ACTIVE`], [`PENDING`], [`CENTRE`].
    pub(super) state: u8,
    /// This window: confirmed edges (saturating), coherent pulses, and
    /// whether anything incoherent happened. Coherent pulses of one window
    /// are at most three (their centres lie at least 15/16 of a period
    /// apart, within the window or half a period and the glitch filter
    /// before it), so their count cannot wrap.
    pub(super) edges: u8,
    pub(super) widths: u8,
    pub(super) bad: bool,
    /// Time of the latest edge taken (the pending edge's while one waits),
    /// for the order check and the glitch filter.
    pub(super) last_t: u32,
    /// Time of the latest confirmed activating edge (meaningful while
    /// [`ACTIVE`]: every active level began with one).
    pub(super) rise: u32,
    /// Centre of the reference pulse (meaningful with [`CENTRE`]).
    pub(super) centre: u32,
    /// Whether the reference is a coherent pulse's: one no coherent pulse
    /// has confirmed (the first of a train) gives way to the next pulse.
    pub(super) confirmed: bool,
    /// This window: sum of the coherent pulses' widths, ticks.
    pub(super) width_sum: u32,
    /// Latest amplitude reported, Q8 codes.
    pub(super) amp_q8: u32,
    /// Whole windows active in a row.
    pub(super) active_run: u32,
    /// Counts since construction; `pulses` without this window's `widths`
    /// (added when the window ends: [`EdgeChannel::stats`] reports both).
    pub(super) stats: EdgeStats,
}

impl EdgeChannel {
    pub(super) const NEW: Self = Self {
        state: 0,
        edges: 0,
        widths: 0,
        bad: false,
        last_t: 0,
        rise: 0,
        centre: 0,
        confirmed: false,
        width_sum: 0,
        amp_q8: 0,
        active_run: 0,
        stats: EdgeStats {
            out_of_order: 0,
            same_level: 0,
            glitches: 0,
            pulses: 0,
            incoherent_pulses: 0,
            held_windows: 0,
        },
    };

    /// The confirmed level.
    #[inline]
    pub(super) const fn active(&self) -> bool {
        self.state & ACTIVE != 0
    }

    /// Whether an edge waits for the glitch filter.
    #[inline]
    pub(super) const fn pending(&self) -> bool {
        self.state & PENDING != 0
    }

    /// The level the channel is at once its pending edge is confirmed.
    #[inline]
    pub(super) const fn level(&self) -> bool {
        self.active() != self.pending()
    }

    /// The counts, this window's coherent pulses included.
    pub(super) const fn stats(&self) -> EdgeStats {
        let mut s = self.stats;
        s.pulses = s.pulses.saturating_add(self.widths as u32);
        s
    }

    /// Ends the window's pulse count: this window's coherent pulses go to
    /// the counts.
    pub(super) fn count_pulses(&mut self) {
        self.stats.pulses = self.stats.pulses.saturating_add(u32::from(self.widths));
        self.widths = 0;
    }

    /// Holds the age (`now − t`) of every stored time at 2^31 ticks or
    /// less, by moving older times forward to `now − 2^31`. Per window.
    ///
    /// Between two window ends the clock moves by less than a period, plus
    /// one call's step (less than half the timer's range, at most 2^31 −
    /// 1), so ages stay below 2^32 and every wrapping difference is exact.
    /// Nothing the front end decides changes: an edge handed over late is
    /// at most 2^31 ticks back, so it is behind a time of age 2^31 or more
    /// in both cases; a glitch filter is far shorter; a pulse older than
    /// 2^31 ticks is wider than any period (incoherent either way), and a
    /// reference centre of that age is more than three periods back
    /// (replaced by the next pulse's either way).
    pub(super) fn cap_ages(&mut self, now: u32) {
        let floor = now.wrapping_sub(AGE_CAP);
        if now.wrapping_sub(self.last_t) > AGE_CAP {
            self.last_t = floor;
        }
        if self.active() && now.wrapping_sub(self.rise) > AGE_CAP {
            self.rise = floor;
        }
        if self.state & CENTRE != 0 && now.wrapping_sub(self.centre) > AGE_CAP {
            self.centre = floor;
        }
    }
}

/// The per-edge checks that come from the mains period tracker, copied by
/// the front end whenever the tracker changes (once a window at most).
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub(super) struct Accept {
    /// Shortest interval accepted, ticks.
    pub(super) lo: u32,
    /// Longest accepted minus shortest, ticks (`iv − lo ≤ span` is one
    /// unsigned compare).
    pub(super) span: u32,
    /// The period, ticks, while the tracker is tracking on a pulse input;
    /// 0 while it acquires (or on a level input).
    pub(super) period: u32,
}

/// Edges a channel's queue holds.
pub(super) const QUEUE: u32 = 3;

/// Edges of one channel handed over but not yet taken: the interrupt side
/// of [`EdgeFrontend::push_edge`](super::EdgeFrontend::push_edge) only
/// stores the edge's time here; the edges are taken in order (level check,
/// glitch filter, pulses) when the queue is full, at the end of the window,
/// or before anything else looks at the channel. Taking an edge depends on
/// nothing but the channel's state, the edge's time and the tracker's
/// bounds (which change only at a window's end), so the result is the same
/// as taking each edge as it comes.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[repr(C)]
pub(super) struct EdgeQueue {
    /// `2·n + level`: `n` edges queued, `level` the pin's level (high: 1)
    /// after the last of them (or, with none queued, after the edges
    /// taken). Queued edges alternate, the last at `level`.
    pub(super) x: u32,
    /// Their timer counts (masked), oldest first: the front end turns
    /// them into times when it takes them.
    pub(super) times: [u32; QUEUE as usize],
}

impl EdgeQueue {
    /// An empty queue with the pin at `high`.
    pub(super) const fn new(high: bool) -> Self {
        Self {
            x: high as u32,
            times: [0; QUEUE as usize],
        }
    }

    /// Queues an edge to `high` at count `t` if it goes to the other level and
    /// there is room; false otherwise (nothing changes).
    #[inline(always)]
    pub(super) fn push(&mut self, high: bool, t: u32) -> bool {
        let y = self.x ^ high as u32;
        let n = y >> 1;
        // Odd: `high` differs from the level after the last edge.
        if y & 1 == 0 || n >= QUEUE {
            return false;
        }
        let Some(slot) = self.times.get_mut(n as usize) else {
            return false;
        };
        *slot = t;
        // n + 1 edges, the last at `high`: 2·(n + 1) + high = y + 1 + high.
        self.x = y + 1 + high as u32;
        true
    }

    /// Edges queued.
    pub(super) const fn len(&self) -> u32 {
        self.x >> 1
    }

    /// Queued edge `i` (oldest first): whether it goes high, and its count.
    pub(super) fn get(&self, i: u32) -> (bool, u32) {
        let last_high = self.x & 1 != 0;
        // The last edge is at `last_high`, the one before at the other...
        let high = last_high != ((self.len() - 1 - i) & 1 != 0);
        (high, self.times.get(i as usize).copied().unwrap_or(0))
    }

    /// Empties the queue, the pin at `high`.
    pub(super) fn reset(&mut self, high: bool) {
        self.x = high as u32;
    }
}

/// Takes one edge of channel `c` (`active`: to the active level) at `t`, no
/// earlier than the channel's latest edge: level check, the glitch filter,
/// then the edge before this one confirmed. Returns the pulse-centre
/// interval(s) for the tracker's sums (sum, count). The common cases here
/// (a rise confirmed; a coherent pulse one period after the reference),
/// the rest in [`take_slow`].
#[inline(always)]
pub(super) fn take(
    c: &mut EdgeChannel,
    active: bool,
    t: u32,
    glitch: u32,
    a: &Accept,
) -> Option<(u32, u32)> {
    let key = c.state | (active as u8) << 3;
    let pending_t = c.last_t;
    if t.wrapping_sub(pending_t) >= glitch {
        if key == PENDING | CENTRE {
            c.rise = pending_t;
            c.edges = c.edges.saturating_add(1);
            c.state = ACTIVE | PENDING | CENTRE;
            c.last_t = t;
            return None;
        }
        if key == ACTIVE | PENDING | CENTRE | TO_ACTIVE {
            let rise = c.rise;
            let width = pending_t.wrapping_sub(rise);
            let centre = rise.wrapping_add(width >> 1);
            let interval = centre.wrapping_sub(c.centre);
            // `period` is 0 unless tracking: then this fails.
            if width < a.period && interval.wrapping_sub(a.lo) <= a.span {
                c.centre = centre;
                c.confirmed = true;
                c.width_sum = c.width_sum.wrapping_add(width);
                c.widths = c.widths.wrapping_add(1);
                c.edges = c.edges.saturating_add(1);
                c.state = PENDING | CENTRE;
                c.last_t = t;
                return Some((interval, 1));
            }
        }
    }
    take_slow(c, active, t, glitch, a)
}

/// [`take`] in full.
#[inline(never)]
pub(super) fn take_slow(
    c: &mut EdgeChannel,
    active: bool,
    t: u32,
    glitch: u32,
    a: &Accept,
) -> Option<(u32, u32)> {
    if active == c.level() {
        c.stats.same_level = c.stats.same_level.saturating_add(1);
        c.bad = true;
        return None;
    }
    let pending_t = c.last_t;
    c.last_t = t;
    let mut out = None;
    if c.pending() {
        if t.wrapping_sub(pending_t) < glitch {
            c.state &= !PENDING;
            c.stats.glitches = c.stats.glitches.saturating_add(1);
            return None;
        }
        out = confirm(c, pending_t, a);
    }
    c.state |= PENDING;
    out
}

/// Confirms channel `c`'s pending edge at `t`: the level changes, and a
/// falling edge completes a pulse. Returns the pulse-centre interval(s) to
/// add to the tracker's sums (sum, count). Per edge: shifts, adds and
/// compares only. The front end's per-edge path does the common cases
/// itself (a rise; a coherent pulse one period after the reference) and
/// comes here for the rest.
///
/// While acquiring, the interval is from the previous pulse's centre and is
/// returned when it lies within `accept`. While tracking, the reference is
/// the centre of the last coherent pulse, and a pulse is coherent when its
/// centre lies `k·P` after it within `accept` (shifted by `(k − 1)·P`) for
/// `k` = 1, 2 or 3 (up to two pulses lost or incoherent in between) and its
/// width is less than `P`. An incoherent pulse leaves the reference where
/// it was, so a disturbance that shifts several pulses alike (interference
/// holding the pin past its falling edge two cycles in a row) is not taken
/// for a train of its own; once the reference is more than three periods
/// old, an incoherent pulse becomes the new reference (a train that
/// started, or whose phase moved, is followed after one more pulse).
pub(super) fn confirm(c: &mut EdgeChannel, t: u32, a: &Accept) -> Option<(u32, u32)> {
    c.state ^= ACTIVE;
    c.state &= !PENDING;
    c.edges = c.edges.saturating_add(1);
    if c.active() {
        c.rise = t;
        return None;
    }
    // A confirmed fall follows a confirmed rise (module docs).
    let width = t.wrapping_sub(c.rise);
    let centre = c.rise.wrapping_add(width >> 1);
    let fits = |iv: u32| iv.wrapping_sub(a.lo) <= a.span;
    let had_centre = c.state & CENTRE != 0;
    let reference = c.centre;
    if a.period == 0 {
        c.centre = centre;
        c.confirmed = false;
        c.state |= CENTRE;
        if !had_centre {
            return None;
        }
        let interval = centre.wrapping_sub(reference);
        return fits(interval).then_some((interval, 1));
    }
    if !had_centre {
        c.centre = centre;
        c.confirmed = false;
        c.state |= CENTRE;
        return None;
    }
    // Centres follow each other: the difference is the interval.
    let p = a.period;
    let interval = centre.wrapping_sub(reference);
    let k = if fits(interval) {
        1
    } else if interval >= p && fits(interval - p) {
        2
    } else if interval >= 2 * p && fits(interval - 2 * p) {
        3
    } else {
        0
    };
    if k != 0 && width < p {
        c.centre = centre;
        c.confirmed = true;
        c.width_sum = c.width_sum.wrapping_add(width);
        c.widths = c.widths.wrapping_add(1);
        match k {
            1 => Some((interval, 1)),
            2 => Some((interval, 2)),
            _ => None,
        }
    } else {
        c.bad = true;
        c.stats.incoherent_pulses = c.stats.incoherent_pulses.saturating_add(1);
        // A reference more than three periods old, or one no coherent
        // pulse has confirmed (a train's first pulse, which a touch's
        // rising hum often clips short and off the crest), gives way.
        if interval > 2 * p + a.lo + a.span || !c.confirmed {
            c.centre = centre;
            c.confirmed = false;
        }
        None
    }
}
