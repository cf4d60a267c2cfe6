//! One channel's edge state: the confirmed level, the edge waiting for the
//! glitch filter, the pulse in progress, this window's sums, and the
//! confirmation of an edge into a pulse with its coherence check.

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

/// Per-channel state of the edge front end.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub(super) struct EdgeChannel {
    /// Confirmed level: true while the hum is above the threshold.
    pub(super) active: bool,
    /// An edge waiting for the glitch filter (to `!active`), and its time.
    pub(super) pending: bool,
    pub(super) pending_t: u64,
    /// Time of the latest edge taken (pending or not), for the order check.
    pub(super) last_t: u64,
    /// Time of the latest confirmed rising (activating) edge, if any.
    pub(super) rise: Option<u64>,
    /// Centre of the previous pulse, if any.
    pub(super) centre: Option<u64>,
    /// This window: confirmed edges, coherent widths and their count,
    /// and whether anything incoherent happened.
    pub(super) edges: u16,
    pub(super) width_sum: u64,
    pub(super) widths: u8,
    pub(super) bad: bool,
    /// Latest amplitude reported, Q8 codes.
    pub(super) amp_q8: u32,
    /// Whole windows active in a row.
    pub(super) active_run: u32,
    pub(super) stats: EdgeStats,
}

impl EdgeChannel {
    pub(super) const NEW: Self = Self {
        active: false,
        pending: false,
        pending_t: 0,
        last_t: 0,
        rise: None,
        centre: None,
        edges: 0,
        width_sum: 0,
        widths: 0,
        bad: false,
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
}

/// Confirms channel `c`'s pending edge at `t`: the level changes, and a
/// falling edge completes a pulse. Returns the pulse-centre interval(s) to
/// add to the tracker's sums (sum, count). Per edge: shifts, adds and
/// compares only.
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
#[inline]
pub(super) fn confirm(
    c: &mut EdgeChannel,
    t: u64,
    accept: (u32, u32),
    period: u32,
    tracking: bool,
) -> Option<(u64, u32)> {
    c.pending = false;
    c.active = !c.active;
    c.edges = c.edges.saturating_add(1);
    if c.active {
        c.rise = Some(t);
        return None;
    }
    let rise = c.rise.take()?;
    let width = t.saturating_sub(rise);
    let centre = rise + (width >> 1);
    let (lo, hi) = (u64::from(accept.0), u64::from(accept.1));
    let fits = |iv: u64| iv >= lo && iv <= hi;
    if !tracking {
        let interval = centre.saturating_sub(c.centre.replace(centre)?);
        return fits(interval).then_some((interval, 1));
    }
    let Some(reference) = c.centre else {
        c.centre = Some(centre);
        return None;
    };
    let p = u64::from(period);
    let interval = centre.saturating_sub(reference);
    let k = if fits(interval) {
        1
    } else if fits(interval.saturating_sub(p)) {
        2
    } else if fits(interval.saturating_sub(2 * p)) {
        3
    } else {
        0
    };
    if k != 0 && width < p {
        c.centre = Some(centre);
        c.width_sum += width;
        c.widths = c.widths.saturating_add(1);
        c.stats.pulses = c.stats.pulses.saturating_add(1);
        match k {
            1 => Some((interval, 1)),
            2 => Some((interval, 2)),
            _ => None,
        }
    } else {
        c.bad = true;
        c.stats.incoherent_pulses = c.stats.incoherent_pulses.saturating_add(1);
        if interval > 2 * p + hi {
            c.centre = Some(centre);
        }
        None
    }
}
