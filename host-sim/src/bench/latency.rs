//! humsense's touch-on and touch-off latency against the floor of one mains
//! cycle, at 50 and 60 Hz and at 1, 2 and 8 kHz, default touch settings.
//!
//! The signals are a grid of one-pad scenarios ([`grid_scenario`], shared
//! with `benches/latency.rs`): touches of 0.4 s, one a second, their onsets
//! spread evenly over the mains cycle, through a 2 mm overlay (touches
//! about 10 times the ambient hum) and a 10 mm one (about 4 times). Each is
//! scored against its labels ([`crate::selfcheck::score_scenario`]).
//! Latency runs from a touch's label (the finger lands and the hum ramps up
//! over 15 ms; the release ramps down from the label's end) to the event,
//! so the ramp is in every figure. A method that decides once per mains
//! cycle cannot beat one cycle: each figure is also given in cycles
//! (`latency / (1000 / mains_hz)`).
//!
//! ## `bench:` lines ([`LatencyRow::bench_line`])
//! `bench: latency mains_hz=<50|60> rate_hz=<1000|2000|8000>
//! overlay_mm=<2|10> touches=<n> missed=<n> false=<n> on_p50_ms=<f>
//! on_p95_ms=<f> on_max_ms=<f> off_p50_ms=<f> off_p95_ms=<f> off_max_ms=<f>
//! on_p50_cycles=<f> on_p95_cycles=<f> off_p50_cycles=<f>
//! off_p95_cycles=<f>`: `touches` the labels, `missed` those not detected,
//! `false` on events that matched no touch; `on_…` touch-on latency (label
//! start to `touch-on`), `off_…` touch-off latency (label end to
//! `touch-off`), as the median (`p50`), the 95th percentile (nearest rank,
//! `p95`) and the largest (`max`), in ms and (`_cycles`) in mains cycles;
//! `na` where no touch was detected.

use rayon::prelude::*;

use crate::labels::LabelKind;
use crate::scenario::Scenario;
use crate::score::LatencyStats;
use crate::selfcheck::score_scenario;

/// Touches per grid scenario in a full run (20 in a quick run).
pub const TOUCHES: u32 = 60;

/// Touches per grid scenario in a quick run.
pub const QUICK_TOUCHES: u32 = 20;

/// Mains frequencies of the grid, hertz.
pub const MAINS_HZ: [u32; 2] = [50, 60];

/// Sample rates of the grid, hertz.
pub const RATES_HZ: [u32; 3] = [1000, 2000, 8000];

/// Overlays of the grid, millimetres (2 mm: touches about 10x the ambient;
/// 10 mm: about 4x).
pub const OVERLAYS_MM: [f64; 2] = [2.0, 10.0];

/// A one-pad scenario of `touches` touches of 0.4 s, one a second from
/// 1.5 s, the k-th delayed by frac(k·0.618…) of a mains cycle so that the
/// onsets cover the cycle evenly (golden-ratio sequence, common practice),
/// as TOML. Lasts `touches + 2` seconds.
pub fn grid_scenario(mains_hz: u32, rate_hz: u32, overlay_mm: f64, touches: u32) -> String {
    let preset = if mains_hz == 60 {
        "120v-60hz"
    } else {
        "230v-50hz"
    };
    let mut s = format!(
        "name = \"latency-grid\"\nduration_s = {}.0\nseed = 41\n\n\
         [mains]\npreset = \"{preset}\"\n\n[adc]\nrate_hz = {rate_hz}\n\n\
         [[channel]]\nname = \"pad\"\noverlay_mm = {overlay_mm}\n",
        touches + 2
    );
    let golden = (5f64.sqrt() - 1.0) / 2.0;
    for k in 0..touches {
        let delay = (f64::from(k) * golden).fract() / f64::from(mains_hz);
        let at = 1.5 + f64::from(k) + delay;
        s.push_str(&format!(
            "\n[[event]]\nkind = \"touch\"\nat_s = {at:.6}\nchannel = \"pad\"\nhold_s = 0.4\n"
        ));
    }
    s
}

/// One grid point's figures.
#[derive(Debug, Clone, PartialEq)]
pub struct LatencyRow {
    /// Mains frequency, hertz.
    pub mains_hz: u32,
    /// Sample rate, hertz.
    pub rate_hz: u32,
    /// Overlay, millimetres.
    pub overlay_mm: f64,
    /// Touches (labels).
    pub touches: usize,
    /// Touches missed.
    pub missed: usize,
    /// On events that matched no touch.
    pub false_events: usize,
    /// Touch-on latency, ms.
    pub on: Option<LatencyStats>,
    /// Touch-off latency, ms.
    pub off: Option<LatencyStats>,
}

impl LatencyRow {
    /// One mains cycle, ms.
    pub fn cycle_ms(&self) -> f64 {
        1000.0 / f64::from(self.mains_hz.max(1))
    }

    /// The line described in the module docs.
    pub fn bench_line(&self) -> String {
        let ms = |v: Option<f64>| v.map_or("na".to_string(), |v| format!("{v:.1}"));
        let cyc =
            |v: Option<f64>| v.map_or("na".to_string(), |v| format!("{:.2}", v / self.cycle_ms()));
        let (on, off) = (self.on, self.off);
        format!(
            "bench: latency mains_hz={} rate_hz={} overlay_mm={} touches={} missed={} false={} \
             on_p50_ms={} on_p95_ms={} on_max_ms={} off_p50_ms={} off_p95_ms={} off_max_ms={} \
             on_p50_cycles={} on_p95_cycles={} off_p50_cycles={} off_p95_cycles={}",
            self.mains_hz,
            self.rate_hz,
            self.overlay_mm,
            self.touches,
            self.missed,
            self.false_events,
            ms(on.map(|l| l.median_ms)),
            ms(on.map(|l| l.p95_ms)),
            ms(on.map(|l| l.max_ms)),
            ms(off.map(|l| l.median_ms)),
            ms(off.map(|l| l.p95_ms)),
            ms(off.map(|l| l.max_ms)),
            cyc(on.map(|l| l.median_ms)),
            cyc(on.map(|l| l.p95_ms)),
            cyc(off.map(|l| l.median_ms)),
            cyc(off.map(|l| l.p95_ms)),
        )
    }

    /// A table row for people (see [`table_header`]).
    pub fn table_row(&self) -> String {
        let st = |l: Option<LatencyStats>| match l {
            Some(l) => format!(
                "{:>6.1} {:>6.1} {:>6.1} {:>5.2}",
                l.median_ms,
                l.p95_ms,
                l.max_ms,
                l.p95_ms / self.cycle_ms()
            ),
            None => format!("{:>27}", "-"),
        };
        format!(
            "{:>5} {:>6} {:>5.0}mm {:>6} {:>6} {:>6}  {}  {}",
            self.mains_hz,
            self.rate_hz,
            self.overlay_mm,
            self.touches,
            self.missed,
            self.false_events,
            st(self.on),
            st(self.off)
        )
    }
}

/// The header of [`LatencyRow::table_row`].
pub fn table_header() -> String {
    format!(
        "{:>5} {:>6} {:>7} {:>6} {:>6} {:>6}  {:>27}  {:>27}",
        "mains",
        "rate",
        "overlay",
        "labels",
        "missed",
        "false",
        "on p50/p95/max ms, p95 cyc",
        "off p50/p95/max ms, p95 cyc"
    )
}

/// Grid points in [`rows`] order: mains, then rate, then overlay.
pub fn grid() -> Vec<(u32, u32, f64)> {
    let mut v = Vec::new();
    for m in MAINS_HZ {
        for r in RATES_HZ {
            for o in OVERLAYS_MM {
                v.push((m, r, o));
            }
        }
    }
    v
}

/// Touches per grid scenario for a quick or full run.
pub fn touches(quick: bool) -> u32 {
    if quick {
        QUICK_TOUCHES
    } else {
        TOUCHES
    }
}

/// The units [`rows`] reports in all: one per second of each grid
/// scenario.
pub fn work_units(quick: bool) -> u64 {
    grid().len() as u64 * u64::from(touches(quick) + 2)
}

/// The grid point's row, `touches` touches.
pub fn row(
    mains_hz: u32,
    rate_hz: u32,
    overlay_mm: f64,
    touches: u32,
) -> Result<LatencyRow, String> {
    let toml = grid_scenario(mains_hz, rate_hz, overlay_mm, touches);
    let s = Scenario::from_toml_str(&toml, "latency-grid").map_err(|e| e.to_string())?;
    let score = score_scenario(&s, LabelKind::Touch, &|_| {})?
        .ok_or_else(|| "latency grid: a scenario without touch labels".to_string())?;
    Ok(LatencyRow {
        mains_hz,
        rate_hz,
        overlay_mm,
        touches: score.labels(),
        missed: score.missed(),
        false_events: score.false_events(),
        on: score.on_latency(),
        off: score.off_latency(),
    })
}

/// Every grid point ([`grid`]), in parallel; `progress(n)` gets each
/// point's seconds when it is done (from any thread), adding up to
/// [`work_units`].
pub fn rows(quick: bool, progress: &(dyn Fn(u64) + Sync)) -> Result<Vec<LatencyRow>, String> {
    let n = touches(quick);
    grid()
        .par_iter()
        .map(|&(m, r, o)| {
            let row = row(m, r, o, n);
            progress(u64::from(n + 2));
            row
        })
        .collect()
}
