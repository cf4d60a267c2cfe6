//! humsense against the reference detectors ([`super::reference`]) on the
//! same signals: every built-in touch scenario and a long ambient-only run.
//!
//! ## What is run ([`compare`])
//! 1. **Tuning data** ([`tuning_set`]): every built-in with touch labels
//!    except the comparator-input ones ([`crate::builtin::DIGITAL`]),
//!    rendered with its seed plus [`TUNING_SEED_OFFSET`] (so noise, drift
//!    and mains wander differ from the evaluation's, the timelines are the
//!    same), its first [`crate::selfcheck::MAX_SECONDS`] (30 s in a quick
//!    run), then [`AMBIENT_TUNING_S`] of `esd-bench` (ambient hum, ESD
//!    bursts, lamp steps; [`QUICK_AMBIENT_TUNING_S`] in a quick run) in
//!    pieces of [`AMBIENT_TUNING_PIECE_S`], each with its own seed (the
//!    scenario's plus the offset plus the piece's index). The tuning
//!    scenarios are the evaluation's with other seeds, which favours the
//!    references: they are tuned on the timelines they are scored on.
//! 2. **Tuning** of each reference on it ([`super::tuner`]: the objective
//!    is errors, then latency; [`ROUNDS`] rounds of coordinate descent from
//!    each of two starts, 2 rounds and a coarser threshold grid in a quick
//!    run). Both references are tuned at once.
//! 3. **Evaluation**, with the scenarios' own seeds: each built-in touch
//!    scenario (its first `MAX_SECONDS`) rendered once, the same codes fed
//!    to humsense (default touch settings, exactly as
//!    [`crate::selfcheck::score_scenario`] runs it) and to both tuned
//!    references; all three scored by [`crate::selfcheck::score_labelled`].
//!    Then `esd-bench` for [`Options::ambient_hours`], as
//!    [`ambient_segments`] runs of equal length side by side (seeds `17`,
//!    `18`, …: the scenario's seed plus the segment's index), each detector
//!    starting afresh in each: every touch-on there is false.
//!
//! Rows ([`CompareRow`]): one per scenario and detector, one per detector
//! over all built-ins (`scenario=all`, latencies pooled) and one per
//! detector for the ambient run (`scenario=ambient-24h`; `ambient-1h` for
//! one hour). Latency is touch-on latency (label start to event).
//!
//! The built-ins and the ambient segments run side by side (rayon), the
//! long segments first; rendering the ambient hours is most of the time.

use rayon::prelude::*;

use super::reference::{RefRun, Reference};
use super::tuner::{ema_space, rc_space, tune, TuneCase, Tuned};
use crate::input::{FrameSource, RenderSource, SourceInfo};
use crate::labels::LabelKind;
use crate::replay::{config_for, replay};
use crate::scenario::{RenderOptions, Scenario};
use crate::score::{LatencyStats, Score};
use crate::selfcheck::{score_labelled, MAX_SECONDS};

/// Added to a scenario's seed for its tuning render.
pub const TUNING_SEED_OFFSET: u64 = 1000;

/// Seconds of `esd-bench` in the tuning data, in pieces of
/// [`AMBIENT_TUNING_PIECE_S`] (seeds: the scenario's plus
/// [`TUNING_SEED_OFFSET`] plus the piece's index).
pub const AMBIENT_TUNING_S: f64 = 1800.0;

/// [`AMBIENT_TUNING_S`] of a quick run.
pub const QUICK_AMBIENT_TUNING_S: f64 = 300.0;

/// Seconds of one piece of the ambient tuning data.
pub const AMBIENT_TUNING_PIECE_S: f64 = 300.0;

/// Rounds of coordinate descent for each reference (2 in a quick run).
pub const ROUNDS: usize = 4;

/// Progress units one evaluation of a setting on the tuning set counts
/// (about the time it takes, in units of one second of signal rendered and
/// run through the three detectors).
pub const TUNE_EVAL_UNITS: u64 = 20;

/// The ambient-only scenario.
pub const AMBIENT: &str = "esd-bench";

/// The detector name of humsense's rows.
pub const HUMSENSE: &str = "humsense";

/// What to run.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Options {
    /// Shorter tuning data and search (see the module docs).
    pub quick: bool,
    /// Hours of the ambient-only run.
    pub ambient_hours: f64,
}

impl Default for Options {
    /// The full run: 24 hours of ambient.
    fn default() -> Self {
        Options {
            quick: false,
            ambient_hours: 24.0,
        }
    }
}

impl Options {
    /// The quick run: quick tuning and 1 hour of ambient.
    pub fn quick() -> Self {
        Options {
            quick: true,
            ambient_hours: 1.0,
        }
    }
}

/// One detector's figures on one scenario.
#[derive(Debug, Clone, PartialEq)]
pub struct CompareRow {
    /// Scenario name, `all`, or `ambient-<hours>h`.
    pub scenario: String,
    /// `humsense`, `rc-comparator` or `ema-debounce`.
    pub detector: &'static str,
    /// Touch labels.
    pub labels: usize,
    /// Touches missed.
    pub missed: usize,
    /// Touch-on events that matched no touch.
    pub false_events: usize,
    /// Hours of signal scored.
    pub hours: f64,
    /// Median touch-on latency, ms.
    pub latency_p50_ms: Option<f64>,
    /// 95th percentile (nearest rank) of touch-on latency, ms.
    pub latency_p95_ms: Option<f64>,
    /// Largest touch-on latency, ms.
    pub latency_max_ms: Option<f64>,
}

fn fmt_opt(v: Option<f64>, decimals: usize) -> String {
    v.filter(|v| v.is_finite())
        .map_or("na".into(), |v| format!("{v:.decimals$}"))
}

impl CompareRow {
    /// False events per hour of signal (0 for an empty run).
    pub fn false_per_hour(&self) -> f64 {
        if self.hours > 0.0 {
            self.false_events as f64 / self.hours
        } else {
            0.0
        }
    }

    /// `bench: scenario=<name> detector=<name> missed=<n>
    /// false_per_hour=<f> latency_p50_ms=<f> latency_p95_ms=<f>
    /// latency_max_ms=<f>`, in that order, `na` for a latency when no touch
    /// was detected.
    pub fn bench_line(&self) -> String {
        format!(
            "bench: scenario={} detector={} missed={} false_per_hour={:.2} latency_p50_ms={} \
             latency_p95_ms={} latency_max_ms={}",
            self.scenario,
            self.detector,
            self.missed,
            self.false_per_hour(),
            fmt_opt(self.latency_p50_ms, 1),
            fmt_opt(self.latency_p95_ms, 1),
            fmt_opt(self.latency_max_ms, 1)
        )
    }

    /// The row of a score over `seconds` of signal (touch-on latencies of
    /// every channel pooled).
    pub fn from_score(
        scenario: &str,
        detector: &'static str,
        seconds: f64,
        s: &Score,
    ) -> CompareRow {
        let lat: Vec<f64> = s
            .channels
            .iter()
            .flat_map(|c| c.on_latency_ms.iter().copied())
            .collect();
        let l = LatencyStats::of(&lat);
        CompareRow {
            scenario: scenario.to_string(),
            detector,
            labels: s.labels(),
            missed: s.missed(),
            false_events: s.false_events(),
            hours: seconds / 3600.0,
            latency_p50_ms: l.map(|l| l.median_ms),
            latency_p95_ms: l.map(|l| l.p95_ms),
            latency_max_ms: l.map(|l| l.max_ms),
        }
    }
}

/// Everything [`compare`] found.
#[derive(Debug, Clone)]
pub struct Comparison {
    /// The tuned references, `rc-comparator` then `ema-debounce`.
    pub tuned: Vec<Tuned>,
    /// Per scenario: humsense, then each reference; then the `all` rows,
    /// then the ambient rows.
    pub rows: Vec<CompareRow>,
}

/// `ours / reference`, `na` when either is missing or the reference is 0.
fn ratio(ours: Option<f64>, reference: Option<f64>) -> String {
    match (ours, reference) {
        (Some(a), Some(b)) if b != 0.0 && a.is_finite() && b.is_finite() => format!("{:.2}", a / b),
        _ => "na".into(),
    }
}

impl Comparison {
    /// The row of `detector` on `scenario`.
    pub fn row(&self, scenario: &str, detector: &str) -> Option<&CompareRow> {
        self.rows
            .iter()
            .find(|r| r.scenario == scenario && r.detector == detector)
    }

    /// One line per scenario and reference: `bench: ratio scenario=<name>
    /// reference=<name> latency_p50=<f> latency_p95=<f> false_per_hour=<f>
    /// missed=<f>`, each humsense's figure divided by the reference's
    /// (`na` where the reference's is 0 or missing: a ratio to nothing).
    pub fn ratio_lines(&self) -> Vec<String> {
        let mut out = Vec::new();
        for ours in self.rows.iter().filter(|r| r.detector == HUMSENSE) {
            for t in &self.tuned {
                let Some(theirs) = self.row(&ours.scenario, t.reference.name()) else {
                    continue;
                };
                out.push(format!(
                    "bench: ratio scenario={} reference={} latency_p50={} latency_p95={} \
                     false_per_hour={} missed={}",
                    ours.scenario,
                    theirs.detector,
                    ratio(ours.latency_p50_ms, theirs.latency_p50_ms),
                    ratio(ours.latency_p95_ms, theirs.latency_p95_ms),
                    ratio(Some(ours.false_per_hour()), Some(theirs.false_per_hour())),
                    ratio(Some(ours.missed as f64), Some(theirs.missed as f64)),
                ));
            }
        }
        out
    }

    /// The tuned settings' lines, the rows' lines, then the ratio lines.
    pub fn bench_lines(&self) -> Vec<String> {
        let mut v: Vec<String> = self.tuned.iter().map(Tuned::bench_line).collect();
        v.extend(self.rows.iter().map(CompareRow::bench_line));
        v.extend(self.ratio_lines());
        v
    }

    /// A table for people: one line per row.
    pub fn table(&self) -> String {
        let mut s = format!(
            "{:<16} {:<14} {:>6} {:>6} {:>6} {:>10} {:>7} {:>7} {:>7}\n",
            "scenario",
            "detector",
            "labels",
            "missed",
            "false",
            "false/h",
            "p50 ms",
            "p95 ms",
            "max ms"
        );
        for r in &self.rows {
            s.push_str(&format!(
                "{:<16} {:<14} {:>6} {:>6} {:>6} {:>10.2} {:>7} {:>7} {:>7}\n",
                r.scenario,
                r.detector,
                r.labels,
                r.missed,
                r.false_events,
                r.false_per_hour(),
                fmt_opt(r.latency_p50_ms, 1),
                fmt_opt(r.latency_p95_ms, 1),
                fmt_opt(r.latency_max_ms, 1)
            ));
        }
        s
    }
}

/// The built-ins compared: every one with touch labels, less the
/// comparator-input ones.
pub fn touch_builtins() -> Result<Vec<Scenario>, String> {
    let mut v = Vec::new();
    for name in crate::builtin::names() {
        if crate::builtin::DIGITAL.contains(&name) {
            continue;
        }
        let s = Scenario::builtin(name).map_err(|e| e.to_string())?;
        let seconds = s.duration_s().min(MAX_SECONDS);
        if s.labels(seconds).iter().any(|l| l.kind == LabelKind::Touch) {
            v.push(s);
        }
    }
    Ok(v)
}

/// Seconds of each tuning render: `(scenario, seconds, seed)`.
fn tuning_plan(opts: &Options) -> Result<Vec<(Scenario, f64, u64)>, String> {
    let cap = if opts.quick { 30.0 } else { MAX_SECONDS };
    let mut plan: Vec<(Scenario, f64, u64)> = touch_builtins()?
        .into_iter()
        .map(|s| {
            let seconds = s.duration_s().min(cap);
            let seed = s.file.seed + TUNING_SEED_OFFSET;
            (s, seconds, seed)
        })
        .collect();
    // Ambient last, in pieces: a setting is abandoned at the piece where
    // its errors pass the best's (tuner::evaluate_within).
    let ambient = Scenario::builtin(AMBIENT).map_err(|e| e.to_string())?;
    let total = if opts.quick {
        QUICK_AMBIENT_TUNING_S
    } else {
        AMBIENT_TUNING_S
    };
    let pieces = (total / AMBIENT_TUNING_PIECE_S).ceil().max(1.0) as u64;
    for k in 0..pieces {
        let seed = ambient.file.seed + TUNING_SEED_OFFSET + k;
        plan.push((ambient.clone(), total / pieces as f64, seed));
    }
    Ok(plan)
}

/// Renders the tuning data (see the module docs), in parallel;
/// `progress` gets each case's whole seconds when it is done.
pub fn tuning_set(
    opts: &Options,
    progress: &(dyn Fn(u64) + Sync),
) -> Result<Vec<TuneCase>, String> {
    tuning_plan(opts)?
        .par_iter()
        .map(|(s, seconds, seed)| {
            let c = TuneCase::render(s, *seconds, *seed);
            progress(seconds.ceil() as u64);
            c
        })
        .collect()
}

/// The number of ambient runs: at least 2 (both cores), one per 6 hours.
pub fn ambient_segments(hours: f64) -> usize {
    ((hours / 6.0).ceil() as usize).max(2)
}

fn rounds(opts: &Options) -> usize {
    if opts.quick {
        2
    } else {
        ROUNDS
    }
}

/// The units [`compare`] reports through its `progress` in all: one per
/// second of signal of each render (rounded up per render), plus
/// [`TUNE_EVAL_UNITS`] per grid point of each tuning search's budget.
pub fn work_units(opts: &Options) -> u64 {
    let tuning_render: u64 = tuning_plan(opts)
        .map(|p| p.iter().map(|(_, s, _)| s.ceil() as u64).sum())
        .unwrap_or(0);
    let r = rounds(opts);
    let search =
        (rc_space(opts.quick).budget(r) + ema_space(opts.quick).budget(r)) as u64 * TUNE_EVAL_UNITS;
    let builtins: u64 = touch_builtins()
        .map(|v| {
            v.iter()
                .map(|s| s.duration_s().min(MAX_SECONDS).ceil() as u64)
                .sum()
        })
        .unwrap_or(0);
    let segments = ambient_segments(opts.ambient_hours);
    let ambient = segment_seconds(opts).ceil() as u64 * segments as u64;
    tuning_render + search + builtins + ambient
}

fn segment_seconds(opts: &Options) -> f64 {
    opts.ambient_hours.max(0.0) * 3600.0 / ambient_segments(opts.ambient_hours) as f64
}

/// A render that hands every block it reads to the reference detectors
/// too, and reports whole seconds of signal to `progress`.
struct Tee<'a> {
    inner: RenderSource,
    refs: Vec<RefRun>,
    frames: u64,
    reported: u64,
    progress: &'a (dyn Fn(u64) + Sync),
}

impl FrameSource for Tee<'_> {
    fn info(&self) -> &SourceInfo {
        self.inner.info()
    }
    fn read(&mut self, buf: &mut [i32]) -> Result<usize, String> {
        let n = self.inner.read(buf)?;
        let codes = buf
            .get(..n * self.inner.channel_names().len())
            .unwrap_or(&[]);
        for r in &mut self.refs {
            r.push_frames(codes);
        }
        self.frames += n as u64;
        let seconds = (self.frames as f64 / self.inner.rate_hz()) as u64;
        if seconds > self.reported {
            (self.progress)(seconds - self.reported);
            self.reported = seconds;
        }
        Ok(n)
    }
}

/// One render of `s` through humsense and `refs`: each detector's touch
/// score, humsense first.
fn run_all(
    s: &Scenario,
    seconds: f64,
    seed: Option<u64>,
    refs: &[Reference],
    progress: &(dyn Fn(u64) + Sync),
) -> Result<Vec<Score>, String> {
    let render = s
        .render(&RenderOptions {
            seconds: Some(seconds),
            seed,
        })
        .map_err(|e| e.to_string())?;
    let src = RenderSource::new(render);
    let (nch, rate, bits) = (src.channel_names().len(), src.rate_hz(), src.bits());
    let mut tee = Tee {
        inner: src,
        refs: refs
            .iter()
            .map(|r| RefRun::new(r, nch, rate, bits))
            .collect(),
        frames: 0,
        reported: 0,
        progress,
    };
    let cfg = config_for(&tee, Some(humsense::Profile::Touch), None, None)?;
    let out = replay(&mut tee, &cfg, &mut |_| Ok(()), None, true)?;
    progress((seconds.ceil() as u64).saturating_sub(tee.reported));
    let labels = s.labels(seconds);
    let names = s.channel_names();
    let mut scores = vec![score_labelled(
        &out.events,
        rate,
        &names,
        LabelKind::Touch,
        &labels,
    )?];
    for r in tee.refs {
        scores.push(score_labelled(
            &r.into_events(),
            rate,
            &names,
            LabelKind::Touch,
            &labels,
        )?);
    }
    Ok(scores)
}

/// Tunes both references, then runs humsense and both on every built-in
/// touch scenario and the ambient run (see the module docs). `progress(n)`
/// is called, from any thread, with the units of work just done; the calls
/// add up to [`work_units`]`(opts)`.
pub fn compare(opts: &Options, progress: &(dyn Fn(u64) + Sync)) -> Result<Comparison, String> {
    let cases = tuning_set(opts, progress)?;
    let r = rounds(opts);
    let eval_progress = |n: u64| progress(n * TUNE_EVAL_UNITS);
    let (rc, ema) = rayon::join(
        || tune(&rc_space(opts.quick), &cases, r, &eval_progress),
        || tune(&ema_space(opts.quick), &cases, r, &eval_progress),
    );
    let tuned = vec![rc?, ema?];
    drop(cases);
    let refs: Vec<Reference> = tuned.iter().map(|t| t.reference).collect();
    let mut detectors = vec![HUMSENSE];
    detectors.extend(refs.iter().map(Reference::name));

    // Built-ins and ambient segments as one list of jobs.
    let builtins = touch_builtins()?;
    let ambient = Scenario::builtin(AMBIENT).map_err(|e| e.to_string())?;
    let segments = ambient_segments(opts.ambient_hours);
    let seg_s = segment_seconds(opts);
    let mut jobs: Vec<(&Scenario, f64, Option<u64>)> = builtins
        .iter()
        .map(|s| (s, s.duration_s().min(MAX_SECONDS), None))
        .collect();
    jobs.extend((0..segments as u64).map(|k| (&ambient, seg_s, Some(ambient.file.seed + k))));
    // The long ambient segments first, so that the short runs fill in.
    jobs.reverse();
    let mut results = jobs
        .par_iter()
        .map(|(s, seconds, seed)| run_all(s, *seconds, *seed, &refs, progress))
        .collect::<Result<Vec<_>, _>>()?;
    results.reverse();
    jobs.reverse();

    let mut rows = Vec::new();
    let n_builtin = builtins.len();
    let builtin_s: f64 = jobs.iter().take(n_builtin).map(|j| j.1).sum();
    // Per detector, every channel of the built-ins, and of the ambient
    // segments, as one score each (counts add, latencies pool).
    let mut all = vec![Score::default(); detectors.len()];
    let mut amb = vec![Score::default(); detectors.len()];
    for (k, ((s, seconds, _), scores)) in jobs.iter().zip(&results).enumerate() {
        for (i, (d, score)) in detectors.iter().zip(scores).enumerate() {
            let pool = if k < n_builtin {
                rows.push(CompareRow::from_score(s.name(), d, *seconds, score));
                all.get_mut(i)
            } else {
                amb.get_mut(i)
            };
            if let Some(p) = pool {
                p.channels.extend(score.channels.iter().cloned());
            }
        }
    }
    for (d, score) in detectors.iter().zip(&all) {
        rows.push(CompareRow::from_score("all", d, builtin_s, score));
    }
    let name = format!("ambient-{}h", crate::text::num(opts.ambient_hours));
    for (d, score) in detectors.iter().zip(&amb) {
        rows.push(CompareRow::from_score(
            &name,
            d,
            seg_s * segments as f64,
            score,
        ));
    }
    Ok(Comparison { tuned, rows })
}
