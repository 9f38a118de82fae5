//! Renderers of [`PlanBenchResult`] (`plan-bench`): the terminal report,
//! the long-format CSV (one row per design, speed and harmonic) and the
//! charts (condition number and predicted uncertainties against frequency).

use crate::plot::{LineChart, Marker, SeriesStyle, XySeries};
use crate::results::plan_bench::{DesignResult, HarmonicRow, PlanBenchResult};
use std::io::Write;

/// Header of the `--csv` table.
pub const PLAN_HEADER: [&str; 13] = [
    "design",
    "speed_rev_s",
    "harmonic",
    "frequency_hz",
    "condition_number",
    "decomposition_condition",
    "limit",
    "status",
    "flow_relative_u",
    "flow_phase_u_deg",
    "impedance_relative_u",
    "impedance_phase_u_deg",
    "reason",
];

fn mm(v: f64) -> String {
    format!("{:.1}", 1000.0 * v)
}

fn design_line(d: &DesignResult) -> String {
    let pos: Vec<String> = d.positions_m.iter().map(|x| mm(*x)).collect();
    let mut s = format!(
        "transducers at {} mm (first spacing {} mm, ratio {:.2})",
        pos.join(", "),
        mm(d.spacing_m),
        d.spacing_ratio
    );
    if let Some(l) = d.line_length_m {
        s.push_str(&format!(", line {l:.3} m"));
    }
    if let Some(v) = d.volume_m3 {
        s.push_str(&format!(", volume {:.3} L", 1000.0 * v));
    }
    if let Some(r) = d.resistance_pa_s_m3 {
        s.push_str(&format!(", load valve {r:.3e} Pa·s/m³"));
    }
    s
}

fn pct(v: Option<f64>) -> String {
    v.map_or("-".into(), |v| format!("{:.3}", 100.0 * v))
}

fn deg(v: Option<f64>) -> String {
    v.map_or("-".into(), |v| format!("{v:.2}"))
}

fn table(out: &mut impl Write, rows: &[HarmonicRow], max: f64) -> std::io::Result<()> {
    writeln!(
        out,
        "{:>7} {:>3} {:>9} {:>9} {:<14} {:>9} {:>9} {:>9} {:>9}",
        "rpm", "k", "freq Hz", "cond", "limited by", "u|Qs| %", "u∠Qs °", "u|Zs| %", "u∠Zs °"
    )?;
    for h in rows {
        writeln!(
            out,
            "{:>7.0} {:>3} {:>9.2} {:>9.2} {:<14} {:>9} {:>9} {:>9} {:>9}{}",
            60.0 * h.speed_rev_s,
            h.order,
            h.freq_hz,
            h.condition_number,
            match h.limit {
                crate::estimate::design::Limit::Decomposition => "decomposition",
                crate::estimate::design::Limit::Identification => "identification",
            },
            pct(h.flow_relative_u),
            deg(h.flow_phase_u_deg),
            pct(h.impedance_relative_u),
            deg(h.impedance_phase_u_deg),
            if h.condition_number > max { "  *" } else { "" }
        )?;
    }
    Ok(())
}

/// Writes the terminal report.
///
/// # Errors
/// The writer's error.
pub fn text(r: &PlanBenchResult, out: &mut impl Write) -> std::io::Result<()> {
    writeln!(out, "ripline plan-bench: {}", r.subject.file)?;
    if let Some(t) = &r.subject.title {
        writeln!(out, "bench: {t}")?;
    }
    let rpm: Vec<String> = r
        .speeds_rev_s
        .iter()
        .map(|n| format!("{:.0}", 60.0 * n))
        .collect();
    writeln!(
        out,
        "method: {}; speeds {} rpm; noise {} % of each channel's rms ripple; limit cond ≤ {}; {} Monte Carlo draws per predicted fit",
        r.method,
        rpm.join(", "),
        100.0 * r.noise,
        r.max_condition,
        r.draws
    )?;
    if let Some(s) = &r.varied_system {
        writeln!(out, "second system varied: condition `{s}`")?;
    }
    writeln!(
        out,
        "spacing guidance: a transducer pair resolves the two waves best with kΔx between 0.1π and 0.8π, away from multiples of π (two-microphone method, Seybert & Ross 1977, Chung & Blaser 1980); unequal spacings as in ISO 15086-2 / ISO 10767-1 layouts"
    )?;
    writeln!(out)?;
    writeln!(out, "bench as written: {}", design_line(&r.current))?;
    writeln!(out, "best design:      {}", design_line(&r.best))?;
    writeln!(out)?;
    writeln!(
        out,
        "ranking ({} designs searched, {} left out: a transducer beyond a line's end or no solution):",
        r.designs_searched, r.designs_infeasible
    )?;
    writeln!(
        out,
        "{:>4} {:>9} {:>5} {:>6} {:>6} {:>10} {:>6}  line / volume / valve",
        "rank", "worst", "at k", "rpm", "cells>", "spacing", "ratio"
    )?;
    for d in &r.ranking {
        let lv = [
            d.line_length_m.map(|l| format!("{l:.3} m")),
            d.volume_m3.map(|v| format!("{:.3} L", 1000.0 * v)),
            d.resistance_pa_s_m3.map(|r| format!("{r:.2e} Pa·s/m³")),
        ]
        .into_iter()
        .flatten()
        .collect::<Vec<_>>()
        .join(" / ");
        writeln!(
            out,
            "{:>4} {:>9.2} {:>5} {:>6.0} {:>6} {:>7} mm {:>6.2}  {}",
            d.rank.unwrap_or(0),
            d.worst_condition,
            d.worst_harmonic,
            60.0 * d.worst_speed_rev_s,
            d.cells_over_limit,
            mm(d.spacing_m),
            d.spacing_ratio,
            lv
        )?;
    }
    writeln!(out)?;
    writeln!(
        out,
        "best design per speed and harmonic (u: predicted standard uncertainties, k = 1; * above the limit):"
    )?;
    table(out, &r.best_harmonics, r.max_condition)?;
    writeln!(out)?;
    writeln!(out, "bench as written per speed and harmonic:")?;
    table(out, &r.current_harmonics, r.max_condition)?;
    writeln!(out)?;
    writeln!(out, "conclusion:")?;
    for c in &r.conclusion {
        writeln!(out, "  {c}")?;
    }
    Ok(())
}

/// Writes one row per design (`current`, `best`), speed and harmonic
/// ([`PLAN_HEADER`]).
///
/// # Errors
/// The CSV writer's error.
pub fn csv(r: &PlanBenchResult, out: impl Write) -> Result<(), csv::Error> {
    let mut w = csv::Writer::from_writer(out);
    w.write_record(PLAN_HEADER)?;
    let opt = |v: Option<f64>| v.map_or(String::new(), |v| format!("{v}"));
    for (name, rows) in [
        ("current", &r.current_harmonics),
        ("best", &r.best_harmonics),
    ] {
        for h in rows.iter() {
            w.write_record([
                name.to_string(),
                format!("{}", h.speed_rev_s),
                h.order.to_string(),
                format!("{}", h.freq_hz),
                format!("{}", h.condition_number),
                format!("{}", h.decomposition_condition),
                match h.limit {
                    crate::estimate::design::Limit::Decomposition => "decomposition",
                    crate::estimate::design::Limit::Identification => "identification",
                }
                .to_string(),
                h.status.key().to_string(),
                opt(h.flow_relative_u),
                opt(h.flow_phase_u_deg),
                opt(h.impedance_relative_u),
                opt(h.impedance_phase_u_deg),
                h.reason.clone(),
            ])?;
        }
    }
    w.flush()?;
    Ok(())
}

/// The charts: condition number against frequency (log scale, the limit
/// marked) and the predicted relative uncertainties of |Qs| and |Zs|, for
/// the bench as written and the best design.
pub fn charts(r: &PlanBenchResult) -> Vec<LineChart> {
    let series =
        |name: &str, rows: &[HarmonicRow], pick: &dyn Fn(&HarmonicRow) -> Option<f64>| XySeries {
            name: name.into(),
            points: rows
                .iter()
                .filter_map(|h| pick(h).filter(|v| *v > 0.0).map(|v| (h.freq_hz, v)))
                .collect(),
            error_bars: None,
            band: None,
            style: SeriesStyle::Points,
            color: None,
        };
    let cond = LineChart {
        title: "Conditioning of the estimate against frequency".into(),
        x_label: "frequency (Hz)".into(),
        y_label: "condition number".into(),
        series: vec![
            series("bench as written", &r.current_harmonics, &|h| {
                Some(h.condition_number)
            }),
            series("best design", &r.best_harmonics, &|h| {
                Some(h.condition_number)
            }),
        ],
        log_y: true,
        y_markers: vec![Marker {
            value: r.max_condition,
            label: format!("limit {}", r.max_condition),
        }],
        ..LineChart::default()
    };
    let mut charts = vec![cond];
    let u = |pick: fn(&HarmonicRow) -> Option<f64>| -> Vec<XySeries> {
        vec![
            series("bench as written", &r.current_harmonics, &|h| {
                pick(h).map(|v| 100.0 * v)
            }),
            series("best design", &r.best_harmonics, &|h| {
                pick(h).map(|v| 100.0 * v)
            }),
        ]
    };
    for (title, pick) in [
        (
            "Predicted u(|Qs|)/|Qs|",
            (|h: &HarmonicRow| h.flow_relative_u) as fn(&HarmonicRow) -> Option<f64>,
        ),
        ("Predicted u(|Zs|)/|Zs|", |h: &HarmonicRow| {
            h.impedance_relative_u
        }),
    ] {
        let s = u(pick);
        if s.iter().any(|s| !s.points.is_empty()) {
            charts.push(LineChart {
                title: title.into(),
                x_label: "frequency (Hz)".into(),
                y_label: "standard uncertainty (%)".into(),
                series: s,
                log_y: true,
                ..LineChart::default()
            });
        }
    }
    charts
}
