//! Assembly of Y·P = J at one frequency and its LU solve.
//!
//! Only this file talks to the linear-algebra crate. After factorising it
//! checks for a singular or numerically singular matrix (a vanishing pivot
//! relative to the largest, or a non-finite solution) and reports the
//! frequency, because a lossless circuit exactly at a resonance has no
//! solution.

use super::{Plan, Slot};
use crate::elements::{Behaviour, Connection, NodeId};
use nalgebra::{DMatrix, DVector};
use num_complex::Complex64 as C64;

const ZERO: C64 = C64 { re: 0.0, im: 0.0 };

/// Smallest pivot, relative to the largest, below which the matrix is
/// treated as singular.
const PIVOT_RATIO_LIMIT: f64 = 1e-13;

/// Why a frequency could not be solved.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum SolveError {
    /// The frequency is not a finite positive number.
    #[error("frequency {freq_hz} Hz is not a finite positive number")]
    BadFrequency {
        /// The frequency in Hz.
        freq_hz: f64,
    },
    /// The network matrix is singular at this frequency.
    #[error(
        "the circuit has no unique solution at {freq_hz:.6} Hz (singular network matrix, smallest/largest pivot {pivot_ratio:.1e}): typically a lossless line or a lossless resonator exactly at resonance with nothing to damp it; use the laminar line model or add a resistance"
    )]
    Singular {
        /// The frequency in Hz.
        freq_hz: f64,
        /// Smallest over largest LU pivot magnitude.
        pivot_ratio: f64,
    },
    /// An element's model gave a non-finite value at this frequency.
    #[error("element `{element}` has no finite model at {freq_hz} Hz")]
    ElementNotFinite {
        /// The element.
        element: String,
        /// The frequency in Hz.
        freq_hz: f64,
    },
}

/// Scratch space reused across frequencies.
#[derive(Debug, Clone)]
pub struct Workspace {
    rhs: DVector<C64>,
    behaviours: Vec<Behaviour>,
    unknowns: usize,
}

impl Workspace {
    pub(super) fn new(unknowns: usize, elements: usize) -> Self {
        Workspace {
            rhs: DVector::zeros(unknowns),
            behaviours: vec![Behaviour::Nothing; elements],
            unknowns,
        }
    }
}

/// The solved state of a circuit at one frequency.
#[derive(Debug, Clone, PartialEq)]
pub struct Solution {
    /// Frequency in Hz.
    pub freq_hz: f64,
    /// Ripple pressure at every node in Pa (peak phasor); zero at tank nodes.
    pub node_pressures: Vec<C64>,
    /// For each two-port element, the flows at its a and b ends in the a→b
    /// sense (m³/s); `None` for shunts and markers.
    pub end_flows: Vec<Option<(C64, C64)>>,
    /// Smallest over largest LU pivot magnitude: a cheap indicator of how
    /// close the frequency is to an undamped resonance.
    pub pivot_ratio: f64,
}

impl Plan<'_> {
    /// Solves the circuit at `freq_hz` with the given flow injections
    /// (node, complex flow in m³/s) in addition to every pump's source
    /// impedance, which is always part of the network.
    ///
    /// # Errors
    /// [`SolveError`] for a non-positive frequency, a non-finite element
    /// model, or a singular network.
    pub fn solve(
        &self,
        freq_hz: f64,
        injections: &[(NodeId, C64)],
        ws: &mut Workspace,
    ) -> Result<Solution, SolveError> {
        if !(freq_hz.is_finite() && freq_hz > 0.0) {
            return Err(SolveError::BadFrequency { freq_hz });
        }
        if ws.unknowns != self.unknowns || ws.behaviours.len() != self.slots.len() {
            *ws = self.workspace(); // a workspace made for another plan
        }
        let omega = 2.0 * std::f64::consts::PI * freq_hz;
        let zr = self.z_ref;
        let n = ws.unknowns;
        let mut y = DMatrix::<C64>::zeros(n, n);
        ws.rhs.fill(ZERO);

        for (i, (element, slot)) in self.circuit.elements.iter().zip(&self.slots).enumerate() {
            let behaviour = element.kind.behaviour(omega);
            ws.behaviours[i] = behaviour;
            let not_finite = || SolveError::ElementNotFinite {
                element: element.name.clone(),
                freq_hz,
            };
            match (*slot, behaviour) {
                (Slot::Admittance { a, b }, Behaviour::Admittance(m)) => {
                    if !m.iter().flatten().all(|v| v.is_finite()) {
                        return Err(not_finite());
                    }
                    let ends = [a, b];
                    for (r, row) in ends.iter().enumerate() {
                        for (c, col) in ends.iter().enumerate() {
                            if let (Some(row), Some(col)) = (row, col) {
                                y[(*row, *col)] += m[r][c] * zr;
                            }
                        }
                    }
                }
                (Slot::Transfer { a, b, qa, qb }, Behaviour::Transfer(t)) => {
                    if !t.iter().flatten().all(|v| v.is_finite()) {
                        return Err(not_finite());
                    }
                    // KCL: flow qa leaves node a into the element, qb enters node b.
                    if let Some(a) = a {
                        y[(a, qa)] += C64::new(1.0, 0.0);
                    }
                    if let Some(b) = b {
                        y[(b, qb)] -= C64::new(1.0, 0.0);
                    }
                    // Row qa: Pa − T11 Pb − T12 Qb = 0 (Qb carried as Z_ref·Qb).
                    if let Some(a) = a {
                        y[(qa, a)] += C64::new(1.0, 0.0);
                    }
                    if let Some(b) = b {
                        y[(qa, b)] -= t[0][0];
                    }
                    y[(qa, qb)] -= t[0][1] / zr;
                    // Row qb: Qa − T21 Pb − T22 Qb = 0, times Z_ref.
                    y[(qb, qa)] += C64::new(1.0, 0.0);
                    if let Some(b) = b {
                        y[(qb, b)] -= t[1][0] * zr;
                    }
                    y[(qb, qb)] -= t[1][1];
                }
                (Slot::Shunt { at }, Behaviour::Shunt(ysh)) => {
                    if !ysh.is_finite() {
                        return Err(not_finite());
                    }
                    if let Some(at) = at {
                        y[(at, at)] += ysh * zr;
                    }
                }
                (Slot::Empty, _) | (Slot::Shunt { at: None }, _) => {}
                _ => {
                    // A two-port whose model has no admittance form here.
                    return Err(SolveError::Singular {
                        freq_hz,
                        pivot_ratio: 0.0,
                    });
                }
            }
        }
        for pump in &self.circuit.pumps {
            if let Some(at) = self.node_index[pump.node] {
                y[(at, at)] += pump.source_impedance.admittance(omega) * zr;
            }
        }
        for &(node, q) in injections {
            if let Some(at) = self.node_index[node] {
                ws.rhs[at] += q * zr;
            }
        }

        let lu = y.lu();
        let pivots = lu.u().diagonal();
        let (mut lo, mut hi) = (f64::INFINITY, 0.0_f64);
        for p in pivots.iter() {
            lo = lo.min(p.norm());
            hi = hi.max(p.norm());
        }
        let pivot_ratio = if hi > 0.0 { lo / hi } else { 0.0 };
        let singular = || SolveError::Singular {
            freq_hz,
            pivot_ratio,
        };
        if !(pivot_ratio >= PIVOT_RATIO_LIMIT) {
            return Err(singular());
        }
        let x = lu.solve(&ws.rhs).ok_or_else(singular)?;
        if !x.iter().all(|v| v.is_finite()) {
            return Err(singular());
        }

        let node_pressures: Vec<C64> = self
            .node_index
            .iter()
            .map(|i| i.map_or(ZERO, |i| x[i]))
            .collect();
        let end_flows = self
            .circuit
            .elements
            .iter()
            .zip(&self.slots)
            .zip(&ws.behaviours)
            .map(|((element, slot), behaviour)| match (*slot, behaviour) {
                (Slot::Admittance { .. }, Behaviour::Admittance(m)) => {
                    let Connection::Series { a, b } = element.connection else {
                        return None;
                    };
                    let (pa, pb) = (node_pressures[a], node_pressures[b]);
                    let qa_in = m[0][0] * pa + m[0][1] * pb;
                    let qb_in = m[1][0] * pa + m[1][1] * pb;
                    Some((qa_in, -qb_in))
                }
                (Slot::Transfer { qa, qb, .. }, _) => Some((x[qa] / zr, x[qb] / zr)),
                _ => None,
            })
            .collect();
        Ok(Solution {
            freq_hz,
            node_pressures,
            end_flows,
            pivot_ratio,
        })
    }
}
