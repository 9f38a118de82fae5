//! A uniform tube between two nodes, and the two-port behaviour every
//! distributed line (tube or hose) shares.

use super::Behaviour;
use crate::line::{Admittance2, Line, Propagation};
use crate::wall::Wall;

/// A uniform tube: a distributed line between its "from" node (x = 0) and its
/// "to" node (x = l), with wall compliance in its wave speed.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Tube {
    /// The line (properties and length).
    pub line: Line,
    /// The wall, as used for the effective bulk modulus.
    pub wall: Wall,
}

impl Tube {
    /// Bore diameter in m.
    pub fn bore_m(&self) -> f64 {
        2.0 * self.line.properties.radius_m
    }

    /// Lossless lines have no bounded admittance at their half-wave
    /// resonances, so the network gives them branch-flow unknowns.
    pub fn needs_branch_flows(&self) -> bool {
        self.line.properties.is_lossless()
    }

    /// Γ and Zc at ω.
    pub fn propagation(&self, omega: f64) -> Propagation {
        self.line.properties.propagation(omega)
    }

    /// The tube's two-port given its line's Γ and Zc at the frequency: the
    /// stable admittance form for lossy lines, the transfer matrix for
    /// lossless ones.
    pub fn behaviour(&self, prop: &Propagation) -> Behaviour {
        line_behaviour(&self.line, prop)
    }
}

/// The two-port of a distributed line given its Γ and Zc at the frequency:
/// the stable admittance form for lossy lines, the transfer matrix (with
/// branch-flow unknowns) for lossless ones.
pub fn line_behaviour(line: &Line, prop: &Propagation) -> Behaviour {
    if line.properties.is_lossless() {
        return Behaviour::Transfer(line.transfer(prop));
    }
    lossy_line_behaviour(line.admittance(prop))
}

/// A lossy line's two-port from its admittance, `None` where it has none
/// (the plan evaluates its lossy lines several at a time and ends here too).
pub fn lossy_line_behaviour(admittance: Option<Admittance2>) -> Behaviour {
    match admittance {
        Some(y) => Behaviour::Admittance(y),
        // Only for Γl = 0 exactly, which a lossy line never has at ω > 0;
        // the network reports it as a singular frequency.
        None => Behaviour::Nothing,
    }
}
