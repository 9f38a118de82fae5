//! Speed sweeps: the ripple of a shaft's pumps over a range of speeds, and
//! the speeds where a harmonic crosses a resonance of the circuit.
//!
//! At every speed n of the grid the pumps on the swept shaft are solved at
//! each order j of their shaft fundamental n·g (for one pump, harmonic k of
//! the pumping frequency n·z; see [`Shaft::orders`]), and the amplitude at
//! every measurement point is kept. The plan is compiled once and one
//! workspace serves every solve. Pumps on other shafts keep their own speed;
//! their ripple is solved once and adds a constant mean square to each
//! point's overall level. The one exception: when a line uses the turbulent
//! model with its mean flow split from the pumps' (`meanflow`), its damping
//! depends on speed, so at every speed the mean flows are split again and
//! the circuit is compiled again (the other shafts' ripple then varies too).
//!
//! **Resonance crossing.** For each point and order, the level
//! L(n) = 20·log10 |P_j(n)| along the speed grid is searched for peaks. A
//! peak is an interior grid speed whose level is above its left neighbour
//! and not below its right one (a flat top counts once, at its middle). Its
//! **rise** is its topographic prominence in dB, as defined by
//! `scipy.signal.peak_prominences`: going left from the peak until the level
//! first exceeds the peak's (or the sweep ends), take the lowest level met;
//! likewise to the right; the rise is the peak level minus the higher of
//! these two lowest levels — how far the harmonic climbs above the level it
//! has away from the resonance, on the side where that level is higher. A
//! peak rising at least `min_rise_db` is a crossing. Its speed and amplitude
//! are then refined by golden-section search on the solved amplitude
//! between the neighbouring grid speeds (the rise is taken up by the
//! refined peak level over the same base).
//!
//! Each crossing also gives its **share**: the harmonic's rms level minus
//! the point's overall rms level at the grid speed of the peak (0 dB when
//! the harmonic is all the ripple there). Levels more than 160 dB below the
//! sweep's highest amplitude are held at that floor when searching, so that
//! round-off in harmonics that vanish makes no peaks.
//!
//! **Worst speed.** Per point, the speed of the largest overall rms ripple
//! is found between the grid speeds to 0.01 dB by [`super::worst`] (every
//! crossing refined), the routine `tune` and the envelope verdicts use.
//!
//! **Resonance frequencies** ([`shaft_resonances`]): the resonances of the
//! frequency response to each pump of the shaft, found as `ripline response`
//! finds them ([`super::response`]).

use super::response::{
    PeakSettings, Resonance, ResponseError, default_points, find_resonances, frequency_response,
    log_grid, merges, valleys,
};
use super::ripple::{OrderSolver, report_points, shaft_ripple};
use super::search::golden_section_max;
use super::worst::{Measure, SpeedGrid, WorstSettings, WorstSpeed, worst_speeds};
use crate::circuit::Circuit;
use crate::diagnostics::Warning;
use crate::line::{LineModel, MeanFlow};
use crate::network::{NetworkError, Plan, SolveError};
use crate::source::Shaft;
use num_complex::Complex64 as C64;

/// Level floor in dB re 1 Pa used for zero amplitudes when searching peaks.
const FLOOR_DB: f64 = -400.0;

/// Levels more than this many dB below the sweep's highest amplitude are
/// held at that floor when searching crossings, so that round-off in
/// harmonics that vanish (e.g. the odd ones of an odd-z piston pump) does
/// not make peaks.
const NEGLIGIBLE_DB: f64 = 160.0;

/// Golden-section steps of a refinement between two grid neighbours:
/// 0.618⁴⁵ ≈ 4e-10 of the bracket (1.6e-8 rpm for steps of 20 rpm), far
/// finer than any speed a pump holds.
const REFINE_STEPS: usize = 45;

/// Whether a line's model depends on the pumps' speed: the turbulent model
/// with a mean flow split from the pumps' (see `meanflow`).
fn depends_on_speed(circuit: &Circuit) -> bool {
    circuit
        .elements
        .iter()
        .filter_map(|e| e.kind.line())
        .any(|l| {
            l.properties.model == LineModel::Turbulent
                && matches!(l.properties.mean_flow, MeanFlow::FromPumps(_))
        })
}

/// Solves a shaft's orders at any speed: with the given plan and one
/// reused workspace when no line depends on speed, or else with the swept
/// pumps set to that speed, the mean flows split again and the circuit
/// compiled again.
struct AtSpeed<'p, 'c> {
    plan: &'p Plan<'c>,
    shaft: &'p Shaft,
    harmonics: u32,
    /// The solver of the given plan, when no line depends on speed.
    fixed: Option<OrderSolver<'p, 'c>>,
}

impl<'p, 'c> AtSpeed<'p, 'c> {
    fn new(plan: &'p Plan<'c>, shaft: &'p Shaft, harmonics: u32) -> Self {
        let fixed =
            (!depends_on_speed(plan.circuit())).then(|| OrderSolver::new(plan, shaft, harmonics));
        AtSpeed {
            plan,
            shaft,
            harmonics,
            fixed,
        }
    }

    /// Runs `f` with a solver of the circuit at shaft speed `speed_rev_s`.
    fn with<R>(
        &mut self,
        speed_rev_s: f64,
        f: impl FnOnce(&mut OrderSolver<'_, '_>) -> Result<R, SweepError>,
    ) -> Result<R, SweepError> {
        if let Some(solver) = &mut self.fixed {
            return f(solver);
        }
        let mut circuit = self.plan.circuit().clone();
        self.shaft.set_speed(&mut circuit.pumps, speed_rev_s);
        crate::meanflow::resolve_line_mean_flows(&mut circuit);
        let plan = Plan::compile(&circuit)?;
        let mut solver = OrderSolver::new(&plan, self.shaft, self.harmonics);
        f(&mut solver)
    }
}

/// A solve failure located at a shaft speed.
fn at_speed(speed_rev_s: f64) -> impl Fn(SolveError) -> SweepError {
    move |source| SweepError::Solve {
        speed_rev_s,
        source,
    }
}

/// Mean square ripple Σ|P|²/2 (Pa²) at every point from the pumps on shafts
/// other than `swept`, each at its own speed.
fn other_shafts(
    plan: &Plan<'_>,
    swept: &Shaft,
    harmonics: u32,
    warnings: &mut Vec<Warning>,
) -> Result<Vec<f64>, SweepError> {
    let circuit = plan.circuit();
    let mut ms = vec![0.0; report_points(circuit).len()];
    for s in crate::source::shafts(&circuit.pumps) {
        if s.pumps.iter().any(|i| swept.pumps.contains(i)) {
            continue;
        }
        let speed = s.speed_rev_s(&circuit.pumps);
        let report = shaft_ripple(plan, &s, harmonics, speed).map_err(at_speed(speed))?;
        for (m, tap) in ms.iter_mut().zip(&report.taps) {
            *m += tap.rms_pa().powi(2);
        }
        warnings.extend(report.warnings);
    }
    Ok(ms)
}

/// What to sweep.
#[derive(Debug, Clone, PartialEq)]
pub struct SweepSettings {
    /// Shaft speeds in rev/s, strictly increasing, at least three.
    pub speeds_rev_s: Vec<f64>,
    /// Harmonics of each pump's pumping frequency to solve (1..=200).
    pub harmonics: u32,
    /// Smallest rise (dB) for a peak to count as a resonance crossing.
    pub min_rise_db: f64,
}

/// Why a sweep failed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum SweepError {
    /// The settings are not usable.
    #[error("invalid sweep: {0}")]
    Settings(String),
    /// A solve failed at one speed.
    #[error("solving at {:.2} rpm", speed_rev_s * 60.0)]
    Solve {
        /// The shaft speed in rev/s.
        speed_rev_s: f64,
        /// The failure.
        #[source]
        source: SolveError,
    },
    /// The circuit could not be compiled again at another speed.
    #[error(transparent)]
    Network(#[from] NetworkError),
}

/// A harmonic meeting a resonance at one measurement point.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Crossing {
    /// Shaft speed of the peak, in rev/s (refined between grid speeds).
    pub speed_rev_s: f64,
    /// Order of the shaft fundamental (for one pump: the harmonic number).
    pub order: u32,
    /// Frequency of that order at that speed, in Hz.
    pub freq_hz: f64,
    /// Index of the measurement point in [`SweepResult::points`].
    pub point: usize,
    /// Peak amplitude of the harmonic there, in Pa.
    pub amplitude_pa: f64,
    /// Rise above the level away from the resonance, in dB (see the module
    /// documentation).
    pub rise_db: f64,
    /// Level of this harmonic relative to the point's overall level at the
    /// grid speed of the peak, in dB (0 when it is all the ripple there,
    /// −3 when it is half of the mean square).
    pub share_db: f64,
}

/// The result of a speed sweep.
#[derive(Debug, Clone, PartialEq)]
pub struct SweepResult {
    /// The swept shaft.
    pub shaft: Shaft,
    /// The speed grid in rev/s.
    pub speeds_rev_s: Vec<f64>,
    /// The orders solved at every speed.
    pub orders: Vec<u32>,
    /// The pump harmonics counted (1..=N of each pump).
    pub harmonics: u32,
    /// Names of the measurement points.
    pub points: Vec<String>,
    /// Every resonance crossing, by speed, then order, then point.
    pub crossings: Vec<Crossing>,
    /// Per point, the true worst speed of the overall rms ripple: every
    /// crossing between the grid speeds refined ([`super::worst`]).
    pub worst_speeds: Vec<WorstSpeed>,
    /// Grid frequencies solved close to an undamped resonance
    /// (ill-conditioned; see `diagnostics::conditioning_warning`).
    pub warnings: Vec<Warning>,
    /// Pressure phasors (peak, Pa), indexed by speed, then point, then order.
    phasors: Vec<C64>,
    /// Mean squares Σ|P|²/2 in Pa² from the pumps on other shafts, indexed
    /// by speed, then point.
    other_ms_pa2: Vec<f64>,
}

impl SweepResult {
    /// Peak amplitude (Pa) of order `order_i` at point `point_i` and speed
    /// `speed_i` (indices into the grids).
    pub fn amplitude_pa(&self, speed_i: usize, point_i: usize, order_i: usize) -> f64 {
        // as the worst-speed search forms it; a band's draws read them all
        super::worst::magnitude(self.phasor(speed_i, point_i, order_i))
    }

    /// Pressure phasor (peak, Pa) of order `order_i` at point `point_i` and
    /// speed `speed_i` (indices into the grids).
    pub fn phasor(&self, speed_i: usize, point_i: usize, order_i: usize) -> C64 {
        let (np, no) = (self.points.len(), self.orders.len());
        self.phasors[(speed_i * np + point_i) * no + order_i]
    }

    /// The phasors of every order at point `point_i`, by speed then order
    /// (the layout of [`super::worst::SpeedGrid::phasors`]).
    pub fn point_phasors(&self, point_i: usize) -> Vec<C64> {
        (0..self.speeds_rev_s.len())
            .flat_map(|si| (0..self.orders.len()).map(move |oi| (si, oi)))
            .map(|(si, oi)| self.phasor(si, point_i, oi))
            .collect()
    }

    /// The other shafts' mean square (Pa²) at point `point_i`, by speed.
    pub fn point_other_ms_pa2(&self, point_i: usize) -> Vec<f64> {
        (0..self.speeds_rev_s.len())
            .map(|si| self.other_shafts_ms_pa2(si, point_i))
            .collect()
    }

    /// Frequency (Hz) of order `order_i` at speed `speed_i`.
    pub fn frequency_hz(&self, speed_i: usize, order_i: usize) -> f64 {
        f64::from(self.orders[order_i]) * self.shaft.fundamental_hz(self.speeds_rev_s[speed_i])
    }

    /// Mean square ripple Σ|P|²/2 (Pa²) at point `point_i` from the pumps
    /// on other shafts (at their own speeds) while the swept shaft runs at
    /// speed `speed_i`.
    pub fn other_shafts_ms_pa2(&self, speed_i: usize, point_i: usize) -> f64 {
        self.other_ms_pa2[speed_i * self.points.len() + point_i]
    }

    /// Overall rms ripple (Pa) at point `point_i` and speed `speed_i`: the
    /// swept shaft's orders and the other shafts' contribution.
    pub fn rms_pa(&self, speed_i: usize, point_i: usize) -> f64 {
        let swept: f64 = (0..self.orders.len())
            .map(|o| self.phasor(speed_i, point_i, o).norm_sqr() / 2.0)
            .sum();
        (swept + self.other_shafts_ms_pa2(speed_i, point_i)).sqrt()
    }

    /// The true worst speed of the overall rms ripple at point `point_i`
    /// (refined between the grid speeds).
    pub fn worst(&self, point_i: usize) -> &WorstSpeed {
        &self.worst_speeds[point_i]
    }
}

/// A peak of a sampled curve: its index and its rise (prominence).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Peak {
    /// Index of the peak sample (the middle of a flat top).
    pub index: usize,
    /// Peak value minus the higher of the lowest values on either side
    /// before the curve climbs above the peak.
    pub rise: f64,
}

/// The interior peaks of `values` with their rise, by the rule of the module
/// documentation (`scipy.signal.find_peaks` + `peak_prominences`). A value of
/// +∞ is a peak with an infinite rise.
pub fn peaks(values: &[f64]) -> Vec<Peak> {
    let n = values.len();
    let mut out = Vec::new();
    // every sample's valleys at once (linear, not a walk per peak)
    let valleys = valleys(values);
    let mut i = 1;
    while i + 1 < n {
        if values[i] > values[i - 1] {
            // extent of a flat top
            let mut j = i;
            while j + 1 < n && values[j + 1] == values[i] {
                j += 1;
            }
            if j + 1 < n && values[j + 1] < values[i] {
                let [(_, left), (_, right)] = valleys[i];
                out.push(Peak {
                    index: (i + j) / 2,
                    rise: values[i] - left.max(right),
                });
            }
            i = j + 1;
        } else {
            i += 1;
        }
    }
    out
}

fn level_db(amplitude_pa: f64) -> f64 {
    if amplitude_pa > 0.0 {
        20.0 * amplitude_pa.log10()
    } else {
        FLOOR_DB
    }
}

/// Sweeps the pumps on `shaft` over `settings.speeds_rev_s`; `progress` is
/// called with the number of speeds done after each one.
///
/// # Errors
/// [`SweepError::Settings`] for an unusable speed grid or harmonic count;
/// [`SweepError::Solve`] if the network is singular at a grid speed (a
/// lossless circuit exactly at a resonance).
pub fn sweep(
    plan: &Plan<'_>,
    shaft: &Shaft,
    settings: &SweepSettings,
    progress: &mut dyn FnMut(usize),
) -> Result<SweepResult, SweepError> {
    let speeds = &settings.speeds_rev_s;
    if speeds.len() < 3 {
        return Err(SweepError::Settings(
            "a sweep needs at least three speeds".into(),
        ));
    }
    if !speeds.iter().all(|s| s.is_finite() && *s > 0.0) || speeds.windows(2).any(|w| w[1] <= w[0])
    {
        return Err(SweepError::Settings(
            "speeds must be positive and strictly increasing".into(),
        ));
    }
    if !(1..=200).contains(&settings.harmonics) {
        return Err(SweepError::Settings(format!(
            "harmonics must be between 1 and 200, found {}",
            settings.harmonics
        )));
    }
    let circuit = plan.circuit();
    let points: Vec<String> = report_points(circuit).into_iter().map(|t| t.name).collect();
    let orders = shaft.orders(&circuit.pumps, settings.harmonics);
    let (np, no) = (points.len(), orders.len());
    let mut phasors = vec![C64::new(0.0, 0.0); speeds.len() * np * no];
    let mut other = vec![0.0; speeds.len() * np];
    let mut at = AtSpeed::new(plan, shaft, settings.harmonics);
    let mut warnings: Vec<Warning> = coarse_grid_warning(speeds).into_iter().collect();
    // the other shafts' ripple, once when it cannot change with speed
    let fixed_other = match &at.fixed {
        Some(solver) => Some(other_shafts(
            solver.plan(),
            shaft,
            settings.harmonics,
            &mut warnings,
        )?),
        None => None,
    };
    // each speed on its own (in parallel when it pays), collected in order
    let per_speed = crate::parallel::ordered_map(
        speeds,
        crate::parallel::pays(plan.unknowns(), speeds.len() * no),
        || AtSpeed::new(plan, shaft, settings.harmonics),
        |at, &speed| {
            at.with(speed, |solver| {
                let mut amps = vec![C64::new(0.0, 0.0); np * no];
                let mut found = Vec::new();
                for (oi, &order) in orders.iter().enumerate() {
                    solver.solve(order, speed).map_err(at_speed(speed))?;
                    found.extend(solver.warning.take());
                    for (pi, p) in solver.pressures.iter().enumerate() {
                        amps[pi * no + oi] = *p;
                    }
                }
                let others = match &fixed_other {
                    Some(ms) => ms.clone(),
                    None => other_shafts(solver.plan(), shaft, settings.harmonics, &mut found)?,
                };
                Ok((amps, others, found))
            })
        },
        progress,
    )?;
    for (si, (amps, others, found)) in per_speed.into_iter().enumerate() {
        phasors[si * np * no..(si + 1) * np * no].copy_from_slice(&amps);
        other[si * np..(si + 1) * np].copy_from_slice(&others);
        warnings.extend(found);
    }

    let mut result = SweepResult {
        shaft: shaft.clone(),
        speeds_rev_s: speeds.clone(),
        orders,
        harmonics: settings.harmonics,
        points,
        crossings: Vec::new(),
        worst_speeds: Vec::new(),
        warnings,
        phasors,
        other_ms_pa2: other,
    };
    result.crossings = find_crossings(&mut at, &result, settings.min_rise_db);
    result.worst_speeds =
        refine_worst(&mut at, &result, &(0..np).collect::<Vec<_>>(), Measure::Rms)?;
    Ok(result)
}

/// Neighbouring grid speeds further apart than this fraction of the lower
/// one are coarser than the grids on which the worst-speed search is
/// checked against brute force (tests/envelope.rs: steps of 1.5 % on
/// generated circuits, 2.8 % on the drilling-rig demo, within 0.01 dB).
/// Checked once on coarser grids (2026-12-04; DEVELOPERS.md): steps of
/// 3.9 % fell up to 0.1 dB short, 7.9 % up to 0.45 dB, 13.6 % up to
/// 1.5 dB.
pub const CHECKED_STEP: f64 = 0.03;

/// A warning when neighbouring grid speeds lie further apart than
/// [`CHECKED_STEP`]: between such speeds the ripple can peak twice (one
/// order's skirt falling while another's rises) and the worst-speed
/// search refines one of the peaks.
fn coarse_grid_warning(speeds: &[f64]) -> Option<Warning> {
    let step = speeds
        .windows(2)
        .map(|w| w[1] / w[0] - 1.0)
        .fold(0.0, f64::max);
    (step > CHECKED_STEP).then(|| Warning {
        subject: "speed grid".into(),
        message: format!(
            "neighbouring speeds up to {:.1} % apart, coarser than the {:.0} % at which the worst-speed search is checked against brute force (within 0.01 dB); on coarser grids it has fallen short by 0.1 dB (steps of 4 %) to 1.5 dB (14 %), where the ripple peaks twice between two speeds: a grid with steps under {:.0} % of the lowest speed makes sure",
            100.0 * step,
            100.0 * CHECKED_STEP,
            100.0 * CHECKED_STEP
        ),
    })
}

/// The resonance crossings of a swept grid: every peak along the speeds of
/// every order's amplitude at every point rising at least `min_rise_db`
/// above the valleys either side, refined by a golden-section search on the
/// solved amplitude between the neighbouring grid speeds; by speed, order
/// and point. None for an infinite `min_rise_db` (no rise is that large).
fn find_crossings(
    at: &mut AtSpeed<'_, '_>,
    result: &SweepResult,
    min_rise_db: f64,
) -> Vec<Crossing> {
    if !min_rise_db.is_finite() {
        return Vec::new();
    }
    let speeds = &result.speeds_rev_s;
    let shaft = &result.shaft;
    let top_db = level_db(result.phasors.iter().map(|p| p.norm()).fold(0.0, f64::max));
    let mut crossings = Vec::new();
    for pi in 0..result.points.len() {
        for oi in 0..result.orders.len() {
            let levels: Vec<f64> = (0..speeds.len())
                .map(|si| level_db(result.amplitude_pa(si, pi, oi)).max(top_db - NEGLIGIBLE_DB))
                .collect();
            for peak in peaks(&levels) {
                if peak.rise < min_rise_db {
                    continue;
                }
                let si = peak.index;
                let base_db = levels[si] - peak.rise;
                let order = result.orders[oi];
                // the refined peak: golden-section search on the solved
                // amplitude between the neighbouring grid speeds
                let mut failed = false;
                let (speed, amplitude) = golden_section_max(
                    |n| {
                        let amp = at.with(n, |solver| {
                            solver.solve(order, n).map_err(at_speed(n))?;
                            Ok(solver.pressures[pi].norm())
                        });
                        amp.unwrap_or_else(|_| {
                            failed = true;
                            f64::NEG_INFINITY
                        })
                    },
                    speeds[si - 1],
                    speeds[si + 1],
                    REFINE_STEPS,
                );
                // Keep the grid peak if the refinement met a singular
                // frequency or did not improve on it.
                let grid = result.amplitude_pa(si, pi, oi);
                let (speed, amplitude) = if failed
                    || amplitude.partial_cmp(&grid) != Some(std::cmp::Ordering::Greater)
                {
                    (speeds[si], grid)
                } else {
                    (speed, amplitude)
                };
                crossings.push(Crossing {
                    speed_rev_s: speed,
                    order,
                    freq_hz: f64::from(order) * shaft.fundamental_hz(speed),
                    point: pi,
                    amplitude_pa: amplitude,
                    rise_db: level_db(amplitude) - base_db,
                    share_db: level_db(grid / std::f64::consts::SQRT_2)
                        - level_db(result.rms_pa(si, pi)),
                });
            }
        }
    }
    crossings.sort_by(|a, b| {
        a.speed_rev_s
            .total_cmp(&b.speed_rev_s)
            .then(a.order.cmp(&b.order))
            .then(a.point.cmp(&b.point))
    });
    crossings
}

/// The true worst speed of `measure` at point `point_i` of a sweep's
/// result ([`super::worst::worst_speed`] from its grid): for a
/// peak-to-peak or a single harmonic, as [`SweepResult::worst`] is for the
/// overall rms. `plan` and `shaft` must be the sweep's.
///
/// # Errors
/// [`SweepError`] when a solve fails (an undamped resonance, naming its
/// speed) or the circuit cannot be compiled again at a speed.
pub fn worst_at_point(
    plan: &Plan<'_>,
    shaft: &Shaft,
    result: &SweepResult,
    point_i: usize,
    measure: Measure,
) -> Result<WorstSpeed, SweepError> {
    let mut at = AtSpeed::new(plan, shaft, result.harmonics);
    Ok(refine_worst(&mut at, result, &[point_i], measure)?.remove(0))
}

/// The true worst speeds of `measure` at `points` (indices into the
/// sweep's points), in that order; one search of them all shares its solves
/// ([`super::worst::worst_speeds`]).
fn refine_worst(
    at: &mut AtSpeed<'_, '_>,
    result: &SweepResult,
    points: &[usize],
    measure: Measure,
) -> Result<Vec<WorstSpeed>, SweepError> {
    let phasors: Vec<Vec<C64>> = points.iter().map(|&pi| result.point_phasors(pi)).collect();
    let other_ms: Vec<Vec<f64>> = points
        .iter()
        .map(|&pi| result.point_other_ms_pa2(pi))
        .collect();
    let grids: Vec<SpeedGrid<'_>> = phasors
        .iter()
        .zip(&other_ms)
        .map(|(phasors, other_ms)| SpeedGrid {
            speeds_rev_s: &result.speeds_rev_s,
            orders: &result.orders,
            phasors,
            other_ms_pa2: other_ms,
        })
        .collect();
    let orders = &result.orders;
    worst_speeds(
        &grids,
        measure,
        &mut |oi, n, out| {
            at.with(n, |solver| {
                solver.solve(orders[oi], n).map_err(at_speed(n))?;
                for (p, &pi) in out.iter_mut().zip(points) {
                    *p = solver.pressures[pi];
                }
                Ok(())
            })
        },
        &WorstSettings::default(),
    )
    .map_err(|u| u.error)
}

/// The circuit's resonances as the pumps on `shaft` excite them: for each
/// of its pumps, the resonances of the frequency response to that pump's
/// source flow (`response::find_resonances`: peaks of |P/Qs| at any
/// measurement point rising at least `min_rise_db` above the valleys either
/// side, each refined once where it is highest), on a logarithmic grid of 0.2 %
/// steps from `f_lo_hz` to `f_hi_hz`; resonances of different pumps within
/// 2 % of each other are one. Increasing in frequency.
///
/// # Errors
/// [`ResponseError`] if the network cannot be solved on the grid.
pub fn shaft_resonances(
    plan: &Plan<'_>,
    shaft: &Shaft,
    f_lo_hz: f64,
    f_hi_hz: f64,
    min_rise_db: f64,
) -> Result<Vec<Resonance>, ResponseError> {
    let settings = PeakSettings {
        min_prominence_db: min_rise_db,
        ..PeakSettings::default()
    };
    let freqs = log_grid(f_lo_hz, f_hi_hz, default_points(f_lo_hz, f_hi_hz));
    let mut all: Vec<Resonance> = Vec::new();
    for &pump in &shaft.pumps {
        let response = frequency_response(plan, pump, &freqs, &mut |_| {})?;
        for r in find_resonances(plan, pump, &response, settings)? {
            if !all
                .iter()
                .any(|a| merges(a.freq_hz, r.freq_hz, settings.merge_tolerance))
            {
                all.push(r);
            }
        }
    }
    all.sort_by(|a, b| a.freq_hz.total_cmp(&b.freq_hz));
    Ok(all)
}

#[cfg(test)]
mod tests {
    use super::*;

    // Reference: scipy.signal.find_peaks(x) and
    // scipy.signal.peak_prominences(x, peaks) for
    // x = [0, 3, 1, 5, 2, 2.5, 0.5, 4, 1] give peaks [1, 3, 5, 7] with
    // prominences [2.0, 4.5, 0.5, 3.0] (tests/oracles/pump_refs.py [5]).
    #[test]
    fn rise_is_the_scipy_prominence() {
        let x = [0.0, 3.0, 1.0, 5.0, 2.0, 2.5, 0.5, 4.0, 1.0];
        let p = peaks(&x);
        let idx: Vec<usize> = p.iter().map(|p| p.index).collect();
        let rise: Vec<f64> = p.iter().map(|p| p.rise).collect();
        assert_eq!(idx, vec![1, 3, 5, 7]);
        assert_eq!(rise, vec![2.0, 4.5, 0.5, 3.0]);
    }

    #[test]
    fn ends_and_flat_tops() {
        // rising to the end: no interior peak; a flat top counts once, in
        // its middle; an infinite sample is a peak with infinite rise
        assert!(peaks(&[1.0, 2.0, 3.0]).is_empty());
        let p = peaks(&[0.0, 2.0, 2.0, 2.0, 1.0]);
        assert_eq!(
            p,
            vec![Peak {
                index: 2,
                rise: 1.0
            }]
        );
        let p = peaks(&[0.0, f64::INFINITY, 1.0]);
        assert_eq!(p[0].index, 1);
        assert!(p[0].rise.is_infinite());
    }
}
