//! Circuit elements: what each kind presents to the network at one frequency.
//!
//! Every element connects either as a two-port between two nodes (a tube, an
//! orifice, an inertance) or as a shunt from one node to the reference (a
//! volume, a load valve, an anechoic end), or it fixes a node's condition (a
//! tank holds zero ripple; a closed end adds nothing). Per frequency an element
//! returns its [`Behaviour`]; the network plan scatters it into the nodal
//! matrix. Element physics never sees the assembled matrix.
//!
//! To add a kind: write its model in a file of this folder with a
//! `behaviour(omega)` method and unit tests, add a variant to [`ElementKind`]
//! and a match arm in [`ElementKind::behaviour`] and
//! [`ElementKind::connection_kind`], then teach the circuit file
//! (`io::circuit_file`) to build it.

mod actuators;
mod ends;
mod hose;
mod inline;
mod lumped;
mod silencers;
mod tube;
mod valves;

pub use actuators::{Cylinder, CylinderPorts};
pub use ends::Anechoic;
pub use hose::{Hose, HosePressure};
pub use inline::{ChamberPorts, InlineDamper, Rung, cascade, ladder_admittance, shunt_transfer};
pub use lumped::{Inertance, LoadValve, Orifice, Volume, orifice_resistance};
pub use silencers::{
    ExpansionChamber, FLANGED_END_CORRECTION, HelmholtzResonator, PRESSURE_VESSEL_CAUTION,
    PulsationDamper, STANDARD_ATMOSPHERE_PA, STORED_ENERGY_CAUTION, SideBranch,
    loaded_line_admittance, rigid_neck, tanh_gamma_l,
};
pub use tube::{Tube, line_behaviour, lossy_line_behaviour};
pub use valves::{
    CheckState, CheckValve, Poppet, PoppetData, ReliefValve, ValveError, ValveOperatingPoint,
};

use crate::line::{Admittance2, Line, LineProperties, Propagation, Transfer2};
use num_complex::Complex64 as C64;

/// Index of a node in a circuit's node list.
pub type NodeId = usize;

/// How an element attaches to nodes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Connection {
    /// A two-port between node `a` (its "from" end) and node `b`.
    Series {
        /// The "from" node (x = 0 for a line).
        a: NodeId,
        /// The "to" node.
        b: NodeId,
    },
    /// A one-port from a node to the reference (zero ripple).
    Shunt {
        /// The node.
        at: NodeId,
    },
}

/// What the network must reserve for an element.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ConnectionKind {
    /// A two-port stamped by its admittance matrix.
    AdmittanceTwoPort,
    /// A two-port stamped by its transfer matrix with two branch-flow unknowns
    /// (modified nodal analysis), for elements with no bounded admittance form
    /// (lossless lines at half-wave resonance).
    TransferTwoPort,
    /// A shunt admittance.
    Shunt,
    /// Holds its node at zero ripple (the node is eliminated).
    Tank,
    /// Adds nothing (documents a closed end).
    Nothing,
}

/// What an element presents at one frequency.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Behaviour {
    /// Two-port admittance: flows leaving the end nodes into the element per end pressures.
    Admittance(Admittance2),
    /// Two-port transfer matrix [Pa; Qa] = T [Pb; Qb].
    Transfer(Transfer2),
    /// Shunt admittance to reference in m³/(Pa·s).
    Shunt(C64),
    /// No contribution.
    Nothing,
}

/// The element kinds ripline models.
#[derive(Debug, Clone, PartialEq)]
#[non_exhaustive]
pub enum ElementKind {
    /// A uniform tube (distributed line).
    Tube(Tube),
    /// A lumped volume of liquid (shunt capacitance).
    Volume(Volume),
    /// A restriction between two nodes (series resistance).
    Orifice(Orifice),
    /// A short passage as a lumped mass (series inertance with resistance).
    Inertance(Inertance),
    /// A valve to tank at a node (shunt resistance).
    LoadValve(LoadValve),
    /// A non-reflecting termination of a line.
    Anechoic(Anechoic),
    /// A closed (dead) end: no flow leaves the node.
    ClosedEnd,
    /// An open end to a constant-pressure reservoir: zero ripple.
    Tank,
    /// A hose (distributed line with a viscoelastic wall).
    Hose(Hose),
    /// A closed side branch (quarter-wave tube) teed off a node.
    SideBranch(SideBranch),
    /// An in-line expansion chamber.
    ExpansionChamber(ExpansionChamber),
    /// A Helmholtz resonator teed off a node.
    Helmholtz(HelmholtzResonator),
    /// A gas-charged pulsation damper teed off a node.
    Damper(PulsationDamper),
    /// A direct-acting relief valve (to tank or between two nodes).
    ReliefValve(ReliefValve),
    /// A spring-loaded check valve.
    CheckValve(CheckValve),
    /// A hydraulic cylinder with its load (a shunt or a two-port).
    Cylinder(Cylinder),
    /// An in-line (flow-through) gas-charged pulsation damper.
    InlineDamper(InlineDamper),
}

impl ElementKind {
    /// The kind's name in circuit files.
    pub fn name(&self) -> &'static str {
        match self {
            ElementKind::Tube(_) => "tube",
            ElementKind::Volume(_) => "volume",
            ElementKind::Orifice(_) => "orifice",
            ElementKind::Inertance(_) => "inertance",
            ElementKind::LoadValve(_) => "load_valve",
            ElementKind::Anechoic(_) => "anechoic_end",
            ElementKind::ClosedEnd => "closed_end",
            ElementKind::Tank => "tank",
            ElementKind::SideBranch(_) => "side_branch",
            ElementKind::ExpansionChamber(_) => "expansion_chamber",
            ElementKind::Helmholtz(_) => "helmholtz_resonator",
            ElementKind::Damper(_) => "pulsation_damper",
            ElementKind::Hose(_) => "hose",
            ElementKind::ReliefValve(_) => "relief_valve",
            ElementKind::CheckValve(_) => "check_valve",
            ElementKind::Cylinder(_) => "cylinder",
            ElementKind::InlineDamper(_) => "inline_pulsation_damper",
        }
    }

    /// The distributed line of a tube or a hose (what taps and profiles run
    /// along), `None` for every other kind.
    pub fn line(&self) -> Option<&Line> {
        match self {
            ElementKind::Tube(t) => Some(&t.line),
            ElementKind::Hose(h) => Some(&h.line),
            _ => None,
        }
    }

    /// The distributed line of a tube or a hose, for changing it.
    pub fn line_mut(&mut self) -> Option<&mut Line> {
        match self {
            ElementKind::Tube(t) => Some(&mut t.line),
            ElementKind::Hose(h) => Some(&mut h.line),
            _ => None,
        }
    }

    /// What the network reserves for this kind.
    pub fn connection_kind(&self) -> ConnectionKind {
        match self {
            ElementKind::Tube(t) if t.needs_branch_flows() => ConnectionKind::TransferTwoPort,
            ElementKind::Hose(h) if h.needs_branch_flows() => ConnectionKind::TransferTwoPort,
            ElementKind::ExpansionChamber(c) if c.needs_branch_flows() => {
                ConnectionKind::TransferTwoPort
            }
            ElementKind::InlineDamper(d) if d.is_lossless() => ConnectionKind::TransferTwoPort,
            ElementKind::ReliefValve(v) if !v.in_line => ConnectionKind::Shunt,
            ElementKind::Cylinder(c) if c.ports != CylinderPorts::Both => ConnectionKind::Shunt,
            ElementKind::ReliefValve(_)
            | ElementKind::CheckValve(_)
            | ElementKind::Cylinder(_)
            | ElementKind::InlineDamper(_) => ConnectionKind::AdmittanceTwoPort,
            ElementKind::SideBranch(_) | ElementKind::Helmholtz(_) | ElementKind::Damper(_) => {
                ConnectionKind::Shunt
            }
            ElementKind::Tube(_)
            | ElementKind::Hose(_)
            | ElementKind::ExpansionChamber(_)
            | ElementKind::Orifice(_)
            | ElementKind::Inertance(_) => ConnectionKind::AdmittanceTwoPort,
            ElementKind::Volume(_) | ElementKind::LoadValve(_) | ElementKind::Anechoic(_) => {
                ConnectionKind::Shunt
            }
            ElementKind::Tank => ConnectionKind::Tank,
            ElementKind::ClosedEnd => ConnectionKind::Nothing,
        }
    }

    /// The line whose Γ and Zc this element needs, if any (tubes, the line
    /// an anechoic end matches, and the line inside each silencer). The network evaluates each distinct
    /// line once per frequency and hands the result to
    /// [`ElementKind::behaviour_with`].
    pub fn line_properties(&self) -> Option<&LineProperties> {
        match self {
            ElementKind::Tube(t) => Some(&t.line.properties),
            ElementKind::Hose(h) => Some(&h.line.properties),
            ElementKind::Anechoic(a) => Some(&a.line),
            ElementKind::SideBranch(s) => Some(&s.tube.line.properties),
            ElementKind::ExpansionChamber(c) => Some(&c.tube.line.properties),
            ElementKind::Helmholtz(h) => Some(&h.neck),
            ElementKind::Damper(d) => Some(&d.neck),
            ElementKind::InlineDamper(d) => Some(&d.vessel.neck),
            _ => None,
        }
    }

    /// The element's behaviour at angular frequency ω > 0 (rad/s).
    pub fn behaviour(&self, omega: f64) -> Behaviour {
        let prop = self.line_properties().map(|p| p.propagation(omega));
        self.behaviour_with(omega, prop.as_ref())
    }

    /// The element's behaviour at ω, given the propagation of its line
    /// (from [`ElementKind::line_properties`]) when it has one.
    ///
    /// # Panics
    /// If the element has a line and `prop` is `None`.
    pub fn behaviour_with(&self, omega: f64, prop: Option<&Propagation>) -> Behaviour {
        let line = || prop.expect("the caller evaluates the element's line");
        match self {
            ElementKind::Tube(t) => t.behaviour(line()),
            ElementKind::Hose(h) => h.behaviour(line()),
            ElementKind::Volume(v) => Behaviour::Shunt(v.admittance(omega)),
            ElementKind::Orifice(o) => series_admittance(C64::new(o.resistance_pa_s_m3, 0.0)),
            ElementKind::Inertance(i) => series_admittance(i.impedance(omega)),
            ElementKind::LoadValve(v) => {
                Behaviour::Shunt(C64::new(1.0 / v.resistance_pa_s_m3, 0.0))
            }
            ElementKind::Anechoic(a) => Behaviour::Shunt(a.admittance(line())),
            ElementKind::ClosedEnd | ElementKind::Tank => Behaviour::Nothing,
            ElementKind::SideBranch(s) => Behaviour::Shunt(s.admittance(line())),
            ElementKind::ExpansionChamber(c) => c.behaviour(omega, line()),
            ElementKind::Helmholtz(h) => Behaviour::Shunt(h.admittance(omega, line())),
            ElementKind::Damper(d) => Behaviour::Shunt(d.admittance(omega, line())),
            ElementKind::ReliefValve(v) => v.behaviour(omega),
            ElementKind::CheckValve(v) => v.behaviour(omega),
            ElementKind::Cylinder(c) => c.behaviour(omega),
            ElementKind::InlineDamper(d) => d.behaviour(omega, line()),
        }
    }

    /// Whether the element is a gas-charged pressure vessel (a pulsation
    /// damper, teed off or in-line): reports that show it print
    /// [`PRESSURE_VESSEL_CAUTION`].
    pub fn is_pressure_vessel(&self) -> bool {
        matches!(self, ElementKind::Damper(_) | ElementKind::InlineDamper(_))
    }
}

/// The two-port admittance of a series impedance Z: (1/Z)[[1, −1], [−1, 1]].
pub fn series_admittance(z: C64) -> Behaviour {
    let y = z.inv();
    Behaviour::Admittance([[y, -y], [-y, y]])
}

/// A named element and where it connects.
#[derive(Debug, Clone, PartialEq)]
pub struct Element {
    /// Unique name.
    pub name: String,
    /// What it is.
    pub kind: ElementKind,
    /// Where it connects.
    pub connection: Connection,
}
