#![doc = include_str!("../README.md")]
#![no_std]
#![cfg_attr(not(test), forbid(unsafe_code))]

pub mod baseline;
pub mod config;
pub mod decision;
#[cfg(feature = "defmt")]
mod defmt_check;
pub mod demod;
pub mod detector;
pub mod edge;
pub mod error;
pub mod event;
pub mod fault;
pub mod fixed;
pub mod impulse;
pub mod mains;
pub mod nco;
pub mod panel;
pub mod queue;
#[cfg(feature = "telemetry")]
pub mod telemetry;

pub use config::{Config, FieldInfo, FieldKind, FieldValue, MainsMode, PanelMode, Profile};
pub use detector::{
    per_decision_pfa, AdcSample, Backend, ChannelSnapshot, Cycle, Detector, FieldDetector,
    Frontend, NoWindow, SlidingWindow, WindowStage, FIELD_WINDOW_WORDS,
};
pub use edge::{EdgeConfig, EdgeDetector, EdgeInput, TimerWidth};
pub use error::{ConfigError, ConfigValue};
pub use event::{Event, EventKind, Fault, Faults};
pub use mains::{MainsHealth, MainsSystem};
pub use queue::EventQueue;
