//! Synthetic benches: the transducer pressures a known Norton source makes on
//! the reference line of each test condition, and time series built from
//! them with seeded noise (`ripline synth`, and the round-trip tests).
//!
//! The line carries P(x) = F e^{−Γx} + G_L e^{−Γ(L−x)} and
//! Q(x) = [F e^{−Γx} − G_L e^{−Γ(L−x)}]/Zc (methods.md §2.6: only decaying
//! exponentials). Each end imposes a linear condition a·P + b·Q = s:
//!
//! ```text
//! pump outlet, x = 0:  Ys P + Q = Qs                (Norton: Q = Qs − P/Zs, methods.md §5)
//! far end,     x = L:  Y_L P − Q = q_secondary      (termination Y_L = 1/R + jωV/B;
//!                                                   a secondary source injects q there)
//! ```
//!
//! At a secondary-source frequency the pump is passive (Qs = 0).

use super::bench::{Bench, Condition, ConditionKind, DataFile, Synthesis, Termination};
use super::extract::Phasors;
use super::rng::Rng;
use crate::C64;
use crate::line::Propagation;
use crate::source::FlowRipple;

/// A linear condition a·P + b·Q = s at one end of a line.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Boundary {
    /// Coefficient of P.
    pub a: C64,
    /// Coefficient of Q (flow in the +x sense).
    pub b: C64,
    /// Right-hand side.
    pub s: C64,
}

/// The two waves on a line of length L: F (towards +x, at x = 0) and G_L
/// (towards −x, at x = L).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Waves {
    /// Forward wave at x = 0.
    pub forward: C64,
    /// Backward wave at x = L.
    pub backward_at_end: C64,
    /// The line's Γ and Zc.
    pub prop: Propagation,
    /// Length L in m.
    pub length_m: f64,
}

impl Waves {
    /// Solves for the waves from the two end conditions; `None` if they are
    /// incompatible (a lossless resonance).
    pub fn solve(prop: Propagation, length_m: f64, at_0: Boundary, at_l: Boundary) -> Option<Self> {
        let e = (-prop.gamma * length_m).exp();
        let yc = prop.zc.inv();
        // x = 0: P = F + G_L E, Q = (F − G_L E)/Zc;  x = L: P = F E + G_L, Q = (F E − G_L)/Zc.
        let m11 = at_0.a + at_0.b * yc;
        let m12 = (at_0.a - at_0.b * yc) * e;
        let m21 = (at_l.a + at_l.b * yc) * e;
        let m22 = at_l.a - at_l.b * yc;
        let det = m11 * m22 - m12 * m21;
        if det.norm() == 0.0 || !det.is_finite() {
            return None;
        }
        Some(Waves {
            forward: (at_0.s * m22 - m12 * at_l.s) / det,
            backward_at_end: (m11 * at_l.s - m21 * at_0.s) / det,
            prop,
            length_m,
        })
    }

    /// Pressure ripple at x in Pa.
    pub fn pressure(&self, x_m: f64) -> C64 {
        self.forward * (-self.prop.gamma * x_m).exp()
            + self.backward_at_end * (-self.prop.gamma * (self.length_m - x_m)).exp()
    }

    /// Flow ripple at x (in the +x sense) in m³/s.
    pub fn flow(&self, x_m: f64) -> C64 {
        (self.forward * (-self.prop.gamma * x_m).exp()
            - self.backward_at_end * (-self.prop.gamma * (self.length_m - x_m)).exp())
            / self.prop.zc
    }
}

/// Admittance of a termination at ω for a liquid of bulk modulus B.
pub fn termination_admittance(t: &Termination, omega: f64, bulk_modulus_pa: f64) -> C64 {
    C64::new(
        t.resistance_pa_s_m3.map_or(0.0, |r| 1.0 / r),
        omega * t.volume_m3.unwrap_or(0.0) / bulk_modulus_pa,
    )
}

/// Source flow ripple of harmonic `order` at shaft speed `speed_rev_s`
/// (amplitude in proportion to speed, as `FlowRipple` states).
pub fn source_flow(ripple: &FlowRipple, order: u32, speed_rev_s: f64) -> C64 {
    ripple.at(order, speed_rev_s)
}

/// What drives the line at one frequency.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Drive {
    /// The pump's source flow ripple.
    Pump(C64),
    /// A flow injected at the far end; the pump is passive.
    Secondary(C64),
}

/// One spectral line of a synthetic record: its frequency and the pressure
/// phasor at every transducer.
#[derive(Debug, Clone, PartialEq)]
pub struct ToneLine {
    /// Harmonic order (of the pump, or of the secondary source).
    pub order: u32,
    /// Frequency in Hz.
    pub freq_hz: f64,
    /// Pressure phasor (peak, Pa) per transducer.
    pub pressures: Vec<C64>,
}

/// Why a synthetic bench cannot be built.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum SynthError {
    /// The bench has no `synthesis` section.
    #[error("the bench file has no `synthesis` section (the known source to synthesise from)")]
    NoSynthesis,
    /// A condition lacks what synthesis needs.
    #[error("condition `{condition}`: {message}")]
    Condition {
        /// The condition.
        condition: String,
        /// What is missing.
        message: String,
    },
    /// The line and its ends have no solution at a frequency.
    #[error("condition `{condition}`: no solution at {freq_hz:.3} Hz (a lossless resonance)")]
    Resonance {
        /// The condition.
        condition: String,
        /// The frequency.
        freq_hz: f64,
    },
}

/// Transducer pressures of one condition at one frequency, with the line's
/// speed of sound `c0_m_s`.
///
/// # Errors
/// [`SynthError`] when the condition has no line length, or at a resonance.
pub fn transducer_pressures(
    bench: &Bench,
    synthesis: &Synthesis,
    condition: &Condition,
    c0_m_s: f64,
    freq_hz: f64,
    drive: Drive,
) -> Result<Vec<C64>, SynthError> {
    let waves = condition_waves(bench, synthesis, condition, c0_m_s, freq_hz, drive)?;
    Ok(bench
        .transducers
        .iter()
        .map(|t| waves.pressure(t.position_m))
        .collect())
}

/// The waves on the reference line of one condition at one frequency.
///
/// # Errors
/// [`SynthError`] when the condition has no line length, or at a resonance.
pub fn condition_waves(
    bench: &Bench,
    synthesis: &Synthesis,
    condition: &Condition,
    c0_m_s: f64,
    freq_hz: f64,
    drive: Drive,
) -> Result<Waves, SynthError> {
    let length = condition
        .line_length_m
        .ok_or_else(|| SynthError::Condition {
            condition: condition.name.clone(),
            message: "synthesis needs `line_length` (the reference line to the termination)".into(),
        })?;
    let omega = std::f64::consts::TAU * freq_hz;
    let prop = bench.line_properties(c0_m_s).propagation(omega);
    let term = condition.termination.unwrap_or_default();
    let y_l = termination_admittance(&term, omega, bench.fluid.bulk_modulus_pa);
    let ys = synthesis.impedance.admittance(omega);
    let one = C64::new(1.0, 0.0);
    let (qs, q_end) = match drive {
        Drive::Pump(q) => (q, C64::new(0.0, 0.0)),
        Drive::Secondary(q) => (C64::new(0.0, 0.0), q),
    };
    Waves::solve(
        prop,
        length,
        Boundary {
            a: ys,
            b: one,
            s: qs,
        },
        Boundary {
            a: y_l,
            b: -one,
            s: q_end,
        },
    )
    .ok_or_else(|| SynthError::Resonance {
        condition: condition.name.clone(),
        freq_hz,
    })
}

/// The spectral lines of one condition: the pump harmonics 1..=N at the
/// actual speed (nominal × (1 + speed error)) and, for a secondary-source
/// condition, the secondary source's harmonics up to the top pump harmonic.
///
/// # Errors
/// [`SynthError`] as [`transducer_pressures`], or a secondary condition
/// without a flow amplitude.
pub fn condition_lines(
    bench: &Bench,
    synthesis: &Synthesis,
    condition: &Condition,
) -> Result<Vec<ToneLine>, SynthError> {
    let c0 = bench.nominal_speed_of_sound_m_s();
    let scale = 1.0 + synthesis.speed_error;
    let speed = bench.pump.speed_rev_s * scale;
    let fp = bench.pump.pumping_frequency_hz() * scale;
    let mut lines = Vec::new();
    for k in 1..=bench.harmonics {
        let f = f64::from(k) * fp;
        let qs = source_flow(&synthesis.flow_ripple, k, speed);
        lines.push(ToneLine {
            order: k,
            freq_hz: f,
            pressures: transducer_pressures(bench, synthesis, condition, c0, f, Drive::Pump(qs))?,
        });
    }
    if let ConditionKind::SecondarySource {
        fundamental_hz,
        flow_m3_s,
    } = condition.kind
    {
        let q = flow_m3_s.ok_or_else(|| SynthError::Condition {
            condition: condition.name.clone(),
            message: "synthesis needs `secondary_source.flow` (the flow amplitude of each of its harmonics)".into(),
        })?;
        let fs = fundamental_hz * scale;
        let top = (f64::from(bench.harmonics) + 0.5) * fp;
        let mut m = 1;
        while f64::from(m) * fs <= top {
            let f = f64::from(m) * fs;
            lines.push(ToneLine {
                order: m,
                freq_hz: f,
                pressures: transducer_pressures(
                    bench,
                    synthesis,
                    condition,
                    c0,
                    f,
                    Drive::Secondary(C64::new(q, 0.0)),
                )?,
            });
            m += 1;
        }
    }
    Ok(lines)
}

/// Time series of every transducer: `mean + Σ Re{P e^{jω(t + start)}}`
/// sampled at `sample_rate_hz` for `duration_s` (t from 0; `start_s` is the
/// time of the first sample after the shaft-angle reference), plus white
/// Gaussian noise of standard deviation `noise` × the channel's rms ripple
/// √(Σ|P|²/2), from `rng`. Returns one vector of samples per transducer.
#[allow(clippy::too_many_arguments)]
pub fn time_series(
    lines: &[ToneLine],
    channels: usize,
    sample_rate_hz: f64,
    duration_s: f64,
    start_s: f64,
    mean_pa: f64,
    noise: f64,
    rng: &mut Rng,
) -> Vec<Vec<f64>> {
    let n = (duration_s * sample_rate_hz).round() as usize;
    let rms: Vec<f64> = (0..channels)
        .map(|c| (lines.iter().map(|l| l.pressures[c].norm_sqr()).sum::<f64>() / 2.0).sqrt())
        .collect();
    let mut out = vec![vec![mean_pa; n]; channels];
    for i in 0..n {
        let t = i as f64 / sample_rate_hz + start_s;
        for l in lines {
            let e = C64::from_polar(1.0, std::f64::consts::TAU * l.freq_hz * t);
            for (c, ch) in out.iter_mut().enumerate() {
                ch[i] += (l.pressures[c] * e).re;
            }
        }
        if noise > 0.0 {
            for (c, ch) in out.iter_mut().enumerate() {
                ch[i] += noise * rms[c] * rng.normal();
            }
        }
    }
    out
}

/// Synthetic data of one condition, as its data file would hold it.
#[derive(Debug, Clone, PartialEq)]
pub enum SyntheticData {
    /// Time series (Pa) per transducer, and a tacho channel if the bench
    /// names one.
    TimeSeries {
        /// Sample rate in Hz.
        sample_rate_hz: f64,
        /// Samples per transducer in Pa.
        channels: Vec<Vec<f64>>,
        /// Tacho samples ([`super::tacho::synthetic_pulse`]), if any.
        tacho: Option<Vec<f64>>,
    },
    /// Spectral lines with noise on each phasor.
    Spectra(Vec<Phasors>),
}

/// The synthetic data of a condition with the noise of `synthesis`, from
/// `rng`. Time series start at the shaft-angle reference, except when the
/// bench names a tacho column: then they start at a random shaft angle
/// (from `rng`) and the tacho gives the reference. Spectra carry circular
/// Gaussian noise of standard deviation `noise`·|P| on each phasor (and
/// that as their uncertainty); a secondary-source condition's spectra hold
/// only the secondary lines.
///
/// # Errors
/// [`SynthError`] as [`condition_lines`], or a time series with no sample
/// rate.
pub fn condition_data(
    bench: &Bench,
    synthesis: &Synthesis,
    condition: &Condition,
    rng: &mut Rng,
) -> Result<SyntheticData, SynthError> {
    let lines = condition_lines(bench, synthesis, condition)?;
    match &condition.data {
        DataFile::TimeSeries {
            sample_rate_hz,
            tacho_column,
            ..
        } => {
            let fs = sample_rate_hz.or(synthesis.sample_rate_hz).ok_or_else(|| {
                SynthError::Condition {
                    condition: condition.name.clone(),
                    message: "the condition states no sample rate: give `synthesis.sample_rate`"
                        .into(),
                }
            })?;
            let speed = bench.pump.speed_rev_s * (1.0 + synthesis.speed_error);
            let start_rev = if tacho_column.is_some() {
                rng.uniform()
            } else {
                0.0
            };
            let channels = time_series(
                &lines,
                bench.transducers.len(),
                fs,
                synthesis.duration_s,
                start_rev / speed,
                synthesis.mean_pressure_pa,
                synthesis.noise,
                rng,
            );
            let n = channels.first().map_or(0, Vec::len);
            let tacho = tacho_column.as_ref().map(|_| {
                (0..n)
                    .map(|i| super::tacho::synthetic_pulse(start_rev + speed * i as f64 / fs))
                    .collect()
            });
            Ok(SyntheticData::TimeSeries {
                sample_rate_hz: fs,
                channels,
                tacho,
            })
        }
        DataFile::Spectra { .. } => {
            let secondary = !matches!(condition.kind, ConditionKind::Pump);
            let pump_lines = bench.harmonics as usize;
            Ok(SyntheticData::Spectra(
                lines
                    .iter()
                    .enumerate()
                    .filter(|(i, _)| !secondary || *i >= pump_lines)
                    .map(|(_, l)| Phasors {
                        order: l.order,
                        freq_hz: l.freq_hz,
                        pressures: l
                            .pressures
                            .iter()
                            .map(|p| p + rng.complex_normal() * (synthesis.noise * p.norm()))
                            .collect(),
                        uncertainty: l
                            .pressures
                            .iter()
                            .map(|p| Some(synthesis.noise * p.norm()))
                            .collect(),
                        sensitivity: Vec::new(),
                    })
                    .collect(),
            ))
        }
    }
}
