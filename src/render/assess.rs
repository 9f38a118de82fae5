//! Renderers of [`AssessReport`]: the terminal report (verdicts, worst
//! points, ranked findings), the CSV of every finding and of the swept
//! grid (with the envelope columns, [`crate::io::csv_envelope`]), and the
//! chart of each measurement point's ripple over the envelope against its
//! limit.

use super::heading;
use crate::analysis::envelope::{OverLimit, Verdict};
use crate::envelope::{LimitKind, OperatingPoint};
use crate::io::csv_envelope::{FileOperatingPoint, envelope_columns};
use crate::plot;
use crate::results::assess::AssessReport;
use crate::units::PressureDisplay;
use std::io::Write;
use std::path::{Path, PathBuf};

/// Header of the findings table (`assess --csv`).
pub const FINDINGS_HEADER: [&str; 14] = [
    "rank",
    "kind",
    "point",
    "harmonic",
    "speed_rpm",
    "pressure_pa",
    "temperature_c",
    "case",
    "frequency_hz",
    "rms_pa",
    "level_db",
    "below_overall_db",
    "rise_db",
    "resonance_hz",
];

/// Header of the grid table (`assess --grid-csv`).
pub const GRID_HEADER: [&str; 8] = [
    "point",
    "harmonic",
    "speed_rpm",
    "pressure_pa",
    "temperature_c",
    "case",
    "frequency_hz",
    "amplitude_pa",
];

/// Header of the verdicts table (`assess --verdicts-csv`): per limit the
/// verdict (`pass`, `fail`, with `--bands` also `uncertain`), the worst
/// point and value, and with `--bands` the ends of the worst value's band
/// and the margin of its high end (empty without bands or ripple).
pub const VERDICTS_HEADER: [&str; 16] = [
    "point",
    "limit",
    "limit_pa",
    "verdict",
    "harmonic",
    "speed_rpm",
    "pressure_pa",
    "temperature_c",
    "case",
    "frequency_hz",
    "worst_pa",
    "margin_db",
    "worst_low_pa",
    "worst_high_pa",
    "band_margin_db",
    "coverage",
];

/// Most panels (pressure × load case) in one measurement point's chart.
const MAX_PANELS: usize = 12;

fn own(r: &AssessReport) -> FileOperatingPoint {
    FileOperatingPoint {
        pressure_pa: r.file_pressure_pa,
        temperature_k: r.file_temperature_k,
    }
}

/// Writes every finding, ranked (1 = highest level).
///
/// # Errors
/// The CSV writer's error.
pub fn findings_csv<W: Write>(r: &AssessReport, out: W) -> Result<(), csv::Error> {
    let own = own(r);
    let mut w = csv::Writer::from_writer(out);
    w.write_record(FINDINGS_HEADER)?;
    for (i, f) in r.assessment.findings.iter().enumerate() {
        let mut row = vec![
            (i + 1).to_string(),
            f.kind.name().replace(' ', "_"),
            f.tap.clone(),
            f.order.to_string(),
        ];
        row.extend(envelope_columns(f.speed_rev_s, &f.point, &own));
        row.extend([
            format!("{}", f.frequency_hz),
            format!("{}", f.rms_pa),
            format!("{}", f.level_db),
            format!("{}", f.below_overall_db),
            f.rise_db.map_or(String::new(), |r| format!("{r}")),
            f.resonance_hz.map_or(String::new(), |r| format!("{r}")),
        ]);
        w.write_record(row)?;
    }
    w.flush()?;
    Ok(())
}

/// Writes one row per limit: its verdict and worst point, and with bands
/// the band of the worst value ([`VERDICTS_HEADER`]).
///
/// # Errors
/// The CSV writer's error.
pub fn verdicts_csv<W: Write>(r: &AssessReport, out: W) -> Result<(), csv::Error> {
    let own = own(r);
    let number = |x: Option<f64>| {
        x.filter(|v| v.is_finite())
            .map_or(String::new(), |v| format!("{v}"))
    };
    let mut w = csv::Writer::from_writer(out);
    w.write_record(VERDICTS_HEADER)?;
    for (i, v) in r.assessment.verdicts.iter().enumerate() {
        let kind = match v.limit.kind {
            LimitKind::Rms => "rms",
            LimitKind::PeakToPeak => "peak_to_peak",
            LimitKind::Harmonic => "harmonic",
        };
        let mut row = vec![
            v.tap.clone(),
            kind.to_string(),
            format!("{}", v.limit.value_pa),
            r.status(i).word().to_lowercase(),
        ];
        match &v.worst {
            Some(wp) => {
                row.push(wp.order.to_string());
                row.extend(envelope_columns(wp.speed_rev_s, &wp.point, &own));
                row.push(format!("{}", wp.frequency_hz));
                row.push(format!("{}", wp.value_pa));
            }
            None => row.extend(std::iter::repeat_n(String::new(), 7)),
        }
        row.push(number(v.margin_db));
        let band = r.verdict_bands.as_ref().and_then(|b| b.verdicts.get(i));
        let interval = band.and_then(|b| b.worst_pa).and_then(|b| b.interval());
        row.push(number(interval.map(|x| x.0)));
        row.push(number(interval.map(|x| x.1)));
        row.push(number(band.and_then(|b| b.margin_db)));
        row.push(number(r.verdict_bands.as_ref().map(|b| b.info.coverage)));
        w.write_record(row)?;
    }
    w.flush()?;
    Ok(())
}

/// Writes the swept grid of every envelope point: one row per measurement
/// point, harmonic, speed and envelope point (peak amplitude in Pa).
///
/// # Errors
/// The CSV writer's error.
pub fn grid_csv<W: Write>(r: &AssessReport, out: W) -> Result<(), csv::Error> {
    let own = own(r);
    let mut w = csv::Writer::from_writer(out);
    w.write_record(GRID_HEADER)?;
    for ps in &r.assessment.sweeps {
        let s = &ps.sweep;
        for (pi, tap) in s.points.iter().enumerate() {
            for (oi, order) in s.orders.iter().enumerate() {
                for (si, &speed) in s.speeds_rev_s.iter().enumerate() {
                    let mut row = vec![tap.clone(), order.to_string()];
                    row.extend(envelope_columns(speed, &ps.point, &own));
                    row.extend([
                        format!("{}", s.frequency_hz(si, oi)),
                        format!("{}", s.amplitude_pa(si, pi, oi)),
                    ]);
                    w.write_record(row)?;
                }
            }
        }
    }
    w.flush()?;
    Ok(())
}

/// The chart file of measurement point `tap`: FILE itself for one point,
/// else FILE-<point> (letters and digits kept, the rest `-`).
pub fn plot_path(base: &Path, tap: &str, several: bool) -> PathBuf {
    if !several {
        return base.to_path_buf();
    }
    let slug: String = tap
        .chars()
        .map(|c| {
            if c.is_alphanumeric() {
                c.to_ascii_lowercase()
            } else {
                '-'
            }
        })
        .collect();
    super::companion_path(base, &slug)
}

/// `1734 rpm, 200 bar, 80 °C, open`.
pub fn where_text(speed_rev_s: f64, point: &OperatingPoint) -> String {
    let label = point.label();
    if label == "as written" {
        format!("{:.0} rpm", speed_rev_s * 60.0)
    } else {
        format!("{:.0} rpm, {label}", speed_rev_s * 60.0)
    }
}

/// `rms ≤ 0.1 bar`: what a limit bounds and its value as written.
pub fn limit_text(v: &Verdict) -> String {
    let what = match v.limit.kind {
        LimitKind::Rms => "rms",
        LimitKind::PeakToPeak => "peak-to-peak",
        LimitKind::Harmonic => "each harmonic (peak)",
    };
    format!("{what} ≤ {}", v.limit.written)
}

/// Where a limit is exceeded, in words: "over the limit at 9 of 27
/// envelope points, at 1967–2300 rpm; it holds at every envelope point over
/// 900–1967 rpm (speeds to the grid's step)".
pub fn over_limit_text(o: &OverLimit, range_rev_s: (f64, f64), points: usize) -> String {
    let rpm = |(a, b): (f64, f64)| {
        if (a - b).abs() < 1e-9 * b {
            format!("{:.0} rpm", a * 60.0)
        } else {
            format!("{:.0}–{:.0} rpm", a * 60.0, b * 60.0)
        }
    };
    let over: Vec<String> = o.speeds_rev_s.iter().map(|&i| rpm(i)).collect();
    let clear: Vec<String> = o.clear_speeds(range_rev_s).into_iter().map(rpm).collect();
    format!(
        "over the limit at {} of {points} envelope points, at {}; {} (speeds to the grid's step)",
        o.points,
        over.join(", "),
        if clear.is_empty() {
            "no speed of the range keeps within it at every envelope point".to_string()
        } else {
            format!("it holds at every envelope point over {}", clear.join(", "))
        }
    )
}

/// The bottomed dampers of a failing limit as a cause, in words.
pub fn bottomed_text(o: &OverLimit) -> Option<String> {
    if o.bottomed_dampers.is_empty() {
        return None;
    }
    let names: Vec<String> = o
        .bottomed_dampers
        .iter()
        .map(|n| format!("`{n}`"))
        .collect();
    Some(format!(
        "at each of those points {} bottomed (precharge above the mean pressure: the gas is out of the circuit and damps nothing); a precharge below the lowest operating pressure keeps the gas in (0.6–0.9 of it is common practice; the maker's instructions govern), and `ripline tune --envelope` sizes it for the whole envelope",
        if names.len() == 1 {
            format!("{} is", names[0])
        } else {
            format!("{} are", names.join(", "))
        }
    ))
}

/// The margin in pressure as words: "4.5386 bar over", "0.12 bar to spare" (the
/// sign is in the words; the dB margin beside it carries its own).
fn margin_pressure(pa: f64) -> String {
    if pa < 0.0 {
        format!("{} over", PressureDisplay(-pa))
    } else {
        format!("{} to spare", PressureDisplay(pa))
    }
}

/// Writes the terminal report.
///
/// # Errors
/// The writer's error.
pub fn text(r: &AssessReport, out: &mut impl Write) -> std::io::Result<()> {
    let a = &r.assessment;
    heading(out, "assess", &r.subject)?;
    let spans = envelope_spans(r);
    writeln!(
        out,
        "envelope: shaft `{}` over {:.0}–{:.0} rpm; {} point{}{}",
        a.shaft,
        a.speed_range_rev_s.0 * 60.0,
        a.speed_range_rev_s.1 * 60.0,
        a.points.len(),
        if a.points.len() == 1 { "" } else { "s" },
        if spans.is_empty() {
            " (the circuit as written: no `envelope` section)".to_string()
        } else {
            format!(": {}", spans.join("; "))
        }
    )?;
    writeln!(
        out,
        "each point swept over {} speeds; every worst speed refined between them to 0.01 dB; levels rms, dB re 1 Pa",
        a.sweeps.first().map_or(0, |s| s.sweep.speeds_rev_s.len())
    )?;
    super::silent_orders_note(out, "", &r.silent_orders)?;

    writeln!(out)?;
    if a.verdicts.is_empty() {
        writeln!(
            out,
            "verdicts: none (the file has no `limits` section; add one to get PASS/FAIL)"
        )?;
    } else {
        if let Some(b) = &r.verdict_bands {
            super::bands::info_text(&b.info, out)?;
            writeln!(
                out,
                "band of each limit's worst value: its true worst over the speed range and over the envelope points that can be worst (the nominal worst and each point whose first-order band, widened two-fold, reaches it; at most {}), over the uncertain inputs; PASS only when the whole band is within the limit, FAIL when the nominal worst is over it, UNCERTAIN when the nominal is within but the band reaches over",
                crate::results::assess::MAX_DRAWN_POINTS
            )?;
            writeln!(out)?;
        }
        writeln!(
            out,
            "verdicts (each limit against the worst of the envelope):"
        )?;
        for (i, v) in a.verdicts.iter().enumerate() {
            let head = format!("  {}  `{}`: {}", r.status(i).word(), v.tap, limit_text(v));
            match (&v.worst, v.margin_db) {
                (Some(w), Some(margin)) => writeln!(
                    out,
                    "{head}; worst {} at {}, harmonic {} ({:.1} Hz); margin {margin:+.2} dB ({})",
                    PressureDisplay(w.value_pa),
                    where_text(w.speed_rev_s, &w.point),
                    w.order,
                    w.frequency_hz,
                    margin_pressure(v.margin_pa)
                )?,
                _ => writeln!(out, "{head}; no ripple reaches it anywhere in the envelope")?,
            }
            if let Some(o) = &v.over_limit {
                writeln!(
                    out,
                    "         {}",
                    over_limit_text(o, a.speed_range_rev_s, a.points.len())
                )?;
                if let Some(cause) = bottomed_text(o) {
                    writeln!(out, "         {cause}")?;
                }
            }
            if let Some(b) = r.verdict_bands.as_ref().and_then(|b| b.verdicts.get(i)) {
                match (b.worst_pa.and_then(|w| w.interval()), b.margin_db) {
                    (Some((lo, hi)), margin) => writeln!(
                        out,
                        "         band of the worst {} .. {}{}{}{}",
                        PressureDisplay(lo),
                        PressureDisplay(hi),
                        match (b.points_drawn, b.points_left_out) {
                            (n, 0) if n > 1 => format!(" over {n} envelope points"),
                            (n, k) if k > 0 => format!(
                                " over {n} envelope points ({k} more could be worst and were not drawn)"
                            ),
                            _ => String::new(),
                        },
                        margin.map_or(String::new(), |m| format!(
                            "; margin of its high end {m:+.2} dB"
                        )),
                        if b.wholly_above {
                            "; the whole band is over the limit"
                        } else if b.status == crate::results::assess::Status::Fail {
                            "; the band reaches below the limit, but the nominal worst is over it"
                        } else {
                            ""
                        }
                    )?,
                    (None, _) if v.worst.is_some() => writeln!(
                        out,
                        "         band of the worst unknown (a drawn circuit has no value there)"
                    )?,
                    _ => {}
                }
            }
        }
        let n = a.verdicts.len();
        let count = |s| (0..n).filter(|&i| r.status(i) == s).count();
        let (failed, uncertain) = (
            count(crate::results::assess::Status::Fail),
            count(crate::results::assess::Status::Uncertain),
        );
        writeln!(
            out,
            "result: {}",
            if failed > 0 {
                format!("{failed} of {n} limits exceeded (exit code 3)")
            } else if uncertain > 0 {
                format!(
                    "{uncertain} of {n} verdicts UNCERTAIN: the prediction cannot promise those limits are met (exit code 4)"
                )
            } else if r.verdict_bands.is_some() {
                format!("every limit met with its whole band ({n} of {n})")
            } else {
                format!("every limit met ({n} of {n})")
            }
        )?;
    }

    writeln!(out)?;
    writeln!(
        out,
        "worst overall rms per measurement point over the envelope:"
    )?;
    for (tap, w) in a.taps.iter().zip(&a.worst) {
        match w {
            Some(w) => writeln!(
                out,
                "  `{tap}`: {} rms ({}) at {}; largest harmonic there {} ({:.1} Hz)",
                PressureDisplay(w.value_pa),
                super::level_text(crate::results::level_db(w.value_pa, 1.0)),
                where_text(w.speed_rev_s, &w.point),
                w.order,
                w.frequency_hz
            )?,
            None => writeln!(out, "  `{tap}`: no ripple reaches it")?,
        }
    }

    writeln!(out)?;
    let shown = a.ranked(r.top, r.floor_db);
    writeln!(
        out,
        "findings, ranked by level ({} of {}: at most {}, none more than {} dB below its point's overall worst; every one in --csv):",
        shown.len(),
        a.findings.len(),
        r.top,
        r.floor_db
    )?;
    if !shown.is_empty() {
        writeln!(
            out,
            "  {:>3}  {:<11}  {:<14}  {:>8}  {:>12}  {:>8}  {:>7}  {:>9}  {:>13}  envelope point",
            "#", "kind", "point", "level dB", "rms", "harmonic", "rpm", "Hz", "resonance Hz"
        )?;
    }
    for (i, f) in shown.iter().enumerate() {
        writeln!(
            out,
            "  {:>3}  {:<11}  {:<14}  {:>8.1}  {:>12}  {:>8}  {:>7.0}  {:>9.1}  {:>13}  {}",
            i + 1,
            f.kind.name(),
            f.tap,
            f.level_db,
            PressureDisplay(f.rms_pa).to_string(),
            f.order,
            f.speed_rev_s * 60.0,
            f.frequency_hz,
            f.resonance_hz.map_or("—".into(), |r| format!("{r:.1}")),
            f.point.label()
        )?;
    }
    for c in &r.cautions {
        writeln!(out)?;
        writeln!(out, "{c}")?;
    }
    Ok(())
}

/// What the envelope spans: "mean pressures 30, 200 bar", "oil
/// temperatures 20.0, 80.0 °C", "load cases `open`, `closed`" (those it
/// has; none without an envelope).
pub fn envelope_spans(r: &AssessReport) -> Vec<String> {
    let join = |v: Vec<String>| v.join(", ");
    let mut spans = Vec::new();
    if let Some(e) = &r.envelope {
        if !e.pressures_pa.is_empty() {
            let v = e
                .pressures_pa
                .iter()
                .map(|p| format!("{}", p / 1e5))
                .collect();
            spans.push(format!("mean pressures {} bar", join(v)));
        }
        if !e.temperatures_k.is_empty() {
            let v = e
                .temperatures_k
                .iter()
                .map(|t| format!("{:.1}", t - crate::oil::ZERO_CELSIUS_K))
                .collect();
            spans.push(format!("oil temperatures {} °C", join(v)));
        }
        if !e.cases.is_empty() {
            let v = e.cases.iter().map(|c| format!("`{}`", c.name)).collect();
            spans.push(format!("load cases {}", join(v)));
        }
    }
    spans
}

/// One measurement point's chart: a panel per (load case, pressure), the
/// overall rms against speed, a curve per temperature, the rms limit as a
/// line and the envelope's worst point marked; a single panel saying so
/// when no ripple reaches the point anywhere.
pub fn charts(r: &AssessReport, tap_index: usize) -> Vec<plot::LineChart> {
    tap_charts(r, tap_index).unwrap_or_else(|| vec![silent_chart(&r.assessment.taps[tap_index])])
}

fn tap_charts(r: &AssessReport, ti: usize) -> Option<Vec<plot::LineChart>> {
    let a = &r.assessment;
    let tap = &a.taps[ti];
    let worst = a.worst[ti].as_ref()?;
    let limit = r
        .limits
        .iter()
        .find(|l| &l.tap == tap)
        .and_then(|l| l.limits.iter().find(|k| k.kind == LimitKind::Rms));
    // panels in the envelope's order, by (case, pressure), with their top
    let mut panels: Vec<(Option<String>, Option<f64>, f64)> = Vec::new();
    for ps in &a.sweeps {
        let key = (ps.point.case.clone(), ps.point.pressure_pa);
        let top = ps
            .sweep
            .points
            .iter()
            .position(|p| p == tap)
            .map_or(0.0, |tp| ps.sweep.worst(tp).value_pa);
        match panels.iter_mut().find(|p| (p.0.clone(), p.1) == key) {
            Some(p) => p.2 = p.2.max(top),
            None => panels.push((key.0, key.1, top)),
        }
    }
    let dropped = panels.len().saturating_sub(MAX_PANELS);
    if dropped > 0 {
        let mut by_level: Vec<f64> = panels.iter().map(|p| p.2).collect();
        by_level.sort_by(|x, y| y.total_cmp(x));
        let cut = by_level[MAX_PANELS - 1];
        let mut kept = 0;
        panels.retain(|p| {
            let keep = p.2 >= cut && kept < MAX_PANELS;
            kept += usize::from(keep);
            keep
        });
    }
    let n_panels = panels.len();
    let limit_bar = limit.map(|l| l.value_pa / 1e5);
    // with --bands: the rms verdict's worst point and the ends of its band
    let rms_band = r.verdict_bands.as_ref().and_then(|b| {
        let (v, band) = a
            .verdicts
            .iter()
            .zip(&b.verdicts)
            .find(|(v, _)| &v.tap == tap && v.limit.kind == LimitKind::Rms)?;
        let (low, high) = band.worst_pa.as_ref()?.interval()?;
        Some((v.worst.clone()?, low, high, b.info.coverage))
    });
    let charts: Vec<plot::LineChart> = panels
        .iter()
        .enumerate()
        .map(|(k, (case, pressure, _))| {
            let mut series = Vec::new();
            let mut point_markers = Vec::new();
            for ps in a
                .sweeps
                .iter()
                .filter(|ps| ps.point.case == *case && ps.point.pressure_pa == *pressure)
            {
                let Some(tp) = ps.sweep.points.iter().position(|p| p == tap) else {
                    continue;
                };
                let s = &ps.sweep;
                let w = s.worst(tp);
                let mut pts: Vec<(f64, f64)> = (0..s.speeds_rev_s.len())
                    .map(|si| (s.speeds_rev_s[si] * 60.0, s.rms_pa(si, tp) / 1e5))
                    .chain(std::iter::once((w.speed_rev_s * 60.0, w.value_pa / 1e5)))
                    .filter(|p| p.1 > 0.0)
                    .collect();
                pts.sort_by(|x, y| x.0.total_cmp(&y.0));
                if pts.is_empty() {
                    continue;
                }
                series.push(plot::XySeries {
                    name: ps.point.temperature_k.map_or("rms ripple".into(), |t| {
                        format!("{:.0} °C", t - crate::oil::ZERO_CELSIUS_K)
                    }),
                    points: pts,
                    ..Default::default()
                });
                if ps.point == worst.point {
                    point_markers.push(plot::PointMarker {
                        x: worst.speed_rev_s * 60.0,
                        y: worst.value_pa / 1e5,
                        label: format!("worst {}", PressureDisplay(worst.value_pa)),
                    });
                }
            }
            if let Some((w, low, high, coverage)) = rms_band
                .as_ref()
                .filter(|b| b.0.point.case == *case && b.0.point.pressure_pa == *pressure)
            {
                series.push(plot::XySeries {
                    name: format!("worst, {} % band", super::table::sig(100.0 * coverage, 3)),
                    points: vec![(w.speed_rev_s * 60.0, w.value_pa / 1e5)],
                    error_bars: Some(vec![(low / 1e5, high / 1e5)]),
                    style: plot::SeriesStyle::Points,
                    color: Some([0, 0, 0]),
                    ..Default::default()
                });
            }
            let panel = OperatingPoint {
                pressure_pa: *pressure,
                temperature_k: None,
                case: case.clone(),
            }
            .label();
            let title = if k == 0 {
                format!(
                    "`{tap}`: overall rms ripple over the envelope{} — {panel}",
                    if dropped > 0 {
                        format!(" ({n_panels} loudest of {} panels)", n_panels + dropped)
                    } else {
                        String::new()
                    }
                )
            } else {
                panel
            };
            let (lo, hi) = series
                .iter()
                .flat_map(|s| {
                    // (a band reaching zero is drawn to the bottom of the log axis)
                    let bars = s.error_bars.iter().flatten().flat_map(|b| [b.0, b.1]);
                    let bars = bars.filter(|v| *v > 0.0);
                    s.points.iter().map(|p| p.1).chain(bars)
                })
                .chain(limit_bar)
                .fold((f64::INFINITY, 0.0f64), |(lo, hi), v| {
                    (lo.min(v), hi.max(v))
                });
            plot::LineChart {
                title,
                x_label: "shaft speed (rpm)".into(),
                y_label: "rms ripple (bar)".into(),
                series,
                log_y: true,
                y_range: (hi > 0.0).then_some((lo / 1.5, hi * 1.5)),
                y_markers: limit
                    .map(|l| plot::Marker {
                        value: l.value_pa / 1e5,
                        label: format!("limit {}", l.written),
                    })
                    .into_iter()
                    .collect(),
                point_markers,
                x_range: Some((a.speed_range_rev_s.0 * 60.0, a.speed_range_rev_s.1 * 60.0)),
                size: (1000, 320),
                ..Default::default()
            }
        })
        .filter(|c| !c.series.is_empty())
        .collect();
    (!charts.is_empty()).then_some(charts)
}

/// The chart of a measurement point no ripple reaches anywhere.
fn silent_chart(tap: &str) -> plot::LineChart {
    plot::LineChart {
        title: format!("`{tap}`: no ripple reaches it anywhere in the envelope"),
        x_label: "shaft speed (rpm)".into(),
        y_label: "rms ripple (bar)".into(),
        series: vec![plot::XySeries {
            name: "no ripple".into(),
            points: vec![(0.0, 0.0), (1.0, 0.0)],
            ..Default::default()
        }],
        ..Default::default()
    }
}
