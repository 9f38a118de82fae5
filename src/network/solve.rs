//! Assembly of Y·P = J at one frequency and its LU solve.
//!
//! Only this file talks to the linear-algebra crate. The matrix lives in a
//! reusable nalgebra buffer and is factorised in place by LU with partial
//! pivoting ([`lu_solve_in_place`]): nalgebra's `LU` takes its matrix by value
//! and exposes its pivots only through a copied U factor, which costs three
//! allocations per frequency in a loop that runs millions of times in a sweep.
//! A unit test checks the in-place solve against nalgebra's `LU`. After
//! factorising, a vanishing pivot relative to the largest, or a non-finite
//! solution, is reported as a singular frequency, because a lossless circuit
//! exactly at a resonance has no solution.

use super::{Plan, Slot};
use crate::elements::{Behaviour, Connection, NodeId};
use crate::line::Propagation;
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
    matrix: DMatrix<C64>,
    rhs: DVector<C64>,
    behaviours: Vec<Behaviour>,
    propagations: Vec<Propagation>,
    unknowns: usize,
}

impl Workspace {
    pub(super) fn new(unknowns: usize, elements: usize, lines: usize) -> Self {
        Workspace {
            matrix: DMatrix::zeros(unknowns, unknowns),
            rhs: DVector::zeros(unknowns),
            behaviours: vec![Behaviour::Nothing; elements],
            propagations: vec![
                Propagation {
                    gamma: ZERO,
                    zc: ZERO,
                };
                lines
            ],
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
        if ws.unknowns != self.unknowns
            || ws.behaviours.len() != self.slots.len()
            || ws.propagations.len() != self.lines.len()
        {
            *ws = self.workspace(); // a workspace made for another plan
        }
        let omega = 2.0 * std::f64::consts::PI * freq_hz;
        let zr = self.z_ref;
        ws.matrix.fill(ZERO);
        ws.rhs.fill(ZERO);
        let y = &mut ws.matrix;

        for (prop, line) in ws.propagations.iter_mut().zip(&self.lines) {
            *prop = line.propagation(omega);
        }
        for (i, (element, slot)) in self.circuit.elements.iter().zip(&self.slots).enumerate() {
            let prop = self.line_of[i].map(|l| &ws.propagations[l]);
            let behaviour = element.kind.behaviour_with(omega, prop);
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

        let pivot_ratio = lu_solve_in_place(&mut ws.matrix, &mut ws.rhs);
        // NaN-safe: a NaN ratio is not >= the limit.
        let well_conditioned = pivot_ratio >= PIVOT_RATIO_LIMIT;
        if !well_conditioned || !ws.rhs.iter().all(|v| v.is_finite()) {
            return Err(SolveError::Singular {
                freq_hz,
                pivot_ratio,
            });
        }
        let x = &ws.rhs;

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

/// Solves A·x = b in place by Gaussian elimination with partial pivoting
/// (the row with the largest |pivot| is swapped up at each step, as in
/// nalgebra's `LU`): `a` is overwritten by its factors and `b` by x.
///
/// Returns the smallest over the largest pivot magnitude; 0 when a pivot is
/// exactly zero, in which case `b` is left unspecified.
fn lu_solve_in_place(a: &mut DMatrix<C64>, b: &mut DVector<C64>) -> f64 {
    let n = a.nrows();
    let (mut lo, mut hi) = (f64::INFINITY, 0.0_f64);
    for k in 0..n {
        // pivot search on |.|² (no hypot in the hot loop)
        let mut p = k;
        let mut best = a[(k, k)].norm_sqr();
        for i in k + 1..n {
            let v = a[(i, k)].norm_sqr();
            if v > best {
                (p, best) = (i, v);
            }
        }
        lo = lo.min(best);
        hi = hi.max(best);
        if best == 0.0 {
            return 0.0;
        }
        if p != k {
            a.swap_rows(k, p);
            b.swap_rows(k, p);
        }
        let inv = a[(k, k)].inv();
        for i in k + 1..n {
            let factor = a[(i, k)] * inv;
            if factor == ZERO {
                continue;
            }
            for j in k + 1..n {
                let u = a[(k, j)];
                a[(i, j)] -= factor * u;
            }
            let bk = b[k];
            b[i] -= factor * bk;
        }
    }
    for k in (0..n).rev() {
        let mut sum = b[k];
        for j in k + 1..n {
            sum -= a[(k, j)] * b[j];
        }
        b[k] = sum / a[(k, k)];
    }
    (lo / hi).sqrt()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The in-place solve agrees with nalgebra's LU (the reference
    /// implementation) on random complex systems, pivoting included.
    #[test]
    fn in_place_lu_agrees_with_nalgebra() {
        let mut seed = 0x2545_f491_4f6c_dd1d_u64;
        let mut rand = || {
            seed ^= seed << 13;
            seed ^= seed >> 7;
            seed ^= seed << 17;
            (seed >> 11) as f64 / (1u64 << 53) as f64 - 0.5
        };
        for n in [1, 2, 3, 5, 8, 13] {
            let a = DMatrix::<C64>::from_fn(n, n, |_, _| C64::new(rand(), rand()));
            let b = DVector::<C64>::from_fn(n, |_, _| C64::new(rand(), rand()));
            let want = a.clone().lu().solve(&b).unwrap();
            let (mut a2, mut x) = (a.clone(), b.clone());
            let ratio = lu_solve_in_place(&mut a2, &mut x);
            assert!(ratio > 0.0 && ratio <= 1.0);
            assert!((&x - &want).norm() < 1e-12 * want.norm(), "n = {n}");
            assert!((&a * &x - &b).norm() < 1e-12 * b.norm());
        }
    }

    #[test]
    fn a_zero_pivot_is_reported() {
        let mut a = DMatrix::<C64>::from_element(2, 2, C64::new(1.0, 0.0));
        let mut b = DVector::<C64>::from_element(2, C64::new(1.0, 0.0));
        assert_eq!(lu_solve_in_place(&mut a, &mut b), 0.0);
    }
}
