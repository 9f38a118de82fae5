//! Terminations that are not just a node condition.

use crate::line::{LineProperties, Propagation};
use num_complex::Complex64 as C64;

/// A non-reflecting end of a line: the shunt admittance 1/Zc(ω) of the line
/// it terminates, so that the line's input impedance is Zc at every frequency
/// (methods.md §8 case 6).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Anechoic {
    /// The properties of the line whose characteristic impedance it matches.
    pub line: LineProperties,
}

impl Anechoic {
    /// Shunt admittance 1/Zc(ω), given the propagation of its line at ω
    /// (the network evaluates each distinct line once per frequency).
    pub fn admittance(&self, line: &Propagation) -> C64 {
        line.zc.inv()
    }
}
