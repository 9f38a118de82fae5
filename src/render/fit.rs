//! Renderers of [`FitResult`]: the terminal report (each value and its ±
//! in one unit per column, rounded where the uncertainty ends), the CSV of
//! the estimates and the amplitude/phase charts with error bars.

use super::table::{Align, Quantity, Table, Unit, pm, with_uncertainty};
use crate::estimate::fit::HarmonicStatus;
use crate::plot;
use crate::results::fit::{EquivalentResult, EstimateResult, FitResult, HarmonicFit};
use std::io::Write;

/// Header of the estimates table (`fit --csv`): SI, peak amplitudes,
/// standard uncertainties of the amplitudes (empty when unknown).
pub const FIT_HEADER: [&str; 8] = [
    "harmonic",
    "frequency_hz",
    "flow_amplitude_m3s",
    "flow_phase_deg",
    "impedance_amplitude_pa_s_m3",
    "impedance_phase_deg",
    "flow_uncertainty_m3s",
    "impedance_uncertainty_pa_s_m3",
];

/// The unit of the source impedance column, bar per L/min (bar·min/L,
/// a hydraulic resistance unit of the trade: 6·10⁹ Pa·s/m³).
pub const BAR_MIN_PER_L: Unit = Unit {
    symbol: "bar·min/L",
    si: 1e5 * 60.0 / 1e-3,
};

/// Writes the terminal report.
///
/// # Errors
/// The writer's error.
pub fn text(r: &FitResult, out: &mut impl Write) -> std::io::Result<()> {
    writeln!(out, "ripline fit: {}", r.subject.file)?;
    if let Some(t) = &r.subject.title {
        writeln!(out, "bench: {t}")?;
    }
    let measured = match r.speed_uncertainty_rev_s {
        Some(u) => pm(60.0 * r.speed_rev_s, Some(60.0 * u)),
        None => format!("{:.1}", 60.0 * r.speed_rev_s),
    };
    writeln!(
        out,
        "pump `{}`: {measured} rpm measured ({:.1} rpm stated) × {} pumping elements = pumping frequency {:.2} Hz",
        r.pump,
        r.stated_speed_rev_s * 60.0,
        r.pumping_elements,
        r.pumping_frequency_hz
    )?;
    writeln!(
        out,
        "method: {}, {} conditions, {} transducers",
        r.method,
        r.conditions.len(),
        r.transducers
    )?;
    let source = match r.speed_of_sound_source {
        "in_situ" => "estimated in situ",
        "stated" => "as stated",
        _ => match r.wall_model {
            "rigid" => "from the fluid, rigid wall",
            "thin" => "from the fluid and the wall, thin-wall (Korteweg)",
            _ => "from the fluid and the wall, thick-wall (Lamé)",
        },
    };
    let c = &r.speed_of_sound_m_s;
    writeln!(
        out,
        "speed of sound: {} m/s ({source})",
        pm(c.value, c.uncertainty)
    )?;
    for ci in &r.conditions {
        write!(
            out,
            "condition `{}`: pumping frequency {:.3} Hz{}",
            ci.name,
            ci.pumping_frequency_hz,
            if ci.pumping_frequency_held {
                " (held from the pump runs)"
            } else {
                ""
            }
        )?;
        if ci.tacho {
            write!(out, ", shaft reference from the tacho")?;
        }
        if let Some(f) = ci.secondary_fundamental_hz {
            write!(out, ", secondary source {f:.3} Hz")?;
        }
        match ci.lowest_snr_db {
            Some(s) if s < 200.0 => writeln!(out, ", lowest harmonic SNR {s:.1} dB")?,
            Some(_) => writeln!(out, ", lowest harmonic SNR above 200 dB")?,
            None => writeln!(out)?,
        }
    }
    writeln!(
        out,
        "amplitudes are peak values; ± standard uncertainties (k = 1, {} Monte Carlo draws), each in its column's unit; phases in degrees against the shaft reference; * = flagged (see the warnings)",
        r.draws
    )?;
    writeln!(out)?;
    let hs = &r.harmonics;
    let column = |q: Quantity, f: fn(&HarmonicFit) -> &EstimateResult| {
        q.unit_for_all(hs.iter().map(|h| f(h).value.amplitude))
    };
    let qs = column(Quantity::Flow, |h| &h.flow_m3_s);
    let an = column(Quantity::Pressure, |h| &h.anechoic_pa);
    let bl = column(Quantity::Pressure, |h| &h.blocked_pa);
    let mut t = Table::new(&[("k", Align::Right), ("freq Hz", Align::Right)])
        .column(format!("Qs {}", qs.symbol), Align::Right)
        .column("phase deg", Align::Right)
        .column(format!("Zs {}", BAR_MIN_PER_L.symbol), Align::Right)
        .column("phase deg", Align::Right)
        .column(format!("anechoic {}", an.symbol), Align::Right)
        .column(format!("blocked {}", bl.symbol), Align::Right);
    let amp = |e: &EstimateResult, unit: Unit| {
        pm(
            unit.of(e.value.amplitude),
            e.amplitude_uncertainty.map(|u| unit.of(u)),
        )
    };
    let phase = |e: &EstimateResult| pm(e.value.phase_deg, e.phase_uncertainty_deg);
    for h in hs {
        let mut row = vec![
            h.order.to_string(),
            format!("{:.2}", h.freq_hz),
            amp(&h.flow_m3_s, qs),
            phase(&h.flow_m3_s),
            amp(&h.impedance_pa_s_m3, BAR_MIN_PER_L),
            phase(&h.impedance_pa_s_m3),
            amp(&h.anechoic_pa, an),
            amp(&h.blocked_pa, bl),
        ];
        match (h.status, h.flags.is_empty()) {
            (HarmonicStatus::Estimated, true) => {}
            (HarmonicStatus::Estimated, false) => row.push("*".into()),
            (status, _) => row.push(format!("* {}", status.key())),
        }
        t.row(row);
    }
    t.write(out, "")?;
    let rms = |s: &crate::results::fit::ScalarResult| {
        with_uncertainty(s.value, s.uncertainty, Quantity::Pressure.unit_for(s.value))
    };
    writeln!(out)?;
    let left_out: Vec<String> = hs
        .iter()
        .filter(|h| !r.rms_orders.contains(&h.order))
        .map(|h| h.order.to_string())
        .collect();
    writeln!(
        out,
        "overall rms: anechoic {}, blocked {} (reference line Zc at the estimated speed of sound{})",
        rms(&r.anechoic_rms_pa),
        rms(&r.blocked_rms_pa),
        if left_out.is_empty() {
            String::new()
        } else {
            format!(
                "; flagged harmonics {} left out, --include-flagged to include them",
                left_out.join(", ")
            )
        }
    )?;
    if let Some(e) = &r.equivalent {
        writeln!(out, "{}", equivalent_text(e))?;
    }
    Ok(())
}

/// The source impedance as a volume with leakage, in a line.
pub fn equivalent_text(e: &EquivalentResult) -> String {
    let orders: Vec<String> = e.orders.iter().map(u32::to_string).collect();
    let v = &e.volume_m3;
    let volume = with_uncertainty(v.value, v.uncertainty, Quantity::Volume.unit_for(v.value));
    let g = &e.leakage_conductance_m3_pa_s;
    let leakage = match g.uncertainty {
        Some(u) if g.value > 2.0 * u => {
            let r = 1.0 / g.value;
            format!(
                "leakage resistance {} Pa·s/m³",
                pm(r, Some(u / (g.value * g.value)))
            )
        }
        Some(u) => format!(
            "leakage not resolved (conductance {} m³/(Pa·s); resistance above {:.1e} Pa·s/m³)",
            pm(g.value, Some(u)),
            1.0 / (g.value.max(0.0) + 2.0 * u)
        ),
        None if g.value > 0.0 => format!("leakage resistance {:.4e} Pa·s/m³", 1.0 / g.value),
        None => format!("leakage conductance {:.2e} m³/(Pa·s)", g.value),
    };
    format!(
        "source impedance as a volume with leakage (Ys = G + jωV/B, B = {:.4} GPa; harmonics {}; rms misfit {:.2} %): volume {volume}, {leakage}",
        e.bulk_modulus_pa / 1e9,
        orders.join(", "),
        100.0 * e.misfit
    )
}

/// Writes one row per harmonic (SI, peak amplitudes, standard
/// uncertainties of the amplitudes; empty when unknown).
///
/// # Errors
/// The CSV writer's error.
pub fn csv(r: &FitResult, out: impl Write) -> Result<(), csv::Error> {
    let u_text = |u: Option<f64>| u.map_or_else(String::new, |u| format!("{u:e}"));
    let mut w = csv::Writer::from_writer(out);
    w.write_record(FIT_HEADER)?;
    for h in &r.harmonics {
        w.write_record([
            h.order.to_string(),
            format!("{}", h.freq_hz),
            format!("{:e}", h.flow_m3_s.value.amplitude),
            format!("{}", h.flow_m3_s.value.phase_deg),
            format!("{:e}", h.impedance_pa_s_m3.value.amplitude),
            format!("{}", h.impedance_pa_s_m3.value.phase_deg),
            u_text(h.flow_m3_s.amplitude_uncertainty),
            u_text(h.impedance_pa_s_m3.amplitude_uncertainty),
        ])?;
    }
    w.flush()?;
    Ok(())
}

/// One estimate per harmonic against frequency, with error bars of ± the
/// standard uncertainty when every harmonic has one.
fn series(
    name: &str,
    hs: &[HarmonicFit],
    value: impl Fn(&HarmonicFit) -> (f64, Option<f64>),
) -> plot::XySeries {
    let pts: Vec<(f64, f64, Option<f64>)> = hs
        .iter()
        .map(|h| {
            let (v, u) = value(h);
            (h.freq_hz, v, u)
        })
        .collect();
    let bars = pts.iter().all(|p| p.2.is_some());
    plot::XySeries {
        name: name.into(),
        points: pts.iter().map(|p| (p.0, p.1)).collect(),
        error_bars: bars.then(|| {
            pts.iter()
                .map(|p| (p.1 - p.2.unwrap_or(0.0), p.1 + p.2.unwrap_or(0.0)))
                .collect()
        }),
        band: None,
        style: plot::SeriesStyle::LineAndPoints,
        color: None,
    }
}

/// Amplitude and phase of Qs and Zs against frequency, stacked.
pub fn charts(r: &FitResult) -> Vec<plot::LineChart> {
    let hs = &r.harmonics;
    let name = r.subject.title.as_deref().unwrap_or(&r.pump);
    let amp = |e: &EstimateResult, unit: Unit| {
        (
            unit.of(e.value.amplitude),
            e.amplitude_uncertainty.map(|u| unit.of(u)),
        )
    };
    let ph = |e: &EstimateResult| (e.value.phase_deg, e.phase_uncertainty_deg);
    // amplitudes cannot be negative: their error bars are cut at zero
    let chart = |t: String, y: &str, s: plot::XySeries, log_y: bool| plot::LineChart {
        title: t,
        x_label: "frequency (Hz)".into(),
        y_label: y.into(),
        series: vec![s],
        log_y,
        y_floor: (!log_y && !y.starts_with("phase")).then_some(0.0),
        ..Default::default()
    };
    // phases of separate harmonics are points, not a curve
    let points = |s: plot::XySeries| plot::XySeries {
        style: plot::SeriesStyle::Points,
        ..s
    };
    let qs = Quantity::Flow.unit_for_all(hs.iter().map(|h| h.flow_m3_s.value.amplitude));
    vec![
        chart(
            format!(
                "Source flow ripple — {name} ({:.0} rpm, f_p = {:.1} Hz); error bars ± standard uncertainty",
                r.speed_rev_s * 60.0,
                r.pumping_frequency_hz
            ),
            &format!("|Qs|, peak ({})", qs.symbol),
            series("flow ripple", hs, |h| amp(&h.flow_m3_s, qs)),
            false,
        ),
        chart(
            String::new(),
            "phase of Qs (deg)",
            points(series("flow ripple phase", hs, |h| ph(&h.flow_m3_s))),
            false,
        ),
        chart(
            "Source impedance".into(),
            "|Zs| (Pa·s/m³)",
            series("source impedance", hs, |h| {
                amp(
                    &h.impedance_pa_s_m3,
                    Unit {
                        symbol: "Pa·s/m³",
                        si: 1.0,
                    },
                )
            }),
            true,
        ),
        chart(
            String::new(),
            "phase of Zs (deg)",
            points(series("impedance phase", hs, |h| ph(&h.impedance_pa_s_m3))),
            false,
        ),
    ]
}
