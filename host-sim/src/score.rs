//! Scoring detector events against ground-truth labels.
//!
//! Labels are intervals `channel,kind,start_s,end_s` (the simulator's
//! `FILE.labels.csv`, or hand-made for a logged board). One kind is scored
//! at a time: `touch` labels against `touch-on`/`touch-off` events, or
//! `field` labels against `field-on`/`field-off`.
//!
//! ## Matching rules
//! Per channel, with an event's time `t = sample / rate`:
//! 1. An on event is a candidate for a label of its channel when
//!    `start_s − early_s ≤ t ≤ end_s + grace_s` and the label is not yet
//!    matched. Among the candidates it takes the one that started last (so a
//!    missed touch does not steal the on event of the touch after it). Each
//!    label is matched at most once.
//! 2. An on event that matches no label is a **false event** (this includes
//!    a second on event within one touch: a touch reported twice).
//! 3. A label no on event matched is **missed**.
//! 4. On latency = `t_on − start_s` (negative only with `early_s > 0`).
//! 5. The off event of a matched on event is the first off event of the
//!    channel after it and before the channel's next on event; off latency
//!    = `t_off − end_s` (negative when the detector released before the
//!    label ended, e.g. through `max_active_cycles`). A matched label with
//!    no such off event counts in `off_missing`.
//! 6. Off events that follow a false on event, `level` events, faults and
//!    fault clears are not touches: they are never false events. Faults are
//!    counted separately. Events of the other kind (a `field-on` when
//!    touches are scored) are ignored, and so are labels of the other kind.
//!
//! Latency statistics: the median is the middle value (the mean of the two
//! middle values for an even count); the 95th percentile uses the
//! nearest-rank method, the value at rank `⌈0.95·n⌉` of the sorted list
//! (the textbook definition, from memory); max is the largest value.

use crate::labels::{Label, LabelKind};
use humsense::{Event, EventKind};
use std::fmt::Write as _;

/// How events are matched to labels (see the module docs).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ScoreOptions {
    /// Which labels are scored, and so which events are on/off events.
    pub kind: LabelKind,
    /// How long after a label's end an on event still counts for it, seconds.
    pub grace_s: f64,
    /// How long before a label's start an on event already counts for it,
    /// seconds.
    pub early_s: f64,
}

impl ScoreOptions {
    /// Touches: on events from the label's start to 0.25 s after its end.
    pub const TOUCH: ScoreOptions = ScoreOptions {
        kind: LabelKind::Touch,
        grace_s: 0.25,
        early_s: 0.0,
    };

    /// Fields: the field profile averages over several cycles and turns on
    /// at 1.5x the ambient hum, before a conductor's coupling reaches the
    /// labels' `field_ratio`; an on event counts from 3 s before the
    /// interval to 3 s after it.
    pub const FIELD: ScoreOptions = ScoreOptions {
        kind: LabelKind::Field,
        grace_s: 3.0,
        early_s: 3.0,
    };

    /// The defaults for `kind`.
    pub const fn for_kind(kind: LabelKind) -> ScoreOptions {
        match kind {
            LabelKind::Touch => Self::TOUCH,
            LabelKind::Field => Self::FIELD,
        }
    }
}

/// Median, 95th percentile and maximum of a list of latencies, ms.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LatencyStats {
    /// Number of values.
    pub count: usize,
    /// Median, ms.
    pub median_ms: f64,
    /// 95th percentile (nearest rank), ms.
    pub p95_ms: f64,
    /// Maximum, ms.
    pub max_ms: f64,
}

impl LatencyStats {
    /// The statistics of `values_ms` (any order); `None` when empty or when
    /// a value is not finite.
    pub fn of(values_ms: &[f64]) -> Option<LatencyStats> {
        if values_ms.is_empty() || values_ms.iter().any(|v| !v.is_finite()) {
            return None;
        }
        let mut v = values_ms.to_vec();
        v.sort_by(f64::total_cmp);
        let n = v.len();
        let median = if n % 2 == 1 {
            v[n / 2]
        } else {
            (v[n / 2 - 1] + v[n / 2]) / 2.0
        };
        // Nearest rank: the smallest value with at least 95 % at or below it.
        let rank = (n * 95).div_ceil(100).max(1);
        Some(LatencyStats {
            count: n,
            median_ms: median,
            p95_ms: v[rank - 1],
            max_ms: v[n - 1],
        })
    }
}

/// The score of one channel.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ChannelScore {
    /// Channel name.
    pub name: String,
    /// Labels of the scored kind on this channel.
    pub labels: usize,
    /// Labels matched by an on event.
    pub detected: usize,
    /// Labels no on event matched.
    pub missed: usize,
    /// On events that matched no label.
    pub false_events: usize,
    /// Matched labels whose on event was never followed by an off event.
    pub off_missing: usize,
    /// Fault events on this channel (not scored as touches).
    pub faults: usize,
    /// On latency of each matched label, ms, in label order.
    pub on_latency_ms: Vec<f64>,
    /// Off latency of each matched label that has an off event, ms.
    pub off_latency_ms: Vec<f64>,
    /// Start time of each missed label, seconds.
    pub missed_at_s: Vec<f64>,
    /// Time of each false on event, seconds.
    pub false_at_s: Vec<f64>,
}

/// The score of a run: one entry per channel, in input column order.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Score {
    /// Per channel.
    pub channels: Vec<ChannelScore>,
}

impl Score {
    /// Labels over all channels.
    pub fn labels(&self) -> usize {
        self.channels.iter().map(|c| c.labels).sum()
    }
    /// Detected labels over all channels.
    pub fn detected(&self) -> usize {
        self.channels.iter().map(|c| c.detected).sum()
    }
    /// Missed labels over all channels.
    pub fn missed(&self) -> usize {
        self.channels.iter().map(|c| c.missed).sum()
    }
    /// False events over all channels.
    pub fn false_events(&self) -> usize {
        self.channels.iter().map(|c| c.false_events).sum()
    }
    /// Faults over all channels.
    pub fn faults(&self) -> usize {
        self.channels.iter().map(|c| c.faults).sum()
    }
    /// Matched labels without an off event, over all channels.
    pub fn off_missing(&self) -> usize {
        self.channels.iter().map(|c| c.off_missing).sum()
    }
    /// On latency statistics over all channels.
    pub fn on_latency(&self) -> Option<LatencyStats> {
        let all: Vec<f64> = self
            .channels
            .iter()
            .flat_map(|c| c.on_latency_ms.iter().copied())
            .collect();
        LatencyStats::of(&all)
    }
    /// Off latency statistics over all channels.
    pub fn off_latency(&self) -> Option<LatencyStats> {
        let all: Vec<f64> = self
            .channels
            .iter()
            .flat_map(|c| c.off_latency_ms.iter().copied())
            .collect();
        LatencyStats::of(&all)
    }
    /// Every label detected exactly once and no false event.
    pub fn perfect(&self) -> bool {
        self.missed() == 0 && self.false_events() == 0
    }

    /// A table for people: one row per channel and a total row.
    pub fn table(&self) -> String {
        let mut s = String::new();
        let stats = |l: Option<LatencyStats>| match l {
            Some(l) => format!("{:>7.1} {:>7.1} {:>7.1}", l.median_ms, l.p95_ms, l.max_ms),
            None => format!("{:>7} {:>7} {:>7}", "-", "-", "-"),
        };
        let _ = writeln!(
            s,
            "{:<12} {:>6} {:>8} {:>6} {:>6} {:>6} | {:^23} | {:^23}",
            "channel",
            "labels",
            "detected",
            "missed",
            "false",
            "faults",
            "on latency ms",
            "off latency ms"
        );
        let _ = writeln!(
            s,
            "{:<12} {:>6} {:>8} {:>6} {:>6} {:>6} | {:>7} {:>7} {:>7} | {:>7} {:>7} {:>7}",
            "", "", "", "", "", "", "median", "p95", "max", "median", "p95", "max"
        );
        for c in &self.channels {
            let _ = writeln!(
                s,
                "{:<12} {:>6} {:>8} {:>6} {:>6} {:>6} | {} | {}",
                c.name,
                c.labels,
                c.detected,
                c.missed,
                c.false_events,
                c.faults,
                stats(LatencyStats::of(&c.on_latency_ms)),
                stats(LatencyStats::of(&c.off_latency_ms)),
            );
        }
        let _ = writeln!(
            s,
            "{:<12} {:>6} {:>8} {:>6} {:>6} {:>6} | {} | {}",
            "all",
            self.labels(),
            self.detected(),
            self.missed(),
            self.false_events(),
            self.faults(),
            stats(self.on_latency()),
            stats(self.off_latency()),
        );
        for c in &self.channels {
            for t in &c.missed_at_s {
                let _ = writeln!(s, "missed: {} label starting at {t:.3} s", c.name);
            }
            for t in &c.false_at_s {
                let _ = writeln!(s, "false: {} on event at {t:.4} s", c.name);
            }
        }
        s
    }
}

fn on_off(kind: LabelKind) -> (EventKind, EventKind) {
    match kind {
        LabelKind::Touch => (EventKind::TouchOn, EventKind::TouchOff),
        LabelKind::Field => (EventKind::FieldOn, EventKind::FieldOff),
    }
}

/// Scores detector `events` (as emitted, in time order per channel; time =
/// `sample / rate_hz`) against `labels`, for the channels named
/// `channels` in event channel-index order, by the rules in the module docs.
///
/// Errors (as a message) when a label names a channel not in `channels`,
/// when an event's channel index has no name, or when `rate_hz` is not a
/// positive number. Never panics.
///
/// ```
/// use humsense::{Event, EventKind};
/// use humsim::labels::{Label, LabelKind};
/// use humsim::score::{score_events, ScoreOptions};
/// let labels = vec![Label { channel: "pad".into(), kind: LabelKind::Touch, start_s: 1.0, end_s: 1.5 }];
/// // touch-on at sample 2080 (1.04 s at 2 kHz), touch-off at 3100 (1.55 s).
/// let events = [
///     Event::new(0, EventKind::TouchOn, 2080, 0, 0),
///     Event::new(0, EventKind::TouchOff, 3100, 0, 0),
/// ];
/// let s = score_events(&events, 2000.0, &["pad".to_string()], &labels, &ScoreOptions::TOUCH)?;
/// assert_eq!((s.detected(), s.missed(), s.false_events()), (1, 0, 0));
/// assert!((s.channels[0].on_latency_ms[0] - 40.0).abs() < 1e-9);
/// assert!((s.channels[0].off_latency_ms[0] - 50.0).abs() < 1e-9);
/// # Ok::<(), String>(())
/// ```
pub fn score_events(
    events: &[Event],
    rate_hz: f64,
    channels: &[String],
    labels: &[Label],
    opts: &ScoreOptions,
) -> Result<Score, String> {
    if !(rate_hz.is_finite() && rate_hz > 0.0) {
        return Err(format!(
            "sample rate must be a positive number, got {rate_hz}"
        ));
    }
    let mut per_ch: Vec<Vec<&Label>> = vec![Vec::new(); channels.len()];
    for l in labels.iter().filter(|l| l.kind == opts.kind) {
        let Some(i) = channels.iter().position(|c| *c == l.channel) else {
            return Err(format!(
                "label for channel `{}` ({} s to {} s), but the input's channels are: {}",
                l.channel,
                l.start_s,
                l.end_s,
                channels.join(", ")
            ));
        };
        if let Some(v) = per_ch.get_mut(i) {
            v.push(l);
        }
    }
    let (on_kind, off_kind) = on_off(opts.kind);
    let mut score = Score::default();
    for (ci, (name, ch_labels)) in channels.iter().zip(per_ch.iter_mut()).enumerate() {
        ch_labels.sort_by(|a, b| {
            a.start_s
                .total_cmp(&b.start_s)
                .then(a.end_s.total_cmp(&b.end_s))
        });
        let mut cs = ChannelScore {
            name: name.clone(),
            labels: ch_labels.len(),
            ..ChannelScore::default()
        };
        let ch_events: Vec<(f64, EventKind)> = events
            .iter()
            .filter(|e| usize::from(e.channel) == ci)
            .map(|e| (e.sample as f64 / rate_hz, e.kind))
            .collect();
        // matched[k] = Some(index into ch_events of the on event).
        let mut matched: Vec<Option<usize>> = vec![None; ch_labels.len()];
        for (ei, &(t, kind)) in ch_events.iter().enumerate() {
            match kind {
                k if k == on_kind => {
                    let best = ch_labels
                        .iter()
                        .enumerate()
                        .filter(|(k, l)| {
                            matched.get(*k).is_some_and(Option::is_none)
                                && t >= l.start_s - opts.early_s
                                && t <= l.end_s + opts.grace_s
                        })
                        .max_by(|a, b| a.1.start_s.total_cmp(&b.1.start_s))
                        .map(|(k, _)| k);
                    match best.and_then(|k| matched.get_mut(k)) {
                        Some(slot) => *slot = Some(ei),
                        None => {
                            cs.false_events += 1;
                            cs.false_at_s.push(t);
                        }
                    }
                }
                EventKind::Fault(_) => cs.faults += 1,
                _ => {}
            }
        }
        for (l, m) in ch_labels.iter().zip(&matched) {
            let Some(ei) = *m else {
                cs.missed += 1;
                cs.missed_at_s.push(l.start_s);
                continue;
            };
            cs.detected += 1;
            let Some(&(t_on, _)) = ch_events.get(ei) else {
                continue;
            };
            cs.on_latency_ms.push((t_on - l.start_s) * 1000.0);
            let off = ch_events
                .get(ei + 1..)
                .unwrap_or(&[])
                .iter()
                .take_while(|(_, k)| *k != on_kind)
                .find(|(_, k)| *k == off_kind);
            match off {
                Some(&(t_off, _)) => cs.off_latency_ms.push((t_off - l.end_s) * 1000.0),
                None => cs.off_missing += 1,
            }
        }
        score.channels.push(cs);
    }
    if let Some(e) = events
        .iter()
        .find(|e| usize::from(e.channel) >= channels.len() && e.channel != Event::ALL_CHANNELS)
    {
        return Err(format!(
            "event on channel index {} but only {} channel names were given",
            e.channel,
            channels.len()
        ));
    }
    Ok(score)
}
