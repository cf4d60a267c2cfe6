//! `humsim tune`: choose detection constants on a labelled log.
//!
//! 1. The log is read once through a [`humsense::Frontend`] built from the
//!    starting configuration, and every [`Cycle`] is kept (about 50 bytes
//!    per channel-cycle: 9 MB for an hour of one channel at 50 Hz).
//! 2. Candidate back-end configurations are run over the recorded cycles
//!    with [`Backend::process`](humsense::Backend::process), in parallel on every core (rayon), and each
//!    is scored against the labels ([`crate::score`]).
//! 3. The chosen one has no missed label and at most `budget` false events
//!    per hour, and among those the lowest median on latency (then the
//!    lowest 95th percentile, then the fewest false events, then the lowest
//!    median off latency).
//! 4. The chosen configuration is checked by a full replay of the log
//!    through a [`humsense::Detector`] (for an edge or polled-level log, a
//!    [`humsense::edge::EdgeDetector`]): its events must equal the fast
//!    path's exactly, or tune fails.
//!
//! An edge or polled-level log is recorded through the edge front end
//! ([`crate::edgeinput`]) built from the starting configuration and the
//! `[edge]` table or flags, which stay fixed; the chosen configuration is
//! written with that table, so that `replay --config` reads it back.
//!
//! Swept (the back end): `on_ratio`, `off_ratio` (as a share of the on
//! ratio's excess over 1), `on_noise`, `off_noise` (as a share of
//! `on_noise`), `debounce_on`, `debounce_off`, `baseline_rise_shift`,
//! `baseline_fall_shift` and `avg_shift`. The grid (see [`Grid`]) has about
//! 2 million points; `points` of them are drawn at random (deterministic
//! seed), plus the starting configuration and the profile's defaults.
//!
//! Fixed: everything the front end uses (`sample_rate_hz`, `adc_bits`,
//! `mains`, `spike_max_len`, `spike_floor_codes`, `track_min_codes`,
//! `mains_lost_cycles`), since recorded cycles already embody them, and the
//! rest of the back end (start-up, noise time constant, floors, levels,
//! panel and fault constants) as the starting configuration has them.

use crate::configfile::EdgeRequest;
use crate::input::{for_each_frame, open_any, FrameSource, Input, InputSpec};
use crate::labels::{shifted, LabelFile, Span};
use crate::replay::{drive_input, prepare, with_channels, ChannelTask};
use crate::score::{score_events, Score, ScoreOptions};
use humsense::edge::EdgeConfig;
use humsense::{Config, Cycle, Event};
use rayon::prelude::*;
use std::fmt::Write as _;
use std::path::PathBuf;

/// The values swept, per constant.
#[derive(Debug, Clone, PartialEq)]
pub struct Grid {
    /// `on_ratio`.
    pub on_ratio: Vec<f32>,
    /// `off_ratio = 1 + share · (on_ratio − 1)`.
    pub off_share: Vec<f32>,
    /// `on_noise`.
    pub on_noise: Vec<f32>,
    /// `off_noise = share · on_noise`.
    pub off_noise_share: Vec<f32>,
    /// `debounce_on`.
    pub debounce_on: Vec<u8>,
    /// `debounce_off`.
    pub debounce_off: Vec<u8>,
    /// `baseline_rise_shift`.
    pub rise_shift: Vec<u8>,
    /// `baseline_fall_shift` (clipped to the rise shift).
    pub fall_shift: Vec<u8>,
    /// `avg_shift`.
    pub avg_shift: Vec<u8>,
}

impl Default for Grid {
    fn default() -> Self {
        Grid {
            on_ratio: vec![1.3, 1.5, 1.8, 2.0, 2.4, 2.8, 3.4, 4.0, 5.0, 6.0],
            off_share: vec![0.3, 0.45, 0.6, 0.75],
            on_noise: vec![3.0, 4.0, 6.0, 8.0, 12.0, 16.0],
            off_noise_share: vec![0.3, 0.5, 0.7],
            debounce_on: vec![1, 2, 3, 4, 6],
            debounce_off: vec![1, 2, 3, 5, 8],
            rise_shift: vec![5, 6, 7, 8, 9, 10, 11, 12],
            fall_shift: vec![3, 4, 5, 6],
            avg_shift: vec![0, 1, 2, 3],
        }
    }
}

impl Grid {
    /// Points in the grid.
    pub fn size(&self) -> usize {
        self.on_ratio.len()
            * self.off_share.len()
            * self.on_noise.len()
            * self.off_noise_share.len()
            * self.debounce_on.len()
            * self.debounce_off.len()
            * self.rise_shift.len()
            * self.fall_shift.len()
            * self.avg_shift.len()
    }

    /// The grid point with index `k` (mixed radix), applied to `base`.
    pub fn point(&self, base: &Config, mut k: usize) -> Config {
        fn pick<T: Copy>(v: &[T], k: &mut usize, or: T) -> T {
            let n = v.len().max(1);
            let x = v.get(*k % n).copied().unwrap_or(or);
            *k /= n;
            x
        }
        let mut c = *base;
        c.on_ratio = pick(&self.on_ratio, &mut k, base.on_ratio);
        let share = pick(&self.off_share, &mut k, 0.5);
        c.off_ratio = 1.0 + share * (c.on_ratio - 1.0);
        c.on_noise = pick(&self.on_noise, &mut k, base.on_noise);
        c.off_noise = c.on_noise * pick(&self.off_noise_share, &mut k, 0.5);
        c.debounce_on = pick(&self.debounce_on, &mut k, base.debounce_on);
        c.debounce_off = pick(&self.debounce_off, &mut k, base.debounce_off);
        c.baseline_rise_shift = pick(&self.rise_shift, &mut k, base.baseline_rise_shift);
        c.baseline_fall_shift =
            pick(&self.fall_shift, &mut k, base.baseline_fall_shift).min(c.baseline_rise_shift);
        c.avg_shift = pick(&self.avg_shift, &mut k, base.avg_shift);
        c
    }
}

/// Copies the swept back-end fields of `from` into `base`, keeping every
/// other field of `base`.
pub fn with_swept(base: &Config, from: &Config) -> Config {
    Config {
        on_ratio: from.on_ratio,
        off_ratio: from.off_ratio,
        on_noise: from.on_noise,
        off_noise: from.off_noise,
        debounce_on: from.debounce_on,
        debounce_off: from.debounce_off,
        baseline_rise_shift: from.baseline_rise_shift,
        baseline_fall_shift: from.baseline_fall_shift,
        avg_shift: from.avg_shift,
        ..*base
    }
}

/// The candidates: the start, the profile's defaults with the start's fixed
/// fields, then `points` distinct grid points drawn with `seed`.
pub fn candidates(start: &Config, grid: &Grid, points: usize, seed: u64) -> Vec<Config> {
    let defaults = match start.profile {
        humsense::Profile::Field => Config::field(),
        _ => Config::touch(),
    };
    let mut out = vec![*start, with_swept(start, &defaults)];
    let size = grid.size().max(1);
    let mut seen = std::collections::HashSet::new();
    let mut rng = crate::rng::Rng::new(seed, 0x7475_6e65);
    let mut tries = 0usize;
    while seen.len() < points.min(size) && tries < points.saturating_mul(20) + 100 {
        tries += 1;
        let k = (rng.next_u64() % size as u64) as usize;
        if seen.insert(k) {
            out.push(grid.point(start, k));
        }
    }
    out
}

/// One candidate's result.
#[derive(Debug, Clone)]
pub struct Trial {
    /// The configuration.
    pub config: Config,
    /// Its score.
    pub score: Score,
    /// False events per hour of input.
    pub false_per_hour: f64,
    /// Median on latency, ms (infinite with no detection).
    pub on_median_ms: f64,
    /// 95th percentile on latency, ms.
    pub on_p95_ms: f64,
    /// Median off latency, ms.
    pub off_median_ms: f64,
}

impl Trial {
    /// No missed label and within the budget.
    pub fn feasible(&self, budget_per_hour: f64) -> bool {
        self.score.missed() == 0 && self.false_per_hour <= budget_per_hour
    }

    fn key(&self) -> (f64, f64, usize, f64) {
        (
            self.on_median_ms,
            self.on_p95_ms,
            self.score.false_events(),
            self.off_median_ms,
        )
    }
}

/// Orders trials best first (see the module docs).
pub fn rank(trials: &mut [Trial]) {
    trials.sort_by(|a, b| {
        let (ka, kb) = (a.key(), b.key());
        ka.0.total_cmp(&kb.0)
            .then(ka.1.total_cmp(&kb.1))
            .then(ka.2.cmp(&kb.2))
            .then(ka.3.total_cmp(&kb.3))
    });
}

/// Runs `cfg`'s back end over recorded `cycles`; the events in order.
/// `None` if the core crate refuses the configuration.
pub fn fast_events<const N: usize>(cycles: &[Cycle<N, 0>], cfg: &Config) -> Option<Vec<Event>> {
    let mut back = crate::replay::HostBackend::<N>::new(cfg).ok()?;
    let mut events = Vec::new();
    for c in cycles {
        back.process(c, |e| events.push(e));
    }
    Some(events)
}

/// A full run of `src` through a [`FieldDetector`](humsense::FieldDetector) (window memory for the field profile) built from `cfg`.
pub fn full_events<const N: usize>(
    src: &mut dyn FrameSource,
    cfg: &Config,
) -> Result<Vec<Event>, String> {
    let mut det = humsense::FieldDetector::<N, 0>::new(*cfg).map_err(|e| e.to_string())?;
    let mut events = Vec::new();
    let signed = src.signed();
    for_each_frame::<N>(src, |_, codes| {
        if signed {
            det.push_frame(&codes.map(|v| v as i16), |e| events.push(e));
        } else {
            det.push_frame(&codes.map(|v| v as u16), |e| events.push(e));
        }
        Ok(())
    })?;
    Ok(events)
}

/// What `humsim tune` was asked.
#[derive(Debug, Clone)]
pub struct TuneCommand {
    /// The input.
    pub input: InputSpec,
    /// `--mains`.
    pub mains: Option<humsense::MainsMode>,
    /// `--profile`.
    pub profile: Option<humsense::Profile>,
    /// The edge front end's flags (edge and polled-level logs).
    pub edge: EdgeRequest,
    /// `--config`: the starting configuration.
    pub config: Option<PathBuf>,
    /// `--labels`.
    pub labels: PathBuf,
    /// `--budget`: false events per hour allowed.
    pub budget_per_hour: f64,
    /// `--points`: grid points to try.
    pub points: usize,
    /// `--seed` of the draw.
    pub seed: u64,
    /// `--out`: the chosen configuration as TOML (stdout without).
    pub out: Option<PathBuf>,
    /// `--plot`: the trade-off picture.
    pub plot: Option<PathBuf>,
    /// Show a progress bar (on a terminal).
    pub progress: bool,
}

/// What tune found.
#[derive(Debug, Clone)]
pub struct TuneOutcome {
    /// Every trial, best first.
    pub trials: Vec<Trial>,
    /// Index into `trials` of the chosen one, if any is feasible.
    pub chosen: Option<usize>,
    /// Input length, seconds.
    pub seconds: f64,
    /// Channel names.
    pub names: Vec<String>,
    /// Events of the chosen configuration, as the fast path gave them.
    pub events: Vec<Event>,
    /// Whether a full replay reproduced `events` exactly (checked for the
    /// chosen configuration).
    pub verified: bool,
    /// Time spent sweeping, seconds.
    pub sweep_s: f64,
    /// Warnings for the user (labels the profile does not score).
    pub warnings: Vec<String>,
    /// The edge front end's configuration, for an edge or polled-level log.
    pub edge: Option<EdgeConfig>,
}

/// Runs the tuning (no output files; see [`command`]).
pub fn tune(cmd: &TuneCommand) -> Result<TuneOutcome, String> {
    if !(cmd.budget_per_hour.is_finite() && cmd.budget_per_hour >= 0.0) {
        return Err(format!(
            "--budget {}: expected false events per hour >= 0",
            crate::text::num(cmd.budget_per_hour)
        ));
    }
    let prepared = prepare(
        &cmd.input,
        cmd.profile,
        cmd.mains,
        cmd.config.as_deref(),
        &cmd.edge,
    )?;
    let mut src = prepared.input;
    let start = prepared.cfg;
    let labels = LabelFile::read(&cmd.labels)?;
    let names = src.channel_names().to_vec();
    labels.check(&names, &Span::open(src.start_s()))?;
    let kind = crate::replay::label_kind(&start);
    let (mine, warning) = labels.of_kind(kind);
    if mine.is_empty() {
        return Err(format!(
            "{}: no `{}` labels to tune the {} profile on",
            labels.name,
            kind.as_str(),
            kind.as_str()
        ));
    }
    with_channels(
        names.len(),
        TuneTask {
            cmd,
            src: &mut src,
            edge: prepared.edge,
            clock_hz: prepared.clock_hz,
            start,
            labels,
            names: names.clone(),
            warnings: warning.into_iter().collect(),
        },
    )
}

struct TuneTask<'a> {
    cmd: &'a TuneCommand,
    src: &'a mut Input,
    edge: Option<EdgeConfig>,
    clock_hz: f64,
    start: Config,
    labels: LabelFile,
    warnings: Vec<String>,
    names: Vec<String>,
}

impl ChannelTask for TuneTask<'_> {
    type Output = TuneOutcome;
    fn run<const N: usize>(self) -> Result<TuneOutcome, String> {
        let rate = self.clock_hz;
        let digital = self.src.is_digital();
        let mut cycles: Vec<Cycle<N, 0>> = Vec::new();
        // The starting configuration's back end runs beside the recording:
        // with a window (field profile) it sets the mains tracker's floor
        // as a full run would. The candidates replay these cycles, so for
        // them the floor is the starting point's (the noise estimate it
        // comes from hardly depends on the constants tuned); the chosen
        // configuration is checked by a full run.
        let mut floor_back = crate::replay::HostBackend::<N>::new(&self.start).ok();
        let frames = drive_input::<N>(
            self.src,
            &self.start,
            self.edge.as_ref(),
            |_, _| {},
            |c| {
                cycles.push(*c);
                Ok(floor_back.as_mut().map_or(0, |b| {
                    b.process(c, |_| {});
                    b.tracking_floor()
                }))
            },
        )?;
        let seconds = frames as f64 / rate;
        let start = self.src.start_s();
        self.labels
            .check(&self.names, &Span::of_input(start, seconds, rate))?;
        // Scored on sample time; the labels are on the log's own clock.
        let on_samples = shifted(&self.labels.labels, -start);
        let opts = ScoreOptions::for_kind(crate::replay::label_kind(&self.start));
        let cands = candidates(
            &self.start,
            &Grid::default(),
            self.cmd.points,
            self.cmd.seed,
        );
        let bar = if self.cmd.progress {
            indicatif::ProgressBar::new(cands.len() as u64)
        } else {
            indicatif::ProgressBar::hidden()
        };
        bar.set_style(
            indicatif::ProgressStyle::with_template(
                "{spinner} tuning [{elapsed_precise}] {wide_bar} {pos}/{len} configs ({eta} left)",
            )
            .unwrap_or_else(|_| indicatif::ProgressStyle::default_bar()),
        );
        let hours = seconds / 3600.0;
        let names = &self.names;
        let labels = &on_samples;
        let t0 = std::time::Instant::now();
        let mut trials: Vec<Trial> = cands
            .par_iter()
            .filter_map(|cfg| {
                let events = fast_events::<N>(&cycles, &back_of(cfg, digital));
                bar.inc(1);
                let events = events?;
                let score = score_events(&events, rate, names, labels, &opts).ok()?;
                let on = score.on_latency();
                let off = score.off_latency();
                Some(Trial {
                    config: *cfg,
                    false_per_hour: score.false_events() as f64 / hours.max(1e-12),
                    on_median_ms: on.map_or(f64::INFINITY, |l| l.median_ms),
                    on_p95_ms: on.map_or(f64::INFINITY, |l| l.p95_ms),
                    off_median_ms: off.map_or(f64::INFINITY, |l| l.median_ms),
                    score,
                })
            })
            .collect();
        bar.finish_and_clear();
        let sweep_s = t0.elapsed().as_secs_f64();
        rank(&mut trials);
        let budget = self.cmd.budget_per_hour;
        let chosen = trials.iter().position(|t| t.feasible(budget));
        let mut events = Vec::new();
        let mut verified = false;
        if let Some(t) = chosen.and_then(|i| trials.get(i)) {
            events = fast_events::<N>(&cycles, &back_of(&t.config, digital)).unwrap_or_default();
            drop(cycles);
            let need = || String::from("internal error: no edge configuration");
            let full = match open_any(&self.cmd.input)? {
                Input::Samples(mut again) => full_events::<N>(again.as_mut(), &t.config)?,
                Input::Levels(mut again) => crate::edgeinput::full_level_events::<N>(
                    again.as_mut(),
                    &t.config,
                    self.edge.as_ref().ok_or_else(need)?,
                )?,
                Input::Edges(mut again) => crate::edgeinput::full_edge_events::<N>(
                    &mut again,
                    &t.config,
                    self.edge.as_ref().ok_or_else(need)?,
                )?,
            };
            if full != events {
                return Err(format!(
                    "internal error: the fast path gave {} events but a full replay of the \
                     chosen configuration gave {}; please report this",
                    events.len(),
                    full.len()
                ));
            }
            verified = true;
        }
        Ok(TuneOutcome {
            trials,
            chosen,
            seconds,
            names: self.names,
            events,
            verified,
            sweep_s,
            warnings: self.warnings,
            edge: self.edge,
        })
    }
}

/// The back end's configuration of candidate `cfg` (`nohum_codes = 0` for
/// a digital input, as [`humsense::edge::EdgeDetector`] builds it).
fn back_of(cfg: &Config, digital: bool) -> Config {
    if digital {
        crate::edgeinput::backend_config(cfg)
    } else {
        *cfg
    }
}

/// A table of the best `n` trials (feasible ones first).
pub fn table(outcome: &TuneOutcome, budget: f64, n: usize) -> String {
    let mut s = String::new();
    let _ = writeln!(
        s,
        "{:>4} {:>6} {:>6} {:>6} {:>6} {:>4} {:>4} {:>4} {:>4} {:>4} | {:>6} {:>6} {:>8} | {:>7} {:>7} {:>7}",
        "rank", "on_r", "off_r", "on_n", "off_n", "dbOn", "dbOf", "rise", "fall", "avg",
        "missed", "false", "false/h", "on med", "on p95", "off med"
    );
    let feasible = outcome.trials.iter().filter(|t| t.feasible(budget));
    let rest = outcome.trials.iter().filter(|t| !t.feasible(budget));
    for (i, t) in feasible.chain(rest).take(n).enumerate() {
        let c = &t.config;
        let _ = writeln!(
            s,
            "{:>4} {:>6.2} {:>6.2} {:>6.1} {:>6.1} {:>4} {:>4} {:>4} {:>4} {:>4} | {:>6} {:>6} {:>8.1} | {:>7.1} {:>7.1} {:>7.1}{}",
            i + 1,
            c.on_ratio,
            c.off_ratio,
            c.on_noise,
            c.off_noise,
            c.debounce_on,
            c.debounce_off,
            c.baseline_rise_shift,
            c.baseline_fall_shift,
            c.avg_shift,
            t.score.missed(),
            t.score.false_events(),
            t.false_per_hour,
            t.on_median_ms,
            t.on_p95_ms,
            t.off_median_ms,
            if t.feasible(budget) { "" } else { "  (fails)" }
        );
    }
    s
}

/// Runs `humsim tune`: the table and the Rust snippet to stdout, the TOML
/// to `--out` (or stdout), the trade-off plot to `--plot`. Both outputs are
/// checked before the sweep; if writing one fails at the end, the result
/// is still printed to stdout (the TOML too) before the error.
pub fn command(cmd: &TuneCommand) -> Result<(), crate::console::CliError> {
    use crate::console;
    use crate::outfile::{check_distinct, Kind, OutputFile};
    use std::io::Write as _;
    let mut inputs = vec![
        ("input", cmd.input.path.as_path()),
        ("--labels", cmd.labels.as_path()),
    ];
    inputs.extend(cmd.config.as_deref().map(|p| ("--config", p)));
    let mut outputs = Vec::new();
    outputs.extend(cmd.out.as_deref().map(|p| ("--out", p)));
    outputs.extend(cmd.plot.as_deref().map(|p| ("--plot", p)));
    check_distinct(&inputs, &outputs)?;
    let out_file = match &cmd.out {
        Some(p) => Some(OutputFile::create("--out", p, Kind::Data)?),
        None => None,
    };
    let plot_file = match &cmd.plot {
        Some(p) => Some(OutputFile::create("--plot", p, Kind::Png)?),
        None => None,
    };
    let outcome = tune(cmd)?;
    for w in &outcome.warnings {
        console::err(&format!("humsim: warning: {w}\n"))?;
    }
    let budget = cmd.budget_per_hour;
    let mut failures: Vec<String> = Vec::new();
    let mut out = String::new();
    let _ = writeln!(
        out,
        "tuned on {} ({:.1} s, {} channels): {} configurations in {:.2} s",
        cmd.input.path.display(),
        outcome.seconds,
        outcome.names.len(),
        outcome.trials.len(),
        outcome.sweep_s
    );
    out.push_str(&table(&outcome, budget, 8));
    if let (Some(mut f), Some(path)) = (plot_file, &cmd.plot) {
        let pts: Vec<(f64, f64)> = outcome
            .trials
            .iter()
            .filter(|t| t.score.missed() == 0 && t.on_median_ms.is_finite())
            .map(|t| (t.on_median_ms, t.false_per_hour))
            .collect();
        let chosen = outcome
            .chosen
            .and_then(|i| outcome.trials.get(i))
            .map(|t| (t.on_median_ms, t.false_per_hour));
        let name = f.shown().to_string();
        match f
            .writer()
            .and_then(|w| crate::plot::write_tradeoff_png(w, &name, &pts, chosen, budget))
            .and_then(|()| f.commit())
        {
            Ok(()) => {
                let _ = writeln!(out, "trade-off plot: {}", path.display());
            }
            Err(m) => failures.push(m),
        }
    }
    let Some(best) = outcome.chosen.and_then(|i| outcome.trials.get(i)) else {
        console::out(&out)?;
        failures.insert(
            0,
            format!(
                "no configuration tried detects every label with at most {budget} false events \
                 per hour; the closest are listed above (try --points, a larger --budget, or \
                 another --profile)"
            ),
        );
        return Err(failures.join("\n").into());
    };
    let toml = crate::configfile::to_toml_digital(&best.config, outcome.edge.as_ref());
    let _ = writeln!(
        out,
        "\nchosen: no missed label, {} false events ({:.1} per hour), median on latency \
         {:.1} ms; a full replay reproduced its {} events exactly",
        best.score.false_events(),
        best.false_per_hour,
        best.on_median_ms,
        outcome.events.len()
    );
    let mut toml_to_stdout = true;
    if let (Some(mut f), Some(path)) = (out_file, &cmd.out) {
        let name = f.shown().to_string();
        let written = f
            .writer()
            .and_then(|w| {
                w.write_all(toml.as_bytes())
                    .map_err(|e| format!("{name}: cannot write: {e}"))
            })
            .and_then(|()| f.commit());
        match written {
            Ok(()) => {
                let _ = writeln!(
                    out,
                    "config: {} (humsim replay --config {0})",
                    path.display()
                );
                toml_to_stdout = false;
            }
            Err(m) => failures.push(format!("{m} (the configuration is printed above instead)")),
        }
    }
    if toml_to_stdout {
        let _ = writeln!(out, "\n{toml}");
    }
    let _ = writeln!(
        out,
        "\n// For firmware:\n{}",
        crate::configfile::to_rust(&best.config)
    );
    if let Some(e) = &outcome.edge {
        let _ = writeln!(out, "{}", crate::configfile::to_rust_edge(e));
    }
    console::out(&out)?;
    if failures.is_empty() {
        Ok(())
    } else {
        Err(failures.join("\n").into())
    }
}
