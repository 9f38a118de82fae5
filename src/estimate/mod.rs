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
//!                                 (speed refined or held, whole-record LS fit of
//!                                  every line, uncertainty from the residual,
//!                                  sensitivity to the frequency/time reference)
//!            ─ wavespeed ───────→ c0 in situ (or fixed)
//!            ─ decompose ───────→ P0, Q0 at the pump outlet per condition
//!            ─ two_systems / secondary ─→ Qs, Zs per harmonic
//!            ─ uncertainty ─────→ seeded Monte Carlo over the phasor noise and
//!                                 the reference errors (correlated per condition)
//!            = FitReport (status, warnings, per-harmonic estimates)
//! ```
//!
//! [`synth`] goes the other way (known source → phasors → time series with
//! seeded noise) for demos and tests. Nothing here prints or touches files;
//! progress goes through an [`Observer`].

pub mod bench;
pub mod decompose;
pub mod design;
pub mod extract;
pub mod fit;
pub(crate) mod lines;
pub mod rng;
pub mod secondary;
pub mod selfcheck;
pub mod synth;
pub mod tacho;
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

pub(crate) use crate::analysis::search::golden_section_min as golden_section;

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
