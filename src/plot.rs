//! Chart rendering to SVG and PNG files.
//!
//! This module turns plain data (numbers and strings, no physical units attached)
//! into three kinds of charts:
//!
//! * [`grouped_bar_chart`]: one group of bars per category (e.g. per harmonic),
//!   one bar per series inside each group;
//! * [`line_chart`] and [`stacked_line_charts`]: x/y curves with optional
//!   logarithmic axes, vertical marker lines, labelled points, shaded bands and
//!   error bars;
//! * [`heat_map`]: a value on a regular x/y grid shown as colour, with a colour
//!   bar, overlaid polylines and horizontal marker lines.
//!
//! The output format follows the file extension of the target path: `.svg` or
//! `.png` (case-insensitive). Text is laid out with a DejaVu Sans subset that is
//! compiled into the program, so no system font is ever read.
//!
//! Every function checks its input before it draws anything: a wrong extension,
//! empty data, non-finite numbers or inconsistent lengths are reported as a
//! [`PlotError`] and no file is created. The picture is first drawn in memory
//! and the file at `path` is only created once drawing has succeeded.

use std::path::{Path, PathBuf};
use std::sync::OnceLock;

use plotters::chart::{ChartBuilder, ChartContext};
use plotters::coord::Shift;
use plotters::coord::cartesian::Cartesian2d;
use plotters::coord::ranged1d::{KeyPointHint, NoDefaultFormatting, Ranged, ValueFormatter};
use plotters::drawing::{DrawingArea, IntoDrawingArea};
use plotters::element::{Circle, PathElement, Rectangle};
use plotters::prelude::{BitMapBackend, DrawingBackend, SVGBackend};
use plotters::style::text_anchor::{HPos, Pos, VPos};
use plotters::style::{
    Color, FontStyle, FontTransform, IntoFont, RGBColor, ShapeStyle, TextStyle, register_font,
};
use plotters_backend::{BackendColor, BackendCoord, DrawingErrorKind};

/// Default picture size in pixels (width, height).
pub const DEFAULT_SIZE: (u32, u32) = (1000, 600);

/// Smallest accepted picture (or stacked panel) size in pixels.
pub const MIN_SIZE: (u32, u32) = (200, 150);

/// Largest accepted picture width or height in pixels.
pub const MAX_DIMENSION: u32 = 8192;

/// The embedded font (a DejaVu Sans subset, see `assets/fonts/README.md`).
const FONT_BYTES: &[u8] = include_bytes!("../assets/fonts/DejaVuSans-subset.ttf");

/// Font family name under which the embedded font is registered with plotters.
const FAMILY: &str = "sans-serif";

/// Errors from rendering a chart.
#[derive(Debug, thiserror::Error)]
pub enum PlotError {
    /// The output path does not end in `.svg` or `.png`.
    #[error(
        "cannot choose an image format for '{}': the file name must end in .svg or .png",
        path.display()
    )]
    UnsupportedExtension {
        /// The rejected path.
        path: PathBuf,
    },
    /// There is nothing to draw.
    #[error("nothing to plot: {0}")]
    NoData(String),
    /// A number in the input is NaN or infinite.
    #[error("{what} of series '{series}' at index {index} is not a finite number")]
    NonFinite {
        /// Name of the series (or of the chart element) holding the value.
        series: String,
        /// Index of the value inside the series.
        index: usize,
        /// Which value it is (for example "y value" or "error bar low end").
        what: &'static str,
    },
    /// A value that must be shown on a logarithmic axis is zero or negative.
    #[error(
        "{axis} value {value} of series '{series}' at index {index} cannot be shown on a \
         logarithmic {axis} axis (it must be greater than zero)"
    )]
    NonPositiveOnLogAxis {
        /// Name of the series (or of the chart element) holding the value.
        series: String,
        /// Index of the value inside the series.
        index: usize,
        /// The axis, "x" or "y".
        axis: &'static str,
        /// The offending value.
        value: f64,
    },
    /// The data are inconsistent (lengths that do not match, an empty or reversed
    /// range, a grid that is not increasing, an unusable picture size, ...).
    #[error("invalid chart data: {0}")]
    InvalidData(String),
    /// The drawing library failed.
    #[error("drawing the chart failed: {0}")]
    Backend(String),
    /// Writing the output file failed.
    #[error("cannot write '{}': {source}", path.display())]
    Io {
        /// The file that could not be written.
        path: PathBuf,
        /// The underlying error.
        #[source]
        source: std::io::Error,
    },
}

/// Image file format, chosen from the output file extension.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum OutputFormat {
    /// Scalable vector graphics (`.svg`).
    Svg,
    /// Portable network graphics (`.png`).
    Png,
}

/// Returns the image format for `path` from its extension (`.svg` or `.png`,
/// case-insensitive), or [`PlotError::UnsupportedExtension`].
///
/// Callers that write to a temporary file first must keep the extension on the
/// temporary name (for example `.chart.tmp.png`).
pub fn output_format(path: &Path) -> Result<OutputFormat, PlotError> {
    let ext = path
        .extension()
        .and_then(|e| e.to_str())
        .map(|e| e.to_ascii_lowercase());
    match ext.as_deref() {
        Some("svg") => Ok(OutputFormat::Svg),
        Some("png") => Ok(OutputFormat::Png),
        _ => Err(PlotError::UnsupportedExtension {
            path: path.to_path_buf(),
        }),
    }
}

/// One named row of values for a [`BarChart`]: one value per category.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Series {
    /// Name shown in the legend.
    pub name: String,
    /// One value per category, in the order of [`BarChart::categories`].
    pub values: Vec<f64>,
}

/// A grouped bar chart: for every category one bar per series, side by side.
#[derive(Debug, Clone, PartialEq)]
pub struct BarChart {
    /// Chart title (drawn above the plot; may be empty).
    pub title: String,
    /// Description of the category axis, e.g. "harmonic".
    pub x_label: String,
    /// Description of the value axis including its unit.
    pub y_label: String,
    /// Category names along the x axis, e.g. harmonic numbers "1" to "10".
    pub categories: Vec<String>,
    /// The series; each must have exactly one value per category.
    pub series: Vec<Series>,
    /// Logarithmic value axis. Values that are zero or negative are then drawn as
    /// no bar at all; at least one value must be positive.
    pub log_y: bool,
    /// Picture size in pixels (width, height).
    pub size: (u32, u32),
}

impl Default for BarChart {
    fn default() -> Self {
        Self {
            title: String::new(),
            x_label: String::new(),
            y_label: String::new(),
            categories: Vec::new(),
            series: Vec::new(),
            log_y: false,
            size: DEFAULT_SIZE,
        }
    }
}

/// How an [`XySeries`] is drawn.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub enum SeriesStyle {
    /// Solid line through the points.
    #[default]
    Line,
    /// Dashed line through the points.
    Dashed,
    /// A dot at every point, no line.
    Points,
    /// Solid line with a dot at every point.
    LineAndPoints,
}

/// One curve of a [`LineChart`].
#[derive(Debug, Clone, Default, PartialEq)]
pub struct XySeries {
    /// Name shown in the legend (the legend is left out when all names are empty).
    pub name: String,
    /// The (x, y) points, drawn in the given order.
    pub points: Vec<(f64, f64)>,
    /// Optional vertical error bars: one (low, high) pair of y values per point.
    /// On a logarithmic y axis a low end at or below zero is drawn down to the
    /// bottom of the plot.
    pub error_bars: Option<Vec<(f64, f64)>>,
    /// Line or point style.
    pub style: SeriesStyle,
    /// Colour as red, green, blue; `None` takes the next colour of the palette.
    pub color: Option<[u8; 3]>,
}

/// A labelled position along one axis, drawn as a dashed line across the plot
/// (vertical for x markers, horizontal for y markers).
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Marker {
    /// Position along the axis, in data units.
    pub value: f64,
    /// Short text drawn next to the line (may be empty).
    pub label: String,
}

/// A labelled point, drawn as a dot with its text beside it.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct PointMarker {
    /// x position in data units.
    pub x: f64,
    /// y position in data units.
    pub y: f64,
    /// Short text drawn next to the dot (may be empty).
    pub label: String,
}

/// A shaded vertical band between two x values, e.g. an operating speed range.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Band {
    /// One end of the band (data units).
    pub from: f64,
    /// The other end of the band (data units).
    pub to: f64,
    /// Short text drawn at the bottom of the band (may be empty).
    pub label: String,
}

/// An x/y line chart.
#[derive(Debug, Clone, PartialEq)]
pub struct LineChart {
    /// Chart title (drawn above the plot; may be empty).
    pub title: String,
    /// Description of the x axis including its unit.
    pub x_label: String,
    /// Description of the y axis including its unit.
    pub y_label: String,
    /// The curves. A series without points is allowed (it only appears in the
    /// legend), but at least one series must have points.
    pub series: Vec<XySeries>,
    /// Logarithmic x axis (all x values must then be positive).
    pub log_x: bool,
    /// Logarithmic y axis (all y values must then be positive).
    pub log_y: bool,
    /// Fixed x range (low, high) in data units; `None` fits the curves and the
    /// point markers. Anything outside the range is clipped.
    pub x_range: Option<(f64, f64)>,
    /// Fixed y range (low, high) in data units; `None` fits the curves, their
    /// error bars and the point markers, with a small margin.
    pub y_range: Option<(f64, f64)>,
    /// Vertical dashed lines, labelled above the plot (e.g. resonances). They do
    /// not widen the x range; markers outside it are left out.
    pub x_markers: Vec<Marker>,
    /// Horizontal dashed lines, labelled at the right end. They do not widen the
    /// y range; markers outside it are left out.
    pub y_markers: Vec<Marker>,
    /// Labelled dots (e.g. pressure nodes along a line).
    pub point_markers: Vec<PointMarker>,
    /// Shaded vertical bands.
    pub x_bands: Vec<Band>,
    /// Picture size in pixels (width, height). In [`stacked_line_charts`] this is
    /// the size of one panel.
    pub size: (u32, u32),
}

impl Default for LineChart {
    fn default() -> Self {
        Self {
            title: String::new(),
            x_label: String::new(),
            y_label: String::new(),
            series: Vec::new(),
            log_x: false,
            log_y: false,
            x_range: None,
            y_range: None,
            x_markers: Vec::new(),
            y_markers: Vec::new(),
            point_markers: Vec::new(),
            x_bands: Vec::new(),
            size: DEFAULT_SIZE,
        }
    }
}

/// A labelled polyline drawn on top of a [`HeatMap`], e.g. a harmonic order line.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Polyline {
    /// Short text drawn at the last visible point (may be empty).
    pub label: String,
    /// The (x, y) points in data units.
    pub points: Vec<(f64, f64)>,
}

/// A value on a regular x/y grid shown as colour.
#[derive(Debug, Clone, PartialEq)]
pub struct HeatMap {
    /// Chart title (drawn above the plot; may be empty).
    pub title: String,
    /// Description of the x axis including its unit.
    pub x_label: String,
    /// Description of the y axis including its unit.
    pub y_label: String,
    /// Description of the colour scale including its unit, e.g. `level [dB]`.
    pub z_label: String,
    /// Cell centres along x, strictly increasing.
    pub x: Vec<f64>,
    /// Cell centres along y, strictly increasing.
    pub y: Vec<f64>,
    /// Cell values: `z[ix][iy]` belongs to `(x[ix], y[iy])`. NaN or infinite cells
    /// mean "no data" and are left blank.
    pub z: Vec<Vec<f64>>,
    /// Fixed colour scale range (low, high); `None` uses the finite data range.
    /// Values outside the range get the colour of the nearer end.
    pub z_range: Option<(f64, f64)>,
    /// Polylines drawn over the colours.
    pub lines: Vec<Polyline>,
    /// Horizontal dashed lines with labels.
    pub y_markers: Vec<Marker>,
    /// Picture size in pixels (width, height).
    pub size: (u32, u32),
}

impl Default for HeatMap {
    fn default() -> Self {
        Self {
            title: String::new(),
            x_label: String::new(),
            y_label: String::new(),
            z_label: String::new(),
            x: Vec::new(),
            y: Vec::new(),
            z: Vec::new(),
            z_range: None,
            lines: Vec::new(),
            y_markers: Vec::new(),
            size: DEFAULT_SIZE,
        }
    }
}

/// Draws a grouped bar chart to `path` (`.svg` or `.png`).
///
/// Bars of the different series stand side by side inside each category; the
/// legend lists the series. Colours cycle through a 12-colour palette.
pub fn grouped_bar_chart(path: &Path, chart: &BarChart) -> Result<(), PlotError> {
    let format = output_format(path)?;
    let fig = BarFigure::new(chart)?;
    render(path, format, chart.size, &fig)
}

/// Draws a line chart to `path` (`.svg` or `.png`).
pub fn line_chart(path: &Path, chart: &LineChart) -> Result<(), PlotError> {
    let format = output_format(path)?;
    let fig = StackFigure::new(std::slice::from_ref(chart))?;
    let size = fig.size;
    render(path, format, size, &fig)
}

/// Draws several line charts stacked vertically with one shared x axis (for
/// example amplitude on top and phase below) to `path` (`.svg` or `.png`).
///
/// Each panel keeps its own title, y axis, legend, markers and bands. The x range
/// is the first fixed `x_range` among the panels, or else covers the data of all
/// panels; all panels must agree on `log_x`. Only the bottom panel shows x tick
/// labels and the x axis description (the first non-empty `x_label`, looking from
/// the bottom panel up). The picture is as wide as the widest panel and as high
/// as all panel heights together.
pub fn stacked_line_charts(path: &Path, charts: &[LineChart]) -> Result<(), PlotError> {
    let format = output_format(path)?;
    let fig = StackFigure::new(charts)?;
    let size = fig.size;
    render(path, format, size, &fig)
}

/// Draws a heat map to `path` (`.svg` or `.png`), with a colour bar on the right.
pub fn heat_map(path: &Path, map: &HeatMap) -> Result<(), PlotError> {
    let format = output_format(path)?;
    let fig = HeatFigure::new(map)?;
    render(path, format, map.size, &fig)
}

// ---------------------------------------------------------------------------
// Rendering infrastructure
// ---------------------------------------------------------------------------

/// A validated chart that can draw itself on any plotters backend.
trait Figure {
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Result<(), PlotError>;
}

/// Converts any plotters error into [`PlotError::Backend`].
fn be<E: std::fmt::Display>(e: E) -> PlotError {
    PlotError::Backend(e.to_string())
}

/// Registers the embedded font with plotters, once per process.
fn ensure_font() -> Result<(), PlotError> {
    static REGISTERED: OnceLock<Result<(), String>> = OnceLock::new();
    REGISTERED
        .get_or_init(|| {
            register_font(FAMILY, FontStyle::Normal, FONT_BYTES)
                .map_err(|_| "the embedded font could not be loaded".to_string())?;
            register_font(FAMILY, FontStyle::Bold, FONT_BYTES)
                .map_err(|_| "the embedded font could not be loaded".to_string())
        })
        .clone()
        .map_err(PlotError::Backend)
}

fn check_size(size: (u32, u32), what: &str) -> Result<(), PlotError> {
    let (w, h) = size;
    if w < MIN_SIZE.0 || h < MIN_SIZE.1 || w > MAX_DIMENSION || h > MAX_DIMENSION {
        return Err(PlotError::InvalidData(format!(
            "{what} size {w}×{h} px is outside the accepted range \
             {}×{} to {MAX_DIMENSION}×{MAX_DIMENSION} px",
            MIN_SIZE.0, MIN_SIZE.1
        )));
    }
    Ok(())
}

/// Draws `fig` in memory and then writes the file. No file is created when
/// drawing fails.
fn render<F: Figure>(
    path: &Path,
    format: OutputFormat,
    size: (u32, u32),
    fig: &F,
) -> Result<(), PlotError> {
    ensure_font()?;
    match format {
        OutputFormat::Svg => {
            let mut svg = String::new();
            {
                let root = SVGBackend::with_string(&mut svg, size).into_drawing_area();
                root.fill(&BACKGROUND).map_err(be)?;
                fig.draw(&root)?;
                root.present().map_err(be)?;
            }
            std::fs::write(path, svg).map_err(|source| {
                // do not leave a partly written file behind
                let _ = std::fs::remove_file(path);
                PlotError::Io {
                    path: path.to_path_buf(),
                    source,
                }
            })
        }
        OutputFormat::Png => {
            let (w, h) = size;
            let mut pixels = vec![0u8; w as usize * h as usize * 3];
            {
                let root =
                    RasterText(BitMapBackend::with_buffer(&mut pixels, size)).into_drawing_area();
                root.fill(&BACKGROUND).map_err(be)?;
                fig.draw(&root)?;
                root.present().map_err(be)?;
            }
            // Open the file first so that an unwritable path is reported as an
            // I/O error (the PNG encoder would only give a generic message).
            std::fs::OpenOptions::new()
                .write(true)
                .create(true)
                .truncate(true)
                .open(path)
                .map_err(|source| PlotError::Io {
                    path: path.to_path_buf(),
                    source,
                })?;
            let result = {
                let mut file = BitMapBackend::new(path, size);
                file.blit_bitmap((0, 0), size, &pixels)
                    .and_then(|()| file.present())
                    .map_err(be)
            }; // the backend is dropped here, before any clean-up
            if result.is_err() {
                let _ = std::fs::remove_file(path);
            }
            result
        }
    }
}

/// The embedded font as seen by the glyph rasteriser (`None` if it cannot be
/// parsed, which [`ensure_font`] would already have reported).
fn glyph_font() -> Option<&'static ab_glyph::FontRef<'static>> {
    static FONT: OnceLock<Option<ab_glyph::FontRef<'static>>> = OnceLock::new();
    FONT.get_or_init(|| ab_glyph::FontRef::try_from_slice(FONT_BYTES).ok())
        .as_ref()
}

/// A bitmap backend wrapper that rasterises text itself.
///
/// plotters 0.3.7 places every glyph at the pen position without its left side
/// bearing, which makes the letter spacing in PNG output visibly uneven. This
/// wrapper draws each glyph at pen position plus bearing, with kerning, and
/// otherwise keeps the layout of plotters (same text box, anchors, baseline and
/// rotations), so that labels stay where plotters expects them.
struct RasterText<B>(B);

impl<B: DrawingBackend> DrawingBackend for RasterText<B> {
    type ErrorType = B::ErrorType;

    fn get_size(&self) -> (u32, u32) {
        self.0.get_size()
    }

    fn ensure_prepared(&mut self) -> Result<(), DrawingErrorKind<Self::ErrorType>> {
        self.0.ensure_prepared()
    }

    fn present(&mut self) -> Result<(), DrawingErrorKind<Self::ErrorType>> {
        self.0.present()
    }

    fn draw_pixel(
        &mut self,
        point: BackendCoord,
        color: BackendColor,
    ) -> Result<(), DrawingErrorKind<Self::ErrorType>> {
        self.0.draw_pixel(point, color)
    }

    fn draw_line<S: plotters_backend::BackendStyle>(
        &mut self,
        from: BackendCoord,
        to: BackendCoord,
        style: &S,
    ) -> Result<(), DrawingErrorKind<Self::ErrorType>> {
        self.0.draw_line(from, to, style)
    }

    fn draw_rect<S: plotters_backend::BackendStyle>(
        &mut self,
        upper_left: BackendCoord,
        bottom_right: BackendCoord,
        style: &S,
        fill: bool,
    ) -> Result<(), DrawingErrorKind<Self::ErrorType>> {
        self.0.draw_rect(upper_left, bottom_right, style, fill)
    }

    fn draw_path<S: plotters_backend::BackendStyle, I: IntoIterator<Item = BackendCoord>>(
        &mut self,
        path: I,
        style: &S,
    ) -> Result<(), DrawingErrorKind<Self::ErrorType>> {
        self.0.draw_path(path, style)
    }

    fn draw_circle<S: plotters_backend::BackendStyle>(
        &mut self,
        center: BackendCoord,
        radius: u32,
        style: &S,
        fill: bool,
    ) -> Result<(), DrawingErrorKind<Self::ErrorType>> {
        self.0.draw_circle(center, radius, style, fill)
    }

    fn fill_polygon<S: plotters_backend::BackendStyle, I: IntoIterator<Item = BackendCoord>>(
        &mut self,
        vert: I,
        style: &S,
    ) -> Result<(), DrawingErrorKind<Self::ErrorType>> {
        self.0.fill_polygon(vert, style)
    }

    fn blit_bitmap(
        &mut self,
        pos: BackendCoord,
        size: (u32, u32),
        src: &[u8],
    ) -> Result<(), DrawingErrorKind<Self::ErrorType>> {
        self.0.blit_bitmap(pos, size, src)
    }

    fn estimate_text_size<S: plotters_backend::BackendTextStyle>(
        &self,
        text: &str,
        style: &S,
    ) -> Result<(u32, u32), DrawingErrorKind<Self::ErrorType>> {
        self.0.estimate_text_size(text, style)
    }

    fn draw_text<S: plotters_backend::BackendTextStyle>(
        &mut self,
        text: &str,
        style: &S,
        pos: BackendCoord,
    ) -> Result<(), DrawingErrorKind<Self::ErrorType>> {
        use ab_glyph::{Font, ScaleFont};
        let color = style.color();
        if color.alpha == 0.0 || text.is_empty() {
            return Ok(());
        }
        let Some(font) = glyph_font() else {
            return self.0.draw_text(text, style, pos);
        };
        // Text box and anchor offsets exactly as plotters computes them.
        let ((min_x, min_y), (max_x, max_y)) = style
            .layout_box(text)
            .map_err(|e| DrawingErrorKind::FontError(Box::new(e)))?;
        let (width, height) = (max_x - min_x, max_y - min_y);
        let anchor = style.anchor();
        let dx = match anchor.h_pos {
            HPos::Left => 0,
            HPos::Right => -width,
            HPos::Center => -width / 2,
        };
        let dy = match anchor.v_pos {
            VPos::Top => 0,
            VPos::Center => -height / 2,
            VPos::Bottom => -height,
        };
        let trans = style.transform();
        let size = style.size() as f32;
        let scaled = font.as_scaled(size);
        let (w, h) = self.0.get_size();
        let mut pen = 0.0f32;
        let mut prev = None;
        for ch in text.chars() {
            let id = scaled.glyph_id(ch);
            if let Some(p) = prev {
                pen += scaled.kern(p, id);
            }
            prev = Some(id);
            let glyph = id.with_scale_and_position(size, ab_glyph::point(pen, 0.0));
            pen += scaled.h_advance(id);
            let Some(outline) = font.outline_glyph(glyph) else {
                continue; // blank glyph such as a space
            };
            let bounds = outline.px_bounds();
            let ox = bounds.min.x as i32;
            // baseline at half the font size below the box top, as in plotters
            let oy = (size / 2.0 + bounds.min.y) as i32;
            let mut result = Ok(());
            let inner = &mut self.0;
            outline.draw(|gx, gy, coverage| {
                if result.is_err() || coverage <= 0.0 {
                    return;
                }
                let (x, y) =
                    trans.transform(ox + gx as i32 + dx - min_x, oy + gy as i32 + dy - min_y);
                let (x, y) = (pos.0 + x, pos.1 + y);
                if x >= 0 && y >= 0 && x < w as i32 && y < h as i32 {
                    let c = BackendColor {
                        alpha: color.alpha * f64::from(coverage.min(1.0)),
                        rgb: color.rgb,
                    };
                    result = inner.draw_pixel((x, y), c);
                }
            });
            result?;
        }
        Ok(())
    }
}

// ---------------------------------------------------------------------------
// Colours and text styles
// ---------------------------------------------------------------------------

const BACKGROUND: RGBColor = RGBColor(255, 255, 255);
const TEXT: RGBColor = RGBColor(20, 20, 20);
const AXIS: RGBColor = RGBColor(40, 40, 40);
const GRID_BOLD: RGBColor = RGBColor(208, 208, 208);
const GRID_LIGHT: RGBColor = RGBColor(236, 236, 236);
const MARKER: RGBColor = RGBColor(70, 70, 70);
const POINT_MARKER: RGBColor = RGBColor(200, 0, 0);
const BAND_TINTS: [RGBColor; 2] = [RGBColor(255, 170, 40), RGBColor(60, 150, 255)];

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

fn palette(i: usize) -> RGBColor {
    PALETTE[i % PALETTE.len()]
}

const TITLE_PX: f64 = 22.0;
const PANEL_TITLE_PX: f64 = 18.0;
const DESC_PX: f64 = 16.0;
const TICK_PX: f64 = 13.0;
const LEGEND_PX: f64 = 13.0;
const NOTE_PX: f64 = 12.0;

fn text_style(px: f64) -> TextStyle<'static> {
    TextStyle::from((FAMILY, px).into_font()).color(&TEXT)
}

fn text_width<DB: DrawingBackend>(
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
fn put_text<DB: DrawingBackend>(
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
fn boxed_text<DB: DrawingBackend>(
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
fn box_size<DB: DrawingBackend>(
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

fn display_name(name: &str, index: usize) -> String {
    if name.is_empty() {
        format!("#{} (unnamed)", index + 1)
    } else {
        name.to_string()
    }
}

// ---------------------------------------------------------------------------
// Axes: tick positions and labels
// ---------------------------------------------------------------------------

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
struct Axis {
    lo: f64,
    hi: f64,
    log: bool,
    major: Vec<f64>,
    minor: Vec<f64>,
    format: LabelFormat,
    hide_labels: bool,
}

impl Axis {
    /// Builds an axis over `[lo, hi]` (axis units) with about `target` labelled ticks.
    fn numeric(lo: f64, hi: f64, log: bool, target: usize) -> Self {
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
    fn categories(names: &[String], max_labels: usize) -> Self {
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
    fn unit(&self, v: f64) -> f64 {
        if self.log { v.log10() } else { v }
    }

    /// Like [`Axis::unit`], but maps values at or below zero on a log axis far
    /// below the visible range, so that clipping puts them on the lower edge.
    fn unit_or_below(&self, v: f64) -> f64 {
        if self.log && v <= 0.0 {
            self.lo - 1e6 * (self.hi - self.lo)
        } else {
            self.unit(v)
        }
    }

    /// Fraction of the axis length at which `u` (axis units) lies; not clamped.
    fn frac(&self, u: f64) -> f64 {
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

    fn label(&self, u: f64) -> String {
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
fn padded(lo: f64, hi: f64, log: bool, pad: f64) -> (f64, f64) {
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

// ---------------------------------------------------------------------------
// Geometry: pixel frame and clipping
// ---------------------------------------------------------------------------

/// Pixel geometry of a plot area, consistent with the mapping plotters uses.
#[derive(Debug, Clone)]
struct Frame {
    x: Axis,
    y: Axis,
    /// Pixel x of the left and right ends of the x axis.
    left: f64,
    right: f64,
    /// Pixel y of the bottom and top ends of the y axis.
    bottom: f64,
    top: f64,
}

impl Frame {
    fn new(x: &Axis, y: &Axis, pixels: (std::ops::Range<i32>, std::ops::Range<i32>)) -> Self {
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
    fn norm(&self, u: f64, v: f64) -> (f64, f64) {
        (self.x.frac(u), self.y.frac(v))
    }

    fn px(&self, n: (f64, f64)) -> (i32, i32) {
        (
            (self.left + n.0 * (self.right - self.left)).round() as i32,
            (self.bottom + n.1 * (self.top - self.bottom)).round() as i32,
        )
    }

    fn px_x(&self, u: f64) -> i32 {
        (self.left + self.x.frac(u) * (self.right - self.left)).round() as i32
    }

    fn px_y(&self, v: f64) -> i32 {
        (self.bottom + self.y.frac(v) * (self.top - self.bottom)).round() as i32
    }

    fn left_px(&self) -> i32 {
        self.left as i32
    }
    fn right_px(&self) -> i32 {
        self.right as i32
    }
    fn top_px(&self) -> i32 {
        self.top as i32
    }
    fn bottom_px(&self) -> i32 {
        self.bottom as i32
    }

    /// Clips a polyline given in normalised coordinates to the unit square and
    /// returns the visible pieces in pixels.
    fn clip(&self, pts: &[(f64, f64)]) -> Vec<Vec<(i32, i32)>> {
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

/// Rectangles that must not overlap (for label placement).
#[derive(Default)]
struct Occupied(Vec<(i32, i32, i32, i32)>);

impl Occupied {
    fn free(&self, r: (i32, i32, i32, i32)) -> bool {
        self.0
            .iter()
            .all(|o| r.2 <= o.0 || o.2 <= r.0 || r.3 <= o.1 || o.3 <= r.1)
    }
    fn add(&mut self, r: (i32, i32, i32, i32)) {
        self.0.push(r);
    }
}

// ---------------------------------------------------------------------------
// Drawing helpers shared by the chart kinds
// ---------------------------------------------------------------------------

/// Draws a dashed straight line between two pixel points.
fn dashed_line<DB: DrawingBackend>(
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
enum Swatch {
    Bar,
    Line(SeriesStyle),
}

/// Width in pixels of the legend for `names` (0 when there is no legend).
fn legend_width<DB: DrawingBackend>(
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
fn draw_legend<DB: DrawingBackend>(
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

/// Draws a title centred in the band at the top of `area` and returns the rest.
fn with_title<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    title: &str,
    px: f64,
) -> Result<DrawingArea<DB, Shift>, PlotError> {
    if title.is_empty() {
        return Ok(area.clone());
    }
    let band = (px * 1.8).round() as u32;
    let (top, rest) = area.split_vertically(band);
    let (w, h) = top.dim_in_pixel();
    top.draw_text(
        title,
        &text_style(px).pos(Pos::new(HPos::Center, VPos::Center)),
        ((w / 2) as i32, (h / 2) as i32 + 2),
    )
    .map_err(be)?;
    Ok(rest)
}

/// Space reserved around the plot area.
#[derive(Debug, Clone, Copy)]
struct Layout {
    top: u32,
    right: u32,
    x_area: u32,
    y_area: u32,
}

const MARGIN: u32 = 12;

type Chart<'a, DB> = ChartContext<'a, DB, Cartesian2d<Axis, Axis>>;

fn build_chart<'a, DB: DrawingBackend>(
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

fn draw_mesh<DB: DrawingBackend>(
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
fn y_area_width<DB: DrawingBackend>(
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
fn x_area_height(show_labels: bool, has_desc: bool) -> u32 {
    match (show_labels, has_desc) {
        (true, true) => (TICK_PX + DESC_PX * 1.5 + 16.0) as u32,
        (true, false) => (TICK_PX + 16.0) as u32,
        (false, _) => 8,
    }
}

/// Checks an explicitly given axis range.
fn checked_range(
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
fn finite_range(r: (f64, f64), what: &str) -> Result<(f64, f64), PlotError> {
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
struct Extent(Option<(f64, f64)>);

impl Extent {
    fn add(&mut self, v: f64) {
        if v.is_finite() {
            self.0 = Some(match self.0 {
                None => (v, v),
                Some((a, b)) => (a.min(v), b.max(v)),
            });
        }
    }
    fn merge(&mut self, other: Extent) {
        if let Some((a, b)) = other.0 {
            self.add(a);
            self.add(b);
        }
    }
}

fn check_finite(v: f64, series: &str, index: usize, what: &'static str) -> Result<(), PlotError> {
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

fn check_log(
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

// ---------------------------------------------------------------------------
// Bar chart
// ---------------------------------------------------------------------------

struct BarFigure<'a> {
    chart: &'a BarChart,
    /// y range in axis units
    y_range: (f64, f64),
}

impl<'a> BarFigure<'a> {
    fn new(chart: &'a BarChart) -> Result<Self, PlotError> {
        check_size(chart.size, "picture")?;
        if chart.categories.is_empty() {
            return Err(PlotError::NoData("the bar chart has no categories".into()));
        }
        if chart.series.is_empty() {
            return Err(PlotError::NoData("the bar chart has no series".into()));
        }
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
                if chart.log_y {
                    if v > 0.0 {
                        ext.add(v.log10());
                    }
                } else {
                    ext.add(v);
                }
            }
        }
        let y_range = if chart.log_y {
            let Some((a, b)) = ext.0 else {
                return Err(PlotError::NoData(
                    "no value is above zero, so nothing can be shown on the logarithmic y axis"
                        .into(),
                ));
            };
            if b - a < 1e-9 {
                (a - 1.0, b + 0.3)
            } else {
                (a - 0.1 * (b - a).max(1.0), b + 0.06 * (b - a))
            }
        } else {
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
        };
        let y_range = finite_range(y_range, "y")?;
        Ok(BarFigure { chart, y_range })
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
            c.log_y,
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
        let base = if c.log_y {
            y.lo
        } else {
            0.0f64.clamp(y.lo, y.hi)
        };
        let py_base = frame.px_y(base);
        for (si, s) in c.series.iter().enumerate() {
            let color = palette(si);
            for (ci, &v) in s.values.iter().enumerate() {
                if c.log_y && v <= 0.0 {
                    continue;
                }
                let u0 = ci as f64 + (1.0 - group) / 2.0 + si as f64 * bar_w;
                let x0 = frame.px_x(u0);
                let x1 = frame.px_x(u0 + bar_w).max(x0 + 1);
                let yv = y.frac(y.unit(v)).clamp(0.0, 1.0);
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
        if !c.log_y && y.lo < 0.0 && y.hi > 0.0 {
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

// ---------------------------------------------------------------------------
// Line charts (single and stacked)
// ---------------------------------------------------------------------------

/// One validated line chart panel.
struct Panel<'a> {
    chart: &'a LineChart,
    /// y range in axis units
    y_range: (f64, f64),
}

/// One or more line chart panels sharing an x axis.
struct StackFigure<'a> {
    panels: Vec<Panel<'a>>,
    /// shared x range in axis units
    x_range: (f64, f64),
    log_x: bool,
    x_desc: &'a str,
    size: (u32, u32),
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
    fn new(charts: &'a [LineChart]) -> Result<Self, PlotError> {
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
                    padded(a, b, c.log_y, 0.05)
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
                padded(a, b, log_x, 0.0)
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
                    if piece.len() > 1 {
                        root.draw(&PathElement::new(piece, line_style))
                            .map_err(be)?;
                    }
                }
            }
            SeriesStyle::Dashed => {
                for piece in frame.clip(&norm) {
                    for w in piece.windows(2) {
                        dashed_line(root, w[0], w[1], line_style, 8.0, 5.0)?;
                    }
                }
            }
            SeriesStyle::Points => {}
        }
        if let Some(bars) = &s.error_bars {
            for (&(px, _), &(lo, hi)) in s.points.iter().zip(bars) {
                let u = x.unit(px);
                let a = frame.norm(u, y.unit_or_below(lo));
                let b = frame.norm(u, y.unit_or_below(hi));
                for piece in frame.clip(&[a, b]) {
                    if piece.len() > 1 {
                        root.draw(&PathElement::new(piece.clone(), color.stroke_width(1)))
                            .map_err(be)?;
                    }
                }
                for (end, n) in [(a, a.1), (b, b.1)] {
                    if (0.0..=1.0).contains(&end.0) && (0.0..=1.0).contains(&n) {
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
                    root.draw(&Circle::new(frame.px(n), 3, color.filled()))
                        .map_err(be)?;
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
        let candidates = [
            (cx + 7, cy - bh - 5),
            (cx - bw - 7, cy - bh - 5),
            (cx + 7, cy + 5),
            (cx - bw - 7, cy + 5),
            (cx - bw / 2, cy - bh - 10),
            (cx - bw / 2, cy + 10),
        ];
        let inside = |(lx, ly): (i32, i32)| {
            lx >= frame.left_px()
                && lx + bw <= frame.right_px()
                && ly >= frame.top_px()
                && ly + bh <= frame.bottom_px()
        };
        let pick = candidates
            .iter()
            .copied()
            .find(|&(lx, ly)| inside((lx, ly)) && occupied.free((lx, ly, lx + bw, ly + bh)))
            .or_else(|| candidates.iter().copied().find(|&c| inside(c)))
            .unwrap_or(candidates[0]);
        boxed_text(root, &p.label, NOTE_PX, pick, (bw, bh))?;
        occupied.add((pick.0, pick.1, pick.0 + bw, pick.1 + bh));
    }

    if c.series.iter().any(|s| !s.name.is_empty()) {
        draw_legend(root, &frame, &entries, legend_w)?;
    }
    Ok(())
}

// ---------------------------------------------------------------------------
// Heat map
// ---------------------------------------------------------------------------

/// Colour scale: a ramp through anchor colours chosen for this module (dark
/// blue, blue, cyan, green, yellow, orange, dark red), interpolated linearly.
fn colour_scale(t: f64) -> RGBColor {
    const ANCHORS: [(u8, u8, u8); 7] = [
        (24, 28, 96),
        (30, 92, 200),
        (32, 176, 204),
        (120, 204, 96),
        (248, 222, 48),
        (240, 128, 32),
        (160, 20, 24),
    ];
    let t = if t.is_finite() {
        t.clamp(0.0, 1.0)
    } else {
        0.0
    };
    let pos = t * (ANCHORS.len() - 1) as f64;
    let i = (pos.floor() as usize).min(ANCHORS.len() - 2);
    let f = pos - i as f64;
    let (a, b) = (ANCHORS[i], ANCHORS[i + 1]);
    let mix = |p: u8, q: u8| (p as f64 + f * (q as f64 - p as f64)).round() as u8;
    RGBColor(mix(a.0, b.0), mix(a.1, b.1), mix(a.2, b.2))
}

/// Number of distinct colours used for the cells (neighbouring cells with the
/// same quantised colour are merged into one rectangle).
const COLOUR_LEVELS: usize = 256;

struct HeatFigure<'a> {
    map: &'a HeatMap,
    x_edges: Vec<f64>,
    y_edges: Vec<f64>,
    z_range: (f64, f64),
}

/// Cell edges for strictly increasing cell centres.
fn cell_edges(c: &[f64]) -> Vec<f64> {
    if c.len() == 1 {
        let h = if c[0] == 0.0 { 0.5 } else { 0.05 * c[0].abs() };
        return vec![c[0] - h, c[0] + h];
    }
    let mut e = Vec::with_capacity(c.len() + 1);
    e.push(c[0] - 0.5 * (c[1] - c[0]));
    for w in c.windows(2) {
        e.push(0.5 * (w[0] + w[1]));
    }
    let n = c.len();
    e.push(c[n - 1] + 0.5 * (c[n - 1] - c[n - 2]));
    e
}

fn check_grid(v: &[f64], axis: &'static str) -> Result<(), PlotError> {
    let name = format!("{axis} grid");
    for (i, &g) in v.iter().enumerate() {
        check_finite(g, &name, i, "grid value")?;
        if i > 0 && g <= v[i - 1] {
            return Err(PlotError::InvalidData(format!(
                "the heat map {axis} grid must be strictly increasing, but value {i} ({g}) \
                 is not above value {} ({})",
                i - 1,
                v[i - 1]
            )));
        }
    }
    Ok(())
}

impl<'a> HeatFigure<'a> {
    fn new(map: &'a HeatMap) -> Result<Self, PlotError> {
        check_size(map.size, "picture")?;
        if map.x.is_empty() || map.y.is_empty() {
            return Err(PlotError::NoData("the heat map grid is empty".into()));
        }
        check_grid(&map.x, "x")?;
        check_grid(&map.y, "y")?;
        if map.z.len() != map.x.len() {
            return Err(PlotError::InvalidData(format!(
                "the heat map has {} x values but {} columns of z values",
                map.x.len(),
                map.z.len()
            )));
        }
        let mut ze = Extent(None);
        for (ix, col) in map.z.iter().enumerate() {
            if col.len() != map.y.len() {
                return Err(PlotError::InvalidData(format!(
                    "z column {ix} of the heat map has {} values but there are {} y values",
                    col.len(),
                    map.y.len()
                )));
            }
            for &v in col {
                ze.add(v);
            }
        }
        let z_range = match map.z_range {
            Some((a, b)) => {
                if !a.is_finite() || !b.is_finite() || a >= b {
                    return Err(PlotError::InvalidData(format!(
                        "the fixed colour range must be two finite numbers, low below high \
                         (got {a} to {b})"
                    )));
                }
                (a, b)
            }
            None => {
                let Some((a, b)) = ze.0 else {
                    return Err(PlotError::NoData(
                        "every value of the heat map is NaN or infinite".into(),
                    ));
                };
                if b - a > 1e-12 * a.abs().max(b.abs()) {
                    (a, b)
                } else {
                    padded(a, b, false, 0.0)
                }
            }
        };
        for (li, l) in map.lines.iter().enumerate() {
            let name = if l.label.is_empty() {
                format!("overlay line #{}", li + 1)
            } else {
                format!("overlay line '{}'", l.label)
            };
            for (i, &(x, y)) in l.points.iter().enumerate() {
                check_finite(x, &name, i, "x value")?;
                check_finite(y, &name, i, "y value")?;
            }
        }
        for (i, m) in map.y_markers.iter().enumerate() {
            check_finite(m.value, &format!("y marker '{}'", m.label), i, "position")?;
        }
        let x_edges = cell_edges(&map.x);
        let y_edges = cell_edges(&map.y);
        finite_range((x_edges[0], x_edges[x_edges.len() - 1]), "x grid")?;
        finite_range((y_edges[0], y_edges[y_edges.len() - 1]), "y grid")?;
        let z_range = finite_range(z_range, "z")?;
        Ok(HeatFigure {
            map,
            x_edges,
            y_edges,
            z_range,
        })
    }

    fn level(&self, z: f64) -> usize {
        let (a, b) = self.z_range;
        let t = ((z - a) / (b - a)).clamp(0.0, 1.0);
        ((t * COLOUR_LEVELS as f64) as usize).min(COLOUR_LEVELS - 1)
    }
}

fn level_colour(level: usize) -> RGBColor {
    colour_scale((level as f64 + 0.5) / COLOUR_LEVELS as f64)
}

impl Figure for HeatFigure<'_> {
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Result<(), PlotError> {
        let m = self.map;
        let area = with_title(root, &m.title, TITLE_PX)?;
        let (w, h) = area.dim_in_pixel();
        let x_area = x_area_height(true, !m.x_label.is_empty());
        let est_h = h.saturating_sub(2 * MARGIN + x_area).max(40);
        let (ya, yb) = (self.y_edges[0], self.y_edges[self.y_edges.len() - 1]);
        let y = Axis::numeric(ya, yb, false, (est_h / 50) as usize);
        let z_axis = Axis::numeric(self.z_range.0, self.z_range.1, false, (est_h / 50) as usize);
        let mut z_label_w = 0;
        for &t in &z_axis.major {
            z_label_w = z_label_w.max(text_width(root, &z_axis.label(t), TICK_PX)?);
        }
        let bar_gap = 22u32;
        let bar_w = 20u32;
        let z_desc_w = if m.z_label.is_empty() {
            0
        } else {
            (DESC_PX * 1.6) as u32
        };
        let colour_bar_w = bar_gap + bar_w + 8 + z_label_w + 8 + z_desc_w;
        let y_area = y_area_width(root, &y, &m.y_label)?;
        let est_w = w.saturating_sub(2 * MARGIN + y_area + colour_bar_w).max(50);
        let (xa, xb) = (self.x_edges[0], self.x_edges[self.x_edges.len() - 1]);
        let x = Axis::numeric(xa, xb, false, (est_w / 95).max(2) as usize);
        let layout = Layout {
            top: MARGIN + 4,
            right: MARGIN + colour_bar_w,
            x_area,
            y_area,
        };
        let mut chart = build_chart(&area, &x, &y, layout)?;
        draw_mesh(&mut chart, &m.x_label, &m.y_label, false, false)?;
        let frame = Frame::new(&x, &y, chart.plotting_area().get_pixel_range());

        // Cells: pixel edges are rounded once so that neighbours share them;
        // cells thinner than a pixel disappear (nearest-cell sampling).
        let xe: Vec<i32> = self.x_edges.iter().map(|&e| frame.px_x(e)).collect();
        let ye: Vec<i32> = self.y_edges.iter().map(|&e| frame.px_y(e)).collect();
        for (ix, col) in m.z.iter().enumerate() {
            let (x0, x1) = (xe[ix], xe[ix + 1]);
            if x1 <= x0 {
                continue;
            }
            // runs of equal colour along y
            let mut run: Option<(usize, i32, i32)> = None; // (level, y_bottom, y_top)
            let flush = |run: Option<(usize, i32, i32)>| -> Result<(), PlotError> {
                if let Some((lev, yb, yt)) = run {
                    root.draw(&Rectangle::new(
                        [(x0, yt), (x1, yb)],
                        level_colour(lev).filled(),
                    ))
                    .map_err(be)?;
                }
                Ok(())
            };
            for (iy, &v) in col.iter().enumerate() {
                let (yb, yt) = (ye[iy], ye[iy + 1]);
                if yt >= yb {
                    continue;
                }
                if !v.is_finite() {
                    flush(run.take())?;
                    continue;
                }
                let lev = self.level(v);
                run = match run {
                    Some((l, rb, _)) if l == lev => Some((l, rb, yt)),
                    other => {
                        flush(other)?;
                        Some((lev, yb, yt))
                    }
                };
            }
            flush(run)?;
        }
        root.draw(&Rectangle::new(
            [
                (frame.left_px(), frame.top_px()),
                (frame.right_px(), frame.bottom_px()),
            ],
            AXIS.stroke_width(1),
        ))
        .map_err(be)?;

        let mut occupied = Occupied::default();
        // Horizontal marker lines.
        for mk in &m.y_markers {
            let f = y.frac(mk.value);
            if !(0.0..=1.0).contains(&f) {
                continue;
            }
            let py = frame.px((0.0, f)).1;
            let (l, r) = (frame.left_px(), frame.right_px());
            root.draw(&PathElement::new(
                vec![(l, py), (r, py)],
                RGBColor(0, 0, 0).stroke_width(3),
            ))
            .map_err(be)?;
            dashed_line(root, (l, py), (r, py), BACKGROUND.stroke_width(1), 7.0, 4.0)?;
            if !mk.label.is_empty() {
                let (bw, bh) = box_size(root, &mk.label, NOTE_PX)?;
                let lx = r - bw - 6;
                let ly = if py - bh - 3 >= frame.top_px() {
                    py - bh - 3
                } else {
                    py + 3
                };
                boxed_text(root, &mk.label, NOTE_PX, (lx, ly), (bw, bh))?;
                occupied.add((lx, ly, lx + bw, ly + bh));
            }
        }
        // Overlaid polylines with a dark halo so that they show on any colour.
        for l in &m.lines {
            let norm: Vec<(f64, f64)> = l.points.iter().map(|&(a, b)| frame.norm(a, b)).collect();
            let pieces = frame.clip(&norm);
            for piece in &pieces {
                if piece.len() > 1 {
                    root.draw(&PathElement::new(
                        piece.clone(),
                        RGBColor(0, 0, 0).stroke_width(3),
                    ))
                    .map_err(be)?;
                    root.draw(&PathElement::new(piece.clone(), BACKGROUND.stroke_width(1)))
                        .map_err(be)?;
                }
            }
            if l.label.is_empty() {
                continue;
            }
            let Some(&(ex, ey)) = pieces.iter().rev().find_map(|p| p.last()) else {
                continue;
            };
            let (bw, bh) = box_size(root, &l.label, NOTE_PX)?;
            let candidates = [
                (ex - bw - 4, ey + 4),
                (ex - bw - 4, ey - bh - 4),
                (ex + 4, ey + 4),
                (ex + 4, ey - bh - 4),
                (ex - bw / 2, ey + 10),
            ];
            let clamp = |(lx, ly): (i32, i32)| {
                (
                    lx.clamp(
                        frame.left_px() + 2,
                        (frame.right_px() - bw - 2).max(frame.left_px()),
                    ),
                    ly.clamp(
                        frame.top_px() + 2,
                        (frame.bottom_px() - bh - 2).max(frame.top_px()),
                    ),
                )
            };
            let pick = candidates
                .iter()
                .map(|&c| clamp(c))
                .find(|&(lx, ly)| occupied.free((lx, ly, lx + bw, ly + bh)))
                .unwrap_or_else(|| clamp(candidates[0]));
            boxed_text(root, &l.label, NOTE_PX, pick, (bw, bh))?;
            occupied.add((pick.0, pick.1, pick.0 + bw, pick.1 + bh));
        }

        // Colour bar.
        let bx0 = frame.right_px() + bar_gap as i32;
        let bx1 = bx0 + bar_w as i32;
        let (top, bottom) = (frame.top_px(), frame.bottom_px());
        let height = (bottom - top).max(1);
        let mut prev: Option<(usize, i32)> = None; // (level, start row)
        for row in top..=bottom + 1 {
            let lev = if row <= bottom {
                let t = (bottom - row) as f64 / height as f64;
                Some(((t * COLOUR_LEVELS as f64) as usize).min(COLOUR_LEVELS - 1))
            } else {
                None
            };
            match (prev, lev) {
                (Some((pl, _)), Some(l)) if pl == l => {}
                (p, l) => {
                    if let Some((pl, start)) = p {
                        root.draw(&Rectangle::new(
                            [(bx0, start), (bx1, row)],
                            level_colour(pl).filled(),
                        ))
                        .map_err(be)?;
                    }
                    prev = l.map(|l| (l, row));
                }
            }
        }
        root.draw(&Rectangle::new(
            [(bx0, top), (bx1, bottom)],
            AXIS.stroke_width(1),
        ))
        .map_err(be)?;
        let zmap = |v: f64| -> i32 {
            let t = (v - self.z_range.0) / (self.z_range.1 - self.z_range.0);
            (bottom as f64 - t * (bottom - top) as f64).round() as i32
        };
        for &t in &z_axis.major {
            let py = zmap(t);
            if py < top - 1 || py > bottom + 1 {
                continue;
            }
            root.draw(&PathElement::new(
                vec![(bx1, py), (bx1 + 5, py)],
                AXIS.stroke_width(1),
            ))
            .map_err(be)?;
            put_text(
                root,
                &z_axis.label(t),
                TICK_PX,
                (bx1 + 8, py),
                (HPos::Left, VPos::Center),
            )?;
        }
        if !m.z_label.is_empty() {
            let style = text_style(DESC_PX)
                .transform(FontTransform::Rotate270)
                .pos(Pos::new(HPos::Center, VPos::Center));
            let cx = bx1 + 8 + z_label_w as i32 + 8 + (DESC_PX * 0.6) as i32;
            root.draw_text(&m.z_label, &style, (cx, (top + bottom) / 2))
                .map_err(be)?;
        }
        Ok(())
    }
}

// ---------------------------------------------------------------------------
// Tests
// ---------------------------------------------------------------------------

#[cfg(test)]
mod tests {
    use super::*;
    use std::sync::atomic::{AtomicUsize, Ordering};

    /// A fresh, empty directory under the system temporary directory.
    struct TempDir(PathBuf);

    impl TempDir {
        fn new(tag: &str) -> Self {
            static COUNTER: AtomicUsize = AtomicUsize::new(0);
            let n = COUNTER.fetch_add(1, Ordering::Relaxed);
            let nanos = std::time::SystemTime::now()
                .duration_since(std::time::UNIX_EPOCH)
                .map(|d| d.as_nanos())
                .unwrap_or(0);
            let dir = std::env::temp_dir().join(format!(
                "ripline-plot-{tag}-{}-{n}-{nanos}",
                std::process::id()
            ));
            std::fs::create_dir_all(&dir).expect("create temp dir");
            TempDir(dir)
        }
        fn path(&self, name: &str) -> PathBuf {
            self.0.join(name)
        }
        fn is_empty(&self) -> bool {
            std::fs::read_dir(&self.0)
                .expect("read temp dir")
                .next()
                .is_none()
        }
    }

    impl Drop for TempDir {
        fn drop(&mut self) {
            let _ = std::fs::remove_dir_all(&self.0);
        }
    }

    const SIZE: (u32, u32) = (640, 400);

    fn bar_chart() -> BarChart {
        BarChart {
            title: "Harmonic amplitudes".into(),
            x_label: "harmonic".into(),
            y_label: "amplitude [bar]".into(),
            categories: (1..=6).map(|k| k.to_string()).collect(),
            series: vec![
                Series {
                    name: "outlet".into(),
                    values: vec![3.0, 1.2, 0.6, 0.3, 0.15, 0.0],
                },
                Series {
                    name: "inlet".into(),
                    values: vec![1.0, 0.5, 0.2, 0.1, 0.05, 0.02],
                },
            ],
            log_y: false,
            size: SIZE,
        }
    }

    fn line_chart_data() -> LineChart {
        let pts: Vec<(f64, f64)> = (1..=60)
            .map(|i| {
                let f = 10.0 * i as f64;
                (f, 1.0 + 5.0 / (1.0 + ((f - 300.0) / 20.0).powi(2)))
            })
            .collect();
        let bars = pts.iter().map(|&(_, y)| (0.9 * y, 1.1 * y)).collect();
        LineChart {
            title: "Frequency response".into(),
            x_label: "frequency [Hz]".into(),
            y_label: "|p| [bar]".into(),
            series: vec![XySeries {
                name: "model".into(),
                points: pts,
                error_bars: Some(bars),
                style: SeriesStyle::LineAndPoints,
                color: None,
            }],
            log_x: true,
            log_y: true,
            x_markers: vec![Marker {
                value: 300.0,
                label: "f₁ = 300 Hz".into(),
            }],
            y_markers: vec![Marker {
                value: 2.0,
                label: "limit".into(),
            }],
            point_markers: vec![PointMarker {
                x: 300.0,
                y: 6.0,
                label: "peak".into(),
            }],
            x_bands: vec![Band {
                from: 100.0,
                to: 200.0,
                label: "operating range".into(),
            }],
            size: SIZE,
            ..LineChart::default()
        }
    }

    fn heat_map_data() -> HeatMap {
        let x: Vec<f64> = (0..20).map(|i| 1000.0 + 100.0 * i as f64).collect();
        let y: Vec<f64> = (0..40).map(|j| 10.0 * j as f64).collect();
        let z = x
            .iter()
            .map(|&sx| {
                y.iter()
                    .map(|&fy| {
                        if fy == 50.0 {
                            f64::NAN
                        } else {
                            (sx / 100.0 + fy / 10.0).sin() * 20.0 + 100.0
                        }
                    })
                    .collect()
            })
            .collect();
        HeatMap {
            title: "Speed map".into(),
            x_label: "speed [rpm]".into(),
            y_label: "frequency [Hz]".into(),
            z_label: "level [dB]".into(),
            x,
            y,
            z,
            lines: vec![Polyline {
                label: "order 9".into(),
                points: vec![(1000.0, 150.0), (2900.0, 435.0)],
            }],
            y_markers: vec![Marker {
                value: 200.0,
                label: "resonance".into(),
            }],
            size: SIZE,
            ..HeatMap::default()
        }
    }

    /// Checks the PNG signature and the IHDR size.
    fn assert_png(path: &Path, size: (u32, u32)) {
        let bytes = std::fs::read(path).expect("read png");
        assert!(bytes.len() > 33, "png too short");
        assert_eq!(&bytes[..8], b"\x89PNG\r\n\x1a\n", "PNG signature");
        assert_eq!(&bytes[12..16], b"IHDR");
        let w = u32::from_be_bytes(bytes[16..20].try_into().unwrap());
        let h = u32::from_be_bytes(bytes[20..24].try_into().unwrap());
        assert_eq!((w, h), size);
    }

    fn assert_svg(path: &Path, title: &str) {
        let text = std::fs::read_to_string(path).expect("read svg");
        assert!(text.starts_with("<svg"), "svg header");
        assert!(text.contains(title), "svg contains the title");
        assert!(
            !text.contains("NaN") && !text.contains("inf"),
            "no NaN/inf in svg"
        );
    }

    #[test]
    fn bar_chart_renders_svg_and_png() {
        let dir = TempDir::new("bar");
        let mut c = bar_chart();
        grouped_bar_chart(&dir.path("bars.svg"), &c).unwrap();
        assert_svg(&dir.path("bars.svg"), "Harmonic amplitudes");
        grouped_bar_chart(&dir.path("bars.PNG"), &c).unwrap();
        assert_png(&dir.path("bars.PNG"), SIZE);
        c.log_y = true;
        grouped_bar_chart(&dir.path("bars-log.png"), &c).unwrap();
        assert_png(&dir.path("bars-log.png"), SIZE);
    }

    #[test]
    fn line_chart_renders_svg_and_png() {
        let dir = TempDir::new("line");
        let c = line_chart_data();
        line_chart(&dir.path("line.svg"), &c).unwrap();
        assert_svg(&dir.path("line.svg"), "Frequency response");
        assert_svg(&dir.path("line.svg"), "operating range");
        line_chart(&dir.path("line.png"), &c).unwrap();
        assert_png(&dir.path("line.png"), SIZE);
    }

    #[test]
    fn stacked_line_charts_render_svg_and_png() {
        let dir = TempDir::new("stack");
        let amp = line_chart_data();
        let phase = LineChart {
            title: "Phase".into(),
            y_label: "phase [°]".into(),
            series: vec![XySeries {
                name: "model".into(),
                points: (1..=60)
                    .map(|i| (10.0 * i as f64, -3.0 * i as f64))
                    .collect(),
                style: SeriesStyle::Dashed,
                ..XySeries::default()
            }],
            log_x: true,
            y_range: Some((-180.0, 180.0)),
            size: SIZE,
            ..LineChart::default()
        };
        let panels = [amp, phase];
        stacked_line_charts(&dir.path("stack.svg"), &panels).unwrap();
        assert_svg(&dir.path("stack.svg"), "Phase");
        stacked_line_charts(&dir.path("stack.png"), &panels).unwrap();
        assert_png(&dir.path("stack.png"), (SIZE.0, 2 * SIZE.1));
    }

    #[test]
    fn heat_map_renders_svg_and_png() {
        let dir = TempDir::new("heat");
        let m = heat_map_data();
        heat_map(&dir.path("heat.svg"), &m).unwrap();
        assert_svg(&dir.path("heat.svg"), "Speed map");
        heat_map(&dir.path("heat.png"), &m).unwrap();
        assert_png(&dir.path("heat.png"), SIZE);
    }

    #[test]
    fn bad_extension_errors_and_writes_nothing() {
        let dir = TempDir::new("ext");
        for name in ["chart.pdf", "chart", "chart.svg.tmp"] {
            let p = dir.path(name);
            let e = grouped_bar_chart(&p, &bar_chart()).unwrap_err();
            assert!(matches!(e, PlotError::UnsupportedExtension { .. }), "{e}");
            let msg = e.to_string();
            assert!(
                msg.contains(name) && msg.contains(".svg") && msg.contains(".png"),
                "{msg}"
            );
            assert!(line_chart(&p, &line_chart_data()).is_err());
            assert!(stacked_line_charts(&p, &[line_chart_data()]).is_err());
            assert!(heat_map(&p, &heat_map_data()).is_err());
        }
        assert!(dir.is_empty());
    }

    #[test]
    fn nan_errors_name_the_series_and_write_nothing() {
        let dir = TempDir::new("nan");
        let mut b = bar_chart();
        b.series[1].values[2] = f64::NAN;
        let e = grouped_bar_chart(&dir.path("b.png"), &b).unwrap_err();
        match &e {
            PlotError::NonFinite { series, index, .. } => {
                assert_eq!((series.as_str(), *index), ("inlet", 2));
            }
            other => panic!("unexpected error {other}"),
        }
        assert!(e.to_string().contains("'inlet'") && e.to_string().contains("index 2"));

        let mut l = line_chart_data();
        l.series[0].points[5].1 = f64::INFINITY;
        let e = line_chart(&dir.path("l.svg"), &l).unwrap_err();
        assert!(
            matches!(&e, PlotError::NonFinite { series, index: 5, .. } if series == "model"),
            "{e}"
        );
        let mut l = line_chart_data();
        l.series[0].error_bars.as_mut().unwrap()[3].0 = f64::NAN;
        let e = line_chart(&dir.path("l.svg"), &l).unwrap_err();
        assert!(
            e.to_string()
                .contains("error bar low end of series 'model' at index 3"),
            "{e}"
        );

        let mut h = heat_map_data();
        h.lines[0].points[1].0 = f64::NAN;
        let e = heat_map(&dir.path("h.png"), &h).unwrap_err();
        assert!(e.to_string().contains("order 9"), "{e}");
        assert!(dir.is_empty());
    }

    #[test]
    fn invalid_data_is_rejected() {
        let dir = TempDir::new("invalid");
        let p = dir.path("x.svg");
        let mut b = bar_chart();
        b.series[0].values.pop();
        assert!(matches!(
            grouped_bar_chart(&p, &b),
            Err(PlotError::InvalidData(_))
        ));
        let b = BarChart {
            categories: vec!["1".into()],
            ..BarChart::default()
        };
        assert!(matches!(
            grouped_bar_chart(&p, &b),
            Err(PlotError::NoData(_))
        ));

        let mut l = line_chart_data();
        l.series[0].points[0].0 = 0.0;
        assert!(matches!(
            line_chart(&p, &l),
            Err(PlotError::NonPositiveOnLogAxis {
                axis: "x",
                index: 0,
                ..
            })
        ));
        assert!(matches!(
            line_chart(&p, &LineChart::default()),
            Err(PlotError::NoData(_))
        ));
        let mut l = line_chart_data();
        l.size = (10, 10);
        assert!(matches!(line_chart(&p, &l), Err(PlotError::InvalidData(_))));
        let mut l = line_chart_data();
        l.y_range = Some((5.0, 1.0));
        assert!(matches!(line_chart(&p, &l), Err(PlotError::InvalidData(_))));
        let mut lin = line_chart_data();
        lin.log_x = false;
        assert!(matches!(
            stacked_line_charts(&p, &[line_chart_data(), lin]),
            Err(PlotError::InvalidData(_))
        ));

        let mut h = heat_map_data();
        h.y.swap(0, 1);
        assert!(matches!(heat_map(&p, &h), Err(PlotError::InvalidData(_))));
        let mut h = heat_map_data();
        for col in &mut h.z {
            col.iter_mut().for_each(|v| *v = f64::NAN);
        }
        assert!(matches!(heat_map(&p, &h), Err(PlotError::NoData(_))));
        assert!(dir.is_empty());
    }

    #[test]
    fn huge_values_are_rejected_not_drawn() {
        let dir = TempDir::new("huge");
        let p = dir.path("x.png");
        let l = LineChart {
            series: vec![XySeries {
                name: "big".into(),
                points: vec![(0.0, -1.5e308), (1.0, 1.5e308)],
                ..XySeries::default()
            }],
            ..LineChart::default()
        };
        assert!(matches!(line_chart(&p, &l), Err(PlotError::InvalidData(_))));
        let h = HeatMap {
            x: vec![-1e308, 1e308],
            y: vec![0.0],
            z: vec![vec![1.0], vec![2.0]],
            ..HeatMap::default()
        };
        assert!(matches!(heat_map(&p, &h), Err(PlotError::InvalidData(_))));
        // large but representable values are fine
        let l = LineChart {
            series: vec![XySeries {
                name: "big".into(),
                points: vec![(0.0, -1e300), (1.0, 1e300)],
                ..XySeries::default()
            }],
            ..LineChart::default()
        };
        line_chart(&p, &l).unwrap();
        assert_png(&p, DEFAULT_SIZE);
    }

    #[test]
    fn unwritable_path_is_an_io_error() {
        let dir = TempDir::new("io");
        let missing = dir.path("no-such-dir");
        let e = grouped_bar_chart(&missing.join("a.svg"), &bar_chart()).unwrap_err();
        assert!(matches!(e, PlotError::Io { .. }), "{e}");
        let e = grouped_bar_chart(&missing.join("a.png"), &bar_chart()).unwrap_err();
        assert!(matches!(e, PlotError::Io { .. }), "{e}");
    }

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
