//! Two touch pads behind comparators on an STM32F411: each comparator's
//! output on a timer-capture pin of TIM2 (free-running, 32 bits, 1 MHz),
//! every edge's count handed to `humsense::EdgeDetector` from the capture
//! interrupt, a SysTick every 10 ms letting time pass while the pins are
//! quiet, events popped in the main loop through `humsense::EventQueue`,
//! one LED per pad and a defmt log over RTT. Wiring and commands:
//! README.md beside this package.
//!
//! Each pin feeds two capture channels (TIM2's input-capture channel
//! pairs can both take one input): one latches rising edges and the other
//! falling ones, so every edge's direction comes from which channel caught
//! it, never from reading the pin later, and two edges closer together
//! than the interrupt's latency keep their own times.
#![no_std]
#![no_main]
#![deny(unsafe_code)]

use core::cell::RefCell;
use core::sync::atomic::{AtomicU32, Ordering};

use cortex_m::peripheral::syst::SystClkSource;
use cortex_m_rt::{entry, exception};
use critical_section::Mutex;
use defmt_rtt as _;
use panic_probe as _;
use stm32f4xx_hal as hal;

use hal::gpio::{AnyPin, Output};
use hal::pac::{self, interrupt};
use hal::prelude::*;
use hal::timer::Timer;
use humsense::{Config, EdgeConfig, EdgeDetector, EventKind, EventQueue, MainsMode, TimerWidth};
use humsense_board_stm32f4::{clocks, Slot, SYSCLK_HZ};

/// Pads (comparators), on PA0 (TIM2 channels 1 and 2) and PA2 (channels
/// 3 and 4).
const PADS: usize = 2;

/// TIM2's count rate, hertz.
const TICK_HZ: u32 = 1_000_000;

/// The comparator's hysteresis over its threshold offset, in thousandths
/// (`h / V_t`; README.md: 39.8 mV over 0.30 V with the resistors given
/// there). Measure yours and put it here.
const HYSTERESIS_PERMILLE: u16 = 133;

/// SysTick period: 10 ms in core clock cycles (100 Hz, 999 999 + 1 cycles
/// of the 24-bit counter). `advance` needs a call at least every half wrap
/// of the capture timer (35 minutes at 32 bits); 10 ms lets a release and
/// a pad going quiet be seen within a mains cycle.
const SYSTICK_RELOAD: u32 = SYSCLK_HZ / 100 - 1;

/// The detector's settings: the touch profile on comparator pulses. After
/// tuning on an edge log of this board (README.md), replace these with the
/// `const CONFIG` and `const EDGE` that `humsim tune` prints.
fn config() -> (Config, EdgeConfig) {
    let config = Config::touch().with_mains(MainsMode::Auto);
    let edge =
        EdgeConfig::new(TICK_HZ, TimerWidth::Bits32).with_hysteresis_permille(HYSTERESIS_PERMILLE);
    (config, edge)
}

/// What the capture and SysTick interrupts own between their runs.
struct Sensing {
    tim: pac::TIM2,
    detector: EdgeDetector<PADS>,
    /// Edges the timer overwrote before the handler read them (an
    /// overcapture flag): the detector sees those as missing edges.
    overcaptures: u32,
}

static SENSING: Mutex<RefCell<Slot<Sensing>>> = Mutex::new(RefCell::new(Slot::Empty));

/// Events from the interrupts to the main loop.
static EVENTS: EventQueue<32> = EventQueue::new();

/// SysTick periods since start (10 ms each), for the main loop's reports.
static TICKS: AtomicU32 = AtomicU32::new(0);

#[entry]
fn main() -> ! {
    let dp = defmt::unwrap!(pac::Peripherals::take());
    let cp = defmt::unwrap!(cortex_m::Peripherals::take());
    let mut rcc = clocks(dp.RCC);
    let gpioa = dp.GPIOA.split(&mut rcc);
    let gpiob = dp.GPIOB.split(&mut rcc);

    // The comparators drive the pins push-pull; the pull-downs only hold
    // a pin low while its comparator is unpowered or unplugged.
    let _pad0 = gpioa.pa0.into_alternate::<1>().internal_pull_down(true); // TIM2_CH1
    let _pad1 = gpioa.pa2.into_alternate::<1>().internal_pull_down(true); // TIM2_CH3
    let mut leds: [AnyPin<Output>; PADS] = [
        gpiob.pb12.into_push_pull_output().erase(),
        gpiob.pb13.into_push_pull_output().erase(),
    ];

    let (config, edge) = config();
    // Validated once here; afterwards nothing in the detector can fail.
    let detector = defmt::unwrap!(EdgeDetector::<PADS>::new(config, edge));

    // TIM2's clock enabled and the timer reset by the HAL, then set up
    // for capture through its registers.
    let timer_hz = rcc.clocks.timclk1().raw();
    let tim = Timer::new(dp.TIM2, &mut rcc).release();
    defmt::assert!(timer_hz.is_multiple_of(TICK_HZ) && timer_hz / TICK_HZ <= 65_536);
    start_capture(&tim, (timer_hz / TICK_HZ - 1) as u16);
    critical_section::with(|cs| {
        *SENSING.borrow_ref_mut(cs) = Slot::Full(Sensing {
            tim,
            detector,
            overcaptures: 0,
        });
    });

    let mut syst = cp.SYST;
    syst.set_clock_source(SystClkSource::Core);
    syst.set_reload(SYSTICK_RELOAD);
    syst.clear_current();
    syst.enable_counter();
    syst.enable_interrupt();
    #[allow(unsafe_code)]
    // SAFETY: unmasking is unsafe because it may break a critical section
    // that relies on masked interrupts; none here does (critical-section
    // on a single core disables interrupts outright), and the handler's
    // state is in place.
    unsafe {
        pac::NVIC::unmask(pac::Interrupt::TIM2);
    }
    defmt::info!(
        "edges: {=usize} comparator pads, TIM2 at {=u32} Hz, h/Vt {=u16} permille",
        PADS,
        TICK_HZ,
        HYSTERESIS_PERMILLE
    );

    let mut report_at = 500u32;
    loop {
        while let Some(e) = EVENTS.pop() {
            let led = leds.get_mut(usize::from(e.channel));
            match e.kind {
                EventKind::TouchOn => {
                    if let Some(led) = led {
                        led.set_high();
                    }
                    defmt::info!("pad {=u8} touch-on", e.channel);
                }
                EventKind::TouchOff => {
                    if let Some(led) = led {
                        led.set_low();
                    }
                    defmt::info!("pad {=u8} touch-off", e.channel);
                }
                EventKind::Overflow(n) => defmt::warn!("{=u32} events lost", n),
                _ => defmt::info!("{}", e),
            }
        }
        // A report every 5 s.
        if TICKS.load(Ordering::Relaxed).wrapping_sub(report_at) as i32 >= 0 {
            report_at = report_at.wrapping_add(500);
            report();
        }
        // Sleeps until the next interrupt. An event pushed after the queue
        // was found empty is popped after it.
        cortex_m::asm::wfi();
    }
}

/// TIM2 free-running over its 32 bits at `psc + 1` timer clocks a count;
/// channels 1 and 2 capture TI1 (PA0) on its rising and falling edges,
/// channels 3 and 4 TI3 (PA2); every capture interrupts.
fn start_capture(tim: &pac::TIM2, psc: u16) {
    tim.psc().write(|w| w.psc().set(psc));
    tim.arr().write(|w| w.arr().set(u32::MAX));
    // The input filter: a level must hold for 8 samples at a sixteenth of
    // the timer clock (1.28 µs at 100 MHz) to count, which swallows
    // nanosecond ringing; it delays both edges alike, so the duty the
    // detector measures is unchanged. Its own glitch filter (200 µs by
    // default) handles anything longer.
    tim.ccmr1_input().write(|w| {
        w.cc1s().ti1().ic1f().fdts_div16_n8();
        w.cc2s().ti1().ic2f().fdts_div16_n8()
    });
    tim.ccmr2_input().write(|w| {
        w.cc3s().ti3().ic3f().fdts_div16_n8();
        w.cc4s().ti3().ic4f().fdts_div16_n8()
    });
    // Polarity: channels 1 and 3 rising (CCxP = 0), 2 and 4 falling.
    tim.ccer().write(|w| {
        w.cc1e().set_bit().cc1p().clear_bit();
        w.cc2e().set_bit().cc2p().set_bit();
        w.cc3e().set_bit().cc3p().clear_bit();
        w.cc4e().set_bit().cc4p().set_bit()
    });
    // Load the prescaler, then clear the update flag that loading set.
    tim.egr().write(|w| w.ug().set_bit());
    tim.sr().write(|w| w.uif().clear());
    tim.dier().write(|w| {
        w.cc1ie().set_bit();
        w.cc2ie().set_bit();
        w.cc3ie().set_bit();
        w.cc4ie().set_bit()
    });
    tim.cr1().write(|w| w.cen().set_bit());
}

/// Logs every pad's amplitude and baseline (Q8, 64 codes per threshold
/// unit) and the edge counters.
fn report() {
    let mut snaps = [None; PADS];
    let mut stats = [None; PADS];
    let mut over = 0;
    critical_section::with(|cs| {
        if let Some(s) = SENSING.borrow_ref(cs).get() {
            for ch in 0..PADS {
                if let (Some(snap), Some(stat)) = (snaps.get_mut(ch), stats.get_mut(ch)) {
                    *snap = s.detector.snapshot(ch);
                    *stat = s.detector.stats(ch);
                }
            }
            over = s.overcaptures;
        }
    });
    for (ch, (snap, stat)) in snaps.iter().zip(stats.iter()).enumerate() {
        if let (Some(s), Some(st)) = (snap, stat) {
            defmt::info!(
                "pad {=usize}: amplitude {=u32} baseline {=u32} (Q8) {}; {}",
                ch,
                s.amplitude_q8,
                s.baseline_q8,
                s.state,
                st
            );
        }
    }
    defmt::info!("overcaptures {=u32}", over);
}

/// One capture: the count, the pad, whether the pin rose.
#[derive(Clone, Copy)]
struct Capture {
    count: u32,
    pad: usize,
    rising: bool,
}

#[interrupt]
fn TIM2() {
    critical_section::with(|cs| {
        let mut slot = SENSING.borrow_ref_mut(cs);
        let Some(s) = slot.get_mut() else {
            return;
        };
        let sr = s.tim.sr().read();
        // Reading a capture register clears its interrupt flag.
        let mut caps = [Capture {
            count: 0,
            pad: 0,
            rising: false,
        }; 4];
        let mut n = 0;
        let mut take = |flag: bool, count: &dyn Fn() -> u32, pad: usize, rising: bool| {
            if let (true, Some(c)) = (flag, caps.get_mut(n)) {
                *c = Capture {
                    count: count(),
                    pad,
                    rising,
                };
                n += 1;
            }
        };
        take(
            sr.cc1if().bit_is_set(),
            &|| s.tim.ccr1().read().ccr().bits(),
            0,
            true,
        );
        take(
            sr.cc2if().bit_is_set(),
            &|| s.tim.ccr2().read().ccr().bits(),
            0,
            false,
        );
        take(
            sr.cc3if().bit_is_set(),
            &|| s.tim.ccr3().read().ccr().bits(),
            1,
            true,
        );
        take(
            sr.cc4if().bit_is_set(),
            &|| s.tim.ccr4().read().ccr().bits(),
            1,
            false,
        );
        let over = [sr.cc1of(), sr.cc2of(), sr.cc3of(), sr.cc4of()]
            .iter()
            .filter(|f| f.bit_is_set())
            .count();
        if over > 0 {
            s.overcaptures = s.overcaptures.wrapping_add(over as u32);
            s.tim.sr().write(|w| {
                if sr.cc1of().bit_is_set() {
                    w.cc1of().clear();
                }
                if sr.cc2of().bit_is_set() {
                    w.cc2of().clear();
                }
                if sr.cc3of().bit_is_set() {
                    w.cc3of().clear();
                }
                if sr.cc4of().bit_is_set() {
                    w.cc4of().clear();
                }
                w
            });
        }
        // Edges that arrived together go to the detector in time order
        // (the counts lie within a few microseconds of each other, so a
        // wrapping difference orders them).
        let caps = caps.get_mut(..n).unwrap_or(&mut []);
        for i in 1..caps.len() {
            let mut j = i;
            while j > 0 && (caps[j].count.wrapping_sub(caps[j - 1].count) as i32) < 0 {
                caps.swap(j, j - 1);
                j -= 1;
            }
        }
        for c in caps.iter() {
            s.detector.push_edge(c.pad, c.rising, c.count, |e| {
                // A full queue counts the loss and reports it when it
                // has room again.
                let _ = EVENTS.push(e);
            });
        }
    });
}

#[exception]
fn SysTick() {
    TICKS.fetch_add(1, Ordering::Relaxed);
    critical_section::with(|cs| {
        if let Some(s) = SENSING.borrow_ref_mut(cs).get_mut() {
            let now = s.tim.cnt().read().cnt().bits();
            s.detector.advance(now, |e| {
                let _ = EVENTS.push(e);
            });
        }
    });
}
