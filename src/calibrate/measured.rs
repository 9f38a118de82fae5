//! Measured harmonics at the taps, and the circuit's prediction of them.
//!
//! Each run's data are read with the bench readers (`io::records`) and its
//! harmonics extracted as `fit` extracts them (`estimate::extract`): the
//! shaft fundamental is refined from the record within the speed tolerance,
//! the phasors of its orders fitted by least squares, their standard
//! uncertainty taken from the residual's level near each line (GUM Type A). A spectra
//! file gives the phasors (and uncertainties, where it has `_u` columns)
//! directly. The prediction solves the circuit at the run's envelope point
//! and at the measured speed, with the phases against the same shaft-angle
//! reference (the record's first sample).

use crate::C64;
use crate::analysis::ripple::OrderSolver;
use crate::estimate::bench::DataFile;
use crate::estimate::extract::{self, ExtractRequest, TimeRecord};
use crate::estimate::{EstimateError, Observer};
use crate::io::measurement_file::{Measurements, Run};
use crate::io::records::{read_spectra, read_time_record};
use crate::io::{CircuitFile, CircuitTemplate, InputError, Setting};
use crate::network::{Plan, SolveError};
use crate::source::{Shaft, shafts};

/// One harmonic of a run at every tap it measured.
#[derive(Debug, Clone, PartialEq)]
pub struct MeasuredHarmonic {
    /// Order of the shaft fundamental.
    pub order: u32,
    /// Frequency, Hz.
    pub freq_hz: f64,
    /// Peak phasor per tap of the run, Pa (phase against the record's
    /// first sample).
    pub pressures: Vec<C64>,
    /// Standard uncertainty √E|δP|² per tap, Pa, where known.
    pub uncertainty: Vec<Option<f64>>,
}

/// The harmonics measured in one run.
#[derive(Debug, Clone, PartialEq)]
pub struct MeasuredRun {
    /// The run's name.
    pub name: String,
    /// The shaft fundamental found in the data, Hz.
    pub fundamental_hz: f64,
    /// The shaft speed that fundamental means, rev/s.
    pub speed_rev_s: f64,
    /// The compared orders, in increasing order.
    pub harmonics: Vec<MeasuredHarmonic>,
    /// Degrees of freedom of the uncertainties when they are estimated
    /// from the data (Type A from the residual's periodogram near each
    /// line: two per bin averaged, see `noise_dof`); `None` when a spectra
    /// file states them.
    pub uncertainty_dof: Option<f64>,
}

/// A failure to predict a run.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum ModelError {
    /// The circuit is not valid with the values set.
    #[error(transparent)]
    Input(#[from] InputError),
    /// The network cannot be solved at one of the run's harmonics.
    #[error("run `{run}`: {source}")]
    Solve {
        /// The run.
        run: String,
        /// Why.
        source: SolveError,
    },
}

/// The shaft a run sets, in `circuit`'s pumps.
fn run_shaft(circuit: &crate::Circuit, run: &Run) -> Shaft {
    shafts(&circuit.pumps).swap_remove(run.shaft)
}

/// Reads every run's data and extracts the compared harmonics.
///
/// # Errors
/// [`InputError`] located in the record or spectra file (missing columns or
/// harmonics, a record too short or sampled too slowly, a fundamental
/// outside the speed tolerance).
pub fn read_measured(
    m: &Measurements,
    circuit: &CircuitFile,
    observer: &mut dyn Observer,
) -> Result<Vec<MeasuredRun>, InputError> {
    m.runs
        .iter()
        .map(|run| read_run(m, run, circuit, observer))
        .collect()
}

fn read_run(
    m: &Measurements,
    run: &Run,
    circuit: &CircuitFile,
    observer: &mut dyn Observer,
) -> Result<MeasuredRun, InputError> {
    let c = &circuit.circuit;
    let shaft = run_shaft(c, run);
    let orders = shaft.orders(&c.pumps, m.harmonics);
    let top = orders.last().copied().unwrap_or(1);
    let nominal = shaft.fundamental_hz(run.speed_rev_s);
    let g = nominal / run.speed_rev_s;
    let file_err = |file: &str, message: String| {
        m.err(&run.path, format!("run `{}`: {file}: {message}", run.name))
    };
    let (fundamental, lines, uncertainty_dof) = match &run.data {
        DataFile::TimeSeries {
            path,
            unit_pa,
            sample_rate_hz,
            time_column,
            columns,
            ..
        } => {
            let record: TimeRecord = read_time_record(
                path,
                *unit_pa,
                *sample_rate_hz,
                time_column.as_deref(),
                columns,
            )?;
            let spectra = extract_record(&record, nominal, top, m.speed_tolerance, observer)
                .map_err(|e| match e {
                    EstimateError::Data { file, message } => file_err(&file, message),
                    other => file_err(&record.file, other.to_string()),
                })?;
            let dof = noise_dof(&record, spectra.0);
            (spectra.0, spectra.1, Some(dof))
        }
        DataFile::Spectra {
            path,
            unit_pa,
            columns,
        } => {
            let lines = read_spectra(path, *unit_pa, columns)?;
            let file = path.display().to_string();
            let chosen: Vec<&extract::Phasors> = orders
                .iter()
                .map(|&k| {
                    lines.iter().find(|p| p.order == k).ok_or_else(|| {
                        file_err(
                            &file,
                            format!(
                                "harmonic {k} is missing: the comparison takes orders {} of the shaft fundamental",
                                order_list(&orders)
                            ),
                        )
                    })
                })
                .collect::<Result<_, _>>()?;
            let f = chosen
                .iter()
                .map(|p| p.freq_hz / f64::from(p.order))
                .sum::<f64>()
                / chosen.len() as f64;
            if (f - nominal).abs() > m.speed_tolerance * nominal {
                return Err(file_err(
                    &file,
                    format!(
                        "the rows give a fundamental of {f:.3} Hz ({:.1} rpm), more than the speed tolerance from the run's {nominal:.3} Hz ({:.1} rpm)",
                        f / g * 60.0,
                        run.speed_rev_s * 60.0
                    ),
                ));
            }
            (f, chosen.into_iter().cloned().collect(), None)
        }
    };
    let harmonics = orders
        .iter()
        .filter_map(|&k| lines.iter().find(|p| p.order == k))
        .map(|p| MeasuredHarmonic {
            order: p.order,
            freq_hz: f64::from(p.order) * fundamental,
            pressures: p.pressures.clone(),
            uncertainty: p.uncertainty.clone(),
        })
        .collect();
    Ok(MeasuredRun {
        name: run.name.clone(),
        fundamental_hz: fundamental,
        speed_rev_s: fundamental / g,
        harmonics,
        uncertainty_dof,
    })
}

fn order_list(orders: &[u32]) -> String {
    orders
        .iter()
        .map(u32::to_string)
        .collect::<Vec<_>>()
        .join(", ")
}

/// Degrees of freedom of a phasor's Type A uncertainty from the
/// whole-record fit `fit` uses: its noise level is the mean of the
/// residual's periodogram over the bins within ±f/2 of the line (at least 8
/// each side; `estimate::lines::local_noise`), each bin a χ² with 2 degrees
/// of freedom (real and imaginary parts), less the five bins left out about
/// the line.
fn noise_dof(record: &TimeRecord, fundamental_hz: f64) -> f64 {
    let n = record.channels.first().map_or(0, Vec::len) as f64;
    let bins = (fundamental_hz * n / record.sample_rate_hz).floor() - 5.0;
    2.0 * bins.max(16.0)
}

/// The fundamental (refined) and the phasors of harmonics 1..=`top` of a
/// record, as `fit` extracts them.
fn extract_record(
    record: &TimeRecord,
    nominal_hz: f64,
    top: u32,
    speed_tolerance: f64,
    observer: &mut dyn Observer,
) -> Result<(f64, Vec<extract::Phasors>), EstimateError> {
    let request = ExtractRequest {
        pump: extract::PumpFrequency::Search { nominal_hz },
        harmonics: top,
        secondary_fundamental_hz: None,
        speed_tolerance,
        origin: None,
    };
    let spectra = extract::extract(record, &request, observer)?;
    Ok((spectra.pump_fundamental_hz, spectra.pump))
}

/// The circuit's prediction of the measured runs, for any settings of its
/// values.
#[derive(Debug, Clone)]
pub struct Model<'a> {
    /// The circuit file.
    pub template: &'a CircuitTemplate,
    /// The measurement file.
    pub measurements: &'a Measurements,
    /// What was measured.
    pub measured: &'a [MeasuredRun],
}

impl Model<'_> {
    /// The predicted phasor at each run's taps: `[run][harmonic][tap]` in
    /// the order of `measured`.
    ///
    /// # Errors
    /// [`ModelError`] when the circuit is invalid with these settings or
    /// singular at a harmonic.
    pub fn predict(&self, settings: &[Setting]) -> Result<Vec<Vec<Vec<C64>>>, ModelError> {
        self.measurements
            .runs
            .iter()
            .zip(self.measured)
            .map(|(run, measured)| self.predict_run(run, measured, settings))
            .collect()
    }

    fn predict_run(
        &self,
        run: &Run,
        measured: &MeasuredRun,
        settings: &[Setting],
    ) -> Result<Vec<Vec<C64>>, ModelError> {
        let orders: Vec<u32> = measured.harmonics.iter().map(|h| h.order).collect();
        ripple_at_taps(
            self.template,
            self.measurements,
            run,
            measured.speed_rev_s,
            &orders,
            settings,
        )
    }
}

/// The ripple at a run's taps, `[order][tap]`: the circuit at the run's
/// envelope point with `settings`, its shaft at `speed_rev_s`, solved at
/// each of `orders` of the shaft fundamental.
///
/// # Errors
/// [`ModelError`] when the circuit is invalid or singular.
pub fn ripple_at_taps(
    template: &CircuitTemplate,
    measurements: &Measurements,
    run: &Run,
    speed_rev_s: f64,
    orders: &[u32],
    settings: &[Setting],
) -> Result<Vec<Vec<C64>>, ModelError> {
    let mut circuit = template.circuit(&run.point, settings)?;
    let shaft = run_shaft(&circuit, run);
    shaft.set_speed(&mut circuit.pumps, speed_rev_s);
    crate::meanflow::resolve_line_mean_flows(&mut circuit);
    let plan = Plan::compile(&circuit)
        .map_err(|e| ModelError::Input(measurements.err(&run.path, e.to_string())))?;
    let mut solver = OrderSolver::new(&plan, &shaft, measurements.harmonics);
    orders
        .iter()
        .map(|&order| {
            solver
                .solve(order, speed_rev_s)
                .map_err(|source| ModelError::Solve {
                    run: run.name.clone(),
                    source,
                })?;
            Ok(run.taps.iter().map(|&(i, _)| solver.pressures[i]).collect())
        })
        .collect()
}

/// How to make a synthetic record of a run.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RecordSynthesis {
    /// Sample rate, Hz.
    pub sample_rate_hz: f64,
    /// Duration, s.
    pub duration_s: f64,
    /// Standard deviation of the white noise added to each channel, as a
    /// fraction of that channel's rms ripple.
    pub noise: f64,
    /// Seed of the noise.
    pub seed: u64,
}

/// A synthetic time series of a run's taps (Pa, one channel per tap): the
/// ripple the circuit with `settings` makes at the run's point and stated
/// speed, p(t) = Σ_k Re{P_k e^{j2πk·f₁·t}} over the compared orders, t from
/// the shaft-angle reference, plus white Gaussian noise. For demos and
/// tests: the "measured" data of a circuit whose true values are known.
///
/// # Errors
/// [`ModelError`] as [`ripple_at_taps`].
pub fn synthesize_run(
    template: &CircuitTemplate,
    measurements: &Measurements,
    run: &Run,
    settings: &[Setting],
    synthesis: &RecordSynthesis,
) -> Result<Vec<Vec<f64>>, ModelError> {
    let circuit = template.circuit(&run.point, settings)?;
    let shaft = run_shaft(&circuit, run);
    let orders = shaft.orders(&circuit.pumps, measurements.harmonics);
    let phasors = ripple_at_taps(
        template,
        measurements,
        run,
        run.speed_rev_s,
        &orders,
        settings,
    )?;
    let f1 = shaft.fundamental_hz(run.speed_rev_s);
    let n = (synthesis.duration_s * synthesis.sample_rate_hz).round() as usize;
    let mut rng = crate::estimate::rng::Rng::new(synthesis.seed);
    let mut channels = Vec::with_capacity(run.taps.len());
    for tap in 0..run.taps.len() {
        let rms = (phasors.iter().map(|p| p[tap].norm_sqr()).sum::<f64>() / 2.0).sqrt();
        let sigma = synthesis.noise * rms;
        let channel: Vec<f64> = (0..n)
            .map(|i| {
                let t = i as f64 / synthesis.sample_rate_hz;
                let clean: f64 = orders
                    .iter()
                    .zip(&phasors)
                    .map(|(&k, p)| {
                        let w = std::f64::consts::TAU * f64::from(k) * f1 * t;
                        (p[tap] * C64::from_polar(1.0, w)).re
                    })
                    .sum();
                clean + sigma * rng.normal()
            })
            .collect();
        channels.push(channel);
    }
    Ok(channels)
}
