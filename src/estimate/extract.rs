//! Complex amplitudes of the pump harmonics (and of a secondary source's
//! harmonics) from transducer time series.
//!
//! 1. **Coarse speed.** The Hann-windowed, zero-padded FFT of every channel
//!    (rustfft) gives a power spectrum; the fundamental within the stated
//!    speed tolerance is the frequency whose harmonics 1..N all carry power
//!    (a harmonic-product search on the FFT grid, with another series'
//!    lines masked).
//! 2. **Refined speed.** The fundamental is refined by minimising, over the
//!    whole record, the residual of a weighted least-squares fit of the
//!    harmonic series (a multi-harmonic sine fit in the manner of IEEE Std
//!    1057's sine-fitting, with the frequency as the one nonlinear
//!    parameter), by golden-section searches with 1, 2, 4, … harmonics. For
//!    noise-free data the minimum is exact.
//! 3. **Segments.** The record is cut into S equal segments; in each the
//!    Hann-weighted least-squares fit of all modelled lines (DC, pump
//!    harmonics up to 2N or the Nyquist limit, secondary lines) gives the
//!    phasors P = a − jb of x(t) = a cos ωt + b sin ωt, with t counted from
//!    the start of the record (the shaft-angle reference). Unlike an FFT bin,
//!    the fit has no leakage between modelled lines whatever the ratio of
//!    sample rate to pumping frequency.
//! 4. **Averaging and noise.** The phasor is the mean over segments; its
//!    standard uncertainty is the standard deviation of the segment phasors
//!    over √S (GUM Type A), and the signal-to-noise ratio of the harmonic is
//!    20 log10(|P|/u).

use super::{EstimateError, Observer};
use crate::C64;
use nalgebra::{DMatrix, DVector};
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
    /// Standard uncertainty of each phasor (√E|δP|²) in Pa, if known.
    pub uncertainty: Vec<Option<f64>>,
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

/// The lines of one test condition.
#[derive(Debug, Clone, PartialEq)]
pub struct ConditionSpectra {
    /// Pumping frequency in Hz (refined from the data, or as stated).
    pub pump_fundamental_hz: f64,
    /// The pump harmonics 1..N (empty for a secondary-source spectra file).
    pub pump: Vec<Phasors>,
    /// Secondary-source fundamental in Hz, refined, if any.
    pub secondary_fundamental_hz: Option<f64>,
    /// The secondary-source lines used (those clear of the pump harmonics).
    pub secondary: Vec<Phasors>,
}

/// What to extract.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ExtractRequest {
    /// Nominal pumping frequency in Hz.
    pub pump_fundamental_hz: f64,
    /// Pump harmonics reported (1..=N).
    pub harmonics: u32,
    /// Nominal secondary-source fundamental in Hz, if the condition has one.
    pub secondary_fundamental_hz: Option<f64>,
    /// Number of segments (≥ 2).
    pub segments: usize,
    /// Relative speed tolerance searched (e.g. 0.05).
    pub speed_tolerance: f64,
}

fn data_err(file: &str, message: String) -> EstimateError {
    EstimateError::Data {
        file: file.to_string(),
        message,
    }
}

/// Extracts the phasors of a record.
///
/// # Errors
/// [`EstimateError::Data`] when the record is too short for the segments,
/// the sample rate too low for the top harmonic, or the lines cannot be
/// separated.
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
    let top = f64::from(req.harmonics) * req.pump_fundamental_hz * (1.0 + req.speed_tolerance);
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
    let lowest = req
        .secondary_fundamental_hz
        .map_or(req.pump_fundamental_hz, |s| s.min(req.pump_fundamental_hz));
    let seg_len = n / req.segments.max(1);
    let seg_time = seg_len as f64 / fs;
    let needed = 8.0 / lowest * req.segments as f64;
    if seg_time * lowest < 8.0 {
        return Err(data_err(
            file,
            format!(
                "the record is too short: {n} samples ({duration:.4} s) in {} segments give {seg_time:.4} s per segment; each segment must hold 8 periods of the lowest analysed frequency {lowest:.2} Hz, so the record must last at least {needed:.3} s",
                req.segments
            ),
        ));
    }
    observer.stage(&format!("extracting {file}"), 3 + req.segments as u64);

    // 1–2. The pumping frequency, then the secondary source's (its search
    // masks the pump harmonics and models them at their refined frequencies).
    let mut fp = refine_fundamental(
        record,
        req.pump_fundamental_hz,
        req.harmonics,
        req.speed_tolerance,
        &[],
    )?;
    observer.advance(1);
    let model_k = (2 * req.harmonics).min(((0.9 * nyquist) / fp).floor() as u32);
    let mut lines: Vec<(u32, f64, bool)> = (1..=model_k)
        .map(|k| (k, f64::from(k) * fp, true))
        .collect();
    let fsec = match req.secondary_fundamental_hz {
        None => {
            fp = gauss_newton(record, fp, model_k, &[]);
            None
        }
        Some(nominal) => {
            let top_sec = (f64::from(req.harmonics) + 0.5) * fp;
            let m_max = (top_sec / nominal).floor().max(1.0) as u32;
            let pump_freqs = |fp: f64| (1..=model_k).map(|k| f64::from(k) * fp).collect::<Vec<_>>();
            let mut f =
                refine_fundamental(record, nominal, m_max, req.speed_tolerance, &pump_freqs(fp))?;
            // Each series refined with the other modelled, twice round.
            for _ in 0..2 {
                let sec: Vec<f64> = (1..=m_max).map(|m| f64::from(m) * f).collect();
                fp = gauss_newton(record, fp, model_k, &sec);
                f = gauss_newton(record, f, m_max, &pump_freqs(fp));
            }
            Some(f)
        }
    };
    for (k, line) in lines.iter_mut().enumerate() {
        line.1 = (k + 1) as f64 * fp;
    }
    if let Some(f) = fsec {
        // A secondary line closer to a pump line than half the segment
        // resolution cannot be separated from it: it is left out.
        let resolution = 0.5 / seg_time;
        let top_sec = (f64::from(req.harmonics) + 0.5) * fp;
        for m in 1..=(top_sec / f).floor() as u32 {
            let fm = f64::from(m) * f;
            if (1..=model_k).all(|k| (f64::from(k) * fp - fm).abs() > resolution)
                && fm < 0.9 * nyquist
            {
                lines.push((m, fm, false));
            }
        }
    }
    observer.advance(1);

    // 3. Per-segment fits.
    let channels = record.channels.len();
    let m = 1 + 2 * lines.len();
    let freqs: Vec<f64> = lines.iter().map(|l| l.1).collect();
    let mut per_segment: Vec<Vec<Vec<C64>>> = Vec::with_capacity(req.segments);
    for s in 0..req.segments {
        let start = s * seg_len;
        let theta = weighted_fit(record, start, seg_len, &freqs, m).ok_or_else(|| {
            data_err(
                file,
                format!(
                    "segment {} of {}: the spectral lines cannot be separated (lines closer than the segment resolution {:.2} Hz)",
                    s + 1,
                    req.segments,
                    1.0 / seg_time
                ),
            )
        })?;
        per_segment.push(
            (0..channels)
                .map(|c| {
                    (0..lines.len())
                        .map(|l| C64::new(theta[c][1 + 2 * l], -theta[c][2 + 2 * l]))
                        .collect()
                })
                .collect(),
        );
        observer.advance(1);
    }

    // 4. Mean and spread.
    let s = req.segments as f64;
    let mut pump = Vec::new();
    let mut secondary = Vec::new();
    for (l, &(order, freq, is_pump)) in lines.iter().enumerate() {
        if is_pump && order > req.harmonics {
            continue;
        }
        let mut pressures = Vec::with_capacity(channels);
        let mut uncertainty = Vec::with_capacity(channels);
        for c in 0..channels {
            let mean = per_segment.iter().map(|seg| seg[c][l]).sum::<C64>() / s;
            let var = per_segment
                .iter()
                .map(|seg| (seg[c][l] - mean).norm_sqr())
                .sum::<f64>()
                / (s - 1.0);
            pressures.push(mean);
            uncertainty.push(Some((var / s).sqrt()));
        }
        let ph = Phasors {
            order,
            freq_hz: freq,
            pressures,
            uncertainty,
        };
        if is_pump {
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
    })
}

/// Hann weight of sample i of n.
fn hann(i: usize, n: usize) -> f64 {
    let x = std::f64::consts::PI * (i as f64 + 0.5) / n as f64;
    x.sin().powi(2)
}

/// Weighted (Hann) least-squares fit of DC plus a cosine and a sine at each
/// frequency over samples start..start+len of every channel. Returns the
/// coefficients [dc, a1, b1, a2, b2, …] per channel; `None` if the normal
/// matrix is not positive definite.
fn weighted_fit(
    record: &TimeRecord,
    start: usize,
    len: usize,
    freqs: &[f64],
    m: usize,
) -> Option<Vec<Vec<f64>>> {
    let channels = record.channels.len();
    let (chol, rhs) = normal_equations(record, start, len, freqs, m)?;
    let out: Vec<Vec<f64>> = (0..channels)
        .map(|ch| {
            chol.solve(&DVector::from_column_slice(&rhs[ch * m..(ch + 1) * m]))
                .iter()
                .copied()
                .collect()
        })
        .collect();
    out.iter()
        .all(|v| v.iter().all(|x| x.is_finite()))
        .then_some(out)
}

/// The Cholesky factor of the Hann-weighted normal matrix of the basis over
/// samples start..start+len, and the right-hand sides of every channel
/// (channel-major, m each); `None` if the matrix is not positive definite.
fn normal_equations(
    record: &TimeRecord,
    start: usize,
    len: usize,
    freqs: &[f64],
    m: usize,
) -> Option<(nalgebra::Cholesky<f64, nalgebra::Dyn>, Vec<f64>)> {
    let channels = record.channels.len();
    let mut upper = vec![0.0; m * m];
    let mut rhs = vec![0.0; m * channels];
    let mut basis = vec![0.0; m];
    for i in 0..len {
        let w = hann(i, len);
        fill_basis(
            &mut basis,
            freqs,
            (start + i) as f64 / record.sample_rate_hz,
        );
        for r in 0..m {
            let br = w * basis[r];
            let row = &mut upper[r * m..(r + 1) * m];
            for (g, b) in row[r..].iter_mut().zip(&basis[r..]) {
                *g += br * b;
            }
            for (ch, data) in record.channels.iter().enumerate() {
                rhs[ch * m + r] += br * data[start + i];
            }
        }
    }
    let gram = DMatrix::<f64>::from_fn(m, m, |r, c| {
        if c >= r {
            upper[r * m + c]
        } else {
            upper[c * m + r]
        }
    });
    Some((gram.cholesky()?, rhs))
}

/// One Gauss–Newton refinement of the fundamental `f` of a harmonic series
/// (harmonics 1..=k) fitted over the whole record together with lines at
/// `fixed` (Hz), all channels sharing the frequency: with the fit residual
/// e_c and the derivative J_c = ∂(model)/∂f at the current coefficients,
/// δf = Σ_c ⟨J_c, e_c⟩ / Σ_c ‖P⊥J_c‖² (Hann-weighted inner products, P⊥ the
/// projection off the model's columns). This is the frequency step of the
/// four-parameter sine fit of IEEE Std 1057 carried to harmonic series.
/// Returns the new frequency, or `None` if the fit fails.
fn gauss_newton_step(record: &TimeRecord, f: f64, k: u32, fixed: &[f64]) -> Option<f64> {
    let n = record.channels[0].len();
    let fs = record.sample_rate_hz;
    let mut freqs: Vec<f64> = (1..=k).map(|i| f64::from(i) * f).collect();
    let resolution = fs / n as f64;
    freqs.extend(
        fixed
            .iter()
            .copied()
            .filter(|p| (1..=k).all(|i| (p - f64::from(i) * f).abs() > resolution)),
    );
    let m = 1 + 2 * freqs.len();
    let theta = weighted_fit(record, 0, n, &freqs, m)?;
    let channels = record.channels.len();
    let mut v = vec![0.0; m * channels];
    let (mut je, mut jj) = (0.0, 0.0);
    let mut basis = vec![0.0; m];
    for i in 0..n {
        let w = hann(i, n);
        let t = i as f64 / fs;
        fill_basis(&mut basis, &freqs, t);
        for (ch, th) in theta.iter().enumerate() {
            let model: f64 = basis.iter().zip(th).map(|(b, c)| b * c).sum();
            let e = record.channels[ch][i] - model;
            // ∂/∂f of Σ_h (a_h cos 2πhft + b_h sin 2πhft), series lines only.
            let mut jac = 0.0;
            for h in 0..k as usize {
                let order = (h + 1) as f64;
                let (a, b) = (th[1 + 2 * h], th[2 + 2 * h]);
                let (c, s) = (basis[1 + 2 * h], basis[2 + 2 * h]);
                jac += std::f64::consts::TAU * order * t * (-a * s + b * c);
            }
            je += w * jac * e;
            jj += w * jac * jac;
            for (r, b) in basis.iter().enumerate() {
                v[ch * m + r] += w * b * jac;
            }
        }
    }
    // ‖P⊥J‖² = ⟨J, J⟩ − vᵀ G⁻¹ v.
    let (chol, _) = normal_equations(record, 0, n, &freqs, m)?;
    let mut proj = 0.0;
    for ch in 0..channels {
        let vc = DVector::from_column_slice(&v[ch * m..(ch + 1) * m]);
        proj += vc.dot(&chol.solve(&vc));
    }
    let den = jj - proj;
    (den > 0.0).then(|| f + je / den)
}

/// Gauss–Newton refinement to convergence (relative step below 1e-14, at
/// most 8 steps).
fn gauss_newton(record: &TimeRecord, f: f64, k: u32, fixed: &[f64]) -> f64 {
    let mut f = f;
    for _ in 0..8 {
        match gauss_newton_step(record, f, k, fixed) {
            Some(next) if next.is_finite() => {
                let done = (next - f).abs() <= 1e-14 * f;
                f = next;
                if done {
                    break;
                }
            }
            _ => break,
        }
    }
    f
}

/// [1, cos ω1t, sin ω1t, cos ω2t, …] at time t.
fn fill_basis(basis: &mut [f64], freqs: &[f64], t: f64) {
    basis[0] = 1.0;
    for (l, f) in freqs.iter().enumerate() {
        let (s, c) = (std::f64::consts::TAU * f * t).sin_cos();
        basis[1 + 2 * l] = c;
        basis[2 + 2 * l] = s;
    }
}

/// Weighted residual of the fit over the whole record of the harmonic series
/// with fundamental `f` and harmonics 1..=k.
fn series_residual(record: &TimeRecord, f: f64, k: u32) -> f64 {
    let freqs: Vec<f64> = (1..=k).map(|i| f64::from(i) * f).collect();
    let m = 1 + 2 * freqs.len();
    let n = record.channels[0].len();
    let Some(theta) = weighted_fit(record, 0, n, &freqs, m) else {
        return f64::INFINITY;
    };
    let mut basis = vec![0.0; m];
    let mut total = 0.0;
    for i in 0..n {
        let w = hann(i, n);
        fill_basis(&mut basis, &freqs, i as f64 / record.sample_rate_hz);
        for (ch, th) in theta.iter().enumerate() {
            let model: f64 = basis.iter().zip(th).map(|(b, t)| b * t).sum();
            let r = record.channels[ch][i] - model;
            total += w * r * r;
        }
    }
    total
}

/// The fundamental of a harmonic series near `nominal` (within ±tolerance):
/// a harmonic-product search on the FFT power spectrum, then golden-section
/// searches on the residual of the series fit. Lines at `other` (another
/// series, already known) are masked in the search.
fn refine_fundamental(
    record: &TimeRecord,
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
    // caller polishes the last stage's estimate by Gauss–Newton.
    let duration = n as f64 / fs;
    let mut f = best.0;
    let mut k = 1;
    loop {
        let half = 0.75 / (f64::from(k) * duration);
        let last = k == k_top;
        f = super::golden_section(
            |x| series_residual(record, x, k),
            f - half,
            f + half,
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
        let req = ExtractRequest {
            pump_fundamental_hz: 47.0,
            harmonics: 5,
            secondary_fundamental_hz: None,
            segments: 4,
            speed_tolerance: 0.05,
        };
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
    }
}
