//! Input checks shared by the chart kinds: finite values, values on log axes,
//! fixed ranges, data extents and the names used in error messages.

use super::PlotError;

/// Checks an explicitly given axis range.
pub(super) fn checked_range(
    range: Option<(f64, f64)>,
    log: bool,
    axis: &'static str,
) -> Result<Option<(f64, f64)>, PlotError> {
    let Some((a, b)) = range else {
        return Ok(None);
    };
    if !a.is_finite() || !b.is_finite() {
        return Err(PlotError::InvalidData(format!(
            "the fixed {axis} range must consist of finite numbers"
        )));
    }
    if a >= b {
        return Err(PlotError::InvalidData(format!(
            "the fixed {axis} range must have its low end below its high end \
             (got {a} to {b})"
        )));
    }
    if log && a <= 0.0 {
        return Err(PlotError::InvalidData(format!(
            "the fixed {axis} range of a logarithmic axis must be above zero (got {a} to {b})"
        )));
    }
    Ok(Some(if log { (a.log10(), b.log10()) } else { (a, b) }))
}

/// Rejects axis ranges that overflowed (data near the largest `f64`).
pub(super) fn finite_range(r: (f64, f64), what: &str) -> Result<(f64, f64), PlotError> {
    if r.0.is_finite() && r.1.is_finite() && (r.1 - r.0).is_finite() && r.1 > r.0 {
        Ok(r)
    } else {
        Err(PlotError::InvalidData(format!(
            "the {what} values are too large in magnitude to be plotted"
        )))
    }
}

/// Tracks the minimum and maximum of a set of values.
#[derive(Debug, Clone, Copy)]
pub(super) struct Extent(pub(super) Option<(f64, f64)>);

impl Extent {
    pub(super) fn add(&mut self, v: f64) {
        if v.is_finite() {
            self.0 = Some(match self.0 {
                None => (v, v),
                Some((a, b)) => (a.min(v), b.max(v)),
            });
        }
    }
    pub(super) fn merge(&mut self, other: Extent) {
        if let Some((a, b)) = other.0 {
            self.add(a);
            self.add(b);
        }
    }
}

pub(super) fn check_finite(
    v: f64,
    series: &str,
    index: usize,
    what: &'static str,
) -> Result<(), PlotError> {
    if v.is_finite() {
        Ok(())
    } else {
        Err(PlotError::NonFinite {
            series: series.to_string(),
            index,
            what,
        })
    }
}

pub(super) fn check_log(
    v: f64,
    log: bool,
    series: &str,
    index: usize,
    axis: &'static str,
) -> Result<(), PlotError> {
    if log && v <= 0.0 {
        Err(PlotError::NonPositiveOnLogAxis {
            series: series.to_string(),
            index,
            axis,
            value: v,
        })
    } else {
        Ok(())
    }
}

pub(super) fn display_name(name: &str, index: usize) -> String {
    if name.is_empty() {
        format!("#{} (unnamed)", index + 1)
    } else {
        name.to_string()
    }
}
