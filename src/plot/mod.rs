//! Chart rendering to SVG and PNG files.
//!
//! This module turns plain data (numbers and strings, no physical units attached)
//! into three kinds of charts:
//!
//! * [`grouped_bar_chart`]: one group of bars per category (e.g. per harmonic),
//!   one bar per series inside each group;
//! * [`line_chart`] and [`stacked_line_charts`]: x/y curves with optional
//!   logarithmic axes, vertical marker lines, labelled points, shaded x bands,
//!   shaded y bands around a curve (a filled polygon) and error bars;
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

mod axis;
mod bars;
mod check;
mod frame;
mod heatmap;
mod lines;
mod render;
mod schematic;
#[cfg(test)]
mod tests;

use bars::BarFigure;
use heatmap::HeatFigure;
use lines::StackFigure;
pub use render::svg_to_png;
use render::{render, svg_string};
pub use schematic::{SchematicLayout, schematic_layout, schematic_svg};

/// Default picture size in pixels (width, height).
pub const DEFAULT_SIZE: (u32, u32) = (1000, 600);

/// Smallest accepted picture (or stacked panel) size in pixels.
pub const MIN_SIZE: (u32, u32) = (200, 150);

/// Largest accepted picture width or height in pixels.
pub const MAX_DIMENSION: u32 = 8192;

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
    /// Optional uncertainty band of each bar: one (low, high) pair per
    /// category, drawn as a shaded box with a whisker across the bar (on a
    /// logarithmic or decibel axis a low end at or below zero reaches the
    /// bottom of the plot).
    pub bands: Option<Vec<(f64, f64)>>,
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
    /// no bar at all; at least one value must be positive. The axis spans at
    /// most [`BAR_DYNAMIC_RANGE_DB`] below the largest value; smaller values
    /// show as no bar.
    pub log_y: bool,
    /// Value axis in decibels: each value `v` is drawn as `20·log10(v / ref)`
    /// with `ref` this reference (same unit as the values, positive), bars
    /// rising from the bottom of the axis. Overrides `log_y`; zero or negative
    /// values and those more than [`BAR_DYNAMIC_RANGE_DB`] below the largest
    /// show as no bar. The caller names the reference in `y_label`.
    pub db_ref: Option<f64>,
    /// Picture size in pixels (width, height).
    pub size: (u32, u32),
}

/// Range of a logarithmic or decibel bar axis below its largest value, in dB
/// (5 decades of amplitude).
pub const BAR_DYNAMIC_RANGE_DB: f64 = 100.0;

impl Default for BarChart {
    fn default() -> Self {
        Self {
            title: String::new(),
            x_label: String::new(),
            y_label: String::new(),
            categories: Vec::new(),
            series: Vec::new(),
            log_y: false,
            db_ref: None,
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
    /// Optional shaded band around the curve (e.g. an uncertainty band): one
    /// (low, high) pair of y values per point, filled between the two in the
    /// series' colour, translucent, behind the curves. On a logarithmic y
    /// axis a low end at or below zero reaches the bottom of the plot.
    pub band: Option<Vec<(f64, f64)>>,
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
    /// Lowest value the quantity can take, e.g. `Some(0.0)` for an amplitude:
    /// the automatic y range does not reach below it and error bars are cut
    /// there (a cut end is drawn without its cap). Data below it are an error.
    pub y_floor: Option<f64>,
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
            y_floor: None,
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

/// The grouped bar chart of [`grouped_bar_chart`] as an SVG document in a
/// string (for embedding, e.g. in an HTML report).
pub fn grouped_bar_chart_svg(chart: &BarChart) -> Result<String, PlotError> {
    svg_string(chart.size, &BarFigure::new(chart)?)
}

/// The line chart of [`line_chart`] as an SVG document in a string.
pub fn line_chart_svg(chart: &LineChart) -> Result<String, PlotError> {
    let fig = StackFigure::new(std::slice::from_ref(chart))?;
    svg_string(fig.size, &fig)
}

/// The stacked line charts of [`stacked_line_charts`] as an SVG document in a
/// string.
pub fn stacked_line_charts_svg(charts: &[LineChart]) -> Result<String, PlotError> {
    let fig = StackFigure::new(charts)?;
    svg_string(fig.size, &fig)
}

/// The heat map of [`heat_map`] as an SVG document in a string.
pub fn heat_map_svg(map: &HeatMap) -> Result<String, PlotError> {
    svg_string(map.size, &HeatFigure::new(map)?)
}

/// The colour series `i` takes when it sets none, as red, green, blue (for
/// drawing related series in one colour).
pub fn series_color(i: usize) -> [u8; 3] {
    let c = frame::palette(i);
    [c.0, c.1, c.2]
}
