//! Bench estimation of a pump's Norton parameters (source flow ripple Qs and
//! source impedance Zs) from pressure transducers on a reference line.
//!
//! The principles followed are those of ISO 10767-1 (the two-pressures /
//! two-systems method of its 2015 edition and the secondary-source method of
//! its 1996 edition) and ISO 15086-2 (speed of sound in situ from three
//! transducers); the equations are written out in each module and in
//! methods.md §6. Data flows one way:
//!
//! ```text
//! bench file ─ io::bench_file ─→ Bench            (model of the bench, SI)
//! records    ─ io::records ─────→ TimeRecord / spectra lines
//!            ─ extract ─────────→ phasors per condition, line and transducer
//!                                 (speed refined, windowed LS fit per segment,
//!                                  uncertainty and SNR from the segment spread)
//!            ─ wavespeed ───────→ c0 in situ (or fixed)
//!            ─ decompose ───────→ P0, Q0 at the pump outlet per condition
//!            ─ two_systems / secondary ─→ Qs, Zs per harmonic
//!            ─ uncertainty ─────→ seeded Monte Carlo over the phasor noise
//!            = FitReport (status, warnings, per-harmonic estimates)
//! ```
//!
//! [`synth`] goes the other way (known source → phasors → time series with
//! seeded noise) for demos and tests. Nothing here prints or touches files;
//! progress goes through an [`Observer`].

pub mod bench;
pub mod decompose;
pub mod extract;
pub mod fit;
pub mod rng;
pub mod secondary;
pub mod synth;
pub mod two_systems;
pub mod uncertainty;
pub mod wavespeed;

pub use bench::Bench;
pub use fit::{FitOptions, FitReport, fit};

/// Receives progress of long computations (extraction, Monte Carlo). The
/// library never prints; the command line shows a bar on a terminal.
pub trait Observer {
    /// A stage of work with `total` steps begins.
    fn stage(&mut self, label: &str, total: u64);
    /// `steps` more steps of the current stage are done.
    fn advance(&mut self, steps: u64);
    /// The current stage is done.
    fn finish(&mut self) {}
}

/// An observer that ignores everything.
#[derive(Debug, Default, Clone, Copy)]
pub struct Quiet;

impl Observer for Quiet {
    fn stage(&mut self, _label: &str, _total: u64) {}
    fn advance(&mut self, _steps: u64) {}
}

/// The result of a golden-section search.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct GoldenResult {
    /// Where the smaller of the last two values was found.
    pub x: f64,
    /// The value there.
    pub value: f64,
    /// Whether the bracket shrank below the tolerance.
    pub converged: bool,
    /// Function evaluations used.
    pub evaluations: usize,
}

/// Golden-section search (Kiefer 1953) for the minimum of `g` on [a, b],
/// until the bracket is narrower than `rel_tol`·|b| or after `max_steps`.
pub(crate) fn golden_section(
    g: impl Fn(f64) -> f64,
    a: f64,
    b: f64,
    rel_tol: f64,
    max_steps: usize,
) -> GoldenResult {
    let ratio = (5f64.sqrt() - 1.0) / 2.0;
    let (mut a, mut b) = (a, b);
    let mut x1 = b - ratio * (b - a);
    let mut x2 = a + ratio * (b - a);
    let (mut f1, mut f2) = (g(x1), g(x2));
    let mut evaluations = 2;
    let mut converged = false;
    for _ in 0..max_steps {
        if b - a <= rel_tol * b.abs() {
            converged = true;
            break;
        }
        if f1 <= f2 {
            b = x2;
            x2 = x1;
            f2 = f1;
            x1 = b - ratio * (b - a);
            f1 = g(x1);
        } else {
            a = x1;
            x1 = x2;
            f1 = f2;
            x2 = a + ratio * (b - a);
            f2 = g(x2);
        }
        evaluations += 1;
    }
    let (x, value) = if f1 <= f2 { (x1, f1) } else { (x2, f2) };
    GoldenResult {
        x,
        value,
        converged,
        evaluations,
    }
}

/// Why an estimation could not be carried out (as opposed to a harmonic
/// that is merely ill-conditioned, which is a warning in the report).
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum EstimateError {
    /// The data of a condition cannot be used (too short, wrong rate, …).
    #[error("{file}: {message}")]
    Data {
        /// The record or spectra file.
        file: String,
        /// What is wrong.
        message: String,
    },
    /// The bench does not hold what the method needs.
    #[error("{0}")]
    Bench(String),
}
