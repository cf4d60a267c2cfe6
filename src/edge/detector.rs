//! [`EdgeDetector`]: the edge front end feeding the shared back end.

use crate::config::Config;
use crate::detector::{Backend, ChannelSnapshot};
use crate::error::ConfigError;
use crate::event::Event;
use crate::mains::MainsSystem;

use super::channel::EdgeStats;
use super::config::EdgeConfig;
use super::frontend::EdgeFrontend;

/// The whole detector on a comparator or GPIO input for `N` channels
/// (default 1): [`EdgeFrontend`] feeding the same [`Backend`] as the ADC's
/// [`Detector`](crate::Detector), so touch and field profiles, panel rules,
/// faults, snapshots and events are those of the ADC path.
///
/// The back end is built from the caller's [`Config`] with `nohum_codes`
/// set to 0: a comparator input at rest below its threshold reads 0 and is
/// not a fault. Its other fields keep their meaning in mains cycles (here
/// windows of one tracked mains period); `sample_rate_hz` and `adc_bits`
/// are not used (they must still be valid). [`Event::sample`] and
/// [`ChannelSnapshot::samples`] count **ticks** (timer ticks since the
/// first call, or pin reads), at the end of the window the event was
/// decided on.
///
/// ```
/// use humsense::edge::{EdgeConfig, EdgeDetector, TimerWidth};
/// use humsense::{Config, EventKind, MainsMode};
/// let edge = EdgeConfig::new(1_000_000, TimerWidth::Bits32);
/// let mut det: EdgeDetector = EdgeDetector::new(Config::touch().with_mains(MainsMode::Hz50), edge).unwrap();
/// // 50 Hz pulses of 10 % duty (A = 1.05 Vt), then 40 % (A = 3.2 Vt) for a second.
/// let mut touches = 0;
/// for k in 0..200u32 {
///     let width = if (100..150).contains(&k) { 8_000 } else { 2_000 };
///     let centre = 20_000 * k + 5_000;
///     det.push_edge(0, true, centre - width / 2, |_| {});
///     det.push_edge(0, false, centre + width / 2, |e| {
///         if e.kind == EventKind::TouchOn { touches += 1; }
///     });
/// }
/// assert_eq!(touches, 1);
/// ```
///
/// Never panics, for any edge sequence and any configuration that
/// [`EdgeDetector::new`] accepted.
#[derive(Clone, Debug)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct EdgeDetector<const N: usize = 1> {
    front: EdgeFrontend<N>,
    back: Backend<N, 0>,
}

impl<const N: usize> EdgeDetector<N> {
    /// Validates both configurations and builds the detector; the error
    /// names the field that is wrong. Never panics.
    pub fn new(config: Config, edge: EdgeConfig) -> Result<Self, ConfigError> {
        let front = EdgeFrontend::new(&edge, &config)?;
        let back = Backend::new(&Config {
            nohum_codes: 0.0,
            ..config
        })?;
        Ok(Self { front, back })
    }

    /// Takes one edge of channel `ch` (`rising`: the pin went high) at timer
    /// count `count`, for example from the pin's interrupt handler; calls
    /// `emit` for each event of the windows it completes. Never panics.
    #[inline]
    pub fn push_edge(&mut self, ch: usize, rising: bool, count: u32, mut emit: impl FnMut(Event)) {
        let back = &mut self.back;
        self.front
            .push_edge(ch, rising, count, |c| back.process(c, &mut emit));
    }

    /// The timer has reached `count` with no edge: closes the windows that
    /// ended. Call it at least every half timer wrap while the pins are
    /// quiet (see [`crate::edge`]). Never panics.
    pub fn advance(&mut self, count: u32, mut emit: impl FnMut(Event)) {
        let back = &mut self.back;
        self.front.advance(count, |c| back.process(c, &mut emit));
    }

    /// Takes one read of every pin (`true`: high) at the fixed rate
    /// [`EdgeConfig::tick_hz`]. Never panics.
    pub fn push_levels(&mut self, levels: &[bool; N], mut emit: impl FnMut(Event)) {
        let back = &mut self.back;
        self.front
            .push_levels(levels, |c| back.process(c, &mut emit));
    }

    /// Reads every pin through [`embedded_hal::digital::InputPin`] and takes
    /// the reads as one tick of [`push_levels`](Self::push_levels). If a
    /// read fails, its error is returned and the tick is not taken (the
    /// clock then runs one tick slow). Never panics.
    pub fn poll<P: embedded_hal::digital::InputPin>(
        &mut self,
        pins: &mut [P; N],
        emit: impl FnMut(Event),
    ) -> Result<(), P::Error> {
        let mut levels = [false; N];
        for (l, p) in levels.iter_mut().zip(pins.iter_mut()) {
            *l = p.is_high()?;
        }
        self.push_levels(&levels, emit);
        Ok(())
    }

    /// A view of channel `ch` after its latest window, as
    /// [`Detector::snapshot`](crate::Detector::snapshot) gives it (amplitude
    /// in Q8 codes at [`UNIT_Q8`](super::UNIT_Q8) per threshold unit; `samples` in ticks),
    /// or `None` past the last channel. Never panics.
    pub fn snapshot(&self, ch: usize) -> Option<ChannelSnapshot> {
        let mut s = self.back.snapshot(ch)?;
        s.mains_hz = self.mains_hz();
        s.mains_locked = self.mains_locked();
        s.samples = self.front.now().wrapping_add(1);
        Some(s)
    }

    /// Counts of channel `ch`'s input (rejections, glitches, pulses), or
    /// `None` past the last channel.
    pub fn stats(&self, ch: usize) -> Option<EdgeStats> {
        self.front.stats(ch)
    }

    /// Present mains frequency in hertz.
    pub fn mains_hz(&self) -> f32 {
        self.front.mains().frequency_hz()
    }

    /// Whether the mains period tracker is locked.
    pub fn mains_locked(&self) -> bool {
        self.front.mains().locked()
    }

    /// The mains system chosen or configured.
    pub fn mains_system(&self) -> MainsSystem {
        self.front.mains().system()
    }

    /// The edge front end.
    pub fn frontend(&self) -> &EdgeFrontend<N> {
        &self.front
    }

    /// The back end.
    pub fn backend(&self) -> &Backend<N, 0> {
        &self.back
    }
}

impl EdgeDetector<1> {
    /// One read of a single-channel detector's pin (`true`: high). Never
    /// panics.
    pub fn push_level(&mut self, high: bool, emit: impl FnMut(Event)) {
        self.push_levels(&[high], emit);
    }
}
