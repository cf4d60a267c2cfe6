//! What both STM32F411 firmwares share: the clocks and a `static`-friendly
//! slot for the state an interrupt handler owns.
#![no_std]
#![deny(unsafe_code)]

use stm32f4xx_hal::pac::RCC;
use stm32f4xx_hal::prelude::*;
use stm32f4xx_hal::rcc::{Config, Rcc, RccExt};

/// The board's crystal (HSE), hertz.
pub const HSE_HZ: u32 = 25_000_000;

/// System clock, hertz: the STM32F411's maximum. APB1 runs at half of it
/// (its limit is 50 MHz), so the APB1 timers (TIM2, TIM3) count at the
/// full 100 MHz; APB2, with the ADC, at 100 MHz (the ADC divides by 4).
pub const SYSCLK_HZ: u32 = 100_000_000;

/// The clocks from the crystal: 100 MHz system clock, APB1 at 50 MHz,
/// APB2 at 100 MHz.
pub fn clocks(rcc: RCC) -> Rcc {
    rcc.freeze(
        Config::hse(HSE_HZ.Hz())
            .sysclk(SYSCLK_HZ.Hz())
            .pclk1((SYSCLK_HZ / 2).Hz())
            .pclk2(SYSCLK_HZ.Hz()),
    )
}

/// An `Option` for state kept in a `static`, whose empty value is all zero
/// bytes.
///
/// `static S: Mutex<RefCell<Option<State>>> = …(None)` looks free, but the
/// compiler may store `None` in a niche of `State` (a `bool` field holding
/// 2, say), and a static whose initial value has a non-zero byte goes to
/// `.data`: the whole of it then takes flash and is copied to RAM at boot.
/// The tag of a `#[repr(u8)]` enum comes first, explicitly 0 for `Empty`,
/// and leaves no niche to use, so the static starts as zeros and goes to
/// `.bss`.
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
