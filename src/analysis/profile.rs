//! The ripple along every line for one pump harmonic: the standing-wave
//! pattern (what `ripline profile` reports).
//!
//! The network is solved once at f = k·f_p with the pump's source flow ripple
//! Qs(k); the pressure at any point x of a tube or hose then follows from its
//! end pressures and flows with only decaying exponentials
//! ([`crate::line::Line::state_at`], methods.md §2.6). Each line is sampled
//! finely enough to resolve its wavelength λ = 2π/Im Γ.
//!
//! For a picture of several lines on one axis, each line is placed by its
//! distance from the pump along the circuit ([`path_distances`]): curves of
//! lines that meet at a node then meet in the picture too, and the pattern
//! reads as the wave travels outwards from the pump.

use super::ripple::tap_pressure;
use crate::circuit::Circuit;
use crate::elements::{Connection, NodeId};
use crate::network::{Plan, SolveError};
use crate::source::Shaft;
use num_complex::Complex64 as C64;

/// Samples per wavelength along a line.
pub const POINTS_PER_WAVELENGTH: usize = 48;
/// Fewest samples along a line (a short line still gets a smooth curve).
pub const MIN_POINTS: usize = 51;
/// Most samples along a line.
pub const MAX_POINTS: usize = 4001;
/// Highest harmonic a pump on the shaft contributes to a profile (the
/// highest a circuit solves).
const MAX_HARMONIC: u32 = 200;

/// The ripple at one point of a line.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ProfilePoint {
    /// Distance from the line's "from" end in m.
    pub position_m: f64,
    /// Pressure ripple phasor (peak) in Pa.
    pub pressure: C64,
}

/// The ripple along one tube or hose.
#[derive(Debug, Clone, PartialEq)]
pub struct LineProfile {
    /// Index of the element in the circuit.
    pub element: usize,
    /// The element's name.
    pub name: String,
    /// Its kind (`tube`, `hose`).
    pub kind: &'static str,
    /// Its length in m.
    pub length_m: f64,
    /// Distance from the pump along the circuit to the line's nearer end, m.
    pub path_start_m: f64,
    /// Whether the line's "to" end is the nearer one (it runs towards the pump).
    pub reversed: bool,
    /// The samples, from x = 0 to x = l.
    pub points: Vec<ProfilePoint>,
}

impl LineProfile {
    /// Where a point x of this line sits on the distance-from-pump axis.
    pub fn path_position(&self, position_m: f64) -> f64 {
        if self.reversed {
            self.path_start_m + (self.length_m - position_m)
        } else {
            self.path_start_m + position_m
        }
    }

    /// The sample of largest amplitude (an antinode, or a line end).
    pub fn max(&self) -> &ProfilePoint {
        self.points
            .iter()
            .max_by(|a, b| a.pressure.norm().total_cmp(&b.pressure.norm()))
            .expect("a profile has samples")
    }

    /// The sample of smallest amplitude (a node, or a line end).
    pub fn min(&self) -> &ProfilePoint {
        self.points
            .iter()
            .min_by(|a, b| a.pressure.norm().total_cmp(&b.pressure.norm()))
            .expect("a profile has samples")
    }
}

/// The ripple along every line for one harmonic of one pump.
#[derive(Debug, Clone, PartialEq)]
pub struct RippleProfile {
    /// The pump's name.
    pub pump: String,
    /// Harmonic order k.
    pub harmonic: u32,
    /// Frequency k·f_p in Hz.
    pub freq_hz: f64,
    /// One profile per tube and hose, in circuit order.
    pub lines: Vec<LineProfile>,
    /// Ripple at every node (peak phasor, Pa).
    pub node_pressures: Vec<C64>,
    /// Distance of every node from the pump along the circuit, m (`None`
    /// for nodes reached by no path).
    pub node_distances_m: Vec<Option<f64>>,
    /// Ripple at each of the circuit's taps, in order.
    pub tap_pressures: Vec<C64>,
}

/// Number of samples for a line of length l with propagation coefficient Γ:
/// [`POINTS_PER_WAVELENGTH`] per wavelength 2π/Im Γ, within
/// [`MIN_POINTS`]..=[`MAX_POINTS`].
pub fn sample_count(length_m: f64, gamma: C64) -> usize {
    let wavelengths = length_m * gamma.im.abs() / (2.0 * std::f64::consts::PI);
    let wanted = (wavelengths * POINTS_PER_WAVELENGTH as f64).ceil();
    if wanted.is_finite() {
        (wanted as usize + 1).clamp(MIN_POINTS, MAX_POINTS)
    } else {
        MAX_POINTS
    }
}

/// The number of samples [`ripple_profile`] takes along all the circuit's
/// tubes and hoses at `freq_hz` (at most [`MAX_POINTS`] a line), to check
/// against [`crate::limits::MAX_PROFILE_SAMPLES`] before solving.
pub fn sample_total(circuit: &Circuit, freq_hz: f64) -> usize {
    let omega = 2.0 * std::f64::consts::PI * freq_hz;
    circuit
        .elements
        .iter()
        .filter_map(|e| e.kind.line())
        .map(|line| sample_count(line.length_m, line.properties.propagation(omega).gamma))
        .sum()
}

/// Shortest distance from `start` to every node along the circuit's
/// two-ports: a tube or hose counts its length, any other two-port (orifice,
/// inertance) zero (Dijkstra's algorithm with a binary heap over adjacency
/// lists: time in proportion to E log N).
pub fn path_distances(circuit: &Circuit, start: NodeId) -> Vec<Option<f64>> {
    path_distances_from(circuit, &[start])
}

/// Shortest distance from the nearest of `starts` to every node (as
/// [`path_distances`]; several pumps feed a circuit from several nodes).
pub fn path_distances_from(circuit: &Circuit, starts: &[NodeId]) -> Vec<Option<f64>> {
    let n = circuit.nodes.len();
    // (neighbour, step length) of every two-port
    let (first, adjacent) =
        circuit.two_port_adjacency(|e| e.kind.line().map_or(0.0, |l| l.length_m));
    /// A heap entry, nearest first, then lowest node.
    #[derive(PartialEq)]
    struct Reached(f64, NodeId);
    impl Eq for Reached {}
    impl PartialOrd for Reached {
        fn partial_cmp(&self, other: &Self) -> Option<std::cmp::Ordering> {
            Some(self.cmp(other))
        }
    }
    impl Ord for Reached {
        fn cmp(&self, other: &Self) -> std::cmp::Ordering {
            other.0.total_cmp(&self.0).then(other.1.cmp(&self.1))
        }
    }
    let mut dist: Vec<Option<f64>> = vec![None; n];
    let mut done = vec![false; n];
    let mut heap = std::collections::BinaryHeap::new();
    for &start in starts {
        dist[start] = Some(0.0);
        heap.push(Reached(0.0, start));
    }
    while let Some(Reached(d, node)) = heap.pop() {
        if std::mem::replace(&mut done[node], true) {
            continue;
        }
        for &(other, step) in &adjacent[first[node]..first[node + 1]] {
            if dist[other].is_none_or(|o| d + step < o) {
                dist[other] = Some(d + step);
                heap.push(Reached(d + step, other));
            }
        }
    }
    dist
}

/// Solves harmonic `harmonic` of pump `pump_index` alone and samples every
/// tube and hose ([`sample_count`] points each, ends included).
///
/// # Errors
/// [`SolveError`] if the network is singular at the harmonic's frequency.
///
/// # Panics
/// If `pump_index` is out of range.
pub fn ripple_profile(
    plan: &Plan<'_>,
    pump_index: usize,
    harmonic: u32,
) -> Result<RippleProfile, SolveError> {
    let pumps = &plan.circuit().pumps;
    shaft_profile(
        plan,
        &Shaft::single(pumps, pump_index),
        pump_index,
        harmonic,
    )
}

/// Solves the frequency of harmonic `harmonic` of pump `pump_index` with
/// every pump of `shaft` injecting what it has there (pumps on one shaft
/// share the speed and the angle reference, so their flows add as
/// phasors), and samples every tube and hose. Distances along the circuit
/// are measured from the nearest pump that injects at that frequency.
///
/// # Errors
/// [`SolveError`] if the network is singular at that frequency.
///
/// # Panics
/// If `pump_index` is out of range or not on `shaft`.
pub fn shaft_profile(
    plan: &Plan<'_>,
    shaft: &Shaft,
    pump_index: usize,
    harmonic: u32,
) -> Result<RippleProfile, SolveError> {
    let circuit = plan.circuit();
    let pump = &circuit.pumps[pump_index];
    assert!(
        shaft.pumps.contains(&pump_index),
        "the pump is on the shaft"
    );
    let freq_hz = f64::from(harmonic) * pump.pumping_frequency_hz();
    let omega = 2.0 * std::f64::consts::PI * freq_hz;
    // the order of the shaft fundamental n·g at this frequency
    let order = harmonic * pump.pumping_elements / shaft.fundamental_elements;
    let mut injections = Vec::new();
    shaft.injections(
        &circuit.pumps,
        order,
        harmonic.max(MAX_HARMONIC),
        pump.speed_rev_s,
        &mut injections,
    );
    let mut ws = plan.workspace();
    let solution = plan.solve(freq_hz, &injections, &mut ws)?;
    // distances from the pumps that inject at this frequency
    let mut starts: Vec<NodeId> = injections
        .iter()
        .filter(|(_, q)| q.norm() > 0.0)
        .map(|(n, _)| *n)
        .collect();
    if starts.is_empty() {
        starts.push(pump.node);
    }
    let distances = path_distances_from(circuit, &starts);
    let mut lines = Vec::new();
    for (i, e) in circuit.elements.iter().enumerate() {
        let (Some(line), Connection::Series { a, b }) = (e.kind.line(), e.connection) else {
            continue;
        };
        let prop = line.properties.propagation(omega);
        let (qa, qb) = solution.end_flows[i].expect("a line is a two-port");
        let ends = (
            (solution.node_pressures[a], qa),
            (solution.node_pressures[b], qb),
        );
        let count = sample_count(line.length_m, prop.gamma);
        let points = (0..count)
            .map(|k| {
                let x = line.length_m * k as f64 / (count - 1) as f64;
                ProfilePoint {
                    position_m: x,
                    pressure: line.state_at(&prop, x, ends.0, ends.1).0,
                }
            })
            .collect();
        let (da, db) = (
            distances[a].unwrap_or(f64::INFINITY),
            distances[b].unwrap_or(f64::INFINITY),
        );
        let reversed = db < da;
        let start = if reversed { db } else { da };
        lines.push(LineProfile {
            element: i,
            name: e.name.clone(),
            kind: e.kind.name(),
            length_m: line.length_m,
            path_start_m: if start.is_finite() { start } else { 0.0 },
            reversed,
            points,
        });
    }
    let tap_pressures = circuit
        .taps
        .iter()
        .map(|t| tap_pressure(circuit, &solution, t.location))
        .collect();
    Ok(RippleProfile {
        pump: pump.name.clone(),
        harmonic,
        freq_hz,
        lines,
        node_pressures: solution.node_pressures,
        node_distances_m: distances,
        tap_pressures,
    })
}
