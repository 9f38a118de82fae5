//! Output: the embedded font, the in-memory drawing of a figure as SVG, its
//! rasterisation to PNG (resvg, anti-aliased, embedded font only), the file
//! write and the picture size limits.

use std::path::Path;
use std::sync::OnceLock;

use std::sync::Arc;

use plotters::coord::Shift;
use plotters::drawing::{DrawingArea, IntoDrawingArea};
use plotters::prelude::{DrawingBackend, SVGBackend};
use plotters::style::{FontStyle, register_font};
use resvg::usvg::fontdb;
use resvg::{tiny_skia, usvg};

use super::frame::BACKGROUND;
use super::{MAX_DIMENSION, MIN_SIZE, OutputFormat, PlotError};

/// The embedded font (a DejaVu Sans subset, see `assets/fonts/README.md`).
const FONT_BYTES: &[u8] = include_bytes!("../../assets/fonts/DejaVuSans-subset.ttf");

/// Family name of the embedded font.
const FONT_NAME: &str = "DejaVu Sans";

/// Font family under which the embedded font is registered with plotters. It is
/// written as is into the SVG `font-family` attribute: the embedded font first,
/// then the generic family for viewers without it.
pub(super) const FAMILY: &str = "DejaVu Sans, sans-serif";

/// A validated chart that can draw itself on any plotters backend.
pub(super) trait Figure {
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> Result<(), PlotError>;
}

/// Converts any plotters error into [`PlotError::Backend`].
pub(super) fn be<E: std::fmt::Display>(e: E) -> PlotError {
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

pub(super) fn check_size(size: (u32, u32), what: &str) -> Result<(), PlotError> {
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

/// Draws `fig` as an SVG document in memory.
pub(super) fn svg_string<F: Figure>(size: (u32, u32), fig: &F) -> Result<String, PlotError> {
    ensure_font()?;
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, size).into_drawing_area();
        root.fill(&BACKGROUND).map_err(be)?;
        fig.draw(&root)?;
        root.present().map_err(be)?;
    }
    Ok(svg)
}

/// The font database for rasterising: the embedded font only, also answering
/// for the generic family `sans-serif`. No system font folder is read.
fn font_db() -> Result<&'static Arc<fontdb::Database>, PlotError> {
    static DB: OnceLock<Result<Arc<fontdb::Database>, String>> = OnceLock::new();
    DB.get_or_init(|| {
        let mut db = fontdb::Database::new();
        db.load_font_data(FONT_BYTES.to_vec());
        let family = db
            .faces()
            .next()
            .and_then(|f| f.families.first())
            .map(|(name, _)| name.clone())
            .ok_or_else(|| "the embedded font could not be loaded".to_string())?;
        db.set_sans_serif_family(family);
        Ok(Arc::new(db))
    })
    .as_ref()
    .map_err(|e| PlotError::Backend(e.clone()))
}

/// Rasterises an SVG document (a chart or a schematic of this module) to PNG
/// bytes, anti-aliased, with the embedded font; text in any other font family
/// falls back to it. External files and images are never loaded.
pub fn svg_to_png(svg: &str) -> Result<Vec<u8>, PlotError> {
    let db = font_db()?;
    let options = usvg::Options {
        font_family: FONT_NAME.to_string(),
        fontdb: Arc::clone(db),
        // the charts never reference files; refuse any that might appear
        resources_dir: None,
        image_href_resolver: usvg::ImageHrefResolver {
            resolve_data: Box::new(|_, _, _| None),
            resolve_string: Box::new(|_, _| None),
        },
        ..usvg::Options::default()
    };
    let tree = usvg::Tree::from_str(svg, &options).map_err(be)?;
    let size = tree.size().to_int_size();
    let mut pixmap = tiny_skia::Pixmap::new(size.width(), size.height())
        .ok_or_else(|| PlotError::Backend("the picture has no pixels".into()))?;
    pixmap.fill(tiny_skia::Color::WHITE);
    resvg::render(
        &tree,
        tiny_skia::Transform::identity(),
        &mut pixmap.as_mut(),
    );
    pixmap.encode_png().map_err(be)
}

/// Draws `fig` in memory and then writes the file. No file is created when
/// drawing fails.
pub(super) fn render<F: Figure>(
    path: &Path,
    format: OutputFormat,
    size: (u32, u32),
    fig: &F,
) -> Result<(), PlotError> {
    let svg = svg_string(size, fig)?;
    let bytes = match format {
        OutputFormat::Svg => svg.into_bytes(),
        OutputFormat::Png => svg_to_png(&svg)?,
    };
    std::fs::write(path, bytes).map_err(|source| {
        // do not leave a partly written file behind
        let _ = std::fs::remove_file(path);
        PlotError::Io {
            path: path.to_path_buf(),
            source,
        }
    })
}
