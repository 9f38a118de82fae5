//! End-to-end tests of the public chart functions (files, errors, no partial
//! output).

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
                bands: None,
            },
            Series {
                name: "inlet".into(),
                values: vec![1.0, 0.5, 0.2, 0.1, 0.05, 0.02],
                bands: None,
            },
        ],
        log_y: false,
        db_ref: None,
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
            band: None,
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

/// Rows (top to bottom) of a PNG in which some pixel is close to `rgb`, and
/// whether any pixel lies strictly between that colour and white.
fn rows_with_colour(path: &Path, rgb: [u8; 3]) -> (Vec<u32>, bool) {
    let bytes = std::fs::read(path).expect("read png");
    let pixmap = resvg::tiny_skia::Pixmap::decode_png(&bytes).expect("decode png");
    let mut rows = Vec::new();
    let mut blended = false;
    for y in 0..pixmap.height() {
        let mut hit = false;
        for x in 0..pixmap.width() {
            let p = pixmap.pixel(x, y).expect("pixel").demultiply();
            let c = [p.red(), p.green(), p.blue()];
            let d = |i: usize| (i32::from(c[i]) - i32::from(rgb[i])).abs();
            if d(0) + d(1) + d(2) < 60 {
                hit = true;
            }
            // a pure-red line on white: anti-aliased edge pixels are light red
            if c[0] > 240 && c[1] > 40 && c[1] < 200 && c[1].abs_diff(c[2]) < 8 {
                blended = true;
            }
        }
        if hit {
            rows.push(y);
        }
    }
    (rows, blended)
}

/// Property of a raster line: a steep segment (a jump over the whole height
/// within one x step) is drawn in every pixel row it crosses, and its edges
/// are anti-aliased (blended pixels exist). plotters' own bitmap backend left
/// gaps in such segments (issue 16).
#[test]
fn png_steep_segments_have_no_gaps_and_are_anti_aliased() {
    let dir = TempDir::new("steep");
    let chart = LineChart {
        series: vec![XySeries {
            points: vec![(0.0, 0.0), (1.0, 100.0), (1.02, 0.0), (2.0, 50.0)],
            color: Some([255, 0, 0]),
            ..Default::default()
        }],
        size: SIZE,
        ..Default::default()
    };
    let path = dir.path("steep.png");
    line_chart(&path, &chart).unwrap();
    let (rows, blended) = rows_with_colour(&path, [255, 0, 0]);
    assert!(
        rows.len() > 250,
        "the line covers most of the height: {rows:?}"
    );
    for w in rows.windows(2) {
        assert_eq!(
            w[1],
            w[0] + 1,
            "a gap in the line between rows {} and {}",
            w[0],
            w[1]
        );
    }
    assert!(blended, "no anti-aliased edge pixels found");
}

/// dB bars: 20·log10(v/ref) of the values, a bad reference is refused; the
/// axis of log and dB bars spans at most BAR_DYNAMIC_RANGE_DB (plus margins)
/// below the largest value, so tiny harmonics do not squash the others.
#[test]
fn decibel_and_log_bars() {
    let dir = TempDir::new("db");
    let mut c = bar_chart();
    c.series[0].values[5] = 1e-12; // 220 dB below the largest value
    c.db_ref = Some(1e-5);
    c.y_label = "level (dB re 1 µbar)".into();
    grouped_bar_chart(&dir.path("db.svg"), &c).unwrap();
    let svg = std::fs::read_to_string(dir.path("db.svg")).unwrap();
    let ticks: Vec<f64> = svg
        .split("<text")
        .filter_map(|t| t.split('>').nth(1))
        .filter_map(|t| {
            t.trim()
                .trim_end_matches("</text")
                .trim()
                .replace('−', "-")
                .parse()
                .ok()
        })
        .collect();
    // 3 bar re 1e-5 bar is 109.5 dB; the axis reaches down 100 dB from there
    // (plus a margin), not to the −140 dB of the 1e-12 bar value
    assert!(ticks.contains(&100.0), "{ticks:?}");
    let lowest = ticks.iter().copied().fold(f64::INFINITY, f64::min);
    assert!(
        lowest >= 109.5 - BAR_DYNAMIC_RANGE_DB - 25.0,
        "lowest tick {lowest}"
    );
    for bad in [0.0, -1.0, f64::NAN] {
        c.db_ref = Some(bad);
        assert!(matches!(
            grouped_bar_chart(&dir.path("bad.svg"), &c),
            Err(PlotError::InvalidData(_))
        ));
    }
    assert!(!dir.path("bad.svg").exists());
}

/// An amplitude chart with `y_floor = 0`: error bars reaching below zero
/// are cut there and the axis shows no negative tick; a point below the floor
/// is refused.
#[test]
fn y_floor_keeps_amplitudes_non_negative() {
    let dir = TempDir::new("floor");
    let mut c = LineChart {
        series: vec![XySeries {
            name: "amplitude".into(),
            points: vec![(1.0, 0.05), (2.0, 0.6), (3.0, 0.02)],
            error_bars: Some(vec![(-0.05, 0.15), (0.5, 0.7), (-0.1, 0.14)]),
            style: SeriesStyle::Points,
            ..Default::default()
        }],
        y_floor: Some(0.0),
        size: SIZE,
        ..Default::default()
    };
    line_chart(&dir.path("a.svg"), &c).unwrap();
    let svg = std::fs::read_to_string(dir.path("a.svg")).unwrap();
    assert!(
        !svg.contains(">−"),
        "a negative tick label on an amplitude axis"
    );
    c.series[0].points[0].1 = -0.01;
    assert!(matches!(
        line_chart(&dir.path("b.svg"), &c),
        Err(PlotError::InvalidData(_))
    ));
}

// A band around a curve is drawn as one filled polygon behind it; a band
// whose length differs from the points, or whose low end is above its high
// end, is refused.
#[test]
fn a_curve_band_is_a_filled_polygon() {
    let points: Vec<(f64, f64)> = (1..=20)
        .map(|i| (f64::from(i), f64::from(i).sqrt()))
        .collect();
    let band: Vec<(f64, f64)> = points.iter().map(|p| (0.9 * p.1, 1.1 * p.1)).collect();
    let mut chart = LineChart {
        series: vec![XySeries {
            name: "rms".into(),
            points: points.clone(),
            band: Some(band.clone()),
            ..XySeries::default()
        }],
        ..LineChart::default()
    };
    let svg = line_chart_svg(&chart).unwrap();
    let doc = roxmltree::Document::parse(&svg).unwrap();
    let polygons: Vec<_> = doc
        .descendants()
        .filter(|n| n.has_tag_name("polygon"))
        .collect();
    assert_eq!(polygons.len(), 1, "{svg}");
    // one vertex per end of every band value
    let vertices = polygons[0]
        .attribute("points")
        .unwrap()
        .split_whitespace()
        .count();
    assert_eq!(vertices, 2 * points.len());
    chart.series[0].band = None;
    assert!(!line_chart_svg(&chart).unwrap().contains("<polygon"));
    chart.series[0].band = Some(band[1..].to_vec());
    assert!(matches!(
        line_chart_svg(&chart),
        Err(PlotError::InvalidData(_))
    ));
    chart.series[0].band = Some(band.iter().map(|&(lo, hi)| (hi, lo)).collect());
    assert!(matches!(
        line_chart_svg(&chart),
        Err(PlotError::InvalidData(_))
    ));
}

// Bands over bars add a box and three lines per bar (on a log axis too).
#[test]
fn bar_bands_are_boxes_with_whiskers() {
    let mut chart = BarChart {
        categories: vec!["1".into(), "2".into()],
        series: vec![Series {
            name: "outlet".into(),
            values: vec![3.0, 1.0],
            bands: None,
        }],
        log_y: true,
        ..BarChart::default()
    };
    let count = |svg: &str, tag: &str| {
        roxmltree::Document::parse(svg)
            .unwrap()
            .descendants()
            .filter(|n| n.has_tag_name(tag))
            .count()
    };
    let plain = grouped_bar_chart_svg(&chart).unwrap();
    chart.series[0].bands = Some(vec![(2.5, 3.5), (0.8, 1.3)]);
    let banded = grouped_bar_chart_svg(&chart).unwrap();
    assert_eq!(count(&banded, "rect"), count(&plain, "rect") + 2);
    assert_eq!(
        count(&banded, "polyline") + count(&banded, "path") + count(&banded, "line"),
        count(&plain, "polyline") + count(&plain, "path") + count(&plain, "line") + 6
    );
    chart.series[0].bands = Some(vec![(2.5, 3.5)]);
    assert!(matches!(
        grouped_bar_chart_svg(&chart),
        Err(PlotError::InvalidData(_))
    ));
}
