//! Heat map: validation, colour scale, cells, overlays and the colour bar.

use plotters::coord::Shift;
use plotters::drawing::DrawingArea;
use plotters::element::{PathElement, Rectangle};
use plotters::prelude::DrawingBackend;
use plotters::style::text_anchor::{HPos, Pos, VPos};
use plotters::style::{Color, FontTransform, RGBColor};

use super::axis::{Axis, padded};
use super::check::{Extent, check_finite, finite_range};
use super::frame::{
    AXIS, BACKGROUND, DESC_PX, Frame, Layout, MARGIN, MARKER, NOTE_PX, Occupied, TICK_PX, TITLE_PX,
    box_size, boxed_text, build_chart, dashed_line, draw_mesh, put_text, text_style, text_width,
    with_title, x_area_height, y_area_width,
};
use super::render::{Figure, be, check_size};
use super::{HeatMap, PlotError};

/// Colour scale: viridis, a perceptually uniform scale that also reads in
/// grey and for the common colour-vision deficiencies (the `colorous` crate's
/// `VIRIDIS`, ported from d3-scale-chromatic). `t` runs from 0 (low) to 1.
fn colour_scale(t: f64) -> RGBColor {
    let t = if t.is_finite() {
        t.clamp(0.0, 1.0)
    } else {
        0.0
    };
    let c = colorous::VIRIDIS.eval_continuous(t);
    RGBColor(c.r, c.g, c.b)
}

/// Number of distinct colours used for the cells (neighbouring cells with the
/// same quantised colour are merged into one rectangle).
const COLOUR_LEVELS: usize = 256;

pub(super) struct HeatFigure<'a> {
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
    pub(super) fn new(map: &'a HeatMap) -> Result<Self, PlotError> {
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
        let mut unlabelled = 0usize;
        // Horizontal marker lines: thin and light, so that many of them do not
        // hide the colours; their labels are placed first at the right end.
        let mut marker_rows: Vec<(i32, &str)> = Vec::new();
        for mk in &m.y_markers {
            let f = y.frac(mk.value);
            if !(0.0..=1.0).contains(&f) {
                continue;
            }
            let py = frame.px((0.0, f)).1;
            let (l, r) = (frame.left_px(), frame.right_px());
            dashed_line(
                root,
                (l, py),
                (r, py),
                MARKER.mix(0.8).stroke_width(1),
                6.0,
                5.0,
            )?;
            marker_rows.push((py, &mk.label));
        }
        // Overlaid polylines: a light line with a faint dark edge, so that
        // they show on any colour without covering it.
        let mut line_ends = Vec::new();
        for l in &m.lines {
            let norm: Vec<(f64, f64)> = l.points.iter().map(|&(a, b)| frame.norm(a, b)).collect();
            let pieces = frame.clip(&norm);
            for piece in &pieces {
                if piece.len() > 1 {
                    root.draw(&PathElement::new(
                        piece.clone(),
                        RGBColor(0, 0, 0).mix(0.45).stroke_width(3),
                    ))
                    .map_err(be)?;
                    root.draw(&PathElement::new(piece.clone(), BACKGROUND.stroke_width(1)))
                        .map_err(be)?;
                    for w in piece.windows(2) {
                        occupied.add_segment(w[0], w[1]);
                    }
                }
            }
            if let Some(&end) = pieces.iter().rev().find_map(|p| p.last()) {
                line_ends.push((end, l.label.as_str()));
            }
        }
        let clamp = |(lx, ly): (i32, i32), (bw, bh): (i32, i32)| {
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
        // Order-line labels at the end of each line, then marker labels along
        // their line; a label that finds no free place is left out and counted.
        for ((ex, ey), label) in line_ends {
            if label.is_empty() {
                continue;
            }
            let (bw, bh) = box_size(root, label, NOTE_PX)?;
            let candidates = [
                (ex - bw - 4, ey + 4),
                (ex - bw - 4, ey - bh - 4),
                (ex + 4, ey + 4),
                (ex + 4, ey - bh - 4),
                (ex - bw / 2, ey + 10),
            ];
            let pick = candidates
                .iter()
                .map(|&c| clamp(c, (bw, bh)))
                .find(|&(lx, ly)| occupied.free_of_boxes((lx, ly, lx + bw, ly + bh)))
                .unwrap_or_else(|| clamp(candidates[0], (bw, bh)));
            boxed_text(root, label, NOTE_PX, pick, (bw, bh))?;
            occupied.add((pick.0, pick.1, pick.0 + bw, pick.1 + bh));
        }
        for (py, label) in marker_rows {
            if label.is_empty() {
                continue;
            }
            let (bw, bh) = box_size(root, label, NOTE_PX)?;
            let (l, r) = (frame.left_px(), frame.right_px());
            let xs = [
                r - bw - 6,
                l + 6,
                (l + r) / 2 - bw / 2,
                (3 * l + r) / 4,
                (l + 3 * r) / 4,
            ];
            let pick = xs
                .iter()
                .flat_map(|&x| [(x, py - bh - 2), (x, py + 2)])
                .map(|c| clamp(c, (bw, bh)))
                .find(|&(lx, ly)| occupied.free((lx, ly, lx + bw, ly + bh)));
            match pick {
                Some(p) => {
                    boxed_text(root, label, NOTE_PX, p, (bw, bh))?;
                    occupied.add((p.0, p.1, p.0 + bw, p.1 + bh));
                }
                None => unlabelled += 1,
            }
        }
        if unlabelled > 0 {
            let note = format!(
                "{unlabelled} of {} marker labels left out for lack of room",
                m.y_markers.len()
            );
            let (bw, bh) = box_size(root, &note, NOTE_PX)?;
            boxed_text(
                root,
                &note,
                NOTE_PX,
                (frame.left_px() + 4, frame.bottom_px() - bh - 4),
                (bw, bh),
            )?;
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
