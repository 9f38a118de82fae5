//! The estimation end to end: phasors of every condition → speed of sound →
//! wave decomposition → Qs and Zs per harmonic → anechoic and blocked
//! ripple → Monte Carlo uncertainty → a report with a status and warnings.
//!
//! Derived ratings (ISO 10767-1 convention, methods.md §5): the blocked
//! pressure ripple P_blk = Qs·Zs (the pump into an infinite impedance) and
//! the anechoic pressure ripple P_an = Qs·Zs·Zc/(Zs + Zc), with Zc the
//! characteristic impedance of the bench's reference line at the estimated
//! speed of sound; overall values are rms, √(Σ_k |P_k|²/2) (methods.md §7.4).

use super::bench::{Bench, ConditionKind, Method, SpeedOfSound};
use super::decompose::{Decomposition, decompose};
use super::extract::ConditionSpectra;
use super::rng::Rng;
use super::secondary::{self, ImpedanceModel};
use super::two_systems;
use super::uncertainty::{Spread, complex_spread, real_spread};
use super::wavespeed::{self, FitStatus, Observation, SearchSettings};
use super::{EstimateError, Observer};
use crate::C64;
use crate::diagnostics::Warning;
use crate::line::Propagation;

/// Settings of a fit.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FitOptions {
    /// Monte Carlo draws for the uncertainty (0: none).
    pub draws: usize,
    /// Seed of the Monte Carlo generator.
    pub seed: u64,
}

impl Default for FitOptions {
    fn default() -> Self {
        FitOptions {
            draws: 200,
            seed: 1,
        }
    }
}

/// A complex result with its standard uncertainties.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Estimate {
    /// The estimate.
    pub value: C64,
    /// Standard uncertainty of the amplitude and of the phase, if known.
    pub uncertainty: Option<Spread>,
}

/// A real result with its standard uncertainty.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Scalar {
    /// The estimate.
    pub value: f64,
    /// Standard uncertainty, if known.
    pub uncertainty: Option<f64>,
}

/// The estimates of one pump harmonic.
#[derive(Debug, Clone, PartialEq)]
pub struct HarmonicResult {
    /// Harmonic order k.
    pub order: u32,
    /// Frequency in Hz (mean over the pump conditions).
    pub freq_hz: f64,
    /// Source flow ripple Qs in m³/s (peak phasor against the shaft reference).
    pub flow: Estimate,
    /// Source impedance Zs in Pa·s/m³.
    pub impedance: Estimate,
    /// Anechoic pressure ripple in Pa.
    pub anechoic: Estimate,
    /// Blocked pressure ripple in Pa.
    pub blocked: Estimate,
    /// Characteristic impedance of the reference line used for the anechoic ripple.
    pub zc: C64,
    /// Largest condition number met (decomposition or identification).
    pub condition_number: f64,
    /// Why the harmonic is flagged (empty: well-conditioned).
    pub flags: Vec<String>,
}

/// What was found in one condition's data.
#[derive(Debug, Clone, PartialEq)]
pub struct ConditionInfo {
    /// The condition's name.
    pub name: String,
    /// Pumping frequency found in Hz.
    pub pumping_frequency_hz: f64,
    /// Secondary-source fundamental found in Hz, if any.
    pub secondary_fundamental_hz: Option<f64>,
    /// Lowest signal-to-noise ratio over the transducers per pump harmonic,
    /// in dB (`None` where unknown).
    pub snr_db: Vec<Option<f64>>,
}

/// Where the speed of sound came from and how its search ended.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SpeedOfSoundResult {
    /// The value used, with its uncertainty.
    pub estimate: Scalar,
    /// Where it came from.
    pub source: SpeedOfSound,
    /// The in-situ search's status, if one ran.
    pub status: Option<FitStatus>,
}

/// The outcome of a fit.
#[derive(Debug, Clone, PartialEq)]
pub struct FitReport {
    /// The pump's name.
    pub pump: String,
    /// Number of pumping elements.
    pub pumping_elements: u32,
    /// Measured shaft speed (mean over the pump conditions) in rev/s.
    pub speed_rev_s: f64,
    /// The method used.
    pub method: Method,
    /// Speed of sound in the reference line.
    pub speed_of_sound: SpeedOfSoundResult,
    /// One entry per harmonic that could be estimated.
    pub harmonics: Vec<HarmonicResult>,
    /// Overall rms anechoic ripple in Pa.
    pub anechoic_rms_pa: Scalar,
    /// Overall rms blocked ripple in Pa.
    pub blocked_rms_pa: Scalar,
    /// Per condition.
    pub conditions: Vec<ConditionInfo>,
    /// Warnings (ill-conditioned harmonics with the reason, and others).
    pub warnings: Vec<Warning>,
    /// Monte Carlo draws used for the uncertainties (0: none).
    pub draws: usize,
}

impl FitReport {
    /// Pumping frequency in Hz at the measured speed.
    pub fn pumping_frequency_hz(&self) -> f64 {
        self.speed_rev_s * f64::from(self.pumping_elements)
    }
}

/// One spectral line of one condition, ready for the estimation.
#[derive(Debug, Clone)]
struct Prepared {
    cond: usize,
    pump_line: bool,
    order: u32,
    freq_hz: f64,
    prop_ref: Propagation,
    pressures: Vec<C64>,
    uncertainty: Vec<Option<f64>>,
    weights: Vec<f64>,
}

/// The deterministic part of the estimation for one set of phasors.
#[derive(Debug, Clone)]
struct Core {
    c0: f64,
    status: Option<FitStatus>,
    decomps: Vec<Option<Decomposition>>,
    harmonics: Vec<Option<CoreHarmonic>>,
}

#[derive(Debug, Clone, Copy)]
struct CoreHarmonic {
    freq_hz: f64,
    flow: C64,
    impedance: C64,
    zc: C64,
    ident_cond: f64,
}

impl CoreHarmonic {
    fn blocked(&self) -> C64 {
        self.flow * self.impedance
    }
    fn anechoic(&self) -> C64 {
        self.flow * self.impedance * self.zc / (self.impedance + self.zc)
    }
}

/// Estimates the pump's Norton parameters from the phasors of every
/// condition (in the bench's condition order).
///
/// # Errors
/// [`EstimateError::Bench`] when the data do not match the bench or the
/// method cannot be applied (e.g. the secondary-source lines give no
/// impedance).
pub fn fit(
    bench: &Bench,
    data: &[ConditionSpectra],
    options: &FitOptions,
    observer: &mut dyn Observer,
) -> Result<FitReport, EstimateError> {
    if data.len() != bench.conditions.len() {
        return Err(EstimateError::Bench(format!(
            "{} conditions but data for {}",
            bench.conditions.len(),
            data.len()
        )));
    }
    let n_t = bench.transducers.len();
    let c_ref = bench.nominal_speed_of_sound_m_s();
    let props = bench.line_properties(c_ref);
    let mut lines: Vec<Prepared> = Vec::new();
    for (ci, (cond, spectra)) in bench.conditions.iter().zip(data).enumerate() {
        let secondary_cond = matches!(cond.kind, ConditionKind::SecondarySource { .. });
        let pump_lines = spectra
            .pump
            .iter()
            .filter(|p| p.order <= bench.harmonics && !secondary_cond);
        let sec_lines = spectra.secondary.iter().filter(|_| secondary_cond);
        for (p, pump_line) in pump_lines
            .map(|p| (p, true))
            .chain(sec_lines.map(|p| (p, false)))
        {
            if p.pressures.len() != n_t {
                return Err(EstimateError::Bench(format!(
                    "condition `{}`: {} transducer values where the bench has {n_t}",
                    cond.name,
                    p.pressures.len()
                )));
            }
            let known = p.uncertainty.iter().all(Option::is_some);
            let floor = 1e-12 * p.pressures.iter().map(|z| z.norm()).fold(0.0, f64::max);
            let weights = if known {
                p.uncertainty
                    .iter()
                    .map(|u| 1.0 / u.unwrap_or(0.0).max(floor).max(f64::MIN_POSITIVE).powi(2))
                    .collect()
            } else {
                vec![1.0; n_t]
            };
            lines.push(Prepared {
                cond: ci,
                pump_line,
                order: p.order,
                freq_hz: p.freq_hz,
                prop_ref: props.propagation(std::f64::consts::TAU * p.freq_hz),
                pressures: p.pressures.clone(),
                uncertainty: if known {
                    p.uncertainty.clone()
                } else {
                    vec![None; n_t]
                },
                weights,
            });
        }
    }
    let positions = bench.positions();
    let in_situ = bench.speed_of_sound == SpeedOfSound::InSitu;
    let pressures: Vec<Vec<C64>> = lines.iter().map(|l| l.pressures.clone()).collect();
    let nominal = solve_core(
        bench,
        &lines,
        &pressures,
        &positions,
        c_ref,
        in_situ.then(SearchSettings::default),
    )?;

    // Perturbation sizes for the Monte Carlo: the phasor uncertainties,
    // scaled by the a posteriori variance factor of over-determined fits.
    let dof = n_t.saturating_sub(2) as f64;
    let perturb: Vec<Option<Vec<f64>>> = lines
        .iter()
        .zip(&nominal.decomps)
        .map(|(l, d)| {
            let known = l.uncertainty.iter().all(Option::is_some);
            match (known, d, dof > 0.0) {
                (true, Some(d), true) => {
                    let factor = (d.residual / dof).sqrt().max(1.0);
                    Some(
                        l.uncertainty
                            .iter()
                            .map(|u| u.unwrap_or(0.0) * factor)
                            .collect(),
                    )
                }
                (true, _, _) => Some(l.uncertainty.iter().map(|u| u.unwrap_or(0.0)).collect()),
                (false, Some(d), true) => Some(vec![(d.residual / dof).sqrt(); n_t]),
                _ => None,
            }
        })
        .collect();
    let mc_possible = perturb.iter().all(Option::is_some);
    let draws = if mc_possible { options.draws } else { 0 };

    let n_h = bench.harmonics as usize;
    let mut flow_d: Vec<Vec<C64>> = vec![Vec::new(); n_h];
    let mut imp_d: Vec<Vec<C64>> = vec![Vec::new(); n_h];
    let mut an_d: Vec<Vec<C64>> = vec![Vec::new(); n_h];
    let mut bl_d: Vec<Vec<C64>> = vec![Vec::new(); n_h];
    let mut c_d: Vec<f64> = Vec::new();
    let mut an_rms_d: Vec<f64> = Vec::new();
    let mut bl_rms_d: Vec<f64> = Vec::new();
    if draws > 0 {
        observer.stage("uncertainty (Monte Carlo)", draws as u64);
        let mut rng = Rng::new(options.seed);
        let search = SearchSettings {
            range: 0.03,
            scan_points: 25,
            tolerance: 1e-10,
            ..SearchSettings::default()
        };
        for _ in 0..draws {
            let perturbed: Vec<Vec<C64>> = lines
                .iter()
                .zip(&perturb)
                .map(|(l, u)| {
                    let u = u.as_ref().expect("checked above");
                    l.pressures
                        .iter()
                        .zip(u)
                        .map(|(p, s)| p + rng.complex_normal() * *s)
                        .collect()
                })
                .collect();
            let core = solve_core(
                bench,
                &lines,
                &perturbed,
                &positions,
                nominal.c0,
                in_situ.then_some(search),
            );
            if let Ok(core) = core {
                c_d.push(core.c0);
                let (mut an2, mut bl2) = (0.0, 0.0);
                for (k, h) in core.harmonics.iter().enumerate() {
                    if let (Some(h), Some(_)) = (h, &nominal.harmonics[k]) {
                        flow_d[k].push(h.flow);
                        imp_d[k].push(h.impedance);
                        an_d[k].push(h.anechoic());
                        bl_d[k].push(h.blocked());
                        an2 += h.anechoic().norm_sqr();
                        bl2 += h.blocked().norm_sqr();
                    }
                }
                an_rms_d.push((an2 / 2.0).sqrt());
                bl_rms_d.push((bl2 / 2.0).sqrt());
            }
            observer.advance(1);
        }
        observer.finish();
    }

    // The report.
    let mut warnings = Vec::new();
    let mut harmonics = Vec::new();
    let pump_conds: Vec<usize> = bench
        .conditions
        .iter()
        .enumerate()
        .filter(|(_, c)| c.kind == ConditionKind::Pump)
        .map(|(i, _)| i)
        .collect();
    let impedance_range = match bench.method {
        Method::SecondarySource { .. } => {
            impedance_model(bench, &lines, &nominal.decomps)?.range_hz()
        }
        Method::TwoSystems => None,
    };
    for k in 1..=bench.harmonics {
        let ki = (k - 1) as usize;
        let Some(h) = nominal.harmonics[ki] else {
            warnings.push(Warning {
                subject: format!("harmonic {k}"),
                message: "could not be estimated: the wave decomposition or the identification is singular".into(),
            });
            continue;
        };
        let mut flags = Vec::new();
        let mut worst = h.ident_cond;
        for (li, l) in lines.iter().enumerate() {
            if !(l.pump_line && l.order == k) {
                continue;
            }
            if let Some(d) = &nominal.decomps[li] {
                worst = worst.max(d.cond);
                if d.cond > bench.max_condition {
                    flags.push(format!(
                        "condition `{}`: the wave decomposition is ill-conditioned (cond = {:.1} > {}): {}",
                        bench.conditions[l.cond].name,
                        d.cond,
                        bench.max_condition,
                        spacing_reason(bench, &positions, &l.prop_ref, c_ref, nominal.c0)
                    ));
                }
            }
        }
        if h.ident_cond > bench.max_condition {
            flags.push(format!(
                "the systems present nearly the same load to the pump (cond = {:.1} > {}): use systems whose input impedances differ more at this frequency",
                h.ident_cond, bench.max_condition
            ));
        }
        if let Some((lo, hi)) = impedance_range
            && (h.freq_hz < lo || h.freq_hz > hi)
        {
            flags.push(format!(
                "the source impedance is extrapolated: the secondary-source lines cover {lo:.1} .. {hi:.1} Hz"
            ));
        }
        let draws_ok = flow_d[ki].len();
        if draws > 0 && draws_ok < draws * 9 / 10 {
            flags.push(format!(
                "unstable: {} of {draws} Monte Carlo draws gave no solution",
                draws - draws_ok
            ));
        }
        for &ci in &pump_conds {
            if let Some(p) = data[ci].pump.iter().find(|p| p.order == k) {
                for (ti, snr) in p.snr_db().iter().enumerate() {
                    if let Some(s) = snr.filter(|s| *s < 20.0) {
                        flags.push(format!(
                            "low signal-to-noise ratio: {s:.1} dB at `{}` in condition `{}`",
                            bench.transducers[ti].name, bench.conditions[ci].name
                        ));
                    }
                }
            }
        }
        for f in &flags {
            warnings.push(Warning {
                subject: format!("harmonic {k} ({:.1} Hz)", h.freq_hz),
                message: f.clone(),
            });
        }
        let est = |v: C64, d: &[C64]| Estimate {
            value: v,
            uncertainty: if draws > 0 {
                complex_spread(v, d)
            } else {
                None
            },
        };
        harmonics.push(HarmonicResult {
            order: k,
            freq_hz: h.freq_hz,
            flow: est(h.flow, &flow_d[ki]),
            impedance: est(h.impedance, &imp_d[ki]),
            anechoic: est(h.anechoic(), &an_d[ki]),
            blocked: est(h.blocked(), &bl_d[ki]),
            zc: h.zc,
            condition_number: worst,
            flags,
        });
    }
    if !mc_possible {
        warnings.push(Warning {
            subject: "uncertainty".into(),
            message: "not estimated: the data give no phasor uncertainty and two transducers leave no residual (add `<column>_u` columns to the spectra, or a third transducer)".into(),
        });
    }
    match nominal.status {
        Some(FitStatus::AtBracketEdge) => warnings.push(Warning {
            subject: "speed of sound".into(),
            message: format!(
                "the in-situ estimate {:.1} m/s lies at the edge of the searched range (±30 % of {:.1} m/s): check the fluid, the transducer positions and the bore",
                nominal.c0, c_ref
            ),
        }),
        Some(FitStatus::MaxIterations) => warnings.push(Warning {
            subject: "speed of sound".into(),
            message: "the in-situ search stopped at its iteration limit before converging".into(),
        }),
        _ => {}
    }
    let speeds: Vec<f64> = pump_conds
        .iter()
        .map(|&i| data[i].pump_fundamental_hz / f64::from(bench.pump.pumping_elements))
        .collect();
    let speed = speeds.iter().sum::<f64>() / speeds.len().max(1) as f64;
    if let (Some(lo), Some(hi)) = (
        speeds.iter().copied().reduce(f64::min),
        speeds.iter().copied().reduce(f64::max),
    ) && hi - lo > 0.01 * speed
    {
        warnings.push(Warning {
            subject: "speed".into(),
            message: format!(
                "the pump conditions ran at different speeds ({:.1} .. {:.1} rpm): the methods assume one speed",
                lo * 60.0,
                hi * 60.0
            ),
        });
    }
    let rms = |f: fn(&HarmonicResult) -> C64| {
        (harmonics.iter().map(|h| f(h).norm_sqr()).sum::<f64>() / 2.0).sqrt()
    };
    let mc = |d: &[f64]| if draws > 0 { real_spread(d) } else { None };
    let conditions = bench
        .conditions
        .iter()
        .zip(data)
        .map(|(c, d)| ConditionInfo {
            name: c.name.clone(),
            pumping_frequency_hz: d.pump_fundamental_hz,
            secondary_fundamental_hz: d.secondary_fundamental_hz,
            snr_db: (1..=bench.harmonics)
                .map(|k| {
                    d.pump
                        .iter()
                        .find(|p| p.order == k)
                        .and_then(|p| p.snr_db().into_iter().flatten().reduce(f64::min))
                })
                .collect(),
        })
        .collect();
    Ok(FitReport {
        pump: bench.pump.name.clone(),
        pumping_elements: bench.pump.pumping_elements,
        speed_rev_s: speed,
        method: bench.method,
        speed_of_sound: SpeedOfSoundResult {
            estimate: Scalar {
                value: nominal.c0,
                uncertainty: if in_situ { mc(&c_d) } else { None },
            },
            source: bench.speed_of_sound,
            status: nominal.status,
        },
        anechoic_rms_pa: Scalar {
            value: rms(|h| h.anechoic.value),
            uncertainty: mc(&an_rms_d),
        },
        blocked_rms_pa: Scalar {
            value: rms(|h| h.blocked.value),
            uncertainty: mc(&bl_rms_d),
        },
        harmonics,
        conditions,
        warnings,
        draws,
    })
}

/// Why a decomposition is ill-conditioned, in the words of the trade.
fn spacing_reason(
    bench: &Bench,
    positions: &[f64],
    prop_ref: &Propagation,
    c_ref: f64,
    c0: f64,
) -> String {
    let k = wavespeed::scale_propagation(prop_ref, c_ref, c0).gamma.im;
    let mut widest = 0.0f64;
    let mut near = Vec::new();
    for i in 0..positions.len() {
        for j in i + 1..positions.len() {
            let d = (positions[j] - positions[i]).abs();
            let turns = k * d / std::f64::consts::PI; // ωΔ/c in units of π
            widest = widest.max(turns);
            let n = turns.round();
            if n >= 1.0 && (turns - n).abs() < 0.15 {
                near.push(format!(
                    "`{}`–`{}` ({d:.3} m) is close to {} half-wavelength{} (ωΔ/c = {turns:.2}π)",
                    bench.transducers[i].name,
                    bench.transducers[j].name,
                    n,
                    if n > 1.0 { "s" } else { "" }
                ));
            }
        }
    }
    if widest < 0.15 {
        format!(
            "the frequency is too low for the transducer spacing (widest ωΔ/c = {widest:.3}π; a pair is best used between 0.1π and 0.8π)"
        )
    } else if near.is_empty() {
        "the transducer spacings are unfavourable at this frequency (use unequal, non-commensurate spacings)".into()
    } else {
        format!("spacing {}", near.join("; spacing "))
    }
}

/// The source impedance model from the secondary-source decompositions.
fn impedance_model(
    bench: &Bench,
    lines: &[Prepared],
    decomps: &[Option<Decomposition>],
) -> Result<ImpedanceModel, EstimateError> {
    let Method::SecondarySource { impedance_fit } = bench.method else {
        return Err(EstimateError::Bench("not a secondary-source bench".into()));
    };
    let points: Vec<(f64, C64)> = lines
        .iter()
        .zip(decomps)
        .filter(|(l, _)| !l.pump_line)
        .filter_map(|(l, d)| d.map(|d| (l.freq_hz, secondary::impedance_point(d.p0, d.q0))))
        .collect();
    ImpedanceModel::build(&points, impedance_fit).map_err(EstimateError::Bench)
}

/// Speed of sound, decompositions and estimator for one set of phasors.
fn solve_core(
    bench: &Bench,
    lines: &[Prepared],
    pressures: &[Vec<C64>],
    positions: &[f64],
    c_start: f64,
    search: Option<SearchSettings>,
) -> Result<Core, EstimateError> {
    let c_ref = bench.nominal_speed_of_sound_m_s();
    let (c0, status) = match search {
        Some(settings) => {
            let obs: Vec<Observation> = lines
                .iter()
                .zip(pressures)
                .map(|(l, p)| {
                    let known = l.uncertainty.iter().all(Option::is_some);
                    let weights = if known {
                        l.weights.clone()
                    } else {
                        let total: f64 = p.iter().map(|z| z.norm_sqr()).sum();
                        vec![1.0 / total.max(f64::MIN_POSITIVE); p.len()]
                    };
                    Observation {
                        prop_ref: l.prop_ref,
                        pressures: p.clone(),
                        weights,
                    }
                })
                .collect();
            let r = wavespeed::fit_speed_of_sound(positions, &obs, c_ref, c_start, settings);
            (r.c0_m_s, Some(r.status))
        }
        None => (c_ref, None),
    };
    let decomps: Vec<Option<Decomposition>> = lines
        .iter()
        .zip(pressures)
        .map(|(l, p)| {
            let prop = wavespeed::scale_propagation(&l.prop_ref, c_ref, c0);
            decompose(&prop, positions, p, &l.weights)
        })
        .collect();
    let zs_model = match bench.method {
        Method::SecondarySource { .. } => Some(impedance_model(bench, lines, &decomps)?),
        Method::TwoSystems => None,
    };
    let props = bench.line_properties(c0);
    let mut harmonics = Vec::with_capacity(bench.harmonics as usize);
    for k in 1..=bench.harmonics {
        let at_k: Vec<(f64, Decomposition)> = lines
            .iter()
            .zip(&decomps)
            .filter(|(l, _)| l.pump_line && l.order == k)
            .filter_map(|(l, d)| d.map(|d| (l.freq_hz, d)))
            .collect();
        let expected = lines.iter().filter(|l| l.pump_line && l.order == k).count();
        if at_k.is_empty() || at_k.len() < expected {
            harmonics.push(None);
            continue;
        }
        let freq = at_k.iter().map(|(f, _)| f).sum::<f64>() / at_k.len() as f64;
        let zc = props.propagation(std::f64::consts::TAU * freq).zc;
        let (flow, impedance, ident_cond) = match &zs_model {
            None => {
                if at_k.len() < 2 {
                    harmonics.push(None);
                    continue;
                }
                let states: Vec<(C64, C64)> = at_k.iter().map(|(_, d)| (d.p0, d.q0)).collect();
                match two_systems::estimate(&states) {
                    Some(e) => (e.flow, e.impedance, e.cond),
                    None => {
                        harmonics.push(None);
                        continue;
                    }
                }
            }
            Some(model) => {
                let zs = model.at(freq);
                let qs = at_k
                    .iter()
                    .map(|(f, d)| secondary::flow_ripple(d.p0, d.q0, model.at(*f)))
                    .sum::<C64>()
                    / at_k.len() as f64;
                (qs, zs, 1.0)
            }
        };
        let ok = flow.is_finite() && impedance.is_finite() && impedance.norm() > 0.0;
        harmonics.push(ok.then_some(CoreHarmonic {
            freq_hz: freq,
            flow,
            impedance,
            zc,
            ident_cond,
        }));
    }
    Ok(Core {
        c0,
        status,
        decomps,
        harmonics,
    })
}
