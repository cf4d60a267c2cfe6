//! Streaming render of a scenario to ADC codes.
//!
//! The renderer composes the stages per sample, at the ADC rate:
//! mains → (ambient, lamps, body, conductors: Σ C_i V_i) → sense node →
//! ESD injection → broadband noise → front end → ADC. Memory is bounded by
//! the scenario's timeline, never by the run length: samples go to the
//! caller's block in [`Render::fill`].
//!
//! Floating ground (battery board): the board's ground takes the hum
//! potential `V_g = V_mains · C_gm / (C_gm + C_ge)` of its own capacitive
//! divider, every source is seen relative to it (`V_i − V_g`), and each
//! coupling `C_i` acts in series with the board's capacitance to earth
//! `C_ge` (the return path). A first-order model: it scales and shifts
//! everything, as a floating board does.

use crate::adc::AdcState;
use crate::coupling::SenseNodeState;
use crate::frontend::{AnalogFrontEnd, AnalogFrontEndState, PinState};
use crate::interference::DriftState;
use crate::mains::MainsSource;
use crate::rng::{stream, Rng};
use crate::scenario::error::{locate, KeyPath};
use crate::scenario::{Plan, RenderOptions, Scenario, ScenarioError, MAX_RUN_S};

/// How often ambient drift advances, seconds.
const DRIFT_UPDATE_S: f64 = 0.01;

struct ChannelRun {
    node: SenseNodeState,
    fe: AnalogFrontEndState,
    adc: AdcState,
    drift: DriftState,
    noise: Rng,
    next_touch: usize,
    active: Vec<usize>,
    /// The level the MCU reads on a comparator's pin ([`Render::enable_pins`]).
    pin: Option<PinState>,
    last_pin_v: f64,
}

/// A change of a comparator pin: time (seconds), channel, new level.
pub type PinChange = (f64, usize, bool);

/// A render in progress. Create with [`Scenario::render`].
pub struct Render {
    scenario: Scenario,
    plan: Plan,
    mains: MainsSource,
    shared_drift: DriftState,
    runs: Vec<ChannelRun>,
    lamp_on: Vec<Option<f64>>,
    floating: bool,
    dt: f64,
    n: u64,
    since_drift: f64,
    next_lamp: usize,
    next_ground: usize,
    next_esd: usize,
    lamp_buf: Vec<(f64, f64)>,
    pins: bool,
    changes: Vec<PinChange>,
}

impl Render {
    pub(crate) fn new(s: &Scenario, seconds: f64, seed: u64) -> Result<Render, String> {
        let plan = s.plan(seconds);
        let mains = MainsSource::new(s.mains.clone(), &plan.mains_events, seed)?;
        let runs = (0..s.channels.len() as u64)
            .map(|c| {
                let base = stream::CHANNEL_BASE + 16 * c;
                ChannelRun {
                    node: SenseNodeState::default(),
                    fe: AnalogFrontEndState::default(),
                    adc: AdcState::new(Rng::new(seed, base)),
                    drift: DriftState::new(Rng::new(seed, base + 1)),
                    noise: Rng::new(seed, base + 2),
                    next_touch: 0,
                    active: Vec::new(),
                    pin: None,
                    last_pin_v: 0.0,
                }
            })
            .collect();
        Ok(Render {
            lamp_on: s
                .file
                .lamps
                .iter()
                .map(|l| if l.on { Some(l.firing_deg) } else { None })
                .collect(),
            floating: s.file.ground.floating,
            scenario: s.clone(),
            plan,
            mains,
            shared_drift: DriftState::new(Rng::new(seed, stream::AMBIENT_SHARED)),
            runs,
            dt: 1.0 / s.adc.rate_hz,
            n: 0,
            since_drift: 0.0,
            next_lamp: 0,
            next_ground: 0,
            next_esd: 0,
            lamp_buf: Vec::with_capacity(s.lamps.len()),
            pins: false,
            changes: Vec::new(),
        })
    }

    /// Also follows the logic level an MCU reads on each channel's pin
    /// ([`crate::frontend::Comparator::pin_step`]), for edge logs; an error
    /// if the front end is not a comparator or the render has begun.
    pub fn enable_pins(&mut self) -> Result<(), String> {
        if !matches!(self.scenario.frontend, AnalogFrontEnd::Comparator(_)) {
            return Err(format!(
                "{}: the front end is not a comparator, so there is no pin to log; \
                 --digital needs [frontend] kind = \"comparator\"",
                self.scenario.origin
            ));
        }
        if self.n > 0 {
            return Err("pins must be enabled before the first frame".into());
        }
        self.pins = true;
        Ok(())
    }

    /// Each channel's pin level at the first frame (after one frame has
    /// been rendered with pins enabled), or `None`.
    pub fn start_levels(&self) -> Option<Vec<bool>> {
        self.runs.iter().map(|r| r.pin.map(|p| p.high)).collect()
    }

    /// Takes the pin changes since the last call, in frame order (within a
    /// frame, in channel order: times of different channels in one step
    /// may be out of order).
    pub fn take_changes(&mut self, into: &mut Vec<PinChange>) {
        into.append(&mut self.changes);
    }

    /// Number of channels (values per frame).
    pub fn channels(&self) -> usize {
        self.runs.len()
    }

    /// Sample rate, hertz.
    pub fn rate_hz(&self) -> f64 {
        self.scenario.adc.rate_hz
    }

    /// Frames in the whole run.
    pub fn frames_total(&self) -> u64 {
        self.plan.frames
    }

    /// Frames produced so far.
    pub fn frames_done(&self) -> u64 {
        self.n
    }

    /// The scenario being rendered.
    pub fn scenario(&self) -> &Scenario {
        &self.scenario
    }

    /// The expanded timeline.
    pub fn plan(&self) -> &Plan {
        &self.plan
    }

    /// Mains frequency now, hertz (for diagnostics and tests).
    pub fn mains_frequency(&self) -> f64 {
        self.mains.frequency()
    }

    /// Fills `out` with whole interleaved frames (`channels()` codes each, in
    /// channel order) and returns the number of frames written: 0 when the
    /// run is complete (or `out` cannot hold one frame). A trailing partial
    /// frame's slots are left untouched. Never panics.
    pub fn fill(&mut self, out: &mut [u16]) -> usize {
        let nch = self.runs.len().max(1);
        let mut frames = 0;
        for frame in out.chunks_exact_mut(nch) {
            if self.n >= self.plan.frames {
                break;
            }
            self.frame(frame);
            frames += 1;
        }
        frames
    }

    fn frame(&mut self, out: &mut [u16]) {
        let dt = self.dt;
        if self.n > 0 {
            self.mains.advance(dt);
        }
        let t = self.n as f64 * dt;
        self.n += 1;
        let s = &self.scenario;

        while let Some(&(at, lamp, on)) = self.plan.lamp_switching.get(self.next_lamp) {
            if at > t {
                break;
            }
            if let Some(slot) = self.lamp_on.get_mut(lamp) {
                *slot = on;
            }
            self.next_lamp += 1;
        }
        while let Some(&(at, fl)) = self.plan.ground.get(self.next_ground) {
            if at > t {
                break;
            }
            self.floating = fl;
            self.next_ground += 1;
        }
        self.since_drift += dt;
        let update_drift = self.since_drift >= DRIFT_UPDATE_S;
        if update_drift {
            s.drift.advance(&mut self.shared_drift, self.since_drift);
        }

        let v_m = self.mains.voltage();
        let phase = self.mains.phase();
        let g = &s.file.ground;
        let c_ge = g.earth_pf * 1e-12;
        let v_g = if self.floating {
            v_m * g.mains_pf / (g.mains_pf + g.earth_pf)
        } else {
            0.0
        };
        let floating = self.floating;
        let series = |c: f64| if floating { c * c_ge / (c + c_ge) } else { c };
        let v_body = v_m * s.body.hum_ratio();
        self.lamp_buf.clear();
        for (l, on) in s.lamps.iter().zip(&self.lamp_on) {
            if let Some(deg) = *on {
                let lamp = crate::interference::Lamp {
                    firing_deg: deg,
                    ..*l
                };
                self.lamp_buf
                    .push((series(l.coupling_f), lamp.cord_voltage(v_m, phase)));
            }
        }
        let lamp_v = &self.lamp_buf;
        let shared = self.shared_drift.factor();
        let noise_v = s.file.ambient.noise_v;

        for (ch, (run, slot)) in self.runs.iter_mut().zip(out.iter_mut()).enumerate() {
            let Some(c) = s.channels.get(ch) else {
                continue;
            };
            if update_drift {
                s.drift.advance(&mut run.drift, self.since_drift);
            }
            // Ambient: half shared (humidity), half own (people nearby).
            let amb = series(c.ambient_f * (shared * run.drift.factor()).sqrt());
            let mut q = amb * (v_m - v_g);
            let mut csum = amb;
            for &(cl, vl) in lamp_v {
                q += cl * (vl - v_g);
                csum += cl;
            }
            if let Some(list) = self.plan.touches.get(ch) {
                while let Some((tc, _, _)) = list.get(run.next_touch) {
                    if tc.start_s > t {
                        break;
                    }
                    run.active.push(run.next_touch);
                    run.next_touch += 1;
                }
                run.active
                    .retain(|&k| list.get(k).is_some_and(|(tc, _, _)| tc.end_s() > t));
                for &k in &run.active {
                    if let Some((tc, cf, scale)) = list.get(k) {
                        let frac = tc.fraction(t) * scale;
                        if frac > 0.0 {
                            let cb = series(s.body.effective_coupling(cf * frac));
                            q += cb * (v_body - v_g);
                            csum += cb;
                        }
                    }
                }
            }
            if !s.conductors.is_empty() {
                let cc = series(self.plan.conductor_coupling(s, ch, t));
                q += cc * (v_m - v_g);
                csum += cc;
            }
            let load = s.frontend.load_ohm(&run.fe);
            let mut v = c.node.step(&mut run.node, q, csum, load, dt);
            let mut k = self.next_esd;
            while let Some((d, target)) = self.plan.discharges.get(k) {
                if d.at_s > t {
                    break;
                }
                if target.is_none_or_eq(ch) {
                    c.node.inject(&mut run.node, d.charge_c, t - d.at_s);
                    v = c.node.voltage(&run.node);
                }
                k += 1;
            }
            if noise_v > 0.0 {
                v += noise_v * run.noise.gaussian();
            }
            let v0 = run.fe.last_input();
            let pin = s.frontend.output(&mut run.fe, v, dt);
            if self.pins {
                if let AnalogFrontEnd::Comparator(c) = &s.frontend {
                    let high = run.fe.comparator_high();
                    match &mut run.pin {
                        None => run.pin = Some(c.pin_start(pin, high)),
                        Some(ps) => {
                            if let Some(tc) =
                                c.pin_step(ps, v0, v, run.last_pin_v, pin, high, t, dt)
                            {
                                self.changes.push((tc, ch, ps.high));
                            }
                        }
                    }
                }
                run.last_pin_v = pin;
            }
            *slot = s.adc.sample(&mut run.adc, pin);
        }
        while let Some((d, _)) = self.plan.discharges.get(self.next_esd) {
            if d.at_s > t {
                break;
            }
            self.next_esd += 1;
        }
        if update_drift {
            self.since_drift = 0.0;
        }
    }
}

trait TargetExt {
    fn is_none_or_eq(&self, ch: usize) -> bool;
}

impl TargetExt for Option<usize> {
    fn is_none_or_eq(&self, ch: usize) -> bool {
        match self {
            None => true,
            Some(c) => *c == ch,
        }
    }
}

impl Scenario {
    /// Starts a streaming render (see [`crate::render::Render`]).
    pub fn render(&self, opts: &RenderOptions) -> Result<crate::render::Render, ScenarioError> {
        let seconds = opts.seconds.unwrap_or(self.file.duration_s);
        if !(seconds.is_finite() && seconds > 0.0 && seconds <= MAX_RUN_S) {
            // duration_s was checked at load time: this is --seconds.
            return Err(ScenarioError {
                file: self.origin.clone(),
                line: None,
                column: None,
                key: None,
                message: format!(
                    "--seconds {}: expected a run length above 0 and at most {MAX_RUN_S:e} s",
                    crate::text::num(seconds)
                ),
            });
        }
        let reps = self.file.repeat_s.map_or(1.0, |p| (seconds / p).ceil());
        let expanded = reps * self.actions.len() as f64;
        if expanded > 5e6 {
            let at = locate(&self.source, &KeyPath::top("repeat_s"));
            return Err(ScenarioError {
                file: self.origin.clone(),
                line: at.map(|(l, _)| l),
                column: at.map(|(_, c)| c),
                key: Some("repeat_s".into()),
                message: format!(
                    "the timeline repeated over {seconds} s expands to {expanded:.0} events; expected at most 5000000 (use a longer repeat_s or a shorter run)"
                ),
            });
        }
        Render::new(self, seconds, opts.seed.unwrap_or(self.file.seed)).map_err(|m| ScenarioError {
            file: self.origin.clone(),
            line: None,
            column: None,
            key: None,
            message: m,
        })
    }
}
