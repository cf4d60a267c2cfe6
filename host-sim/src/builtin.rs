//! Built-in scenarios, compiled in from `host-sim/scenarios/*.toml`.
//!
//! Each is a scenario file like any user's; `humsim scenarios` lists them
//! with their descriptions, and `humsim simulate NAME` renders one.

/// `(name, TOML source)` of every built-in scenario.
pub const BUILTINS: &[(&str, &str)] = &[
    (
        "kitchen-panel",
        include_str!("../scenarios/kitchen-panel.toml"),
    ),
    ("wall-scan", include_str!("../scenarios/wall-scan.toml")),
    (
        "workshop-60hz",
        include_str!("../scenarios/workshop-60hz.toml"),
    ),
    (
        "clipping-amp",
        include_str!("../scenarios/clipping-amp.toml"),
    ),
    (
        "battery-float",
        include_str!("../scenarios/battery-float.toml"),
    ),
    (
        "thick-overlay",
        include_str!("../scenarios/thick-overlay.toml"),
    ),
    ("esd-bench", include_str!("../scenarios/esd-bench.toml")),
    ("odd-rate", include_str!("../scenarios/odd-rate.toml")),
    ("drift-50hz", include_str!("../scenarios/drift-50hz.toml")),
    (
        "comparator-pad",
        include_str!("../scenarios/comparator-pad.toml"),
    ),
    (
        "follower-chain",
        include_str!("../scenarios/follower-chain.toml"),
    ),
    (
        "mains-events",
        include_str!("../scenarios/mains-events.toml"),
    ),
    ("esd-touches", include_str!("../scenarios/esd-touches.toml")),
    (
        "supply-steps",
        include_str!("../scenarios/supply-steps.toml"),
    ),
    (
        "bedside-lamp",
        include_str!("../scenarios/bedside-lamp.toml"),
    ),
    (
        "hall-lamp-off",
        include_str!("../scenarios/hall-lamp-off.toml"),
    ),
    (
        "bench-lead-ramp",
        include_str!("../scenarios/bench-lead-ramp.toml"),
    ),
    ("dock-touch", include_str!("../scenarios/dock-touch.toml")),
    (
        "field-lamp-step",
        include_str!("../scenarios/field-lamp-step.toml"),
    ),
    (
        "comparator-ambient",
        include_str!("../scenarios/comparator-ambient.toml"),
    ),
    (
        "comparator-silent",
        include_str!("../scenarios/comparator-silent.toml"),
    ),
    (
        "comparator-light-rc",
        include_str!("../scenarios/comparator-light-rc.toml"),
    ),
    (
        "comparator-heavy-rc",
        include_str!("../scenarios/comparator-heavy-rc.toml"),
    ),
    (
        "comparator-chatter",
        include_str!("../scenarios/comparator-chatter.toml"),
    ),
    (
        "comparator-esd",
        include_str!("../scenarios/comparator-esd.toml"),
    ),
];

/// The built-ins made for the comparator input (`humsim simulate
/// --digital`): rendered in 20 µs steps, checked through their edge logs
/// (`tests/builtins_detect.rs`) rather than as ADC input.
pub const DIGITAL: &[&str] = &[
    "comparator-ambient",
    "comparator-silent",
    "comparator-light-rc",
    "comparator-heavy-rc",
    "comparator-chatter",
    "comparator-esd",
];

/// The TOML source of a built-in, if `name` is one.
pub fn source(name: &str) -> Option<&'static str> {
    BUILTINS.iter().find(|(n, _)| *n == name).map(|(_, s)| *s)
}

/// Names of all built-ins, in listing order.
pub fn names() -> Vec<&'static str> {
    BUILTINS.iter().map(|(n, _)| *n).collect()
}
