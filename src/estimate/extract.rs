//! Complex amplitudes of the pump harmonics (and of a secondary source's
//! harmonics) from transducer time series.
//!
//! 1. **Coarse frequency.** The Hann-windowed, zero-padded FFT of every
//!    channel (rustfft) gives a power spectrum; the fundamental within the
//!    stated speed tolerance is the frequency whose harmonics 1..N all carry
//!    power (a harmonic-product search on the FFT grid, with another series'
//!    lines masked).
//! 2. **Refined frequency.** Golden-section searches on the residual of the
//!    least-squares fit of the series (with the other series' lines in the
//!    model), with 1, 2, 4, … harmonics, then Gauss–Newton steps of the
//!    variable-projection problem over the whole record, channels weighted
//!    by the inverse of their residual variance ([`super::lines`]). A pump
//!    frequency known from elsewhere (the pump-run condition, held in a
//!    secondary-source condition) is not searched.
//! 3. **Phasors.** One unweighted least-squares fit of every modelled line
//!    (DC, pump harmonics up to 2N or 90 % of the Nyquist frequency,
//!    secondary lines) over the whole record gives the phasors P = a − jb of
//!    x(t) = a cos ω(t − t0) + b sin ω(t − t0), with t0 the shaft-angle
//!    reference (the first sample, or the tacho's reference pulse). This
//!    reaches the Cramér–Rao bound in white noise (var Â = 2σ²/N for a tone
//!    of known frequency; Rife & Boorstyn 1974; Kay 1993).
//! 4. **Uncertainty.** From the same model: the residual's periodogram near
//!    each line gives the local noise variance σ_l², so that the phasor's
//!    standard uncertainty is √(σ_l² (G⁻¹_aa + G⁻¹_bb)) (G the normal
//!    matrix); this part is independent between transducers and lines. The
//!    errors of the reference (a fitted or held fundamental, the tacho's
//!    time origin) move every phasor of the condition together: each phasor
//!    carries its sensitivity ∂P/∂θ to each reference parameter θ, whose
//!    standard uncertainty is given (for a fitted fundamental, the sandwich
//!    variance of the weighted estimator with the local noise levels).

use super::bench::{Bench, Condition, ConditionKind};
use super::lines::{self, LineFit, Samples};
use super::tacho::ShaftReference;
use super::{EstimateError, Observer};
use crate::C64;
use rustfft::FftPlanner;

/// A time series of every transducer, in Pa.
#[derive(Debug, Clone, PartialEq)]
pub struct TimeRecord {
    /// The file, for messages.
    pub file: String,
    /// Sample rate in Hz.
    pub sample_rate_hz: f64,
    /// Samples per transducer (all the same length).
    pub channels: Vec<Vec<f64>>,
}

/// The complex amplitude of one spectral line at every transducer.
#[derive(Debug, Clone, PartialEq)]
pub struct Phasors {
    /// Harmonic order (of the pump or of the secondary source).
    pub order: u32,
    /// Frequency in Hz.
    pub freq_hz: f64,
    /// Peak phasor per transducer in Pa.
    pub pressures: Vec<C64>,
    /// Standard uncertainty of each phasor (√E|δP|²) in Pa from the noise
    /// of the record, independent between transducers and lines, if known.
    pub uncertainty: Vec<Option<f64>>,
    /// ∂P/∂θ_j per reference parameter j of the condition
    /// ([`ConditionSpectra::reference`]), per transducer; empty when the
    /// phasors do not depend on a reference (spectra files).
    pub sensitivity: Vec<Vec<C64>>,
}

impl Phasors {
    /// Signal-to-noise ratio 20 log10(|P|/u) per transducer in dB (`None`
    /// where the uncertainty is unknown or zero).
    pub fn snr_db(&self) -> Vec<Option<f64>> {
        self.pressures
            .iter()
            .zip(&self.uncertainty)
            .map(|(p, u)| {
                u.filter(|u| *u > 0.0)
                    .map(|u| 20.0 * (p.norm() / u).log10())
            })
            .collect()
    }
}

/// What a reference parameter of a condition is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ReferenceKind {
    /// The pumping frequency fitted in this record (Hz).
    PumpFrequency,
    /// The pumping frequency held from the pump-run conditions (Hz): its
    /// error is theirs (the mean of their errors).
    HeldPumpFrequency,
    /// The secondary source's fundamental fitted in this record (Hz).
    SecondaryFrequency,
    /// The time of the shaft-angle reference from a tacho channel (s).
    TimeOrigin,
}

/// A parameter every phasor of a condition depends on.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ReferenceParameter {
    /// What it is.
    pub kind: ReferenceKind,
    /// Its value (Hz or s).
    pub value: f64,
    /// Its standard uncertainty (independent of the phasors' own noise).
    pub uncertainty: f64,
}

/// The lines of one test condition.
#[derive(Debug, Clone, PartialEq)]
pub struct ConditionSpectra {
    /// Pumping frequency in Hz (refined from the data, held, or as stated).
    pub pump_fundamental_hz: f64,
    /// The pump harmonics 1..N (empty for a secondary-source spectra file).
    pub pump: Vec<Phasors>,
    /// Secondary-source fundamental in Hz, refined, if any.
    pub secondary_fundamental_hz: Option<f64>,
    /// The secondary-source lines in the analysed band.
    pub secondary: Vec<Phasors>,
    /// The reference parameters the phasors depend on (the order of every
    /// [`Phasors::sensitivity`]).
    pub reference: Vec<ReferenceParameter>,
}

impl ConditionSpectra {
    /// The parameter of `kind`, if the condition has one.
    pub fn reference_of(&self, kind: ReferenceKind) -> Option<&ReferenceParameter> {
        self.reference.iter().find(|r| r.kind == kind)
    }
}

/// Where the pumping frequency of a record comes from.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum PumpFrequency {
    /// Searched in the record within the speed tolerance of a nominal value.
    Search {
        /// Nominal pumping frequency in Hz.
        nominal_hz: f64,
    },
    /// Known (held from the pump-run conditions): not searched.
    Held {
        /// Pumping frequency in Hz.
        hz: f64,
        /// Its standard uncertainty in Hz.
        uncertainty_hz: f64,
    },
}

impl PumpFrequency {
    fn value(&self) -> f64 {
        match *self {
            PumpFrequency::Search { nominal_hz } => nominal_hz,
            PumpFrequency::Held { hz, .. } => hz,
        }
    }
}

/// The time of the shaft-angle reference in a record.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TimeOrigin {
    /// Time from the first sample in s.
    pub time_s: f64,
    /// Its standard uncertainty in s.
    pub uncertainty_s: f64,
}

/// What to extract.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ExtractRequest {
    /// The pumping frequency: searched or held.
    pub pump: PumpFrequency,
    /// Pump harmonics reported (1..=N).
    pub harmonics: u32,
    /// Nominal secondary-source fundamental in Hz, if the condition has one.
    pub secondary_fundamental_hz: Option<f64>,
    /// Relative speed tolerance searched (e.g. 0.05).
    pub speed_tolerance: f64,
    /// The shaft-angle reference (a tacho); `None`: the first sample.
    pub origin: Option<TimeOrigin>,
}

/// Fewest periods of the lowest analysed frequency a record must hold.
pub const MIN_PERIODS: f64 = 12.0;

fn data_err(file: &str, message: String) -> EstimateError {
    EstimateError::Data {
        file: file.to_string(),
        message,
    }
}

/// One modelled line: pump harmonic or secondary line, and its order.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Line {
    pump: bool,
    order: u32,
}

/// The modelled lines and their frequencies for fundamentals fp and fs.
fn frequencies(lines: &[Line], fp: f64, fs: Option<f64>) -> Vec<f64> {
    lines
        .iter()
        .map(|l| {
            let f0 = if l.pump { fp } else { fs.unwrap_or(0.0) };
            f64::from(l.order) * f0
        })
        .collect()
}

/// Indices and orders of one series among the lines.
fn series_of(lines: &[Line], pump: bool) -> Vec<(usize, f64)> {
    lines
        .iter()
        .enumerate()
        .filter(|(_, l)| l.pump == pump)
        .map(|(i, l)| (i, f64::from(l.order)))
        .collect()
}

/// Extracts the phasors of a record.
///
/// # Errors
/// [`EstimateError::Data`] when the record is too short, the sample rate too
/// low for the top harmonic, a secondary line cannot be told from a pump
/// harmonic, or the lines cannot be separated.
pub fn extract(
    record: &TimeRecord,
    req: &ExtractRequest,
    observer: &mut dyn Observer,
) -> Result<ConditionSpectra, EstimateError> {
    let file = record.file.as_str();
    let fs = record.sample_rate_hz;
    let n = record.channels.first().map_or(0, Vec::len);
    let duration = n as f64 / fs;
    let nyquist = fs / 2.0;
    let searched = matches!(req.pump, PumpFrequency::Search { .. });
    let slack = if searched {
        1.0 + req.speed_tolerance
    } else {
        1.0
    };
    let fp0 = req.pump.value();
    let top = f64::from(req.harmonics) * fp0 * slack;
    if top >= 0.9 * nyquist {
        return Err(data_err(
            file,
            format!(
                "the sample rate {fs} Hz is too low: harmonic {} reaches {top:.1} Hz, and harmonics must stay below 90 % of the Nyquist frequency {nyquist} Hz (use a sample rate above {:.0} Hz)",
                req.harmonics,
                top / 0.45
            ),
        ));
    }
    let lowest = req.secondary_fundamental_hz.map_or(fp0, |s| s.min(fp0)) / slack;
    if duration * lowest < MIN_PERIODS {
        return Err(data_err(
            file,
            format!(
                "the record is too short: {n} samples ({duration:.4} s) hold {:.1} periods of the lowest analysed frequency {lowest:.2} Hz; at least {MIN_PERIODS} are needed, so the record must last at least {:.3} s",
                duration * lowest,
                MIN_PERIODS / lowest
            ),
        ));
    }
    observer.stage(&format!("extracting {file}"), 4);
    let origin = req.origin.map_or(0.0, |o| o.time_s);
    let s = Samples::new(&record.channels, fs, origin);
    // Pump harmonics modelled: up to 2N, below 90 % of Nyquist at the
    // highest speed searched (so the set does not change as f_p is refined).
    let k_model = (2 * req.harmonics)
        .min(((0.9 * nyquist) / (fp0 * slack)).floor() as u32)
        .max(req.harmonics);

    // 1–2. The pumping frequency (searched or held), then the secondary
    // source's, searched with the pump harmonics in the model.
    let mut fp = match req.pump {
        PumpFrequency::Search { nominal_hz } => refine_fundamental(
            record,
            &s,
            nominal_hz,
            req.harmonics,
            req.speed_tolerance,
            &[],
        )?,
        PumpFrequency::Held { hz, .. } => hz,
    };
    observer.advance(1);
    let mut fsec = match req.secondary_fundamental_hz {
        None => None,
        Some(nominal) => {
            let pump_freqs: Vec<f64> = (1..=k_model).map(|k| f64::from(k) * fp).collect();
            let top_sec = (f64::from(req.harmonics) + 0.5) * fp;
            let m_max = (top_sec / nominal).floor().max(1.0) as u32;
            Some(refine_fundamental(
                record,
                &s,
                nominal,
                m_max,
                req.speed_tolerance,
                &pump_freqs,
            )?)
        }
    };
    observer.advance(1);

    // 3. The modelled lines; Gauss–Newton on the free fundamental(s).
    let resolution = 1.0 / duration;
    let lines = model_lines(req, fp, fsec, k_model, nyquist, resolution, file)?;
    let m = 1 + 2 * lines.len();
    let dof = (n.saturating_sub(m)).max(1) as f64;
    let fit_at = |fp: f64, fsec: Option<f64>| {
        lines::fit(&s, &frequencies(&lines, fp, fsec)).ok_or_else(|| {
            data_err(
                file,
                format!(
                    "the spectral lines cannot be separated (lines closer than the record's resolution {resolution:.3} Hz)"
                ),
            )
        })
    };
    let weights_of = |lf: &LineFit| -> Vec<f64> {
        lf.rss
            .iter()
            .zip(&s.energy)
            .map(|(r, e)| 1.0 / (r / dof).max(1e-24 * e / n as f64).max(f64::MIN_POSITIVE))
            .collect()
    };
    let pump_series = series_of(&lines, true);
    let sec_series = series_of(&lines, false);
    let mut weights = weights_of(&fit_at(fp, fsec)?);
    for round in 0..12 {
        let mut moved = false;
        if searched {
            let lf = fit_at(fp, fsec)?;
            if let Some(step) = lines::gauss_newton_step(&s, &lf, &pump_series, &weights)
                .filter(|d| d.is_finite() && d.abs() < 0.5 * resolution)
            {
                fp += step;
                moved |= step.abs() > 1e-13 * fp;
            }
        }
        if let Some(f) = fsec {
            let lf = fit_at(fp, fsec)?;
            if let Some(step) = lines::gauss_newton_step(&s, &lf, &sec_series, &weights)
                .filter(|d| d.is_finite() && d.abs() < 0.5 * resolution)
            {
                fsec = Some(f + step);
                moved |= step.abs() > 1e-13 * f;
            }
        }
        if round == 0 {
            weights = weights_of(&fit_at(fp, fsec)?);
        }
        if !moved {
            break;
        }
    }
    // The lines were chosen at the searched frequencies: check them again
    // at the refined ones.
    let lines = model_lines(req, fp, fsec, k_model, nyquist, resolution, file)?;
    let pump_series = series_of(&lines, true);
    let sec_series = series_of(&lines, false);
    observer.advance(1);

    // 4. The final fit, the local noise and the reference parameters.
    let freqs = frequencies(&lines, fp, fsec);
    let lf = lines::fit(&s, &freqs).ok_or_else(|| {
        data_err(
            file,
            format!(
                "the spectral lines cannot be separated (lines closer than the record's resolution {resolution:.3} Hz)"
            ),
        )
    })?;
    let residual = lines::residuals(&s, &lf);
    let noise: Vec<Vec<f64>> = residual
        .iter()
        .map(|r| lines::local_noise(r, fs, &freqs, 0.5 * fp))
        .collect();
    let ginv = lf.chol.inverse();
    let channels = record.channels.len();
    let mut reference = Vec::new();
    // sens[j][l][c]: ∂P_cl/∂θ_j.
    let mut sens: Vec<Vec<Vec<C64>>> = Vec::new();
    let phasor_sens = |dtheta: &[nalgebra::DVector<f64>]| -> Vec<Vec<C64>> {
        (0..lines.len())
            .map(|l| {
                (0..channels)
                    .map(|c| C64::new(dtheta[c][1 + 2 * l], -dtheta[c][2 + 2 * l]))
                    .collect()
            })
            .collect()
    };
    let fitted_variance = |series: &[(usize, f64)], ss: &lines::SeriesSensitivity| {
        let den: f64 = ss.info.iter().zip(&weights).map(|(i, w)| w * i).sum();
        let num: f64 = (0..channels)
            .map(|c| {
                weights[c].powi(2)
                    * series
                        .iter()
                        .zip(&ss.info_per_line[c])
                        .map(|(&(l, _), i)| noise[c][l] * i)
                        .sum::<f64>()
            })
            .sum();
        if den > 0.0 { num / (den * den) } else { 0.0 }
    };
    {
        let ss = lines::series_sensitivity(&s, &lf, &pump_series);
        let (kind, u) = match req.pump {
            PumpFrequency::Search { .. } => (
                ReferenceKind::PumpFrequency,
                fitted_variance(&pump_series, &ss).sqrt(),
            ),
            PumpFrequency::Held { uncertainty_hz, .. } => {
                (ReferenceKind::HeldPumpFrequency, uncertainty_hz)
            }
        };
        reference.push(ReferenceParameter {
            kind,
            value: fp,
            uncertainty: u,
        });
        sens.push(phasor_sens(&ss.dtheta));
    }
    if let Some(f) = fsec {
        let ss = lines::series_sensitivity(&s, &lf, &sec_series);
        reference.push(ReferenceParameter {
            kind: ReferenceKind::SecondaryFrequency,
            value: f,
            uncertainty: fitted_variance(&sec_series, &ss).sqrt(),
        });
        sens.push(phasor_sens(&ss.dtheta));
    }
    if let Some(o) = req.origin {
        reference.push(ReferenceParameter {
            kind: ReferenceKind::TimeOrigin,
            value: o.time_s,
            uncertainty: o.uncertainty_s,
        });
        // x = Re{P e^{jω(t − t0)}}: moving t0 by δ turns P into P e^{jωδ}.
        sens.push(
            (0..lines.len())
                .map(|l| {
                    let w = std::f64::consts::TAU * freqs[l];
                    (0..channels)
                        .map(|c| C64::new(0.0, w) * lf.phasor(c, l))
                        .collect()
                })
                .collect(),
        );
    }

    // 5. The phasors reported.
    let top_sec = (f64::from(req.harmonics) + 0.5) * fp;
    let mut pump = Vec::new();
    let mut secondary = Vec::new();
    for (l, line) in lines.iter().enumerate() {
        if (line.pump && line.order > req.harmonics) || (!line.pump && freqs[l] > top_sec) {
            continue;
        }
        let var_ab = ginv[(1 + 2 * l, 1 + 2 * l)] + ginv[(2 + 2 * l, 2 + 2 * l)];
        let ph = Phasors {
            order: line.order,
            freq_hz: freqs[l],
            pressures: (0..channels).map(|c| lf.phasor(c, l)).collect(),
            uncertainty: (0..channels)
                .map(|c| Some((noise[c][l] * var_ab).max(0.0).sqrt()))
                .collect(),
            sensitivity: sens.iter().map(|sj| sj[l].clone()).collect(),
        };
        if line.pump {
            pump.push(ph);
        } else {
            secondary.push(ph);
        }
    }
    observer.advance(1);
    observer.finish();
    Ok(ConditionSpectra {
        pump_fundamental_hz: fp,
        pump,
        secondary_fundamental_hz: fsec,
        secondary,
        reference,
    })
}

/// Extracts every condition of a bench through `one(index, pump)`, the pump
/// conditions first with their pumping frequency searched; the mean over
/// them is then held in the other (secondary-source) conditions, where the
/// secondary source's lines could otherwise pull the search off the pump's.
/// The held value's uncertainty is that of the mean,
/// √(Σ u_i²)/n over the pump conditions' fitted frequencies.
///
/// # Errors
/// The first error of `one`.
pub fn extract_conditions<E>(
    bench: &Bench,
    mut one: impl FnMut(usize, PumpFrequency) -> Result<ConditionSpectra, E>,
) -> Result<Vec<ConditionSpectra>, E> {
    let nominal = PumpFrequency::Search {
        nominal_hz: bench.pump.pumping_frequency_hz(),
    };
    let mut out: Vec<Option<ConditionSpectra>> = vec![None; bench.conditions.len()];
    for (i, c) in bench.conditions.iter().enumerate() {
        if c.kind == ConditionKind::Pump {
            out[i] = Some(one(i, nominal)?);
        }
    }
    let pump: Vec<&ConditionSpectra> = out.iter().flatten().collect();
    let held = if pump.is_empty() {
        nominal
    } else {
        let count = pump.len() as f64;
        let var: f64 = pump
            .iter()
            .filter_map(|d| d.reference_of(ReferenceKind::PumpFrequency))
            .map(|r| r.uncertainty.powi(2))
            .sum();
        PumpFrequency::Held {
            hz: pump.iter().map(|d| d.pump_fundamental_hz).sum::<f64>() / count,
            uncertainty_hz: var.sqrt() / count,
        }
    };
    for (i, slot) in out.iter_mut().enumerate() {
        if slot.is_none() {
            *slot = Some(one(i, held)?);
        }
    }
    Ok(out.into_iter().flatten().collect())
}

/// The lines of a spectra file as a condition's spectra: for a pump
/// condition the pumping frequency is the mean of frequency/order over the
/// rows; for a secondary-source condition the rows are the secondary lines
/// and the pumping frequency is the one held (or the nominal one).
pub fn spectra_condition(
    condition: &Condition,
    lines: Vec<Phasors>,
    pump: PumpFrequency,
) -> ConditionSpectra {
    let fundamental = |ls: &[Phasors]| {
        ls.iter()
            .map(|p| p.freq_hz / f64::from(p.order))
            .sum::<f64>()
            / ls.len().max(1) as f64
    };
    match condition.kind {
        ConditionKind::Pump => ConditionSpectra {
            pump_fundamental_hz: fundamental(&lines),
            pump: lines,
            secondary_fundamental_hz: None,
            secondary: Vec::new(),
            reference: Vec::new(),
        },
        ConditionKind::SecondarySource { .. } => ConditionSpectra {
            pump_fundamental_hz: pump.value(),
            pump: Vec::new(),
            secondary_fundamental_hz: Some(fundamental(&lines)),
            secondary: lines,
            reference: Vec::new(),
        },
    }
}

/// The request for a condition of `bench`, with the pumping frequency
/// searched or held and the tacho's reference, if any.
pub fn request_for(
    bench: &Bench,
    condition: &Condition,
    pump: PumpFrequency,
    shaft: Option<&ShaftReference>,
) -> ExtractRequest {
    ExtractRequest {
        pump,
        harmonics: bench.harmonics,
        secondary_fundamental_hz: match condition.kind {
            ConditionKind::SecondarySource { fundamental_hz, .. } => Some(fundamental_hz),
            ConditionKind::Pump => None,
        },
        speed_tolerance: bench.extraction.speed_tolerance,
        origin: shaft.map(|s| TimeOrigin {
            time_s: s.origin_s,
            uncertainty_s: s.origin_uncertainty_s,
        }),
    }
}

/// The lines of the model: pump harmonics 1..=k_max, and the secondary
/// lines up to the modelled band (or 90 % of Nyquist). A secondary line in
/// the analysed band ((N + ½)·f_p) closer to a pump harmonic than the
/// record's resolution 1/T cannot be told from it: an error naming both.
/// Above the analysed band such a line is left out of the model.
fn model_lines(
    req: &ExtractRequest,
    fp: f64,
    fsec: Option<f64>,
    k_max: u32,
    nyquist: f64,
    resolution: f64,
    file: &str,
) -> Result<Vec<Line>, EstimateError> {
    let mut lines: Vec<Line> = (1..=k_max)
        .map(|order| Line { pump: true, order })
        .collect();
    if let Some(f) = fsec {
        let top_sec = (f64::from(req.harmonics) + 0.5) * fp;
        let limit = ((f64::from(k_max) + 0.5) * fp).min(0.9 * nyquist);
        let mut m = 1;
        while f64::from(m) * f <= limit {
            let fm = f64::from(m) * f;
            let clash = (1..=k_max)
                .map(|k| (k, f64::from(k) * fp))
                .find(|(_, fk)| (fk - fm).abs() < resolution);
            match clash {
                Some((k, fk)) if fm <= top_sec => {
                    return Err(data_err(
                        file,
                        format!(
                            "the secondary source's harmonic {m} ({fm:.3} Hz) lies {:.3} Hz from the pump's harmonic {k} ({fk:.3} Hz), closer than the record's frequency resolution 1/T = {resolution:.3} Hz: the two cannot be told apart. Choose a secondary fundamental whose harmonics stay clear of the pump harmonics, or record for longer than {:.2} s",
                            (fk - fm).abs(),
                            1.5 / (fk - fm).abs().max(1e-9)
                        ),
                    ));
                }
                Some(_) => {}
                None => lines.push(Line {
                    pump: false,
                    order: m,
                }),
            }
            m += 1;
        }
    }
    Ok(lines)
}

/// Residual of the fit of the harmonic series with fundamental `f` and
/// harmonics 1..=k, with the lines at `other` (another series, known) in the
/// model. A harmonic of the series within the record's resolution of a known
/// line is left out: were the known line left out instead, the series would
/// be pulled onto it.
fn series_residual(s: &Samples, f: f64, k: u32, other: &[f64]) -> f64 {
    let resolution = s.fs / s.len() as f64;
    let mut freqs: Vec<f64> = other.to_vec();
    freqs.extend(
        (1..=k)
            .map(|i| f64::from(i) * f)
            .filter(|h| other.iter().all(|p| (p - h).abs() > resolution)),
    );
    match lines::fit(s, &freqs) {
        Some(lf) => lf.rss.iter().sum(),
        None => f64::INFINITY,
    }
}

/// Hann weight of sample i of n.
fn hann(i: usize, n: usize) -> f64 {
    let x = std::f64::consts::PI * (i as f64 + 0.5) / n as f64;
    x.sin().powi(2)
}

/// The fundamental of a harmonic series near `nominal` (within ±tolerance):
/// a harmonic-product search on the FFT power spectrum, then golden-section
/// searches on the residual of the series fit. Lines at `other` (another
/// series, already known) are masked in the search and modelled in the fit.
fn refine_fundamental(
    record: &TimeRecord,
    samples: &Samples,
    nominal: f64,
    harmonics: u32,
    tolerance: f64,
    other: &[f64],
) -> Result<f64, EstimateError> {
    let fs = record.sample_rate_hz;
    let n = record.channels[0].len();
    let nfft = (4 * n).next_power_of_two();
    let mut planner = FftPlanner::<f64>::new();
    let fft = planner.plan_fft_forward(nfft);
    let mut power = vec![0.0; nfft / 2 + 1];
    let mut buf = vec![C64::new(0.0, 0.0); nfft];
    for ch in &record.channels {
        let mean = ch.iter().sum::<f64>() / n as f64;
        for (i, b) in buf.iter_mut().enumerate() {
            *b = if i < n {
                C64::new((ch[i] - mean) * hann(i, n), 0.0)
            } else {
                C64::new(0.0, 0.0)
            };
        }
        fft.process(&mut buf);
        for (p, b) in power.iter_mut().zip(&buf) {
            *p += b.norm_sqr();
        }
    }
    let bin = fs / nfft as f64;
    // Mask the other series: ±(main-lobe half-width of the Hann window).
    let half = 2.0 * fs / n as f64;
    let mut masked = vec![false; power.len()];
    for &p in other {
        let lo = ((p - half) / bin).floor().max(0.0) as usize;
        let hi = (((p + half) / bin).ceil() as usize).min(power.len() - 1);
        for m in &mut masked[lo..=hi] {
            *m = true;
        }
    }
    let peak = power.iter().copied().fold(0.0, f64::max);
    let floor = 1e-14 * peak;
    // Log power at f (linear interpolation on the grid); None where masked.
    let at = |f: f64| -> Option<f64> {
        let x = f / bin;
        let i = x.floor() as usize;
        if i + 1 >= power.len() || masked[i] || masked[i + 1] {
            return None;
        }
        let t = x - i as f64;
        Some((power[i] * (1.0 - t) + power[i + 1] * t + floor).ln())
    };
    let k_top = harmonics
        .min(((0.9 * fs / 2.0) / (nominal * (1.0 + tolerance))).floor() as u32)
        .max(1);
    let step = bin / (2.0 * f64::from(k_top));
    let lo = nominal * (1.0 - tolerance);
    let hi = nominal * (1.0 + tolerance);
    let count = ((hi - lo) / step).ceil() as usize + 1;
    // Harmonic product spectrum (Schroeder 1968; Noll 1969): the mean log
    // power over the unmasked harmonics, so that a candidate must meet every
    // harmonic, not a few strong lines of another series.
    let mut best = (nominal, f64::NEG_INFINITY);
    for i in 0..count {
        let f = lo + i as f64 * step;
        let (sum, used) = (1..=k_top)
            .filter_map(|k| at(f64::from(k) * f))
            .fold((0.0, 0u32), |(s, u), v| (s + v, u + 1));
        if used > 0 && sum / f64::from(used) > best.1 {
            best = (f, sum / f64::from(used));
        }
    }
    if peak.is_nan() || peak <= 0.0 || best.1 == f64::NEG_INFINITY {
        return Err(data_err(
            &record.file,
            format!(
                "no ripple found near {nominal:.2} Hz: every channel is constant (is this the right file?)"
            ),
        ));
    }
    // Golden-section searches on the series-fit residual, with 1, 2, 4, …
    // harmonics: each stage's estimate lies well inside the next stage's
    // bracket, ±0.75/(k·T), where the residual has a single minimum; the
    // caller polishes the last stage's estimate by Gauss–Newton. The
    // brackets stay inside the tolerance band: a short record's first
    // bracket is wider than the band and could carry the search off it.
    let duration = n as f64 / fs;
    let mut f = best.0;
    let mut k = 1;
    loop {
        let half = 0.75 / (f64::from(k) * duration);
        let last = k == k_top;
        f = super::golden_section(
            |x| series_residual(samples, x, k, other),
            (f - half).max(lo),
            (f + half).min(hi),
            1e-14,
            10,
        )
        .x;
        if last {
            break;
        }
        k = (2 * k).min(k_top);
    }
    Ok(f)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::estimate::Quiet;

    fn sine_sum(fs: f64, n: usize, f0: f64, amps: &[C64]) -> TimeRecord {
        let ch: Vec<f64> = (0..n)
            .map(|i| {
                let t = i as f64 / fs;
                amps.iter()
                    .enumerate()
                    .map(|(k, a)| {
                        (a * C64::from_polar(1.0, std::f64::consts::TAU * (k + 1) as f64 * f0 * t))
                            .re
                    })
                    .sum::<f64>()
                    + 3.0
            })
            .collect();
        TimeRecord {
            file: "t.csv".into(),
            sample_rate_hz: fs,
            channels: vec![ch],
        }
    }

    #[test]
    fn exact_sine_sum_at_an_incommensurate_frequency() {
        // Five harmonics of 47.3 Hz sampled at 1000 Hz (no integer number of
        // samples per period): the fit returns the phasors to round-off.
        let amps: Vec<C64> = (0..5)
            .map(|k| C64::from_polar(1.0 / (k + 1) as f64, 0.3 * k as f64))
            .collect();
        let rec = sine_sum(1000.0, 4000, 47.3, &amps);
        let req = request(47.0, None, None);
        let out = extract(&rec, &req, &mut Quiet).unwrap();
        assert!(
            (out.pump_fundamental_hz - 47.3).abs() < 1e-9,
            "{}",
            out.pump_fundamental_hz
        );
        for (p, a) in out.pump.iter().zip(&amps) {
            assert!(
                (p.pressures[0] - a).norm() < 1e-8,
                "{} {}",
                p.pressures[0],
                a
            );
        }
        // A time origin 0.1234 s into the record turns harmonic k by
        // e^{jω_k t0} (x = Re{P e^{jω(t − t0)}}).
        let t0 = 0.1234;
        let req = request(
            47.0,
            None,
            Some(TimeOrigin {
                time_s: t0,
                uncertainty_s: 1e-5,
            }),
        );
        let out = extract(&rec, &req, &mut Quiet).unwrap();
        for (k, (p, a)) in out.pump.iter().zip(&amps).enumerate() {
            let w = std::f64::consts::TAU * (k + 1) as f64 * 47.3;
            let want = a * C64::from_polar(1.0, w * t0);
            assert!((p.pressures[0] - want).norm() < 1e-8, "{k}");
            // The sensitivity to the origin is jωP.
            let j = out
                .reference
                .iter()
                .position(|r| r.kind == ReferenceKind::TimeOrigin)
                .unwrap();
            assert!((p.sensitivity[j][0] - C64::new(0.0, w) * want).norm() < 1e-6 * w);
        }
    }

    fn request(nominal: f64, secondary: Option<f64>, origin: Option<TimeOrigin>) -> ExtractRequest {
        ExtractRequest {
            pump: PumpFrequency::Search {
                nominal_hz: nominal,
            },
            harmonics: 5,
            secondary_fundamental_hz: secondary,
            speed_tolerance: 0.05,
            origin,
        }
    }

    #[test]
    fn a_secondary_line_on_a_pump_harmonic_is_refused_with_both_frequencies() {
        // Pump 47.3 Hz held; secondary 15.9 Hz: its 3rd harmonic 47.7 Hz is
        // 0.4 Hz from the pump's first, within 1/T = 0.5 Hz of a 2 s record.
        let amps = [C64::new(1.0, 0.0); 5];
        let rec = sine_sum(1000.0, 2000, 47.3, &amps);
        let req = ExtractRequest {
            pump: PumpFrequency::Held {
                hz: 47.3,
                uncertainty_hz: 0.0,
            },
            ..request(47.3, Some(15.9), None)
        };
        let mut rec2 = rec.clone();
        for (i, v) in rec2.channels[0].iter_mut().enumerate() {
            let t = i as f64 / 1000.0;
            *v += (0..16)
                .map(|m| 0.3 * (std::f64::consts::TAU * 15.9 * (m + 1) as f64 * t).cos())
                .sum::<f64>();
        }
        let err = extract(&rec2, &req, &mut Quiet).unwrap_err().to_string();
        assert!(
            err.contains("harmonic 3 (47.700 Hz)") && err.contains("harmonic 1 (47.300 Hz)"),
            "{err}"
        );
    }
}
