//! A field probe on an STM32F411: one antenna input on ADC1 (PA1)
//! sampled at 2 kHz from TIM3's update interrupt into `humsense::FieldDetector`
//! (window memory for the field profile's 0.5 s coherent window) with the
//! field profile (`Config::field()`), and its graded levels shown
//! on a bar of eight LEDs: none while no field is near, one at
//! `field-on`, one more per 3 dB (the profile's `level_step_db`), so the
//! bar grows as the probe comes closer to a live conductor. Events reach
//! the main loop through `humsense::EventQueue`; a defmt log over RTT.
//! Wiring and commands: README.md beside this package.
//!
//! This finds where hum is strong. It never shows that a conductor is dead
//! or safe to touch: see the repository README's Safety section.
#![no_std]
#![no_main]
#![deny(unsafe_code)]

use core::cell::RefCell;

use cortex_m_rt::entry;
use critical_section::Mutex;
use defmt_rtt as _;
use panic_probe as _;
use stm32f4xx_hal as hal;

use hal::adc::config::{AdcConfig, Clock, SampleTime};
use hal::adc::Adc;
use hal::gpio::{Analog, AnyPin, Output, PA1};
use hal::pac::{self, interrupt};
use hal::prelude::*;
use hal::timer::{CounterHz, Event, Flag};
use humsense::{Config, EventKind, EventQueue, FieldDetector, MainsMode};
use humsense_board_stm32f4::{clocks, Slot};

/// Samples a second.
const RATE_HZ: u32 = 2_000;

/// LEDs in the bar, bottom to top.
const BAR: usize = 8;

/// The detector's settings: the field profile for the STM32F411's 12-bit
/// ADC at 2 kHz (8 levels, 3 dB apart). After tuning on a capture of this
/// board, replace this with the `const CONFIG` that `humsim tune --profile
/// field` prints.
fn config() -> Config {
    Config::field()
        .with_sample_rate(RATE_HZ)
        .with_mains(MainsMode::Auto)
}

/// What TIM3's interrupt owns between its runs.
struct Sensing {
    timer: CounterHz<pac::TIM3>,
    adc: Adc<pac::ADC1>,
    antenna: PA1<Analog>,
    detector: FieldDetector,
}

static SENSING: Mutex<RefCell<Slot<Sensing>>> = Mutex::new(RefCell::new(Slot::Empty));

/// Events from the interrupt to the main loop.
static EVENTS: EventQueue<32> = EventQueue::new();

#[entry]
fn main() -> ! {
    let dp = defmt::unwrap!(pac::Peripherals::take());
    let mut rcc = clocks(dp.RCC);
    let gpioa = dp.GPIOA.split(&mut rcc);
    let gpiob = dp.GPIOB.split(&mut rcc);

    let antenna = gpioa.pa1.into_analog();
    let mut bar: [AnyPin<Output>; BAR] = [
        gpiob.pb0.into_push_pull_output().erase(),
        gpiob.pb1.into_push_pull_output().erase(),
        gpiob.pb10.into_push_pull_output().erase(),
        gpiob.pb12.into_push_pull_output().erase(),
        gpiob.pb13.into_push_pull_output().erase(),
        gpiob.pb14.into_push_pull_output().erase(),
        gpiob.pb15.into_push_pull_output().erase(),
        gpioa.pa8.into_push_pull_output().erase(),
    ];

    // Validated once here; afterwards nothing in the detector can fail.
    let detector = defmt::unwrap!(FieldDetector::new(config()));
    // ADC clock: APB2's 100 MHz / 4 = 25 MHz (the STM32F411's limit is 36);
    // 144 sampling cycles (5.8 µs) suit the 1 kΩ / 220 nF source of the
    // wiring in README.md, 6.2 µs a conversion in all.
    let adc = Adc::new(
        dp.ADC1,
        true,
        AdcConfig::default().clock(Clock::Pclk2_div_4),
        &mut rcc,
    );
    // 2 kHz from TIM3: 100 MHz / 50 000, exact.
    let mut timer = dp.TIM3.counter_hz(&mut rcc);
    defmt::unwrap!(timer.start(RATE_HZ.Hz()));
    timer.listen(Event::Update);
    critical_section::with(|cs| {
        *SENSING.borrow_ref_mut(cs) = Slot::Full(Sensing {
            timer,
            adc,
            antenna,
            detector,
        });
    });
    #[allow(unsafe_code)]
    // SAFETY: unmasking is unsafe because it may break a critical section
    // that relies on masked interrupts; none here does (critical-section
    // on a single core disables interrupts outright), and the handler's
    // state is in place.
    unsafe {
        pac::NVIC::unmask(pac::Interrupt::TIM3);
    }
    defmt::info!(
        "field_bar: ADC1 on PA1 at {=u32} Hz, field profile, {=usize} LEDs",
        RATE_HZ,
        BAR
    );

    loop {
        while let Some(e) = EVENTS.pop() {
            let shown = match e.kind {
                EventKind::FieldOn => Some(1),
                EventKind::Level(n) => Some(n),
                EventKind::FieldOff => Some(0),
                // An input fault (saturated, stuck, no hum) ends the field
                // first (a field-off comes before it), so the bar is
                // already dark.
                EventKind::Overflow(n) => {
                    defmt::warn!("{=u32} events lost", n);
                    None
                }
                _ => None,
            };
            defmt::info!("{} ({=f32} dB)", e, e.strength_db());
            if let Some(level) = shown {
                for (i, led) in bar.iter_mut().enumerate() {
                    if i < usize::from(level) {
                        led.set_high();
                    } else {
                        led.set_low();
                    }
                }
            }
        }
        // Sleeps until the next interrupt (at most one 500 µs period).
        cortex_m::asm::wfi();
    }
}

#[interrupt]
fn TIM3() {
    critical_section::with(|cs| {
        if let Some(s) = SENSING.borrow_ref_mut(cs).get_mut() {
            s.timer.clear_flags(Flag::Update);
            let code = s.adc.convert(&s.antenna, SampleTime::Cycles_144);
            if let Some(e) = s.detector.push(code) {
                let _ = EVENTS.push(e);
            }
        }
    });
}
