//! `plan-bench`: the conditioning and predicted uncertainties of a bench
//! design over a speed range, a search for the design that keeps every
//! harmonic well conditioned, the ranking, and a conclusion naming the
//! weakest harmonics and speeds and why (the library's
//! [`crate::estimate::design`]).

use super::{Error, Input, Origin, Subject};
use crate::estimate::Observer;
use crate::estimate::bench::Bench;
use crate::estimate::design::{self, Design, HarmonicPlan, Limit, PlanOptions, Ranked};
use crate::estimate::fit::HarmonicStatus;
use serde::Serialize;

/// What the caller resolved from the command line.
#[derive(Debug, Clone, PartialEq)]
pub struct PlanBenchRequest {
    /// The plan's settings (SI).
    pub options: PlanOptions,
    /// Designs listed in the ranking.
    pub top: usize,
    /// Where the speeds came from.
    pub speeds_origin: Origin,
    /// Where the noise came from.
    pub noise_origin: Origin,
    /// Where the limit came from.
    pub max_condition_origin: Origin,
    /// Where the search ranges came from (given or the guidance's defaults).
    pub space_origin: Origin,
}

/// A design as reported.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DesignResult {
    /// Rank in the search (1 = best); `null` for the bench's own design.
    pub rank: Option<usize>,
    /// Transducer positions from the pump outlet, m.
    pub positions_m: Vec<f64>,
    /// First transducer spacing, m.
    pub spacing_m: f64,
    /// Ratio of each spacing to the one before.
    pub spacing_ratio: f64,
    /// Line length of the varied system, m.
    pub line_length_m: Option<f64>,
    /// End volume of the varied system, m³.
    pub volume_m3: Option<f64>,
    /// Load valve resistance of the varied system, Pa·s/m³.
    pub resistance_pa_s_m3: Option<f64>,
    /// Largest condition number over the speeds and harmonics.
    pub worst_condition: f64,
    /// The speed of the worst, rev/s.
    pub worst_speed_rev_s: f64,
    /// The harmonic of the worst.
    pub worst_harmonic: u32,
    /// Speed × harmonic cells above the limit.
    pub cells_over_limit: usize,
    /// Whether every cell is within the limit.
    pub well_conditioned: bool,
}

/// The prediction of one harmonic at one speed.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HarmonicRow {
    /// Shaft speed, rev/s.
    pub speed_rev_s: f64,
    /// Harmonic order.
    pub order: u32,
    /// Frequency, Hz.
    pub freq_hz: f64,
    /// Condition number `fit` reports.
    pub condition_number: f64,
    /// The worst wave decomposition's condition number.
    pub decomposition_condition: f64,
    /// `decomposition` or `identification`: which limits it.
    pub limit: Limit,
    /// Status `fit` gives without noise.
    pub status: HarmonicStatus,
    /// Predicted standard uncertainty of |Qs| over |Qs|.
    pub flow_relative_u: Option<f64>,
    /// Predicted standard uncertainty of arg Qs, degrees.
    pub flow_phase_u_deg: Option<f64>,
    /// Predicted standard uncertainty of |Zs| over |Zs|.
    pub impedance_relative_u: Option<f64>,
    /// Predicted standard uncertainty of arg Zs, degrees.
    pub impedance_phase_u_deg: Option<f64>,
    /// Why it is weak, in words (empty when within the limit).
    pub reason: String,
}

/// The result of `plan-bench`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PlanBenchResult {
    /// The bench file.
    pub subject: Subject,
    /// Inputs with their origins.
    pub inputs: Vec<Input>,
    /// The bench's method.
    pub method: &'static str,
    /// The speeds planned, rev/s.
    pub speeds_rev_s: Vec<f64>,
    /// The condition whose line length and volume are varied, if any.
    pub varied_system: Option<String>,
    /// The largest condition number accepted.
    pub max_condition: f64,
    /// The noise, a fraction of each channel's rms ripple.
    pub noise: f64,
    /// Monte Carlo draws per predicted fit.
    pub draws: usize,
    /// Designs evaluated.
    pub designs_searched: usize,
    /// Designs left out (a transducer beyond a line's end, or no solution).
    pub designs_infeasible: usize,
    /// The bench as written.
    pub current: DesignResult,
    /// The best design found.
    pub best: DesignResult,
    /// The first `top` designs, best first.
    pub ranking: Vec<DesignResult>,
    /// The bench's own design per speed and harmonic.
    pub current_harmonics: Vec<HarmonicRow>,
    /// The best design per speed and harmonic.
    pub best_harmonics: Vec<HarmonicRow>,
    /// The conclusion: the verdict, the weakest harmonics and speeds and why.
    pub conclusion: Vec<String>,
}

fn design_result(r: &Ranked, rank: Option<usize>, max_condition: f64) -> DesignResult {
    let Design {
        positions_m,
        spacing_m,
        ratio,
        length_m,
        volume_m3,
        resistance_pa_s_m3,
    } = r.design.clone();
    DesignResult {
        rank,
        positions_m,
        spacing_m,
        spacing_ratio: ratio,
        line_length_m: length_m,
        volume_m3,
        resistance_pa_s_m3,
        worst_condition: r.score.worst_condition,
        worst_speed_rev_s: r.score.worst_at.0,
        worst_harmonic: r.score.worst_at.1,
        cells_over_limit: r.score.cells_over,
        well_conditioned: r.score.cells_over == 0 && r.score.worst_condition <= max_condition,
    }
}

/// Why a harmonic is weak, in the words of the trade.
pub fn reason(bench: &Bench, h: &HarmonicPlan, max_condition: f64) -> String {
    if h.condition_number <= max_condition {
        return String::new();
    }
    match h.limit {
        Limit::Identification => "the systems present nearly the same load to the pump at this frequency (identification); change the second system's line length, volume or load valve".into(),
        Limit::Decomposition => {
            let names: Vec<(usize, usize)> = (0..bench.transducers.len())
                .flat_map(|i| (i + 1..bench.transducers.len()).map(move |j| (i, j)))
                .collect();
            let widest = h.pair_phase_over_pi.iter().copied().fold(0.0, f64::max);
            let near: Vec<String> = h
                .pair_phase_over_pi
                .iter()
                .zip(&names)
                .filter(|(t, _)| t.round() >= 1.0 && (**t - t.round()).abs() < 0.15)
                .map(|(t, (i, j))| {
                    format!(
                        "`{}`–`{}` at kΔx = {t:.2}π, near {} half-wavelength{}",
                        bench.transducers[*i].name,
                        bench.transducers[*j].name,
                        t.round(),
                        if t.round() > 1.0 { "s" } else { "" }
                    )
                })
                .collect();
            if widest < 0.15 {
                format!("the frequency is too low for the spacing (widest kΔx = {widest:.3}π; a pair works best between 0.1π and 0.8π)")
            } else if near.is_empty() {
                "the spacings are unfavourable at this frequency (wave decomposition)".into()
            } else {
                format!("wave decomposition: {}", near.join("; "))
            }
        }
    }
}

fn rows(bench: &Bench, plans: &[HarmonicPlan], max_condition: f64) -> Vec<HarmonicRow> {
    plans
        .iter()
        .map(|h| HarmonicRow {
            speed_rev_s: h.speed_rev_s,
            order: h.order,
            freq_hz: h.freq_hz,
            condition_number: h.condition_number,
            decomposition_condition: h.decomposition_condition,
            limit: h.limit,
            status: h.status,
            flow_relative_u: h.flow_relative_u,
            flow_phase_u_deg: h.flow_phase_u_rad.map(f64::to_degrees),
            impedance_relative_u: h.impedance_relative_u,
            impedance_phase_u_deg: h.impedance_phase_u_rad.map(f64::to_degrees),
            reason: reason(bench, h, max_condition),
        })
        .collect()
}

/// The conclusion of a plan: the verdict for the bench and the best design,
/// and the weakest cells of the best design with their reasons.
fn conclude(
    current: &DesignResult,
    best: &DesignResult,
    best_rows: &[HarmonicRow],
    max_condition: f64,
) -> Vec<String> {
    let mut out = Vec::new();
    let verdict = |d: &DesignResult| {
        if d.well_conditioned {
            format!(
                "well conditioned on every harmonic and speed (worst cond = {:.1} at harmonic {}, {:.0} rpm; limit {max_condition})",
                d.worst_condition,
                d.worst_harmonic,
                60.0 * d.worst_speed_rev_s
            )
        } else {
            format!(
                "{} speed × harmonic cells above the limit {max_condition} (worst cond = {:.1} at harmonic {}, {:.0} rpm)",
                d.cells_over_limit,
                d.worst_condition,
                d.worst_harmonic,
                60.0 * d.worst_speed_rev_s
            )
        }
    };
    out.push(format!("the bench as written: {}", verdict(current)));
    out.push(format!("the best design found: {}", verdict(best)));
    let mut weak: Vec<&HarmonicRow> = best_rows.iter().collect();
    weak.sort_by(|a, b| b.condition_number.total_cmp(&a.condition_number));
    for h in weak.iter().take(3) {
        let why = if h.reason.is_empty() {
            match h.limit {
                Limit::Decomposition => "limited by the wave decomposition (transducer spacing)",
                Limit::Identification => {
                    "limited by the identification (how different the systems' loads are)"
                }
            }
            .to_string()
        } else {
            h.reason.clone()
        };
        let u = match (h.flow_relative_u, h.impedance_relative_u) {
            (Some(q), Some(z)) => format!(
                "; predicted u(|Qs|) = {:.2} %, u(|Zs|) = {:.2} %",
                100.0 * q,
                100.0 * z
            ),
            _ => String::new(),
        };
        out.push(format!(
            "weakest: harmonic {} at {:.0} rpm ({:.1} Hz), cond = {:.1}: {why}{u}",
            h.order,
            60.0 * h.speed_rev_s,
            h.freq_hz,
            h.condition_number
        ));
    }
    out
}

/// Runs the plan.
///
/// # Errors
/// [`Error::Request`] when the bench cannot be planned (no `synthesis`
/// section, too many designs, its own design without a solution);
/// [`Error::NotFinite`] for a prediction that is not a finite number.
pub fn plan_bench(
    bench: &Bench,
    file: &str,
    request: &PlanBenchRequest,
    observer: &mut dyn Observer,
) -> Result<PlanBenchResult, Error> {
    let o = &request.options;
    let p = design::plan(bench, o, observer).map_err(|e| Error::Request(format!("{file}: {e}")))?;
    let max = o.max_condition;
    let current = design_result(&p.current, None, max);
    let ranking: Vec<DesignResult> = p
        .ranking
        .iter()
        .take(request.top)
        .enumerate()
        .map(|(i, r)| design_result(r, Some(i + 1), max))
        .collect();
    let best = p
        .ranking
        .first()
        .map_or_else(|| current.clone(), |r| design_result(r, Some(1), max));
    let best_bench = design::apply(
        bench,
        &p.ranking
            .first()
            .map_or(p.current.design.clone(), |r| r.design.clone()),
        p.system,
    );
    let current_harmonics = rows(bench, &p.current_harmonics, max);
    let best_harmonics = rows(&best_bench, &p.best_harmonics, max);
    let finite = |v: Option<f64>| v.is_none_or(f64::is_finite);
    let all_finite = current_harmonics.iter().chain(&best_harmonics).all(|h| {
        h.condition_number.is_finite()
            && h.decomposition_condition.is_finite()
            && finite(h.flow_relative_u)
            && finite(h.impedance_relative_u)
            && finite(h.flow_phase_u_deg)
            && finite(h.impedance_phase_u_deg)
    });
    if !all_finite {
        return Err(Error::NotFinite(format!(
            "{file}: a harmonic has no finite condition number or uncertainty (a transducer pair exactly at a half wavelength, or identical systems)"
        )));
    }
    let conclusion = conclude(&current, &best, &best_harmonics, max);
    let space = &o.space;
    let mut inputs = vec![
        Input::number(
            "speeds",
            o.speeds_rev_s.len() as f64,
            "1",
            request.speeds_origin,
        ),
        Input::range(
            "speed_range",
            (
                o.speeds_rev_s.iter().copied().fold(f64::INFINITY, f64::min),
                o.speeds_rev_s.iter().copied().fold(0.0, f64::max),
            ),
            "rev/s",
            request.speeds_origin,
        ),
        Input::number("noise", o.noise, "1", request.noise_origin),
        Input::number(
            "max_condition",
            o.max_condition,
            "1",
            request.max_condition_origin,
        ),
        Input::number("draws", o.draws as f64, "1", Origin::Request),
        Input::number("seed", o.seed as f64, "1", Origin::Request),
        Input::number("points", space.points as f64, "1", Origin::Request),
    ];
    for (name, r, unit) in [
        ("spacing", space.spacing_m, "m"),
        ("ratio", space.ratio, "1"),
        ("length", space.length_m, "m"),
        ("volume", space.volume_m3, "m3"),
        ("resistance", space.resistance_pa_s_m3, "Pa.s/m3"),
    ] {
        if let Some(r) = r {
            inputs.push(Input::range(name, r, unit, request.space_origin));
        }
    }
    Ok(PlanBenchResult {
        subject: Subject {
            file: file.to_string(),
            title: bench.title.clone(),
        },
        inputs,
        method: bench.method.name(),
        speeds_rev_s: o.speeds_rev_s.clone(),
        varied_system: p.system.map(|i| bench.conditions[i].name.clone()),
        max_condition: max,
        noise: o.noise,
        draws: o.draws,
        designs_searched: p.ranking.len() + p.infeasible,
        designs_infeasible: p.infeasible,
        current,
        best,
        ranking,
        current_harmonics,
        best_harmonics,
        conclusion,
    })
}
