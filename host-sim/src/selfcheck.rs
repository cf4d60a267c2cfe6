//! Every built-in scenario scored against its own labels with a given
//! configuration: what `tests/builtins_detect.rs` holds to (default
//! settings) and what the latency benchmark (`benches/latency.rs`) prints.
//!
//! Touch labels are scored with the touch profile, field labels with the
//! field profile. In a scenario with both, a live conductor near the pad may
//! look like a touch to the touch profile and a finger like a field to the
//! field profile: on/off pairs that begin inside an interval of the other
//! kind are left out of that score (a field interval with the field
//! scorer's 3 s margins, since its edges are defined by a coupling ratio,
//! not by what the touch profile sees; a touch from its start to 1 s after
//! its end).

use humsense::{Config, Event, EventKind, Profile};

use crate::input::RenderSource;
use crate::labels::{Label, LabelKind};
use crate::replay::{config_for, replay};
use crate::scenario::{RenderOptions, Scenario};
use crate::score::{score_events, Score, ScoreOptions};

/// Longest stretch of a built-in that is scored, seconds (the 24-hour
/// bench repeats a shorter timeline).
pub const MAX_SECONDS: f64 = 120.0;

/// The profile that scores labels of `kind`.
pub fn profile_for(kind: LabelKind) -> Profile {
    if kind == LabelKind::Field {
        Profile::Field
    } else {
        Profile::Touch
    }
}

/// Renders built-in `name` (its first [`MAX_SECONDS`]), runs the detector
/// with the default configuration of `kind`'s profile changed by `adjust`,
/// and scores the events against the labels of `kind`. `Ok(None)` when the
/// scenario has no labels of that kind.
pub fn score_builtin(
    name: &str,
    kind: LabelKind,
    adjust: &dyn Fn(&mut Config),
) -> Result<Option<Score>, String> {
    let s = Scenario::builtin(name).map_err(|e| e.to_string())?;
    score_scenario(&s, kind, adjust)
}

/// [`score_builtin`] for any scenario.
pub fn score_scenario(
    s: &Scenario,
    kind: LabelKind,
    adjust: &dyn Fn(&mut Config),
) -> Result<Option<Score>, String> {
    let seconds = s.duration_s().min(MAX_SECONDS);
    let (labels, other): (Vec<Label>, Vec<Label>) =
        s.labels(seconds).into_iter().partition(|l| l.kind == kind);
    if labels.is_empty() {
        return Ok(None);
    }
    let render = s
        .render(&RenderOptions {
            seconds: Some(seconds),
            seed: None,
        })
        .map_err(|e| e.to_string())?;
    let mut src = RenderSource::new(render);
    let mut cfg = config_for(&src, Some(profile_for(kind)), None, None)?;
    adjust(&mut cfg);
    let out = replay(&mut src, &cfg, &mut |_| Ok(()), None, true)?;
    let all: Vec<Label> = labels.into_iter().chain(other).collect();
    score_labelled(&out.events, s.adc.rate_hz, &s.channel_names(), kind, &all).map(Some)
}

/// Scores `events` of a run (time = `sample / rate_hz`, channels named
/// `names` in index order) against the labels of `kind` among `labels`,
/// leaving out the on/off pairs that begin inside an interval of the other
/// kind (the module docs say which); the rules of
/// [`crate::score`] with [`ScoreOptions::for_kind`]. What
/// [`score_scenario`] does after its replay, for events of any detector.
pub fn score_labelled(
    events: &[Event],
    rate_hz: f64,
    names: &[String],
    kind: LabelKind,
    labels: &[Label],
) -> Result<Score, String> {
    let (labels, other): (Vec<&Label>, Vec<&Label>) = labels.iter().partition(|l| l.kind == kind);
    let labels: Vec<Label> = labels.into_iter().cloned().collect();
    let rate = rate_hz;
    let (before, after) = if kind == LabelKind::Touch {
        (3.0, 3.0)
    } else {
        (0.0, 1.0)
    };
    let inside_other = |e: &Event| {
        let t = e.sample as f64 / rate;
        let ch = names.get(usize::from(e.channel)).map_or("", String::as_str);
        other
            .iter()
            .any(|l| l.channel == ch && t >= l.start_s - before && t <= l.end_s + after)
    };
    let mut skip_off = vec![false; names.len()];
    let events: Vec<Event> = events
        .iter()
        .copied()
        .filter(|e| {
            let ch = usize::from(e.channel);
            match e.kind {
                EventKind::TouchOn | EventKind::FieldOn if inside_other(e) => {
                    if let Some(f) = skip_off.get_mut(ch) {
                        *f = true;
                    }
                    false
                }
                EventKind::TouchOff | EventKind::FieldOff
                    if skip_off.get(ch).copied().unwrap_or(false) =>
                {
                    if let Some(f) = skip_off.get_mut(ch) {
                        *f = false;
                    }
                    false
                }
                _ => true,
            }
        })
        .collect();
    score_events(&events, rate, names, &labels, &ScoreOptions::for_kind(kind))
}
