//! Output: the embedded font, the in-memory drawing of a figure and the file
//! write, the PNG text rasteriser and the picture size limits.

use std::path::Path;
use std::sync::OnceLock;

use plotters::coord::Shift;
use plotters::drawing::{DrawingArea, IntoDrawingArea};
use plotters::prelude::{BitMapBackend, DrawingBackend, SVGBackend};
use plotters::style::text_anchor::{HPos, VPos};
use plotters::style::{FontStyle, register_font};
use plotters_backend::{BackendColor, BackendCoord, DrawingErrorKind};

use super::frame::BACKGROUND;
use super::{MAX_DIMENSION, MIN_SIZE, OutputFormat, PlotError};

/// The embedded font (a DejaVu Sans subset, see `assets/fonts/README.md`).
const FONT_BYTES: &[u8] = include_bytes!("../../assets/fonts/DejaVuSans-subset.ttf");

/// Font family name under which the embedded font is registered with plotters.
pub(super) const FAMILY: &str = "sans-serif";

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

/// Draws `fig` in memory and then writes the file. No file is created when
/// drawing fails.
pub(super) fn render<F: Figure>(
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
