//! Touch pads on an RP2040: three sense inputs sampled at 2 kHz from the
//! timer interrupt into `humsense::Detector`, events handed to the main
//! loop through `humsense::EventQueue`, one LED per pad, a defmt log over
//! RTT (events as they happen, each pad's amplitude and baseline every
//! five seconds). Wiring and commands: README.md beside this package.
#![no_std]
#![no_main]
#![deny(unsafe_code)]

use core::cell::RefCell;

use critical_section::Mutex;
use defmt_rtt as _;
use embedded_hal::digital::OutputPin;
use fugit::ExtU64;
use panic_probe as _;
use rp2040_hal as hal;

use hal::adc::AdcPin;
use hal::clocks::init_clocks_and_plls;
use hal::gpio::{DynPinId, FunctionSioOutput, Pin, PullDown};
use hal::pac::{self, interrupt};
use humsense::{Config, Detector, EventKind, EventQueue, MainsMode};
use humsense_board_rp2040::{Sampler, Slot, PADS, RATE_HZ, XTAL_HZ};

/// The second-stage bootloader, in the first 256 bytes of flash (see
/// memory.x). For a flash chip that does not take the W25Q080's quad read
/// commands, use `rp2040_boot2::BOOT_LOADER_GENERIC_03H`.
#[allow(unsafe_code)]
// placing a static in a linker section is unsafe to the compiler: the HAL's boot ROM contract needs it here
#[link_section = ".boot2"]
#[used]
pub static BOOT2_FIRMWARE: [u8; 256] = rp2040_boot2::BOOT_LOADER_W25Q080;

/// The detector's settings: the touch profile for the RP2040's 12-bit ADC
/// at 2 kHz. After tuning on a capture of this board (README.md), replace
/// this with the `const CONFIG` that `humsim tune` prints.
fn config() -> Config {
    Config::touch()
        .with_sample_rate(RATE_HZ)
        .with_mains(MainsMode::Auto)
}

/// What the timer interrupt owns between its runs.
struct Sensing {
    sampler: Sampler,
    detector: Detector<PADS>,
}

static SENSING: Mutex<RefCell<Slot<Sensing>>> = Mutex::new(RefCell::new(Slot::Empty));

/// Events from the interrupt to the main loop. 32 is far more than a
/// main loop that is never busy for long falls behind by; if it does, the
/// queue says how many it lost (`EventKind::Overflow`).
static EVENTS: EventQueue<32> = EventQueue::new();

type Led = Pin<DynPinId, FunctionSioOutput, PullDown>;

#[hal::entry]
fn main() -> ! {
    let mut pac = defmt::unwrap!(pac::Peripherals::take());
    let mut watchdog = hal::Watchdog::new(pac.WATCHDOG);
    let clocks = defmt::unwrap!(init_clocks_and_plls(
        XTAL_HZ,
        pac.XOSC,
        pac.CLOCKS,
        pac.PLL_SYS,
        pac.PLL_USB,
        &mut pac.RESETS,
        &mut watchdog,
    ));
    let sio = hal::Sio::new(pac.SIO);
    let pins = hal::gpio::Pins::new(
        pac.IO_BANK0,
        pac.PADS_BANK0,
        sio.gpio_bank0,
        &mut pac.RESETS,
    );

    // Pads on ADC0..ADC2 (GPIO26..28), LEDs on GPIO18..20, in pad order.
    let sense = [
        defmt::unwrap!(AdcPin::new(
            pins.gpio26.into_floating_input().into_dyn_pin()
        )),
        defmt::unwrap!(AdcPin::new(
            pins.gpio27.into_floating_input().into_dyn_pin()
        )),
        defmt::unwrap!(AdcPin::new(
            pins.gpio28.into_floating_input().into_dyn_pin()
        )),
    ];
    let mut leds: [Led; PADS] = [
        pins.gpio18.into_push_pull_output().into_dyn_pin(),
        pins.gpio19.into_push_pull_output().into_dyn_pin(),
        pins.gpio20.into_push_pull_output().into_dyn_pin(),
    ];

    // Validated once here; afterwards nothing in the detector can fail.
    let detector = defmt::unwrap!(Detector::<PADS>::new(config()));
    let adc = hal::Adc::new(pac.ADC, &mut pac.RESETS);
    let mut timer = hal::Timer::new(pac.TIMER, &mut pac.RESETS, &clocks);
    let alarm = defmt::unwrap!(timer.alarm_0());
    let sampler = Sampler::start(adc, sense, alarm, timer);
    critical_section::with(|cs| {
        *SENSING.borrow_ref_mut(cs) = Slot::Full(Sensing { sampler, detector });
    });
    #[allow(unsafe_code)]
    // SAFETY: unmasking is unsafe because it may break a critical section
    // that relies on masked interrupts; none here does (critical-section
    // on the RP2040 disables interrupts outright), and the handler's
    // state is in place.
    unsafe {
        pac::NVIC::unmask(pac::Interrupt::TIMER_IRQ_0);
    }
    defmt::info!(
        "touch: {=usize} pads at {=u32} Hz, touch profile, mains auto",
        PADS,
        RATE_HZ
    );

    let mut report_at = timer.get_counter() + 5_000_000u64.micros();
    loop {
        while let Some(e) = EVENTS.pop() {
            let led = leds.get_mut(usize::from(e.channel));
            match e.kind {
                EventKind::TouchOn => {
                    if let Some(led) = led {
                        let _ = led.set_high();
                    }
                    defmt::info!("pad {=u8} touch-on ({=f32} dB)", e.channel, e.strength_db());
                }
                EventKind::TouchOff => {
                    if let Some(led) = led {
                        let _ = led.set_low();
                    }
                    defmt::info!("pad {=u8} touch-off", e.channel);
                }
                EventKind::Overflow(n) => defmt::warn!("{=u32} events lost", n),
                _ => defmt::info!("{}", e),
            }
        }
        if timer.get_counter() >= report_at {
            report_at += 5_000_000u64.micros();
            report();
        }
        // Sleeps until the next interrupt (at most one 500 µs period). An
        // event pushed after the queue was found empty is popped after it.
        cortex_m::asm::wfi();
    }
}

/// Logs every pad's amplitude, baseline and noise (Q8 codes), the mains
/// frequency and the sampler's counters: what to look at while bringing a
/// board up.
fn report() {
    let mut snaps = [None; PADS];
    let mut counters = (false, 0.0, 0, 0);
    critical_section::with(|cs| {
        if let Some(s) = SENSING.borrow_ref(cs).get() {
            for (ch, slot) in snaps.iter_mut().enumerate() {
                *slot = s.detector.snapshot(ch);
            }
            counters = (
                s.detector.mains_locked(),
                s.detector.mains_hz(),
                s.sampler.late(),
                s.sampler.adc_errors(),
            );
        }
    });
    for (ch, snap) in snaps.iter().enumerate() {
        if let Some(s) = snap {
            defmt::info!(
                "pad {=usize}: amplitude {=u32} baseline {=u32} noise {=u32} (Q8 codes) {}",
                ch,
                s.amplitude_q8,
                s.baseline_q8,
                s.noise_q8,
                s.state
            );
        }
    }
    let (locked, hz, late, errors) = counters;
    defmt::info!(
        "mains {=f32} Hz locked {=bool}; late samples {=u32}, ADC errors {=u32}",
        hz,
        locked,
        late,
        errors
    );
}

#[interrupt]
fn TIMER_IRQ_0() {
    critical_section::with(|cs| {
        if let Some(s) = SENSING.borrow_ref_mut(cs).get_mut() {
            let frame = s.sampler.sample();
            s.detector.push_frame(&frame, |e| {
                // A full queue counts the loss and reports it when it has
                // room again.
                let _ = EVENTS.push(e);
            });
        }
    });
}
