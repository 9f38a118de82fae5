//! Line charts, single and stacked: validation and drawing of the panels.

use plotters::coord::Shift;
use plotters::drawing::DrawingArea;
use plotters::element::{Circle, PathElement, Polygon, Rectangle};
use plotters::prelude::DrawingBackend;
use plotters::style::{Color, RGBColor};

use super::axis::{Axis, padded};
use super::check::{Extent, check_finite, check_log, checked_range, display_name, finite_range};
use super::frame::{
    BACKGROUND, BAND_TINTS, Frame, Layout, MARGIN, MARKER, NOTE_PX, Occupied, PANEL_TITLE_PX,
    POINT_MARKER, Swatch, TITLE_PX, box_size, boxed_text, build_chart, dashed_line, draw_legend,
    draw_mesh, legend_width, palette, with_title, x_area_height, y_area_width,
};
use super::render::{Figure, be, check_size};
use super::{LineChart, MAX_DIMENSION, Marker, PlotError, SeriesStyle};

/// One validated line chart panel.
struct Panel<'a> {
    chart: &'a LineChart,
    /// y range in axis units
    y_range: (f64, f64),
}

/// One or more line chart panels sharing an x axis.
pub(super) struct StackFigure<'a> {
    panels: Vec<Panel<'a>>,
    /// shared x range in axis units
    x_range: (f64, f64),
    log_x: bool,
    x_desc: &'a str,
    pub(super) size: (u32, u32),
}

/// Checks one line chart and returns the extents of its data (axis units).
fn validate_line_chart(c: &LineChart) -> Result<(Extent, Extent), PlotError> {
    let mut xe = Extent(None);
    let mut ye = Extent(None);
    let mut any_point = false;
    for (si, s) in c.series.iter().enumerate() {
        let name = display_name(&s.name, si);
        for (i, &(x, y)) in s.points.iter().enumerate() {
            check_finite(x, &name, i, "x value")?;
            check_finite(y, &name, i, "y value")?;
            check_log(x, c.log_x, &name, i, "x")?;
            check_log(y, c.log_y, &name, i, "y")?;
            xe.add(if c.log_x { x.log10() } else { x });
            ye.add(if c.log_y { y.log10() } else { y });
            any_point = true;
        }
        if let Some(bars) = &s.error_bars {
            if bars.len() != s.points.len() {
                return Err(PlotError::InvalidData(format!(
                    "series '{name}' has {} points but {} error bars",
                    s.points.len(),
                    bars.len()
                )));
            }
            for (i, &(lo, hi)) in bars.iter().enumerate() {
                check_finite(lo, &name, i, "error bar low end")?;
                check_finite(hi, &name, i, "error bar high end")?;
                let lo = c.y_floor.map_or(lo, |f| lo.max(f));
                if lo > hi {
                    return Err(PlotError::InvalidData(format!(
                        "error bar {i} of series '{name}' has its low end {lo} above its \
                         high end {hi}"
                    )));
                }
                check_log(hi, c.log_y, &name, i, "y")?;
                if c.log_y {
                    if lo > 0.0 {
                        ye.add(lo.log10());
                    }
                    ye.add(hi.log10());
                } else {
                    ye.add(lo);
                    ye.add(hi);
                }
            }
        }
    }
    for (si, s) in c.series.iter().enumerate() {
        let Some(band) = &s.band else { continue };
        let name = display_name(&s.name, si);
        if band.len() != s.points.len() {
            return Err(PlotError::InvalidData(format!(
                "series '{name}' has {} points but a band of {}",
                s.points.len(),
                band.len()
            )));
        }
        for (i, &(lo, hi)) in band.iter().enumerate() {
            check_finite(lo, &name, i, "band low end")?;
            check_finite(hi, &name, i, "band high end")?;
            if lo > hi {
                return Err(PlotError::InvalidData(format!(
                    "band {i} of series '{name}' has its low end {lo} above its high end {hi}"
                )));
            }
            check_log(hi, c.log_y, &name, i, "y")?;
            let lo = c.y_floor.map_or(lo, |f| lo.max(f));
            if c.log_y {
                if lo > 0.0 {
                    ye.add(lo.log10());
                }
                ye.add(hi.log10());
            } else {
                ye.add(lo);
                ye.add(hi);
            }
        }
    }
    if let Some(f) = c.y_floor {
        check_finite(f, "y floor", 0, "value")?;
        for (si, s) in c.series.iter().enumerate() {
            if let Some((i, &(_, y))) = s.points.iter().enumerate().find(|(_, p)| p.1 < f) {
                return Err(PlotError::InvalidData(format!(
                    "point {i} of series '{}' has y = {y}, below the chart's floor {f}",
                    display_name(&s.name, si)
                )));
            }
        }
    }
    if !any_point {
        return Err(PlotError::NoData(if c.series.is_empty() {
            "the line chart has no series".into()
        } else {
            "no series of the line chart has any points".into()
        }));
    }
    for (i, m) in c.x_markers.iter().enumerate() {
        let name = format!("x marker '{}'", m.label);
        check_finite(m.value, &name, i, "position")?;
        check_log(m.value, c.log_x, &name, i, "x")?;
    }
    for (i, m) in c.y_markers.iter().enumerate() {
        let name = format!("y marker '{}'", m.label);
        check_finite(m.value, &name, i, "position")?;
        check_log(m.value, c.log_y, &name, i, "y")?;
    }
    for (i, p) in c.point_markers.iter().enumerate() {
        let name = format!("point marker '{}'", p.label);
        check_finite(p.x, &name, i, "x value")?;
        check_finite(p.y, &name, i, "y value")?;
        check_log(p.x, c.log_x, &name, i, "x")?;
        check_log(p.y, c.log_y, &name, i, "y")?;
        xe.add(if c.log_x { p.x.log10() } else { p.x });
        ye.add(if c.log_y { p.y.log10() } else { p.y });
    }
    for (i, b) in c.x_bands.iter().enumerate() {
        let name = format!("band '{}'", b.label);
        check_finite(b.from, &name, i, "start")?;
        check_finite(b.to, &name, i, "end")?;
    }
    for (si, s) in c.series.iter().enumerate() {
        if s.points.is_empty() && s.band.as_ref().is_some_and(|b| !b.is_empty()) {
            return Err(PlotError::InvalidData(format!(
                "series '{}' has a band but no points",
                display_name(&s.name, si)
            )));
        }
        if s.points.is_empty() && s.error_bars.as_ref().is_some_and(|b| !b.is_empty()) {
            return Err(PlotError::InvalidData(format!(
                "series '{}' has error bars but no points",
                display_name(&s.name, si)
            )));
        }
    }
    Ok((xe, ye))
}

impl<'a> StackFigure<'a> {
    pub(super) fn new(charts: &'a [LineChart]) -> Result<Self, PlotError> {
        if charts.is_empty() {
            return Err(PlotError::NoData("no chart panels were given".into()));
        }
        let log_x = charts[0].log_x;
        if charts.iter().any(|c| c.log_x != log_x) {
            return Err(PlotError::InvalidData(
                "stacked charts share their x axis, so all must have the same log_x setting".into(),
            ));
        }
        let mut width = 0;
        let mut height = 0u32;
        let mut x_ext = Extent(None);
        let mut fixed_x = None;
        let mut panels = Vec::with_capacity(charts.len());
        for c in charts {
            check_size(c.size, "panel")?;
            width = u32::max(width, c.size.0);
            height = height.saturating_add(c.size.1);
            let (xe, ye) = validate_line_chart(c)?;
            x_ext.merge(xe);
            if fixed_x.is_none() {
                fixed_x = checked_range(c.x_range, c.log_x, "x")?;
            } else {
                checked_range(c.x_range, c.log_x, "x")?;
            }
            let y_range = match checked_range(c.y_range, c.log_y, "y")? {
                Some(r) => r,
                None => {
                    let (a, b) = ye.0.unwrap_or((0.0, 1.0));
                    let (lo, hi) = padded(a, b, c.log_y, 0.05);
                    // the padding does not reach below the floor
                    match c.y_floor {
                        Some(f) if !c.log_y && lo < f && f < hi => (f, hi),
                        Some(f) if c.log_y && f > 0.0 && lo < f.log10() && f.log10() < hi => {
                            (f.log10(), hi)
                        }
                        _ => (lo, hi),
                    }
                }
            };
            let y_range = finite_range(y_range, "y")?;
            panels.push(Panel { chart: c, y_range });
        }
        if height > MAX_DIMENSION {
            return Err(PlotError::InvalidData(format!(
                "the stacked panels are {height} px high together, more than \
                 {MAX_DIMENSION} px"
            )));
        }
        let x_range = match fixed_x {
            Some(r) => r,
            None => {
                let (a, b) = x_ext.0.unwrap_or((0.0, 1.0));
                // dots and error bars at the ends stay whole
                let dots = charts.iter().flat_map(|c| &c.series).any(|s| {
                    s.error_bars.is_some()
                        || matches!(s.style, SeriesStyle::Points | SeriesStyle::LineAndPoints)
                });
                padded(a, b, log_x, if dots { 0.03 } else { 0.0 })
            }
        };
        let x_range = finite_range(x_range, "x")?;
        let x_desc = charts
            .iter()
            .rev()
            .map(|c| c.x_label.as_str())
            .find(|s| !s.is_empty())
            .unwrap_or("");
        Ok(StackFigure {
            panels,
            x_range,
            log_x,
            x_desc,
            size: (width, height),
        })
    }
}

impl Figure for StackFigure<'_> {
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Result<(), PlotError> {
        let n = self.panels.len();
        let single = n == 1;
        // Split the picture into panel areas.
        let mut areas = Vec::with_capacity(n);
        let mut rest = root.clone();
        for (i, p) in self.panels.iter().enumerate() {
            if i + 1 == n {
                areas.push(rest.clone());
            } else {
                let (a, b) = rest.split_vertically(p.chart.size.1);
                areas.push(a);
                rest = b;
            }
        }
        // Common geometry so that all plot areas line up.
        let mut legend_w = 0;
        for p in &self.panels {
            let names: Vec<String> = p.chart.series.iter().map(|s| s.name.clone()).collect();
            legend_w = legend_w.max(legend_width(root, &names)?);
        }
        let title_px = if single { TITLE_PX } else { PANEL_TITLE_PX };
        let mut y_axes = Vec::with_capacity(n);
        let mut y_area = 0;
        for (i, p) in self.panels.iter().enumerate() {
            let c = p.chart;
            let (_, h) = areas[i].dim_in_pixel();
            let title_h = if c.title.is_empty() {
                0
            } else {
                (title_px * 1.8) as u32
            };
            let x_area = x_area_height(i + 1 == n, !self.x_desc.is_empty());
            let est_h = h.saturating_sub(title_h + x_area + 2 * MARGIN).max(40);
            let y = Axis::numeric(p.y_range.0, p.y_range.1, c.log_y, (est_h / 50) as usize);
            y_area = y_area.max(y_area_width(root, &y, &c.y_label)?);
            y_axes.push(y);
        }
        let (w, _) = root.dim_in_pixel();
        let est_w = w.saturating_sub(y_area + legend_w + 2 * MARGIN).max(50);
        let x_target = (est_w / 80).max(2) as usize;
        let x_shown = Axis::numeric(self.x_range.0, self.x_range.1, self.log_x, x_target);
        for (i, p) in self.panels.iter().enumerate() {
            let bottom = i + 1 == n;
            let mut x = x_shown.clone();
            x.hide_labels = !bottom;
            let area = with_title(&areas[i], &p.chart.title, title_px)?;
            let layout = Layout {
                top: MARGIN,
                right: if legend_w == 0 {
                    2 * MARGIN
                } else {
                    MARGIN + legend_w
                },
                x_area: x_area_height(bottom, !self.x_desc.is_empty()),
                y_area,
            };
            let x_desc = if bottom { self.x_desc } else { "" };
            draw_line_panel(
                root, &area, p.chart, &x, &y_axes[i], layout, x_desc, legend_w,
            )?;
        }
        Ok(())
    }
}

/// Row, left pixel and width of an x-marker label above the plot.
type LabelSlot = (usize, i32, i32);

/// Assigns each x-marker label a row above the plot so that labels in one row do
/// not overlap. Returns (row, left x, width) per marker, `None` for markers
/// outside the x range.
fn marker_rows<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    frame: &Frame,
    markers: &[Marker],
) -> Result<Vec<Option<LabelSlot>>, PlotError> {
    let mut rows: Vec<Vec<(i32, i32)>> = Vec::new();
    let mut out = Vec::with_capacity(markers.len());
    let (root_w, _) = root.dim_in_pixel();
    for m in markers {
        let u = frame.x.unit(m.value);
        let f = frame.x.frac(u);
        if !(0.0..=1.0).contains(&f) || m.label.is_empty() {
            out.push(None);
            continue;
        }
        let px = frame.px_x(u);
        let (bw, _) = box_size(root, &m.label, NOTE_PX)?;
        let left = (px - bw / 2).clamp(2, (root_w as i32 - bw - 2).max(2));
        let span = (left - 3, left + bw + 3);
        let row = rows
            .iter()
            .position(|r| r.iter().all(|&(a, b)| span.1 <= a || b <= span.0))
            .unwrap_or_else(|| {
                rows.push(Vec::new());
                rows.len() - 1
            });
        rows[row].push(span);
        out.push(Some((row, left, bw)));
    }
    Ok(out)
}

#[allow(clippy::too_many_arguments)]
fn draw_line_panel<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    area: &DrawingArea<DB, Shift>,
    c: &LineChart,
    x: &Axis,
    y: &Axis,
    layout: Layout,
    x_desc: &str,
    legend_w: u32,
) -> Result<(), PlotError> {
    // First pass: find the x geometry (independent of the top margin) to lay out
    // the marker labels above the plot, then reserve room for them.
    let row_h = (NOTE_PX + 7.0) as i32;
    let probe = build_chart(area, x, y, layout)?;
    let probe_frame = Frame::new(x, y, probe.plotting_area().get_pixel_range());
    drop(probe);
    let rows = marker_rows(root, &probe_frame, &c.x_markers)?;
    let n_rows = rows.iter().flatten().map(|r| r.0 + 1).max().unwrap_or(0);
    let layout = Layout {
        top: layout.top + n_rows as u32 * row_h as u32,
        ..layout
    };
    let mut chart = build_chart(area, x, y, layout)?;
    draw_mesh(&mut chart, x_desc, &c.y_label, true, true)?;
    let frame = Frame::new(x, y, chart.plotting_area().get_pixel_range());

    // Bands behind everything else.
    let mut occupied = Occupied::default();
    for (i, b) in c.x_bands.iter().enumerate() {
        let (a, z) = (b.from.min(b.to), b.from.max(b.to));
        let fa = x.frac(x.unit_or_below(a)).clamp(0.0, 1.0);
        let fz = x.frac(x.unit_or_below(z)).clamp(0.0, 1.0);
        if fz <= fa {
            continue;
        }
        let (x0, _) = frame.px((fa, 0.0));
        let (x1, _) = frame.px((fz, 0.0));
        let tint = BAND_TINTS[i % BAND_TINTS.len()];
        root.draw(&Rectangle::new(
            [(x0, frame.top_px()), (x1, frame.bottom_px())],
            tint.mix(0.16).filled(),
        ))
        .map_err(be)?;
        if !b.label.is_empty() {
            let (bw, bh) = box_size(root, &b.label, NOTE_PX)?;
            let lx = ((x0 + x1) / 2 - bw / 2).clamp(
                frame.left_px() + 2,
                (frame.right_px() - bw - 2).max(frame.left_px()),
            );
            let ly = frame.bottom_px() - bh - 4;
            boxed_text(root, &b.label, NOTE_PX, (lx, ly), (bw, bh))?;
            occupied.add((lx, ly, lx + bw, ly + bh));
        }
    }

    // Bands around curves, behind the curves: a polygon along the high ends
    // and back along the low ends, clamped to the plot.
    for (si, s) in c.series.iter().enumerate() {
        let Some(band) = &s.band else { continue };
        if band.len() < 2 {
            continue;
        }
        let color = s
            .color
            .map(|[r, g, b]| RGBColor(r, g, b))
            .unwrap_or_else(|| palette(si));
        let clamp = |n: (f64, f64)| frame.px((n.0.clamp(0.0, 1.0), n.1.clamp(0.0, 1.0)));
        let mut outline: Vec<(i32, i32)> = s
            .points
            .iter()
            .zip(band)
            .map(|(&(px, _), &(_, hi))| clamp(frame.norm(x.unit(px), y.unit_or_below(hi))))
            .collect();
        outline.extend(s.points.iter().zip(band).rev().map(|(&(px, _), &(lo, _))| {
            let lo = c.y_floor.map_or(lo, |f| lo.max(f));
            clamp(frame.norm(x.unit(px), y.unit_or_below(lo)))
        }));
        root.draw(&Polygon::new(outline, color.mix(0.22).filled()))
            .map_err(be)?;
    }

    // Series.
    let mut entries = Vec::new();
    for (si, s) in c.series.iter().enumerate() {
        let color = s
            .color
            .map(|[r, g, b]| RGBColor(r, g, b))
            .unwrap_or_else(|| palette(si));
        entries.push((s.name.clone(), color, Swatch::Line(s.style)));
        let norm: Vec<(f64, f64)> = s
            .points
            .iter()
            .map(|&(px, py)| frame.norm(x.unit(px), y.unit(py)))
            .collect();
        let line_style = color.stroke_width(2);
        match s.style {
            SeriesStyle::Line | SeriesStyle::LineAndPoints => {
                for piece in frame.clip(&norm) {
                    for w in piece.windows(2) {
                        occupied.add_segment(w[0], w[1]);
                    }
                    if piece.len() > 1 {
                        root.draw(&PathElement::new(piece, line_style))
                            .map_err(be)?;
                    }
                }
            }
            SeriesStyle::Dashed => {
                for piece in frame.clip(&norm) {
                    for w in piece.windows(2) {
                        occupied.add_segment(w[0], w[1]);
                        dashed_line(root, w[0], w[1], line_style, 8.0, 5.0)?;
                    }
                }
            }
            SeriesStyle::Points => {}
        }
        if let Some(bars) = &s.error_bars {
            for (&(px, _), &(lo, hi)) in s.points.iter().zip(bars) {
                let u = x.unit(px);
                let cut = c.y_floor.is_some_and(|f| lo < f);
                let lo = c.y_floor.map_or(lo, |f| lo.max(f));
                let a = frame.norm(u, y.unit_or_below(lo));
                let b = frame.norm(u, y.unit_or_below(hi));
                for piece in frame.clip(&[a, b]) {
                    if piece.len() > 1 {
                        root.draw(&PathElement::new(piece.clone(), color.stroke_width(1)))
                            .map_err(be)?;
                    }
                }
                for (end, n, capped) in [(a, a.1, !cut), (b, b.1, true)] {
                    if capped && (0.0..=1.0).contains(&end.0) && (0.0..=1.0).contains(&n) {
                        let p = frame.px(end);
                        root.draw(&PathElement::new(
                            vec![(p.0 - 4, p.1), (p.0 + 4, p.1)],
                            color.stroke_width(1),
                        ))
                        .map_err(be)?;
                    }
                }
            }
        }
        if matches!(s.style, SeriesStyle::Points | SeriesStyle::LineAndPoints) {
            for &n in &norm {
                if (0.0..=1.0).contains(&n.0) && (0.0..=1.0).contains(&n.1) {
                    let (cx, cy) = frame.px(n);
                    root.draw(&Circle::new((cx, cy), 3, color.filled()))
                        .map_err(be)?;
                    occupied.add((cx - 3, cy - 3, cx + 3, cy + 3));
                }
            }
        }
    }

    // Horizontal markers, labelled at the right end above the line.
    for m in &c.y_markers {
        let f = y.frac(y.unit(m.value));
        if !(0.0..=1.0).contains(&f) {
            continue;
        }
        let py = frame.px((0.0, f)).1;
        dashed_line(
            root,
            (frame.left_px(), py),
            (frame.right_px(), py),
            MARKER.stroke_width(1),
            6.0,
            4.0,
        )?;
        if !m.label.is_empty() {
            let (bw, bh) = box_size(root, &m.label, NOTE_PX)?;
            let lx = frame.right_px() - bw - 4;
            let ly = if py - bh - 2 >= frame.top_px() {
                py - bh - 2
            } else {
                py + 2
            };
            boxed_text(root, &m.label, NOTE_PX, (lx, ly), (bw, bh))?;
            occupied.add((lx, ly, lx + bw, ly + bh));
        }
    }

    // Vertical markers with labels above the plot.
    for (m, row) in c.x_markers.iter().zip(&rows) {
        let f = x.frac(x.unit(m.value));
        if !(0.0..=1.0).contains(&f) {
            continue;
        }
        let px = frame.px((f, 0.0)).0;
        dashed_line(
            root,
            (px, frame.bottom_px()),
            (px, frame.top_px()),
            MARKER.stroke_width(1),
            6.0,
            4.0,
        )?;
        if let Some((r, left, bw)) = *row {
            let bh = NOTE_PX.round() as i32 + 4;
            let ly = frame.top_px() - 3 - (r as i32 + 1) * row_h + (row_h - bh);
            if r > 0 {
                root.draw(&PathElement::new(
                    vec![(px, frame.top_px()), (px, ly + bh)],
                    MARKER.stroke_width(1),
                ))
                .map_err(be)?;
            }
            boxed_text(root, &m.label, NOTE_PX, (left, ly), (bw, bh))?;
        }
    }

    // Labelled points.
    for p in &c.point_markers {
        let n = frame.norm(x.unit(p.x), y.unit(p.y));
        if !(0.0..=1.0).contains(&n.0) || !(0.0..=1.0).contains(&n.1) {
            continue;
        }
        let (cx, cy) = frame.px(n);
        root.draw(&Circle::new((cx, cy), 5, BACKGROUND.filled()))
            .map_err(be)?;
        root.draw(&Circle::new((cx, cy), 4, POINT_MARKER.filled()))
            .map_err(be)?;
        occupied.add((cx - 5, cy - 5, cx + 5, cy + 5));
    }
    for p in &c.point_markers {
        let n = frame.norm(x.unit(p.x), y.unit(p.y));
        if p.label.is_empty() || !(0.0..=1.0).contains(&n.0) || !(0.0..=1.0).contains(&n.1) {
            continue;
        }
        let (cx, cy) = frame.px(n);
        let (bw, bh) = box_size(root, &p.label, NOTE_PX)?;
        // Near the dot first, then further away (with a leader line), so that
        // the label covers neither another label nor a curve.
        let mut candidates = Vec::new();
        for d in [0, 14, 30, 50] {
            candidates.extend([
                (cx + 7 + d, cy - bh - 5 - d),
                (cx - bw - 7 - d, cy - bh - 5 - d),
                (cx + 7 + d, cy + 5 + d),
                (cx - bw - 7 - d, cy + 5 + d),
                (cx - bw / 2, cy - bh - 10 - d),
                (cx - bw / 2, cy + 10 + d),
            ]);
        }
        let inside = |(lx, ly): (i32, i32)| {
            lx >= frame.left_px()
                && lx + bw <= frame.right_px()
                && ly >= frame.top_px()
                && ly + bh <= frame.bottom_px()
        };
        let rect = |(lx, ly): (i32, i32)| (lx, ly, lx + bw, ly + bh);
        let pick = candidates
            .iter()
            .copied()
            .find(|&c| inside(c) && occupied.free(rect(c)))
            .or_else(|| {
                candidates
                    .iter()
                    .copied()
                    .find(|&c| inside(c) && occupied.free_of_boxes(rect(c)))
            })
            .or_else(|| candidates.iter().copied().find(|&c| inside(c)))
            .unwrap_or(candidates[0]);
        // a label moved away from its dot gets a leader line to it
        let (lx, ly) = pick;
        let near_x = cx.clamp(lx, lx + bw);
        let near_y = cy.clamp(ly, ly + bh);
        if (near_x - cx).abs() + (near_y - cy).abs() > 16 {
            root.draw(&PathElement::new(
                vec![(cx, cy), (near_x, near_y)],
                POINT_MARKER.stroke_width(1),
            ))
            .map_err(be)?;
        }
        boxed_text(root, &p.label, NOTE_PX, pick, (bw, bh))?;
        occupied.add((pick.0, pick.1, pick.0 + bw, pick.1 + bh));
    }

    if c.series.iter().any(|s| !s.name.is_empty()) {
        draw_legend(root, &frame, &entries, legend_w)?;
    }
    Ok(())
}
