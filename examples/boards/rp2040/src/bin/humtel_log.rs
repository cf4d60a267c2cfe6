//! The logging firmware for tuning: the same three pads, sampled the same
//! way as by `touch`, streamed raw as `humtel` records (humsense's
//! `telemetry` feature) on UART0 (GPIO0, 230 400 baud, 8N1), for
//! `humsim replay`, `tune` and `convert` on a PC.
//!
//! A button on GPIO15 marks touches while you capture. The `humtel` format
//! carries sample channels only: a button sent as one more channel would be
//! replayed and scored as a pad. So the button's presses go to the defmt
//! log instead (RTT, the debug probe), each as a ready labels row
//! `label: ch0,touch,START_S,END_S` on the stream's own clock (frame /
//! rate, the clock `humsim` uses for a capture): collect those rows into
//! the labels file (README.md, "Capture and label"). The firmware detects
//! nothing.
#![no_std]
#![no_main]
#![deny(unsafe_code)]

use core::cell::RefCell;

use critical_section::Mutex;
use defmt_rtt as _;
use embedded_hal::digital::InputPin;
use fugit::{ExtU64, RateExtU32};
use heapless::Deque;
use panic_probe as _;
use rp2040_hal as hal;

use hal::adc::AdcPin;
use hal::clocks::{init_clocks_and_plls, Clock};
use hal::gpio::{DynPinId, FunctionSioInput, Pin, PullUp};
use hal::pac::{self, interrupt};
use hal::uart::{DataBits, StopBits, UartConfig, UartPeripheral};
use humsense::telemetry::{StreamHeader, TelemetryEncoder, MAX_RECORD_SAMPLES};
use humsense_board_rp2040::{Sampler, Slot, ADC_BITS, PADS, RATE_HZ, XTAL_HZ};

/// See `touch.rs`.
#[allow(unsafe_code)]
// placing a static in a linker section is unsafe to the compiler: the boot ROM's contract needs it here
#[link_section = ".boot2"]
#[used]
pub static BOOT2_FIRMWARE: [u8; 256] = rp2040_boot2::BOOT_LOADER_W25Q080;

/// The UART's rate. A record of S samples takes 2·S + 10 bytes; three pads
/// at 2 kHz in records of 40 frames send 12.5 kB/s with the header records,
/// within the 23.0 kB/s that 230 400 baud 8N1 carries (four pads: 16.7).
const BAUD: u32 = 230_400;

/// Frames a record: as many as a record holds (120 samples), which spends
/// the fewest bytes on framing.
const FRAMES_PER_RECORD: u8 = (MAX_RECORD_SAMPLES / PADS) as u8;

/// Output buffer: 4 KiB, 0.3 s of the stream, to ride out the main loop
/// being held up (a debugger halting it, a defmt log line). When it is
/// full, whole records are dropped and the next header says how many frames
/// (humsim reports the gap by sample position).
const BUFFER: usize = 4096;

/// The label button's debounce: its level must hold this many samples
/// (20 ms) before a press or release counts. A press starts at the first
/// sample of the run that held, so a label's times are where the contact
/// changed, not 20 ms later.
const DEBOUNCE_SAMPLES: u16 = 40;

/// The pad the button labels (`ch0` is the first pad). Touch that pad while
/// holding the button, or edit the channel of a row for another pad.
const LABEL_PAD: u8 = 0;

/// A debounced button on a pin pulled up, pressed = low, in frames of the
/// stream.
struct Button {
    pin: Pin<DynPinId, FunctionSioInput, PullUp>,
    pressed: bool,
    /// The level of the current run and the frame it started at.
    run_level: bool,
    run_start: u32,
    run_len: u16,
    /// The frame the present press started at.
    press_start: u32,
}

/// A press: the frames it started and ended at.
#[derive(Clone, Copy)]
struct Label {
    start: u32,
    end: u32,
}

impl Button {
    /// One read at frame `frame`; returns a label when a press ends.
    fn step(&mut self, frame: u32) -> Option<Label> {
        // The pin's error type is Infallible.
        let level = self.pin.is_low().unwrap_or(false);
        if level != self.run_level {
            self.run_level = level;
            self.run_start = frame;
            self.run_len = 0;
        }
        self.run_len = self.run_len.saturating_add(1);
        if self.run_len < DEBOUNCE_SAMPLES || self.run_level == self.pressed {
            return None;
        }
        self.pressed = self.run_level;
        if self.pressed {
            self.press_start = self.run_start;
            None
        } else {
            Some(Label {
                start: self.press_start,
                end: self.run_start,
            })
        }
    }
}

/// What the timer interrupt owns between its runs.
struct Logging {
    sampler: Sampler,
    encoder: TelemetryEncoder<u16, BUFFER>,
    button: Button,
    /// Presses not yet printed by the main loop (a press takes 40 ms at
    /// least, so eight of them are far more than it falls behind by; a
    /// ninth would be lost and counted).
    labels: Deque<Label, 8>,
    labels_lost: u32,
}

static LOGGING: Mutex<RefCell<Slot<Logging>>> = Mutex::new(RefCell::new(Slot::Empty));

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
    let button = Button {
        pin: pins.gpio15.into_pull_up_input().into_dyn_pin(),
        pressed: false,
        run_level: false,
        run_start: 0,
        run_len: 0,
        press_start: 0,
    };
    // Transmit only: the PC sends nothing.
    let uart_pins =
        hal::uart::Pins::default().tx(pins.gpio0.into_function::<hal::gpio::FunctionUart>());
    let uart = defmt::unwrap!(
        UartPeripheral::new(pac.UART0, uart_pins, &mut pac.RESETS).enable(
            UartConfig::new(BAUD.Hz(), DataBits::Eight, None, StopBits::One),
            clocks.peripheral_clock.freq(),
        )
    );

    let header = StreamHeader {
        channels: PADS as u8,
        adc_bits: ADC_BITS,
        rate_hz: RATE_HZ,
    };
    let encoder = defmt::unwrap!(TelemetryEncoder::new(header, FRAMES_PER_RECORD));
    let adc = hal::Adc::new(pac.ADC, &mut pac.RESETS);
    let mut timer = hal::Timer::new(pac.TIMER, &mut pac.RESETS, &clocks);
    let alarm = defmt::unwrap!(timer.alarm_0());
    let sampler = Sampler::start(adc, sense, alarm, timer);
    critical_section::with(|cs| {
        *LOGGING.borrow_ref_mut(cs) = Slot::Full(Logging {
            sampler,
            encoder,
            button,
            labels: Deque::new(),
            labels_lost: 0,
        });
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
        "humtel_log: {=usize} pads, {=u8}-bit codes at {=u32} Hz, {=u8} frames a record, UART0 at {=u32} baud",
        PADS,
        ADC_BITS,
        RATE_HZ,
        FRAMES_PER_RECORD,
        BAUD
    );

    let mut report_at = timer.get_counter() + 10_000_000u64.micros();
    loop {
        let mut label = None;
        let mut idle = false;
        critical_section::with(|cs| {
            if let Some(l) = LOGGING.borrow_ref_mut(cs).get_mut() {
                // As many bytes as the UART's 32-byte FIFO takes now: a few
                // microseconds inside the critical section.
                let pending = l.encoder.pending();
                let sent = match uart.write_raw(pending) {
                    Ok(rest) => pending.len() - rest.len(),
                    Err(_) => 0, // FIFO full
                };
                l.encoder.consume(sent);
                idle = l.encoder.pending().is_empty();
                label = l.labels.pop_front();
            }
        });
        if let Some(Label { start, end }) = label {
            let (s, s_frac) = seconds(start);
            let (e, e_frac) = seconds(end);
            defmt::println!(
                "label: ch{=u8},touch,{=u32}.{=u32:04},{=u32}.{=u32:04}",
                LABEL_PAD,
                s,
                s_frac,
                e,
                e_frac
            );
        }
        if timer.get_counter() >= report_at {
            report_at += 10_000_000u64.micros();
            report();
        }
        if idle {
            // Nothing to send until the next sample (500 µs).
            cortex_m::asm::wfi();
        }
    }
}

/// `frame / RATE_HZ` seconds as whole seconds and ten-thousandths, rounded
/// down (exact at 2 kHz: a frame is 0.0005 s).
fn seconds(frame: u32) -> (u32, u32) {
    let whole = frame / RATE_HZ;
    let rest = frame % RATE_HZ;
    let frac = (u64::from(rest) * 10_000 / u64::from(RATE_HZ)) as u32;
    (whole, frac)
}

/// Logs the stream's counters every ten seconds.
fn report() {
    let mut c = (0, 0, 0, 0, 0);
    critical_section::with(|cs| {
        if let Some(l) = LOGGING.borrow_ref(cs).get() {
            c = (
                l.encoder.next_frame(),
                l.encoder.dropped_frames(),
                l.sampler.late(),
                l.sampler.adc_errors(),
                l.labels_lost,
            );
        }
    });
    let (frames, dropped, late, errors, lost) = c;
    defmt::info!(
        "frames {=u32}, dropped for lack of buffer {=u32}; late samples {=u32}, ADC errors {=u32}, labels lost {=u32}",
        frames,
        dropped,
        late,
        errors,
        lost
    );
}

#[interrupt]
fn TIMER_IRQ_0() {
    critical_section::with(|cs| {
        if let Some(l) = LOGGING.borrow_ref_mut(cs).get_mut() {
            let frame = l.sampler.sample();
            let at = l.encoder.next_frame();
            // A frame of PADS samples is always whole: nothing to refuse.
            let _ = l.encoder.push_frame(&frame);
            if let Some(label) = l.button.step(at) {
                if l.labels.push_back(label).is_err() {
                    l.labels_lost = l.labels_lost.wrapping_add(1);
                }
            }
        }
    });
}
