//! The timeline expanded over a run (repeats included), and the labels it
//! gives.

use super::*;

/// The timeline expanded over a run: every action at its absolute time.
#[derive(Debug, Clone)]
pub struct Plan {
    /// Run length, seconds.
    pub seconds: f64,
    /// Frames in the run.
    pub frames: u64,
    /// Per channel: `(touch, finger capacitance F, scale)`, sorted by start;
    /// scale is 1 on the touched channel and `body.spill` on its neighbours.
    pub touches: Vec<Vec<(Touch, f64, f64)>>,
    /// Touch labels `(channel, start, end)`.
    pub touch_labels: Vec<(usize, f64, f64)>,
    /// Mains events.
    pub mains_events: Vec<MainsEvent>,
    /// Lamp switching `(time, lamp, firing or None)`, sorted.
    pub lamp_switching: Vec<(f64, usize, Option<f64>)>,
    /// Ground changes `(time, floating)`, sorted.
    pub ground: Vec<(f64, bool)>,
    /// Conductor distance schedules.
    pub distances: Vec<DistanceSchedule>,
    /// Discharges `(discharge, channel or all)`, sorted.
    pub discharges: Vec<(Discharge, Option<usize>)>,
}

impl Plan {
    pub(super) fn new(s: &Scenario, seconds: f64) -> Plan {
        let period = s.file.repeat_s.unwrap_or(f64::INFINITY);
        let reps = if period.is_finite() {
            (seconds / period).ceil().max(1.0) as u64
        } else {
            1
        };
        let rate = s.adc.rate_hz;
        let frames = (seconds * rate).round() as u64;
        let nch = s.channels.len();
        let mut plan = Plan {
            seconds,
            frames,
            touches: vec![Vec::new(); nch],
            touch_labels: Vec::new(),
            mains_events: Vec::new(),
            lamp_switching: Vec::new(),
            ground: Vec::new(),
            distances: s
                .conductors
                .iter()
                .map(|c| DistanceSchedule {
                    depth_m: c.depth_m,
                    points: vec![(0.0, c.start_m)],
                })
                .collect(),
            discharges: Vec::new(),
        };
        let mut moves: Vec<(f64, usize, f64, f64)> = Vec::new();
        for k in 0..reps {
            let off = if period.is_finite() {
                k as f64 * period
            } else {
                0.0
            };
            if k > 0 {
                for (ci, c) in s.conductors.iter().enumerate() {
                    moves.push((off, ci, 0.0, c.start_m));
                }
            }
            for a in &s.actions {
                match *a {
                    Action::Touch {
                        channel,
                        touch,
                        area_m2,
                    } => {
                        let t = Touch {
                            start_s: touch.start_s + off,
                            ..touch
                        };
                        if t.start_s >= seconds {
                            continue;
                        }
                        let cf = s
                            .channels
                            .get(channel)
                            .map_or(0.0, |c| c.contact.capacitance(area_m2));
                        if let Some(v) = plan.touches.get_mut(channel) {
                            v.push((t, cf, 1.0));
                        }
                        if s.file.body.spill > 0.0 {
                            for nb in [channel.wrapping_sub(1), channel + 1] {
                                if let (Some(v), Some(c)) =
                                    (plan.touches.get_mut(nb), s.channels.get(nb))
                                {
                                    v.push((t, c.contact.capacitance(area_m2), s.file.body.spill));
                                }
                            }
                        }
                        plan.touch_labels
                            .push((channel, t.start_s, t.end_s().min(seconds)));
                    }
                    Action::Move {
                        conductor,
                        at_s,
                        duration_s,
                        to_m,
                    } => {
                        moves.push((at_s + off, conductor, duration_s, to_m));
                    }
                    Action::Lamp { lamp, at_s, on } => {
                        plan.lamp_switching.push((at_s + off, lamp, on))
                    }
                    Action::Esd {
                        at_s,
                        kv,
                        count,
                        interval_s,
                        channel,
                    } => {
                        for d in burst(
                            at_s + off,
                            kv,
                            count,
                            interval_s,
                            s.file.ambient.esd_charge_fraction,
                        ) {
                            if d.at_s < seconds {
                                plan.discharges.push((d, channel));
                            }
                        }
                    }
                    Action::Mains(m) => plan.mains_events.push(shift(m, off)),
                    Action::Ground { at_s, floating } => plan.ground.push((at_s + off, floating)),
                }
            }
        }
        moves.sort_by(|a, b| a.0.total_cmp(&b.0));
        for (at, ci, dur, to) in moves {
            if let Some(d) = plan.distances.get_mut(ci) {
                let cur = d.offset(at);
                d.points.push((at, cur));
                d.points.push((at + dur, to));
            }
        }
        for v in &mut plan.touches {
            v.sort_by(|a, b| a.0.start_s.total_cmp(&b.0.start_s));
        }
        plan.lamp_switching.sort_by(|a, b| a.0.total_cmp(&b.0));
        plan.ground.sort_by(|a, b| a.0.total_cmp(&b.0));
        plan.discharges
            .sort_by(|a, b| a.0.at_s.total_cmp(&b.0.at_s));
        plan
    }

    /// Total conductor coupling into channel `ch` at `t`, farads.
    pub fn conductor_coupling(&self, s: &Scenario, ch: usize, t: f64) -> f64 {
        let mut c = 0.0;
        for (ci, cond) in s.conductors.iter().enumerate() {
            if cond.channels.contains(&ch) {
                if let Some(d) = self.distances.get(ci) {
                    c += cond.geometry.capacitance(d.distance(t));
                }
            }
        }
        c
    }

    pub(super) fn labels(&self, s: &Scenario) -> Vec<Label> {
        let mut out: Vec<Label> = self
            .touch_labels
            .iter()
            .filter(|(_, a, b)| a < b)
            .map(|&(ch, a, b)| Label {
                channel: s
                    .channels
                    .get(ch)
                    .map_or_else(String::new, |c| c.name.clone()),
                kind: LabelKind::Touch,
                start_s: a,
                end_s: b,
            })
            .collect();
        if !s.conductors.is_empty() {
            let sched = MainsSchedule::new(&self.mains_events);
            let rate = s.adc.rate_hz;
            let ratio = s.file.labels.field_ratio;
            for (ch, c) in s.channels.iter().enumerate() {
                if !s.conductors.iter().any(|x| x.channels.contains(&ch)) {
                    continue;
                }
                let mut start: Option<f64> = None;
                for n in 0..=self.frames {
                    let t = n as f64 / rate;
                    let inside = n < self.frames
                        && sched.energised(t)
                        && self.conductor_coupling(s, ch, t) >= ratio * c.ambient_f;
                    match (inside, start) {
                        (true, None) => start = Some(t),
                        (false, Some(a)) => {
                            out.push(Label {
                                channel: c.name.clone(),
                                kind: LabelKind::Field,
                                start_s: a,
                                end_s: t,
                            });
                            start = None;
                        }
                        _ => {}
                    }
                }
            }
        }
        out.sort_by(|a, b| {
            a.start_s
                .total_cmp(&b.start_s)
                .then(a.channel.cmp(&b.channel))
        });
        out
    }
}

fn shift(m: MainsEvent, off: f64) -> MainsEvent {
    match m {
        MainsEvent::Dip {
            at_s,
            duration_s,
            residual,
        } => MainsEvent::Dip {
            at_s: at_s + off,
            duration_s,
            residual,
        },
        MainsEvent::Swell {
            at_s,
            duration_s,
            magnitude,
        } => MainsEvent::Swell {
            at_s: at_s + off,
            duration_s,
            magnitude,
        },
        MainsEvent::Off { at_s } => MainsEvent::Off { at_s: at_s + off },
        MainsEvent::On { at_s } => MainsEvent::On { at_s: at_s + off },
        MainsEvent::FrequencyStep { at_s, to_hz } => MainsEvent::FrequencyStep {
            at_s: at_s + off,
            to_hz,
        },
    }
}
