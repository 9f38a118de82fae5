//! Gas pressures that must say whether they are absolute or gauge.
//!
//! The gas laws that size a pulsation damper need absolute pressure, while
//! gauges (and most data sheets) read pressure above the atmosphere. A
//! mistake between the two shifts a damper's gas volume by a bar or so, which
//! matters at low precharge. So a gas pressure is never a bare number: it is
//! written with a pressure unit and the word `abs` or `gauge`, e.g.
//! `"60 bar abs"` or `"59 bar gauge"`. Gauge values are turned into absolute
//! ones with the standard atmosphere, 1.01325 bar (ISO 2533).

use crate::elements::STANDARD_ATMOSPHERE_PA;
use crate::units::{Dimension, parse_quantity};
use serde::de::{self, Deserializer, Visitor};
use std::fmt;

/// How to write a gas pressure, for messages.
pub const GAS_PRESSURE_HINT: &str = "a gas pressure must say whether it is absolute or gauge: write e.g. `60 bar abs` or `59 bar gauge` (the gas laws need absolute pressure; gauge is converted with the standard atmosphere, 1.01325 bar)";

/// Parses `"<number> <pressure unit> abs|gauge"` into an absolute pressure in Pa.
///
/// # Errors
/// A message saying what is wrong: no `abs`/`gauge` word, a bad number or
/// unit, or an absolute pressure that is not positive.
pub fn parse_gas_pressure(text: &str) -> Result<f64, String> {
    let t = text.trim();
    let (value, gauge) = if let Some(v) = t.strip_suffix("abs") {
        (v, false)
    } else if let Some(v) = t.strip_suffix("absolute") {
        (v, false)
    } else if let Some(v) = t.strip_suffix("gauge") {
        (v, true)
    } else {
        return Err(format!("`{text}`: {GAS_PRESSURE_HINT}"));
    };
    let value = value.trim_end();
    if value.trim().parse::<f64>().is_ok() {
        return Err(format!(
            "`{text}` has no pressure unit: write e.g. `60 bar abs`"
        ));
    }
    let pa = parse_quantity(value, Dimension::Pressure).map_err(|e| e.to_string())?;
    let absolute = if gauge {
        pa + STANDARD_ATMOSPHERE_PA
    } else {
        pa
    };
    if absolute <= 0.0 {
        return Err(format!(
            "`{text}` is not above vacuum: an absolute pressure must be positive"
        ));
    }
    Ok(absolute)
}

/// A gas pressure read from a circuit file, held as absolute Pa.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct GasPressure {
    /// Absolute pressure in Pa.
    pub absolute_pa: f64,
}

impl<'de> serde::Deserialize<'de> for GasPressure {
    fn deserialize<D: Deserializer<'de>>(deserializer: D) -> Result<Self, D::Error> {
        struct V;

        impl Visitor<'_> for V {
            type Value = GasPressure;

            fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
                write!(
                    f,
                    "a gas pressure with its unit and `abs` or `gauge`, such as \"60 bar abs\""
                )
            }

            fn visit_f64<E: de::Error>(self, _: f64) -> Result<GasPressure, E> {
                Err(E::custom(GAS_PRESSURE_HINT))
            }

            fn visit_i64<E: de::Error>(self, _: i64) -> Result<GasPressure, E> {
                Err(E::custom(GAS_PRESSURE_HINT))
            }

            fn visit_u64<E: de::Error>(self, _: u64) -> Result<GasPressure, E> {
                Err(E::custom(GAS_PRESSURE_HINT))
            }

            fn visit_str<E: de::Error>(self, v: &str) -> Result<GasPressure, E> {
                let (value, tol) = crate::io::quantity::split_tolerance(v);
                if tol.is_some() {
                    crate::io::quantity::checked_tolerance(v, Dimension::Pressure)
                        .map_err(E::custom)?;
                }
                parse_gas_pressure(value)
                    .map(|absolute_pa| GasPressure { absolute_pa })
                    .map_err(E::custom)
            }
        }

        deserializer.deserialize_any(V)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn absolute_and_gauge_are_explicit() {
        assert_eq!(parse_gas_pressure("60 bar abs").unwrap(), 60e5);
        assert_eq!(parse_gas_pressure("6 MPa absolute").unwrap(), 6e6);
        // Gauge + 101 325 Pa (ISO 2533 standard atmosphere).
        assert_eq!(
            parse_gas_pressure("59 bar gauge").unwrap(),
            59e5 + 101_325.0
        );
        for bad in [
            "60 bar",
            "60",
            "60 abs",
            "abs",
            "-2 bar gauge",
            "60 furlong abs",
        ] {
            assert!(parse_gas_pressure(bad).is_err(), "{bad}");
        }
        assert!(
            parse_gas_pressure("60 bar")
                .unwrap_err()
                .contains("absolute or gauge")
        );
    }
}
