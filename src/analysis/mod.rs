//! Analyses built on the per-frequency network solve.
//!
//! * [`ripple`]: the pressure ripple each pump harmonic makes at every
//!   measurement point, with overall levels (`ripline solve`).
//! * [`waveform`]: the time waveform rebuilt from harmonics and its
//!   peak-to-peak value.
//! * [`profile`]: the ripple along every tube and hose for one harmonic
//!   (`ripline profile`).

pub mod profile;
pub mod ripple;
pub mod waveform;
