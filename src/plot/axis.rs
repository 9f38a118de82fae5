//! Axes: positions in axis units, tick choice and tick label formatting.

use plotters::coord::ranged1d::{KeyPointHint, NoDefaultFormatting, Ranged, ValueFormatter};

/// How tick labels are written.
#[derive(Debug, Clone, PartialEq)]
enum LabelFormat {
    /// Fixed number of decimals.
    Plain { decimals: usize },
    /// Mantissa with fixed decimals times a common power of ten.
    Scientific { exponent: i32, decimals: usize },
    /// Each label on its own: plain for moderate magnitudes, else powers of ten.
    Auto,
    /// Category names; tick `i + 0.5` is labelled with `names[i]`.
    Category(Vec<String>),
}

/// One chart axis. Positions are kept in "axis units": the data value on a
/// linear axis and its decimal logarithm on a logarithmic one, so that the
/// mapping to pixels is linear in both cases.
#[derive(Debug, Clone)]
pub(super) struct Axis {
    pub(super) lo: f64,
    pub(super) hi: f64,
    log: bool,
    pub(super) major: Vec<f64>,
    minor: Vec<f64>,
    format: LabelFormat,
    pub(super) hide_labels: bool,
}

impl Axis {
    /// Builds an axis over `[lo, hi]` (axis units) with about `target` labelled ticks.
    pub(super) fn numeric(lo: f64, hi: f64, log: bool, target: usize) -> Self {
        let target = target.max(2);
        let (major, minor, format) = if log {
            log_ticks(lo, hi, target)
        } else {
            linear_ticks(lo, hi, target)
        };
        Axis {
            lo,
            hi,
            log,
            major,
            minor,
            format,
            hide_labels: false,
        }
    }

    /// A category axis over `[0, n]` with one tick per shown category.
    pub(super) fn categories(names: &[String], max_labels: usize) -> Self {
        let n = names.len();
        let step = n.div_ceil(max_labels.max(1)).max(1);
        let major = (0..n).step_by(step).map(|i| i as f64 + 0.5).collect();
        Axis {
            lo: 0.0,
            hi: n as f64,
            log: false,
            major,
            minor: Vec::new(),
            format: LabelFormat::Category(names.to_vec()),
            hide_labels: false,
        }
    }

    /// Converts a data value to axis units (values must be positive on a log axis).
    pub(super) fn unit(&self, v: f64) -> f64 {
        if self.log { v.log10() } else { v }
    }

    /// Like [`Axis::unit`], but maps values at or below zero on a log axis far
    /// below the visible range, so that clipping puts them on the lower edge.
    pub(super) fn unit_or_below(&self, v: f64) -> f64 {
        if self.log && v <= 0.0 {
            self.lo - 1e6 * (self.hi - self.lo)
        } else {
            self.unit(v)
        }
    }

    /// Fraction of the axis length at which `u` (axis units) lies; not clamped.
    pub(super) fn frac(&self, u: f64) -> f64 {
        let span = self.hi - self.lo;
        let f = if span > 0.0 {
            (u - self.lo) / span
        } else {
            0.5
        };
        if f.is_finite() {
            f.clamp(-1e6, 1e6)
        } else if f > 0.0 {
            1e6
        } else {
            -1e6
        }
    }

    pub(super) fn label(&self, u: f64) -> String {
        if self.hide_labels || !u.is_finite() {
            return String::new();
        }
        let v = if self.log { 10f64.powf(u) } else { u };
        match &self.format {
            LabelFormat::Plain { decimals } => fmt_fixed(v, *decimals),
            LabelFormat::Scientific { exponent, decimals } => fmt_sci(v, *exponent, *decimals),
            LabelFormat::Auto => fmt_auto(v),
            LabelFormat::Category(names) => {
                let i = (u - 0.5).round();
                if i >= 0.0 && (i as usize) < names.len() {
                    names[i as usize].clone()
                } else {
                    String::new()
                }
            }
        }
    }
}

impl Ranged for Axis {
    type FormatOption = NoDefaultFormatting;
    type ValueType = f64;

    fn map(&self, value: &f64, limit: (i32, i32)) -> i32 {
        let p = limit.0 as f64 + self.frac(*value) * (limit.1 - limit.0) as f64;
        p.round() as i32
    }

    fn key_points<H: KeyPointHint>(&self, hint: H) -> Vec<f64> {
        if hint.weight().allow_light_points() {
            self.minor.clone()
        } else {
            self.major.clone()
        }
    }

    fn range(&self) -> std::ops::Range<f64> {
        self.lo..self.hi
    }
}

impl ValueFormatter<f64> for Axis {
    fn format_ext(&self, value: &f64) -> String {
        self.label(*value)
    }
}

/// A "nice" tick step (1, 2 or 5 times a power of ten) giving at most about
/// `target` intervals over `span`, and the number of minor divisions per step.
fn nice_step(span: f64, target: usize) -> (f64, usize) {
    let raw = span / target as f64;
    let mag = 10f64.powf(raw.log10().floor());
    let r = raw / mag;
    let tol = 1e-9;
    if r <= 1.0 + tol {
        (mag, 5)
    } else if r <= 2.0 + tol {
        (2.0 * mag, 4)
    } else if r <= 5.0 + tol {
        (5.0 * mag, 5)
    } else {
        (10.0 * mag, 5)
    }
}

/// Multiples of `step` inside `[lo, hi]` (with a small tolerance at the ends).
fn multiples(lo: f64, hi: f64, step: f64) -> Vec<f64> {
    let tol = step * 1e-9;
    let k0 = ((lo - tol) / step).ceil() as i64;
    let k1 = ((hi + tol) / step).floor() as i64;
    if k1 < k0 || i128::from(k1) - i128::from(k0) > 10_000 {
        return Vec::new();
    }
    (k0..=k1).map(|k| k as f64 * step).collect()
}

/// Ticks for a linear axis and a matching label format.
fn linear_ticks(lo: f64, hi: f64, target: usize) -> (Vec<f64>, Vec<f64>, LabelFormat) {
    let span = hi - lo;
    if span.is_nan() || span <= 0.0 || !span.is_finite() {
        return (vec![lo], Vec::new(), LabelFormat::Auto);
    }
    // Ask for more intervals until at least three ticks fall inside the range.
    let (mut step, mut div) = nice_step(span, target);
    let mut major = multiples(lo, hi, step);
    let mut t = target;
    while major.len() < 3 && t < 64 {
        t *= 2;
        (step, div) = nice_step(span, t);
        major = multiples(lo, hi, step);
    }
    let minor_step = step / div as f64;
    let minor = multiples(lo, hi, minor_step)
        .into_iter()
        .filter(|m| {
            let r = m / step;
            (r - r.round()).abs() > 1e-6
        })
        .collect();
    let format = linear_format(&major, step);
    (major, minor, format)
}

/// Label format for ticks that are multiples of `step`.
fn linear_format(ticks: &[f64], step: f64) -> LabelFormat {
    let max_abs = ticks.iter().fold(0.0f64, |m, t| m.max(t.abs()));
    let decimals_for = |s: f64| -> usize {
        // Smallest number of decimals that writes multiples of `s` exactly.
        for d in 0..=12usize {
            let scaled = s * 10f64.powi(d as i32);
            if (scaled - scaled.round()).abs() < 1e-6 * scaled.abs().max(1.0) {
                return d;
            }
        }
        12
    };
    if max_abs == 0.0 || (1e-3..1e5).contains(&max_abs) {
        LabelFormat::Plain {
            decimals: decimals_for(step),
        }
    } else {
        let exponent = max_abs.log10().floor() as i32;
        LabelFormat::Scientific {
            exponent,
            decimals: decimals_for(step / 10f64.powi(exponent)),
        }
    }
}

/// Ticks for a logarithmic axis over `[lo, hi]` in decades.
fn log_ticks(lo: f64, hi: f64, target: usize) -> (Vec<f64>, Vec<f64>, LabelFormat) {
    let span = hi - lo;
    let eps = 1e-9;
    let inside = |u: f64| u >= lo - eps && u <= hi + eps;
    let d_first = (lo.floor() as i64) - 1;
    let d_last = (hi.ceil() as i64) + 1;
    // mantissa m times 10^d for the decades around the range
    let with_mantissas = |ms: &[f64]| -> Vec<f64> {
        let mut v = Vec::new();
        for d in d_first..=d_last {
            for &m in ms {
                let u = d as f64 + m.log10();
                if inside(u) {
                    v.push(u);
                }
            }
        }
        v
    };
    let decades = with_mantissas(&[1.0]);
    if decades.len() >= 2 {
        if span * 3.0 <= target as f64 * 1.25 && span <= 4.0 {
            let major = with_mantissas(&[1.0, 2.0, 5.0]);
            let minor = with_mantissas(&[3.0, 4.0, 6.0, 7.0, 8.0, 9.0]);
            return (major, minor, LabelFormat::Auto);
        }
        let k = decades.len().div_ceil(target).max(1);
        let first = decades[0].round() as i64;
        let (major, rest): (Vec<f64>, Vec<f64>) = decades
            .iter()
            .partition(|u| (u.round() as i64 - first) % k as i64 == 0);
        let minor = if k == 1 {
            with_mantissas(&[2.0, 3.0, 4.0, 5.0, 6.0, 7.0, 8.0, 9.0])
        } else {
            rest
        };
        return (major, minor, LabelFormat::Auto);
    }
    let nice = with_mantissas(&[1.0, 2.0, 5.0]);
    if nice.len() >= 3 {
        let minor = with_mantissas(&[3.0, 4.0, 6.0, 7.0, 8.0, 9.0]);
        return (nice, minor, LabelFormat::Auto);
    }
    let all = with_mantissas(&[1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0, 8.0, 9.0]);
    if all.len() >= 3 && all.len() <= target + 2 {
        return (all, Vec::new(), LabelFormat::Auto);
    }
    // Less than a factor of about 3: linear ticks in data values.
    let (vlo, vhi) = (10f64.powf(lo), 10f64.powf(hi));
    let (vmajor, vminor, format) = linear_ticks(vlo, vhi, target);
    let to_u =
        |v: Vec<f64>| -> Vec<f64> { v.into_iter().filter(|x| *x > 0.0).map(f64::log10).collect() };
    (to_u(vmajor), to_u(vminor), format)
}

/// Replaces the ASCII hyphen of a negative number by a typographic minus.
fn with_minus(s: String) -> String {
    if let Some(rest) = s.strip_prefix('-') {
        format!("−{rest}")
    } else {
        s
    }
}

fn fmt_fixed(v: f64, decimals: usize) -> String {
    let s = format!("{v:.decimals$}");
    if s.trim_start_matches('-')
        .chars()
        .all(|c| c == '0' || c == '.')
    {
        // no "-0.0"
        return format!("{:.decimals$}", 0.0);
    }
    with_minus(s)
}

fn superscript(n: i32) -> String {
    const DIGITS: [char; 10] = ['⁰', '¹', '²', '³', '⁴', '⁵', '⁶', '⁷', '⁸', '⁹'];
    let mut s = String::new();
    if n < 0 {
        s.push('⁻');
    }
    for c in n.unsigned_abs().to_string().chars() {
        s.push(DIGITS[c.to_digit(10).unwrap_or(0) as usize]);
    }
    s
}

fn fmt_sci(v: f64, exponent: i32, decimals: usize) -> String {
    let m = v / 10f64.powi(exponent);
    let ms = fmt_fixed(m, decimals);
    if ms
        .trim_start_matches('−')
        .chars()
        .all(|c| c == '0' || c == '.')
    {
        "0".to_string()
    } else if ms == "1" {
        format!("10{}", superscript(exponent))
    } else if ms == "−1" {
        format!("−10{}", superscript(exponent))
    } else {
        format!("{ms}×10{}", superscript(exponent))
    }
}

/// Writes one value with up to three significant digits.
fn fmt_auto(v: f64) -> String {
    if v == 0.0 || !v.is_finite() {
        return "0".to_string();
    }
    // Round to 12 significant digits first so that 10^3 computed as
    // 999.9999999999999 gets the exponent 3.
    let v: f64 = format!("{v:.11e}").parse().unwrap_or(v);
    let e = v.abs().log10().floor() as i32;
    if (-3..5).contains(&e) {
        let decimals = (2 - e).max(0) as usize;
        let s = format!("{v:.decimals$}");
        let s = if s.contains('.') {
            s.trim_end_matches('0').trim_end_matches('.').to_string()
        } else {
            s
        };
        with_minus(s)
    } else {
        let m = v / 10f64.powi(e);
        let s = format!("{m:.2}");
        let s = s.trim_end_matches('0').trim_end_matches('.').to_string();
        if s == "10" {
            fmt_sci(v, e + 1, 0)
        } else {
            let decimals = s.split('.').nth(1).map_or(0, str::len);
            fmt_sci(v, e, decimals)
        }
    }
}

/// Expands a data range (axis units) by `pad` of its span on each side; an empty
/// range gets a sensible width.
pub(super) fn padded(lo: f64, hi: f64, log: bool, pad: f64) -> (f64, f64) {
    let span = hi - lo;
    if span > 0.0 && span > 1e-12 * lo.abs().max(hi.abs()) {
        (lo - pad * span, hi + pad * span)
    } else if log {
        (lo - 0.5, hi + 0.5)
    } else if lo == 0.0 {
        (-1.0, 1.0)
    } else {
        let d = 0.1 * lo.abs();
        (lo - d, hi + d)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn tick_labels_are_readable() {
        assert_eq!(fmt_fixed(-2.5, 1), "−2.5");
        assert_eq!(fmt_auto(0.002), "0.002");
        assert_eq!(fmt_auto(2000.0), "2000");
        assert_eq!(fmt_auto(1e6), "10⁶");
        assert_eq!(fmt_auto(2e-5), "2×10⁻⁵");
        let (major, _, fmt) = linear_ticks(0.0, 1.0, 5);
        let a = Axis {
            lo: 0.0,
            hi: 1.0,
            log: false,
            major: major.clone(),
            minor: vec![],
            format: fmt,
            hide_labels: false,
        };
        let labels: Vec<String> = major.iter().map(|&t| a.label(t)).collect();
        assert_eq!(labels, ["0.0", "0.2", "0.4", "0.6", "0.8", "1.0"]);
        assert_eq!(fmt_fixed(-0.0001, 2), "0.00");
        let big = Axis::numeric(0.0, 4e6, false, 5);
        assert_eq!(big.label(2e6), "2×10⁶");
        let log = Axis::numeric(1.0, 3.0, true, 8);
        let labels: Vec<String> = log.major.iter().map(|&t| log.label(t)).collect();
        assert_eq!(labels, ["10", "20", "50", "100", "200", "500", "1000"]);
        let narrow = Axis::numeric(45f64.log10(), 55f64.log10(), true, 6);
        assert!(narrow.major.len() >= 3, "{:?}", narrow.major);
        for &t in &narrow.major {
            assert!(!narrow.label(t).is_empty());
        }
    }
}
