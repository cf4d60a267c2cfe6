//! What both RP2040 firmwares share: the clocks, the sense inputs and the
//! 2 kHz sampler that reads them from the timer interrupt.
//!
//! The binaries (`src/bin/touch.rs`, `src/bin/humtel_log.rs`) keep the
//! sampler and whatever consumes its frames (the detector, the telemetry
//! encoder) in one `critical_section::Mutex<RefCell<Slot<…>>>` ([`Slot`]): the
//! timer interrupt borrows it for one frame, the main loop for as long as
//! it takes to pop or copy a little, and nothing else touches it.
#![no_std]
#![deny(unsafe_code)]

use fugit::ExtU64;
use rp2040_hal as hal;

use hal::adc::AdcPin;
use hal::gpio::{DynPinId, FunctionSioInput, Pin, PullNone};
use hal::timer::{Alarm, Alarm0, Instant};

/// The crystal on the board, hertz (the clocks are derived from it: the
/// system clock at 125 MHz, the ADC's 48 MHz from the USB PLL, the timer's
/// 1 MHz tick from the watchdog's divider).
pub const XTAL_HZ: u32 = 12_000_000;

/// Samples a second per pad.
pub const RATE_HZ: u32 = 2_000;

/// The sampler's period, microseconds of the 1 MHz timer.
pub const PERIOD_US: u64 = 1_000_000 / RATE_HZ as u64;

/// Sense inputs, one to four (ADC0 to ADC3 on GPIO26 to GPIO29). Three by
/// default: many RP2040 boards use GPIO29 to measure their supply. To change
/// it, change this and the pin lists in the binaries (`sense` and `leds`).
pub const PADS: usize = 3;

/// Bits of the RP2040's ADC: codes 0 to 4095, offset binary.
pub const ADC_BITS: u8 = 12;

/// A sense input: a GPIO of bank 0 (26 to 29) handed to the ADC with its
/// digital input and output turned off.
pub type SensePin = AdcPin<Pin<DynPinId, FunctionSioInput, PullNone>>;

/// Reads every pad once a period, from the timer interrupt.
///
/// Alarm 0 fires at `start + k · PERIOD_US`, deadlines counted from the
/// first one (not from when the handler ran), so the rate is the crystal's
/// and handler latency never accumulates. A deadline already past when it
/// is set (the handler ran more than a period late) fires at once and is
/// counted in [`Sampler::late`].
pub struct Sampler {
    adc: hal::Adc,
    pins: [SensePin; PADS],
    alarm: Alarm0,
    timer: hal::Timer,
    next: Instant,
    last: [u16; PADS],
    late: u32,
    adc_errors: u32,
}

impl Sampler {
    /// Takes the ADC, the pads and alarm 0, schedules the first sample one
    /// period from now and enables the alarm's interrupt (`TIMER_IRQ_0`; the
    /// caller unmasks it in the NVIC once the sampler is where the handler
    /// finds it).
    pub fn start(
        adc: hal::Adc,
        pins: [SensePin; PADS],
        mut alarm: Alarm0,
        timer: hal::Timer,
    ) -> Self {
        let next = timer.get_counter() + PERIOD_US.micros();
        // Cannot fail: the deadline is one period ahead, far below the
        // 2^32 µs an alarm reaches.
        let _ = alarm.schedule_at(next);
        alarm.enable_interrupt();
        Sampler {
            adc,
            pins,
            alarm,
            timer,
            next,
            last: [0; PADS],
            late: 0,
            adc_errors: 0,
        }
    }

    /// For `TIMER_IRQ_0`: acknowledges the alarm, sets the next deadline
    /// and reads every pad (one conversion each, 2 µs at the ADC's 48 MHz,
    /// so the pads of a frame are 2 µs apart: nothing against a 20 ms mains
    /// period). A conversion the ADC flags as failed repeats the pad's
    /// previous code and is counted.
    pub fn sample(&mut self) -> [u16; PADS] {
        self.alarm.clear_interrupt();
        self.next += PERIOD_US.micros();
        if self.next <= self.timer.get_counter() {
            self.late = self.late.wrapping_add(1);
        }
        // A deadline in the past fires at once (the HAL sets the interrupt
        // flag), so the sampler catches up instead of stopping.
        let _ = self.alarm.schedule_at(self.next);
        for (pin, last) in self.pins.iter_mut().zip(self.last.iter_mut()) {
            match self.adc.read(pin) {
                Ok(code) => *last = code,
                Err(_) => self.adc_errors = self.adc_errors.wrapping_add(1),
            }
        }
        self.last
    }

    /// Periods whose interrupt came after the next deadline (wrapping).
    pub fn late(&self) -> u32 {
        self.late
    }

    /// Conversions the ADC flagged as failed (wrapping).
    pub fn adc_errors(&self) -> u32 {
        self.adc_errors
    }

    /// The timer, for the main loop's own time keeping.
    pub fn timer(&self) -> hal::Timer {
        self.timer
    }
}

/// An `Option` for state kept in a `static`, whose empty value is all zero
/// bytes.
///
/// `static S: Mutex<RefCell<Option<State>>> = …(None)` looks free, but the
/// compiler may store `None` in a niche of `State` (a `bool` field holding
/// 2, say), and a static whose initial value has a non-zero byte goes to
/// `.data`: the whole of it, buffers included, then takes flash and is
/// copied to RAM at boot (measured here: 4 520 bytes for the logging
/// firmware's state, 480 for the touch firmware's). The tag of a
/// `#[repr(u8)]` enum comes first, explicitly 0 for `Empty`, and leaves no
/// niche to use, so the static starts as zeros and goes to `.bss`.
#[repr(u8)]
pub enum Slot<T> {
    /// Nothing yet (before start-up has put the state in place).
    Empty = 0,
    /// The state.
    Full(T) = 1,
}

impl<T> Slot<T> {
    /// The state, if it is in place.
    pub fn get(&self) -> Option<&T> {
        match self {
            Slot::Full(t) => Some(t),
            Slot::Empty => None,
        }
    }

    /// The state, if it is in place, for changing.
    pub fn get_mut(&mut self) -> Option<&mut T> {
        match self {
            Slot::Full(t) => Some(t),
            Slot::Empty => None,
        }
    }
}
