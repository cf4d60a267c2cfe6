//! Comparator or GPIO input: edges (or polled levels) of a pin that is high
//! while the hum is above a threshold, turned into the same [`Cycle`](crate::Cycle)s the
//! ADC front end produces, so the one [`Backend`](crate::Backend) decides for both.
//!
//! ```text
//! push_edge(ch, rising, timer count) ─┐            (per edge, integer, O(1))
//! push_levels / poll (InputPin) ──────┴▶ glitch filter ─▶ order and level checks
//!      ─▶ pulses: width, centre, centre-to-centre interval ─▶ window sums
//!   window end (one tracked mains period) ─▶ EdgeMains (period in ticks)
//!      ─▶ duty ─▶ amplitude in threshold units ─▶ Cycle ─▶ Backend ─▶ Event
//! ```
//!
//! # Physics
//!
//! A comparator whose output is high while `A·sin(ωt) > Vt` gives, for
//! `A > Vt`, one pulse per mains cycle with high fraction
//! `d = acos(Vt/A)/π` (standard trigonometry), so the duty measures the
//! amplitude in threshold units: `A/Vt = 1/cos(π·d)`. With a hysteresis
//! `h` the output rises at `Vt + h/2` and falls at `Vt − h/2`:
//! `d = 1/2 − (asin(u₊) + asin(u₋))/(2π)` with `u± = (1 ± η)·Vt/A` and
//! `η = h/(2·Vt)`. Writing `2β = asin(u₊) + asin(u₋)` and
//! `2γ = asin(u₊) − asin(u₋)`, the sum and difference of the sines give
//! `sin β·cos γ = Vt/A` and `tan γ = η·tan β`, which solve to
//!
//! `(A/Vt)² = 1/cos²(π·d) + η²/sin²(π·d)`,
//!
//! the inversion used here (`η = 0` gives the first form back). Below
//! `A = Vt + h/2` the pin does not move.
//!
//! # Time
//!
//! Edge times are timer counts of a free-running timer of 16 or 32 bits
//! ([`TimerWidth`]) at [`EdgeConfig::tick_hz`]. Each count is turned into a
//! 64-bit tick count by a wrapping subtraction from the latest count seen
//! (any channel); a difference of half the timer's range or more is taken
//! as a step backwards (an edge handed over late). So **two calls
//! ([`EdgeFrontend::push_edge`] or [`EdgeFrontend::advance`]) must never be
//! half a timer wrap apart or more**: with a quiet pin, call `advance` from
//! the main loop or a periodic interrupt (a 16-bit timer at 1 MHz wraps
//! every 65.5 ms: call at least every 30 ms). The polled input
//! ([`EdgeFrontend::push_levels`]) counts its own ticks and has no such
//! limit.
//!
//! # Per edge
//!
//! Integer only, no division, no allocation, no panic. The interrupt-side
//! call ([`EdgeFrontend::push_edge`]), in the common case (a step forward
//! inside the window, an edge to the other level, room in the queue), only
//! stores the count in the channel's queue of three edges and moves the
//! latest count: the clock is brought up to it, and the queued counts
//! turned into times, by the next call that takes edges. A firmware's
//! periodic `advance` (every few milliseconds) thus takes the queued edges
//! in the main loop, and the interrupt keeps to the common case.
//! Times are kept as the low 32 bits of the tick count and compared by
//! wrapping differences, exact because every stored time's age is held at
//! 2^31 ticks or less at each window end. The queued edges are taken, in
//! order, when the queue is full, when the window ends, or before anything
//! else reads or changes the channel (`advance`, `push_levels`, an edge to
//! the same level, a step back, [`EdgeFrontend::stats`]). Taking an edge
//! depends only on the channel's state, the edge's time and the tracker's
//! bounds, which change only at a window's end, so the result is the same
//! as taking every edge as it comes. Taking an edge:
//!
//! - **order**: an edge earlier than the channel's previous one is
//!   rejected and counted ([`EdgeStats::out_of_order`]);
//! - **level**: an edge to the level the channel is already at (a
//!   duplicate, or a lost edge between them) is rejected and counted
//!   ([`EdgeStats::same_level`]), and marks the window incoherent;
//! - **glitch filter**: each edge waits until `glitch_ticks` have passed
//!   (the next edge, or a later call, confirms it); an opposite edge
//!   within that time cancels it, and both are dropped
//!   ([`EdgeStats::glitches`]), so ringing on a crossing counts as one edge
//!   at the time of the last transition of the ring;
//! - **pulse** (at a confirmed falling edge): width `w = t_fall − t_rise`,
//!   centre `t_rise + w/2`, and the interval from the previous pulse's
//!   centre. The centre of a comparator pulse sits at the crest of the
//!   sine whatever the amplitude (without hysteresis exactly, with it
//!   within `asin` of `η`), so centre intervals repeat at the mains period
//!   even while a touch widens the pulses, where rising-edge intervals
//!   shorten by up to a quarter period. A pulse is **coherent** when its
//!   centre lies one, two or three tracked periods after the last coherent
//!   pulse's centre, within 1/16 of a period, and its width is less than
//!   the period (see `confirm`); a pulse that is not marks the window
//!   incoherent and does not move the reference, unless no coherent pulse
//!   has confirmed the reference yet (the first pulse of a train).
//!
//! # Per window (one mains cycle)
//!
//! The front end cuts time into windows of one tracked mains period
//! (fractional ticks carried, so windows do not drift), independent of the
//! pulses' phase. When a window ends, each channel yields an amplitude:
//!
//! - coherent pulses and nothing incoherent: `d = Σw / (n·P)` (`n` pulses
//!   of the window, `P` the period in ticks), and the amplitude from the
//!   inversion above, in Q8 "codes" at **[`UNIT_Q8`] per threshold unit**
//!   (one `Vt` reads as 64 codes), at most [`MAX_AMPLITUDE_Q8`] (256 `Vt`,
//!   also for `d ≥ 1/2`);
//! - no edge at all: 0 if the pin was inactive (below the threshold) the
//!   whole window, [`MAX_AMPLITUDE_Q8`] if it was active the whole window;
//! - anything else (an incoherent pulse, a rejected duplicate, a window
//!   with only the start of a pulse, or pulses before the mains period is
//!   known): the channel's last amplitude is held, so chatter, bursts and
//!   a missing edge change nothing the back end sees.
//!
//! The cycle handed to the back end carries that amplitude as the
//! fundamental's `i` (`q = 0`), rails `(0, 65 535)`, and a mean level of
//! 32 768 (mid-rail), so the back end's baseline, noise, thresholds, panel
//! rules and events work as for the ADC. Two fault signals are mapped onto
//! the back end's inputs (see the README's Faults): a window with
//! [`CHATTER_EDGES`] or more edges on a channel (chatter, several times the
//! mains rate) reports the mean at the top rail, which the back end counts
//! towards [`Fault::Saturated`](crate::Fault::Saturated); a pin active for
//! more than [`EdgeConfig::stuck_high_cycles`] whole windows in a row
//! reports a flat cycle, which it counts towards
//! [`Fault::Stuck`](crate::Fault::Stuck). A pin inactive at rest is never a
//! fault.
//!
//! # Layout
//!
//! Each file one stage, each importing only those listed before it:
//! `config` ([`EdgeConfig`], [`TimerWidth`], [`EdgeInput`]), `divide`
//! (64-bit divisions of the per-window code), `duty` (duty to amplitude:
//! [`duty_to_amplitude_q8`]), `period` ([`EdgeMains`], the mains period in
//! ticks), `channel` (one channel's per-edge state and pulse bookkeeping,
//! [`EdgeStats`]), `frontend` ([`EdgeFrontend`]: the clock, the windows and
//! the cycles) and `detector` ([`EdgeDetector`], the front end on the shared
//! [`Backend`](crate::Backend)).

mod channel;
mod config;
mod detector;
mod divide;
mod duty;
mod frontend;
mod period;

pub use channel::EdgeStats;
pub use config::{EdgeConfig, EdgeInput, TimerWidth};
pub use detector::EdgeDetector;
pub use duty::{duty_to_amplitude_q8, sin_half_pi_q16, MAX_AMPLITUDE_Q8, UNIT_Q8};
pub use frontend::{EdgeFrontend, CHATTER_EDGES, MAX_CATCH_UP};
pub use period::{EdgeMains, ACQUIRE_WINDOWS, LOCK_WINDOWS, UNLOCK_WINDOWS};
