//! Grouped bar chart: validation and drawing.

use plotters::coord::Shift;
use plotters::drawing::DrawingArea;
use plotters::element::{PathElement, Rectangle};
use plotters::prelude::DrawingBackend;
use plotters::style::{Color, RGBColor};

use super::axis::Axis;
use super::check::{Extent, check_finite, display_name, finite_range};
use super::frame::{
    AXIS, Frame, Layout, MARGIN, Swatch, TICK_PX, TITLE_PX, build_chart, draw_legend, draw_mesh,
    legend_width, palette, text_width, with_title, x_area_height, y_area_width,
};
use super::render::{Figure, be, check_size};
use super::{BAR_DYNAMIC_RANGE_DB, BarChart, PlotError};

pub(super) struct BarFigure<'a> {
    chart: &'a BarChart,
    /// y range in axis units
    y_range: (f64, f64),
    scale: Scale,
}

/// Ink of the uncertainty bands over bars (near black, so they read over
/// any bar colour).
const BAND_INK: RGBColor = RGBColor(30, 30, 30);

/// How values map to the value axis.
#[derive(Clone, Copy)]
enum Scale {
    Linear,
    /// log10 of the value
    Log,
    /// 20·log10(v / reference)
    Decibel(f64),
}

impl Scale {
    /// The value in axis units, or `None` for a value that has no bar.
    fn axis(self, v: f64) -> Option<f64> {
        match self {
            Scale::Linear => Some(v),
            Scale::Log => (v > 0.0).then(|| v.log10()),
            Scale::Decibel(r) => (v > 0.0).then(|| 20.0 * (v / r).log10()),
        }
        .filter(|u| u.is_finite())
    }
}

impl<'a> BarFigure<'a> {
    pub(super) fn new(chart: &'a BarChart) -> Result<Self, PlotError> {
        check_size(chart.size, "picture")?;
        if chart.categories.is_empty() {
            return Err(PlotError::NoData("the bar chart has no categories".into()));
        }
        if chart.series.is_empty() {
            return Err(PlotError::NoData("the bar chart has no series".into()));
        }
        let scale = match chart.db_ref {
            Some(r) if r.is_finite() && r > 0.0 => Scale::Decibel(r),
            Some(r) => {
                return Err(PlotError::InvalidData(format!(
                    "the decibel reference must be a positive finite number (got {r})"
                )));
            }
            None if chart.log_y => Scale::Log,
            None => Scale::Linear,
        };
        let mut ext = Extent(None);
        for (si, s) in chart.series.iter().enumerate() {
            let name = display_name(&s.name, si);
            if s.values.len() != chart.categories.len() {
                return Err(PlotError::InvalidData(format!(
                    "series '{name}' has {} values but there are {} categories",
                    s.values.len(),
                    chart.categories.len()
                )));
            }
            for (i, &v) in s.values.iter().enumerate() {
                check_finite(v, &name, i, "value")?;
                if let Some(u) = scale.axis(v) {
                    ext.add(u);
                }
            }
            if let Some(bands) = &s.bands {
                if bands.len() != s.values.len() {
                    return Err(PlotError::InvalidData(format!(
                        "series '{name}' has {} values but {} bands",
                        s.values.len(),
                        bands.len()
                    )));
                }
                for (i, &(lo, hi)) in bands.iter().enumerate() {
                    check_finite(lo, &name, i, "band low end")?;
                    check_finite(hi, &name, i, "band high end")?;
                    if lo > hi {
                        return Err(PlotError::InvalidData(format!(
                            "band {i} of series '{name}' has its low end {lo} above its high end {hi}"
                        )));
                    }
                    if let Some(u) = scale.axis(hi) {
                        ext.add(u);
                    }
                }
            }
        }
        let y_range = match scale {
            Scale::Linear => {
                let (a, b) = ext.0.unwrap_or((0.0, 0.0));
                let (a, b) = (a.min(0.0), b.max(0.0));
                if a == b {
                    (0.0, 1.0)
                } else {
                    let pad = 0.06 * (b - a);
                    (
                        if a < 0.0 { a - pad } else { a },
                        if b > 0.0 { b + pad } else { b },
                    )
                }
            }
            Scale::Log | Scale::Decibel(_) => {
                let Some((a, b)) = ext.0 else {
                    return Err(PlotError::NoData(
                        "no value is above zero, so nothing can be shown on a logarithmic \
                         or decibel axis"
                            .into(),
                    ));
                };
                // axis units per decibel
                let per_db = if matches!(scale, Scale::Log) {
                    0.05
                } else {
                    1.0
                };
                let a = a.max(b - BAR_DYNAMIC_RANGE_DB * per_db);
                if b - a < 1e-9 {
                    (a - 20.0 * per_db, b + 6.0 * per_db)
                } else {
                    (a - 0.1 * (b - a).max(20.0 * per_db), b + 0.06 * (b - a))
                }
            }
        };
        let y_range = finite_range(y_range, "y")?;
        Ok(BarFigure {
            chart,
            y_range,
            scale,
        })
    }
}

impl Figure for BarFigure<'_> {
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Result<(), PlotError> {
        let c = self.chart;
        let area = with_title(root, &c.title, TITLE_PX)?;
        let (w, h) = area.dim_in_pixel();
        let names: Vec<String> = c.series.iter().map(|s| s.name.clone()).collect();
        let legend_w = legend_width(root, &names)?;
        let x_area = x_area_height(true, !c.x_label.is_empty());
        let est_h = h.saturating_sub(MARGIN * 2 + x_area).max(50);
        let y = Axis::numeric(
            self.y_range.0,
            self.y_range.1,
            matches!(self.scale, Scale::Log),
            (est_h / 55) as usize,
        );
        let y_area = y_area_width(root, &y, &c.y_label)?;
        let est_w = w.saturating_sub(MARGIN * 2 + y_area + legend_w).max(50);
        // category labels: keep at least the widest label plus a gap per label
        let mut label_w = 0;
        for n in &c.categories {
            label_w = label_w.max(text_width(root, n, TICK_PX)?);
        }
        let max_labels = (est_w / (label_w + 10).max(1)).max(1) as usize;
        let x = Axis::categories(&c.categories, max_labels);
        let layout = Layout {
            top: MARGIN,
            right: if legend_w == 0 {
                2 * MARGIN
            } else {
                MARGIN + legend_w
            },
            x_area,
            y_area,
        };
        let mut chart = build_chart(&area, &x, &y, layout)?;
        draw_mesh(&mut chart, &c.x_label, &c.y_label, false, true)?;
        let frame = Frame::new(&x, &y, chart.plotting_area().get_pixel_range());

        let ns = c.series.len() as f64;
        let group = 0.8;
        let bar_w = group / ns;
        let linear = matches!(self.scale, Scale::Linear);
        let base = if linear {
            0.0f64.clamp(y.lo, y.hi)
        } else {
            y.lo
        };
        let py_base = frame.px_y(base);
        for (si, s) in c.series.iter().enumerate() {
            let color = palette(si);
            for (ci, &v) in s.values.iter().enumerate() {
                let Some(u) = self.scale.axis(v) else {
                    continue;
                };
                let u0 = ci as f64 + (1.0 - group) / 2.0 + si as f64 * bar_w;
                let x0 = frame.px_x(u0);
                let x1 = frame.px_x(u0 + bar_w).max(x0 + 1);
                let yv = y.frac(u).clamp(0.0, 1.0);
                let py = frame.px((0.0, yv)).1;
                if py == py_base {
                    continue;
                }
                root.draw(&Rectangle::new(
                    [(x0, py.min(py_base)), (x1, py.max(py_base))],
                    color.filled(),
                ))
                .map_err(be)?;
            }
        }
        // bands over the bars: a shaded box from the low to the high end
        // across the middle half of the bar, with a whisker line
        for (si, s) in c.series.iter().enumerate() {
            let Some(bands) = &s.bands else { continue };
            for (ci, &(lo, hi)) in bands.iter().enumerate() {
                let Some(u_hi) = self.scale.axis(hi) else {
                    continue;
                };
                let u_lo = self.scale.axis(lo).unwrap_or(y.lo);
                let u0 = ci as f64 + (1.0 - group) / 2.0 + si as f64 * bar_w;
                let (xa, xb) = (frame.px_x(u0 + 0.25 * bar_w), frame.px_x(u0 + 0.75 * bar_w));
                let xm = frame.px_x(u0 + 0.5 * bar_w);
                let py_hi = frame.px((0.0, y.frac(u_hi).clamp(0.0, 1.0))).1;
                let py_lo = frame.px((0.0, y.frac(u_lo).clamp(0.0, 1.0))).1;
                root.draw(&Rectangle::new(
                    [(xa, py_hi), (xb.max(xa + 1), py_lo)],
                    BAND_INK.mix(0.35).filled(),
                ))
                .map_err(be)?;
                for py in [py_hi, py_lo] {
                    root.draw(&PathElement::new(
                        vec![(xa, py), (xb, py)],
                        BAND_INK.stroke_width(1),
                    ))
                    .map_err(be)?;
                }
                root.draw(&PathElement::new(
                    vec![(xm, py_hi), (xm, py_lo)],
                    BAND_INK.stroke_width(1),
                ))
                .map_err(be)?;
            }
        }
        if linear && y.lo < 0.0 && y.hi > 0.0 {
            root.draw(&PathElement::new(
                vec![(frame.left_px(), py_base), (frame.right_px(), py_base)],
                AXIS.stroke_width(1),
            ))
            .map_err(be)?;
        }
        let entries: Vec<(String, RGBColor, Swatch)> = c
            .series
            .iter()
            .enumerate()
            .map(|(i, s)| (s.name.clone(), palette(i), Swatch::Bar))
            .collect();
        draw_legend(root, &frame, &entries, legend_w)
    }
}
