//! Assembly of Y·P = J at one frequency and its LU solve.
//!
//! Only this file talks to the linear-algebra crate. The matrix lives in a
//! reusable nalgebra buffer and is factorised in place by LU with partial
//! pivoting ([`lu_factor_in_place`]): nalgebra's `LU` takes its matrix by
//! value and cannot solve with the adjoint, which the condition estimate
//! needs, and it would cost allocations per frequency in a loop that runs
//! millions of times in a sweep. Unit tests check the in-place solves against
//! nalgebra's `LU` and the condition estimate against nalgebra's inverse.
//! Every solve estimates the condition number of the (non-dimensionalised)
//! matrix; above [`SINGULAR_CONDITION`], or with a non-finite solution, the
//! frequency is reported as singular, because a lossless circuit exactly at a
//! resonance has no solution.

use super::{Plan, Slot};
use crate::elements::{Behaviour, Connection, NodeId};
use crate::line::Propagation;
use nalgebra::{DMatrix, DVector};
use num_complex::Complex64 as C64;

const ZERO: C64 = C64 { re: 0.0, im: 0.0 };

/// Condition number (1-norm estimate) above which a frequency is treated as
/// singular: fewer than about 3 significant digits would survive (ε·κ > 1e-3).
pub const SINGULAR_CONDITION: f64 = 1e-3 / f64::EPSILON;

/// Smallest/largest LU pivot magnitude below which the condition number is
/// estimated in full (Hager–Higham); above it the matrix is well conditioned
/// and 1/ratio is reported.
const CONDITION_SCREEN: f64 = 1e-4;

/// Condition number above which a solution is reported as ill-conditioned:
/// fewer than about 8 significant digits survive.
pub const ILL_CONDITIONED: f64 = 1e8;

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
        "the circuit has no unique solution at {freq_hz:.6} Hz (singular network matrix, condition number {condition:.1e}): typically a lossless line or a lossless resonator exactly at resonance with nothing to damp it; use the laminar line model or add a resistance"
    )]
    Singular {
        /// The frequency in Hz.
        freq_hz: f64,
        /// Estimated 1-norm condition number of the (scaled) network matrix.
        condition: f64,
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
    swaps: Vec<usize>,
    scratch: DVector<C64>,
    behaviours: Vec<Behaviour>,
    propagations: Vec<Propagation>,
    unknowns: usize,
}

impl Workspace {
    pub(super) fn new(unknowns: usize, elements: usize, lines: usize) -> Self {
        Workspace {
            matrix: DMatrix::zeros(unknowns, unknowns),
            rhs: DVector::zeros(unknowns),
            swaps: vec![0; unknowns],
            scratch: DVector::zeros(unknowns),
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
    /// For each element, the flows at its two ends in the a→b sense (m³/s):
    /// for a two-port, at its `from` and `to` nodes; for a shunt, from its
    /// node into it and on to the reference (the same flow twice). `None` for
    /// tanks and closed ends, which take no ripple flow of their own.
    pub end_flows: Vec<Option<(C64, C64)>>,
    /// Estimated 1-norm condition number of the non-dimensionalised network
    /// matrix: about how many times round-off is amplified. Large near a
    /// lightly damped resonance; above [`ILL_CONDITIONED`] the result has lost
    /// more than 8 significant digits. Estimated by Hager–Higham whenever the
    /// LU pivots span more than 1e4; otherwise the pivot span itself (a
    /// matrix that well conditioned needs no finer figure).
    pub condition: f64,
}

impl Solution {
    /// Time-averaged power absorbed by element `index` in W:
    /// ½ Re(Pa·Qa* − Pb·Qb*) with flows in the a→b sense (for a shunt, Pb is
    /// the reference, zero). Peak phasors, so the ½ gives the mean power.
    pub fn absorbed_power(&self, circuit: &crate::Circuit, index: usize) -> f64 {
        let Some((qa, qb)) = self.end_flows[index] else {
            return 0.0;
        };
        let (pa, pb) = match circuit.elements[index].connection {
            Connection::Series { a, b } => (self.node_pressures[a], self.node_pressures[b]),
            Connection::Shunt { at } => (self.node_pressures[at], ZERO),
        };
        0.5 * (pa * qa.conj() - pb * qb.conj()).re
    }
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
                        condition: f64::INFINITY,
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

        let a_norm = norm1(&ws.matrix);
        let singular = |condition: f64| SolveError::Singular { freq_hz, condition };
        let pivot_ratio = lu_factor_in_place(&mut ws.matrix, &mut ws.swaps);
        if !a_norm.is_finite() || pivot_ratio.is_nan() || pivot_ratio <= 0.0 {
            return Err(singular(f64::INFINITY));
        }
        // Screen: the Hager–Higham estimate costs several triangular solves,
        // so it runs only when the pivots hint at trouble; otherwise the
        // pivot ratio's reciprocal stands in (then well below ILL_CONDITIONED).
        let condition = if pivot_ratio < CONDITION_SCREEN {
            a_norm * inverse_norm1_estimate(&ws.matrix, &ws.swaps, &mut ws.scratch)
        } else {
            1.0 / pivot_ratio
        };
        // NaN-safe: a NaN condition is not <= the limit.
        let solvable = condition <= SINGULAR_CONDITION;
        lu_solve(&ws.matrix, &ws.swaps, &mut ws.rhs);
        if !solvable || !ws.rhs.iter().all(|v| v.is_finite()) {
            return Err(singular(condition));
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
                (Slot::Shunt { .. }, Behaviour::Shunt(y)) => {
                    let Connection::Shunt { at } = element.connection else {
                        return None;
                    };
                    let q = y * node_pressures[at];
                    Some((q, q))
                }
                _ => None,
            })
            .collect();
        Ok(Solution {
            freq_hz,
            node_pressures,
            end_flows,
            condition,
        })
    }
}

/// Factorises A in place by Gaussian elimination with partial pivoting (the
/// row with the largest |pivot| is swapped up at each step, as in nalgebra's
/// `LU` and LAPACK's `zgetrf`): afterwards `a` holds U on and above the
/// diagonal and the unit-lower L below it, and `swaps[k]` is the row swapped
/// with row k at step k.
///
/// Returns the smallest over the largest pivot magnitude, 0 when a pivot is
/// exactly zero (then the factors are incomplete).
fn lu_factor_in_place(a: &mut DMatrix<C64>, swaps: &mut [usize]) -> f64 {
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
        swaps[k] = p;
        lo = lo.min(best);
        hi = hi.max(best);
        if best == 0.0 {
            return 0.0;
        }
        if p != k {
            a.swap_rows(k, p);
        }
        let inv = a[(k, k)].inv();
        for i in k + 1..n {
            let factor = a[(i, k)] * inv;
            a[(i, k)] = factor;
            if factor == ZERO {
                continue;
            }
            for j in k + 1..n {
                let u = a[(k, j)];
                a[(i, j)] -= factor * u;
            }
        }
    }
    (lo / hi).sqrt()
}

/// Solves A·x = b with the factors of [`lu_factor_in_place`]; b becomes x.
fn lu_solve(lu: &DMatrix<C64>, swaps: &[usize], b: &mut DVector<C64>) {
    let n = lu.nrows();
    let a = lu.as_slice(); // column-major: a[i + j·n] = A[i, j]
    let x = b.as_mut_slice();
    for (k, &p) in swaps.iter().enumerate() {
        x.swap(k, p);
    }
    for j in 0..n {
        // forward substitution with the unit lower factor, column by column
        let xj = x[j];
        if xj != ZERO {
            let col = &a[j * n..(j + 1) * n];
            for i in j + 1..n {
                x[i] -= col[i] * xj;
            }
        }
    }
    for j in (0..n).rev() {
        let col = &a[j * n..(j + 1) * n];
        x[j] /= col[j];
        let xj = x[j];
        if xj != ZERO {
            for i in 0..j {
                x[i] -= col[i] * xj;
            }
        }
    }
}

/// Solves Aᴴ·x = b with the factors of [`lu_factor_in_place`]
/// (Aᴴ = Uᴴ Lᴴ P); b becomes x.
fn lu_solve_adjoint(lu: &DMatrix<C64>, swaps: &[usize], b: &mut DVector<C64>) {
    let n = lu.nrows();
    let a = lu.as_slice();
    let x = b.as_mut_slice();
    for i in 0..n {
        // row i of Uᴴ is the conjugate of column i of U
        let col = &a[i * n..(i + 1) * n];
        let mut sum = x[i];
        for j in 0..i {
            sum -= col[j].conj() * x[j];
        }
        x[i] = sum / col[i].conj();
    }
    for i in (0..n).rev() {
        let col = &a[i * n..(i + 1) * n];
        let mut sum = x[i];
        for j in i + 1..n {
            sum -= col[j].conj() * x[j];
        }
        x[i] = sum;
    }
    for (k, &p) in swaps.iter().enumerate().rev() {
        x.swap(k, p);
    }
}

/// |z| as √(re² + im²): faster than `hypot` in the estimator's loops, and
/// safe here because the non-dimensionalised entries are far from overflow
/// (an overflow gives inf, which is reported as singular).
fn abs(z: C64) -> f64 {
    z.norm_sqr().sqrt()
}

/// Σ|x_i|.
fn sum_abs(x: &DVector<C64>) -> f64 {
    x.iter().map(|&v| abs(v)).sum()
}

/// The 1-norm ‖A‖₁ = max over columns of Σ|a_ij|.
fn norm1(a: &DMatrix<C64>) -> f64 {
    a.column_iter()
        .map(|c| c.iter().map(|&v| abs(v)).sum::<f64>())
        .fold(0.0, f64::max)
}

/// Estimates ‖A⁻¹‖₁ from the LU factors by Hager's method as refined by
/// Higham (N. J. Higham, "FORTRAN codes for estimating the one-norm of a real
/// or complex matrix", ACM TOMS 14(4), 1988; the algorithm of LAPACK's
/// `zlacon`, here with at most two iterations): a few solves with A and Aᴴ,
/// never forming A⁻¹. The estimate is a lower bound, usually within a factor
/// of 3 of the true norm.
fn inverse_norm1_estimate(lu: &DMatrix<C64>, swaps: &[usize], x: &mut DVector<C64>) -> f64 {
    let n = lu.nrows();
    x.fill(C64::new(1.0 / n as f64, 0.0));
    lu_solve(lu, swaps, x);
    let mut estimate = sum_abs(x);
    let mut last_j = usize::MAX;
    // Higham (1988) reports convergence within two iterations in almost all
    // cases; two keep the per-frequency cost low in sweeps.
    for _ in 0..2 {
        // ξ = sign(x), z = A⁻ᴴ ξ
        for v in x.iter_mut() {
            let m = abs(*v);
            *v = if m > 0.0 { *v / m } else { C64::new(1.0, 0.0) };
        }
        lu_solve_adjoint(lu, swaps, x);
        let (j, _) =
            x.iter().enumerate().fold(
                (0, -1.0),
                |(bj, bv), (i, v)| if v.re > bv { (i, v.re) } else { (bj, bv) },
            );
        if j == last_j {
            break;
        }
        last_j = j;
        x.fill(ZERO);
        x[j] = C64::new(1.0, 0.0);
        lu_solve(lu, swaps, x);
        let next = sum_abs(x);
        if next <= estimate {
            break;
        }
        estimate = next;
    }
    // Higham's extra test vector x_i = (−1)^i (1 + i/(n−1)) guards against
    // the rare matrices where the iteration stops too early.
    if n > 1 {
        for (i, v) in x.iter_mut().enumerate() {
            let sign = if i % 2 == 0 { 1.0 } else { -1.0 };
            *v = C64::new(sign * (1.0 + i as f64 / (n - 1) as f64), 0.0);
        }
        lu_solve(lu, swaps, x);
        let alt = 2.0 * sum_abs(x) / (3.0 * n as f64);
        estimate = estimate.max(alt);
    }
    estimate
}

#[cfg(test)]
mod tests {
    use super::*;

    fn random_matrix(n: usize, seed: &mut u64) -> DMatrix<C64> {
        let mut rand = || {
            *seed ^= *seed << 13;
            *seed ^= *seed >> 7;
            *seed ^= *seed << 17;
            (*seed >> 11) as f64 / (1u64 << 53) as f64 - 0.5
        };
        DMatrix::<C64>::from_fn(n, n, |_, _| C64::new(rand(), rand()))
    }

    /// The in-place solves agree with nalgebra's LU (the reference
    /// implementation) on random complex systems, pivoting included, for A
    /// and for its adjoint.
    #[test]
    fn in_place_lu_agrees_with_nalgebra() {
        let mut seed = 0x2545_f491_4f6c_dd1d_u64;
        for n in [1, 2, 3, 5, 8, 13] {
            let a = random_matrix(n, &mut seed);
            let b = random_matrix(n, &mut seed).column(0).into_owned();
            let want = a.clone().lu().solve(&b).unwrap();
            let want_adj = a.adjoint().lu().solve(&b).unwrap();
            let mut lu = a.clone();
            let mut swaps = vec![0; n];
            assert!(lu_factor_in_place(&mut lu, &mut swaps) > 0.0);
            let mut x = b.clone();
            lu_solve(&lu, &swaps, &mut x);
            assert!((&x - &want).norm() < 1e-12 * want.norm(), "n = {n}");
            let mut y = b.clone();
            lu_solve_adjoint(&lu, &swaps, &mut y);
            assert!(
                (&y - &want_adj).norm() < 1e-12 * want_adj.norm(),
                "adjoint, n = {n}"
            );
        }
    }

    /// Hager–Higham estimate against the exact ‖A⁻¹‖₁ from nalgebra's
    /// inverse: a lower bound, within a factor 3 (Higham 1988 reports it
    /// exact in most cases).
    #[test]
    fn condition_estimate_brackets_the_exact_value() {
        let mut seed = 0x9e37_79b9_7f4a_7c15_u64;
        for n in [2, 4, 7, 12] {
            for _ in 0..5 {
                let a = random_matrix(n, &mut seed);
                let exact = norm1(&a.clone().try_inverse().unwrap());
                let mut lu = a.clone();
                let mut swaps = vec![0; n];
                assert!(lu_factor_in_place(&mut lu, &mut swaps) > 0.0);
                let mut x = DVector::zeros(n);
                let est = inverse_norm1_estimate(&lu, &swaps, &mut x);
                assert!(
                    est <= exact * (1.0 + 1e-12) && est >= exact / 3.0,
                    "{est} vs {exact}"
                );
            }
        }
    }

    #[test]
    fn a_zero_pivot_is_reported() {
        let mut a = DMatrix::<C64>::from_element(2, 2, C64::new(1.0, 0.0));
        assert_eq!(lu_factor_in_place(&mut a, &mut [0, 0]), 0.0);
    }
}
