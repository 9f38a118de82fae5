//! Numbers for people: display units chosen per table column, significant
//! digits, value ± uncertainty, and aligned text tables.
//!
//! A column shows every value in one unit, chosen from its largest value
//! (so 0.5 bar and 3 kPa in one column print as 0.5000 and 0.03000 bar,
//! never in two units). Computed values carry [`DIGITS`] significant
//! digits; a value with a standard uncertainty is rounded where its
//! uncertainty, given to two significant digits, ends (the GUM's advice,
//! JCGM 100:2008 §7.2.6), value and uncertainty in the same unit.

use std::io::Write;

/// Significant digits of computed values in reports.
pub const DIGITS: usize = 4;

/// A display unit: its symbol and its size in SI units.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Unit {
    /// The symbol printed after values or in a column header.
    pub symbol: &'static str,
    /// One of this unit in SI.
    pub si: f64,
}

impl Unit {
    /// `value_si` in this unit.
    pub fn of(self, value_si: f64) -> f64 {
        value_si / self.si
    }

    /// `value_si` in this unit with [`DIGITS`] significant digits, and the
    /// symbol: "1.234 bar".
    pub fn show(self, value_si: f64) -> String {
        format!("{} {}", sig(self.of(value_si), DIGITS), self.symbol)
    }
}

/// Pascal.
pub const PA: Unit = Unit {
    symbol: "Pa",
    si: 1.0,
};
/// Kilopascal.
pub const KPA: Unit = Unit {
    symbol: "kPa",
    si: 1e3,
};
/// Bar.
pub const BAR: Unit = Unit {
    symbol: "bar",
    si: 1e5,
};
/// Litre per minute.
pub const L_MIN: Unit = Unit {
    symbol: "L/min",
    si: 1e-3 / 60.0,
};
/// Millilitre per minute.
pub const ML_MIN: Unit = Unit {
    symbol: "mL/min",
    si: 1e-6 / 60.0,
};
/// Metre.
pub const M: Unit = Unit {
    symbol: "m",
    si: 1.0,
};
/// Millimetre.
pub const MM: Unit = Unit {
    symbol: "mm",
    si: 1e-3,
};
/// Litre.
pub const L: Unit = Unit {
    symbol: "L",
    si: 1e-3,
};
/// Cubic centimetre.
pub const CM3: Unit = Unit {
    symbol: "cm³",
    si: 1e-6,
};
/// Revolutions per minute (SI: rev/s).
pub const RPM: Unit = Unit {
    symbol: "rpm",
    si: 1.0 / 60.0,
};

/// What a column holds, to choose its unit.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Quantity {
    /// Pressure: bar from 0.1 bar, kPa from 10 Pa, else Pa.
    Pressure,
    /// Volume flow: L/min from 0.1 L/min, else mL/min.
    Flow,
    /// Length: m from 1 m, else mm.
    Length,
    /// Volume: L from 0.1 L, else cm³.
    Volume,
}

impl Quantity {
    /// The unit for a column whose largest magnitude is `largest_si`.
    pub fn unit_for(self, largest_si: f64) -> Unit {
        let a = largest_si.abs();
        match self {
            Quantity::Pressure if a >= 1e4 => BAR,
            Quantity::Pressure if a >= 10.0 => KPA,
            Quantity::Pressure => PA,
            Quantity::Flow if a >= 0.1 * L_MIN.si => L_MIN,
            Quantity::Flow => ML_MIN,
            Quantity::Length if a >= 1.0 => M,
            Quantity::Length => MM,
            Quantity::Volume if a >= 0.1 * L.si => L,
            Quantity::Volume => CM3,
        }
    }

    /// The unit for a column of these SI values.
    pub fn unit_for_all(self, values: impl IntoIterator<Item = f64>) -> Unit {
        let largest = values
            .into_iter()
            .filter(|v| v.is_finite())
            .fold(0.0, |m: f64, v| m.max(v.abs()));
        self.unit_for(largest)
    }

    /// One value in its own unit: "1.234 bar".
    pub fn show(self, value_si: f64) -> String {
        self.unit_for(value_si).show(value_si)
    }
}

/// `value` with `digits` significant digits, trailing zeros kept
/// (1.5 → "1.500"); very small or large magnitudes in e-notation.
pub fn sig(value: f64, digits: usize) -> String {
    if !value.is_finite() {
        return format!("{value}");
    }
    if value == 0.0 {
        return "0".into();
    }
    let digits = digits.max(1);
    let exp = value.abs().log10().floor() as i32;
    // the rounded mantissa may gain a digit (9.9996 → 10.00)
    let rounded: f64 = format!("{:.*e}", digits - 1, value)
        .parse()
        .unwrap_or(value);
    let exp = exp.max(rounded.abs().log10().floor() as i32);
    if !(-5..9).contains(&exp) {
        return format!("{:.*e}", digits - 1, value);
    }
    let decimals = (digits as i32 - 1 - exp).max(0) as usize;
    format!("{value:.decimals$}")
}

/// A value and its standard uncertainty in one unit: "0.8984 ± 0.0025 bar".
/// The uncertainty has two significant digits and the value is rounded to
/// the same decimal place (JCGM 100:2008 §7.2.6); without an uncertainty
/// (or a zero one) the value has [`DIGITS`] significant digits.
pub fn with_uncertainty(value_si: f64, u_si: Option<f64>, unit: Unit) -> String {
    format!(
        "{} {}",
        pm(unit.of(value_si), u_si.map(|u| unit.of(u))),
        unit.symbol
    )
}

/// `value ± u` (no unit), rounded as [`with_uncertainty`] says.
pub fn pm(value: f64, u: Option<f64>) -> String {
    let Some(u) = u.filter(|u| *u > 0.0 && u.is_finite()) else {
        return sig(value, DIGITS);
    };
    let u_exp = u.log10().floor() as i32;
    let decimals = 1 - u_exp;
    if !(0..=9).contains(&decimals) {
        // a shared power of ten keeps both readable
        let scale = 10f64.powi(u_exp - 1);
        return format!("({:.0} ± {:.0})e{}", value / scale, u / scale, u_exp - 1);
    }
    let d = decimals as usize;
    format!("{value:.d$} ± {u:.d$}")
}

/// A phase in degrees with one decimal, −180° written as 180° and −0.0 as
/// 0.0 (the sign of a zero imaginary part is not a phase).
pub fn phase(deg: f64) -> String {
    let t = format!("{deg:.1}");
    match t.as_str() {
        "-0.0" => "0.0".into(),
        "-180.0" => "180.0".into(),
        _ => t,
    }
}

/// Alignment of a table column.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Align {
    /// Text.
    Left,
    /// Numbers.
    Right,
}

/// A text table: a header per column, then rows, each column as wide as
/// its widest cell.
#[derive(Debug, Clone, Default)]
pub struct Table {
    headers: Vec<(String, Align)>,
    rows: Vec<Vec<String>>,
}

impl Table {
    /// A table with these columns.
    pub fn new(columns: &[(&str, Align)]) -> Self {
        Table {
            headers: columns
                .iter()
                .map(|(h, a)| ((*h).to_string(), *a))
                .collect(),
            rows: Vec::new(),
        }
    }

    /// Adds a column.
    pub fn column(mut self, header: impl Into<String>, align: Align) -> Self {
        self.headers.push((header.into(), align));
        self
    }

    /// Adds a row (one cell per column).
    pub fn row(&mut self, cells: Vec<String>) {
        self.rows.push(cells);
    }

    /// Writes the table, each line starting with `indent`; a trailing
    /// free-text cell beyond the columns is appended as is.
    ///
    /// # Errors
    /// The writer's error.
    pub fn write(&self, out: &mut impl Write, indent: &str) -> std::io::Result<()> {
        let width = |i: usize| {
            std::iter::once(&self.headers[i].0)
                .chain(self.rows.iter().filter_map(|r| r.get(i)))
                .map(|c| c.chars().count())
                .max()
                .unwrap_or(0)
        };
        let widths: Vec<usize> = (0..self.headers.len()).map(width).collect();
        let line = |cells: &[String]| {
            let mut s = String::from(indent);
            for (i, cell) in cells.iter().enumerate() {
                if i > 0 {
                    s.push_str("  ");
                }
                match (self.headers.get(i), widths.get(i)) {
                    (Some((_, Align::Right)), Some(&w)) => s.push_str(&format!("{cell:>w$}")),
                    (Some((_, Align::Left)), Some(&w)) if i + 1 < cells.len() => {
                        s.push_str(&format!("{cell:<w$}"))
                    }
                    _ => s.push_str(cell),
                }
            }
            s.trim_end().to_string()
        };
        let headers: Vec<String> = self.headers.iter().map(|h| h.0.clone()).collect();
        writeln!(out, "{}", line(&headers))?;
        for r in &self.rows {
            writeln!(out, "{}", line(r))?;
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn significant_digits_keep_trailing_zeros_and_round_up() {
        assert_eq!(sig(1.5, 4), "1.500");
        assert_eq!(sig(0.012346, 4), "0.01235");
        assert_eq!(sig(1234.6, 4), "1235");
        assert_eq!(sig(9.99996, 4), "10.00");
        assert_eq!(sig(-0.5, 3), "-0.500");
        assert_eq!(sig(0.0, 4), "0");
        assert_eq!(sig(1.2e-7, 3), "1.20e-7");
    }

    // JCGM 100:2008 §7.2.6: the uncertainty to at most two significant
    // digits, the value rounded to the same place.
    #[test]
    fn value_and_uncertainty_share_unit_and_last_digit() {
        assert_eq!(
            with_uncertainty(89_840.0, Some(2_500.0), BAR),
            "0.898 ± 0.025 bar"
        );
        assert_eq!(pm(1503.04, Some(0.213)), "1503.04 ± 0.21");
        assert_eq!(pm(12.3456, None), "12.35");
        assert_eq!(pm(2.5e-12, Some(3.1e-13)), "(250 ± 31)e-14");
    }

    #[test]
    fn one_unit_per_column_from_its_largest_value() {
        let unit = Quantity::Pressure.unit_for_all([3e3, 5e4, 20.0]);
        assert_eq!(unit, BAR);
        assert_eq!(sig(unit.of(3e3), DIGITS), "0.03000");
        assert_eq!(Quantity::Length.unit_for_all([0.03, 0.3]), MM);
        assert_eq!(Quantity::Pressure.unit_for_all([5.0]), PA);
    }

    #[test]
    fn phases_have_no_negative_zero() {
        assert_eq!(phase(-0.01), "0.0");
        assert_eq!(phase(-179.99), "180.0");
        assert_eq!(phase(-12.34), "-12.3");
    }

    #[test]
    fn tables_align_columns() {
        let mut t = Table::new(&[("name", Align::Left), ("value", Align::Right)]);
        t.row(vec!["a".into(), "1.0".into()]);
        t.row(vec!["long name".into(), "10.25".into()]);
        let mut out = Vec::new();
        t.write(&mut out, "  ").unwrap();
        assert_eq!(
            String::from_utf8(out).unwrap(),
            "  name       value\n  a            1.0\n  long name  10.25\n"
        );
    }
}
