//! Reliability cases: the detector, with its default touch settings, under
//! faults of its supply and of its input, each with the bar it must clear.
//!
//! The cases are shared by `host-sim/tests/reliability.rs`, which asserts
//! the bars on every run of the tests, and `host-sim/benches/reliability.rs`,
//! which prints the figures (`bench: case=… …` lines) for the README,
//! including the 24-hour ambient run that is too long for a test.
//!
//! | case | what is done to the signal |
//! |---|---|
//! | `esd` | built-in `esd-touches`: contact discharges of IEC 61000-4-2 levels 2, 4, 6 and 8 kV, both polarities, while idle and during touches |
//! | `supply-steps` | built-in `supply-steps`: frequency steps of 1 % and 4 % (EN 50160's bands) and back, 200 ms dips to 40 % residual while idle and touched |
//! | `ambient-x10` | `scenarios/reliability/ambient-x10.toml`: a lamp raises every pad's ambient hum tenfold for 12 s, then goes off |
//! | `adc-stuck` | one pad's codes frozen at one value for 4 s |
//! | `adc-saturated` | one pad's codes at the top rail for 10 s |
//! | `rate-fast`, `rate-slow` | the board samples 2 % faster or slower than the configured 2 kHz |
//! | `disconnected` | one pad's electrode comes off for 40 s: mid-scale and converter noise only |
//! | `ambient-24h` | built-in `esd-bench` (ambient only, ESD bursts, lamp steps) for 24 simulated hours (bench only) |
//!
//! A touch on the damaged channel inside the window where its input is
//! destroyed (stuck, saturated, disconnected), or in the
//! [`EXCUSED_AFTER_S`] after it while the channel re-learns, cannot be
//! detected: if missed, it is counted as excused, not missed. Every other
//! touch counts, and every on event that matches no touch is false.

use crate::input::{FrameSource, RenderSource, SourceInfo};
use crate::labels::{Label, LabelKind};
use crate::replay::{config_for, replay};
use crate::scenario::{RenderOptions, Scenario};
use crate::score::{score_events, Score, ScoreOptions};
use humsense::{EventKind, Fault};

/// One fault seen on a channel: when it was raised and cleared, seconds.
#[derive(Debug, Clone, PartialEq)]
pub struct FaultSpan {
    /// Channel index.
    pub channel: u8,
    /// The fault.
    pub fault: Fault,
    /// Time of the `fault` event.
    pub raised_s: f64,
    /// Time of its `fault-clear` event, if any.
    pub cleared_s: Option<f64>,
}

/// What a case gave.
#[derive(Debug, Clone)]
pub struct Outcome {
    /// The case's name.
    pub case: &'static str,
    /// Seconds run.
    pub seconds: f64,
    /// The touch score against the labels that can be detected.
    pub score: Score,
    /// Every fault, in order.
    pub faults: Vec<FaultSpan>,
    /// Missed touches excused: on the damaged channel, inside the window
    /// where its input is destroyed or re-learnt ([`EXCUSED_AFTER_S`]).
    pub excused: usize,
}

/// Seconds after a damage window in which a missed touch is excused: the
/// fault's clearing and the baseline's re-learning from scratch.
pub const EXCUSED_AFTER_S: f64 = 3.0;

impl Outcome {
    /// Touches missed that are not excused.
    pub fn missed(&self) -> usize {
        self.score.missed() - self.excused
    }

    /// The fault spans of `fault`.
    pub fn spans(&self, fault: Fault) -> Vec<&FaultSpan> {
        self.faults.iter().filter(|f| f.fault == fault).collect()
    }

    /// The figures as one `bench:` line.
    pub fn bench_line(&self) -> String {
        let on = self.score.on_latency();
        let off = self.score.off_latency();
        let ms = |v: Option<f64>| v.map_or("na".to_string(), |v| format!("{v:.1}"));
        let faults: Vec<String> = self
            .faults
            .iter()
            .map(|f| {
                format!(
                    "{}@{:.2}-{}",
                    f.fault.name(),
                    f.raised_s,
                    f.cleared_s
                        .map_or("open".to_string(), |c| format!("{c:.2}"))
                )
            })
            .collect();
        format!(
            "bench: case={} seconds={:.0} touches={} detected={} missed={} false={} excused={} \
             on_p95_ms={} off_median_ms={} faults={}",
            self.case,
            self.seconds,
            self.score.labels(),
            self.score.detected(),
            self.missed(),
            self.score.false_events(),
            self.excused,
            ms(on.map(|l| l.p95_ms)),
            ms(off.map(|l| l.median_ms)),
            if faults.is_empty() {
                "none".to_string()
            } else {
                faults.join(",")
            }
        )
    }
}

/// What is done to one channel's codes over a time window.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Damage {
    /// Nothing.
    None,
    /// The codes hold the value they had at the window's start.
    Stuck,
    /// The codes sit at the converter's top code with a code of noise (an
    /// amplifier latched at its supply).
    Saturated,
    /// The codes are mid-scale plus a deterministic ±2-code dither: the
    /// converter's own noise with no electrode.
    Disconnected,
}

/// A case: a scenario, optionally rendered at another rate than the
/// detector is told, optionally with one channel damaged over a window.
#[derive(Debug, Clone)]
pub struct Case {
    /// Name in the figures.
    pub name: &'static str,
    /// A built-in scenario name, or TOML text (any text with a
    /// `[[channel]]` table).
    pub scenario: &'static str,
    /// Seconds to run (the scenario's own length when `None`).
    pub seconds: Option<f64>,
    /// The rate the board really samples at, as a multiple of the
    /// scenario's (the detector is told the scenario's).
    pub rate_factor: f64,
    /// The damage, its channel and window (seconds).
    pub damage: (Damage, usize, f64, f64),
}

/// The cases in the table above, at the lengths the tests run.
pub fn cases() -> Vec<Case> {
    let plain = |name, scenario| Case {
        name,
        scenario,
        seconds: None,
        rate_factor: 1.0,
        damage: (Damage::None, 0, 0.0, 0.0),
    };
    let damaged = |name, damage, from, to| Case {
        name,
        scenario: PAD,
        seconds: Some(70.0),
        rate_factor: 1.0,
        damage: (damage, 0, from, to),
    };
    vec![
        plain("esd", "esd-touches"),
        plain("supply-steps", "supply-steps"),
        plain(
            "ambient-x10",
            include_str!("../scenarios/reliability/ambient-x10.toml"),
        ),
        damaged("adc-stuck", Damage::Stuck, 10.0, 14.0),
        damaged("adc-saturated", Damage::Saturated, 10.0, 20.0),
        damaged("disconnected", Damage::Disconnected, 10.0, 50.0),
        Case {
            rate_factor: 1.02,
            ..plain("rate-fast", PAD)
        },
        Case {
            rate_factor: 0.98,
            ..plain("rate-slow", PAD)
        },
    ]
}

/// The 24-hour ambient run (bench only).
pub fn ambient_24h() -> Case {
    Case {
        name: "ambient-24h",
        scenario: "esd-bench",
        seconds: Some(24.0 * 3600.0),
        rate_factor: 1.0,
        damage: (Damage::None, 0, 0.0, 0.0),
    }
}

/// A single pad on a desk lamp's base touched every 3 s, for the input
/// faults (our own scenario).
const PAD: &str = r#"
name = "lamp-base"
description = "one pad on a lamp base, touched every 3 s"
duration_s = 70.0
repeat_s = 3.0
seed = 53

[[channel]]
name = "base"

[[event]]
kind = "touch"
at_s = 1.0
channel = "base"
hold_s = 0.4
"#;

/// The codes of the top rail and of mid-scale for `bits`.
fn rails(bits: u8) -> (i32, i32) {
    ((1 << bits) - 1, 1 << (bits - 1))
}

/// Frames held in memory as a [`FrameSource`] (the case's damaged codes).
struct Frames {
    info: SourceInfo,
    codes: Vec<i32>,
    at: usize,
}

impl FrameSource for Frames {
    fn info(&self) -> &SourceInfo {
        &self.info
    }
    fn read(&mut self, buf: &mut [i32]) -> Result<usize, String> {
        let n = self.info.channels.len();
        let rest = self.codes.get(self.at..).unwrap_or(&[]);
        let take = (buf.len() / n).min(rest.len() / n) * n;
        for (slot, c) in buf.iter_mut().zip(rest.iter().take(take)) {
            *slot = *c;
        }
        self.at += take;
        Ok(take / n)
    }
}

/// Runs a case through the detector with the default touch settings.
pub fn run(case: &Case) -> Result<Outcome, String> {
    let mut s = if case.scenario.contains("[[channel]]") {
        Scenario::from_toml_str(case.scenario, case.name).map_err(|e| e.to_string())?
    } else {
        Scenario::builtin(case.scenario).map_err(|e| e.to_string())?
    };
    let seconds = case.seconds.unwrap_or(s.duration_s());
    let told_rate = s.adc.rate_hz;
    // The board's real rate: the scenario rendered at it, the detector told
    // the nominal one; label times scale with it.
    s.adc.rate_hz = told_rate * case.rate_factor;
    let real_seconds = seconds;
    let render = s
        .render(&RenderOptions {
            seconds: Some(real_seconds),
            seed: None,
        })
        .map_err(|e| e.to_string())?;
    let names = s.channel_names();
    let labels: Vec<Label> = s
        .labels(real_seconds)
        .into_iter()
        .filter(|l| l.kind == LabelKind::Touch)
        .map(|l| Label {
            start_s: l.start_s * case.rate_factor,
            end_s: l.end_s * case.rate_factor,
            ..l
        })
        .collect();
    let (damage, ch, from, to) = case.damage;
    let cfg;
    let outcome = if damage == Damage::None && case.rate_factor == 1.0 {
        let mut src = RenderSource::new(render);
        cfg = config_for(&src, None, None, None)?;
        replay(&mut src, &cfg, &mut |_| Ok(()), None, true)?
    } else {
        let mut src = RenderSource::new(render);
        let bits = src.bits();
        let mut codes = Vec::new();
        let mut buf = vec![0i32; 4096 * names.len()];
        loop {
            let n = src.read(&mut buf)?;
            if n == 0 {
                break;
            }
            codes.extend_from_slice(buf.get(..n * names.len()).unwrap_or(&[]));
        }
        let (top, mid) = rails(bits);
        let nch = names.len();
        let first = (from * told_rate) as usize;
        let last = (to * told_rate) as usize;
        let held = codes.get(first * nch + ch).copied().unwrap_or(mid);
        for f in first..last {
            if let Some(c) = codes.get_mut(f * nch + ch) {
                *c = match damage {
                    Damage::None => *c,
                    Damage::Stuck => held,
                    Damage::Saturated => top - (f % 3) as i32,
                    Damage::Disconnected => mid + [0, 1, -1, 2, -2, 1, 0, -1][f % 8],
                };
            }
        }
        let mut src = Frames {
            info: SourceInfo {
                name: "reliability case".into(),
                channels: names.clone(),
                rate_hz: told_rate,
                bits,
                signed: false,
                start_s: 0.0,
            },
            codes,
            at: 0,
        };
        cfg = config_for(&src, None, None, None)?;
        replay(&mut src, &cfg, &mut |_| Ok(()), None, true)?
    };
    let score = score_events(
        &outcome.events,
        told_rate,
        &names,
        &labels,
        &ScoreOptions::TOUCH,
    )?;
    let mut faults: Vec<FaultSpan> = Vec::new();
    for e in &outcome.events {
        let t = e.sample as f64 / told_rate;
        match e.kind {
            EventKind::Fault(f) => faults.push(FaultSpan {
                channel: e.channel,
                fault: f,
                raised_s: t,
                cleared_s: None,
            }),
            EventKind::FaultClear(f) => {
                if let Some(open) = faults
                    .iter_mut()
                    .rev()
                    .find(|x| x.fault == f && x.channel == e.channel && x.cleared_s.is_none())
                {
                    open.cleared_s = Some(t);
                }
            }
            _ => {}
        }
    }
    // A touch on the damaged channel from just before the damage to the
    // end of the re-learning after it cannot be seen: excused if missed.
    let damaged = names.get(ch).map_or("", String::as_str);
    let excused = if damage == Damage::None {
        0
    } else {
        score
            .channels
            .iter()
            .filter(|c| c.name == damaged)
            .flat_map(|c| c.missed_at_s.iter())
            .filter(|&&t| t > from - 0.5 && t < to + EXCUSED_AFTER_S)
            .count()
    };
    Ok(Outcome {
        case: case.name,
        seconds: outcome.frames as f64 / told_rate,
        score,
        faults,
        excused,
    })
}
