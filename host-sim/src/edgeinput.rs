//! Edge logs and polled-level logs through the core crate's comparator
//! input ([`humsense::edge`]): what replay and tune run instead of the ADC
//! [`Frontend`](humsense::Frontend) for those inputs.
//!
//! ## Edge logs
//! Each row's `time_s` becomes a timer count: `tick = round((time_s −
//! start) · tick_hz)`, the count is `tick` modulo the timer's width
//! (`[edge] tick_hz`, `timer_bits`; default 1 MHz, 32 bits), and the row is
//! handed to [`EdgeFrontend::push_edge`]. Between rows, and up to the log's
//! end, [`EdgeFrontend::advance`] is called every [`ADVANCE_S`] of log time
//! (and never more than a quarter of the timer's wrap apart), as a
//! firmware's periodic interrupt would: often enough for the wrap rule of
//! [`humsense::edge`] (two calls less than half a wrap apart) and for every
//! window of one mains period to be closed on time. The first call is at
//! the start rows' time (tick 0); a channel whose start row puts it in its
//! active state gets an edge there.
//!
//! ## Polled-level logs
//! Each row is one read of every pin, handed to
//! [`EdgeFrontend::push_levels`] at the log's rate (`tick_hz` is the rate).
//!
//! ## The back end
//! The cycles go to the same [`Backend`](humsense::Backend) as the ADC path's, built from the
//! configuration with `nohum_codes = 0` ([`backend_config`]), as
//! [`EdgeDetector::new`] builds it: a comparator at rest reads 0. Events
//! count ticks since the start ([`Event::sample`]), so their times are
//! `start + sample / tick_hz`.

use crate::input::{for_each_frame, EdgeLog, FrameSource};
use humsense::edge::{EdgeConfig, EdgeDetector, EdgeFrontend};
use humsense::{Config, Cycle, Event};

/// Log time between calls of `advance` while the pins are quiet, seconds.
pub const ADVANCE_S: f64 = 0.005;

/// The back end's configuration for an edge input: `cfg` with
/// `nohum_codes = 0`, as [`EdgeDetector::new`] makes it.
pub fn backend_config(cfg: &Config) -> Config {
    Config {
        nohum_codes: 0.0,
        ..*cfg
    }
}

/// What receives the calls of an edge log's schedule: the front end alone,
/// or a whole [`EdgeDetector`].
trait EdgeTarget<const N: usize> {
    fn edge(&mut self, ch: usize, rising: bool, count: u32);
    fn advance(&mut self, count: u32);
}

/// Runs an edge log's schedule (see the module docs) into `target`;
/// `on_level(tick, levels)` sees the pin levels (0 or 1) before and after
/// each change and at each `advance`. Returns the log's length in ticks.
fn schedule<const N: usize>(
    log: &mut EdgeLog,
    edge: &EdgeConfig,
    target: &mut dyn EdgeTarget<N>,
    on_level: &mut dyn FnMut(u64, &[i32; N]),
) -> Result<u64, String> {
    let hz = f64::from(edge.tick_hz);
    let mask = u64::from(edge.timer.mask());
    let t0 = log.start_s();
    let to_tick = |t: f64| ((t - t0) * hz).round().max(0.0) as u64;
    let step = ((hz * ADVANCE_S) as u64).clamp(1, (mask / 4).max(1));
    let count = |tick: u64| (tick & mask) as u32;
    let mut levels = [0i32; N];
    target.advance(0);
    for (ch, &high) in log.start_levels().iter().enumerate() {
        if let Some(l) = levels.get_mut(ch) {
            *l = i32::from(high);
        }
        if high != edge.active_low {
            target.edge(ch, high, 0);
        }
    }
    on_level(0, &levels);
    let mut next = step;
    while let Some(row) = log.next_change()? {
        let tick = to_tick(row.time_s);
        while next < tick {
            target.advance(count(next));
            on_level(next, &levels);
            next += step;
        }
        if tick > 0 {
            on_level(tick - 1, &levels);
        }
        if let Some(l) = levels.get_mut(row.channel) {
            *l = i32::from(row.level);
        }
        on_level(tick, &levels);
        target.edge(row.channel, row.level, count(tick));
        next = next.max(tick + 1);
    }
    let end = to_tick(log.end_s());
    while next < end {
        target.advance(count(next));
        on_level(next, &levels);
        next += step;
    }
    target.advance(count(end));
    on_level(end, &levels);
    Ok(end)
}

struct FrontTarget<'a, const N: usize, F: FnMut(&Cycle<N, 0>)> {
    front: &'a mut EdgeFrontend<N>,
    on_cycle: F,
}

impl<const N: usize, F: FnMut(&Cycle<N, 0>)> EdgeTarget<N> for FrontTarget<'_, N, F> {
    fn edge(&mut self, ch: usize, rising: bool, count: u32) {
        self.front.push_edge(ch, rising, count, &mut self.on_cycle);
    }
    fn advance(&mut self, count: u32) {
        self.front.advance(count, &mut self.on_cycle);
    }
}

struct DetectorTarget<'a, const N: usize> {
    det: &'a mut EdgeDetector<N>,
    events: &'a mut Vec<Event>,
}

impl<const N: usize> EdgeTarget<N> for DetectorTarget<'_, N> {
    fn edge(&mut self, ch: usize, rising: bool, count: u32) {
        let ev = &mut *self.events;
        self.det.push_edge(ch, rising, count, |e| ev.push(e));
    }
    fn advance(&mut self, count: u32) {
        let ev = &mut *self.events;
        self.det.advance(count, |e| ev.push(e));
    }
}

/// Streams an edge log through an [`EdgeFrontend`] built from `edge` and
/// `cfg`; `on_level(tick, levels)` sees the pins, `on_cycle` each window's
/// cycle. Returns the log's length in ticks.
pub fn drive_edges<const N: usize>(
    log: &mut EdgeLog,
    cfg: &Config,
    edge: &EdgeConfig,
    mut on_level: impl FnMut(u64, &[i32; N]),
    mut on_cycle: impl FnMut(&Cycle<N, 0>) -> Result<u32, String>,
) -> Result<u64, String> {
    let mut front =
        EdgeFrontend::<N>::new(edge, &backend_config(cfg)).map_err(|e| e.to_string())?;
    let mut failed: Option<String> = None;
    let mut target = FrontTarget {
        front: &mut front,
        on_cycle: |c: &Cycle<N, 0>| {
            if failed.is_none() {
                // The edge front end has no tracker floor to set.
                if let Err(m) = on_cycle(c) {
                    failed = Some(m);
                }
            }
        },
    };
    let ticks = schedule::<N>(log, edge, &mut target, &mut on_level)?;
    match failed {
        Some(m) => Err(m),
        None => Ok(ticks),
    }
}

/// Streams a polled-level log through an [`EdgeFrontend`] built from
/// `edge` (its `tick_hz` the log's rate) and `cfg`. Returns the reads.
pub fn drive_levels<const N: usize>(
    src: &mut dyn FrameSource,
    cfg: &Config,
    edge: &EdgeConfig,
    mut on_frame: impl FnMut(u64, &[i32; N]),
    mut on_cycle: impl FnMut(&Cycle<N, 0>) -> Result<u32, String>,
) -> Result<u64, String> {
    let mut front =
        EdgeFrontend::<N>::new(edge, &backend_config(cfg)).map_err(|e| e.to_string())?;
    for_each_frame::<N>(src, |index, codes| {
        on_frame(index, codes);
        let mut failed: Option<String> = None;
        front.push_levels(&codes.map(|c| c != 0), |c| {
            if failed.is_none() {
                if let Err(m) = on_cycle(c) {
                    failed = Some(m);
                }
            }
        });
        failed.map_or(Ok(()), Err)
    })
}

/// A full run of an edge log through an [`EdgeDetector`] built from `cfg`
/// and `edge`, on the same schedule: the check of a tuned configuration.
pub fn full_edge_events<const N: usize>(
    log: &mut EdgeLog,
    cfg: &Config,
    edge: &EdgeConfig,
) -> Result<Vec<Event>, String> {
    let mut det = EdgeDetector::<N>::new(*cfg, *edge).map_err(|e| e.to_string())?;
    let mut events = Vec::new();
    let mut target = DetectorTarget {
        det: &mut det,
        events: &mut events,
    };
    schedule::<N>(log, edge, &mut target, &mut |_, _| {})?;
    Ok(events)
}

/// A full run of a polled-level log through an [`EdgeDetector`].
pub fn full_level_events<const N: usize>(
    src: &mut dyn FrameSource,
    cfg: &Config,
    edge: &EdgeConfig,
) -> Result<Vec<Event>, String> {
    let mut det = EdgeDetector::<N>::new(*cfg, *edge).map_err(|e| e.to_string())?;
    let mut events = Vec::new();
    for_each_frame::<N>(src, |_, codes| {
        det.push_levels(&codes.map(|c| c != 0), |e| events.push(e));
        Ok(())
    })?;
    Ok(events)
}
