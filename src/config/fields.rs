//! What each field of [`Config`] is (the descriptors of
//! [`Config::FIELDS`]) and the macros that expand the field table.

use super::*;

/// What a field of [`Config`] holds and the range [`Config::validate`]
/// accepts for it on its own. Rules between two fields come on top: an
/// `f32` field that must stay below another names it in
/// [`FieldInfo::below`]; `baseline_fall_shift` may not exceed
/// `baseline_rise_shift`, and `min_active_cycles` may not exceed
/// `max_active_cycles` unless that is 0 (see their docs).
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum FieldKind {
    /// An unsigned integer field (`u8`, `u16` or `u32`): its type holds
    /// `0..=type_max`, validation accepts `min..=max`.
    Int {
        /// Largest value of the field's type.
        type_max: u32,
        /// Smallest accepted value.
        min: u32,
        /// Largest accepted value.
        max: u32,
    },
    /// An `f32` field: validation accepts finite values from `min` to
    /// `max` (−0.0 counts as 0).
    Float {
        /// Smallest accepted value.
        min: f32,
        /// Largest accepted value.
        max: f32,
    },
    /// An enum field; every variant is accepted.
    Choice {
        /// The enum's name in the crate (`MainsMode`).
        type_name: &'static str,
        /// Its variants' Rust names, in declaration order (`Hz50`).
        variants: &'static [&'static str],
        /// Their names in configuration files and serde, in the same order
        /// (`"50"`).
        names: &'static [&'static str],
    },
}

/// A field's value, as [`FieldInfo::get`] returns it and [`FieldInfo::set`]
/// takes it.
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub enum FieldValue {
    /// The value of an integer field.
    Int(u32),
    /// The value of an `f32` field.
    Float(f32),
    /// An enum field's variant, by its position in
    /// [`FieldKind::Choice`]'s lists.
    Choice(usize),
}

/// One field of [`Config`], described for tools and tests: see
/// [`Config::FIELDS`].
#[derive(Clone, Copy, Debug)]
pub struct FieldInfo {
    /// The field's name in `Config` (and in configuration files).
    pub name: &'static str,
    /// Its unit, for display (`"Hz"`, `"cycles"`; empty for enums).
    pub unit: &'static str,
    /// Its doc comment, a line of text for each line of the source.
    pub doc: &'static str,
    /// Its kind and range.
    pub kind: FieldKind,
    /// For an `f32` field that must stay strictly below another: that
    /// field's name.
    pub below: Option<&'static str>,
    /// Reads the field.
    pub get: fn(&Config) -> FieldValue,
    /// Writes the field; `false` (and `Config` unchanged) when the value is
    /// of another kind or does not fit the field's type.
    pub set: fn(&mut Config, FieldValue) -> bool,
}

#[cfg(feature = "defmt")]
impl defmt::Format for FieldInfo {
    fn format(&self, f: defmt::Formatter<'_>) {
        defmt::write!(f, "FieldInfo {{ name: {=str} }}", self.name);
    }
}

/// A field's range check before the rules are laid out (private: the
/// source of [`RULES`]).
#[derive(Clone, Copy)]
pub(super) enum Check {
    /// No range check of its own (every value of the type).
    None,
    /// An integer field's limits.
    Int(u32, u32),
    /// An `f32` field's limits.
    Float(f32, f32),
}

// Per-field pieces of `config_table!`, chosen by the field's check:
// `[int MIN, MAX]`, `[float MIN, MAX]` or `[float MIN, MAX, below OTHER]`,
// `[full]` (an integer, every value of its type), `[choice]` (an enum).

macro_rules! field_check {
    ([int $min:expr, $max:expr]) => {
        Check::Int($min, $max)
    };
    ([float $min:expr, $max:expr $(, below $other:ident)?]) => {
        Check::Float($min, $max)
    };
    ([full]) => {
        Check::None
    };
    ([choice]) => {
        Check::None
    };
}

macro_rules! field_below {
    ([float $min:expr, $max:expr, below $other:ident]) => {
        Some(stringify!($other))
    };
    ($check:tt) => {
        None
    };
}

macro_rules! field_kind {
    ($ty:ty, [int $min:expr, $max:expr]) => {
        FieldKind::Int {
            type_max: <$ty>::MAX as u32,
            min: $min,
            max: $max,
        }
    };
    ($ty:ty, [float $min:expr, $max:expr $(, below $other:ident)?]) => {
        FieldKind::Float {
            min: $min,
            max: $max,
        }
    };
    ($ty:ty, [full]) => {
        FieldKind::Int {
            type_max: <$ty>::MAX as u32,
            min: 0,
            max: <$ty>::MAX as u32,
        }
    };
    ($ty:ty, [choice]) => {
        FieldKind::Choice {
            type_name: <$ty as Choice>::TYPE,
            variants: <$ty as Choice>::VARIANTS,
            names: <$ty as Choice>::NAMES,
        }
    };
}

macro_rules! field_get {
    ($name:ident, $ty:ty, [float $($rest:tt)*]) => {
        |c: &Config| FieldValue::Float(c.$name)
    };
    ($name:ident, $ty:ty, [choice]) => {
        |c: &Config| FieldValue::Choice(Choice::index(c.$name))
    };
    ($name:ident, $ty:ty, $int:tt) => {
        |c: &Config| FieldValue::Int(u32::from(c.$name))
    };
}

macro_rules! field_set {
    ($name:ident, $ty:ty, [float $($rest:tt)*]) => {
        |c: &mut Config, v: FieldValue| match v {
            FieldValue::Float(x) => {
                c.$name = x;
                true
            }
            _ => false,
        }
    };
    ($name:ident, $ty:ty, [choice]) => {
        |c: &mut Config, v: FieldValue| match v {
            FieldValue::Choice(i) => match <$ty as Choice>::from_index(i) {
                Some(x) => {
                    c.$name = x;
                    true
                }
                None => false,
            },
            _ => false,
        }
    };
    ($name:ident, $ty:ty, $int:tt) => {
        |c: &mut Config, v: FieldValue| match v {
            FieldValue::Int(x) => match <$ty>::try_from(x).ok() {
                Some(x) => {
                    c.$name = x;
                    true
                }
                None => false,
            },
            _ => false,
        }
    };
}

/// The raw value [`Config::raw`] reads for a checked field (0 for the
/// others, which have no rule: their arm is the default's).
macro_rules! field_raw {
    ($c:ident, $name:ident, [int $($rest:tt)*]) => {
        u32::from($c.$name)
    };
    ($c:ident, $name:ident, [float $($rest:tt)*]) => {
        $c.$name.to_bits()
    };
    ($c:ident, $name:ident, $other:tt) => {
        0
    };
}

/// Generates [`Config`] and everything that lists its fields from one
/// table (see the module docs). Each row:
///
/// ```text
/// /// doc (unit, range in words: "MIN to MAX", what it does)
/// name: type = [check], "unit", touch DEFAULT, field DEFAULT;
/// ```
macro_rules! config_table {
    (
        $(#[$meta:meta])*
        pub struct Config {
            $(
                $(#[doc = $doc:literal])*
                $name:ident: $ty:ty = $check:tt, $unit:literal,
                touch $touch:expr, field $field:expr;
            )*
        }
        $(#[$touch_meta:meta])* pub const fn touch();
        $(#[$field_meta:meta])* pub const fn field();
    ) => {
        $(#[$meta])*
        pub struct Config {
            $(
                $(#[doc = $doc])*
                ///
                #[doc = concat!("Default: `", stringify!($touch), "` ([touch](Config::touch)), `",
                    stringify!($field), "` ([field](Config::field)).")]
                pub $name: $ty,
            )*
        }

        impl Config {
            /// Every field, in declaration order: name, unit, doc, kind and
            /// range, and a getter and setter, for tools and tests (a
            /// configuration file reader, a property test over every
            /// field). A `const`: firmware that does not use it links none
            /// of it.
            ///
            /// ```
            /// use humsense::{Config, FieldKind, FieldValue};
            /// let f = Config::FIELDS.iter().find(|f| f.name == "debounce_on").unwrap();
            /// assert!(matches!(f.kind, FieldKind::Int { min: 1, max: 255, .. }));
            /// let mut c = Config::touch();
            /// assert!((f.set)(&mut c, FieldValue::Int(4)));
            /// assert_eq!((f.get)(&c), FieldValue::Int(4));
            /// assert!(!(f.set)(&mut c, FieldValue::Int(300))); // not a u8
            /// ```
            pub const FIELDS: &'static [FieldInfo] = &[
                $(
                    FieldInfo {
                        name: stringify!($name),
                        unit: $unit,
                        doc: concat!($($doc, "\n"),*),
                        kind: field_kind!($ty, $check),
                        below: field_below!($check),
                        get: field_get!($name, $ty, $check),
                        set: field_set!($name, $ty, $check),
                    },
                )*
            ];

            // The profiles' defaults, the table's `touch` and `field`
            // columns. Struct literals, not `const` items: a literal builds
            // the value in place, a `const` item is copied from flash
            // (which links `memcpy` on a Cortex-M0).
            $(#[$touch_meta])*
            pub const fn touch() -> Self {
                Self { $($name: $touch,)* }
            }

            $(#[$field_meta])*
            pub const fn field() -> Self {
                Self { $($name: $field,)* }
            }

            /// Field `i` of [`RULES`]: an integer field as it is, an `f32`
            /// field as its IEEE bits (0 past the end). One short case per
            /// field, in flash about as much as a table of values would take
            /// on the stack. (The arms of unchecked fields all match
            /// [`NO_RULE`], with the default's value.)
            #[inline(never)]
            #[allow(unreachable_patterns)]
            fn raw(&self, i: usize) -> u32 {
                match i {
                    $(rule_of::$name => field_raw!(self, $name, $check),)*
                    _ => 0,
                }
            }
        }

        /// Every field's name and range check, in declaration order.
        const CHECKS: [(&str, Check, Option<&str>); [$(stringify!($name)),*].len()] = [
            $((stringify!($name), field_check!($check), field_below!($check)),)*
        ];

        /// Each field's index in [`RULES`] ([`NO_RULE`] for a field
        /// without a range check of its own).
        #[allow(non_upper_case_globals)]
        mod rule_of {
            $(pub(super) const $name: usize = super::rule_index(stringify!($name));)*
        }
    };
}
