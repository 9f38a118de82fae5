//! `ripline sweep [FILE] --speed LOW..HIGH --step STEP`: the ripple of a
//! shaft's pumps over a speed range, and every resonance crossing.

use super::common::{self, UsageError};
use super::ranges::{Progress, parse_range};
use anyhow::Context;
use clap::Args;
use ripline::analysis::sweep::{SweepResult, SweepSettings, shaft_resonances, sweep};
use ripline::io::csv_out::write_sweep_csv;
use ripline::network::Plan;
use ripline::plot;
use ripline::units::Dimension;
use ripline::units::PressureDisplay;
use std::io::Write;
use std::path::{Path, PathBuf};

/// Default number of speed steps when `--step` is not given.
const DEFAULT_STEPS: f64 = 200.0;
/// Most speeds a sweep may hold.
const MAX_SPEEDS: usize = 20_001;
/// Most amplitudes (speeds × points × orders) a sweep may hold: bounds its
/// time (about one solve per speed and order) and memory (the grid, the
/// map and the crossings grow with it).
const MAX_CELLS: usize = 2_000_000;
/// Rows of the frequency axis of the map.
const MAP_ROWS: usize = 300;
/// Rows added either side of an order line on the map, so its colour shows
/// around the line drawn over it.
const MAP_LINE_HALF_WIDTH: usize = 3;
/// Colour range of the map below its highest level, in dB.
const MAP_RANGE_DB: f64 = 60.0;
/// Crossings marked on the level chart: those whose harmonic is within this
/// many dB of the point's overall level (at least a quarter of its mean
/// square).
const DOMINANT_SHARE_DB: f64 = -6.0;

#[derive(Debug, Args)]
pub struct SweepArgs {
    /// Circuit file (YAML); the built-in demo circuit when omitted.
    file: Option<PathBuf>,
    /// Speed range LOW..HIGH, in rpm unless a unit is given (e.g.
    /// "600..3000"); default: the pump's `speed_range`.
    #[arg(long, value_name = "LOW..HIGH", visible_alias = "speed-range")]
    speed: Option<String>,
    /// Speed step, in rpm unless a unit is given; default: the range / 200.
    #[arg(long, value_name = "STEP")]
    step: Option<String>,
    /// The shaft to sweep (a `shaft` name, or a pump's name); default: the
    /// first pump's. Pumps on other shafts keep their own speed.
    #[arg(long, value_name = "NAME")]
    shaft: Option<String>,
    /// Number of harmonics of each pump's pumping frequency (overrides the file).
    #[arg(long, value_name = "N")]
    harmonics: Option<u32>,
    /// Smallest rise, in dB above the level away from the resonance, for a
    /// peak to count as a resonance crossing.
    #[arg(
        long,
        value_name = "DB",
        default_value_t = 3.0,
        allow_negative_numbers = true
    )]
    min_rise: f64,
    /// Reference pressure for levels in dB (rms), e.g. "1 Pa" or "1 bar".
    #[arg(long, value_name = "PRESSURE", default_value = "1 Pa")]
    db_ref: String,
    /// The measurement point shown on the map; default: the one with the
    /// highest level.
    #[arg(long, value_name = "NAME", visible_alias = "tap")]
    point: Option<String>,
    /// Write the full grid as CSV (speed_rpm,point,harmonic,frequency_hz,amplitude_pa).
    #[arg(long, value_name = "FILE")]
    csv: Option<PathBuf>,
    /// Write the speed–frequency map to FILE and the overall level against
    /// speed to FILE-levels (.svg or .png).
    #[arg(long, value_name = "FILE")]
    plot: Option<PathBuf>,
}

/// The companion file of a map: `sweep.svg` → `sweep-levels.svg`.
pub fn levels_path(map: &Path) -> PathBuf {
    let stem = map
        .file_stem()
        .map_or_else(|| "sweep".into(), |s| s.to_string_lossy().into_owned());
    let ext = map
        .extension()
        .map(|e| format!(".{}", e.to_string_lossy()))
        .unwrap_or_default();
    map.with_file_name(format!("{stem}-levels{ext}"))
}

pub fn run(args: SweepArgs) -> anyhow::Result<()> {
    if !(args.min_rise.is_finite() && args.min_rise >= 0.0) {
        return Err(UsageError(format!(
            "--min-rise must be a number of dB, zero or more, found {}",
            args.min_rise
        ))
        .into());
    }
    let common::Prepared {
        p_ref,
        csv: csv_path,
        plot: plot_path,
        loaded,
    } = common::prepare(
        &args.db_ref,
        args.csv.as_deref(),
        args.plot.as_deref(),
        args.file.as_deref(),
        args.harmonics,
    )?;
    let levels_plot = plot_path.as_deref().map(levels_path);
    let mut outputs = common::plan_outputs(
        &[],
        &[
            ("--csv", csv_path.as_deref()),
            ("--plot", plot_path.as_deref()),
            ("--plot (its levels chart)", levels_plot.as_deref()),
        ],
        false,
    )?;
    let shaft = common::pick_shaft(&loaded.circuit, args.shaft.as_deref())?;
    let (low, high) = match &args.speed {
        Some(text) => {
            let (lo, hi) = parse_range("--speed", text, Dimension::ShaftSpeed, "rpm")?;
            if hi > 1000.0 {
                return Err(UsageError(format!(
                    "--speed {text}: speeds must be at most 60000 rpm"
                ))
                .into());
            }
            (lo, hi)
        }
        None => shaft
            .speed_range_rev_s(&loaded.circuit.pumps)
            .ok_or_else(|| {
                UsageError(format!(
                    "shaft `{}` has no speed range: give --speed LOW..HIGH or add `speed_range` to its pump",
                    shaft.name
                ))
            })?,
    };
    let step = match &args.step {
        Some(text) => common::speed_option("--step", text)?,
        None => (high - low) / DEFAULT_STEPS,
    };
    let count = ((high - low) / step * (1.0 + 1e-12)).floor() as usize + 1;
    if !(3..=MAX_SPEEDS).contains(&count) {
        return Err(UsageError(format!(
            "--step {:.3} rpm gives {count} speeds over {:.1} .. {:.1} rpm: between 3 and {MAX_SPEEDS} are allowed",
            step * 60.0,
            low * 60.0,
            high * 60.0
        ))
        .into());
    }
    let mut speeds: Vec<f64> = (0..count).map(|i| low + i as f64 * step).collect();
    if high - speeds[count - 1] > 1e-9 * high {
        speeds.push(high);
    }
    let circuit = &loaded.circuit;
    let orders = shaft.orders(&circuit.pumps, circuit.harmonics);
    let points = ripline::analysis::ripple::report_points(circuit);
    let cells = speeds.len() * orders.len() * points.len();
    if cells > MAX_CELLS {
        return Err(UsageError(format!(
            "{} speeds × {} points × {} harmonics is {cells} amplitudes, more than {MAX_CELLS}: use a larger --step or fewer --harmonics",
            speeds.len(),
            points.len(),
            orders.len()
        ))
        .into());
    }
    let map_point = match &args.point {
        Some(name) => Some(points.iter().position(|p| &p.name == name).ok_or_else(|| {
            UsageError(format!(
                "--point {name}: the circuit has no measurement point of that name"
            ))
        })?),
        None => None,
    };

    let top_hz = orders
        .last()
        .map_or(0.0, |&j| f64::from(j) * shaft.fundamental_hz(high));
    for w in ripline::diagnostics::circuit_warnings(circuit, top_hz) {
        eprintln!("warning: {w}");
    }
    let plan = Plan::compile(circuit).map_err(|e| UsageError(format!("{}: {e}", loaded.source)))?;
    let bar = Progress::new(speeds.len(), "sweeping speeds");
    let settings = SweepSettings {
        speeds_rev_s: speeds,
        harmonics: circuit.harmonics,
        min_rise_db: args.min_rise,
    };
    let result = sweep(&plan, &shaft, &settings, &mut |done| bar.set(done))
        .with_context(|| format!("sweeping {}", loaded.source))?;
    bar.finish();
    // the band of the map: from a quarter of the lowest harmonic at the
    // lowest speed (as `response` does) to a little above the highest
    let low_hz = orders
        .first()
        .map_or(1.0, |&j| f64::from(j) * shaft.fundamental_hz(low));
    let resonances: Vec<f64> =
        shaft_resonances(&plan, &shaft, 0.25 * low_hz, 1.05 * top_hz, args.min_rise)
            .with_context(|| format!("finding the resonances of {}", loaded.source))?
            .iter()
            .map(|r| r.freq_hz)
            .collect();
    ensure_finite(&result)?;
    const SHOWN_WARNINGS: usize = 10;
    for w in result.warnings.iter().take(SHOWN_WARNINGS) {
        eprintln!("warning: {w}");
    }
    if result.warnings.len() > SHOWN_WARNINGS {
        eprintln!(
            "warning: {} more nearly singular frequencies in the sweep",
            result.warnings.len() - SHOWN_WARNINGS
        );
    }

    if let Some(path) = &csv_path {
        common::stage_csv(&mut outputs, path, |buf| write_sweep_csv(&result, buf))?;
    }
    let map_point = map_point.unwrap_or_else(|| loudest_point(&result));
    if let Some(path) = &plot_path {
        let drawn = (0..result.speeds_rev_s.len()).any(|si| {
            (0..result.orders.len()).any(|oi| result.amplitude_pa(si, map_point, oi) > 0.0)
        });
        if !drawn {
            return Err(UsageError(format!(
                "--plot: the swept pumps make no ripple at `{}` at any speed (are their harmonics in the table?), so there is nothing to draw",
                result.points[map_point]
            ))
            .into());
        }
        let title = circuit.title.as_deref();
        let map = map(&result, map_point, &resonances, top_hz * 1.05, p_ref, title);
        outputs
            .stage_with(path, |tmp| plot::heat_map(tmp, &map))
            .with_context(|| format!("drawing {}", path.display()))?;
        let levels = levels_path(path);
        let chart = level_chart(&result, p_ref, title);
        outputs
            .stage_with(&levels, |tmp| plot::line_chart(tmp, &chart))
            .with_context(|| format!("drawing {}", levels.display()))?;
    }
    common::commit(outputs)?;
    print_report(&loaded.source, circuit, &result, &resonances, p_ref)?;
    Ok(())
}

/// Refuses to print a result that is not a finite number.
fn ensure_finite(result: &SweepResult) -> anyhow::Result<()> {
    for si in 0..result.speeds_rev_s.len() {
        for (pi, point) in result.points.iter().enumerate() {
            for oi in 0..result.orders.len() {
                if !result.amplitude_pa(si, pi, oi).is_finite() {
                    anyhow::bail!(
                        "the ripple at `{point}`, harmonic {} at {:.2} rpm, is not a finite number",
                        result.orders[oi],
                        result.speeds_rev_s[si] * 60.0
                    );
                }
            }
        }
    }
    Ok(())
}

/// The point whose worst overall level is the highest.
fn loudest_point(result: &SweepResult) -> usize {
    (0..result.points.len())
        .map(|p| (p, result.worst(p).value_pa))
        .fold(
            (0, f64::NEG_INFINITY),
            |best, x| if x.1 > best.1 { x } else { best },
        )
        .0
}

fn print_report(
    source: &str,
    circuit: &ripline::Circuit,
    result: &SweepResult,
    resonances: &[f64],
    p_ref: f64,
) -> anyhow::Result<()> {
    let shaft = &result.shaft;
    let speeds = &result.speeds_rev_s;
    let mut out = std::io::stdout().lock();
    common::write_heading(&mut out, "sweep", source, circuit)?;
    let names: Vec<String> = shaft
        .pumps
        .iter()
        .map(|&i| format!("`{}`", circuit.pumps[i].name))
        .collect();
    writeln!(
        out,
        "shaft `{}` (pump {}): {:.1} .. {:.1} rpm, {} speeds; {} harmonics of each pump; shaft fundamental = speed × {}",
        shaft.name,
        names.join(", "),
        speeds[0] * 60.0,
        speeds[speeds.len() - 1] * 60.0,
        speeds.len(),
        circuit.harmonics,
        shaft.fundamental_elements
    )?;
    for (i, p) in circuit.pumps.iter().enumerate() {
        if !shaft.pumps.contains(&i) {
            writeln!(
                out,
                "pump `{}` keeps its own speed, {:.0} rpm: its ripple adds a constant part to the overall levels",
                p.name,
                p.speed_rev_s * 60.0
            )?;
        }
    }
    writeln!(
        out,
        "levels are rms in dB re {}; amplitudes are peak values",
        common::reference_text(p_ref)
    )?;
    let list: Vec<String> = resonances.iter().map(|f| format!("{f:.1}")).collect();
    writeln!(
        out,
        "circuit resonances (peaks of the response P/Qs to the shaft's pumps, as `ripline response` finds them): {}",
        if list.is_empty() {
            "none in the band".to_string()
        } else {
            format!("{} Hz", list.join(", "))
        }
    )?;
    writeln!(out)?;
    writeln!(
        out,
        "worst speed per point (overall rms ripple; every crossing between the grid speeds refined to 0.01 dB):"
    )?;
    let width = result
        .points
        .iter()
        .map(|p| p.len())
        .max()
        .unwrap_or(5)
        .max(5);
    writeln!(
        out,
        "  {:<width$}  {:>9}  {:>12}  {:>9}",
        "point", "speed rpm", "rms", "level"
    )?;
    for (pi, point) in result.points.iter().enumerate() {
        let worst = result.worst(pi);
        let rms = worst.value_pa;
        writeln!(
            out,
            "  {point:<width$}  {:>9.1}  {:>12}  {:>9}",
            worst.speed_rev_s * 60.0,
            PressureDisplay(rms).to_string(),
            common::level_text(rms, p_ref)
        )?;
    }
    writeln!(out)?;
    if result.crossings.is_empty() {
        writeln!(
            out,
            "no resonance crossing: no harmonic level peaks in the speed range"
        )?;
    } else {
        writeln!(
            out,
            "resonance crossings ({}; rise: dB above the harmonic's level away from the resonance; share: its level against the point's overall level):",
            result.crossings.len()
        )?;
        writeln!(
            out,
            "  {:>9}  {:>8}  {:>12}  {:<width$}  {:>12}  {:>7}  {:>8}",
            "speed rpm", "harmonic", "frequency Hz", "point", "amplitude", "rise dB", "share dB"
        )?;
        for c in &result.crossings {
            writeln!(
                out,
                "  {:>9.1}  {:>8}  {:>12.2}  {:<width$}  {:>12}  {:>7.1}  {:>8.1}",
                c.speed_rev_s * 60.0,
                c.order,
                c.freq_hz,
                result.points[c.point],
                PressureDisplay(c.amplitude_pa).to_string(),
                c.rise_db,
                // shares are never positive; print the last tenth as 0.0, not -0.0
                if c.share_db > -0.05 { 0.0 } else { c.share_db }
            )?;
        }
    }
    out.flush()?;
    Ok(())
}

/// The speed–frequency map at one point: each order drawn as a band of
/// cells around its line k·f₁(n), coloured by that harmonic's rms level.
fn map(
    result: &SweepResult,
    point: usize,
    resonances: &[f64],
    f_top: f64,
    p_ref: f64,
    title: Option<&str>,
) -> plot::HeatMap {
    let speeds = &result.speeds_rev_s;
    let rpm: Vec<f64> = speeds.iter().map(|s| s * 60.0).collect();
    let dy = f_top / MAP_ROWS as f64;
    let y: Vec<f64> = (0..MAP_ROWS).map(|i| (i as f64 + 0.5) * dy).collect();
    let mut z = vec![vec![f64::NAN; MAP_ROWS]; speeds.len()];
    let row = |f: f64| ((f / dy).floor().max(0.0) as usize).min(MAP_ROWS - 1);
    let mut top = f64::NEG_INFINITY;
    for (si, column) in z.iter_mut().enumerate() {
        // the speed interval this column stands for
        let lo = if si == 0 {
            speeds[0]
        } else {
            0.5 * (speeds[si - 1] + speeds[si])
        };
        let hi = speeds
            .get(si + 1)
            .map_or(speeds[si], |n| 0.5 * (speeds[si] + n));
        for (oi, &order) in result.orders.iter().enumerate() {
            let amp = result.amplitude_pa(si, point, oi);
            if amp <= 0.0 {
                continue;
            }
            let level = common::db_re(amp / std::f64::consts::SQRT_2, p_ref);
            top = top.max(level);
            let f1 = result.shaft.fundamental_hz(1.0) * f64::from(order);
            if f1 * lo > f_top {
                continue;
            }
            let (a, b) = (row(f1 * lo), row(f1 * hi));
            let from = a.saturating_sub(MAP_LINE_HALF_WIDTH);
            let to = (b + MAP_LINE_HALF_WIDTH).min(MAP_ROWS - 1);
            for cell in &mut column[from..=to] {
                *cell = if cell.is_nan() {
                    level
                } else {
                    cell.max(level)
                };
            }
        }
    }
    let (n0, n1) = (speeds[0], speeds[speeds.len() - 1]);
    plot::HeatMap {
        title: format!(
            "Ripple map at `{}` — {} (shaft `{}`)",
            result.points[point],
            title.unwrap_or("circuit"),
            result.shaft.name
        ),
        x_label: "shaft speed (rpm)".into(),
        y_label: "frequency (Hz)".into(),
        z_label: format!(
            "harmonic level, dB re {} (rms)",
            common::reference_text(p_ref)
        ),
        x: rpm,
        y,
        z,
        z_range: top.is_finite().then_some((top - MAP_RANGE_DB, top)),
        // the order lines of the harmonics that reach this point
        lines: result
            .orders
            .iter()
            .enumerate()
            .filter(|&(oi, _)| (0..speeds.len()).any(|si| result.amplitude_pa(si, point, oi) > 0.0))
            .map(|(_, &order)| {
                let f1 = result.shaft.fundamental_hz(1.0) * f64::from(order);
                plot::Polyline {
                    label: format!("{order}×"),
                    points: vec![(n0 * 60.0, f1 * n0), (n1 * 60.0, f1 * n1)],
                }
            })
            .collect(),
        y_markers: resonances
            .iter()
            .filter(|&&f| f < f_top)
            .map(|&f| plot::Marker {
                value: f,
                label: format!("{f:.0} Hz"),
            })
            .collect(),
        ..Default::default()
    }
}

/// Overall level against speed, one curve per point, with the crossings
/// that carry most of a point's ripple marked.
fn level_chart(result: &SweepResult, p_ref: f64, title: Option<&str>) -> plot::LineChart {
    let mut markers: Vec<(f64, u32)> = Vec::new();
    for c in result
        .crossings
        .iter()
        .filter(|c| c.share_db >= DOMINANT_SHARE_DB)
    {
        let rpm = c.speed_rev_s * 60.0;
        if !markers
            .iter()
            .any(|&(r, o)| o == c.order && (r - rpm).abs() < 0.005 * rpm)
        {
            markers.push((rpm, c.order));
        }
    }
    plot::LineChart {
        title: format!(
            "Overall ripple level against speed — {} (shaft `{}`)",
            title.unwrap_or("circuit"),
            result.shaft.name
        ),
        x_label: "shaft speed (rpm)".into(),
        y_label: format!(
            "overall level, dB re {} (rms)",
            common::reference_text(p_ref)
        ),
        series: result
            .points
            .iter()
            .enumerate()
            .map(|(pi, name)| plot::XySeries {
                name: name.clone(),
                points: result
                    .speeds_rev_s
                    .iter()
                    .enumerate()
                    .filter_map(|(si, s)| {
                        let rms = result.rms_pa(si, pi);
                        (rms > 0.0).then(|| (s * 60.0, common::db_re(rms, p_ref)))
                    })
                    .collect(),
                ..Default::default()
            })
            .collect(),
        x_markers: markers
            .into_iter()
            .map(|(rpm, order)| plot::Marker {
                value: rpm,
                label: format!("{order}×"),
            })
            .collect(),
        ..Default::default()
    }
}
