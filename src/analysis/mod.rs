//! Analyses built on the per-frequency network solve.
//!
//! * [`ripple`]: the pressure ripple each pump harmonic makes at every
//!   measurement point, with overall levels (`ripline solve`).
//! * [`waveform`]: the time waveform rebuilt from harmonics and its
//!   peak-to-peak value.

pub mod ripple;
pub mod waveform;
