//! Renderers of [`ResponseResult`]: the terminal report, the response CSV
//! and the stacked response and impedance charts.

use super::heading;
use super::table::{Align, DIGITS, Quantity, Table, phase, sig};
use crate::analysis::response::{Coverage, HarmonicBand, Resonance};
use crate::plot;
use crate::results::Phasor;
use crate::results::response::VerdictRef;
use crate::results::response::{ResonanceVerdict, ResponseResult};
use std::io::Write;

/// Pa per m³/s in one bar per L/min.
pub const BAR_PER_LPM: f64 = 1e5 * 60_000.0;

/// Header of the frequency-response table (`response --csv`).
pub const RESPONSE_HEADER: [&str; 4] =
    ["point", "frequency_hz", "amplitude_pa_per_m3s", "phase_deg"];

/// Header of the frequency-response table with uncertainty bands
/// (`response --bands --csv`): the ends of each amplitude's coverage
/// interval (empty when unknown, or when the bands of the curves did not
/// fit in memory).
pub const RESPONSE_BANDS_HEADER: [&str; 6] = [
    "point",
    "frequency_hz",
    "amplitude_pa_per_m3s",
    "phase_deg",
    "amplitude_low_pa_per_m3s",
    "amplitude_high_pa_per_m3s",
];

/// The name under which the impedance the pump sees appears in the
/// response table (its unit, Pa·s/m³, is also Pa per m³/s).
pub fn load_impedance_point(pump: &str) -> String {
    format!("impedance seen by pump {pump}")
}

/// Writes the terminal report.
///
/// # Errors
/// The writer's error.
pub fn text(r: &ResponseResult, out: &mut impl Write) -> std::io::Result<()> {
    heading(out, "response", &r.subject)?;
    let z = f64::from(r.pump.pumping_elements);
    writeln!(
        out,
        "pump `{}` at node `{}`, {} pumping elements",
        r.pump.name, r.pump.node, r.pump.pumping_elements,
    )?;
    let s = &r.speed_range;
    writeln!(
        out,
        "speed range: {}; pumping frequency {}",
        s.describe_origin(),
        if s.is_single() {
            format!("{:.2} Hz", z * s.low_rev_s)
        } else {
            format!("{:.2}–{:.2} Hz", z * s.low_rev_s, z * s.high_rev_s)
        }
    )?;
    writeln!(
        out,
        "band {:.2}–{:.2} Hz, {} log-spaced frequencies; response = pressure per unit source flow (peak/peak)",
        r.grid.low_hz, r.grid.high_hz, r.grid.points
    )?;
    writeln!(out)?;
    resonances(out, &r.resonances)?;
    if let Some(b) = &r.uncertainty_bands {
        super::bands::response_text(b, out)?;
    }
    writeln!(out)?;
    bands(out, r)?;
    writeln!(out)?;
    verdicts(out, r)?;
    writeln!(out)?;
    load(out, r)
}

fn level_text(r: &Resonance) -> String {
    let base = format!(
        "{:.4e} Pa·s/m³ = {} bar per L/min",
        r.level,
        sig(r.level / BAR_PER_LPM, DIGITS)
    );
    if r.unbounded {
        format!("≥ {base} (undamped: lossless model)")
    } else {
        base
    }
}

fn resonances(out: &mut impl Write, list: &[ResonanceVerdict]) -> std::io::Result<()> {
    if list.is_empty() {
        return writeln!(
            out,
            "resonances: none in the band (no peak with 3 dB prominence)"
        );
    }
    writeln!(
        out,
        "resonances (peaks with at least 3 dB prominence, each refined once where it is highest; Q from the half-power points):"
    )?;
    let mut t = Table::new(&[
        ("#", Align::Right),
        ("frequency Hz", Align::Right),
        ("Q", Align::Right),
        ("peak level", Align::Left),
        ("highest at (also seen at)", Align::Left),
    ]);
    for (i, v) in list.iter().enumerate() {
        let r = &v.resonance;
        let also: Vec<&str> = r
            .seen_at
            .iter()
            .filter(|n| **n != r.point)
            .map(String::as_str)
            .collect();
        t.row(vec![
            (i + 1).to_string(),
            format!("{:.2}", r.freq_hz),
            r.quality.map_or_else(|| "—".into(), |q| format!("{q:.1}")),
            level_text(r),
            if also.is_empty() {
                format!("`{}`", r.point)
            } else {
                format!("`{}` ({})", r.point, also.join(", "))
            },
        ]);
    }
    t.write(out, "  ")
}

fn bands(out: &mut impl Write, r: &ResponseResult) -> std::io::Result<()> {
    let single = r.speed_range.is_single();
    writeln!(out, "harmonic bands over {}:", r.speed_range.describe())?;
    super::silent_orders_note(out, "  ", &r.silent_orders)?;
    for b in &r.bands {
        if single {
            writeln!(out, "  harmonic {:>2}: {:>9.2} Hz", b.order, b.low_hz)?;
        } else {
            writeln!(
                out,
                "  harmonic {:>2}: {:>9.2} – {:>9.2} Hz",
                b.order, b.low_hz, b.high_hz
            )?;
        }
    }
    Ok(())
}

fn verdicts(out: &mut impl Write, r: &ResponseResult) -> std::io::Result<()> {
    writeln!(
        out,
        "verdict (a harmonic band containing a resonance crosses it; one ending within {:.0} % of it is near; ≈ the peak ripple at the crossing, peak level × source flow):",
        r.margin * 100.0
    )?;
    if r.resonances.is_empty() {
        return writeln!(out, "  nothing to cross");
    }
    let count = |crossed: bool| {
        r.resonances
            .iter()
            .flat_map(|v| &v.harmonics)
            .filter(|h| matches!(h.coverage, Coverage::Crossed { .. }) == crossed)
            .count()
    };
    let (crossings, near) = (count(true), count(false));
    let row = |at: &VerdictRef| {
        let v = &r.resonances[at.resonance];
        let h = &v.harmonics[at.harmonic];
        let what = match h.coverage {
            Coverage::Crossed { speed_rev_s } => {
                let estimate = match h.ripple_pa {
                    Some(p) => format!(
                        "≈ {} at `{}`",
                        Quantity::Pressure.show(p),
                        v.resonance.point
                    ),
                    None => "unbounded: lossless model".to_string(),
                };
                format!(
                    "CROSSED by harmonic {} at {:.0} rpm ({estimate})",
                    h.order,
                    speed_rev_s * 60.0
                )
            }
            Coverage::Near { gap, speed_rev_s } => format!(
                "near harmonic {} ({:.1} % away at {:.0} rpm)",
                h.order,
                gap * 100.0,
                speed_rev_s * 60.0
            ),
        };
        format!(
            "  {:>2}  {:>10.2} Hz  {what}",
            at.resonance + 1,
            v.resonance.freq_hz
        )
    };
    if crossings > 0 {
        writeln!(
            out,
            "  crossings, highest ripple first ({} of {}: within {} dB of the highest, at most --top {}):",
            r.shown_crossings.len(),
            crossings,
            r.ranking.floor_db,
            r.ranking.top
        )?;
        for at in &r.shown_crossings {
            writeln!(out, "  {}", row(at))?;
        }
    }
    if near > 0 {
        writeln!(
            out,
            "  near misses, closest first ({} of {}):",
            r.shown_near.len(),
            near
        )?;
        for at in &r.shown_near {
            writeln!(out, "  {}", row(at))?;
        }
    }
    let crossed = r.resonances.iter().filter(|v| v.crossed()).count();
    let clear = r
        .resonances
        .iter()
        .filter(|v| v.harmonics.is_empty())
        .count();
    writeln!(
        out,
        "  {crossed} of {} resonances crossed by a harmonic band, {clear} clear (every verdict in --json)",
        r.resonances.len()
    )
}

fn load(out: &mut impl Write, r: &ResponseResult) -> std::io::Result<()> {
    writeln!(
        out,
        "impedance pump `{}` sees at its harmonics ({:.0} rpm); the full curve is in the CSV as `{}`:",
        r.pump.name,
        r.pump.speed_rev_s * 60.0,
        load_impedance_point(&r.pump.name)
    )?;
    let mut t = Table::new(&[
        ("harmonic", Align::Right),
        ("frequency Hz", Align::Right),
        ("|Z| Pa·s/m³", Align::Right),
        ("phase deg", Align::Right),
    ]);
    for row in &r.load {
        t.row(match row.impedance_pa_s_m3 {
            Some(z) => vec![
                row.order.to_string(),
                format!("{:.2}", row.freq_hz),
                format!("{:.4e}", z.amplitude),
                phase(z.phase_deg),
            ],
            None => vec![
                row.order.to_string(),
                format!("{:.2}", row.freq_hz),
                "unbounded".into(),
                "(an undamped resonance of a lossless model)".into(),
            ],
        });
    }
    t.write(out, "  ")
}

/// Writes one row per point and frequency, then the impedance the pump
/// sees as one more "point" (SI, peak amplitudes).
///
/// # Errors
/// The CSV writer's error.
pub fn csv(r: &ResponseResult, mut out: impl Write) -> Result<(), csv::Error> {
    use super::decimal::{push_shortest, shortest};
    let bands = r.uncertainty_bands.as_ref();
    let header: &[&str] = match bands {
        Some(_) => &RESPONSE_BANDS_HEADER,
        None => &RESPONSE_HEADER,
    };
    super::long_csv::write_header(&mut out, header)?;
    let load = load_impedance_point(&r.pump.name);
    let curves: Vec<(&str, &[Phasor])> = r
        .points
        .iter()
        .map(|p| (p.name.as_str(), p.values_pa_per_m3_s.as_slice()))
        .chain(std::iter::once((
            load.as_str(),
            r.load_impedance_pa_s_m3.as_slice(),
        )))
        .collect();
    let names = curves
        .iter()
        .map(|(name, _)| super::long_csv::field(name))
        .collect::<Result<Vec<_>, _>>()?;
    // the frequencies formatted once for every curve
    let freqs: Vec<Vec<u8>> = r.freqs_hz.iter().map(|&f| shortest(f)).collect();
    let n = freqs.len();
    super::long_csv::write_rows(&mut out, curves.len() * n, |row, out| {
        let (ci, fi) = (row / n, row % n);
        let Some(v) = curves[ci].1.get(fi) else {
            return;
        };
        out.extend_from_slice(&names[ci]);
        out.push(b',');
        out.extend_from_slice(&freqs[fi]);
        out.push(b',');
        push_shortest(out, v.amplitude);
        out.push(b',');
        push_shortest(out, v.phase_deg);
        if let Some(b) = bands {
            let band = b.curves.get(ci).map(|c| (c.low[fi], c.high[fi]));
            super::long_csv::push_band_ends(out, band);
        }
        out.push(b'\n');
    })?;
    Ok(())
}

/// Harmonic bands for a chart: shaded bands over a speed range, or dashed
/// markers when the range is a single speed.
pub fn band_marks(bands: &[HarmonicBand]) -> (Vec<plot::Band>, Vec<plot::Marker>) {
    let label = |order: u32| format!("{order}×");
    let shaded = bands
        .iter()
        .filter(|b| b.high_hz > b.low_hz)
        .map(|b| plot::Band {
            from: b.low_hz,
            to: b.high_hz,
            label: label(b.order),
        })
        .collect();
    let lines = bands
        .iter()
        .filter(|b| b.high_hz == b.low_hz)
        .map(|b| plot::Marker {
            value: b.low_hz,
            label: label(b.order),
        })
        .collect();
    (shaded, lines)
}

/// The response curves (log–log) with the harmonic bands shaded and the
/// resonances marked, above the impedance the pump sees.
pub fn charts(r: &ResponseResult) -> Vec<plot::LineChart> {
    let (x_bands, mut x_markers) = band_marks(&r.bands);
    // Label the resonances that a harmonic crosses or nears; mark all.
    x_markers.extend(
        r.resonances
            .iter()
            .filter(|v| !v.harmonics.is_empty())
            .map(|v| plot::Marker {
                value: v.resonance.freq_hz,
                label: format!("{:.0} Hz", v.resonance.freq_hz),
            }),
    );
    // A point held at zero ripple (a tank) has nothing to draw on a log axis.
    let curve_bands = r.uncertainty_bands.as_ref().map(|b| &b.curves);
    let band = |ci: usize, scale: f64| {
        let c = curve_bands?.get(ci)?;
        c.low
            .iter()
            .zip(&c.high)
            .map(|(&lo, &hi)| {
                (lo.is_finite() && hi.is_finite() && hi > 0.0)
                    .then(|| (lo / scale, (hi / scale).max(1e-300)))
            })
            .collect::<Option<Vec<_>>>()
    };
    let series = r
        .points
        .iter()
        .enumerate()
        .filter(|(_, p)| p.values_pa_per_m3_s.iter().any(|v| v.amplitude > 0.0))
        .map(|(ci, p)| plot::XySeries {
            name: p.name.clone(),
            points: r
                .freqs_hz
                .iter()
                .zip(&p.values_pa_per_m3_s)
                .map(|(f, v)| (*f, (v.amplitude / BAR_PER_LPM).max(1e-300)))
                .collect(),
            band: band(ci, BAR_PER_LPM),
            ..Default::default()
        })
        .collect();
    let point_markers = r
        .resonances
        .iter()
        .map(|v| plot::PointMarker {
            x: v.resonance.freq_hz,
            y: v.resonance.level / BAR_PER_LPM,
            label: String::new(),
        })
        .collect();
    let name = r.subject.title.as_deref().unwrap_or(&r.pump.name);
    let shaded = match &r.uncertainty_bands {
        Some(b) if !b.curves.is_empty() => format!(
            "; shaded: {} % uncertainty bands",
            super::table::sig(b.info.coverage * 100.0, 3)
        ),
        _ => String::new(),
    };
    let top = plot::LineChart {
        title: format!("Response per unit source flow — {name}{shaded}"),
        x_label: "frequency (Hz)".into(),
        y_label: "pressure per source flow (bar per L/min)".into(),
        series,
        log_x: true,
        log_y: true,
        x_markers,
        point_markers,
        x_bands: x_bands.clone(),
        ..Default::default()
    };
    let load = plot::LineChart {
        title: format!(
            "Impedance seen by pump {}; shaded: harmonic bands over the speed range",
            r.pump.name
        ),
        x_label: "frequency (Hz)".into(),
        y_label: "|Z| (Pa·s/m³)".into(),
        series: vec![plot::XySeries {
            name: "load impedance".into(),
            points: r
                .freqs_hz
                .iter()
                .zip(&r.load_impedance_pa_s_m3)
                .map(|(f, z)| (*f, z.amplitude.max(1e-300)))
                .collect(),
            band: band(r.points.len(), 1.0),
            ..Default::default()
        }],
        log_x: true,
        log_y: true,
        x_bands,
        ..Default::default()
    };
    vec![top, load]
}
