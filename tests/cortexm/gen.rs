//! Deterministic test signals for the on-target tests and the Cortex-M
//! benchmark, computed in integers only so that the host build and every
//! target produce the same samples bit for bit (no float, no platform maths
//! library).
//!
//! A signal is mains hum: a phase accumulator (`u32`, 2^32 = one turn) and
//! an integer polynomial sine, scaled by a piecewise-linear envelope per
//! channel (ambient hum, touches, a slow approach), plus optional third and
//! fifth harmonics, a triangular mains-frequency drift, approximately
//! Gaussian noise from a fixed-seed xorshift32, and
//! optional full-scale spikes; then clipped to the ADC's code range (a bias
//! of 0 with a range of `0..=max` is a single-supply front end: half-wave).
//!
//! Shared by `tests/on_target.rs` and `examples/cortexm_bench/` through
//! `#[path]`; `core` only.

/// xorshift32 (13, 17, 5): fixed seed, never zero, period 2^32 − 1.
#[derive(Clone, Copy, Debug)]
pub struct Rng(u32);

impl Rng {
    /// A generator from `seed` (0 is replaced by a fixed non-zero seed).
    pub const fn new(seed: u32) -> Self {
        Self(if seed == 0 { 0x9E37_79B9 } else { seed })
    }

    /// The next 32 random bits.
    #[inline]
    pub fn next_u32(&mut self) -> u32 {
        let mut x = self.0;
        x ^= x << 13;
        x ^= x >> 17;
        x ^= x << 5;
        self.0 = x;
        x
    }

    /// Approximately Gaussian, zero mean, RMS ≈ 147.8: the sum of the four
    /// bytes of one draw, minus 510 (range −510 to 510).
    #[inline]
    pub fn gauss148(&mut self) -> i32 {
        let v = self.next_u32();
        let s = (v & 0xff) + ((v >> 8) & 0xff) + ((v >> 16) & 0xff) + (v >> 24);
        s as i32 - 510
    }
}

/// Q15 coefficients of `sin(π/2 · x) ≈ x·(C1 − x²·(C3 − x²·(C5 − x²·C7)))`
/// for x in [0, 1] (Taylor terms of orders 1 to 7; with the truncating
/// shifts, error below 6.2 Q15 codes: 6.12 measured against `f64::sin` in
/// `tests/generator.rs`).
const C1: i32 = 51_472;
const C3: i32 = 21_167;
const C5: i32 = 2_611;
const C7: i32 = 153;

/// `sin(2π · phase / 2^32)` in Q15 (peak ±32 764), integers only. Every product
/// stays below 2^31.
#[inline]
pub fn sin_q15(phase: u32) -> i32 {
    let quadrant = phase >> 30;
    let mut x = phase & 0x3fff_ffff;
    if quadrant & 1 == 1 {
        x = 0x4000_0000 - x;
    }
    let x = (x >> 15) as i32; // Q15, 0 ..= 32 768
    let x2 = (x * x) >> 15;
    let mut t = C5 - ((C7 * x2) >> 15);
    t = C3 - ((t * x2) >> 15);
    t = C1 - ((t * x2) >> 15);
    let s = (t * x) >> 15;
    if quadrant >= 2 {
        -s
    } else {
        s
    }
}

/// Phase step per sample for `mhz` millihertz at `rate_hz` samples per
/// second: `round(2^32 · mhz / (1000 · rate_hz))`.
pub const fn phase_step(mhz: u32, rate_hz: u32) -> u32 {
    let den = rate_hz as u64 * 1000;
    (((mhz as u64) << 32) + den / 2).wrapping_div(if den == 0 { 1 } else { den }) as u32
}

/// One point of an amplitude envelope: the hum reaches `amp` codes (peak)
/// at `at_ms` milliseconds, linearly from the previous point.
#[derive(Clone, Copy, Debug)]
pub struct Knot {
    /// Time in milliseconds from the start of the signal.
    pub at_ms: u32,
    /// Peak amplitude of the fundamental in ADC codes.
    pub amp: u32,
}

/// Shorthand for a [`Knot`].
pub const fn k(at_ms: u32, amp: u32) -> Knot {
    Knot { at_ms, amp }
}

/// What one channel sees.
#[derive(Clone, Copy, Debug)]
pub struct ChannelSpec {
    /// Phase of this channel's hum relative to the mains, 2^32 = one turn.
    pub phase: u32,
    /// Envelope; the amplitude holds the first point's value before it and
    /// the last point's value after it. Must not be empty.
    pub knots: &'static [Knot],
    /// Third harmonic, as a fraction of the fundamental times 256.
    pub third_q8: i32,
    /// Fifth harmonic, as a fraction of the fundamental times 256.
    pub fifth_q8: i32,
    /// Noise RMS in sixteenths of a code (approximately).
    pub noise_x16: i32,
}

/// A whole multi-channel signal.
#[derive(Clone, Copy, Debug)]
pub struct SignalSpec {
    /// Samples per second per channel.
    pub rate_hz: u32,
    /// Mains frequency in millihertz.
    pub mains_mhz: u32,
    /// Code of zero input (the ADC bias).
    pub bias: i32,
    /// Lowest and highest code the ADC can return (clipping).
    pub lo: i32,
    /// See `lo`.
    pub hi: i32,
    /// Mean time between spikes in milliseconds (0: none). A spike is one
    /// to three samples at `lo` or `hi` on every channel at once.
    pub spike_ms: u32,
    /// Mains frequency drift: a triangular sweep between
    /// `mains_mhz − drift_mhz` and `mains_mhz + drift_mhz`, starting at the
    /// low end and rising, with a full period of `drift_ms` milliseconds
    /// (0: no drift). The step changes by a constant per sample (Q8
    /// fraction carried), so the phase is continuous.
    pub drift_mhz: u32,
    /// See `drift_mhz`.
    pub drift_ms: u32,
    /// PRNG seed.
    pub seed: u32,
}

/// Envelope state of one channel: amplitude in Q16 codes with a per-sample
/// increment (one division per segment, none per sample).
#[derive(Clone, Copy, Debug)]
struct Envelope {
    knots: &'static [Knot],
    /// Index of the next knot.
    next: usize,
    /// Sample index at which the next knot is reached.
    next_at: u32,
    amp_q16: i64,
    inc_q16: i64,
}

impl Envelope {
    fn new(knots: &'static [Knot], rate_hz: u32) -> Self {
        let first = knots.first().map_or(0, |k| k.amp);
        let mut e = Self {
            knots,
            next: 0,
            next_at: 0,
            amp_q16: i64::from(first) << 16,
            inc_q16: 0,
        };
        e.enter(0, rate_hz);
        e
    }

    /// Moves to the segment that contains sample `n`.
    fn enter(&mut self, n: u32, rate_hz: u32) {
        while let Some(k) = self.knots.get(self.next) {
            let at = (u64::from(k.at_ms) * u64::from(rate_hz) / 1000) as u32;
            if at > n {
                let len = i64::from(at - n);
                let target = i64::from(k.amp) << 16;
                self.inc_q16 = (target - self.amp_q16) / len;
                self.next_at = at;
                return;
            }
            self.amp_q16 = i64::from(k.amp) << 16;
            self.next += 1;
        }
        self.inc_q16 = 0;
        self.next_at = u32::MAX;
    }

    /// Amplitude at sample `n` in codes; call with n = 0, 1, 2, …
    #[inline]
    fn step(&mut self, n: u32, rate_hz: u32) -> i32 {
        if n >= self.next_at {
            self.enter(n, rate_hz);
        }
        let a = (self.amp_q16 >> 16) as i32;
        self.amp_q16 += self.inc_q16;
        a
    }
}

#[derive(Clone, Copy, Debug)]
struct Chan {
    phase: u32,
    env: Envelope,
    third_q8: i32,
    fifth_q8: i32,
    noise_mul: i32,
}

/// The generator for `N` channels: call [`Source::frame`] once per sample
/// instant.
#[derive(Clone, Copy, Debug)]
pub struct Source<const N: usize> {
    spec: SignalSpec,
    step: u32,
    /// Drift: the phase step in Q8 (`step << 8` plus the carried
    /// fraction), its change per sample, and samples until the sweep turns.
    step_q8: u64,
    dstep_q8: i64,
    drift_left: u32,
    drift_half: u32,
    phase: u32,
    n: u32,
    rng: Rng,
    ch: [Chan; N],
    /// Samples of the present spike still to come, and its code.
    spike_left: u8,
    spike_code: i32,
    next_spike: u32,
}

impl<const N: usize> Source<N> {
    /// A source for `spec` with channels `chans` (channel c uses
    /// `chans[c % len]`).
    pub fn new(spec: SignalSpec, chans: &[ChannelSpec]) -> Self {
        let none = ChannelSpec {
            phase: 0,
            knots: &[],
            third_q8: 0,
            fifth_q8: 0,
            noise_x16: 0,
        };
        let ch = core::array::from_fn(|c| {
            let cs = match chans.len() {
                0 => none,
                len => chans.get(c % len).copied().unwrap_or(none),
            };
            Chan {
                phase: cs.phase,
                env: Envelope::new(cs.knots, spec.rate_hz),
                third_q8: cs.third_q8,
                fifth_q8: cs.fifth_q8,
                // gauss148 · noise_mul >> 12 has RMS 147.8 · mul / 4096
                // codes; mul = 1.7314 · noise_x16 gives noise_x16 / 16.
                noise_mul: (cs.noise_x16 * 1773) >> 10,
            }
        });
        let mut rng = Rng::new(spec.seed);
        let next_spike = Self::spike_gap(&mut rng, &spec);
        let half = (u64::from(spec.drift_ms) * u64::from(spec.rate_hz) / 2000) as u32;
        let (step, dstep_q8, drift_half) = if spec.drift_ms == 0 || spec.drift_mhz == 0 || half == 0
        {
            (phase_step(spec.mains_mhz, spec.rate_hz), 0, u32::MAX)
        } else {
            let lo = phase_step(spec.mains_mhz.saturating_sub(spec.drift_mhz), spec.rate_hz);
            let hi = phase_step(spec.mains_mhz.saturating_add(spec.drift_mhz), spec.rate_hz);
            let d = ((i64::from(hi) - i64::from(lo)) << 8) / i64::from(half);
            (lo, d, half)
        };
        Self {
            spec,
            step,
            step_q8: u64::from(step) << 8,
            dstep_q8,
            drift_left: drift_half,
            drift_half,
            phase: 0,
            n: 0,
            rng,
            ch,
            spike_left: 0,
            spike_code: 0,
            next_spike,
        }
    }

    /// Samples until the next spike: uniform in [period/2, 3·period/2).
    fn spike_gap(rng: &mut Rng, spec: &SignalSpec) -> u32 {
        if spec.spike_ms == 0 {
            return u32::MAX;
        }
        let period = (u64::from(spec.spike_ms) * u64::from(spec.rate_hz) / 1000).max(2) as u32;
        period / 2 + rng.next_u32() % period
    }

    /// Index of the next sample.
    pub const fn index(&self) -> u32 {
        self.n
    }

    /// The next sample of every channel, clipped to `lo..=hi`.
    #[inline]
    pub fn frame(&mut self) -> [i32; N] {
        let spec = self.spec;
        let n = self.n;
        let base = self.phase;
        let mut out = [0i32; N];
        for (o, c) in out.iter_mut().zip(self.ch.iter_mut()) {
            let a = c.env.step(n, spec.rate_hz);
            let p = base.wrapping_add(c.phase);
            let mut s = sin_q15(p);
            if c.third_q8 != 0 {
                s += (c.third_q8 * sin_q15(p.wrapping_mul(3))) >> 8;
            }
            if c.fifth_q8 != 0 {
                s += (c.fifth_q8 * sin_q15(p.wrapping_mul(5))) >> 8;
            }
            let mut x = spec.bias + ((a * s) >> 15);
            if c.noise_mul != 0 {
                x += (self.rng.gauss148() * c.noise_mul) >> 12;
            }
            *o = x;
        }
        if self.spike_left == 0 && n >= self.next_spike {
            let r = self.rng.next_u32();
            self.spike_left = (r % 3) as u8 + 1;
            self.spike_code = if r & 0x100 != 0 { spec.hi } else { spec.lo };
            self.next_spike = n.saturating_add(Self::spike_gap(&mut self.rng, &spec));
        }
        if self.spike_left > 0 {
            self.spike_left -= 1;
            out = [self.spike_code; N];
        }
        for o in out.iter_mut() {
            *o = (*o).clamp(spec.lo, spec.hi);
        }
        self.phase = base.wrapping_add(self.step);
        if self.dstep_q8 != 0 {
            self.step_q8 = self.step_q8.wrapping_add_signed(self.dstep_q8);
            self.step = (self.step_q8 >> 8) as u32;
            self.drift_left -= 1;
            if self.drift_left == 0 {
                self.dstep_q8 = -self.dstep_q8;
                self.drift_left = self.drift_half;
            }
        }
        self.n = n.wrapping_add(1);
        out
    }
}

// ---------------------------------------------------------------------------
// Edge trains: what a comparator or GPIO input sees.

/// What disturbs a pin's pulse train during a [`Span`].
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Disturb {
    /// Every edge rings: two transitions `ring_ticks` apart come before
    /// it (to the new level, back, and to the new level again), inside the
    /// glitch filter, so the front end must take the ring for one edge at
    /// the time of its last transition.
    Ring,
    /// Chatter: each cycle's pulse is replaced by this many short pulses
    /// (a quarter of their spacing wide) spread over the cycle.
    Chatter(u8),
    /// The pin is held active: one activating edge at the span's start,
    /// none inside it, the release at its end.
    Stuck,
}

/// A disturbance of one pin from `from_ms` to `to_ms` (by pulse centre).
#[derive(Clone, Copy, Debug)]
pub struct Span {
    /// Start, milliseconds.
    pub from_ms: u32,
    /// End, milliseconds.
    pub to_ms: u32,
    /// What happens.
    pub what: Disturb,
}

/// Shorthand for a [`Span`].
pub const fn span(from_ms: u32, to_ms: u32, what: Disturb) -> Span {
    Span {
        from_ms,
        to_ms,
        what,
    }
}

/// One pin: a pulse a mains cycle, centred at the hum's crest, whose
/// width follows a duty envelope.
#[derive(Clone, Copy, Debug)]
pub struct PinSpec {
    /// Offset of the pulse centres, 2^32 = one mains period.
    pub phase: u32,
    /// Duty envelope: [`Knot::amp`] is the active fraction of the period
    /// in thousandths (0: no pulse, the hum below the threshold), linear
    /// between knots. Must not be empty.
    pub knots: &'static [Knot],
    /// Disturbances (spans in time order, not overlapping).
    pub spans: &'static [Span],
    /// Every `drop_every`-th pulse loses one edge, alternately its
    /// deactivating and its activating edge (0: none): a lost interrupt.
    pub drop_every: u32,
}

/// A whole edge train.
#[derive(Clone, Copy, Debug)]
pub struct EdgeSpec {
    /// Timer ticks (or pin reads) per second.
    pub tick_hz: u32,
    /// Mains frequency in millihertz.
    pub mains_mhz: u32,
    /// Timing noise of each edge: uniform in `−jitter..=jitter` ticks.
    pub jitter: u32,
    /// Spacing of a ring's transitions, ticks.
    pub ring_ticks: u32,
    /// PRNG seed.
    pub seed: u32,
}

/// One edge: tick (from 0), channel, and whether the pin became active.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct TrainEdge {
    /// Ticks since the start of the train.
    pub tick: u64,
    /// Channel.
    pub ch: u8,
    /// The pin became active (the hum rose past the threshold).
    pub active: bool,
}

/// Most edges one pin's pulse can make (chatter of 6 pulses, or one
/// ringing pulse).
const PIN_BUF: usize = 12;
/// The bit of a buffered edge that marks it activating.
const ACTIVE_BIT: u32 = 63;

/// The state of one pin's train.
#[derive(Clone, Copy, Debug)]
struct Pin {
    spec: PinSpec,
    /// Index of the next pulse.
    k: u64,
    /// Whether a stuck span is holding the pin.
    stuck: bool,
    /// Edges of the present pulse, in time order (tick, and the activating
    /// ones with bit 63 set: a tick never reaches it), and how many are
    /// left.
    buf: [u64; PIN_BUF],
    len: u8,
    at: u8,
    /// Pulses counted for `drop_every`, and which edge the next drop takes.
    since_drop: u32,
    drop_rise: bool,
}

/// The generator of an edge train for `N` pins, in time order: call
/// [`EdgeSource::next`] until it returns `None`. Integers only: every
/// build gives the same edges.
#[derive(Clone, Copy, Debug)]
pub struct EdgeSource<const N: usize> {
    spec: EdgeSpec,
    /// Mains period, ticks · 2^16.
    period_q16: u64,
    end: u64,
    rng: Rng,
    pins: [Pin; N],
}

impl<const N: usize> EdgeSource<N> {
    /// A train of `ms` milliseconds of `spec` on `pins` (channel c uses
    /// `pins[c % len]`; `pins` must not be empty).
    pub fn new(spec: EdgeSpec, pins: &[PinSpec], ms: u32) -> Self {
        let none = PinSpec {
            phase: 0,
            knots: &[],
            spans: &[],
            drop_every: 0,
        };
        let period_q16 =
            ((u64::from(spec.tick_hz) * 1000) << 16) / u64::from(spec.mains_mhz.max(1));
        Self {
            spec,
            period_q16,
            end: u64::from(ms) * u64::from(spec.tick_hz) / 1000,
            rng: Rng::new(spec.seed),
            pins: core::array::from_fn(|c| Pin {
                spec: match pins.len() {
                    0 => none,
                    len => pins.get(c % len).copied().unwrap_or(none),
                },
                k: 0,
                stuck: false,
                buf: [0; PIN_BUF],
                len: 0,
                at: 0,
                since_drop: 0,
                drop_rise: false,
            }),
        }
    }

    /// Ticks of the whole train.
    pub const fn end(&self) -> u64 {
        self.end
    }

    /// Milliseconds at tick `t`.
    fn ms_of(&self, t: u64) -> u32 {
        (t * 1000 / u64::from(self.spec.tick_hz.max(1))) as u32
    }

    /// Duty (thousandths) of `knots` at `ms`, linear between knots.
    fn duty(knots: &[Knot], ms: u32) -> u32 {
        let mut prev = match knots.first() {
            Some(k) => *k,
            None => return 0,
        };
        for k in knots {
            if ms < k.at_ms {
                let span = u64::from(k.at_ms - prev.at_ms).max(1);
                let along = u64::from(ms.saturating_sub(prev.at_ms));
                let (a, b) = (i64::from(prev.amp), i64::from(k.amp));
                return (a + (b - a) * along as i64 / span as i64) as u32;
            }
            prev = *k;
        }
        prev.amp
    }

    /// A tick of timing noise added to `t`.
    fn jit(&mut self, t: u64) -> u64 {
        let j = u64::from(self.spec.jitter);
        if j == 0 {
            return t;
        }
        let r = u64::from(self.rng.next_u32()) % (2 * j + 1);
        (t + r).saturating_sub(j)
    }

    /// Fills pin `c`'s buffer with its next pulse (or nothing, for a pulse
    /// the hum does not make); false past the end of the train.
    fn refill(&mut self, c: usize) -> bool {
        let Some(pin) = self.pins.get(c).copied() else {
            return false;
        };
        // Centre of pulse k: one period in, plus the pin's phase.
        let p = self.period_q16;
        let offset = ((p >> 8) * u64::from(pin.spec.phase >> 8)) >> 16;
        let centre = (p * (pin.k + 1) + offset) >> 16;
        if centre > self.end {
            return false;
        }
        let period = p >> 16;
        let ms = self.ms_of(centre);
        let what = pin
            .spec
            .spans
            .iter()
            .find(|s| ms >= s.from_ms && ms < s.to_ms)
            .map(|s| (s.what, s.to_ms));
        let mut buf = [0u64; PIN_BUF];
        let mut len = 0usize;
        let mut put = |t: u64, a: bool| {
            if let Some(slot) = buf.get_mut(len) {
                *slot = t | u64::from(a) << ACTIVE_BIT;
                len += 1;
            }
        };
        let mut stuck = pin.stuck;
        let mut since_drop = pin.since_drop;
        let mut drop_rise = pin.drop_rise;
        match what {
            Some((Disturb::Stuck, _)) => {
                if !stuck {
                    put(centre - period / 2, true);
                    stuck = true;
                }
            }
            Some((Disturb::Chatter(n), _)) if n > 0 => {
                let n = u64::from(n.min(6));
                let step = period / n;
                for j in 0..n {
                    let c0 = centre - period / 2 + j * step + step / 2;
                    let r = self.jit(c0 - step / 8);
                    let f = self.jit(c0 + step / 8);
                    put(r, true);
                    put(f.max(r + 1), false);
                }
            }
            _ => {
                if stuck {
                    // The release, half a period before this pulse.
                    put(centre - period / 2, false);
                    stuck = false;
                }
                let duty = u64::from(Self::duty(pin.spec.knots, ms).min(999));
                let width = period * duty / 1000;
                if width > 2 * u64::from(self.spec.jitter) + 2 {
                    let mut r = Some(self.jit(centre - width / 2));
                    let mut f = Some(self.jit(centre + width / 2));
                    if pin.spec.drop_every > 0 {
                        since_drop += 1;
                        if since_drop >= pin.spec.drop_every {
                            since_drop = 0;
                            if drop_rise {
                                r = None;
                            } else {
                                f = None;
                            }
                            drop_rise = !drop_rise;
                        }
                    }
                    let ring = matches!(what, Some((Disturb::Ring, _)));
                    let g = u64::from(self.spec.ring_ticks);
                    for (t, a) in [(r, true), (f, false)] {
                        let Some(t) = t else { continue };
                        if ring {
                            put(t - 2 * g, a);
                            put(t - g, !a);
                        }
                        put(t, a);
                    }
                }
            }
        }
        if let Some(pin) = self.pins.get_mut(c) {
            pin.buf = buf;
            pin.len = len as u8;
            pin.at = 0;
            pin.k += 1;
            pin.stuck = stuck;
            pin.since_drop = since_drop;
            pin.drop_rise = drop_rise;
        }
        true
    }

    /// The next edge of any pin, in time order; `None` at the end.
    pub fn next(&mut self) -> Option<TrainEdge> {
        let mut best: Option<(u64, usize)> = None;
        for c in 0..N {
            while self.pins.get(c).is_some_and(|p| p.at >= p.len) {
                if !self.refill(c) {
                    break;
                }
            }
            let Some(pin) = self.pins.get(c) else {
                continue;
            };
            if pin.at < pin.len {
                let t = pin
                    .buf
                    .get(usize::from(pin.at))
                    .copied()
                    .unwrap_or(u64::MAX)
                    & !(1 << ACTIVE_BIT);
                if best.is_none_or(|(bt, _)| t < bt) {
                    best = Some((t, c));
                }
            }
        }
        let (t, c) = best?;
        let pin = self.pins.get_mut(c)?;
        let active = pin.buf.get(usize::from(pin.at)).copied()? >> ACTIVE_BIT != 0;
        pin.at += 1;
        Some(TrainEdge {
            tick: t,
            ch: c as u8,
            active,
        })
    }
}
