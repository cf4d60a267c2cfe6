//! Tuning the reference detectors ([`super::reference`]) to their best on
//! labelled tuning data, so that the comparison with humsense is against
//! each reference at its best and not at a setting picked by hand.
//!
//! ## Objective ([`Objective`])
//! Over every case of the tuning set, scored as the built-ins are scored
//! ([`crate::selfcheck::score_labelled`], touch labels, [`crate::score`]'s
//! rules): first the **errors**, missed touches plus false touch-on events
//! (each counts one, an ambient-only case's false events included); among
//! settings with equal errors, the lower **latency**: the 95th percentile of
//! touch-on latency plus that of touch-off latency, pooled over all the
//! touches detected (ms; a setting that detects nothing has infinite
//! latency). A setting replaces the best found only when it is strictly
//! better, so ties keep the earlier one.
//!
//! ## Search ([`tune`])
//! Coordinate descent on a grid ([`Space`]): from a starting point, each
//! axis in turn is swept over all of its values with the others held, and
//! the best value kept; rounds repeat until one changes nothing or the
//! round limit is reached. Points already evaluated are not run again. The
//! values of one axis are evaluated in parallel (rayon).

use std::collections::HashMap;
use std::sync::Mutex;

use humsense::Event;
use rayon::prelude::*;

use super::reference::{EmaDebounceConfig, RcComparatorConfig, Rectifier, RefRun, Reference};
use crate::input::{FrameSource, RenderSource};
use crate::labels::{Label, LabelKind};
use crate::scenario::{RenderOptions, Scenario};
use crate::score::{LatencyStats, Score};
use crate::selfcheck::score_labelled;

/// One labelled run held in memory, a channel per column.
#[derive(Debug, Clone)]
pub struct TuneCase {
    /// What it is (scenario name and seed).
    pub name: String,
    /// Sample rate, hertz.
    pub rate_hz: f64,
    /// ADC resolution, bits.
    pub bits: u8,
    /// Channel names in column order.
    pub names: Vec<String>,
    /// Every label of the run (touch labels are scored; others mark the
    /// intervals left out, as in [`score_labelled`]).
    pub labels: Vec<Label>,
    /// Codes, one vector per channel.
    pub columns: Vec<Vec<i32>>,
}

impl TuneCase {
    /// Renders `seconds` of `s` with `seed` into memory.
    pub fn render(s: &Scenario, seconds: f64, seed: u64) -> Result<TuneCase, String> {
        let render = s
            .render(&RenderOptions {
                seconds: Some(seconds),
                seed: Some(seed),
            })
            .map_err(|e| e.to_string())?;
        let mut src = RenderSource::new(render);
        let n = src.channel_names().len().max(1);
        let mut columns = vec![Vec::new(); n];
        let mut buf = vec![0i32; 4096 * n];
        loop {
            let frames = src.read(&mut buf)?;
            if frames == 0 {
                break;
            }
            for frame in buf.chunks_exact(n).take(frames) {
                for (col, &c) in columns.iter_mut().zip(frame) {
                    col.push(c);
                }
            }
        }
        Ok(TuneCase {
            name: format!("{}@{seed}", s.name()),
            rate_hz: s.adc.rate_hz,
            bits: src.bits(),
            names: s.channel_names(),
            labels: s.labels(seconds),
            columns,
        })
    }

    /// Seconds of signal.
    pub fn seconds(&self) -> f64 {
        self.columns.first().map_or(0, Vec::len) as f64 / self.rate_hz
    }

    /// The events of `reference` on this run, in time order.
    pub fn events(&self, reference: &Reference) -> Vec<Event> {
        let mut run = RefRun::new(reference, self.columns.len(), self.rate_hz, self.bits);
        for (ch, col) in self.columns.iter().enumerate() {
            run.push_channel(ch, col);
        }
        run.into_events()
    }

    /// `reference`'s touch score on this run.
    pub fn score(&self, reference: &Reference) -> Result<Score, String> {
        score_labelled(
            &self.events(reference),
            self.rate_hz,
            &self.names,
            LabelKind::Touch,
            &self.labels,
        )
    }
}

/// A setting's score on the tuning set (see the module docs).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Objective {
    /// Missed touches plus false touch-on events.
    pub errors: usize,
    /// Missed touches.
    pub missed: usize,
    /// False touch-on events.
    pub false_events: usize,
    /// Touch-on p95 plus touch-off p95, ms, pooled (infinite when no touch
    /// was detected).
    pub latency_ms: f64,
}

impl Objective {
    /// Strictly better: fewer errors, or as many and a lower latency.
    pub fn better_than(&self, other: &Objective) -> bool {
        self.errors < other.errors
            || (self.errors == other.errors && self.latency_ms < other.latency_ms)
    }

    /// The objective of a set of scores.
    pub fn of(scores: &[Score]) -> Objective {
        let missed = scores.iter().map(Score::missed).sum();
        let false_events = scores.iter().map(Score::false_events).sum();
        let pooled = |f: fn(&crate::score::ChannelScore) -> &Vec<f64>| {
            let v: Vec<f64> = scores
                .iter()
                .flat_map(|s| s.channels.iter())
                .flat_map(|c| f(c).iter().copied())
                .collect();
            LatencyStats::of(&v).map_or(f64::INFINITY, |l| l.p95_ms)
        };
        Objective {
            errors: missed + false_events,
            missed,
            false_events,
            latency_ms: pooled(|c| &c.on_latency_ms) + pooled(|c| &c.off_latency_ms),
        }
    }
}

/// Scores `reference` on every case.
pub fn evaluate(reference: &Reference, cases: &[TuneCase]) -> Result<Objective, String> {
    evaluate_within(reference, cases, usize::MAX).map(|o| o.unwrap_or(Objective::of(&[])))
}

/// [`evaluate`], giving up (`None`) as soon as the errors over the cases
/// scored so far exceed `max_errors`: such a setting cannot be better than
/// one with `max_errors` errors.
pub fn evaluate_within(
    reference: &Reference,
    cases: &[TuneCase],
    max_errors: usize,
) -> Result<Option<Objective>, String> {
    let mut scores = Vec::with_capacity(cases.len());
    let mut errors = 0usize;
    for c in cases {
        let s = c.score(reference)?;
        errors += s.missed() + s.false_events();
        if errors > max_errors {
            return Ok(None);
        }
        scores.push(s);
    }
    Ok(Some(Objective::of(&scores)))
}

/// One parameter's grid.
#[derive(Debug, Clone, PartialEq)]
pub struct Axis {
    /// The parameter.
    pub name: &'static str,
    /// Its values, in order.
    pub values: Vec<f64>,
}

/// A grid of settings for one reference: axes, how a point becomes a
/// setting, and where the searches start.
#[derive(Debug, Clone)]
pub struct Space {
    /// The axes, swept in this order.
    pub axes: Vec<Axis>,
    /// The setting at a point (one value per axis, in axis order).
    pub build: fn(&[f64]) -> Reference,
    /// The starting points, each an index into each axis: one descent from
    /// each, the best result kept.
    pub starts: Vec<Vec<usize>>,
}

impl Space {
    /// Points the searches of `rounds` rounds visit at most (each axis's
    /// values once a round, from every start).
    pub fn budget(&self, rounds: usize) -> usize {
        self.starts.len() * rounds * self.axes.iter().map(|a| a.values.len()).sum::<usize>()
    }

    fn at(&self, point: &[usize]) -> Reference {
        let v: Vec<f64> = self
            .axes
            .iter()
            .zip(point)
            .map(|(a, &i)| a.values.get(i).copied().unwrap_or(0.0))
            .collect();
        (self.build)(&v)
    }
}

/// Threshold grid, fractions of full scale: `count` values spaced by a
/// constant ratio from `low` to `high`.
fn log_grid(low: f64, high: f64, count: usize) -> Vec<f64> {
    let r = (high / low).powf(1.0 / (count.max(2) - 1) as f64);
    (0..count).map(|k| low * r.powi(k as i32)).collect()
}

/// Thresholds from 0.2 % to 30 % of full scale: 45 values (about 12 %
/// apart), or 24 (about 24 % apart) in a quick run. The built-ins' ambient
/// levels lie between about 0.4 % and 4 % of full scale and their touches
/// between 2 % and 40 %.
fn thresholds(quick: bool) -> Vec<f64> {
    log_grid(0.002, 0.3, if quick { 24 } else { 45 })
}

/// The RC-and-comparator grid: on threshold, RC time constant (2 to
/// 220 ms), hysteresis (0 to 0.7), rectifier (full, half), coupling time
/// constant (0.1 to 3 s). Starts at the middle threshold, no hysteresis,
/// full wave and 1 s, with an RC of 10 ms and of 75 ms.
pub fn rc_space(quick: bool) -> Space {
    let th = thresholds(quick);
    let mid = th.len() / 2;
    Space {
        axes: vec![
            Axis {
                name: "on_fraction",
                values: th,
            },
            Axis {
                name: "rc_tau_s",
                values: vec![
                    0.002, 0.004, 0.007, 0.010, 0.015, 0.022, 0.033, 0.050, 0.075, 0.100, 0.150,
                    0.220,
                ],
            },
            Axis {
                name: "hysteresis",
                values: vec![0.0, 0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7],
            },
            Axis {
                name: "rectifier",
                values: vec![0.0, 1.0],
            },
            Axis {
                name: "coupling_tau_s",
                values: vec![0.1, 0.3, 1.0, 3.0],
            },
        ],
        build: |v| {
            let g = |i: usize| v.get(i).copied().unwrap_or(0.0);
            Reference::RcComparator(RcComparatorConfig {
                on_fraction: g(0),
                rc_tau_s: g(1),
                hysteresis: g(2),
                rectifier: if g(3) > 0.5 {
                    Rectifier::Half
                } else {
                    Rectifier::Full
                },
                coupling_tau_s: g(4),
            })
        },
        starts: vec![vec![mid, 3, 0, 0, 2], vec![mid, 8, 0, 0, 2]],
    }
}

/// The first-firmware grid: threshold, EMA time constant (1 to 150 ms), on
/// time (0.5 to 100 ms), off time (0.5 to 100 ms), mean time constant (0.1
/// to 10 s). Starts at the middle threshold, on 5 ms, off 20 ms, mean 1 s,
/// with an EMA of 10 ms and of 50 ms.
pub fn ema_space(quick: bool) -> Space {
    let th = thresholds(quick);
    let mid = th.len() / 2;
    let debounce = vec![0.5, 1.0, 2.0, 5.0, 10.0, 20.0, 35.0, 50.0, 75.0, 100.0];
    Space {
        axes: vec![
            Axis {
                name: "threshold_fraction",
                values: th,
            },
            Axis {
                name: "ema_tau_s",
                values: vec![
                    0.001, 0.002, 0.004, 0.007, 0.010, 0.015, 0.022, 0.033, 0.050, 0.075, 0.100,
                    0.150,
                ],
            },
            Axis {
                name: "on_ms",
                values: debounce.clone(),
            },
            Axis {
                name: "off_ms",
                values: debounce,
            },
            Axis {
                name: "mean_tau_s",
                values: vec![0.1, 0.3, 1.0, 3.0, 10.0],
            },
        ],
        build: |v| {
            let g = |i: usize| v.get(i).copied().unwrap_or(0.0);
            Reference::EmaDebounce(EmaDebounceConfig {
                threshold_fraction: g(0),
                ema_tau_s: g(1),
                on_ms: g(2),
                off_ms: g(3),
                mean_tau_s: g(4),
            })
        },
        starts: vec![vec![mid, 4, 3, 5, 2], vec![mid, 8, 3, 5, 2]],
    }
}

/// The best setting found.
#[derive(Debug, Clone, PartialEq)]
pub struct Tuned {
    /// The setting.
    pub reference: Reference,
    /// Its objective on the tuning set.
    pub objective: Objective,
    /// Distinct settings evaluated.
    pub evaluations: usize,
    /// Rounds run.
    pub rounds: usize,
}

impl Tuned {
    /// `bench: tuned detector=<name> errors=<n> missed=<n> false=<n>
    /// latency_ms=<f> evaluations=<n> rounds=<n>` then the parameters.
    pub fn bench_line(&self) -> String {
        let o = &self.objective;
        format!(
            "bench: tuned detector={} errors={} missed={} false={} latency_ms={} evaluations={} rounds={} {}",
            self.reference.name(),
            o.errors,
            o.missed,
            o.false_events,
            if o.latency_ms.is_finite() {
                format!("{:.1}", o.latency_ms)
            } else {
                "na".into()
            },
            self.evaluations,
            self.rounds,
            self.reference.describe()
        )
    }
}

/// What the search knows of a point: its objective, or that its errors
/// exceed a bound.
#[derive(Debug, Clone, Copy)]
enum Known {
    Exact(Objective),
    Above(usize),
}

/// Coordinate descent over `space` on `cases` (see the module docs) from
/// each of its starts, at most `rounds` rounds each; the best result of
/// all (the first on a tie). A point whose errors pass the descent's best
/// so far is abandoned there ([`evaluate_within`]): it cannot be better.
/// `progress(n)` is called with the number of grid points just visited
/// (evaluated or known already), from any thread, and at the end with the
/// rest of [`Space::budget`], so that the calls add up to the budget.
pub fn tune(
    space: &Space,
    cases: &[TuneCase],
    rounds: usize,
    progress: &(dyn Fn(u64) + Sync),
) -> Result<Tuned, String> {
    let cache: Mutex<HashMap<Vec<usize>, Known>> = Mutex::new(HashMap::new());
    let lock = || cache.lock().map_err(|e| e.to_string());
    // The point's objective if its errors are at most `bound`.
    let eval = |point: &Vec<usize>, bound: usize| -> Result<Option<Objective>, String> {
        match lock()?.get(point) {
            Some(Known::Exact(o)) => return Ok((o.errors <= bound).then_some(*o)),
            Some(Known::Above(b)) if *b >= bound => return Ok(None),
            _ => {}
        }
        let o = evaluate_within(&space.at(point), cases, bound)?;
        lock()?.insert(point.clone(), o.map_or(Known::Above(bound), Known::Exact));
        Ok(o)
    };
    let mut visited = 0u64;
    let mut overall: Option<(Objective, Vec<usize>, usize)> = None;
    for start in &space.starts {
        let mut current = start.clone();
        let mut best = eval(&current, usize::MAX)?.unwrap_or(Objective::of(&[]));
        let mut done_rounds = 0;
        for _ in 0..rounds {
            done_rounds += 1;
            let mut changed = false;
            for (axis, a) in space.axes.iter().enumerate() {
                let points: Vec<Vec<usize>> = (0..a.values.len())
                    .map(|v| {
                        let mut p = current.clone();
                        if let Some(slot) = p.get_mut(axis) {
                            *slot = v;
                        }
                        p
                    })
                    .collect();
                let bound = best.errors;
                let results = points
                    .par_iter()
                    .map(|p| {
                        let r = eval(p, bound);
                        progress(1);
                        r
                    })
                    .collect::<Result<Vec<_>, _>>()?;
                visited += points.len() as u64;
                for (p, o) in points.iter().zip(&results) {
                    if let Some(o) = o {
                        if o.better_than(&best) {
                            best = *o;
                            current = p.clone();
                            changed = true;
                        }
                    }
                }
            }
            if !changed {
                break;
            }
        }
        if overall.as_ref().is_none_or(|(o, _, _)| best.better_than(o)) {
            overall = Some((best, current, done_rounds));
        }
    }
    progress((space.budget(rounds) as u64).saturating_sub(visited));
    let evaluations = lock()?.len();
    let (objective, point, rounds) =
        overall.ok_or_else(|| "a search space without a starting point".to_string())?;
    Ok(Tuned {
        reference: space.at(&point),
        objective,
        evaluations,
        rounds,
    })
}
