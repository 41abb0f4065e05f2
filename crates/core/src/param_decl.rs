//! Typed parameter declarations: each parameter of a plugin stated once.
//!
//! **The one design decision: one `const` per parameter is both the listing
//! and the reader.** A declaration ([`RealParam`], [`IntegerParam`],
//! [`ChoiceParam`], [`FlagParam`], [`TextParam`]) holds the parameter's name,
//! unit, one-line description, range or options and default. Its `spec()` is a
//! `const fn` that yields the [`ParamSpec`] for the plugin's table (what
//! `echobench detectors` lists and [`Params::resolve`] checks against), and its
//! `get()` reads the resolved value back typed: `f64`, `i64`, `bool`, `&str`,
//! or for a choice the plugin's own enum. The name is written once, so the
//! table and the reader cannot disagree on spelling, kind or default; a range
//! whose default lies outside it, or a choice whose default is not one of its
//! options, is a compile error (the `const` table evaluates `spec()`).
//!
//! ```
//! use echobench_core::detector::{ParamSpec, ParamValue, Params};
//! use echobench_core::param_decl::{ChoiceParam, IntegerParam};
//!
//! #[derive(Debug, Clone, Copy, PartialEq)]
//! enum Window { Hann, Rect }
//!
//! const FRAME_LEN: IntegerParam = IntegerParam {
//!     name: "frame_len", unit: "samples", about: "samples per frame",
//!     min: 8, max: 4096, default: 256,
//! };
//! const WINDOW: ChoiceParam<Window> = ChoiceParam {
//!     name: "window", about: "taper applied before the FFT",
//!     options: &["hann", "rect"], values: &[Window::Hann, Window::Rect], default: "hann",
//! };
//! static PARAMS: [ParamSpec; 2] = [FRAME_LEN.spec(), WINDOW.spec()];
//!
//! let p = Params::resolve("demo", &PARAMS, &[("window".into(), ParamValue::Text("rect".into()))])
//!     .unwrap();
//! assert_eq!(FRAME_LEN.get(&p).unwrap(), 256);
//! assert_eq!(WINDOW.get(&p).unwrap(), Window::Rect);
//! assert!(WINDOW.is_given(&p) && !FRAME_LEN.is_given(&p));
//! ```
//!
//! **Tunable parameters say so in the table.** A declaration's `spec_tuned(range)` is its
//! `spec()` with a [`TuneRange`]: the values a tuner may try and the scale it spreads its
//! samples on (linear, logarithmic, whole numbers, every option). A tuner reads it from the
//! plugin's `params()` and needs to know nothing else about the plugin; `spec()` alone means
//! "not tunable" (a threshold, a program path, a switch that changes what is measured).
//! The range must lie inside the declared `[min, max]`, checked at compile time like the
//! default.
//!
//! **Reading never panics.** `get` returns a [`ParamError`] when the resolved
//! parameters do not hold the declared name with the declared kind: a
//! declaration missing from the plugin's table, or parameters resolved for
//! another plugin. Every plugin reads its parameters in the function that
//! checks them (and returns `ParamError` anyway), so the bug surfaces as a
//! refusal naming the parameter, which the conformance kit reports.

use crate::detector::{
    ChoiceNames, DefaultValue, ParamError, ParamKind, ParamSpec, ParamValue, Params,
};
use std::borrow::Cow;

/// The error of a `get` that found no value of the declared kind.
fn not_resolved(params: &Params, name: &str, kind: &str) -> ParamError {
    ParamError::new(
        params.detector(),
        name,
        params
            .value(name)
            .map_or_else(|| "absent".to_string(), ToString::to_string),
        format!(
            "plugin bug: no resolved {kind} of this name; put the declaration's `spec()` in \
             the plugin's parameter table and resolve the parameters with that table"
        ),
    )
}

/// Over which values a tuner searches a parameter, and on which scale it spreads them.
///
/// A tuner maps a point `u` in `[0, 1)` of a low-discrepancy sequence to a value
/// ([`TuneRange::value_at`]): evenly on the linear scale, evenly in the logarithm on the
/// log scale (a frame length, a time constant: a factor matters, not a difference), each
/// whole number or option with equal width.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum TuneRange {
    /// Real values in `[low, high]`, spread evenly.
    Linear {
        /// Smallest value tried.
        low: f64,
        /// Largest value tried.
        high: f64,
    },
    /// Real values in `[low, high]` (`low > 0`), spread evenly in their logarithm.
    Log {
        /// Smallest value tried.
        low: f64,
        /// Largest value tried.
        high: f64,
    },
    /// Whole numbers `low..=high`, each equally likely.
    Integer {
        /// Smallest value tried.
        low: i64,
        /// Largest value tried.
        high: i64,
    },
    /// Whole numbers `low..=high` (`low > 0`), spread evenly in their logarithm.
    IntegerLog {
        /// Smallest value tried.
        low: i64,
        /// Largest value tried.
        high: i64,
    },
    /// Every option of a choice, each equally likely (the options come from the
    /// parameter's [`ParamKind::Choice`]).
    Choice,
}

impl TuneRange {
    /// The scale's name, for listings: `linear`, `log`, `integer`, `integer-log`, `choice`.
    pub fn scale_name(&self) -> &'static str {
        match self {
            TuneRange::Linear { .. } => "linear",
            TuneRange::Log { .. } => "log",
            TuneRange::Integer { .. } => "integer",
            TuneRange::IntegerLog { .. } => "integer-log",
            TuneRange::Choice => "choice",
        }
    }

    /// The value at `u` in `[0, 1)` (clamped there) for a parameter of `kind`: `None` when
    /// the range does not fit the kind (a hand-written table's mistake).
    ///
    /// Whole numbers and options are cells of equal width in `u` (on the log scale, in
    /// `ln`), so `n` evenly spread points give each of `n` values one point.
    pub fn value_at(&self, u: f64, kind: &ParamKind) -> Option<ParamValue> {
        let u = if u.is_finite() {
            u.clamp(0.0, 1.0 - f64::EPSILON)
        } else {
            0.0
        };
        match (self, kind) {
            (TuneRange::Linear { low, high }, ParamKind::Real { .. }) => {
                Some(ParamValue::Real(low + u * (high - low)))
            }
            (TuneRange::Log { low, high }, ParamKind::Real { .. }) if *low > 0.0 => Some(
                ParamValue::Real((low.ln() + u * (high / low).ln()).exp().clamp(*low, *high)),
            ),
            (TuneRange::Integer { low, high }, ParamKind::Integer { .. }) => {
                let span = (high - low + 1) as f64;
                Some(ParamValue::Integer(
                    (low + (u * span).floor() as i64).min(*high),
                ))
            }
            (TuneRange::IntegerLog { low, high }, ParamKind::Integer { .. }) if *low > 0 => {
                // Cells of equal width in ln over [low, high + 1), so every whole number
                // is reachable and the largest is not squeezed out.
                let (a, b) = ((*low as f64).ln(), ((high + 1) as f64).ln());
                let x = (a + u * (b - a)).exp().floor() as i64;
                Some(ParamValue::Integer(x.clamp(*low, *high)))
            }
            (TuneRange::Choice, ParamKind::Choice(names)) => {
                let names = names.names();
                let i =
                    ((u * names.len() as f64).floor() as usize).min(names.len().checked_sub(1)?);
                Some(ParamValue::Text(names[i].to_string()))
            }
            _ => None,
        }
    }
}

/// A real-number parameter in `[min, max]`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RealParam {
    /// Name, with its unit as a suffix where it has one (`hold_s`, `low_hz`).
    pub name: &'static str,
    /// Unit for display (`"Hz"`, `"s"`, `""` for none).
    pub unit: &'static str,
    /// What it does, one line.
    pub about: &'static str,
    /// Smallest allowed value.
    pub min: f64,
    /// Largest allowed value.
    pub max: f64,
    /// Value used when the suite does not set it (within `[min, max]`).
    pub default: f64,
}

impl RealParam {
    /// The entry for the plugin's parameter table.
    ///
    /// # Panics
    /// At compile time in a `const`/`static` table (a run-time `spec()` panics
    /// likewise): when `min > max` or the default lies outside `[min, max]`.
    pub const fn spec(&self) -> ParamSpec {
        assert!(self.min <= self.max, "RealParam: min > max");
        assert!(
            self.default >= self.min && self.default <= self.max,
            "RealParam: default outside [min, max]"
        );
        ParamSpec {
            name: Cow::Borrowed(self.name),
            unit: Cow::Borrowed(self.unit),
            about: Cow::Borrowed(self.about),
            kind: ParamKind::Real {
                min: self.min,
                max: self.max,
            },
            default: DefaultValue::Real(self.default),
            tune: None,
        }
    }

    /// [`RealParam::spec`], marked tunable over `range` ([`TuneRange::Linear`] or
    /// [`TuneRange::Log`], inside `[min, max]`).
    ///
    /// # Panics
    /// At compile time in a `const`/`static` table: as `spec`, or for another kind of
    /// range, an empty one, one outside `[min, max]`, or a logarithmic one reaching 0.
    pub const fn spec_tuned(&self, range: TuneRange) -> ParamSpec {
        match range {
            TuneRange::Linear { low, high } | TuneRange::Log { low, high } => {
                assert!(low < high, "RealParam: empty tuning range");
                assert!(
                    low >= self.min && high <= self.max,
                    "RealParam: tuning range outside [min, max]"
                );
                if let TuneRange::Log { .. } = range {
                    assert!(low > 0.0, "RealParam: a log tuning range must be positive");
                }
            }
            _ => panic!("RealParam: tune a real parameter on a Linear or Log range"),
        }
        let mut spec = self.spec();
        spec.tune = Some(range);
        spec
    }

    /// The resolved value.
    ///
    /// # Errors
    /// When `params` hold no real value named `self.name` (a plugin bug; module doc).
    pub fn get(&self, params: &Params) -> Result<f64, ParamError> {
        match params.value(self.name) {
            Some(ParamValue::Real(x)) => Ok(*x),
            _ => Err(not_resolved(params, self.name, "number")),
        }
    }

    /// True when the suite set it (even to its default value).
    pub fn is_given(&self, params: &Params) -> bool {
        params.is_given(self.name)
    }
}

/// A whole-number parameter in `[min, max]`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct IntegerParam {
    /// Name, with its unit as a suffix where it has one (`frame_len`, `guard_cells`).
    pub name: &'static str,
    /// Unit for display (`"samples"`, `"cells"`, `""` for none).
    pub unit: &'static str,
    /// What it does, one line.
    pub about: &'static str,
    /// Smallest allowed value.
    pub min: i64,
    /// Largest allowed value.
    pub max: i64,
    /// Value used when the suite does not set it (within `[min, max]`).
    pub default: i64,
}

impl IntegerParam {
    /// The entry for the plugin's parameter table.
    ///
    /// # Panics
    /// As [`RealParam::spec`].
    pub const fn spec(&self) -> ParamSpec {
        assert!(self.min <= self.max, "IntegerParam: min > max");
        assert!(
            self.default >= self.min && self.default <= self.max,
            "IntegerParam: default outside [min, max]"
        );
        ParamSpec {
            name: Cow::Borrowed(self.name),
            unit: Cow::Borrowed(self.unit),
            about: Cow::Borrowed(self.about),
            kind: ParamKind::Integer {
                min: self.min,
                max: self.max,
            },
            default: DefaultValue::Integer(self.default),
            tune: None,
        }
    }

    /// [`IntegerParam::spec`], marked tunable over `range` ([`TuneRange::Integer`] or
    /// [`TuneRange::IntegerLog`], inside `[min, max]`).
    ///
    /// # Panics
    /// As [`RealParam::spec_tuned`].
    pub const fn spec_tuned(&self, range: TuneRange) -> ParamSpec {
        match range {
            TuneRange::Integer { low, high } | TuneRange::IntegerLog { low, high } => {
                assert!(low < high, "IntegerParam: empty tuning range");
                assert!(
                    low >= self.min && high <= self.max,
                    "IntegerParam: tuning range outside [min, max]"
                );
                if let TuneRange::IntegerLog { .. } = range {
                    assert!(low > 0, "IntegerParam: a log tuning range must be positive");
                }
            }
            _ => panic!("IntegerParam: tune a whole number on an Integer or IntegerLog range"),
        }
        let mut spec = self.spec();
        spec.tune = Some(range);
        spec
    }

    /// The resolved value.
    ///
    /// # Errors
    /// When `params` hold no whole number named `self.name` (a plugin bug; module doc).
    pub fn get(&self, params: &Params) -> Result<i64, ParamError> {
        match params.value(self.name) {
            Some(ParamValue::Integer(i)) => Ok(*i),
            _ => Err(not_resolved(params, self.name, "whole number")),
        }
    }

    /// True when the suite set it (even to its default value).
    pub fn is_given(&self, params: &Params) -> bool {
        params.is_given(self.name)
    }
}

/// A true/false parameter.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct FlagParam {
    /// Name.
    pub name: &'static str,
    /// What it does, one line.
    pub about: &'static str,
    /// Value used when the suite does not set it.
    pub default: bool,
}

impl FlagParam {
    /// The entry for the plugin's parameter table.
    pub const fn spec(&self) -> ParamSpec {
        ParamSpec {
            name: Cow::Borrowed(self.name),
            unit: Cow::Borrowed(""),
            about: Cow::Borrowed(self.about),
            kind: ParamKind::Flag,
            default: DefaultValue::Flag(self.default),
            tune: None,
        }
    }

    /// The resolved value.
    ///
    /// # Errors
    /// When `params` hold no flag named `self.name` (a plugin bug; module doc).
    pub fn get(&self, params: &Params) -> Result<bool, ParamError> {
        match params.value(self.name) {
            Some(ParamValue::Flag(b)) => Ok(*b),
            _ => Err(not_resolved(params, self.name, "flag")),
        }
    }

    /// True when the suite set it (even to its default value).
    pub fn is_given(&self, params: &Params) -> bool {
        params.is_given(self.name)
    }
}

/// A free-text parameter (a program path, its arguments).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct TextParam {
    /// Name.
    pub name: &'static str,
    /// What it does, one line.
    pub about: &'static str,
    /// Value used when the suite does not set it.
    pub default: &'static str,
}

impl TextParam {
    /// The entry for the plugin's parameter table.
    pub const fn spec(&self) -> ParamSpec {
        ParamSpec {
            name: Cow::Borrowed(self.name),
            unit: Cow::Borrowed(""),
            about: Cow::Borrowed(self.about),
            kind: ParamKind::Text,
            default: DefaultValue::Text(Cow::Borrowed(self.default)),
            tune: None,
        }
    }

    /// The resolved text.
    ///
    /// # Errors
    /// When `params` hold no text named `self.name` (a plugin bug; module doc).
    pub fn get<'p>(&self, params: &'p Params) -> Result<&'p str, ParamError> {
        match params.value(self.name) {
            Some(ParamValue::Text(s)) => Ok(s),
            _ => Err(not_resolved(params, self.name, "text")),
        }
    }

    /// True when the suite set it (even to its default value).
    pub fn is_given(&self, params: &Params) -> bool {
        params.is_given(self.name)
    }
}

/// One of a list of names, read back as the plugin's own value for it
/// (usually an enum): `options[i]` means `values[i]`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct ChoiceParam<T: 'static> {
    /// Name.
    pub name: &'static str,
    /// What it does, one line.
    pub about: &'static str,
    /// The names a suite may write.
    pub options: &'static [&'static str],
    /// What each name means, in the order of `options` (as many).
    pub values: &'static [T],
    /// The option used when the suite does not set it (one of `options`).
    pub default: &'static str,
}

/// `a == b` on strings, in a `const fn`.
const fn same_str(a: &str, b: &str) -> bool {
    let (a, b) = (a.as_bytes(), b.as_bytes());
    if a.len() != b.len() {
        return false;
    }
    let mut i = 0;
    while i < a.len() {
        if a[i] != b[i] {
            return false;
        }
        i += 1;
    }
    true
}

impl<T: Copy + 'static> ChoiceParam<T> {
    /// The entry for the plugin's parameter table.
    ///
    /// # Panics
    /// At compile time in a `const`/`static` table: when `options` and `values`
    /// differ in length or `default` is not one of `options`.
    pub const fn spec(&self) -> ParamSpec {
        assert!(
            self.options.len() == self.values.len(),
            "ChoiceParam: options and values differ in length"
        );
        let mut i = 0;
        let mut found = false;
        while i < self.options.len() {
            found |= same_str(self.options[i], self.default);
            i += 1;
        }
        assert!(found, "ChoiceParam: default is not one of the options");
        ParamSpec {
            name: Cow::Borrowed(self.name),
            unit: Cow::Borrowed(""),
            about: Cow::Borrowed(self.about),
            kind: ParamKind::Choice(ChoiceNames::Static(self.options)),
            default: DefaultValue::Text(Cow::Borrowed(self.default)),
            tune: None,
        }
    }

    /// [`ChoiceParam::spec`], marked tunable over every option ([`TuneRange::Choice`]).
    ///
    /// # Panics
    /// As [`ChoiceParam::spec`].
    pub const fn spec_tuned(&self) -> ParamSpec {
        let mut spec = self.spec();
        spec.tune = Some(TuneRange::Choice);
        spec
    }

    /// The value of the resolved option.
    ///
    /// # Errors
    /// When `params` hold none of `options` under `self.name` (a plugin bug; module doc).
    pub fn get(&self, params: &Params) -> Result<T, ParamError> {
        match params.value(self.name) {
            Some(ParamValue::Text(s)) => self
                .options
                .iter()
                .position(|o| o == s)
                .and_then(|i| self.values.get(i).copied())
                .ok_or_else(|| not_resolved(params, self.name, "option")),
            _ => Err(not_resolved(params, self.name, "option")),
        }
    }

    /// True when the suite set it (even to its default value).
    pub fn is_given(&self, params: &Params) -> bool {
        params.is_given(self.name)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[derive(Debug, Clone, Copy, PartialEq, Eq)]
    enum Taper {
        Hann,
        Rect,
    }

    const LOW_HZ: RealParam = RealParam {
        name: "low_hz",
        unit: "Hz",
        about: "lower band edge",
        min: 0.0,
        max: 1e4,
        default: 10.0,
    };
    const GUARD: IntegerParam = IntegerParam {
        name: "guard_cells",
        unit: "cells",
        about: "guard cells",
        min: 0,
        max: 64,
        default: 2,
    };
    const TAPER: ChoiceParam<Taper> = ChoiceParam {
        name: "window",
        about: "taper",
        options: &["hann", "rect"],
        values: &[Taper::Hann, Taper::Rect],
        default: "hann",
    };
    const SMOOTH: FlagParam = FlagParam {
        name: "smooth",
        about: "smoothing",
        default: false,
    };
    const COMMAND: TextParam = TextParam {
        name: "command",
        about: "program",
        default: "",
    };
    static TABLE: [ParamSpec; 5] = [
        LOW_HZ.spec(),
        GUARD.spec(),
        TAPER.spec(),
        SMOOTH.spec(),
        COMMAND.spec(),
    ];

    #[test]
    fn one_declaration_gives_the_spec_and_the_typed_value() {
        // The table entry carries exactly the declaration's facts.
        assert_eq!(
            TABLE[0],
            ParamSpec {
                name: Cow::Borrowed("low_hz"),
                unit: Cow::Borrowed("Hz"),
                about: Cow::Borrowed("lower band edge"),
                kind: ParamKind::Real { min: 0.0, max: 1e4 },
                default: DefaultValue::Real(10.0),
                tune: None,
            }
        );
        assert_eq!(
            TABLE[2].kind,
            ParamKind::Choice(ChoiceNames::Static(&["hann", "rect"]))
        );
        assert_eq!(TABLE[2].default, DefaultValue::Text(Cow::Borrowed("hann")));
        // Defaults read back typed through the same constants.
        let p = Params::resolve("t", &TABLE, &[]).unwrap();
        assert_eq!(LOW_HZ.get(&p), Ok(10.0));
        assert_eq!(GUARD.get(&p), Ok(2));
        assert_eq!(TAPER.get(&p), Ok(Taper::Hann));
        assert_eq!(SMOOTH.get(&p), Ok(false));
        assert_eq!(COMMAND.get(&p), Ok(""));
        assert!(!LOW_HZ.is_given(&p));
        // Given values, an integer written for a real included.
        let p = Params::resolve(
            "t",
            &TABLE,
            &[
                ("low_hz".into(), ParamValue::Integer(20)),
                ("window".into(), ParamValue::Text("rect".into())),
                ("smooth".into(), ParamValue::Flag(true)),
                ("command".into(), ParamValue::Text("./det".into())),
            ],
        )
        .unwrap();
        assert_eq!(LOW_HZ.get(&p), Ok(20.0));
        assert_eq!(TAPER.get(&p), Ok(Taper::Rect));
        assert_eq!(SMOOTH.get(&p), Ok(true));
        assert_eq!(COMMAND.get(&p), Ok("./det"));
        assert!(LOW_HZ.is_given(&p) && TAPER.is_given(&p) && !GUARD.is_given(&p));
    }

    #[test]
    fn a_declaration_missing_from_the_table_is_an_error_not_a_panic() {
        static SHORT: [ParamSpec; 1] = [LOW_HZ.spec()];
        let p = Params::resolve("t", &SHORT, &[]).unwrap();
        let e = GUARD.get(&p).unwrap_err();
        assert_eq!(
            (e.param.as_str(), e.value.as_str()),
            ("guard_cells", "absent")
        );
        assert!(e.to_string().contains("plugin bug"), "{e}");
        // The same name with another kind is refused too.
        const LOW_AS_FLAG: FlagParam = FlagParam {
            name: "low_hz",
            about: "",
            default: false,
        };
        let e = LOW_AS_FLAG.get(&p).unwrap_err();
        assert_eq!(e.value, "10");
    }

    #[test]
    fn a_tuned_declaration_carries_its_range_and_maps_unit_points_onto_it() {
        const FRAME: IntegerParam = IntegerParam {
            name: "frame_len",
            unit: "samples",
            about: "frame",
            min: 8,
            max: 4096,
            default: 256,
        };
        static TUNED: [ParamSpec; 3] = [
            LOW_HZ.spec_tuned(TuneRange::Log {
                low: 1.0,
                high: 100.0,
            }),
            FRAME.spec_tuned(TuneRange::Integer { low: 60, high: 63 }),
            TAPER.spec_tuned(),
        ];
        assert_eq!(TABLE[0].tune, None);
        assert_eq!(
            TUNED[0].tune,
            Some(TuneRange::Log {
                low: 1.0,
                high: 100.0
            })
        );
        // Log scale: the middle of [0, 1) is the geometric mean, 10 Hz.
        let mid = TUNED[0].tune.unwrap().value_at(0.5, &TUNED[0].kind);
        assert!(matches!(mid, Some(ParamValue::Real(x)) if (x - 10.0).abs() < 1e-9));
        // Four whole numbers: four cells of width 1/4, each reached by its own quarter.
        let r = TUNED[1].tune.unwrap();
        let got: Vec<_> = [0.0, 0.26, 0.5, 0.99]
            .iter()
            .map(|&u| r.value_at(u, &TUNED[1].kind))
            .collect();
        assert_eq!(
            got,
            [60, 61, 62, 63]
                .map(|i| Some(ParamValue::Integer(i)))
                .to_vec()
        );
        let choice = TUNED[2].tune.unwrap();
        assert_eq!(
            choice.value_at(0.7, &TUNED[2].kind),
            Some(ParamValue::Text("rect".into()))
        );
        // A range that does not fit the kind maps to nothing rather than a wrong value.
        assert_eq!(r.value_at(0.5, &TUNED[0].kind), None);
        // Integer-log: every whole number of a small range is reachable, the top included.
        let il = TuneRange::IntegerLog { low: 1, high: 4 };
        let kind = ParamKind::Integer { min: 1, max: 4 };
        let mut seen: Vec<i64> = (0..1000)
            .filter_map(|k| match il.value_at(k as f64 / 1000.0, &kind) {
                Some(ParamValue::Integer(i)) => Some(i),
                _ => None,
            })
            .collect();
        seen.dedup();
        assert_eq!(seen, vec![1, 2, 3, 4]);
    }

    #[test]
    #[should_panic(expected = "tuning range outside")]
    fn a_tuning_range_outside_the_declared_range_is_refused() {
        let _ = LOW_HZ.spec_tuned(TuneRange::Linear {
            low: 0.0,
            high: 2e4,
        });
    }

    #[test]
    #[should_panic(expected = "default outside")]
    fn a_default_outside_its_range_is_refused() {
        let bad = RealParam {
            default: 2e4,
            ..LOW_HZ
        };
        let _ = bad.spec();
    }

    #[test]
    #[should_panic(expected = "not one of the options")]
    fn a_choice_default_outside_its_options_is_refused() {
        let bad = ChoiceParam {
            default: "kaiser",
            ..TAPER
        };
        let _ = bad.spec();
    }
}
