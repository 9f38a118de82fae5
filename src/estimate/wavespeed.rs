//! The speed of sound in the reference line, estimated in situ from three or
//! more transducers (the principle of ISO 15086-2; Johnston & Edge 1991;
//! methods.md §6c, model-based variant).
//!
//! With the laminar line model Γ(ω; c0) = (jω/c0)(1 − F(ω))^{−1/2} and
//! Zc = (ρc0/A)(1 − F)^{−1/2}, where the viscous factor F depends on the bore
//! and viscosity but not on c0 (methods.md §2.3), so Γ(c0) = Γ(c_ref)·c_ref/c0
//! and Zc(c0) = Zc(c_ref)·c0/c_ref exactly. With three or more transducers
//! the two-wave model is over-determined at every frequency; the estimate is
//!
//! ```text
//! ĉ0 = argmin Σ_f Σ_i w_i |P_i − F e^{−Γ(c0)x_i} − G e^{+Γ(c0)x_i}|²    (F, G eliminated by LS)
//! ```
//!
//! over every analysed frequency of every condition (a variable-projection
//! fit; for three transducers its residual is proportional to
//! |P1 sinh ΓΔ2 + P3 sinh ΓΔ1 − P2 sinh Γ(Δ1+Δ2)|², the §6c function g).
//! A scan over ±30 % of the starting value finds the basin, and a
//! golden-section search (Kiefer 1953) refines it. Not converging is a
//! status in the result, not an error.

use super::decompose::ls2;
use crate::C64;
use crate::line::Propagation;

/// Most transducers a bench may have.
pub const MAX_TRANSDUCERS: usize = 16;

/// Why the search stopped.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FitStatus {
    /// The bracket shrank below the tolerance.
    Converged,
    /// The iteration limit was reached first.
    MaxIterations,
    /// The minimum lies at an end of the scanned range: the true value may
    /// be outside it.
    AtBracketEdge,
}

/// One frequency of one condition: Γ, Zc at the reference speed and the
/// transducer pressures with their weights.
#[derive(Debug, Clone, PartialEq)]
pub struct Observation {
    /// Γ and Zc at the reference speed of sound.
    pub prop_ref: Propagation,
    /// Pressure phasor per transducer in Pa.
    pub pressures: Vec<C64>,
    /// Weight per transducer (1/u², or a normalisation).
    pub weights: Vec<f64>,
}

/// The result of an in-situ fit.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct WaveSpeedFit {
    /// Estimated speed of sound c0 in m/s.
    pub c0_m_s: f64,
    /// Why the search stopped.
    pub status: FitStatus,
    /// Cost at the estimate.
    pub cost: f64,
    /// Cost evaluations used.
    pub evaluations: usize,
}

/// Γ and Zc at speed of sound `c0` from their values at `c_ref`.
pub fn scale_propagation(prop_ref: &Propagation, c_ref: f64, c0: f64) -> Propagation {
    Propagation {
        gamma: prop_ref.gamma * (c_ref / c0),
        zc: prop_ref.zc * (c0 / c_ref),
    }
}

/// The settings of the search.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SearchSettings {
    /// Half-width of the scanned range relative to the start (0.3 = ±30 %).
    pub range: f64,
    /// Number of scan points.
    pub scan_points: usize,
    /// Relative tolerance on c0.
    pub tolerance: f64,
    /// Largest number of golden-section steps.
    pub max_iterations: usize,
}

impl Default for SearchSettings {
    fn default() -> Self {
        SearchSettings {
            range: 0.3,
            scan_points: 241,
            tolerance: 1e-14,
            max_iterations: 200,
        }
    }
}

/// The cost at c0: the summed weighted residual of the wave fits.
pub fn cost(positions: &[f64], obs: &[Observation], c_ref: f64, c0: f64) -> f64 {
    obs.iter()
        .map(|o| {
            let p = scale_propagation(&o.prop_ref, c_ref, c0);
            let mut rows = [(C64::new(0.0, 0.0), C64::new(0.0, 0.0)); MAX_TRANSDUCERS];
            for (r, &x) in rows.iter_mut().zip(positions) {
                let e = (-p.gamma * x).exp();
                *r = (e, e.inv());
            }
            ls2(&rows[..positions.len()], &o.pressures, &o.weights)
                .map_or(f64::INFINITY, |s| s.residual)
        })
        .sum()
}

/// Fits c0 starting from `c_start` (m/s), with Γ, Zc of each observation
/// given at `c_ref`.
///
/// # Panics
/// With fewer than three positions (two transducers fit any c0 exactly).
pub fn fit_speed_of_sound(
    positions: &[f64],
    obs: &[Observation],
    c_ref: f64,
    c_start: f64,
    settings: SearchSettings,
) -> WaveSpeedFit {
    assert!(
        (3..=MAX_TRANSDUCERS).contains(&positions.len()),
        "the in-situ fit needs 3 to {MAX_TRANSDUCERS} transducers"
    );
    let f = |c: f64| cost(positions, obs, c_ref, c);
    let n = settings.scan_points.max(3);
    let lo = c_start * (1.0 - settings.range);
    let hi = c_start * (1.0 + settings.range);
    let grid: Vec<f64> = (0..n)
        .map(|i| lo + (hi - lo) * i as f64 / (n - 1) as f64)
        .collect();
    let costs: Vec<f64> = grid.iter().map(|&c| f(c)).collect();
    let mut evaluations = n;
    let best = (0..n)
        .min_by(|&a, &b| costs[a].total_cmp(&costs[b]))
        .unwrap_or(0);
    if best == 0 || best == n - 1 {
        return WaveSpeedFit {
            c0_m_s: grid[best],
            status: FitStatus::AtBracketEdge,
            cost: costs[best],
            evaluations,
        };
    }
    // Golden-section search on [grid[best−1], grid[best+1]].
    let r = super::golden_section(
        f,
        grid[best - 1],
        grid[best + 1],
        settings.tolerance,
        settings.max_iterations,
    );
    evaluations += r.evaluations;
    let status = if r.converged {
        FitStatus::Converged
    } else {
        FitStatus::MaxIterations
    };
    let (c0, cost) = (r.x, r.value);
    WaveSpeedFit {
        c0_m_s: c0,
        status,
        cost,
        evaluations,
    }
}
