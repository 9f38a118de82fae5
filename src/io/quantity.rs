//! Serde support for quantities with units in input files.
//!
//! `Q<D>` deserialises from a YAML number (SI) or a string with a unit and
//! holds the SI value. Because the conversion happens inside the
//! deserialiser, a bad unit is reported by the YAML parser with its line and
//! column.
//!
//! In a circuit file a value may carry a **tolerance** (README, "Tolerances
//! and uncertainty bands"): `1.55 GPa ± 5 %` (or `+-`, `+/-`) gives limits within
//! which the value lies, read as a rectangular distribution; `1.55 GPa, u =
//! 3 %` gives a standard uncertainty, read as a normal distribution. The
//! amount is a percentage of the number as written, or a value in a unit of
//! the same dimension (a bare number: the value's own unit; for a value
//! written in `%`, a `%` amount is in percentage points). `Q` holds the
//! value; [`written`] reads the tolerance for the uncertainty analyses.
//! Other files (bench files, source files) refuse tolerances: they are read
//! outside [`allowing_tolerances`].

use crate::units::{Dimension, parse_quantity, split_number};
use serde::de::{self, Deserializer, Visitor};
use std::cell::Cell;
use std::fmt;
use std::marker::PhantomData;

/// How a tolerance spreads a value.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Spread {
    /// `± a`: the value lies within ±a, every value in between equally
    /// likely (rectangular distribution; standard uncertainty a/√3, JCGM
    /// 100:2008 §4.3.7).
    Limits,
    /// `, u = a`: a standard uncertainty, the value normally distributed
    /// (the distribution JCGM 101:2008 §6.4.7 assigns when only an estimate
    /// and its standard uncertainty are known).
    Standard,
}

/// A tolerance as written after a value.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Tolerance {
    /// Limits or a standard uncertainty.
    pub spread: Spread,
    /// The half-width of the limits, or the standard uncertainty, in the
    /// unit the value is written in (a percentage already applied).
    pub amount: f64,
    /// Whether it was written as a percentage of the value.
    pub relative: bool,
}

impl Tolerance {
    /// The standard uncertainty in the value's unit: a/√3 for limits, the
    /// amount itself for a standard uncertainty.
    pub fn standard_uncertainty(&self) -> f64 {
        match self.spread {
            Spread::Limits => self.amount / 3f64.sqrt(),
            Spread::Standard => self.amount,
        }
    }
}

/// A value as written in a file: its number, its unit (as written, possibly
/// with a gas pressure's `abs`/`gauge`; empty for a bare SI number) and its
/// tolerance.
#[derive(Debug, Clone, PartialEq)]
pub struct Written {
    /// The number.
    pub number: f64,
    /// The unit as written (trimmed); empty for a bare number.
    pub unit: String,
    /// Its tolerance, if any.
    pub tolerance: Option<Tolerance>,
}

impl Written {
    /// The text of another number in the same unit, as a YAML value would
    /// hold it (a bare number is SI): `"1.43 GPa"`, or the bare number. The
    /// number is written with every digit a double needs.
    pub fn with_number(&self, number: f64) -> String {
        if self.unit.is_empty() {
            format!("{number:?}")
        } else {
            format!("{number:?} {}", self.unit)
        }
    }
}

thread_local! {
    static TOLERANCES_ALLOWED: Cell<bool> = const { Cell::new(false) };
}

/// Runs `read` with tolerances accepted in quantities (circuit files).
pub fn allowing_tolerances<T>(read: impl FnOnce() -> T) -> T {
    let before = TOLERANCES_ALLOWED.with(|c| c.replace(true));
    let out = read();
    TOLERANCES_ALLOWED.with(|c| c.set(before));
    out
}

/// Deserialises a `T` with tolerances refused in its quantities (for
/// `#[serde(deserialize_with)]`): a circuit file's values that are not
/// values of the machine (the envelope's points) take none, in every
/// command.
///
/// # Errors
/// `T`'s errors; a tolerance is named as not read there.
pub fn without_tolerances<'de, T, De>(deserializer: De) -> Result<T, De::Error>
where
    T: serde::Deserialize<'de>,
    De: Deserializer<'de>,
{
    let before = TOLERANCES_ALLOWED.with(|c| c.replace(false));
    let out = T::deserialize(deserializer);
    TOLERANCES_ALLOWED.with(|c| c.set(before));
    out
}

/// The value and the tolerance of a text: `("1.55 GPa", Some((spread,
/// "5 %")))`; `None` when it has no tolerance mark.
pub fn split_tolerance(text: &str) -> (&str, Option<(Spread, &str)>) {
    for mark in ["±", "+/-", "+-"] {
        if let Some(i) = text.find(mark) {
            return (
                text[..i].trim(),
                Some((Spread::Limits, text[i + mark.len()..].trim())),
            );
        }
    }
    if let Some(i) = text.find(',') {
        let rest = text[i + 1..].trim_start();
        if let Some(r) = rest.strip_prefix('u')
            && let Some(amount) = r.trim_start().strip_prefix('=')
        {
            return (text[..i].trim(), Some((Spread::Standard, amount.trim())));
        }
    }
    (text.trim(), None)
}

/// How to write a tolerance, for messages.
pub const TOLERANCE_HINT: &str = "write a tolerance as `1.55 GPa ± 5 %` (limits, or `+-`, `+/-`) or `1.55 GPa, u = 0.05 GPa` (a standard uncertainty)";

/// `text` (a value with a unit, or a bare number in SI) as a number in
/// `unit`, a unit as a file writes it (possibly with a gas pressure's
/// `abs`/`gauge`, which `text` must then carry too; an empty unit is SI).
///
/// # Errors
/// A message when the text is not a value of the unit's kind.
pub fn in_unit(text: &str, unit: &str) -> Result<f64, String> {
    let base = base_unit(unit);
    let word = unit.trim()[base.len()..].trim();
    let mut t = text.trim();
    if !word.is_empty() {
        t = t.strip_suffix(word).map(str::trim_end).ok_or_else(|| {
            format!("`{text}`: say `{word}` as the value does (e.g. `60 {base} {word}`)")
        })?;
    }
    let (number, u) = split_number(t).ok_or_else(|| format!("`{text}` is not a number"))?;
    let u = u.trim();
    if base.is_empty() {
        if u.is_empty() {
            return Ok(number);
        }
        // a unit given for a value written bare (SI): its kind's factor
        let (dim, _) = find_unit(u, None).ok_or_else(|| format!("`{text}`: unknown unit `{u}`"))?;
        return parse_quantity(t, dim).map_err(|e| e.to_string());
    }
    let (dim, factor) = find_unit(base, None).ok_or_else(|| format!("unknown unit `{base}`"))?;
    let si = parse_quantity(t, dim).map_err(|e| format!("`{text}`: {e}"))?;
    let offset = parse_quantity(&format!("0 {base}"), dim).map_err(|e| e.to_string())?;
    Ok((si - offset) / factor)
}

/// Checks the tolerance of a value being deserialised: accepted here (a
/// circuit file) and readable in `dim`.
///
/// # Errors
/// A message saying why not.
pub fn checked_tolerance(text: &str, dim: Dimension) -> Result<(), String> {
    if !TOLERANCES_ALLOWED.with(Cell::get) {
        return Err(crate::units::UnitError::Tolerance {
            text: text.trim().to_string(),
        }
        .to_string());
    }
    written(text, Some(dim)).map(|_| ())
}

/// The unit of `unit_text` without a gas pressure's `abs`/`gauge` word.
fn base_unit(unit_text: &str) -> &str {
    let t = unit_text.trim();
    for word in ["absolute", "abs", "gauge"] {
        if let Some(u) = t.strip_suffix(word) {
            return u.trim_end();
        }
    }
    t
}

/// The dimension in which `unit` is known (the first of
/// [`Dimension::ALL`]), and its factor to SI.
fn find_unit(unit: &str, dim: Option<Dimension>) -> Option<(Dimension, f64)> {
    match dim {
        Some(d) => d.unit_factor(unit).map(|f| (d, f)),
        None => Dimension::ALL
            .iter()
            .find_map(|&d| d.unit_factor(unit).map(|f| (d, f))),
    }
}

/// Reads a value as written: its number, unit and tolerance. `dim`, when
/// known, is the dimension the value must have (it checks the tolerance's
/// unit); without it the units are looked up in every dimension.
///
/// # Errors
/// A message saying what is wrong with the tolerance (or that the text is
/// not a number with a unit).
pub fn written(text: &str, dim: Option<Dimension>) -> Result<Written, String> {
    let (value, tol) = split_tolerance(text);
    if let Some((_, amount)) = tol
        && (split_tolerance(value).1.is_some() || split_tolerance(amount).1.is_some())
    {
        return Err(format!(
            "`{}` has two tolerances; give one: {TOLERANCE_HINT}",
            text.trim()
        ));
    }
    let (number, unit) = split_number(value)
        .ok_or_else(|| format!("`{value}` is not a number followed by a unit"))?;
    let unit = unit.trim().to_string();
    let tolerance = match tol {
        None => None,
        Some((spread, amount)) => Some(tolerance(value, number, &unit, spread, amount, dim)?),
    };
    Ok(Written {
        number,
        unit,
        tolerance,
    })
}

fn tolerance(
    value: &str,
    number: f64,
    unit: &str,
    spread: Spread,
    amount_text: &str,
    dim: Option<Dimension>,
) -> Result<Tolerance, String> {
    let bad = |why: String| {
        format!("`{value}` has a tolerance that cannot be read: {why}; {TOLERANCE_HINT}")
    };
    let (a, a_unit) =
        split_number(amount_text).ok_or_else(|| bad(format!("`{amount_text}` is not a number")))?;
    let a_unit = a_unit.trim();
    if !(a.is_finite() && a > 0.0) {
        return Err(bad(format!(
            "the amount must be a positive number, found `{amount_text}`"
        )));
    }
    let value_unit = base_unit(unit);
    let (value_dim, _) =
        find_unit(value_unit, dim).ok_or_else(|| bad(format!("unknown unit `{value_unit}`")))?;
    let (amount, relative) = if a_unit == "%" && value_unit != "%" {
        if value_dim == Dimension::Temperature {
            return Err(bad(
                "a percentage of a temperature depends on its scale: give degrees, e.g. `50 degC ± 2 degC`".into(),
            ));
        }
        if a >= 100.0 {
            return Err(bad(format!(
                "{a} % would let the value reach zero; give less than 100 %"
            )));
        }
        if number == 0.0 {
            return Err(bad(format!(
                "a percentage of zero is zero: give the amount in the value's unit, e.g. `0 {value_unit} ± 1 {value_unit}`"
            )));
        }
        (number.abs() * a / 100.0, true)
    } else if a_unit.is_empty() {
        // a bare amount is in the value's own unit
        (a, false)
    } else {
        // A unit of the same kind (a difference: no offset, so `± 2 degC`
        // is 2 K).
        let dims: Vec<Dimension> = dim.map_or_else(|| Dimension::ALL.to_vec(), |d| vec![d]);
        let ratio = dims
            .iter()
            .find_map(|d| Some(d.unit_factor(a_unit)? / d.unit_factor(value_unit)?));
        match ratio {
            Some(r) => (a * r, false),
            None => {
                return Err(bad(format!(
                    "`{a_unit}` is not a unit of the same kind as `{value_unit}`"
                )));
            }
        }
    };
    if !amount.is_finite() || amount <= 0.0 {
        return Err(bad(format!(
            "the amount `{amount_text}` is not a positive finite number"
        )));
    }
    Ok(Tolerance {
        spread,
        amount,
        relative,
    })
}

/// A dimension marker for [`Q`].
pub trait Dim {
    /// The dimension.
    const DIM: Dimension;
}

macro_rules! dims {
    ($($name:ident => $dim:ident),* $(,)?) => {
        $(
            #[doc = concat!("Marker for [`Dimension::", stringify!($dim), "`].")]
            #[derive(Debug, Clone, Copy, PartialEq)]
            pub struct $name;
            impl Dim for $name {
                const DIM: Dimension = Dimension::$dim;
            }
        )*
    };
}

dims! {
    Length => Length,
    Pressure => Pressure,
    Modulus => Modulus,
    Volume => Volume,
    ShaftSpeed => ShaftSpeed,
    KinematicViscosity => KinematicViscosity,
    Density => Density,
    Frequency => Frequency,
    Flow => Flow,
    Angle => Angle,
    Resistance => Resistance,
    Inertance => Inertance,
    Ratio => Ratio,
    Temperature => Temperature,
    Velocity => Velocity,
    Time => Time,
    Mass => Mass,
    Area => Area,
    Stiffness => Stiffness,
    Damping => Damping,
    FlowGain => FlowGain,
    FlowPressureCoefficient => FlowPressureCoefficient,
}

/// A quantity of dimension `D`, stored in SI.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Q<D: Dim> {
    /// The SI value.
    pub si: f64,
    _dim: PhantomData<D>,
}

impl<D: Dim> Q<D> {
    /// Wraps an SI value.
    pub fn new(si: f64) -> Self {
        Q {
            si,
            _dim: PhantomData,
        }
    }
}

impl<'de, D: Dim> serde::Deserialize<'de> for Q<D> {
    fn deserialize<De: Deserializer<'de>>(deserializer: De) -> Result<Self, De::Error> {
        struct QVisitor<D>(PhantomData<D>);

        impl<D: Dim> QVisitor<D> {
            fn finite<E: de::Error>(v: f64) -> Result<Q<D>, E> {
                if v.is_finite() {
                    Ok(Q::new(v))
                } else {
                    Err(E::custom(format!(
                        "{} must be a finite number, found {v}",
                        D::DIM.name()
                    )))
                }
            }
        }

        impl<D: Dim> Visitor<'_> for QVisitor<D> {
            type Value = Q<D>;

            fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
                write!(
                    f,
                    "a {} as a number in {} or a string with a unit such as \"{}\"",
                    D::DIM.name(),
                    D::DIM.si_unit(),
                    example(D::DIM)
                )
            }

            fn visit_f64<E: de::Error>(self, v: f64) -> Result<Q<D>, E> {
                Self::finite(v)
            }

            fn visit_i64<E: de::Error>(self, v: i64) -> Result<Q<D>, E> {
                Self::finite(v as f64)
            }

            fn visit_u64<E: de::Error>(self, v: u64) -> Result<Q<D>, E> {
                Self::finite(v as f64)
            }

            fn visit_str<E: de::Error>(self, v: &str) -> Result<Q<D>, E> {
                let (value, tol) = split_tolerance(v);
                if tol.is_some() {
                    checked_tolerance(v, D::DIM).map_err(E::custom)?;
                }
                parse_quantity(value, D::DIM)
                    .map(Q::new)
                    .map_err(|e| E::custom(e.to_string()))
            }
        }

        deserializer.deserialize_any(QVisitor(PhantomData))
    }
}

fn example(dim: Dimension) -> String {
    let unit = dim.units().get(1).map_or("", |(u, _)| *u);
    format!("2.5 {unit}")
}

#[cfg(test)]
mod tests {
    use super::*;

    // The standard uncertainty of limits ±a read as a rectangular
    // distribution is a/√3 (JCGM 100:2008, §4.3.7).
    #[test]
    fn tolerances_are_read_in_the_values_unit() {
        let w = written("1.55 GPa ± 5 %", Some(Dimension::Modulus)).unwrap();
        assert_eq!((w.number, w.unit.as_str()), (1.55, "GPa"));
        let t = w.tolerance.unwrap();
        assert_eq!(t.spread, Spread::Limits);
        assert!(t.relative);
        assert!((t.amount - 0.0775).abs() < 1e-15);
        assert!((t.standard_uncertainty() - 0.0775 / 3f64.sqrt()).abs() < 1e-15);
        // another unit of the same kind, converted into the value's
        let t = written("1550 MPa +- 0.05 GPa", Some(Dimension::Modulus))
            .unwrap()
            .tolerance
            .unwrap();
        assert!((t.amount - 50.0).abs() < 1e-9 && !t.relative);
        // a percentage of zero
        let e = written("0 deg ± 10 %", Some(Dimension::Angle)).unwrap_err();
        assert!(e.contains("a percentage of zero is zero"), "{e}");
        // `+/-` as `±`
        let t = written("1.55 GPa +/- 5 %", Some(Dimension::Modulus))
            .unwrap()
            .tolerance
            .unwrap();
        assert!(t.spread == Spread::Limits && (t.amount - 0.0775).abs() < 1e-15);
        // a standard uncertainty; a bare amount is in the value's unit
        let t = written("0.2 L, u = 0.02", Some(Dimension::Volume))
            .unwrap()
            .tolerance
            .unwrap();
        assert_eq!(t.spread, Spread::Standard);
        assert!((t.standard_uncertainty() - 0.02).abs() < 1e-15);
        // a difference of temperatures has no offset: ± 2 degC is 2 K, and
        // 3.6 degF is 2 K (NIST SP 811 §B.9)
        let t = written("50 degC ± 3.6 degF", Some(Dimension::Temperature))
            .unwrap()
            .tolerance
            .unwrap();
        assert!((t.amount - 2.0).abs() < 1e-12);
        // a value in % takes a % amount in percentage points
        let t = written("0.5 % ± 0.3 %", Some(Dimension::Ratio))
            .unwrap()
            .tolerance
            .unwrap();
        assert!((t.amount - 0.3).abs() < 1e-15);
        // a gas pressure keeps its abs/gauge word in the unit
        let w = written("120 bar gauge ± 5 bar", Some(Dimension::Pressure)).unwrap();
        assert_eq!(w.unit, "bar gauge");
        assert_eq!(w.with_number(118.5), "118.5 bar gauge");
        // no dimension given: the unit is looked up
        let t = written("900 m/s ± 50 m/s", None)
            .unwrap()
            .tolerance
            .unwrap();
        assert_eq!(t.amount, 50.0);
    }

    #[test]
    fn bad_tolerances_are_refused_with_a_hint() {
        for (text, dim, part) in [
            (
                "1.55 GPa ± 5 m",
                Dimension::Modulus,
                "not a unit of the same kind",
            ),
            ("1.55 GPa ± -5 %", Dimension::Modulus, "positive"),
            ("1.55 GPa ± 100 %", Dimension::Modulus, "less than 100 %"),
            (
                "50 degC ± 5 %",
                Dimension::Temperature,
                "depends on its scale",
            ),
            ("1.55 GPa ± x", Dimension::Modulus, "not a number"),
            (
                "1.6 GPa, u = 5 % ± 2 %",
                Dimension::Modulus,
                "`1.6 GPa, u = 5 % ± 2 %` has two tolerances",
            ),
            (
                "1.6 GPa ± 2 %, u = 5 %",
                Dimension::Modulus,
                "has two tolerances",
            ),
            (
                "1.6 GPa ± 2 % ± 1 %",
                Dimension::Modulus,
                "has two tolerances",
            ),
        ] {
            let e = written(text, Some(dim)).unwrap_err();
            assert!(e.contains(part), "{text}: {e}");
            assert!(e.contains(TOLERANCE_HINT), "{e}");
        }
    }

    #[derive(Debug, serde::Deserialize)]
    struct One {
        v: Q<Modulus>,
    }

    #[test]
    fn quantities_take_tolerances_only_where_allowed() {
        let text = "v: 1.55 GPa ± 5 %";
        let e = serde_yaml::from_str::<One>(text).unwrap_err().to_string();
        assert!(e.contains("a tolerance is not read here"), "{e}");
        let one: One = allowing_tolerances(|| serde_yaml::from_str(text)).unwrap();
        assert_eq!(one.v.si, 1.55e9);
        // and a plain value is unchanged
        let one: One = serde_yaml::from_str("v: 1.55 GPa").unwrap();
        assert_eq!(one.v.si, 1.55e9);
        let e = allowing_tolerances(|| serde_yaml::from_str::<One>("v: 1.55 GPa ± 5 s"))
            .unwrap_err()
            .to_string();
        assert!(e.contains("line 1"), "{e}");
    }
}
