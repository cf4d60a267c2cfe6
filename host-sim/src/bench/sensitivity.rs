//! Sensitivity against the bound: the amplitude a profile needs to report
//! a steady 50 Hz field in white Gaussian noise within its deadline in 90 %
//! of trials, against what the optimum detector needs over the same time
//! at the profile's own measured false-alarm rate.
//!
//! The signal: 2 kHz, 12 bits around mid-rail, noise σ = 40 codes (the
//! case the field profile's target names), a sine of amplitude `A` from a
//! random sample on, at a random phase. The mains reference is set to 50 Hz
//! (a field indicator for a 50 Hz country; with `auto` the tracker has
//! nothing to lock to in noise alone).
//!
//! - **False alarms**: the profile on noise alone for `noise_hours`
//!   (chunks of one hour on all cores), counting its on events; the rate
//!   per hour, and per decision window of the deadline's length
//!   (`rate · deadline / 3600 s`), the false-alarm probability the optimum
//!   is held to.
//! - **Detection**: trials from detectors settled on noise (cloned), each
//!   after a random further stretch of noise; a trial is a detection when
//!   the on event comes within the deadline of the onset. The Pd curve over
//!   amplitude (dB) is fitted by a probit (maximum likelihood), `A90` read
//!   from it, and its 95 % interval from a bootstrap over the trials.
//! - **The bound**: `A_opt = σ·√(2λ/N)` with `Q1(√λ, √(2 ln 1/Pfa)) = 0.9`
//!   and `N` the samples in the deadline ([`super::marcum`]).
//! - `snr_gap_db = 20·log10(A90 / A_opt)`.

use super::marcum;
use crate::rng::Rng;
use humsense::{Config, EventKind, FieldDetector, MainsMode, Profile};
use rayon::prelude::*;

/// Sample rate of the test signal, Hz.
pub const RATE_HZ: f64 = 2_000.0;
/// Noise standard deviation, codes.
pub const SIGMA: f64 = 40.0;
/// Mains (and field) frequency, Hz.
pub const MAINS_HZ: f64 = 50.0;

/// The detector the bench runs (one channel, no harmonics).
pub type BenchDetector = FieldDetector<1, 0>;

/// What to measure.
#[derive(Clone, Debug)]
pub struct Options {
    /// Touch or field.
    pub profile: Profile,
    /// Hours of noise alone for the false-alarm rate.
    pub noise_hours: f64,
    /// Trials per amplitude in the fine pass.
    pub trials: usize,
    /// Seed of every random stream.
    pub seed: u64,
    /// Keep the reference at 50.000 Hz (see [`config`]).
    pub fixed_reference: bool,
}

impl Options {
    /// The defaults of `humsim bench` (`quick`: those of `--quick`).
    pub fn new(profile: Profile, quick: bool) -> Self {
        Self {
            profile,
            noise_hours: if quick { 6.0 } else { 60.0 },
            trials: if quick { 200 } else { 1_000 },
            seed: 0x5e75_0001,
            fixed_reference: false,
        }
    }

    /// The deadline, seconds: the field profile's 0.5 s (a hand-held
    /// indicator must answer while it is moved); for the touch profile the
    /// latency bound for weak touches, 100 ms.
    pub fn deadline_s(&self) -> f64 {
        match self.profile {
            Profile::Field => 0.5,
            Profile::Touch => 0.1,
        }
    }

    /// Units of work for a progress bar: one per noise hour and one per
    /// trial (coarse and fine passes).
    pub fn work_units(&self) -> u64 {
        self.noise_hours.ceil() as u64
            + (COARSE_DB.len() * COARSE_TRIALS) as u64
            + (FINE_STEPS * self.trials) as u64
    }
}

/// The result of one profile's measurement.
#[derive(Clone, Debug)]
pub struct Sensitivity {
    /// The profile measured.
    pub profile: Profile,
    /// Deadline, seconds.
    pub deadline_s: f64,
    /// On events in noise alone, and the hours they came in.
    pub false_events: usize,
    /// Hours of noise alone.
    pub noise_hours: f64,
    /// False-alarm probability per decision window the optimum is held to.
    pub pfa_window: f64,
    /// The optimum's amplitude for Pd = 0.9, codes.
    pub a_opt: f64,
    /// The profile's amplitude for Pd = 0.9, codes (probit fit).
    pub a90: f64,
    /// Half width of the 95 % interval of the gap, dB (bootstrap).
    pub ci95_db: f64,
    /// Trials run.
    pub trials: usize,
    /// Whether the reference was held at 50.000 Hz.
    pub fixed_reference: bool,
}

impl Sensitivity {
    /// On events per hour of noise alone.
    pub fn pfa_per_hour(&self) -> f64 {
        self.false_events as f64 / self.noise_hours
    }

    /// The gap to the optimum, dB (amplitude ratio).
    pub fn snr_gap_db(&self) -> f64 {
        20.0 * (self.a90 / self.a_opt).log10()
    }

    /// `bench: profile=… snr_gap_db=… ci95_db=… pfa_per_hour=…` and the
    /// figures behind them.
    pub fn bench_line(&self) -> String {
        format!(
            "bench: profile={} snr_gap_db={:.2} ci95_db={:.2} pfa_per_hour={:.2} \
             a90_codes={:.2} a_opt_codes={:.2} deadline_ms={:.0} sigma_codes={:.0} \
             false_events={} noise_hours={:.1} trials={} reference={}",
            profile_name(self.profile),
            self.snr_gap_db(),
            self.ci95_db,
            self.pfa_per_hour(),
            self.a90,
            self.a_opt,
            self.deadline_s * 1e3,
            SIGMA,
            self.false_events,
            self.noise_hours,
            self.trials,
            if self.fixed_reference {
                "fixed"
            } else {
                "tracked"
            }
        )
    }
}

/// `touch` or `field`.
pub fn profile_name(p: Profile) -> &'static str {
    match p {
        Profile::Touch => "touch",
        Profile::Field => "field",
    }
}

/// The profile's default configuration with the mains set to 50 Hz;
/// `fixed_reference`: with the frequency tracker kept from learning
/// (`track_min_codes` at its maximum), so the reference stays at 50.000 Hz
/// (a diagnostic: what the tracker's wandering in noise alone costs).
pub fn config(p: Profile, fixed_reference: bool) -> Config {
    let mut c = match p {
        Profile::Touch => Config::touch(),
        Profile::Field => Config::field(),
    };
    c.mains = MainsMode::Hz50;
    if fixed_reference {
        c.track_min_codes = 10_000.0;
    }
    c
}

fn is_on(kind: EventKind) -> bool {
    matches!(kind, EventKind::TouchOn | EventKind::FieldOn)
}

/// One 12-bit sample: mid-rail, noise, and the field `a·sin(φ)`.
fn sample(rng: &mut Rng, field: f64) -> u16 {
    let x = 2048.0 + SIGMA * rng.gaussian() + field;
    x.round().clamp(0.0, 4095.0) as u16
}

/// Runs `n` samples of noise alone; returns the on events seen.
fn noise(det: &mut BenchDetector, rng: &mut Rng, n: u64) -> usize {
    let mut ons = 0;
    for _ in 0..n {
        if let Some(e) = det.push(sample(rng, 0.0)) {
            if is_on(e.kind) {
                ons += 1;
            }
        }
    }
    ons
}

/// Seconds of noise a detector is settled on before it is used.
const SETTLE_S: f64 = 30.0;

fn settled(cfg: &Config, seed: u64, stream: u64) -> Result<BenchDetector, String> {
    let mut det = BenchDetector::new(*cfg).map_err(|e| e.to_string())?;
    let mut rng = Rng::new(seed, stream);
    noise(&mut det, &mut rng, (SETTLE_S * RATE_HZ) as u64);
    Ok(det)
}

/// On events in `hours` of noise alone (one-hour chunks in parallel).
fn false_alarms(
    cfg: &Config,
    hours: f64,
    seed: u64,
    progress: &(dyn Fn(u64) + Sync),
) -> Result<usize, String> {
    let chunks = hours.ceil() as u64;
    let per = (hours / chunks as f64 * 3600.0 * RATE_HZ) as u64;
    let counts: Result<Vec<usize>, String> = (0..chunks)
        .into_par_iter()
        .map(|c| {
            let mut det = settled(cfg, seed, 1_000 + c)?;
            let mut rng = Rng::new(seed, 2_000 + c);
            let n = noise(&mut det, &mut rng, per);
            progress(1);
            Ok(n)
        })
        .collect();
    Ok(counts?.iter().sum())
}

/// Whether one trial at amplitude `a` detects within `deadline` samples.
fn trial(base: &BenchDetector, a: f64, deadline: u64, rng: &mut Rng) -> bool {
    let mut det = base.clone();
    // A further random stretch of noise: a new state and a random onset.
    let pre = (RATE_HZ * (0.5 + rng.uniform())) as u64;
    if noise(&mut det, rng, pre) > 0 {
        // Already on from noise alone (counted by the false-alarm run):
        // this trial says nothing about detection; a new stretch decides.
        return trial(base, a, deadline, rng);
    }
    let w = std::f64::consts::TAU * MAINS_HZ / RATE_HZ;
    let phase = std::f64::consts::TAU * rng.uniform();
    for n in 0..deadline {
        if let Some(e) = det.push(sample(rng, a * (w * n as f64 + phase).sin())) {
            if is_on(e.kind) {
                return true;
            }
        }
    }
    false
}

/// Amplitudes of the coarse pass, dB re the optimum's.
const COARSE_DB: [f64; 14] = [
    -2.0, -1.0, 0.0, 1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0, 8.0, 10.0, 12.0, 14.0,
];
const COARSE_TRIALS: usize = 40;
/// The fine pass: this many amplitudes 0.5 dB apart around the coarse
/// estimate.
const FINE_STEPS: usize = 9;

/// Trials at `db` (re `a_opt`), parallel; returns detections.
#[allow(clippy::too_many_arguments)] // one call per pass, each argument named there
fn run_level(
    bases: &[BenchDetector],
    a_opt: f64,
    db: f64,
    trials: usize,
    deadline: u64,
    seed: u64,
    stream: u64,
    progress: &(dyn Fn(u64) + Sync),
) -> Vec<bool> {
    let a = a_opt * 10f64.powf(db / 20.0);
    (0..trials)
        .into_par_iter()
        .map(|t| {
            let mut rng = Rng::new(seed, stream * 1_000_003 + t as u64);
            let base = &bases[t % bases.len()];
            let hit = trial(base, a, deadline, &mut rng);
            progress(1);
            hit
        })
        .collect()
}

/// Standard normal CDF (Abramowitz & Stegun 7.1.26 through erf, error
/// below 1.5e-7).
fn phi(x: f64) -> f64 {
    let z = x.abs() / std::f64::consts::SQRT_2;
    let t = 1.0 / (1.0 + 0.327_591_1 * z);
    let poly = t
        * (0.254_829_592
            + t * (-0.284_496_736
                + t * (1.421_413_741 + t * (-1.453_152_027 + t * 1.061_405_429))));
    let erf = 1.0 - poly * (-z * z).exp();
    if x >= 0.0 {
        0.5 * (1.0 + erf)
    } else {
        0.5 * (1.0 - erf)
    }
}

/// Probit fit `Pd(x) = Φ((x − μ)/s)` by maximum likelihood (a grid, then
/// refinement); returns `x` where the fit reaches 0.9.
fn fit_x90(points: &[(f64, bool)]) -> Option<f64> {
    // The likelihood by amplitude: (x, hits, misses) per distinct x (the
    // trials come at a few dozen amplitudes), the same sum in far fewer
    // terms.
    let mut levels: Vec<(f64, f64, f64)> = Vec::new();
    for &(x, hit) in points {
        let (h, m) = if hit { (1.0, 0.0) } else { (0.0, 1.0) };
        match levels.iter_mut().find(|l| l.0 == x) {
            Some(l) => {
                l.1 += h;
                l.2 += m;
            }
            None => levels.push((x, h, m)),
        }
    }
    let ll = |mu: f64, s: f64| -> f64 {
        levels
            .iter()
            .map(|&(x, hits, misses)| {
                let p = phi((x - mu) / s).clamp(1e-12, 1.0 - 1e-12);
                hits * p.ln() + misses * (1.0 - p).ln()
            })
            .sum()
    };
    let (mut best, mut bmu, mut bs) = (f64::NEG_INFINITY, 0.0, 1.0);
    let mut mu = -10.0;
    while mu <= 20.0 {
        for s in [0.2, 0.35, 0.5, 0.75, 1.0, 1.5, 2.0, 3.0, 5.0] {
            let v = ll(mu, s);
            if v > best {
                (best, bmu, bs) = (v, mu, s);
            }
        }
        mu += 0.25;
    }
    // Coordinate refinement.
    let (mut dmu, mut ds) = (0.125, 0.1);
    for _ in 0..40 {
        for (m, s) in [
            (bmu + dmu, bs),
            (bmu - dmu, bs),
            (bmu, bs * (1.0 + ds)),
            (bmu, bs / (1.0 + ds)),
        ] {
            let v = ll(m, s);
            if v > best {
                (best, bmu, bs) = (v, m, s);
            }
        }
        dmu *= 0.8;
        ds *= 0.8;
    }
    best.is_finite().then_some(bmu + 1.281_551_6 * bs)
}

/// Measures one profile. `progress` receives units of work as they finish
/// ([`Options::work_units`] in all).
pub fn measure(opts: &Options, progress: &(dyn Fn(u64) + Sync)) -> Result<Sensitivity, String> {
    let cfg = config(opts.profile, opts.fixed_reference);
    let deadline_s = opts.deadline_s();
    let deadline = (deadline_s * RATE_HZ) as u64;
    let false_events = false_alarms(&cfg, opts.noise_hours, opts.seed, progress)?;
    // The optimum at the profile's measured rate; with no false event at
    // all, at the rate one event would have given (a bound in the
    // profile's favour: its gap is at most the one printed).
    let rate = (false_events.max(1)) as f64 / opts.noise_hours;
    let pfa_window = rate * deadline_s / 3600.0;
    let a_opt = marcum::optimum_amplitude(deadline as f64, SIGMA, 0.9, pfa_window);
    let bases: Vec<BenchDetector> = (0..8)
        .map(|i| settled(&cfg, opts.seed, 10 + i))
        .collect::<Result<_, _>>()?;
    let mut points = Vec::new();
    for (i, &db) in COARSE_DB.iter().enumerate() {
        let hits = run_level(
            &bases,
            a_opt,
            db,
            COARSE_TRIALS,
            deadline,
            opts.seed,
            100 + i as u64,
            progress,
        );
        points.extend(hits.into_iter().map(|h| (db, h)));
    }
    let coarse = fit_x90(&points).ok_or("no fit of the coarse Pd curve")?;
    // The fine pass centred on the coarse estimate, snapped to 0.5 dB.
    let centre = (coarse * 2.0).round() / 2.0;
    let half = (FINE_STEPS / 2) as f64 * 0.5;
    for k in 0..FINE_STEPS {
        let db = centre - half + 0.5 * k as f64;
        let hits = run_level(
            &bases,
            a_opt,
            db,
            opts.trials,
            deadline,
            opts.seed,
            200 + k as u64,
            progress,
        );
        points.extend(hits.into_iter().map(|h| (db, h)));
    }
    let x90 = fit_x90(&points).ok_or("no fit of the Pd curve")?;
    // Bootstrap: resample the trials with replacement.
    let mut boots: Vec<f64> = (0..200u64)
        .into_par_iter()
        .filter_map(|b| {
            let mut rng = Rng::new(opts.seed, 9_999 + b);
            let sample: Vec<(f64, bool)> = (0..points.len())
                .map(|_| points[(rng.uniform() * points.len() as f64) as usize % points.len()])
                .collect();
            fit_x90(&sample)
        })
        .collect();
    boots.sort_by(f64::total_cmp);
    let q = |f: f64| boots[((boots.len() as f64 - 1.0) * f).round() as usize];
    let ci95_db = if boots.len() >= 20 {
        (q(0.975) - q(0.025)) / 2.0
    } else {
        f64::NAN
    };
    Ok(Sensitivity {
        profile: opts.profile,
        deadline_s,
        false_events,
        noise_hours: opts.noise_hours,
        pfa_window,
        a_opt,
        a90: a_opt * 10f64.powf(x90 / 20.0),
        ci95_db,
        trials: points.len(),
        fixed_reference: opts.fixed_reference,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn probit_fit_recovers_a_known_curve() {
        // Trials drawn from Φ((x − 3)/1.5): x90 = 3 + 1.2816·1.5 = 4.922
        // (the normal quantile 1.2816 at 0.9, standard tables).
        let mut rng = Rng::new(7, 7);
        let mut pts = Vec::new();
        for k in 0..30 {
            let x = -2.0 + 0.5 * k as f64;
            for _ in 0..200 {
                pts.push((x, rng.uniform() < phi((x - 3.0) / 1.5)));
            }
        }
        let x90 = fit_x90(&pts).unwrap();
        assert!((x90 - 4.922).abs() < 0.25, "{x90}");
    }

    #[test]
    fn phi_matches_tables() {
        // Standard normal table: Φ(1.2816) = 0.9, Φ(1.96) = 0.975.
        assert!((phi(1.281_551_6) - 0.9).abs() < 1e-6);
        assert!((phi(1.96) - 0.975_002).abs() < 1e-6);
        assert!((phi(-1.96) - 0.024_998).abs() < 1e-6);
    }
}
