//! Under the `defmt` feature every public type implements `defmt::Format`
//! (README, `Cargo.toml`): this module only compiles if each one listed
//! here does, for every channel, harmonic and capacity count. A public type
//! added to the crate belongs in this list. Nothing here is called or
//! linked.

use crate::baseline::{BaselineState, BaselineTuning};
use crate::config::{Config, FieldInfo, FieldKind, FieldValue, MainsMode, PanelMode, Profile};
use crate::decision::{DecisionState, DecisionTuning, Verdict};
use crate::demod::{CycleScale, DemodLane, DemodState, Iq};
use crate::detector::{Backend, ChannelSnapshot, ChannelState, Cycle, Detector, Frontend};
use crate::edge::{
    EdgeConfig, EdgeDetector, EdgeFrontend, EdgeInput, EdgeMains, EdgeStats, TimerWidth,
};
use crate::error::{ConfigError, ConfigValue};
use crate::event::{Event, EventKind, Fault, Faults};
use crate::fault::{FaultInput, FaultState, FaultTuning};
use crate::impulse::{BlockGate, BlockHold, ImpulseState};
use crate::mains::{MainsHealth, MainsSystem, MainsTracker};
use crate::nco::{PhaseRef, RefQ14};
use crate::panel::PanelTuning;
use crate::queue::EventQueue;

/// Compiles only for a `T` that implements `defmt::Format`.
const fn format<T: defmt::Format + ?Sized>() {}

#[allow(dead_code)]
const fn every_public_type<const N: usize, const H: usize>() {
    format::<BaselineState>();
    format::<BaselineTuning>();
    format::<Config>();
    format::<FieldInfo>();
    format::<FieldKind>();
    format::<FieldValue>();
    format::<MainsMode>();
    format::<PanelMode>();
    format::<Profile>();
    format::<DecisionState>();
    format::<DecisionTuning>();
    format::<Verdict>();
    format::<CycleScale<H>>();
    format::<DemodLane<H>>();
    format::<DemodState<H>>();
    format::<Iq>();
    format::<Backend<N, H>>();
    format::<ChannelSnapshot>();
    format::<ChannelState>();
    format::<Cycle<N, H>>();
    format::<Detector<N, H>>();
    format::<Frontend<N, H>>();
    format::<EdgeConfig>();
    format::<EdgeDetector<N>>();
    format::<EdgeFrontend<N>>();
    format::<EdgeInput>();
    format::<EdgeMains>();
    format::<EdgeStats>();
    format::<TimerWidth>();
    format::<ConfigError>();
    format::<ConfigValue>();
    format::<Event>();
    format::<EventKind>();
    format::<Fault>();
    format::<Faults>();
    format::<FaultInput>();
    format::<FaultState>();
    format::<FaultTuning>();
    format::<BlockGate>();
    format::<BlockHold>();
    format::<ImpulseState>();
    format::<MainsHealth>();
    format::<MainsSystem>();
    format::<MainsTracker>();
    format::<PhaseRef>();
    format::<RefQ14>();
    format::<PanelTuning>();
    format::<EventQueue<N>>();
}
