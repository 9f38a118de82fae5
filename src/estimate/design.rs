//! Planning a bench before it is built: for a bench file with a known
//! (expected) source, the conditioning of every harmonic over a speed range
//! and the Monte Carlo standard uncertainty of Qs and Zs that `fit` would
//! report, and a search over the transducer spacing and the second system's
//! line length and volume for the design that keeps every harmonic well
//! conditioned (`ripline plan-bench`).
//!
//! **Predicted data.** At each speed the noise-free phasors of every
//! condition come from [`synth::condition_lines`] (the source flow in
//! proportion to speed, the stated impedance). The noise is white with a
//! standard deviation σ_c = noise × the channel's rms ripple, as `synth`
//! makes it. A whole-record least-squares fit of N samples gives each
//! phasor the standard uncertainty u = 2σ_c/√N (the variance 2σ²/N of each
//! of the cosine and sine amplitudes of a tone: Kay 1993, vol. 1, example
//! 3.14, the bound the extraction reaches). A fitted fundamental f has the
//! variance 1/Σ_c Σ_l |P_cl|²(2πm_l)²·N·T²/24/σ_c² (the Fisher information
//! of a frequency, Rife & Boorstyn 1974, summed over the lines m_l·f and
//! the channels), and moves the phasor of line m, referred to the record's
//! start, by δP = −j2πm·t̄·P·δf with t̄ = (N − 1)/(2f_s) the record's mean
//! time (zero when a tacho gives the reference near the record's middle).
//! These data go through [`fit`] itself: its Monte Carlo then gives the
//! predicted uncertainties, with the in-situ speed of sound, the correlated
//! reference errors and the estimator repeated in each draw. A tacho's own
//! origin error is left out (it is far smaller than the frequency's).
//! Spectra files carry noise × |P| on each phasor, as `synth` writes them.
//!
//! **Conditioning.** Without noise `fit` reproduces the true speed of sound,
//! so the search evaluates each design with the speed of sound fixed at it
//! and no draws: the condition numbers are those `fit` will report (the
//! wave decomposition's per condition and the identification's).
//!
//! **Guidance used.** A transducer pair resolves the two waves best when
//! kΔx stays away from 0 and from multiples of π (the two-microphone method,
//! Seybert & Ross 1977; Chung & Blaser 1980: the pair is singular at
//! kΔx = nπ and loses accuracy as kΔx → 0; the usable band 0.1π..0.8π
//! is common practice, quoted from memory), and ISO 15086-2 and ISO 10767-1 build their
//! transducer layouts on the same plane-wave model, with three unequally
//! spaced transducers so that no pair is at a half wavelength at the same
//! frequency as another). The default spacing range follows that band:
//! the first spacing runs from 0.1π/k at the top frequency to 0.8π/k at the
//! lowest, and successive spacings grow by a ratio (unequal,
//! non-commensurate spacings). For the two-systems method the systems must
//! present different loads to the pump at every harmonic (the principle of
//! ISO 10767-1's two-systems method): the second system's line length and
//! end volume move its resonances.

use super::bench::{Bench, ConditionKind, DataFile, Method, SpeedOfSound, Synthesis, Termination};
use super::decompose::decompose;
use super::extract::{ConditionSpectra, Phasors, ReferenceKind, ReferenceParameter};
use super::fit::{FitOptions, HarmonicStatus, fit};
use super::synth::{self, ToneLine};
use super::{EstimateError, Observer, Quiet};
use crate::C64;
use std::f64::consts::{PI, TAU};

/// Most designs a search evaluates (each at every speed).
pub const MAX_DESIGNS: usize = 20_000;

/// The ranges searched; `None` keeps the bench's value.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DesignSpace {
    /// First transducer spacing in m (the first transducer stays put).
    pub spacing_m: Option<(f64, f64)>,
    /// Ratio of each spacing to the one before (three or more transducers).
    pub ratio: Option<(f64, f64)>,
    /// Line length of the varied system in m.
    pub length_m: Option<(f64, f64)>,
    /// End volume of the varied system in m³.
    pub volume_m3: Option<(f64, f64)>,
    /// Load valve resistance of the varied system in Pa·s/m³.
    pub resistance_pa_s_m3: Option<(f64, f64)>,
    /// Values per range (log-spaced).
    pub points: usize,
}

/// One candidate bench.
#[derive(Debug, Clone, PartialEq)]
pub struct Design {
    /// Transducer positions in m.
    pub positions_m: Vec<f64>,
    /// First spacing in m.
    pub spacing_m: f64,
    /// Ratio of successive spacings (1 for two transducers).
    pub ratio: f64,
    /// Line length of the varied system in m (two-systems benches).
    pub length_m: Option<f64>,
    /// End volume of the varied system in m³.
    pub volume_m3: Option<f64>,
    /// Load valve resistance of the varied system in Pa·s/m³.
    pub resistance_pa_s_m3: Option<f64>,
}

/// Settings of a plan.
#[derive(Debug, Clone, PartialEq)]
pub struct PlanOptions {
    /// Shaft speeds in rev/s.
    pub speeds_rev_s: Vec<f64>,
    /// Noise: standard deviation as a fraction of each channel's rms ripple.
    pub noise: f64,
    /// Largest condition number accepted.
    pub max_condition: f64,
    /// Monte Carlo draws for the predicted uncertainties.
    pub draws: usize,
    /// Seed of the Monte Carlo.
    pub seed: u64,
    /// The condition whose length and volume are varied (two systems).
    pub system: Option<usize>,
    /// What is searched.
    pub space: DesignSpace,
}

/// Which part of the estimate limits a harmonic's conditioning.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Limit {
    /// The wave decomposition (the transducer spacing).
    Decomposition,
    /// The identification (the systems' loads are too alike).
    Identification,
}

/// The prediction for one harmonic at one speed.
#[derive(Debug, Clone, PartialEq)]
pub struct HarmonicPlan {
    /// Shaft speed in rev/s.
    pub speed_rev_s: f64,
    /// Harmonic order.
    pub order: u32,
    /// Frequency in Hz.
    pub freq_hz: f64,
    /// The condition number `fit` reports (the worst of the decompositions
    /// and the identification).
    pub condition_number: f64,
    /// The worst wave decomposition's condition number.
    pub decomposition_condition: f64,
    /// Which limits it.
    pub limit: Limit,
    /// kΔx/π of every transducer pair (for the reasons), in pair order.
    pub pair_phase_over_pi: Vec<f64>,
    /// The status `fit` gives without noise.
    pub status: HarmonicStatus,
    /// Predicted standard uncertainty of |Qs| over |Qs|.
    pub flow_relative_u: Option<f64>,
    /// Predicted standard uncertainty of |Zs| over |Zs|.
    pub impedance_relative_u: Option<f64>,
    /// Predicted standard uncertainty of arg Zs in rad.
    pub impedance_phase_u_rad: Option<f64>,
    /// Predicted standard uncertainty of arg Qs in rad.
    pub flow_phase_u_rad: Option<f64>,
}

/// A design's score over the speeds and harmonics.
#[derive(Debug, Clone, PartialEq)]
pub struct Score {
    /// The largest condition number.
    pub worst_condition: f64,
    /// Where: speed (rev/s) and harmonic.
    pub worst_at: (f64, u32),
    /// Harmonic × speed cells above the limit.
    pub cells_over: usize,
    /// Mean log10 of the condition numbers (the tie-break).
    pub mean_log_condition: f64,
}

/// A design and its score.
#[derive(Debug, Clone, PartialEq)]
pub struct Ranked {
    /// The design.
    pub design: Design,
    /// Its score.
    pub score: Score,
}

/// The outcome of a plan.
#[derive(Debug, Clone, PartialEq)]
pub struct Plan {
    /// The bench's own design, scored and predicted.
    pub current: Ranked,
    /// Its predictions per speed and harmonic.
    pub current_harmonics: Vec<HarmonicPlan>,
    /// Designs searched, best first.
    pub ranking: Vec<Ranked>,
    /// Designs of the grid left out (transducers beyond a line's end).
    pub infeasible: usize,
    /// The best design's predictions.
    pub best_harmonics: Vec<HarmonicPlan>,
    /// The varied condition, if any.
    pub system: Option<usize>,
}

/// The bench with the design applied.
pub fn apply(bench: &Bench, design: &Design, system: Option<usize>) -> Bench {
    let mut b = bench.clone();
    for (t, x) in b.transducers.iter_mut().zip(&design.positions_m) {
        t.position_m = *x;
    }
    if let Some(i) = system {
        let c = &mut b.conditions[i];
        if let Some(l) = design.length_m {
            c.line_length_m = Some(l);
        }
        if let Some(v) = design.volume_m3 {
            let t = c.termination.get_or_insert_with(Termination::default);
            t.volume_m3 = Some(v);
        }
        if let Some(r) = design.resistance_pa_s_m3 {
            let t = c.termination.get_or_insert_with(Termination::default);
            t.resistance_pa_s_m3 = Some(r);
        }
    }
    b
}

/// Positions from the first one, the first spacing and the ratio.
pub fn positions(first_m: f64, count: usize, spacing_m: f64, ratio: f64) -> Vec<f64> {
    let mut x = vec![first_m];
    let mut d = spacing_m;
    while x.len() < count {
        x.push(x[x.len() - 1] + d);
        d *= ratio;
    }
    x
}

/// The bench's own design.
pub fn current_design(bench: &Bench, system: Option<usize>) -> Design {
    let p = bench.positions();
    let spacing = if p.len() > 1 { p[1] - p[0] } else { 0.0 };
    let ratio = if p.len() > 2 && spacing > 0.0 {
        (p[2] - p[1]) / spacing
    } else {
        1.0
    };
    let (length_m, volume_m3, resistance_pa_s_m3) = system.map_or((None, None, None), |i| {
        let c = &bench.conditions[i];
        (
            c.line_length_m,
            c.termination.and_then(|t| t.volume_m3),
            c.termination.and_then(|t| t.resistance_pa_s_m3),
        )
    });
    Design {
        positions_m: p,
        spacing_m: spacing,
        ratio,
        length_m,
        volume_m3,
        resistance_pa_s_m3,
    }
}

/// The default condition varied: the last pump-run condition after the
/// first (two-systems benches only).
pub fn default_system(bench: &Bench) -> Option<usize> {
    if bench.method != Method::TwoSystems {
        return None;
    }
    bench
        .conditions
        .iter()
        .enumerate()
        .skip(1)
        .rev()
        .find(|(_, c)| c.kind == ConditionKind::Pump)
        .map(|(i, _)| i)
}

/// The lowest and highest analysed frequencies over the speeds.
pub fn frequency_span(bench: &Bench, speeds_rev_s: &[f64]) -> (f64, f64) {
    let z = f64::from(bench.pump.pumping_elements);
    let lo = speeds_rev_s.iter().copied().fold(f64::INFINITY, f64::min) * z;
    let hi = speeds_rev_s.iter().copied().fold(0.0, f64::max) * z * f64::from(bench.harmonics);
    (lo, hi)
}

/// The default first-spacing range from the spacing guidance: kΔx = 0.1π at
/// the highest frequency to kΔx = 0.8π at the lowest (common practice for
/// the two-microphone method), with k = 2πf/c.
pub fn default_spacing_range(bench: &Bench, speeds_rev_s: &[f64]) -> (f64, f64) {
    let c = bench.nominal_speed_of_sound_m_s();
    let (f_lo, f_hi) = frequency_span(bench, speeds_rev_s);
    let k = |f: f64| TAU * f / c;
    let a = 0.1 * PI / k(f_hi);
    let b = 0.8 * PI / k(f_lo);
    (a.min(b), a.max(b))
}

fn log_grid((lo, hi): (f64, f64), n: usize) -> Vec<f64> {
    if n <= 1 || hi <= lo {
        return vec![(lo * hi).sqrt()];
    }
    (0..n)
        .map(|i| lo * (hi / lo).powf(i as f64 / (n - 1) as f64))
        .collect()
}

/// The grid of designs of `space` around the bench's own.
pub fn candidates(bench: &Bench, space: &DesignSpace, system: Option<usize>) -> Vec<Design> {
    let cur = current_design(bench, system);
    let n_t = bench.transducers.len();
    let first = cur.positions_m[0];
    let spacings = space
        .spacing_m
        .map_or(vec![cur.spacing_m], |r| log_grid(r, space.points));
    let ratios = match (space.ratio, n_t > 2) {
        (Some(r), true) => log_grid(r, space.points),
        _ => vec![cur.ratio],
    };
    let lengths: Vec<Option<f64>> = match space.length_m {
        Some(r) => log_grid(r, space.points).into_iter().map(Some).collect(),
        None => vec![cur.length_m],
    };
    let volumes: Vec<Option<f64>> = match space.volume_m3 {
        Some(r) => log_grid(r, space.points).into_iter().map(Some).collect(),
        None => vec![cur.volume_m3],
    };
    let resistances: Vec<Option<f64>> = match space.resistance_pa_s_m3 {
        Some(r) => log_grid(r, space.points).into_iter().map(Some).collect(),
        None => vec![cur.resistance_pa_s_m3],
    };
    let mut out = Vec::new();
    for &s in &spacings {
        for &r in &ratios {
            let p = if space.spacing_m.is_none() && space.ratio.is_none() {
                cur.positions_m.clone()
            } else {
                positions(first, n_t, s, r)
            };
            for &l in &lengths {
                for &v in &volumes {
                    for &res in &resistances {
                        out.push(Design {
                            positions_m: p.clone(),
                            spacing_m: s,
                            ratio: r,
                            length_m: l,
                            volume_m3: v,
                            resistance_pa_s_m3: res,
                        });
                    }
                }
            }
        }
    }
    out
}

/// Whether every transducer lies on the line of every condition (10 mm
/// short of its end at least).
pub fn feasible(bench: &Bench) -> bool {
    let last = bench.positions().into_iter().fold(0.0, f64::max);
    bench
        .conditions
        .iter()
        .all(|c| c.line_length_m.is_none_or(|l| last <= l - 0.01))
}

/// Samples and sample rate of a condition's records (time series), or
/// `None` for spectra files.
fn record_size(bench: &Bench, synthesis: &Synthesis, i: usize) -> Option<(f64, f64)> {
    match &bench.conditions[i].data {
        DataFile::TimeSeries { sample_rate_hz, .. } => {
            let fs = sample_rate_hz.or(synthesis.sample_rate_hz)?;
            Some(((synthesis.duration_s * fs).round(), fs))
        }
        DataFile::Spectra { .. } => None,
    }
}

/// Variance of a fundamental fitted from `lines` (order m, phasors per
/// channel) in N samples over T s with channel noise σ_c²: the inverse of
/// Σ_c Σ_l |P_cl|²(2πm_l)²·N·T²/(24σ_c²).
pub fn fundamental_variance(lines: &[&ToneLine], sigma2: &[f64], n: f64, t: f64) -> f64 {
    let mut info = 0.0;
    for l in lines {
        let w = TAU * f64::from(l.order);
        for (p, s2) in l.pressures.iter().zip(sigma2) {
            if *s2 > 0.0 {
                info += p.norm_sqr() * w * w * n * t * t / (24.0 * s2);
            }
        }
    }
    if info > 0.0 { 1.0 / info } else { 0.0 }
}

/// The spectra `fit` would see at shaft speed `speed_rev_s` with `noise`:
/// exact phasors with the uncertainties and reference errors the
/// extraction reaches on records of the synthesis's length.
///
/// # Errors
/// [`EstimateError::Bench`] when the synthesis fails (a line without a
/// length, a lossless resonance).
pub fn predicted_spectra(
    bench: &Bench,
    synthesis: &Synthesis,
    speed_rev_s: f64,
    noise: f64,
) -> Result<Vec<ConditionSpectra>, EstimateError> {
    let mut b = bench.clone();
    b.pump.speed_rev_s = speed_rev_s;
    let s = Synthesis {
        speed_error: 0.0,
        noise,
        ..synthesis.clone()
    };
    let fp = b.pump.pumping_frequency_hz();
    let n_pump = b.harmonics as usize;
    let mut out = Vec::new();
    let mut pump_u = Vec::new();
    let mut pending_held = Vec::new();
    for (i, cond) in b.conditions.iter().enumerate() {
        let lines = synth::condition_lines(&b, &s, cond)
            .map_err(|e| EstimateError::Bench(e.to_string()))?;
        let secondary = !matches!(cond.kind, ConditionKind::Pump);
        let rms: Vec<f64> = (0..b.transducers.len())
            .map(|c| (lines.iter().map(|l| l.pressures[c].norm_sqr()).sum::<f64>() / 2.0).sqrt())
            .collect();
        let (pump_lines, sec_lines) = lines.split_at(n_pump.min(lines.len()));
        let Some((n, fs)) = record_size(&b, &s, i) else {
            // Spectra files: noise × |P| on each phasor, no reference.
            let ph = |l: &ToneLine| Phasors {
                order: l.order,
                freq_hz: l.freq_hz,
                pressures: l.pressures.clone(),
                uncertainty: l.pressures.iter().map(|p| Some(noise * p.norm())).collect(),
                sensitivity: Vec::new(),
            };
            out.push(ConditionSpectra {
                pump_fundamental_hz: fp,
                pump: if secondary {
                    Vec::new()
                } else {
                    pump_lines.iter().map(ph).collect()
                },
                secondary_fundamental_hz: match cond.kind {
                    ConditionKind::SecondarySource { fundamental_hz, .. } => Some(fundamental_hz),
                    ConditionKind::Pump => None,
                },
                secondary: sec_lines.iter().map(ph).collect(),
                reference: Vec::new(),
            });
            continue;
        };
        let t = n / fs;
        let tacho = matches!(
            &cond.data,
            DataFile::TimeSeries {
                tacho_column: Some(_),
                ..
            }
        );
        let lever = if tacho { 0.0 } else { (n - 1.0) / (2.0 * fs) };
        let sigma2: Vec<f64> = rms.iter().map(|r| (noise * r).powi(2)).collect();
        let u: Vec<Option<f64>> = sigma2
            .iter()
            .map(|s2| Some(2.0 * (s2 / n).sqrt()))
            .collect();
        let sens = |l: &ToneLine| -> Vec<C64> {
            l.pressures
                .iter()
                .map(|p| C64::new(0.0, -TAU * f64::from(l.order) * lever) * p)
                .collect()
        };
        let zero = |l: &ToneLine| vec![C64::new(0.0, 0.0); l.pressures.len()];
        // a line's phasors with the noise u and their sensitivities to the
        // reference parameters of the condition
        let phasors = |l: &ToneLine, sensitivity: Vec<Vec<C64>>| Phasors {
            order: l.order,
            freq_hz: l.freq_hz,
            pressures: l.pressures.clone(),
            uncertainty: u.clone(),
            sensitivity,
        };
        let mut reference = Vec::new();
        let (pump_ph, sec_ph);
        if secondary {
            // The pump frequency is held from the pump runs (filled in
            // below); the secondary fundamental is fitted here.
            let var = fundamental_variance(&sec_lines.iter().collect::<Vec<_>>(), &sigma2, n, t);
            reference.push(ReferenceParameter {
                kind: ReferenceKind::HeldPumpFrequency,
                value: fp,
                uncertainty: 0.0,
            });
            reference.push(ReferenceParameter {
                kind: ReferenceKind::SecondaryFrequency,
                value: sec_lines.first().map_or(0.0, |l| l.freq_hz),
                uncertainty: var.sqrt(),
            });
            pending_held.push(i);
            pump_ph = Vec::new();
            sec_ph = sec_lines
                .iter()
                .map(|l| phasors(l, vec![zero(l), sens(l)]))
                .collect();
        } else {
            let var = fundamental_variance(&pump_lines.iter().collect::<Vec<_>>(), &sigma2, n, t);
            pump_u.push(var.sqrt());
            reference.push(ReferenceParameter {
                kind: ReferenceKind::PumpFrequency,
                value: fp,
                uncertainty: var.sqrt(),
            });
            pump_ph = pump_lines
                .iter()
                .map(|l| phasors(l, vec![sens(l)]))
                .collect();
            sec_ph = Vec::new();
        }
        out.push(ConditionSpectra {
            pump_fundamental_hz: fp,
            pump: pump_ph,
            secondary_fundamental_hz: match cond.kind {
                ConditionKind::SecondarySource { fundamental_hz, .. } => Some(fundamental_hz),
                ConditionKind::Pump => None,
            },
            secondary: sec_ph,
            reference,
        });
    }
    // The held value is the mean of the pump runs' fitted frequencies.
    let held_u = pump_u.iter().map(|u| u * u).sum::<f64>().sqrt() / pump_u.len().max(1) as f64;
    for i in pending_held {
        if let Some(r) = out[i].reference.first_mut() {
            r.uncertainty = held_u;
        }
    }
    Ok(out)
}

/// Conditioning of every harmonic of `bench` at one speed, as `fit` reports
/// it on noise-free data (speed of sound fixed at its true value, no draws),
/// with the wave decomposition's share and the pairs' phase spacings.
///
/// # Errors
/// As [`predicted_spectra`] and [`fit`].
pub fn conditioning(
    bench: &Bench,
    synthesis: &Synthesis,
    speed_rev_s: f64,
    noise: f64,
) -> Result<Vec<HarmonicPlan>, EstimateError> {
    let spectra = predicted_spectra(bench, synthesis, speed_rev_s, noise.max(1e-6))?;
    let c = bench.nominal_speed_of_sound_m_s();
    let mut fixed = bench.clone();
    fixed.speed_of_sound = SpeedOfSound::Fixed(c);
    fixed.pump.speed_rev_s = speed_rev_s;
    let report = fit(
        &fixed,
        &spectra,
        &FitOptions {
            draws: 0,
            stated_uncertainties: true,
            ..FitOptions::default()
        },
        &mut Quiet,
    )?;
    let positions = bench.positions();
    let props = bench.line_properties(c);
    let mut out = Vec::new();
    for k in 1..=bench.harmonics {
        let f = f64::from(k) * speed_rev_s * f64::from(bench.pump.pumping_elements);
        let prop = props.propagation(TAU * f);
        // The decompositions of the pump-run conditions, weighted as fit
        // weights them.
        let mut dec = 1.0f64;
        for (cond, sp) in bench.conditions.iter().zip(&spectra) {
            if cond.kind != ConditionKind::Pump {
                continue;
            }
            if let Some(p) = sp.pump.iter().find(|p| p.order == k) {
                let w: Vec<f64> = p
                    .uncertainty
                    .iter()
                    .map(|u| 1.0 / u.unwrap_or(1.0).max(f64::MIN_POSITIVE).powi(2))
                    .collect();
                dec = dec.max(
                    decompose(&prop, &positions, &p.pressures, &w)
                        .map_or(f64::INFINITY, |d| d.cond),
                );
            }
        }
        let mut pairs = Vec::new();
        for i in 0..positions.len() {
            for j in i + 1..positions.len() {
                pairs.push(prop.gamma.im * (positions[j] - positions[i]).abs() / PI);
            }
        }
        let (cond, status) = report
            .harmonics
            .iter()
            .find(|h| h.order == k)
            .map_or((f64::INFINITY, HarmonicStatus::Unstable), |h| {
                (h.condition_number, h.status)
            });
        out.push(HarmonicPlan {
            speed_rev_s,
            order: k,
            freq_hz: f,
            condition_number: cond,
            decomposition_condition: dec,
            limit: if dec >= cond * (1.0 - 1e-9) {
                Limit::Decomposition
            } else {
                Limit::Identification
            },
            pair_phase_over_pi: pairs,
            status,
            flow_relative_u: None,
            impedance_relative_u: None,
            impedance_phase_u_rad: None,
            flow_phase_u_rad: None,
        });
    }
    Ok(out)
}

/// The predicted Monte Carlo uncertainties of every harmonic at one speed:
/// `fit` with `draws` draws on the predicted spectra (the bench's own speed
/// of sound setting).
///
/// # Errors
/// As [`predicted_spectra`] and [`fit`].
pub fn uncertainties(
    bench: &Bench,
    synthesis: &Synthesis,
    speed_rev_s: f64,
    noise: f64,
    draws: usize,
    seed: u64,
    plans: &mut [HarmonicPlan],
) -> Result<(), EstimateError> {
    let spectra = predicted_spectra(bench, synthesis, speed_rev_s, noise)?;
    let mut b = bench.clone();
    b.pump.speed_rev_s = speed_rev_s;
    let report = fit(
        &b,
        &spectra,
        &FitOptions {
            draws,
            seed,
            include_flagged: false,
            stated_uncertainties: true,
        },
        &mut Quiet,
    )?;
    for p in plans.iter_mut().filter(|p| p.speed_rev_s == speed_rev_s) {
        if let Some(h) = report.harmonics.iter().find(|h| h.order == p.order) {
            if let Some(u) = h.flow.uncertainty {
                p.flow_relative_u = Some(u.amplitude / h.flow.value.norm());
                p.flow_phase_u_rad = Some(u.phase_rad);
            }
            if let Some(u) = h.impedance.uncertainty {
                p.impedance_relative_u = Some(u.amplitude / h.impedance.value.norm());
                p.impedance_phase_u_rad = Some(u.phase_rad);
            }
        }
    }
    Ok(())
}

/// Scores the predictions of one design.
pub fn score(plans: &[HarmonicPlan], max_condition: f64) -> Score {
    let mut worst = (0.0f64, (0.0, 0));
    let mut over = 0;
    let mut sum = 0.0;
    for p in plans {
        let c = if p.condition_number.is_finite() {
            p.condition_number
        } else {
            1e300
        };
        if c > worst.0 {
            worst = (c, (p.speed_rev_s, p.order));
        }
        if c > max_condition {
            over += 1;
        }
        sum += c.log10();
    }
    Score {
        worst_condition: worst.0,
        worst_at: worst.1,
        cells_over: over,
        mean_log_condition: sum / plans.len().max(1) as f64,
    }
}

fn evaluate(
    bench: &Bench,
    synthesis: &Synthesis,
    options: &PlanOptions,
) -> Result<Vec<HarmonicPlan>, EstimateError> {
    let mut all = Vec::new();
    for &n in &options.speeds_rev_s {
        all.extend(conditioning(bench, synthesis, n, options.noise)?);
    }
    Ok(all)
}

/// Plans the bench: scores its own design and every design of the search
/// space over the speeds, ranks them (fewest cells above the limit, then
/// the smallest worst condition number, then the smallest mean), and
/// predicts the uncertainties of the bench's design and of the best.
///
/// # Errors
/// [`EstimateError::Bench`] without a `synthesis` section, with too many
/// designs, or when the bench's own design cannot be evaluated.
pub fn plan(
    bench: &Bench,
    options: &PlanOptions,
    observer: &mut dyn Observer,
) -> Result<Plan, EstimateError> {
    let synthesis = bench.synthesis.clone().ok_or_else(|| {
        EstimateError::Bench(
            "planning needs a `synthesis` section (the expected source flow ripple and source impedance)".into(),
        )
    })?;
    let system = options.system;
    let designs = candidates(bench, &options.space, system);
    if designs.len() > MAX_DESIGNS {
        return Err(EstimateError::Bench(format!(
            "the search holds {} designs; at most {MAX_DESIGNS} (fewer points per range)",
            designs.len()
        )));
    }
    let own = current_design(bench, system);
    let mut current_harmonics = evaluate(bench, &synthesis, options)?;
    let current = Ranked {
        score: score(&current_harmonics, options.max_condition),
        design: own,
    };
    observer.stage("searching the bench designs", designs.len() as u64);
    // The bench's own design competes too, so the best is never worse.
    let mut ranking = if feasible(bench) {
        vec![current.clone()]
    } else {
        Vec::new()
    };
    let mut infeasible = 0;
    for d in designs {
        let b = apply(bench, &d, system);
        if !feasible(&b) {
            infeasible += 1;
        } else if let Ok(h) = evaluate(&b, &synthesis, options) {
            ranking.push(Ranked {
                score: score(&h, options.max_condition),
                design: d,
            });
        } else {
            infeasible += 1;
        }
        observer.advance(1);
    }
    observer.finish();
    ranking.sort_by(|a, b| {
        a.score
            .cells_over
            .cmp(&b.score.cells_over)
            .then(a.score.worst_condition.total_cmp(&b.score.worst_condition))
            .then(
                a.score
                    .mean_log_condition
                    .total_cmp(&b.score.mean_log_condition),
            )
    });
    let best = ranking
        .first()
        .map_or(current.design.clone(), |r| r.design.clone());
    let best_bench = apply(bench, &best, system);
    let mut best_harmonics = evaluate(&best_bench, &synthesis, options)?;
    if options.draws > 0 {
        observer.stage(
            "predicting the uncertainties (Monte Carlo)",
            2 * options.speeds_rev_s.len() as u64,
        );
        for (i, &n) in options.speeds_rev_s.iter().enumerate() {
            let seed = options.seed.wrapping_add(i as u64);
            uncertainties(
                bench,
                &synthesis,
                n,
                options.noise,
                options.draws,
                seed,
                &mut current_harmonics,
            )?;
            observer.advance(1);
            uncertainties(
                &best_bench,
                &synthesis,
                n,
                options.noise,
                options.draws,
                seed,
                &mut best_harmonics,
            )?;
            observer.advance(1);
        }
        observer.finish();
    }
    Ok(Plan {
        current,
        current_harmonics,
        ranking,
        infeasible,
        best_harmonics,
        system,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn positions_grow_by_the_ratio() {
        let p = positions(0.25, 4, 0.1, 2.0);
        let want = [0.25, 0.35, 0.55, 0.95];
        for (a, b) in p.iter().zip(want) {
            assert!((a - b).abs() < 1e-12, "{p:?}");
        }
        let g = log_grid((1.0, 100.0), 3);
        assert!((g[1] - 10.0).abs() < 1e-12 && (g[2] - 100.0).abs() < 1e-9);
    }

    #[test]
    fn one_tone_frequency_variance_is_the_cramer_rao_bound() {
        // Kay 1993 vol. 1 example 3.14 (real tone, unknown frequency):
        // var ω̂ = 24σ²/(A²N(N²−1)) in rad/sample; in Hz with ω = 2πf/fs
        // that is 24σ²fs²/(4π²A²N(N²−1)) → 24σ²/(4π²A²N·T²) for large N.
        let (a, s2, n, fs) = (2.0f64, 0.3f64, 4000.0f64, 2000.0f64);
        let line = ToneLine {
            order: 1,
            freq_hz: 50.0,
            pressures: vec![C64::new(a, 0.0)],
        };
        let v = fundamental_variance(&[&line], &[s2], n, n / fs);
        let bound = 24.0 * s2 * fs * fs / (4.0 * PI * PI * a * a * n * (n * n - 1.0));
        assert!((v / bound - 1.0).abs() < 1e-6, "{v} vs {bound}");
    }
}
