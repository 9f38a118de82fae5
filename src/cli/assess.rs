//! `ripline assess FILE`: the circuit over its operating envelope, each
//! limit's verdict and the findings ranked by severity. Exit code 3 when a
//! limit is exceeded.

use super::common::{self, LimitsExceeded, UsageError};
use super::ranges::{self, Progress};
use anyhow::Context;
use clap::Args;
use ripline::analysis::envelope::{AssessSettings, Assessment, Verdict, assess};
use ripline::elements::{ElementKind, PRESSURE_VESSEL_CAUTION};
use ripline::envelope::{LimitKind, OperatingPoint};
use ripline::io::CircuitFile;
use ripline::io::csv_envelope::{FileOperatingPoint, write_findings_csv, write_grid_csv};
use ripline::plot;
use ripline::units::{Dimension, PressureDisplay};
use std::io::Write;
use std::path::{Path, PathBuf};

/// Most panels (pressure × load case) in one measurement point's plot.
const MAX_PANELS: usize = 12;
/// Most speeds of the grid.
const MAX_SPEEDS: usize = 10_001;

#[derive(Debug, Args)]
pub struct AssessArgs {
    /// Circuit file (YAML) with an `envelope` and `limits` (either optional).
    file: PathBuf,
    /// How many findings the report shows (the CSV has them all).
    #[arg(long, value_name = "N", default_value_t = 10)]
    top: usize,
    /// Leave out of the report findings this far below their measurement
    /// point's overall worst level, e.g. `20dB`.
    #[arg(long, value_name = "DB", default_value = "20dB")]
    floor: String,
    /// Speeds of the grid across the range (evenly spaced, ends included);
    /// the worst speeds are refined between them.
    #[arg(long, value_name = "N", default_value_t = 201)]
    speeds: usize,
    /// Speed range LOW..HIGH, in rpm unless a unit is given; default: the
    /// envelope's `speed`, else the pump's `speed_range`.
    #[arg(long, value_name = "LOW..HIGH", visible_alias = "speed")]
    speed_range: Option<String>,
    /// The shaft swept (a `shaft` name or a pump's name); default: the
    /// envelope's `shaft`, else the first pump's.
    #[arg(long, value_name = "NAME")]
    shaft: Option<String>,
    /// Smallest rise, in dB, of a resonance crossing.
    #[arg(
        long,
        value_name = "DB",
        default_value_t = 3.0,
        allow_negative_numbers = true
    )]
    min_rise: f64,
    /// Write every finding, ranked, as CSV.
    #[arg(long, value_name = "FILE")]
    csv: Option<PathBuf>,
    /// Write the swept grid of every envelope point as CSV.
    #[arg(long, value_name = "FILE")]
    grid_csv: Option<PathBuf>,
    /// Plot each measurement point's ripple over the envelope against its
    /// limit (.svg or .png; FILE-<point> for each point when there are
    /// several).
    #[arg(long, value_name = "FILE")]
    plot: Option<PathBuf>,
}

/// A level option written `20dB`, `20 dB` or `20`.
fn parse_db(option: &str, text: &str) -> anyhow::Result<f64> {
    let t = text.trim();
    let number = t.strip_suffix("dB").unwrap_or(t).trim();
    match number.parse::<f64>() {
        Ok(v) if v.is_finite() && v >= 0.0 => Ok(v),
        _ => Err(UsageError(format!(
            "{option} {text}: write a level difference in dB, zero or more, e.g. 20dB"
        ))
        .into()),
    }
}

/// The plot file of measurement point `tap`: FILE itself for one point,
/// else FILE-<point> (letters and digits kept, the rest `-`).
fn plot_path(base: &Path, tap: &str, several: bool) -> PathBuf {
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
    common::companion_path(base, &slug)
}

pub fn run(args: AssessArgs) -> anyhow::Result<()> {
    let floor_db = parse_db("--floor", &args.floor)?;
    if !(3..=MAX_SPEEDS).contains(&args.speeds) {
        return Err(UsageError(format!(
            "--speeds must be between 3 and {MAX_SPEEDS}, found {}",
            args.speeds
        ))
        .into());
    }
    if !(args.min_rise.is_finite() && args.min_rise >= 0.0) {
        return Err(UsageError(format!(
            "--min-rise must be a number of dB, zero or more, found {}",
            args.min_rise
        ))
        .into());
    }
    let csv_path = ranges::csv_output("--csv", args.csv.as_deref())?;
    let grid_path = ranges::csv_output("--grid-csv", args.grid_csv.as_deref())?;
    let plot_base = ranges::plot_output(args.plot.as_deref())?;
    let file = ripline::io::load_circuit_file(&args.file)?;
    let taps: Vec<String> = ripline::analysis::ripple::report_points(&file.circuit)
        .into_iter()
        .map(|t| t.name)
        .collect();
    let plot_paths: Vec<PathBuf> = plot_base
        .iter()
        .flat_map(|base| taps.iter().map(|t| plot_path(base, t, taps.len() > 1)))
        .collect();
    let mut targets = vec![
        ("--csv", csv_path.as_deref()),
        ("--grid-csv", grid_path.as_deref()),
    ];
    targets.extend(plot_paths.iter().map(|p| ("--plot", Some(p.as_path()))));
    let mut outputs = common::plan_outputs(&[], &targets, false)?;
    let speed_range = match &args.speed_range {
        Some(text) => Some(ranges::parse_range(
            "--speed-range",
            text,
            Dimension::ShaftSpeed,
            "rpm",
        )?),
        None => file.envelope.as_ref().and_then(|e| e.speed_range_rev_s),
    };
    let shaft = args
        .shaft
        .clone()
        .or_else(|| file.envelope.as_ref().and_then(|e| e.shaft.clone()));
    if let Some(name) = &shaft {
        common::pick_shaft(&file.circuit, Some(name))?;
    }
    // Every point's circuit first: a point that makes the circuit invalid
    // stops the command before any work.
    let points = file
        .points()
        .into_iter()
        .map(|p| file.at(&p).map(|c| (p, c)))
        .collect::<Result<Vec<_>, _>>()?;
    let progress = Progress::new(points.len(), "assessing the envelope");
    let assessment = assess(
        &points,
        shaft.as_deref(),
        speed_range,
        &file.limits,
        &AssessSettings {
            speed_points: args.speeds,
            min_rise_db: args.min_rise,
        },
        &mut |n| progress.set(n),
    )
    .map_err(|e| match e {
        ripline::analysis::envelope::AssessError::NoSpeedRange => {
            anyhow::Error::from(UsageError(format!("{}: {e}", file.file)))
        }
        e => anyhow::Error::from(e).context(format!("assessing {}", file.file)),
    })?;
    progress.finish();
    let all = assessment.points.len();
    for w in &assessment.warnings {
        if all == 1 {
            eprintln!("warning: {}", w.text);
        } else if w.points.len() == all {
            eprintln!(
                "warning: at every envelope point: {} (numbers at the first of them)",
                w.text
            );
        } else {
            eprintln!(
                "warning: at {} of {all} envelope points ({}): {}{}",
                w.points.len(),
                w.points.join("; "),
                w.text,
                if w.points.len() > 1 {
                    " (numbers at the first of them)"
                } else {
                    ""
                }
            );
        }
    }

    let own = FileOperatingPoint {
        pressure_pa: file.pressure_pa,
        temperature_k: file.temperature_k,
    };
    if let Some(path) = &csv_path {
        common::stage_csv(&mut outputs, path, |buf| {
            write_findings_csv(&assessment.findings, &own, buf)
        })?;
    }
    if let Some(path) = &grid_path {
        common::stage_csv(&mut outputs, path, |buf| {
            write_grid_csv(&assessment, &own, buf)
        })?;
    }
    if plot_base.is_some() {
        for (ti, path) in plot_paths.iter().enumerate() {
            // a point no ripple reaches gets a plot that says so
            let charts = tap_charts(&assessment, &file, ti)
                .unwrap_or_else(|| vec![silent_chart(&assessment.taps[ti])]);
            outputs
                .stage_with(path, |tmp| plot::stacked_line_charts(tmp, &charts))
                .with_context(|| format!("drawing {}", path.display()))?;
        }
    }
    common::commit(outputs)?;
    print_report(&file, &assessment, args.top, floor_db)?;
    if !assessment.passed() {
        let failed = assessment.verdicts.iter().filter(|v| !v.pass).count();
        return Err(LimitsExceeded(format!(
            "{failed} of {} limits exceeded (see the verdicts above)",
            assessment.verdicts.len()
        ))
        .into());
    }
    Ok(())
}

/// `1734 rpm, 200 bar, 80 °C, open`.
fn where_text(speed_rev_s: f64, point: &OperatingPoint) -> String {
    let label = point.label();
    if label == "as written" {
        format!("{:.0} rpm", speed_rev_s * 60.0)
    } else {
        format!("{:.0} rpm, {label}", speed_rev_s * 60.0)
    }
}

fn limit_text(v: &Verdict) -> String {
    let what = match v.limit.kind {
        LimitKind::Rms => "rms",
        LimitKind::PeakToPeak => "peak-to-peak",
        LimitKind::Harmonic => "each harmonic (peak)",
    };
    format!("{what} ≤ {}", v.limit.written)
}

fn print_report(
    file: &CircuitFile,
    a: &Assessment,
    top: usize,
    floor_db: f64,
) -> anyhow::Result<()> {
    let circuit = &file.circuit;
    let mut out = std::io::stdout().lock();
    common::write_heading(&mut out, "assess", &file.file, circuit)?;
    let levels = |v: &[String]| v.join(", ");
    let mut spans = Vec::new();
    if let Some(e) = &file.envelope {
        if !e.pressures_pa.is_empty() {
            let v: Vec<String> = e
                .pressures_pa
                .iter()
                .map(|p| format!("{}", p / 1e5))
                .collect();
            spans.push(format!("mean pressures {} bar", levels(&v)));
        }
        if !e.temperatures_k.is_empty() {
            let v: Vec<String> = e
                .temperatures_k
                .iter()
                .map(|t| format!("{:.1}", t - 273.15))
                .collect();
            spans.push(format!("oil temperatures {} °C", levels(&v)));
        }
        if !e.cases.is_empty() {
            let v: Vec<String> = e.cases.iter().map(|c| format!("`{}`", c.name)).collect();
            spans.push(format!("load cases {}", levels(&v)));
        }
    }
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
    let silent = a.sweeps.first().map(|s| {
        s.sweep
            .shaft
            .silent_orders(&circuit.pumps, circuit.harmonics)
    });
    if let Some(note) = silent.as_deref().and_then(common::silent_orders_note) {
        writeln!(out, "{note}")?;
    }

    writeln!(out)?;
    if a.verdicts.is_empty() {
        writeln!(
            out,
            "verdicts: none (the file has no `limits` section; add one to get PASS/FAIL)"
        )?;
    } else {
        writeln!(
            out,
            "verdicts (each limit against the worst of the envelope):"
        )?;
        for v in &a.verdicts {
            let head = format!(
                "  {}  `{}`: {}",
                if v.pass { "PASS" } else { "FAIL" },
                v.tap,
                limit_text(v)
            );
            match (&v.worst, v.margin_db) {
                (Some(w), Some(margin)) => writeln!(
                    out,
                    "{head}; worst {} at {}, harmonic {} ({:.1} Hz); margin {margin:+.2} dB ({})",
                    PressureDisplay(w.value_pa),
                    where_text(w.speed_rev_s, &w.point),
                    w.order,
                    w.frequency_hz,
                    signed_pressure(v.margin_pa)
                )?,
                _ => writeln!(out, "{head}; no ripple reaches it anywhere in the envelope")?,
            }
        }
        let failed = a.verdicts.iter().filter(|v| !v.pass).count();
        writeln!(
            out,
            "result: {}",
            if failed == 0 {
                format!(
                    "every limit met ({} of {})",
                    a.verdicts.len(),
                    a.verdicts.len()
                )
            } else {
                format!(
                    "{failed} of {} limits exceeded (exit code 3)",
                    a.verdicts.len()
                )
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
                common::level_text(w.value_pa, 1.0),
                where_text(w.speed_rev_s, &w.point),
                w.order,
                w.frequency_hz
            )?,
            None => writeln!(out, "  `{tap}`: no ripple reaches it")?,
        }
    }

    writeln!(out)?;
    let shown = a.ranked(top, floor_db);
    writeln!(
        out,
        "findings, ranked by level ({} of {}: at most {top}, none more than {floor_db} dB below its point's overall worst; every one in --csv):",
        shown.len(),
        a.findings.len()
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
    if circuit
        .elements
        .iter()
        .any(|e| matches!(e.kind, ElementKind::Damper(_)))
    {
        writeln!(out)?;
        writeln!(out, "{PRESSURE_VESSEL_CAUTION}")?;
    }
    out.flush()?;
    Ok(())
}

fn signed_pressure(pa: f64) -> String {
    if pa < 0.0 {
        format!("−{} over", PressureDisplay(-pa))
    } else {
        format!("{} to spare", PressureDisplay(pa))
    }
}

/// One measurement point's plot: a panel per (load case, pressure), the
/// overall rms against speed, a curve per temperature, the rms limit as a
/// line and the envelope's worst point marked. `None` when no ripple
/// reaches the point anywhere.
fn tap_charts(a: &Assessment, file: &CircuitFile, ti: usize) -> Option<Vec<plot::LineChart>> {
    let tap = &a.taps[ti];
    let worst = a.worst[ti].as_ref()?;
    let limit = file
        .limits
        .iter()
        .find(|l| &l.tap == tap)
        .and_then(|l| l.limits.iter().find(|k| k.kind == LimitKind::Rms));
    // panels in the envelope's order, by (case, pressure)
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
                    name: ps
                        .point
                        .temperature_k
                        .map_or("rms ripple".into(), |t| format!("{:.0} °C", t - 273.15)),
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
            let limit_bar = limit.map(|l| l.value_pa / 1e5);
            let (lo, hi) = series
                .iter()
                .flat_map(|s| s.points.iter().map(|p| p.1))
                .chain(limit_bar)
                .fold((f64::INFINITY, 0.0f64), |(lo, hi), v| {
                    (lo.min(v), hi.max(v))
                });
            plot::LineChart {
                title,
                y_range: (hi > 0.0).then_some((lo / 1.5, hi * 1.5)),
                x_label: "shaft speed (rpm)".into(),
                y_label: "rms ripple (bar)".into(),
                series,
                log_y: true,
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

/// The plot of a measurement point no ripple reaches anywhere.
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
