//! A hose between two nodes: a distributed line with a viscoelastic wall.

use super::Behaviour;
use super::tube::line_behaviour;
use crate::hose::HoseConstruction;
use crate::line::{Line, Propagation};

/// A hose: a distributed line between its "from" node (x = 0) and its "to"
/// node (x = l) whose wall compliance is complex and frequency dependent
/// (`line.properties.viscoelastic_wall`, see [`crate::hose`]). It shares the
/// line model, the network stamp and the taps with [`super::Tube`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Hose {
    /// The line (properties, with `viscoelastic_wall` set, and length).
    pub line: Line,
    /// The typical construction its wall came from, if any (for reports).
    pub construction: Option<HoseConstruction>,
}

impl Hose {
    /// Bore diameter in m.
    pub fn bore_m(&self) -> f64 {
        2.0 * self.line.properties.radius_m
    }

    /// Whether the network gives it branch-flow unknowns (a lossless model
    /// with a lossless wall).
    pub fn needs_branch_flows(&self) -> bool {
        self.line.properties.is_lossless()
    }

    /// The hose's two-port given its line's Γ and Zc at the frequency.
    pub fn behaviour(&self, prop: &Propagation) -> Behaviour {
        line_behaviour(&self.line, prop)
    }
}
