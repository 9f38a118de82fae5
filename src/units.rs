//! Physical quantities with the units of the trade, converted to SI at the edge.
//!
//! A circuit file may write any dimensional value as a bare number (SI) or as
//! a string `"<number> <unit>"`, e.g. `"12 mm"`, `"210 bar"`, `"46 cSt"`,
//! `"0.5 L"`, `"1800 rpm"`. [`parse_quantity`] turns such a string into its SI
//! value for a given [`Dimension`]; everything inside ripline is SI.

use std::fmt;

/// The physical dimension a value must have; it selects the accepted units.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
#[non_exhaustive]
pub enum Dimension {
    /// Length, SI unit m.
    Length,
    /// Pressure, SI unit Pa.
    Pressure,
    /// Elastic modulus (bulk modulus, Young's modulus), SI unit Pa.
    Modulus,
    /// Volume, SI unit m³.
    Volume,
    /// Shaft speed, SI unit rev/s (a bare number is rev/s; write `rpm`).
    ShaftSpeed,
    /// Kinematic viscosity, SI unit m²/s.
    KinematicViscosity,
    /// Density, SI unit kg/m³.
    Density,
    /// Frequency, SI unit Hz.
    Frequency,
    /// Volume flow rate, SI unit m³/s.
    Flow,
    /// Angle, SI unit rad.
    Angle,
    /// Hydraulic resistance (pressure per flow), SI unit Pa·s/m³.
    Resistance,
    /// Hydraulic inertance (pressure per rate of change of flow), SI unit kg/m⁴.
    Inertance,
    /// Dimensionless number.
    Ratio,
    /// Temperature, SI unit K. Temperature units have an offset (°C, °F),
    /// see [`Dimension::unit_offset`].
    Temperature,
    /// Speed (a wave speed), SI unit m/s.
    Velocity,
    /// Time, SI unit s.
    Time,
    /// Mass, SI unit kg.
    Mass,
    /// Area, SI unit m².
    Area,
    /// Stiffness (a spring rate), SI unit N/m.
    Stiffness,
    /// Mechanical damping (force per speed), SI unit N·s/m.
    Damping,
    /// A valve's flow gain ∂Q/∂x (flow per opening), SI unit m²/s.
    FlowGain,
    /// A valve's flow-pressure coefficient ∂Q/∂p, SI unit m³/(s·Pa).
    FlowPressureCoefficient,
}

impl Dimension {
    /// Human-readable name used in error messages.
    pub fn name(self) -> &'static str {
        match self {
            Dimension::Length => "length",
            Dimension::Pressure => "pressure",
            Dimension::Modulus => "modulus",
            Dimension::Volume => "volume",
            Dimension::ShaftSpeed => "shaft speed",
            Dimension::KinematicViscosity => "kinematic viscosity",
            Dimension::Density => "density",
            Dimension::Frequency => "frequency",
            Dimension::Flow => "flow",
            Dimension::Angle => "angle",
            Dimension::Resistance => "hydraulic resistance",
            Dimension::Inertance => "hydraulic inertance",
            Dimension::Ratio => "ratio",
            Dimension::Temperature => "temperature",
            Dimension::Velocity => "speed",
            Dimension::Time => "time",
            Dimension::Mass => "mass",
            Dimension::Area => "area",
            Dimension::Stiffness => "stiffness",
            Dimension::Damping => "damping",
            Dimension::FlowGain => "flow gain",
            Dimension::FlowPressureCoefficient => "flow-pressure coefficient",
        }
    }

    /// Every dimension, for looking a unit up without knowing its dimension.
    pub const ALL: [Dimension; 16] = [
        Dimension::Length,
        Dimension::Pressure,
        Dimension::Modulus,
        Dimension::Volume,
        Dimension::ShaftSpeed,
        Dimension::KinematicViscosity,
        Dimension::Density,
        Dimension::Frequency,
        Dimension::Flow,
        Dimension::Angle,
        Dimension::Resistance,
        Dimension::Inertance,
        Dimension::Ratio,
        Dimension::Temperature,
        Dimension::Velocity,
        Dimension::Time,
    ];

    /// The factor of a unit to SI (value_SI = value × factor + offset),
    /// spelled as [`parse_quantity`] accepts it; 1 for an empty unit (a bare
    /// number is SI); `None` for a unit this dimension does not have.
    pub fn unit_factor(self, unit: &str) -> Option<f64> {
        let unit = normalise_unit(unit);
        if unit.is_empty() {
            return Some(1.0);
        }
        self.units()
            .iter()
            .find(|(u, _)| normalise_unit(u) == unit)
            .map(|(_, f)| *f)
    }

    /// The offset of an affine unit: value_SI = value × factor + offset.
    /// Only temperatures have one: °C (K = °C + 273.15) and °F
    /// (K = (°F + 459.67)·5/9), by definition of the scales (NIST SP 811,
    /// 2008, §B.9). Zero for every other unit.
    pub fn unit_offset(self, unit: &str) -> f64 {
        match (self, unit) {
            (Dimension::Temperature, "degC" | "°C") => 273.15,
            (Dimension::Temperature, "degF" | "°F") => 459.67 * 5.0 / 9.0,
            _ => 0.0,
        }
    }

    /// The accepted units and their factors to SI (value_SI = value × factor).
    pub fn units(self) -> &'static [(&'static str, f64)] {
        const PSI: f64 = 6_894.757_293_168_361;
        const INCH: f64 = 0.0254;
        const LPM: f64 = 1e-3 / 60.0;
        const US_GALLON: f64 = 3.785_411_784e-3;
        match self {
            Dimension::Length => &[
                ("m", 1.0),
                ("cm", 1e-2),
                ("mm", 1e-3),
                ("um", 1e-6),
                ("µm", 1e-6),
                ("in", INCH),
                ("ft", 0.3048),
            ],
            Dimension::Pressure | Dimension::Modulus => &[
                ("Pa", 1.0),
                ("kPa", 1e3),
                ("MPa", 1e6),
                ("GPa", 1e9),
                ("bar", 1e5),
                ("mbar", 1e2),
                ("psi", PSI),
                ("ksi", 1e3 * PSI),
                ("N/m2", 1.0),
                ("N/mm2", 1e6),
            ],
            Dimension::Volume => &[
                ("m3", 1.0),
                ("L", 1e-3),
                ("l", 1e-3),
                ("dm3", 1e-3),
                ("mL", 1e-6),
                ("ml", 1e-6),
                ("cm3", 1e-6),
                ("cc", 1e-6),
                ("mm3", 1e-9),
                ("in3", INCH * INCH * INCH),
                ("gal", US_GALLON),
            ],
            Dimension::ShaftSpeed => &[
                ("rev/s", 1.0),
                ("rps", 1.0),
                ("rpm", 1.0 / 60.0),
                ("rev/min", 1.0 / 60.0),
                ("1/min", 1.0 / 60.0),
            ],
            Dimension::KinematicViscosity => {
                &[("m2/s", 1.0), ("cSt", 1e-6), ("mm2/s", 1e-6), ("St", 1e-4)]
            }
            Dimension::Density => &[
                ("kg/m3", 1.0),
                ("g/cm3", 1e3),
                ("g/mL", 1e3),
                ("g/ml", 1e3),
                ("kg/L", 1e3),
                ("kg/l", 1e3),
            ],
            Dimension::Frequency => &[("Hz", 1.0), ("kHz", 1e3), ("1/s", 1.0)],
            Dimension::Flow => &[
                ("m3/s", 1.0),
                ("L/min", LPM),
                ("l/min", LPM),
                ("lpm", LPM),
                ("L/s", 1e-3),
                ("l/s", 1e-3),
                ("cm3/s", 1e-6),
                ("cc/s", 1e-6),
                ("m3/h", 1.0 / 3600.0),
                ("gpm", US_GALLON / 60.0),
            ],
            Dimension::Angle => &[
                ("rad", 1.0),
                ("deg", std::f64::consts::PI / 180.0),
                ("°", std::f64::consts::PI / 180.0),
            ],
            Dimension::Resistance => &[
                ("Pa.s/m3", 1.0),
                ("N.s/m5", 1.0),
                ("bar/(L/min)", 1e5 / LPM),
                ("bar.min/L", 1e5 / LPM),
                ("bar/(L/s)", 1e5 / 1e-3),
                ("MPa.s/m3", 1e6),
            ],
            Dimension::Inertance => &[("kg/m4", 1.0), ("Pa.s2/m3", 1.0)],
            Dimension::Ratio => &[("", 1.0), ("%", 0.01)],
            Dimension::Temperature => &[
                ("K", 1.0),
                ("degC", 1.0),
                ("°C", 1.0),
                ("degF", 5.0 / 9.0),
                ("°F", 5.0 / 9.0),
            ],
            Dimension::Velocity => &[("m/s", 1.0), ("km/s", 1e3), ("ft/s", 0.3048)],
            Dimension::Time => &[
                ("s", 1.0),
                ("ms", 1e-3),
                ("us", 1e-6),
                ("µs", 1e-6),
                ("min", 60.0),
            ],
            Dimension::Mass => &[("kg", 1.0), ("g", 1e-3), ("t", 1e3), ("lb", 0.453_592_37)],
            Dimension::Area => &[
                ("m2", 1.0),
                ("cm2", 1e-4),
                ("mm2", 1e-6),
                ("in2", INCH * INCH),
            ],
            Dimension::Stiffness => &[
                ("N/m", 1.0),
                ("N/mm", 1e3),
                ("kN/m", 1e3),
                ("kN/mm", 1e6),
                ("MN/m", 1e6),
            ],
            Dimension::Damping => &[
                ("N.s/m", 1.0),
                ("Ns/m", 1.0),
                ("kg/s", 1.0),
                ("kN.s/m", 1e3),
            ],
            Dimension::FlowGain => &[
                ("m2/s", 1.0),
                ("L/min/mm", LPM / 1e-3),
                ("(L/min)/mm", LPM / 1e-3),
            ],
            Dimension::FlowPressureCoefficient => &[
                ("m3/s/Pa", 1.0),
                ("m3/(s.Pa)", 1.0),
                ("L/min/bar", LPM / 1e5),
                ("(L/min)/bar", LPM / 1e5),
            ],
        }
    }

    /// The SI unit as written in messages.
    pub fn si_unit(self) -> &'static str {
        match self {
            Dimension::Length => "m",
            Dimension::Pressure | Dimension::Modulus => "Pa",
            Dimension::Volume => "m³",
            Dimension::ShaftSpeed => "rev/s",
            Dimension::KinematicViscosity => "m²/s",
            Dimension::Density => "kg/m³",
            Dimension::Frequency => "Hz",
            Dimension::Flow => "m³/s",
            Dimension::Angle => "rad",
            Dimension::Resistance => "Pa·s/m³",
            Dimension::Inertance => "kg/m⁴",
            Dimension::Ratio => "(dimensionless)",
            Dimension::Temperature => "K",
            Dimension::Velocity => "m/s",
            Dimension::Time => "s",
            Dimension::Mass => "kg",
            Dimension::Area => "m²",
            Dimension::Stiffness => "N/m",
            Dimension::Damping => "N·s/m",
            Dimension::FlowGain => "m²/s",
            Dimension::FlowPressureCoefficient => "m³/(s·Pa)",
        }
    }
}

/// Why a quantity string could not be read.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum UnitError {
    /// The text does not start with a number.
    #[error("`{text}` is not a number followed by a unit (expected e.g. `{example}`)")]
    NotANumber {
        /// The offending text.
        text: String,
        /// An example of a valid value of this dimension.
        example: String,
    },
    /// The unit is not one of those accepted for this dimension.
    #[error("unknown unit `{unit}` for a {dimension}; use one of: {accepted}")]
    UnknownUnit {
        /// The unit as written.
        unit: String,
        /// The dimension's name.
        dimension: &'static str,
        /// The accepted units, comma-separated.
        accepted: String,
    },
    /// The number is NaN or infinite, or overflows when converted to SI.
    #[error("`{text}` is not a finite number")]
    NotFinite {
        /// The offending text.
        text: String,
    },
    /// A tolerance (`± 5 %`, `u = …`) where none is read: only a circuit's
    /// own values (fluid, pumps, elements, taps) take one.
    #[error(
        "`{text}`: a tolerance is not read here; only the values of the machine in a circuit file take one (its fluid, pumps, elements and taps), not the speeds, pressures and temperatures it is analysed at, its limits or a command's options"
    )]
    Tolerance {
        /// The offending text.
        text: String,
    },
}

/// Normalise the spelling of a unit so that `m³`, `m^3` and `m3`, or
/// `Pa·s/m³`, `Pa s/m3` and `Pa*s/m^3`, compare equal.
fn normalise_unit(unit: &str) -> String {
    let mut out = String::with_capacity(unit.len());
    for ch in unit.trim().chars() {
        match ch {
            '³' => out.push('3'),
            '²' => out.push('2'),
            '⁴' => out.push('4'),
            '⁵' => out.push('5'),
            '^' => {}
            '·' | '*' | ' ' | '⋅' => out.push('.'),
            'μ' => out.push('µ'),
            c => out.push(c),
        }
    }
    out
}

/// Split `"12.5 mm"` into the number and the rest. Accepts a sign, decimals
/// and an exponent (`1.2e-3`).
pub fn split_number(text: &str) -> Option<(f64, &str)> {
    let t = text.trim();
    let bytes = t.as_bytes();
    let mut end = 0;
    let mut seen_digit = false;
    let mut i = 0;
    if i < bytes.len() && (bytes[i] == b'+' || bytes[i] == b'-') {
        i += 1;
    }
    while i < bytes.len() && (bytes[i].is_ascii_digit() || bytes[i] == b'.') {
        seen_digit |= bytes[i].is_ascii_digit();
        i += 1;
        end = i;
    }
    if !seen_digit {
        return None;
    }
    // Exponent, only when followed by digits (so "2 e" is not swallowed).
    if i < bytes.len() && (bytes[i] == b'e' || bytes[i] == b'E') {
        let mut j = i + 1;
        if j < bytes.len() && (bytes[j] == b'+' || bytes[j] == b'-') {
            j += 1;
        }
        let start_digits = j;
        while j < bytes.len() && bytes[j].is_ascii_digit() {
            j += 1;
        }
        if j > start_digits {
            end = j;
        }
    }
    let value: f64 = t[..end].parse().ok()?;
    Some((value, &t[end..]))
}

/// Parse `"<number> <unit>"` (or a bare number, read as SI) into the SI value
/// of `dimension`.
///
/// # Errors
/// [`UnitError`] when the text is not a number, the unit is unknown for the
/// dimension, or the result is not finite.
pub fn parse_quantity(text: &str, dimension: Dimension) -> Result<f64, UnitError> {
    let (value, unit) = split_number(text).ok_or_else(|| UnitError::NotANumber {
        text: text.to_string(),
        example: example(dimension),
    })?;
    let unit = normalise_unit(unit);
    let found = dimension
        .units()
        .iter()
        .find(|(u, _)| normalise_unit(u) == unit)
        .map(|(u, f)| (*f, dimension.unit_offset(u)));
    let (factor, offset) = found
        .or_else(|| unit.is_empty().then_some((1.0, 0.0)))
        .ok_or_else(|| {
            // a tolerance reads as part of the unit: name it as what it is
            // (looked for only here, off the path of every valid value)
            if crate::io::quantity::split_tolerance(text).1.is_some() {
                return UnitError::Tolerance {
                    text: text.trim().to_string(),
                };
            }
            UnitError::UnknownUnit {
                unit: unit.clone(),
                dimension: dimension.name(),
                accepted: dimension
                    .units()
                    .iter()
                    .filter(|(u, _)| !u.is_empty())
                    .map(|(u, _)| *u)
                    .collect::<Vec<_>>()
                    .join(", "),
            }
        })?;
    let si = value * factor + offset;
    if !si.is_finite() {
        return Err(UnitError::NotFinite {
            text: text.to_string(),
        });
    }
    Ok(si)
}

fn example(dimension: Dimension) -> String {
    let unit = dimension
        .units()
        .iter()
        .map(|(u, _)| *u)
        .nth(1)
        .unwrap_or("");
    format!("2.5 {unit}").trim().to_string()
}

/// A number with at most `digits` significant digits and no trailing
/// zeros, for messages: 2.9999999999999997e-5 → "3e-5", 1500 → "1500".
pub fn format_sig(value: f64, digits: usize) -> String {
    if !value.is_finite() || value == 0.0 {
        return format!("{value}");
    }
    let exp = value.abs().log10().floor() as i32;
    if (-4..6).contains(&exp) {
        let decimals = (digits as i32 - 1 - exp).max(0) as usize;
        let s = format!("{value:.decimals$}");
        if s.contains('.') {
            s.trim_end_matches('0').trim_end_matches('.').to_string()
        } else {
            s
        }
    } else {
        let s = format!("{:.*e}", digits.saturating_sub(1), value);
        let (mantissa, exponent) = s.split_once('e').unwrap_or((&s, "0"));
        let mantissa = if mantissa.contains('.') {
            mantissa.trim_end_matches('0').trim_end_matches('.')
        } else {
            mantissa
        };
        format!("{mantissa}e{exponent}")
    }
}

/// Formats an SI pressure for people: bar when at least 0.1 bar, else kPa,
/// else Pa.
pub struct PressureDisplay(pub f64);

impl fmt::Display for PressureDisplay {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let p = self.0;
        let a = p.abs();
        if a >= 1e4 {
            write!(f, "{:.4} bar", p / 1e5)
        } else if a >= 10.0 {
            write!(f, "{:.3} kPa", p / 1e3)
        } else {
            write!(f, "{:.3} Pa", p)
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn bare_numbers_are_si() {
        assert_eq!(parse_quantity("2.5", Dimension::Length).unwrap(), 2.5);
        assert_eq!(parse_quantity("-1e-3", Dimension::Length).unwrap(), -1e-3);
    }

    // Conversion factors: NIST SP 811 (2008), Appendix B (psi, inch, US gallon).
    #[test]
    fn trade_units_convert_to_si() {
        let cases = [
            ("12 mm", Dimension::Length, 0.012),
            ("0.5 in", Dimension::Length, 0.0127),
            ("210 bar", Dimension::Pressure, 2.1e7),
            ("3000 psi", Dimension::Pressure, 2.068_427_187_950_508e7),
            ("1.6 GPa", Dimension::Modulus, 1.6e9),
            ("0.5 L", Dimension::Volume, 5e-4),
            ("100 cm³", Dimension::Volume, 1e-4),
            ("10 cc", Dimension::Volume, 1e-5),
            ("1 in^3", Dimension::Volume, 1.638_706_4e-5),
            ("1800 rpm", Dimension::ShaftSpeed, 30.0),
            ("46 cSt", Dimension::KinematicViscosity, 46e-6),
            ("32 mm²/s", Dimension::KinematicViscosity, 32e-6),
            ("870 kg/m³", Dimension::Density, 870.0),
            ("60 L/min", Dimension::Flow, 1e-3),
            ("1.2e12 Pa·s/m³", Dimension::Resistance, 1.2e12),
            ("1.2e12 Pa s/m3", Dimension::Resistance, 1.2e12),
            ("180 deg", Dimension::Angle, std::f64::consts::PI),
            ("2 kHz", Dimension::Frequency, 2000.0),
            // temperature scales by definition (NIST SP 811 §B.9)
            ("50 degC", Dimension::Temperature, 323.15),
            ("-40 °C", Dimension::Temperature, 233.15),
            ("212 degF", Dimension::Temperature, 373.15),
            ("-40 °F", Dimension::Temperature, 233.15),
            ("300 K", Dimension::Temperature, 300.0),
            ("1100 m/s", Dimension::Velocity, 1100.0),
            ("2 ms", Dimension::Time, 2e-3),
            ("0.5 %", Dimension::Ratio, 5e-3),
            // mechanical units of valves and actuators (SI by definition;
            // avoirdupois pound 0.45359237 kg exactly, NIST SP 811 §B.8)
            ("25 g", Dimension::Mass, 0.025),
            ("1 lb", Dimension::Mass, 0.453_592_37),
            ("50 mm²", Dimension::Area, 50e-6),
            ("1 in2", Dimension::Area, 6.4516e-4),
            ("40 N/mm", Dimension::Stiffness, 4e4),
            ("2 kN/mm", Dimension::Stiffness, 2e6),
            ("15 N·s/m", Dimension::Damping, 15.0),
            ("6 L/min/mm", Dimension::FlowGain, 0.1),
            ("3 (L/min)/bar", Dimension::FlowPressureCoefficient, 5e-10),
        ];
        for (text, dim, want) in cases {
            let got = parse_quantity(text, dim).unwrap();
            assert_relative_eq!(got, want, max_relative = 1e-12);
        }
    }

    #[test]
    fn unknown_unit_lists_the_accepted_ones() {
        let err = parse_quantity("3 furlongs", Dimension::Length).unwrap_err();
        let msg = err.to_string();
        assert!(msg.contains("furlongs") && msg.contains("mm"), "{msg}");
        // Case matters: mPa is not MPa.
        assert!(parse_quantity("2 mpa", Dimension::Pressure).is_err());
        // a tolerance where none is read is named as such, not as a unit
        for text in ["2 bar ± 10 %", "2 bar +/- 1 bar", "2 bar, u = 0.1 bar"] {
            assert!(
                matches!(
                    parse_quantity(text, Dimension::Pressure),
                    Err(UnitError::Tolerance { .. })
                ),
                "{text}"
            );
        }
    }

    #[test]
    fn junk_and_overflow_are_rejected() {
        assert!(matches!(
            parse_quantity("abc", Dimension::Length),
            Err(UnitError::NotANumber { .. })
        ));
        assert!(matches!(
            parse_quantity("1e308 GPa", Dimension::Modulus),
            Err(UnitError::NotFinite { .. })
        ));
        assert!(parse_quantity("", Dimension::Length).is_err());
    }

    #[test]
    fn numbers_in_messages_are_short() {
        assert_eq!(format_sig(-2.9999999999999997e-5, 6), "-3e-5");
        assert_eq!(format_sig(1500.0, 6), "1500");
        assert_eq!(format_sig(0.35, 6), "0.35");
        assert_eq!(format_sig(2e12, 6), "2e12");
        assert_eq!(format_sig(1.23456789, 4), "1.235");
    }

    #[test]
    fn pressures_are_shown_in_a_readable_unit() {
        assert_eq!(PressureDisplay(1.5e5).to_string(), "1.5000 bar");
        assert_eq!(PressureDisplay(2500.0).to_string(), "2.500 kPa");
        assert_eq!(PressureDisplay(3.0).to_string(), "3.000 Pa");
    }
}
