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
        if self.log && matches!(self.format, LabelFormat::Auto) {
            return fmt_decade(u);
        }
        let v = if self.log { 10f64.powf(u) } else { u };
        if !v.is_finite() {
            return String::new();
        }
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

/// `v · 10^(−exponent)` without forming `10^(−exponent)` itself, which
/// overflows or underflows for exponents beyond about ±308.
fn scaled_by_power(v: f64, exponent: i32) -> f64 {
    let half = -exponent / 2;
    v * 10f64.powi(half) * 10f64.powi(-exponent - half)
}

/// Mantissa digits and decimal exponent of `v` written with `decimals`
/// decimals in scientific notation (Rust's own shortest-correct formatting,
/// exact also for subnormal numbers).
fn sci_parts(v: f64, decimals: usize) -> (String, i32) {
    let s = format!("{v:.decimals$e}");
    match s.split_once('e') {
        Some((m, e)) => (m.to_string(), e.parse().unwrap_or(0)),
        None => (s, 0),
    }
}

/// A "nice" tick step (1, 2 or 5 times a power of ten) giving at most about
/// `target` intervals over `span`, and the number of minor divisions per step.
/// `span` must be positive and finite, and at least the smallest normal
/// number (callers rescale smaller spans).
fn nice_step(span: f64, target: usize) -> (f64, usize) {
    let raw = span / target as f64;
    let e = raw.log10().floor() as i32;
    let mag = scaled_by_power(1.0, -e);
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
    // Tiny spans (down to subnormal numbers) are worked out on values scaled
    // by a power of ten, so that no step underflows.
    let shift = if span < 1e-200 {
        span.log10().floor() as i32
    } else {
        0
    };
    let (slo, shi) = (scaled_by_power(lo, shift), scaled_by_power(hi, shift));
    let back = |v: Vec<f64>| -> Vec<f64> {
        if shift == 0 {
            v
        } else {
            v.into_iter().map(|t| scaled_by_power(t, -shift)).collect()
        }
    };
    let sspan = shi - slo;
    // Ask for more intervals until at least three ticks fall inside the range.
    let (mut step, mut div) = nice_step(sspan, target);
    let mut major = multiples(slo, shi, step);
    let mut t = target;
    while major.len() < 3 && t < 64 {
        t *= 2;
        (step, div) = nice_step(sspan, t);
        major = multiples(slo, shi, step);
    }
    if major.is_empty() {
        // the range is too narrow for the resolution of f64: one tick mid-way
        let mid = lo + 0.5 * span;
        return (vec![mid], Vec::new(), LabelFormat::Auto);
    }
    let minor_step = step / div as f64;
    let minor = multiples(slo, shi, minor_step)
        .into_iter()
        .filter(|m| {
            let r = m / step;
            (r - r.round()).abs() > 1e-6
        })
        .collect();
    let (major, minor) = (back(major), back(minor));
    let format = linear_format(&major, scaled_by_power(step, -shift));
    (major, minor, format)
}

/// Label format for ticks that are multiples of `step`.
fn linear_format(ticks: &[f64], step: f64) -> LabelFormat {
    let max_abs = ticks.iter().fold(0.0f64, |m, t| m.max(t.abs()));
    let decimals_for = |s: f64| -> usize {
        // Smallest number of decimals that writes multiples of `s` exactly
        // (a step below 1e−6 once needed none: it rounded to 0 within an
        // absolute 1e−6, and 9.68×10¹⁶² was labelled 10×10¹⁶²).
        if s == 0.0 {
            return 0;
        }
        for d in 0..=15usize {
            let scaled = s * 10f64.powi(d as i32);
            if scaled.round() != 0.0 && (scaled - scaled.round()).abs() < 1e-6 * scaled.abs() {
                return d;
            }
        }
        15
    };
    if max_abs == 0.0 || (1e-3..1e5).contains(&max_abs) {
        LabelFormat::Plain {
            decimals: decimals_for(step),
        }
    } else {
        let exponent = sci_parts(max_abs, 12).1;
        LabelFormat::Scientific {
            exponent,
            decimals: decimals_for(scaled_by_power(step, exponent)),
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
        // every k-th decade, k a 1-2-5 number, on exponents that are multiples of k
        let need = decades.len().div_ceil(target).max(1) as i64;
        let k = [1i64, 2, 5]
            .iter()
            .flat_map(|&m| (0..4).map(move |p| m * 10i64.pow(p)))
            .filter(|&k| k >= need)
            .min()
            .unwrap_or(need);
        let (mut major, mut rest): (Vec<f64>, Vec<f64>) = decades
            .iter()
            .partition(|u| (u.round() as i64).rem_euclid(k) == 0);
        if major.len() < 2 {
            // a coarse step would leave one tick: count from the first decade
            let first = decades[0].round() as i64;
            let k = need;
            (major, rest) = decades
                .iter()
                .partition(|u| (u.round() as i64 - first).rem_euclid(k) == 0);
        }
        let minor = if k == 1 {
            with_mantissas(&[2.0, 3.0, 4.0, 5.0, 6.0, 7.0, 8.0, 9.0])
        } else if rest.len() <= 60 {
            rest
        } else {
            Vec::new() // hundreds of decades: light lines would grey the plot
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
    // Less than a factor of about 3: linear ticks in data values, where these
    // are normal numbers; else whatever mantissa ticks fall inside.
    let (vlo, vhi) = (10f64.powf(lo), 10f64.powf(hi));
    if !(vlo >= f64::MIN_POSITIVE && vhi.is_finite()) {
        let ticks = if all.is_empty() {
            vec![0.5 * (lo + hi)]
        } else {
            all
        };
        return (ticks, Vec::new(), LabelFormat::Auto);
    }
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
    let m = scaled_by_power(v, exponent);
    let ms = fmt_fixed(m, decimals);
    if !m.is_finite() {
        String::new()
    } else if ms
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
    // Three significant digits in scientific form: the exponent comes from
    // the formatter, so 999.9999999999999 counts as 10³ and subnormal
    // numbers keep their true exponent.
    let (m, e) = sci_parts(v, 2);
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
        let m = m.trim_end_matches('0').trim_end_matches('.');
        match m {
            "1" => format!("10{}", superscript(e)),
            "-1" => format!("−10{}", superscript(e)),
            _ => format!("{}×10{}", with_minus(m.to_string()), superscript(e)),
        }
    }
}

/// Label of a tick on a logarithmic axis at `u` = log10 of the value, formed
/// from `u` itself so that values beyond the range of `f64` (10^−330,
/// 10^320) are written correctly too.
fn fmt_decade(u: f64) -> String {
    let e = (u + 1e-9).floor();
    let m = 10f64.powf(u - e); // 1 ≤ m < 10
    let e = e as i32;
    if (-3..5).contains(&e) {
        return fmt_auto(m * 10f64.powi(e));
    }
    let ms = format!("{m:.2}");
    let ms = ms.trim_end_matches('0').trim_end_matches('.');
    match ms {
        "1" => format!("10{}", superscript(e)),
        "10" => format!("10{}", superscript(e + 1)),
        _ => format!("{ms}×10{}", superscript(e)),
    }
}

/// Expands a data range (axis units) by `pad` of its span on each side; an empty
/// range gets a sensible width.
pub(super) fn padded(lo: f64, hi: f64, log: bool, pad: f64) -> (f64, f64) {
    let span = hi - lo;
    if span > 0.0 && span > 1e-9 * lo.abs().max(hi.abs()) {
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

    /// Reads a tick label back as (mantissa, decimal exponent): "−2.5",
    /// "10⁻³¹⁵", "2×10⁶".
    fn parse_label(label: &str) -> (f64, i32) {
        let s = label.replace('−', "-");
        let sup = "⁰¹²³⁴⁵⁶⁷⁸⁹⁻";
        if !s.chars().any(|c| sup.contains(c)) {
            return (s.parse().expect(label), 0);
        }
        let cut = s.find(|c| sup.contains(c)).expect(label);
        let (m, e) = s.split_at(cut);
        let m = m.strip_suffix("10").expect(label);
        let digits: String = e
            .chars()
            .map(|c| match c {
                '⁻' => '-',
                '⁰'..='⁹' | '¹' | '²' | '³' => {
                    let i = sup.chars().position(|d| d == c).expect(label);
                    char::from(b'0' + i as u8)
                }
                other => panic!("unexpected '{other}' in label {label}"),
            })
            .collect();
        let e: i32 = digits.parse().expect(label);
        let m = match m.trim_end_matches('×') {
            "" => 1.0,
            "-" => -1.0,
            m => m.parse().expect(label),
        };
        (m, e)
    }

    /// Checks the stated properties of an axis built over `[lo, hi]` (axis
    /// units): finite ticks inside the range, a bounded count, and labels that
    /// are numbers (no "inf", no "NaN") naming their own tick.
    fn check_axis(lo: f64, hi: f64, log: bool, target: usize) -> Result<(), String> {
        let a = Axis::numeric(lo, hi, log, target);
        let span = hi - lo;
        if a.major.is_empty() || a.major.len() > 4 * target.max(2) + 4 {
            return Err(format!("{} major ticks for target {target}", a.major.len()));
        }
        let gap = a
            .major
            .windows(2)
            .map(|w| w[1] - w[0])
            .fold(f64::INFINITY, f64::min);
        for w in a.major.windows(2) {
            if w[1].partial_cmp(&w[0]) != Some(std::cmp::Ordering::Greater) {
                return Err(format!("ticks not increasing: {:?}", a.major));
            }
        }
        for (&t, all) in a.major.iter().zip(std::iter::repeat(&a.major)) {
            if !t.is_finite() || t < lo - 1e-6 * span.max(f64::MIN_POSITIVE) || t > hi + 1e-6 * span
            {
                return Err(format!("tick {t:e} outside {lo:e}..{hi:e}: {all:?}"));
            }
            let label = a.label(t);
            let lower = label.to_lowercase();
            if label.is_empty() || lower.contains("inf") || lower.contains("nan") {
                return Err(format!("tick {t:e} has label '{label}'"));
            }
            let (m, e) = parse_label(&label);
            if log {
                // compare log10 of the label with the tick
                let l = m.abs().log10() + e as f64;
                let tol = if gap.is_finite() { 0.45 * gap } else { 0.01 };
                if m <= 0.0 || (l - t).abs() > tol.max(0.003) {
                    return Err(format!("log tick {t} labelled '{label}'"));
                }
            } else {
                let ts = scaled_by_power(t, e);
                let g = if gap.is_finite() {
                    scaled_by_power(gap, e)
                } else {
                    0.0
                };
                let tol = (0.45 * g).max(0.006 * ts.abs()).max(1e-9);
                if (m - ts).abs() > tol {
                    return Err(format!("tick {t:e} labelled '{label}' (read {m}e{e})"));
                }
            }
        }
        Ok(())
    }

    /// A number m·10^e over the whole range of f64 magnitudes, either sign.
    fn any_magnitude() -> impl Strategy<Value = f64> {
        (1.0f64..10.0, -322i32..307, proptest::bool::ANY)
            .prop_map(|(m, e, neg)| {
                let v = m * 10f64.powi(e / 2) * 10f64.powi(e - e / 2);
                if neg { -v } else { v }
            })
            .prop_filter("finite", |v| v.is_finite())
    }

    use proptest::prelude::*;

    proptest! {
        #![proptest_config(ProptestConfig { cases: 2000, ..ProptestConfig::default() })]

        /// Linear axes over any finite range, also equal ends and spans that
        /// reach across the whole f64 range: no inf/NaN text.
        #[test]
        fn linear_axis_labels_are_numbers(a in any_magnitude(), b in any_magnitude(),
                                          target in 2usize..12) {
            let (lo, hi) = (a.min(b), a.max(b));
            if (hi - lo).is_finite() {
                let (plo, phi) = padded(lo, hi, false, 0.05);
                if (phi - plo).is_finite() {
                    prop_assert_eq!(check_axis(plo, phi, false, target), Ok(()));
                }
                // the raw range too, including lo == hi
                let rel = (hi - lo) / lo.abs().max(hi.abs());
                if lo == hi || rel > 1e-9 {
                    prop_assert_eq!(check_axis(lo, hi, false, target), Ok(()));
                }
            }
        }

        /// Logarithmic axes from 1e-323 to 1e308 (in decades), also a single
        /// value and spans of a few percent.
        #[test]
        fn log_axis_labels_are_numbers(a in -323.0f64..308.0, w in prop_oneof![
                Just(0.0), 0.0f64..0.05, 0.0f64..2.0, 0.0f64..700.0],
                target in 2usize..12) {
            let (lo, hi) = (a, (a + w).min(308.2));
            let (plo, phi) = padded(lo, hi, true, 0.05);
            prop_assert_eq!(check_axis(plo, phi, true, target), Ok(()));
            if hi > lo {
                prop_assert_eq!(check_axis(lo, hi, true, target), Ok(()));
            }
        }
    }

    /// A log axis over a relative span of 5e−8 near 10¹⁶³, which proptest
    /// found: its linear ticks' step, 1e−8 of the mantissa, needs 8 decimals.
    #[test]
    fn a_narrow_log_axis_gets_the_decimals_its_step_needs() {
        let (lo, hi) = (
            162.985_919_917_500_13,
            162.985_919_917_500_13 + 2.339_407_654_312_050_2e-8,
        );
        let (plo, phi) = padded(lo, hi, true, 0.05);
        assert_eq!(check_axis(plo, phi, true, 2), Ok(()));
        assert_eq!(check_axis(lo, hi, true, 2), Ok(()));
    }

    /// The ranges reported in issue 15 and 16, named.
    #[test]
    fn extreme_ranges_reported_by_users() {
        // |p| down to 1e-315 on a log axis: "inf×10⁻³¹⁵" was drawn
        for (lo, hi) in [(1e-320f64, 1e-300f64), (1e-315, 1e-3), (1e6, 1e12)] {
            check_axis(lo.log10(), hi.log10(), true, 8).unwrap();
        }
        check_axis(1e-320, 1e-300, false, 8).unwrap();
        check_axis(1e6, 1e12, false, 8).unwrap();
        check_axis(5.0, 5.0, false, 8).unwrap();
        check_axis(-1e300, 1e300, false, 8).unwrap();
        let a = Axis::numeric(-320.0, -300.0, true, 8);
        let labels: Vec<String> = a.major.iter().map(|&t| a.label(t)).collect();
        assert_eq!(labels, ["10⁻³²⁰", "10⁻³¹⁵", "10⁻³¹⁰", "10⁻³⁰⁵", "10⁻³⁰⁰"]);
        assert_eq!(fmt_auto(1e-315), "10⁻³¹⁵");
        assert_eq!(fmt_auto(-2.5e-320), "−2.5×10⁻³²⁰");
        assert_eq!(fmt_sci(3e-316, -316, 0), "3×10⁻³¹⁶");
    }
}
