//! Renderers of [`SolveResult`]: the terminal report, the harmonic CSV
//! table, the waveform CSV, the bar chart and the waveform chart.

use super::table::Quantity;
use super::{harmonic_table, heading, level_text};
use crate::plot;
use crate::results::solve::{OrderBasis, SolveResult, SourceRipple};
use std::io::Write;

/// Header of the harmonic table (`solve --csv`); with pumps on several
/// shafts, a leading `source` column (the shaft, or the pump on a shaft of
/// its own).
pub const RIPPLE_HEADER: [&str; 5] = [
    "point",
    "harmonic",
    "frequency_hz",
    "amplitude_pa",
    "phase_deg",
];

/// Header of the harmonic table with uncertainty bands (`solve --bands`):
/// the ends of each amplitude's coverage interval (empty when unknown).
pub const RIPPLE_BANDS_HEADER: [&str; 7] = [
    "point",
    "harmonic",
    "frequency_hz",
    "amplitude_pa",
    "phase_deg",
    "amplitude_low_pa",
    "amplitude_high_pa",
];

/// Header of the waveform table (`solve --waveform FILE.csv`) with one
/// source; with several, a leading `source` column.
pub const WAVEFORM_HEADER: [&str; 4] = ["point", "shaft_angle_deg", "time_s", "pressure_pa"];

/// Writes the terminal report.
///
/// # Errors
/// The writer's error.
pub fn text(r: &SolveResult, out: &mut impl Write) -> std::io::Result<()> {
    heading(out, "solve", &r.subject)?;
    for pump in &r.pumps {
        writeln!(
            out,
            "pump `{}` at node `{}`: {:.0} rpm × {} pumping elements = pumping frequency {:.2} Hz",
            pump.name,
            pump.node,
            pump.speed_rev_s * 60.0,
            pump.pumping_elements,
            pump.pumping_frequency_hz
        )?;
    }
    let several = r.several_sources();
    for s in r.sources.iter().filter(|s| s.pumps.len() > 1) {
        writeln!(
            out,
            "shaft `{}`: its pumps are solved together; {} {:.2} Hz",
            s.name,
            match s.order_basis {
                OrderBasis::ShaftFundamental => "orders are of the shaft fundamental",
                OrderBasis::PumpingFrequency => "harmonics are of the common pumping frequency",
            },
            s.fundamental_hz
        )?;
    }
    if several {
        writeln!(
            out,
            "pumps on different shafts are solved one shaft at a time and add up in power in the overall level"
        )?;
    }
    writeln!(
        out,
        "amplitudes are peak values; overall levels are rms (dB re {})",
        super::reference_text(r.db_ref_pa)
    )?;
    for (i, total) in r.totals.iter().enumerate() {
        writeln!(out)?;
        writeln!(out, "point `{}`", total.point)?;
        for s in &r.sources {
            let p = &s.points[i];
            if several {
                writeln!(out, "  source `{}`", s.name)?;
            }
            let unit = Quantity::Pressure.unit_for_all(
                p.harmonics
                    .iter()
                    .map(|h| h.pressure_pa.amplitude)
                    .chain([p.rms_pa, p.peak_to_peak_pa]),
            );
            let t = harmonic_table(
                s.order_basis.header(),
                unit,
                p.harmonics
                    .iter()
                    .map(|h| (h.order, h.freq_hz, h.pressure_pa)),
            );
            t.write(out, "  ")?;
            super::silent_orders_note(out, "  ", &s.silent_orders)?;
            writeln!(
                out,
                "  {}: {} rms, {}, {} peak-to-peak",
                if several { "source overall" } else { "overall" },
                unit.show(p.rms_pa),
                level_text(p.level_db),
                unit.show(p.peak_to_peak_pa)
            )?;
        }
        if several {
            writeln!(
                out,
                "  overall, all sources: {} rms, {}",
                Quantity::Pressure.show(total.rms_pa),
                level_text(total.level_db)
            )?;
        }
    }
    if let Some(b) = &r.bands {
        super::bands::ripple_text(b, out)?;
    }
    Ok(())
}

/// Writes the harmonic table: one row per (source,) point and harmonic,
/// SI, peak amplitudes.
///
/// # Errors
/// The CSV writer's error.
pub fn csv(r: &SolveResult, out: impl Write) -> Result<(), csv::Error> {
    if let Some(b) = &r.bands {
        return per_source(r, RIPPLE_BANDS_HEADER, out, |s| {
            let Some(sb) = b.sources.iter().find(|x| x.name == s.name) else {
                return Vec::new();
            };
            s.points
                .iter()
                .zip(&sb.points)
                .flat_map(|(p, pb)| {
                    p.harmonics.iter().zip(&pb.harmonics).map(|(h, hb)| {
                        let (lo, hi) = hb
                            .amplitude_pa
                            .interval()
                            .map_or((String::new(), String::new()), |(lo, hi)| {
                                (format!("{lo}"), format!("{hi}"))
                            });
                        [
                            p.point.clone(),
                            h.order.to_string(),
                            format!("{}", h.freq_hz),
                            format!("{}", h.pressure_pa.amplitude),
                            format!("{}", h.pressure_pa.phase_deg),
                            lo,
                            hi,
                        ]
                    })
                })
                .collect()
        });
    }
    per_source(r, RIPPLE_HEADER, out, |s| {
        s.points
            .iter()
            .flat_map(|p| {
                p.harmonics.iter().map(|h| {
                    [
                        p.point.clone(),
                        h.order.to_string(),
                        format!("{}", h.freq_hz),
                        format!("{}", h.pressure_pa.amplitude),
                        format!("{}", h.pressure_pa.phase_deg),
                    ]
                })
            })
            .collect()
    })
}

/// Writes the waveforms (solved with `waveform: true`): one row per
/// (source,) point and sample, pressure in Pa.
///
/// # Errors
/// The CSV writer's error.
pub fn waveform_csv(r: &SolveResult, out: impl Write) -> Result<(), csv::Error> {
    per_source(r, WAVEFORM_HEADER, out, |s| {
        s.points
            .iter()
            .filter_map(|p| p.waveform.as_ref().map(|w| (p, w)))
            .flat_map(|(p, w)| {
                w.shaft_angle_deg
                    .iter()
                    .zip(&w.time_s)
                    .zip(&w.pressure_pa)
                    .map(|((a, t), v)| {
                        [
                            p.point.clone(),
                            format!("{a}"),
                            format!("{t}"),
                            format!("{v}"),
                        ]
                    })
            })
            .collect()
    })
}

/// Writes `header` and each source's `rows`; with several sources, a
/// leading `source` column holds the source's name.
fn per_source<const N: usize>(
    r: &SolveResult,
    header: [&str; N],
    out: impl Write,
    rows: impl Fn(&SourceRipple) -> Vec<[String; N]>,
) -> Result<(), csv::Error> {
    let mut w = csv::Writer::from_writer(out);
    let several = r.several_sources();
    if several {
        w.write_record(std::iter::once("source").chain(header))?;
    } else {
        w.write_record(header)?;
    }
    for s in &r.sources {
        for row in rows(s) {
            if several {
                w.write_record(std::iter::once(s.name.clone()).chain(row))?;
            } else {
                w.write_record(row)?;
            }
        }
    }
    w.flush()?;
    Ok(())
}

/// The bar chart of the harmonic amplitudes per point.
pub fn chart(r: &SolveResult) -> plot::BarChart {
    let several = r.several_sources();
    let first = &r.sources[0];
    let categories: Vec<String> = r
        .sources
        .iter()
        .flat_map(|s| {
            s.points.first().into_iter().flat_map(move |p| {
                p.harmonics.iter().map(move |h| {
                    if several {
                        format!("{} {}", s.name, h.order)
                    } else {
                        h.order.to_string()
                    }
                })
            })
        })
        .collect();
    let name = r.subject.title.as_deref().unwrap_or(&first.name);
    let title = if several {
        format!("Pressure ripple per harmonic — {name}")
    } else {
        format!(
            "Pressure ripple per harmonic — {name} ({:.0} rpm, {} {:.1} Hz)",
            first.speed_rev_s * 60.0,
            match first.order_basis {
                OrderBasis::PumpingFrequency => "f_p =",
                OrderBasis::ShaftFundamental => "shaft fundamental",
            },
            first.fundamental_hz
        )
    };
    let x_label = if several {
        "source and order".to_string()
    } else {
        first.order_basis.describe().to_string()
    };
    let unit = Quantity::Pressure.unit_for_all(
        r.sources
            .iter()
            .flat_map(|s| &s.points)
            .flat_map(|p| p.harmonics.iter().map(|h| h.pressure_pa.amplitude)),
    );
    let title = match &r.bands {
        Some(b) => format!(
            "{title}; boxes: {} % uncertainty bands",
            super::table::sig(b.info.coverage * 100.0, 3)
        ),
        None => title,
    };
    plot::BarChart {
        title,
        x_label,
        y_label: format!("pressure ripple amplitude, peak ({})", unit.symbol),
        categories,
        series: r
            .totals
            .iter()
            .enumerate()
            .map(|(i, t)| plot::Series {
                name: t.point.clone(),
                values: r
                    .sources
                    .iter()
                    .flat_map(|s| s.points[i].harmonics.iter())
                    .map(|h| unit.of(h.pressure_pa.amplitude))
                    .collect(),
                bands: r.bands.as_ref().and_then(|b| {
                    // every harmonic's band of this point, in the order of
                    // the bars; none when one is unknown
                    r.sources
                        .iter()
                        .map(|s| {
                            let sb = b.sources.iter().find(|x| x.name == s.name)?;
                            let pb = sb.points.get(i)?;
                            (pb.harmonics.len() == s.points[i].harmonics.len()).then_some(pb)
                        })
                        .collect::<Option<Vec<_>>>()?
                        .into_iter()
                        .flat_map(|pb| pb.harmonics.iter())
                        .map(|h| {
                            h.amplitude_pa
                                .interval()
                                .map(|(lo, hi)| (unit.of(lo), unit.of(hi)))
                        })
                        .collect::<Option<Vec<_>>>()
                }),
            })
            .collect(),
        // a log axis keeps the higher harmonics (tens of dB down) visible
        log_y: true,
        ..Default::default()
    }
}

/// The waveform charts (solved with `waveform: true`): one panel per
/// source, pressure against shaft angle over two revolutions, each point's
/// highest and lowest values marked with its peak-to-peak value.
pub fn waveform_charts(r: &SolveResult) -> Vec<plot::LineChart> {
    let name = r.subject.title.as_deref().unwrap_or("circuit");
    r.sources
        .iter()
        .map(|s| {
            let unit = Quantity::Pressure.unit_for_all(
                s.points
                    .iter()
                    .filter_map(|p| p.waveform.as_ref())
                    .flat_map(|w| [w.max.1, w.min.1]),
            );
            let mut markers = Vec::new();
            let series = s
                .points
                .iter()
                .filter_map(|p| p.waveform.as_ref().map(|w| (p, w)))
                .map(|(p, w)| {
                    markers.push(plot::PointMarker {
                        x: w.max.0,
                        y: unit.of(w.max.1),
                        label: format!("{} p-p {}", p.point, unit.show(p.peak_to_peak_pa)),
                    });
                    markers.push(plot::PointMarker {
                        x: w.min.0,
                        y: unit.of(w.min.1),
                        label: String::new(),
                    });
                    plot::XySeries {
                        name: p.point.clone(),
                        points: w
                            .shaft_angle_deg
                            .iter()
                            .zip(&w.pressure_pa)
                            .map(|(a, v)| (*a, unit.of(*v)))
                            .collect(),
                        ..Default::default()
                    }
                })
                .collect();
            plot::LineChart {
                title: format!(
                    "Ripple waveform, {} at {:.0} rpm — {name}",
                    s.name,
                    s.speed_rev_s * 60.0
                ),
                x_label: "shaft angle (deg)".into(),
                y_label: format!("pressure ripple ({})", unit.symbol),
                series,
                x_range: Some((0.0, 720.0)),
                point_markers: markers,
                ..Default::default()
            }
        })
        .collect()
}
