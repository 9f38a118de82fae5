//! Renderers of [`SweepReport`]: the terminal report, the CSV of the full
//! grid, the speed–frequency map and the chart of overall level against
//! speed.

use super::table::{Align, DIGITS, Quantity, Table, sig};
use super::{heading, level_text, reference_text};
use crate::plot;
use crate::results::solve::OrderBasis;
use crate::results::sweep::SweepReport;
use std::io::Write;
use std::path::{Path, PathBuf};

/// Header of the speed-sweep grid (`sweep --csv`).
pub const SWEEP_HEADER: [&str; 5] = [
    "speed_rpm",
    "point",
    "harmonic",
    "frequency_hz",
    "amplitude_pa",
];

/// Header of the speed-sweep grid with uncertainty bands (`sweep --bands
/// --csv`): the ends of each amplitude's coverage interval (empty when
/// unknown).
pub const SWEEP_BANDS_HEADER: [&str; 7] = [
    "speed_rpm",
    "point",
    "harmonic",
    "frequency_hz",
    "amplitude_pa",
    "amplitude_low_pa",
    "amplitude_high_pa",
];

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

/// The companion file of a map: `sweep.svg` → `sweep-levels.svg`.
pub fn levels_path(map: &Path) -> PathBuf {
    super::companion_path(map, "levels")
}

/// Writes the terminal report.
///
/// # Errors
/// The writer's error.
pub fn text(r: &SweepReport, out: &mut impl Write) -> std::io::Result<()> {
    heading(out, "sweep", &r.subject)?;
    let speeds = &r.speeds_rev_s;
    let names: Vec<String> = r.shaft_pumps.iter().map(|n| format!("`{n}`")).collect();
    writeln!(
        out,
        "shaft `{}` (pump {}): {:.1} .. {:.1} rpm, {} speeds; {} harmonics of each pump; shaft fundamental = speed × {}{}",
        r.shaft,
        names.join(", "),
        speeds[0] * 60.0,
        speeds[speeds.len() - 1] * 60.0,
        speeds.len(),
        r.harmonics,
        r.fundamental_elements,
        match r.order_basis {
            OrderBasis::ShaftFundamental => " (the orders below count it)",
            OrderBasis::PumpingFrequency => "",
        }
    )?;
    for p in &r.other_pumps {
        writeln!(
            out,
            "pump `{}` keeps its own speed, {:.0} rpm: its ripple adds a constant part to the overall levels",
            p.name,
            p.speed_rev_s * 60.0
        )?;
    }
    writeln!(
        out,
        "levels are rms in dB re {}; amplitudes are peak values",
        reference_text(r.db_ref_pa)
    )?;
    let list: Vec<String> = r
        .excited_resonances_hz
        .iter()
        .map(|f| format!("{f:.1}"))
        .collect();
    writeln!(
        out,
        "circuit resonances (peaks of the response P/Qs to the shaft's pumps, as `ripline response` finds them): {} in the band{}",
        r.resonances_hz.len(),
        if list.is_empty() {
            String::new()
        } else {
            format!(
                "; excited by the crossings shown: {} Hz (all in --json)",
                list.join(", ")
            )
        }
    )?;
    writeln!(out)?;
    writeln!(
        out,
        "worst speed per point (overall rms ripple; every crossing between the grid speeds refined to 0.01 dB):"
    )?;
    let unit = Quantity::Pressure.unit_for_all(r.worst.iter().map(|w| w.rms_pa));
    let mut t = Table::new(&[("point", Align::Left), ("speed rpm", Align::Right)])
        .column(format!("rms {}", unit.symbol), Align::Right)
        .column("level", Align::Right);
    for w in &r.worst {
        t.row(vec![
            w.point.clone(),
            format!("{:.1}", w.speed_rev_s * 60.0),
            sig(unit.of(w.rms_pa), DIGITS),
            level_text(w.level_db),
        ]);
    }
    t.write(out, "  ")?;
    if let Some(b) = &r.bands {
        super::bands::sweep_text(b, out)?;
    }
    writeln!(out)?;
    if r.crossings.is_empty() {
        return writeln!(
            out,
            "no resonance crossing: no harmonic level peaks in the speed range"
        );
    }
    let ranking = r.ranking;
    writeln!(
        out,
        "resonance crossings, highest first ({} of {}: those within {} dB of their point's worst level, at most --top {}; all in --json; rise: dB above the harmonic's level away from the resonance; share: its level against the point's overall level):",
        r.shown_crossings.len(),
        r.crossings.len(),
        ranking.floor_db,
        ranking.top
    )?;
    let shown: Vec<_> = r.shown_crossings.iter().map(|&i| &r.crossings[i]).collect();
    let unit = Quantity::Pressure.unit_for_all(shown.iter().map(|c| c.amplitude_pa));
    let mut t = Table::new(&[
        ("speed rpm", Align::Right),
        (r.order_basis.header(), Align::Right),
        ("frequency Hz", Align::Right),
        ("point", Align::Left),
    ])
    .column(format!("amplitude {}", unit.symbol), Align::Right)
    .column("rise dB", Align::Right)
    .column("share dB", Align::Right);
    for c in shown {
        t.row(vec![
            format!("{:.1}", c.speed_rev_s * 60.0),
            c.order.to_string(),
            format!("{:.2}", c.freq_hz),
            c.point.clone(),
            sig(unit.of(c.amplitude_pa), DIGITS),
            format!("{:.1}", c.rise_db),
            // shares are never positive; print the last tenth as 0.0, not -0.0
            format!("{:.1}", if c.share_db > -0.05 { 0.0 } else { c.share_db }),
        ]);
    }
    t.write(out, "  ")
}

/// Writes one row per speed, point and order of the swept shaft (peak
/// amplitude in Pa); with bands, the ends of each amplitude's band
/// ([`SWEEP_BANDS_HEADER`]).
///
/// # Errors
/// The CSV writer's error.
pub fn csv(r: &SweepReport, mut out: impl Write) -> Result<(), csv::Error> {
    use super::decimal::{push_shortest, shortest};
    let result = &r.grid;
    let header: &[&str] = match r.bands {
        Some(_) => &SWEEP_BANDS_HEADER,
        None => &SWEEP_HEADER,
    };
    super::long_csv::write_header(&mut out, header)?;
    // what repeats over the rows, formatted once
    let speeds: Vec<Vec<u8>> = result
        .speeds_rev_s
        .iter()
        .map(|&n| shortest(twelve_digits(n * 60.0)))
        .collect();
    let points = result
        .points
        .iter()
        .map(|p| super::long_csv::field(p))
        .collect::<Result<Vec<_>, _>>()?;
    let (np, no) = (result.points.len(), result.orders.len());
    let freqs: Vec<Vec<u8>> = (0..speeds.len() * no)
        .map(|k| shortest(twelve_digits(result.frequency_hz(k / no, k % no))))
        .collect();
    let orders: Vec<String> = result.orders.iter().map(u32::to_string).collect();
    super::long_csv::write_rows(&mut out, speeds.len() * np * no, |row, out| {
        let (si, pi, oi) = (row / (np * no), row / no % np, row % no);
        out.extend_from_slice(&speeds[si]);
        out.push(b',');
        out.extend_from_slice(&points[pi]);
        out.push(b',');
        out.extend_from_slice(orders[oi].as_bytes());
        out.push(b',');
        out.extend_from_slice(&freqs[si * no + oi]);
        out.push(b',');
        push_shortest(out, result.amplitude_pa(si, pi, oi));
        if let Some(b) = &r.bands {
            let band = b.points.get(pi).and_then(|p| p.amplitudes.get(oi));
            super::long_csv::push_band_ends(out, band.map(|a| (a.low_pa[si], a.high_pa[si])));
        }
        out.push(b'\n');
    })?;
    Ok(())
}

/// `x` rounded to 12 significant digits, so that grid speeds converted
/// between rev/s and rpm print as typed (820, not 820.0000000000001).
fn twelve_digits(x: f64) -> f64 {
    format!("{x:.11e}").parse().unwrap_or(x)
}

/// Whether the map's point has any ripple to draw.
pub fn map_has_ripple(r: &SweepReport) -> bool {
    let g = &r.grid;
    (0..g.speeds_rev_s.len())
        .any(|si| (0..g.orders.len()).any(|oi| g.amplitude_pa(si, r.map_point, oi) > 0.0))
}

/// The speed–frequency map at one point: each order drawn as a band of
/// cells around its line k·f₁(n), coloured by that harmonic's rms level.
pub fn map(r: &SweepReport) -> plot::HeatMap {
    let result = &r.grid;
    let point = r.map_point;
    // only the resonances the crossings shown excite, so the map stays legible
    let (resonances, f_top, p_ref) = (&r.excited_resonances_hz, r.top_hz * 1.05, r.db_ref_pa);
    let title = r.subject.title.as_deref();
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
            let level = 20.0 * ((amp / std::f64::consts::SQRT_2).log10() - p_ref.log10());
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
        z_label: format!("harmonic level, dB re {} (rms)", reference_text(p_ref)),
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
pub fn level_chart(r: &SweepReport) -> plot::LineChart {
    let (result, p_ref) = (&r.grid, r.db_ref_pa);
    let title = r.subject.title.as_deref();
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
            "Overall ripple level against speed — {} (shaft `{}`){}",
            title.unwrap_or("circuit"),
            result.shaft.name,
            r.bands.as_ref().map_or(String::new(), |b| format!(
                "; shaded: {} % uncertainty bands",
                sig(b.info.coverage * 100.0, 3)
            ))
        ),
        x_label: "shaft speed (rpm)".into(),
        y_label: format!("overall level, dB re {} (rms)", reference_text(p_ref)),
        series: result
            .points
            .iter()
            .enumerate()
            .map(|(pi, name)| {
                let kept: Vec<usize> = (0..result.speeds_rev_s.len())
                    .filter(|&si| result.rms_pa(si, pi) > 0.0)
                    .collect();
                let db = |v: f64| 20.0 * (v.log10() - p_ref.log10());
                // the band of the rms in dB, where every end is known and
                // above zero
                let band = r.bands.as_ref().and_then(|b| {
                    let rms = &b.points.get(pi)?.rms_pa;
                    kept.iter()
                        .map(|&si| {
                            let (lo, hi) = rms.get(si)?.interval()?;
                            (lo > 0.0 && hi >= lo).then(|| (db(lo), db(hi)))
                        })
                        .collect::<Option<Vec<_>>>()
                });
                plot::XySeries {
                    name: name.clone(),
                    points: kept
                        .iter()
                        .map(|&si| (result.speeds_rev_s[si] * 60.0, db(result.rms_pa(si, pi))))
                        .collect(),
                    band,
                    ..Default::default()
                }
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
