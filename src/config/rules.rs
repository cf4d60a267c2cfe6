//! The range and order rules of [`Config::validate`], laid out from the
//! field table at compile time.

use super::*;

/// One field's range check: its name in `Config` and its limits, as they
/// are for integer fields and as [`order_key`]s for `f32` fields.
#[derive(Clone, Copy)]
pub(super) struct Rule {
    pub(super) field: &'static str,
    pub(super) min: u32,
    pub(super) max: u32,
}

impl Rule {
    pub(super) const fn int(field: &'static str, min: u32, max: u32) -> Self {
        Self { field, min, max }
    }

    /// Limits of an `f32` field, both non-negative: their keys are their
    /// bits, and a negative value's key (as `u32`, at least 2^31) lies
    /// above every such limit, so the unsigned comparison refuses it as
    /// the signed one would.
    pub(super) const fn float(field: &'static str, min: f32, max: f32) -> Self {
        Self {
            field,
            min: order_key(min) as u32,
            max: order_key(max) as u32,
        }
    }

    /// The error for raw value `v` (IEEE bits when `float`). Out of line:
    /// one copy of the error's construction.
    #[inline(never)]
    pub(super) fn out_of_range(&self, v: u32, float: bool) -> ConfigError {
        let value = |x: u32| {
            if float {
                ConfigValue::Float(f32::from_bits(x))
            } else {
                ConfigValue::Int(x)
            }
        };
        ConfigError::OutOfRange {
            field: self.field,
            value: value(v),
            min: value(self.min),
            max: value(self.max),
        }
    }
}

/// [`rule_of`]'s index for a field without a range check of its own.
pub(super) const NO_RULE: usize = usize::MAX;

/// How many fields have a check of kind `int` (`true`) or `float`.
pub(super) const fn count_checks(int: bool) -> usize {
    let mut n = 0;
    let mut k = 0;
    while k < CHECKS.len() {
        #[expect(clippy::indexing_slicing, reason = "k < CHECKS.len()")]
        match CHECKS[k].1 {
            Check::Int(..) if int => n += 1,
            Check::Float(..) if !int => n += 1,
            _ => {}
        }
        k += 1;
    }
    n
}

/// How many of [`RULES`] (the first ones) check integer fields.
pub(super) const INT_RULES: usize = count_checks(true);

/// How many fields have a range check of their own.
pub(super) const RULE_COUNT: usize = INT_RULES + count_checks(false);

/// Whether two names are equal (`str` equality for `const fn`).
pub(super) const fn same_name(a: &str, b: &str) -> bool {
    let (mut a, mut b) = (a.as_bytes(), b.as_bytes());
    loop {
        match (a, b) {
            ([], []) => return true,
            ([x, ra @ ..], [y, rb @ ..]) if *x == *y => {
                a = ra;
                b = rb;
            }
            _ => return false,
        }
    }
}

/// The index in [`RULES`] of field `name`: the integer checks in
/// declaration order, then the `f32` checks ([`NO_RULE`] for a field
/// without one, or an unknown name).
pub(super) const fn rule_index(name: &str) -> usize {
    let (mut ints, mut floats) = (0, 0);
    let mut k = 0;
    while k < CHECKS.len() {
        #[expect(clippy::indexing_slicing, reason = "k < CHECKS.len()")]
        let (field, check, _) = CHECKS[k];
        let hit = same_name(field, name);
        match check {
            Check::Int(..) if hit => return ints,
            Check::Float(..) if hit => return INT_RULES + floats,
            Check::Int(..) => ints += 1,
            Check::Float(..) => floats += 1,
            Check::None if hit => return NO_RULE,
            Check::None => {}
        }
        k += 1;
    }
    NO_RULE
}

/// [`RULES`], laid out at compile time from [`CHECKS`].
pub(super) const fn rules() -> [Rule; RULE_COUNT] {
    let mut out = [Rule::int("", 0, 0); RULE_COUNT];
    let mut k = 0;
    while k < CHECKS.len() {
        #[expect(clippy::indexing_slicing, reason = "k < CHECKS.len()")]
        let (field, check, _) = CHECKS[k];
        let i = rule_index(field);
        let rule = match check {
            Check::Int(min, max) => Rule::int(field, min, max),
            Check::Float(min, max) => Rule::float(field, min, max),
            Check::None => Rule::int(field, 0, 0),
        };
        if i < RULE_COUNT {
            #[expect(clippy::indexing_slicing, reason = "i < RULE_COUNT")]
            {
                out[i] = rule;
            }
        }
        k += 1;
    }
    out
}

/// Every range check: the integer fields, then the `f32` fields, each
/// group in declaration order (the ranges in the table of [`Config`]).
pub(super) static RULES: [Rule; RULE_COUNT] = rules();

/// How many fields must stay below another.
pub(super) const BELOW_COUNT: usize = {
    let (mut n, mut k) = (0, 0);
    while k < CHECKS.len() {
        #[expect(clippy::indexing_slicing, reason = "k < CHECKS.len()")]
        if CHECKS[k].2.is_some() {
            n += 1;
        }
        k += 1;
    }
    n
};

/// `f32` fields that must stay strictly below another, as indices into
/// [`RULES`], in declaration order: `off_noise` < `on_noise`,
/// `off_ratio` < `on_ratio`, `level_hysteresis_db` < `level_step_db`.
pub(super) const BELOW: [(usize, usize); BELOW_COUNT] = {
    let mut out = [(0, 0); BELOW_COUNT];
    let (mut n, mut k) = (0, 0);
    while k < CHECKS.len() {
        #[expect(clippy::indexing_slicing, reason = "k < CHECKS.len()")]
        if let (field, _, Some(other)) = CHECKS[k] {
            let pair = (rule_index(field), rule_index(other));
            // Both sides `f32` rules: the check reads them as floats.
            assert!(
                pair.0 >= INT_RULES && pair.0 < RULE_COUNT,
                "`below` on a field without a float range"
            );
            assert!(
                pair.1 >= INT_RULES && pair.1 < RULE_COUNT,
                "`below` names a field without a float range"
            );
            #[expect(clippy::indexing_slicing, reason = "n < BELOW_COUNT")]
            {
                out[n] = pair;
            }
            n += 1;
        }
        k += 1;
    }
    out
};

/// Whether `v` is neither infinite nor NaN (exponent not all ones).
pub(super) const fn finite(v: f32) -> bool {
    v.to_bits() & 0x7f80_0000 != 0x7f80_0000
}

/// An integer with the order of the finite `f32` values (−0.0 and +0.0
/// equal): the magnitude bits, negated for negative values.
pub(super) const fn order_key(v: f32) -> i32 {
    let bits = v.to_bits();
    let magnitude = (bits & 0x7fff_ffff) as i32;
    if bits >> 31 == 1 {
        -magnitude
    } else {
        magnitude
    }
}
