//! # ripline — pressure ripple in hydraulic line networks
//!
//! ripline models a hydraulic circuit in the frequency domain: every line is a
//! transfer-matrix two-port with frequency-dependent laminar friction, every
//! lumped part a series element or a shunt, and each pump a Norton source
//! (source flow ripple in parallel with source impedance). At each pump
//! harmonic the network is solved by nodal analysis, giving the pressure
//! ripple at any node or any point along a line.
//!
//! Data flows one way: circuit file → validated [`Circuit`] → compiled
//! [`network::Plan`] → per-frequency [`network::Solution`] → analyses
//! ([`analysis::ripple`], speed sweeps in [`analysis::sweep`]) → tables,
//! CSV and plots. Pump sources come from a harmonic table, a source file or
//! the pump's geometry ([`source::gear`], [`source::piston`]).
//!
//! ```
//! use ripline::{analysis::ripple::harmonic_ripple, io::parse_circuit, network::Plan};
//!
//! let circuit = parse_circuit(ripline::demo::DEMO_CIRCUIT, "demo.yaml")?;
//! let plan = Plan::compile(&circuit)?;
//! let report = harmonic_ripple(&plan, 0, circuit.harmonics)?;
//! for tap in &report.taps {
//!     println!("{}: {:.3} bar rms", tap.name, tap.rms_pa() / 1e5);
//! }
//! # Ok::<(), Box<dyn std::error::Error>>(())
//! ```
//!
//! ## Conventions
//!
//! * Time dependence e^{+jωt}; a phasor X is a complex **peak** amplitude,
//!   x(t) = x̄ + Re{X e^{jωt}}; the rms of one harmonic is |X|/√2.
//! * State order (p, q): pressure ripple in Pa, volume flow ripple in m³/s;
//!   transfer matrices map [P_b; Q_b] at the far end to [P_a; Q_a].
//! * In an element from node a to node b, flow is positive from a to b at
//!   both ends and everywhere along a line.
//! * Pressure ripple is relative to the reference (a tank), held at zero.
//! * SI units everywhere inside; units are converted only when files are read
//!   and results printed ([`units`]).

#![deny(missing_docs)]

pub mod analysis;
pub mod calibrate;
pub mod circuit;
pub mod demo;
pub mod diagnostics;
pub mod elements;
pub mod envelope;
pub mod estimate;
pub mod fluid;
#[doc(hidden)]
pub mod generated;
pub mod hose;
pub mod html;
pub mod io;
pub mod limits;
pub mod line;
pub mod meanflow;
pub mod network;
pub mod oil;
pub mod parallel;
pub mod plot;
pub mod render;
pub mod results;
pub mod source;
pub mod uncertainty;
pub mod units;
pub mod wall;

pub use circuit::Circuit;
pub use num_complex::Complex64 as C64;
