//! A uniform tube between two nodes.

use super::Behaviour;
use crate::line::{Line, LineModel, Propagation};
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
        self.line.properties.model == LineModel::Lossless
    }

    /// Γ and Zc at ω.
    pub fn propagation(&self, omega: f64) -> Propagation {
        self.line.properties.propagation(omega)
    }

    /// The tube's two-port given its line's Γ and Zc at the frequency: the
    /// stable admittance form for lossy lines, the transfer matrix for
    /// lossless ones.
    pub fn behaviour(&self, prop: &Propagation) -> Behaviour {
        if self.needs_branch_flows() {
            return Behaviour::Transfer(self.line.transfer(prop));
        }
        match self.line.admittance(prop) {
            Some(y) => Behaviour::Admittance(y),
            // Only for Γl = 0 exactly, which a lossy line never has at ω > 0;
            // the network reports it as a singular frequency.
            None => Behaviour::Nothing,
        }
    }
}
