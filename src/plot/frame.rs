//! Shared drawing pieces: colours and text styles, the pixel frame of a plot
//! area with clipping, label placement, legends, titles and the chart layout.

use plotters::chart::{ChartBuilder, ChartContext};
use plotters::coord::Shift;
use plotters::coord::cartesian::Cartesian2d;
use plotters::drawing::DrawingArea;
use plotters::element::{Circle, PathElement, Rectangle};
use plotters::prelude::DrawingBackend;
use plotters::style::text_anchor::{HPos, Pos, VPos};
use plotters::style::{Color, IntoFont, RGBColor, ShapeStyle, TextStyle};

use super::axis::Axis;
use super::render::{FAMILY, be};
use super::{PlotError, SeriesStyle};

// ---------------------------------------------------------------------------
// Colours and text styles
// ---------------------------------------------------------------------------

pub(super) const BACKGROUND: RGBColor = RGBColor(255, 255, 255);
const TEXT: RGBColor = RGBColor(20, 20, 20);
pub(super) const AXIS: RGBColor = RGBColor(40, 40, 40);
const GRID_BOLD: RGBColor = RGBColor(208, 208, 208);
const GRID_LIGHT: RGBColor = RGBColor(236, 236, 236);
pub(super) const MARKER: RGBColor = RGBColor(70, 70, 70);
pub(super) const POINT_MARKER: RGBColor = RGBColor(200, 0, 0);
pub(super) const BAND_TINTS: [RGBColor; 2] = [RGBColor(255, 170, 40), RGBColor(60, 150, 255)];

/// Series colours, chosen for this module: distinct hues, all dark enough to
/// read on white.
const PALETTE: [RGBColor; 12] = [
    RGBColor(0, 92, 184),
    RGBColor(214, 48, 32),
    RGBColor(0, 146, 72),
    RGBColor(232, 136, 0),
    RGBColor(122, 60, 172),
    RGBColor(0, 158, 178),
    RGBColor(150, 88, 40),
    RGBColor(212, 72, 156),
    RGBColor(96, 96, 96),
    RGBColor(140, 160, 0),
    RGBColor(36, 40, 120),
    RGBColor(184, 144, 0),
];

pub(super) fn palette(i: usize) -> RGBColor {
    PALETTE[i % PALETTE.len()]
}

pub(super) const TITLE_PX: f64 = 22.0;
pub(super) const PANEL_TITLE_PX: f64 = 18.0;
pub(super) const DESC_PX: f64 = 16.0;
pub(super) const TICK_PX: f64 = 13.0;
const LEGEND_PX: f64 = 13.0;
pub(super) const NOTE_PX: f64 = 12.0;

pub(super) fn text_style(px: f64) -> TextStyle<'static> {
    TextStyle::from((FAMILY, px).into_font()).color(&TEXT)
}

pub(super) fn text_width<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    text: &str,
    px: f64,
) -> Result<u32, PlotError> {
    if text.is_empty() {
        return Ok(0);
    }
    area.estimate_text_size(text, &text_style(px))
        .map(|(w, _)| w)
        .map_err(be)
}

/// Draws `text` with the given anchor at `pos` (absolute pixel coordinates).
pub(super) fn put_text<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    text: &str,
    px: f64,
    pos: (i32, i32),
    anchor: (HPos, VPos),
) -> Result<(), PlotError> {
    if text.is_empty() {
        return Ok(());
    }
    let style = text_style(px).pos(Pos::new(anchor.0, anchor.1));
    root.draw_text(text, &style, pos).map_err(be)
}

/// Draws `text` on a translucent white box whose top-left corner is `top_left`.
pub(super) fn boxed_text<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    text: &str,
    px: f64,
    top_left: (i32, i32),
    size: (i32, i32),
) -> Result<(), PlotError> {
    let (x, y) = top_left;
    root.draw(&Rectangle::new(
        [(x, y), (x + size.0, y + size.1)],
        BACKGROUND.mix(0.8).filled(),
    ))
    .map_err(be)?;
    put_text(root, text, px, (x + 3, y + 2), (HPos::Left, VPos::Top))
}

/// Size of a text box drawn by [`boxed_text`].
pub(super) fn box_size<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    text: &str,
    px: f64,
) -> Result<(i32, i32), PlotError> {
    Ok((
        text_width(root, text, px)? as i32 + 6,
        px.round() as i32 + 4,
    ))
}

/// Shortens long legend entries so that the legend stays narrow.
fn legend_text(name: &str) -> String {
    const MAX_CHARS: usize = 32;
    if name.chars().count() > MAX_CHARS {
        let mut s: String = name.chars().take(MAX_CHARS - 1).collect();
        s.push('…');
        s
    } else {
        name.to_string()
    }
}

// ---------------------------------------------------------------------------
// Geometry: pixel frame and clipping
// ---------------------------------------------------------------------------

/// Pixel geometry of a plot area, consistent with the mapping plotters uses.
#[derive(Debug, Clone)]
pub(super) struct Frame {
    pub(super) x: Axis,
    y: Axis,
    /// Pixel x of the left and right ends of the x axis.
    left: f64,
    right: f64,
    /// Pixel y of the bottom and top ends of the y axis.
    bottom: f64,
    top: f64,
}

impl Frame {
    pub(super) fn new(
        x: &Axis,
        y: &Axis,
        pixels: (std::ops::Range<i32>, std::ops::Range<i32>),
    ) -> Self {
        let (xr, yr) = pixels;
        Frame {
            x: x.clone(),
            y: y.clone(),
            left: xr.start as f64,
            right: (xr.end - 1) as f64,
            bottom: (yr.end - 1) as f64,
            top: yr.start as f64,
        }
    }

    /// Normalised position (0..1 inside the plot) of a point in axis units.
    pub(super) fn norm(&self, u: f64, v: f64) -> (f64, f64) {
        (self.x.frac(u), self.y.frac(v))
    }

    pub(super) fn px(&self, n: (f64, f64)) -> (i32, i32) {
        (
            (self.left + n.0 * (self.right - self.left)).round() as i32,
            (self.bottom + n.1 * (self.top - self.bottom)).round() as i32,
        )
    }

    pub(super) fn px_x(&self, u: f64) -> i32 {
        (self.left + self.x.frac(u) * (self.right - self.left)).round() as i32
    }

    pub(super) fn px_y(&self, v: f64) -> i32 {
        (self.bottom + self.y.frac(v) * (self.top - self.bottom)).round() as i32
    }

    pub(super) fn left_px(&self) -> i32 {
        self.left as i32
    }
    pub(super) fn right_px(&self) -> i32 {
        self.right as i32
    }
    pub(super) fn top_px(&self) -> i32 {
        self.top as i32
    }
    pub(super) fn bottom_px(&self) -> i32 {
        self.bottom as i32
    }

    /// Clips a polyline given in normalised coordinates to the unit square and
    /// returns the visible pieces in pixels.
    pub(super) fn clip(&self, pts: &[(f64, f64)]) -> Vec<Vec<(i32, i32)>> {
        let mut pieces: Vec<Vec<(i32, i32)>> = Vec::new();
        let mut current: Vec<(i32, i32)> = Vec::new();
        if pts.len() == 1 {
            let p = pts[0];
            if (0.0..=1.0).contains(&p.0) && (0.0..=1.0).contains(&p.1) {
                pieces.push(vec![self.px(p)]);
            }
            return pieces;
        }
        for w in pts.windows(2) {
            match clip_segment(w[0], w[1]) {
                Some((a, b, a_moved, b_moved)) => {
                    let pa = self.px(a);
                    let pb = self.px(b);
                    if a_moved || current.is_empty() {
                        if current.len() > 1 {
                            pieces.push(std::mem::take(&mut current));
                        }
                        current.clear();
                        current.push(pa);
                    }
                    if current.last() != Some(&pb) {
                        current.push(pb);
                    }
                    if b_moved {
                        pieces.push(std::mem::take(&mut current));
                    }
                }
                None => {
                    if current.len() > 1 {
                        pieces.push(std::mem::take(&mut current));
                    }
                    current.clear();
                }
            }
        }
        if !current.is_empty() {
            pieces.push(current);
        }
        pieces
    }
}

/// Liang–Barsky clipping of the segment `a`–`b` to the unit square. Returns the
/// visible part and whether each end was moved.
#[allow(clippy::type_complexity)]
fn clip_segment(a: (f64, f64), b: (f64, f64)) -> Option<((f64, f64), (f64, f64), bool, bool)> {
    let (dx, dy) = (b.0 - a.0, b.1 - a.1);
    let mut t0 = 0.0f64;
    let mut t1 = 1.0f64;
    let checks = [(-dx, a.0), (dx, 1.0 - a.0), (-dy, a.1), (dy, 1.0 - a.1)];
    for (p, q) in checks {
        if p == 0.0 {
            if q < 0.0 {
                return None;
            }
        } else {
            let r = q / p;
            if p < 0.0 {
                if r > t1 {
                    return None;
                }
                t0 = t0.max(r);
            } else {
                if r < t0 {
                    return None;
                }
                t1 = t1.min(r);
            }
        }
    }
    let pa = (a.0 + t0 * dx, a.1 + t0 * dy);
    let pb = (a.0 + t1 * dx, a.1 + t1 * dy);
    Some((pa, pb, t0 > 0.0, t1 < 1.0))
}

/// What labels must not cover: rectangles (other labels, dots) and line
/// segments (curves), in pixels.
#[derive(Default)]
pub(super) struct Occupied {
    boxes: Vec<(i32, i32, i32, i32)>,
    segments: Vec<((i32, i32), (i32, i32))>,
}

impl Occupied {
    /// True when `r` (left, top, right, bottom) overlaps no rectangle and
    /// crosses no segment.
    pub(super) fn free(&self, r: (i32, i32, i32, i32)) -> bool {
        self.free_of_boxes(r) && !self.segments.iter().any(|&(a, b)| segment_hits(a, b, r))
    }
    /// True when `r` overlaps no rectangle (segments are not looked at).
    pub(super) fn free_of_boxes(&self, r: (i32, i32, i32, i32)) -> bool {
        self.boxes
            .iter()
            .all(|o| r.2 <= o.0 || o.2 <= r.0 || r.3 <= o.1 || o.3 <= r.1)
    }
    pub(super) fn add(&mut self, r: (i32, i32, i32, i32)) {
        self.boxes.push(r);
    }
    pub(super) fn add_segment(&mut self, a: (i32, i32), b: (i32, i32)) {
        self.segments.push((a, b));
    }
}

/// Whether the segment `a`–`b` passes through the rectangle `r` (left, top,
/// right, bottom), by clipping it to the rectangle (Liang–Barsky).
fn segment_hits(a: (i32, i32), b: (i32, i32), r: (i32, i32, i32, i32)) -> bool {
    let (w, h) = (f64::from(r.2 - r.0), f64::from(r.3 - r.1));
    if w <= 0.0 || h <= 0.0 {
        return false;
    }
    let n = |p: (i32, i32)| (f64::from(p.0 - r.0) / w, f64::from(p.1 - r.1) / h);
    clip_segment(n(a), n(b)).is_some()
}

// ---------------------------------------------------------------------------
// Drawing helpers shared by the chart kinds
// ---------------------------------------------------------------------------

/// Draws a dashed straight line between two pixel points.
pub(super) fn dashed_line<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    a: (i32, i32),
    b: (i32, i32),
    style: ShapeStyle,
    dash: f64,
    gap: f64,
) -> Result<(), PlotError> {
    let (dx, dy) = ((b.0 - a.0) as f64, (b.1 - a.1) as f64);
    let len = (dx * dx + dy * dy).sqrt();
    if len < 1.0 {
        return Ok(());
    }
    let (ux, uy) = (dx / len, dy / len);
    let mut s = 0.0;
    while s < len {
        let e = (s + dash).min(len);
        let p0 = (
            (a.0 as f64 + ux * s).round() as i32,
            (a.1 as f64 + uy * s).round() as i32,
        );
        let p1 = (
            (a.0 as f64 + ux * e).round() as i32,
            (a.1 as f64 + uy * e).round() as i32,
        );
        root.draw(&PathElement::new(vec![p0, p1], style))
            .map_err(be)?;
        s += dash + gap;
    }
    Ok(())
}

/// What a legend entry looks like.
#[derive(Clone, Copy)]
pub(super) enum Swatch {
    Bar,
    Line(SeriesStyle),
}

/// Width in pixels of the legend for `names` (0 when there is no legend).
pub(super) fn legend_width<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    names: &[String],
) -> Result<u32, PlotError> {
    if names.iter().all(|n| n.is_empty()) {
        return Ok(0);
    }
    let mut w = 0;
    for n in names {
        w = w.max(text_width(area, &legend_text(n), LEGEND_PX)?);
    }
    // gap + frame padding + swatch + spacing + text + padding
    Ok(14 + 8 + 26 + 6 + w + 8)
}

/// Draws the legend to the right of the plot, starting at its top.
pub(super) fn draw_legend<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    frame: &Frame,
    entries: &[(String, RGBColor, Swatch)],
    width: u32,
) -> Result<(), PlotError> {
    if width == 0 || entries.is_empty() {
        return Ok(());
    }
    let row_h = (LEGEND_PX * 1.45).round() as i32;
    let x0 = frame.right_px() + 14;
    let y0 = frame.top_px();
    let (root_w, _) = root.dim_in_pixel();
    let avail_rows = ((frame.bottom_px() - y0 - 10) / row_h).max(1) as usize;
    let shown = entries.len().min(avail_rows);
    let h = shown as i32 * row_h + 10;
    let x1 = (x0 + width as i32 - 14).min(root_w as i32 - 2);
    root.draw(&Rectangle::new(
        [(x0, y0), (x1, y0 + h)],
        BACKGROUND.filled(),
    ))
    .map_err(be)?;
    root.draw(&Rectangle::new(
        [(x0, y0), (x1, y0 + h)],
        GRID_BOLD.stroke_width(1),
    ))
    .map_err(be)?;
    for (i, (name, color, swatch)) in entries.iter().take(shown).enumerate() {
        let cy = y0 + 5 + i as i32 * row_h + row_h / 2;
        let sx = x0 + 8;
        match swatch {
            Swatch::Bar => {
                root.draw(&Rectangle::new(
                    [(sx + 4, cy - 6), (sx + 22, cy + 6)],
                    color.filled(),
                ))
                .map_err(be)?;
            }
            Swatch::Line(style) => {
                let line = color.stroke_width(2);
                match style {
                    SeriesStyle::Line | SeriesStyle::LineAndPoints => {
                        root.draw(&PathElement::new(vec![(sx, cy), (sx + 26, cy)], line))
                            .map_err(be)?;
                    }
                    SeriesStyle::Dashed => {
                        dashed_line(root, (sx, cy), (sx + 26, cy), line, 7.0, 4.0)?;
                    }
                    SeriesStyle::Points => {}
                }
                if matches!(style, SeriesStyle::Points | SeriesStyle::LineAndPoints) {
                    root.draw(&Circle::new((sx + 13, cy), 3, color.filled()))
                        .map_err(be)?;
                }
            }
        }
        let text = if i + 1 == shown && shown < entries.len() {
            format!("… and {} more", entries.len() - shown + 1)
        } else {
            legend_text(name)
        };
        put_text(
            root,
            &text,
            LEGEND_PX,
            (sx + 32, cy),
            (HPos::Left, VPos::Center),
        )?;
    }
    Ok(())
}

/// Smallest size a title is shrunk to before it is wrapped.
const TITLE_MIN_PX: f64 = 14.0;

/// Most lines a title is wrapped into; the rest is cut with "…".
const TITLE_MAX_LINES: usize = 3;

/// Fits `text` into `avail` pixels: at `px` if it fits, else shrunk down to
/// [`TITLE_MIN_PX`], else wrapped at spaces into at most [`TITLE_MAX_LINES`]
/// lines (a word too long for a line is cut with "…"). Returns the size and
/// the lines.
pub(super) fn fit_title(
    text: &str,
    px: f64,
    avail: u32,
    width: &dyn Fn(&str, f64) -> Result<u32, PlotError>,
) -> Result<(f64, Vec<String>), PlotError> {
    let full = width(text, px)?;
    if full <= avail {
        return Ok((px, vec![text.to_string()]));
    }
    let small = TITLE_MIN_PX.min(px);
    let shrunk = (px * f64::from(avail) / f64::from(full)).floor();
    if shrunk >= small {
        return Ok((shrunk, vec![text.to_string()]));
    }
    let cut = |word: &str| -> Result<String, PlotError> {
        let mut s: String = word.to_string();
        while !s.is_empty() && width(&format!("{s}…"), small)? > avail {
            s.pop();
        }
        Ok(format!("{s}…"))
    };
    let mut lines: Vec<String> = Vec::new();
    let mut current = String::new();
    for word in text.split_whitespace() {
        let trial = if current.is_empty() {
            word.to_string()
        } else {
            format!("{current} {word}")
        };
        if width(&trial, small)? <= avail {
            current = trial;
            continue;
        }
        if !current.is_empty() {
            lines.push(std::mem::take(&mut current));
        }
        current = if width(word, small)? <= avail {
            word.to_string()
        } else {
            cut(word)?
        };
    }
    if !current.is_empty() {
        lines.push(current);
    }
    if lines.len() > TITLE_MAX_LINES {
        let rest = lines.split_off(TITLE_MAX_LINES - 1).join(" ");
        lines.push(cut(&rest)?);
    }
    Ok((small, lines))
}

/// Draws a title centred in the band at the top of `area` and returns the rest.
/// A title wider than the area is shrunk, then wrapped (see [`fit_title`]).
pub(super) fn with_title<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    title: &str,
    px: f64,
) -> Result<DrawingArea<DB, Shift>, PlotError> {
    if title.is_empty() {
        return Ok(area.clone());
    }
    let (w, _) = area.dim_in_pixel();
    let avail = w.saturating_sub(2 * MARGIN).max(1);
    let measure = |t: &str, p: f64| text_width(area, t, p);
    let (px, lines) = fit_title(title, px, avail, &measure)?;
    let line_h = px * 1.25;
    let band = (px * 1.8 + (lines.len() - 1) as f64 * line_h).round() as u32;
    let (top, rest) = area.split_vertically(band);
    let first = f64::from(band) / 2.0 - (lines.len() - 1) as f64 * line_h / 2.0 + 2.0;
    for (i, line) in lines.iter().enumerate() {
        top.draw_text(
            line,
            &text_style(px).pos(Pos::new(HPos::Center, VPos::Center)),
            ((w / 2) as i32, (first + i as f64 * line_h).round() as i32),
        )
        .map_err(be)?;
    }
    Ok(rest)
}

/// Space reserved around the plot area.
#[derive(Debug, Clone, Copy)]
pub(super) struct Layout {
    pub(super) top: u32,
    pub(super) right: u32,
    pub(super) x_area: u32,
    pub(super) y_area: u32,
}

pub(super) const MARGIN: u32 = 12;

type Chart<'a, DB> = ChartContext<'a, DB, Cartesian2d<Axis, Axis>>;

pub(super) fn build_chart<'a, DB: DrawingBackend>(
    area: &'a DrawingArea<DB, Shift>,
    x: &Axis,
    y: &Axis,
    layout: Layout,
) -> Result<Chart<'a, DB>, PlotError> {
    ChartBuilder::on(area)
        .margin_top(layout.top)
        .margin_bottom(MARGIN)
        .margin_left(MARGIN)
        .margin_right(layout.right)
        .x_label_area_size(layout.x_area)
        .y_label_area_size(layout.y_area)
        .build_cartesian_2d(x.clone(), y.clone())
        .map_err(be)
}

pub(super) fn draw_mesh<DB: DrawingBackend>(
    chart: &mut Chart<'_, DB>,
    x_desc: &str,
    y_desc: &str,
    x_grid: bool,
    y_grid: bool,
) -> Result<(), PlotError> {
    let mut mesh = chart.configure_mesh();
    mesh.label_style(text_style(TICK_PX))
        .axis_desc_style(text_style(DESC_PX))
        .bold_line_style(GRID_BOLD.stroke_width(1))
        .light_line_style(GRID_LIGHT.stroke_width(1))
        .axis_style(AXIS.stroke_width(1))
        .max_light_lines(1000);
    if !x_desc.is_empty() {
        mesh.x_desc(x_desc);
    }
    if !y_desc.is_empty() {
        mesh.y_desc(y_desc);
    }
    if !x_grid {
        mesh.disable_x_mesh();
    }
    if !y_grid {
        mesh.disable_y_mesh();
    }
    mesh.draw().map_err(be)
}

/// Width needed left of the plot for y tick labels and the y description.
pub(super) fn y_area_width<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    y: &Axis,
    y_desc: &str,
) -> Result<u32, PlotError> {
    let mut w = 0;
    for &t in &y.major {
        w = w.max(text_width(area, &y.label(t), TICK_PX)?);
    }
    let desc = if y_desc.is_empty() {
        0
    } else {
        (DESC_PX * 1.6) as u32
    };
    Ok(w + 16 + desc)
}

/// Height of the x label area (tick labels plus description).
pub(super) fn x_area_height(show_labels: bool, has_desc: bool) -> u32 {
    match (show_labels, has_desc) {
        (true, true) => (TICK_PX + DESC_PX * 1.5 + 16.0) as u32,
        (true, false) => (TICK_PX + 16.0) as u32,
        (false, _) => 8,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A monospace stand-in for text measurement: 10 px per character at 20 px.
    fn mono(t: &str, px: f64) -> Result<u32, PlotError> {
        Ok((t.chars().count() as f64 * px / 2.0).round() as u32)
    }

    /// Property of the title layout: every line fits the width, no word is
    /// lost unless cut with "…", at most three lines.
    #[test]
    fn long_titles_shrink_then_wrap_within_the_width() {
        let (px, lines) = fit_title("short", 20.0, 200, &mono).unwrap();
        assert_eq!((px, lines), (20.0, vec!["short".to_string()]));
        // 30 chars: 300 px at 20 px, fits at 16 px in 240
        let t = "a".repeat(30);
        let (px, lines) = fit_title(&t, 20.0, 240, &mono).unwrap();
        assert_eq!(lines.len(), 1);
        assert!((TITLE_MIN_PX..=16.0).contains(&px), "{px}");
        let long = "Pressure ripple per harmonic — Truck crane pressure line (invented demo) \
                    (1500 rpm, f_p = 300.0 Hz) with a very long name";
        let (px, lines) = fit_title(long, 22.0, 300, &mono).unwrap();
        assert_eq!(px, TITLE_MIN_PX);
        assert!(
            lines.len() <= TITLE_MAX_LINES && lines.len() > 1,
            "{lines:?}"
        );
        for l in &lines {
            assert!(mono(l, px).unwrap() <= 300, "line too wide: {l}");
        }
        let joined = lines.join(" ");
        assert!(joined.starts_with("Pressure ripple per harmonic"));
        assert!(joined.ends_with('…') || joined.ends_with("name"));
        // one word longer than the width is cut
        let (_, lines) = fit_title(&"x".repeat(100), 20.0, 100, &mono).unwrap();
        assert_eq!(lines.len(), 1);
        assert!(lines[0].ends_with('…') && mono(&lines[0], TITLE_MIN_PX).unwrap() <= 100);
    }

    /// Geometry of label placement: a curve through a box makes it occupied,
    /// one that passes beside it or ends before it does not.
    #[test]
    fn labels_avoid_curves_and_other_labels() {
        let r = (10, 10, 50, 30);
        assert!(segment_hits((0, 20), (60, 20), r), "straight through");
        assert!(segment_hits((20, 0), (40, 40), r), "diagonal through");
        assert!(segment_hits((20, 15), (25, 16), r), "inside");
        assert!(!segment_hits((0, 0), (60, 5), r), "above");
        assert!(!segment_hits((0, 20), (9, 20), r), "ends before");
        assert!(!segment_hits((0, 40), (40, 80), r), "beside");
        let mut o = Occupied::default();
        o.add_segment((0, 20), (60, 20));
        o.add((100, 100, 120, 110));
        assert!(!o.free(r));
        assert!(o.free_of_boxes(r));
        assert!(o.free((10, 40, 50, 60)));
        assert!(!o.free((110, 105, 130, 115)));
    }

    #[test]
    fn clipping_keeps_the_visible_part() {
        let x = Axis::numeric(0.0, 1.0, false, 5);
        let f = Frame::new(&x, &x, (0..101, 0..101));
        // crosses the right edge and comes back
        let pieces = f.clip(&[(0.5, 0.5), (1.5, 0.5), (0.5, 0.6)]);
        assert_eq!(pieces.len(), 2);
        assert_eq!(pieces[0], vec![(50, 50), (100, 50)]);
        assert_eq!(*pieces[1].last().unwrap(), (50, 40));
        assert!(f.clip(&[(2.0, 2.0), (3.0, 3.0)]).is_empty());
    }
}
