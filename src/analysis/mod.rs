//! Analyses built on the per-frequency network solve.
//!
//! * [`ripple`]: the pressure ripple each pump harmonic makes at every
//!   measurement point, with overall levels (`ripline solve`).
//! * [`waveform`]: the time waveform rebuilt from harmonics and its
//!   peak-to-peak value.
//! * [`profile`]: the ripple along every tube and hose for one harmonic
//!   (`ripline profile`).
//! * [`response`]: the frequency response per unit source flow, its
//!   resonances and the harmonic bands that cross them (`ripline response`).
//! * [`silencer`]: transmission loss of an element or chain, insertion loss
//!   in the circuit (`ripline silencer`).
//! * [`tune`]: a bounded search for the silencer design that minimises the
//!   ripple at a point over the speed range (`ripline tune`).
//! * [`envelope`]: verdicts over an operating envelope against limits, and
//!   findings ranked by severity (`ripline assess`).
//! * [`search`]: golden-section, Halton and Nelder–Mead helpers.
//! * [`sweep`]: the ripple over a range of shaft speeds, resonance
//!   crossings and the circuit's resonance frequencies (`ripline sweep`).
//! * [`worst`]: the true worst speed of a point over a speed range, its
//!   resonance crossings refined (shared by `sweep`, `tune` and the
//!   envelope verdicts).

pub mod envelope;
pub mod profile;
pub mod response;
pub mod ripple;
pub mod search;
pub mod silencer;
pub mod sweep;
pub mod tune;
pub mod tune_limits;
pub mod tune_rules;
pub mod waveform;
pub mod worst;
