//! The dense reference solve: the whole nodal matrix in a nalgebra buffer,
//! factorised in place by LU with partial pivoting ([`lu_factor_in_place`]).
//!
//! This was ripline's only solve until the sparse one replaced it; it stays
//! as the reference the sparse solve is tested against and as the "old"
//! side of the benchmarks. Its cost grows as n³ and its memory as n², so it
//! is for small circuits. nalgebra's `LU` takes its matrix by value and
//! cannot solve with the adjoint, which the condition estimate needs, so the
//! factorisation is written out here; unit tests check the in-place solves
//! against nalgebra's `LU` and the condition estimate against nalgebra's
//! inverse.

use super::condition::{Solves, abs, inverse_norm1_estimate};
use super::solve::{CONDITION_SCREEN, SINGULAR_CONDITION, Solution, SolveError, Workspace};
use super::{Plan, Slot};
use crate::elements::{Behaviour, NodeId};
use nalgebra::{DMatrix, DVector};
use num_complex::Complex64 as C64;

const ZERO: C64 = C64 { re: 0.0, im: 0.0 };
const ONE: C64 = C64 { re: 1.0, im: 0.0 };

/// The dense matrix and its factorisation's scratch.
#[derive(Debug, Clone)]
pub(super) struct DenseWorkspace {
    matrix: DMatrix<C64>,
    rhs: DVector<C64>,
    swaps: Vec<usize>,
    scratch: Vec<C64>,
}

impl DenseWorkspace {
    fn new(n: usize) -> Self {
        DenseWorkspace {
            matrix: DMatrix::zeros(n, n),
            rhs: DVector::zeros(n),
            swaps: vec![0; n],
            scratch: vec![ZERO; n],
        }
    }
}

impl Plan<'_> {
    /// The same solve as [`Plan::solve`] through the dense reference path:
    /// the whole nodal matrix factorised by LU with partial pivoting. Its
    /// memory grows as the square and its time as the cube of the number
    /// of unknowns (a 1000-unknown circuit takes 16 MB and about a second
    /// per frequency): for cross-checks and benchmarks on small circuits.
    ///
    /// # Errors
    /// As [`Plan::solve`].
    pub fn solve_dense(
        &self,
        freq_hz: f64,
        injections: &[(NodeId, C64)],
        ws: &mut Workspace,
    ) -> Result<Solution, SolveError> {
        let omega = self.evaluate(freq_hz, ws)?;
        let n = self.unknowns;
        let zr = self.z_ref;
        let dense = ws
            .dense
            .get_or_insert_with(|| Box::new(DenseWorkspace::new(n)));
        dense.matrix.fill(ZERO);
        dense.rhs.fill(ZERO);
        let y = &mut dense.matrix;
        for (slot, behaviour) in self.slots.iter().zip(&ws.behaviours) {
            match (*slot, *behaviour) {
                (Slot::Admittance { a, b }, Behaviour::Admittance(m)) => {
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
                    // KCL: flow qa leaves node a into the element, qb enters node b.
                    if let Some(a) = a {
                        y[(a, qa)] += ONE;
                    }
                    if let Some(b) = b {
                        y[(b, qb)] -= ONE;
                    }
                    // Row qa: Pa − T11 Pb − T12 Qb = 0 (Qb carried as Z_ref·Qb).
                    if let Some(a) = a {
                        y[(qa, a)] += ONE;
                    }
                    if let Some(b) = b {
                        y[(qa, b)] -= t[0][0];
                    }
                    y[(qa, qb)] -= t[0][1] / zr;
                    // Row qb: Qa − T21 Pb − T22 Qb = 0, times Z_ref.
                    y[(qb, qa)] += ONE;
                    if let Some(b) = b {
                        y[(qb, b)] -= t[1][0] * zr;
                    }
                    y[(qb, qb)] -= t[1][1];
                }
                (Slot::Shunt { at: Some(at) }, Behaviour::Shunt(ysh)) => {
                    y[(at, at)] += ysh * zr;
                }
                _ => {}
            }
        }
        for (pump, &speed) in self.circuit.pumps.iter().zip(&ws.pump_speeds) {
            if let Some(at) = self.node_index[pump.node] {
                y[(at, at)] += pump.source_impedance.admittance_at(omega, speed) * zr;
            }
        }
        for &(node, q) in injections {
            if let Some(at) = self.node_index[node] {
                dense.rhs[at] += q * zr;
            }
        }

        let a_norm = norm1(&dense.matrix);
        let singular = |condition: f64| SolveError::Singular { freq_hz, condition };
        let pivot_ratio = lu_factor_in_place(&mut dense.matrix, &mut dense.swaps);
        if !a_norm.is_finite() || pivot_ratio.is_nan() || pivot_ratio <= 0.0 {
            return Err(singular(f64::INFINITY));
        }
        let DenseWorkspace {
            matrix,
            rhs,
            swaps,
            scratch,
        } = &mut **dense;
        let condition = if pivot_ratio < CONDITION_SCREEN {
            a_norm * inverse_norm1_estimate(scratch, &mut DenseFactors { lu: matrix, swaps })
        } else {
            1.0 / pivot_ratio
        };
        let solvable = condition <= SINGULAR_CONDITION;
        lu_solve(matrix, swaps, rhs.as_mut_slice());
        if !solvable || !rhs.iter().all(|v| v.is_finite()) {
            return Err(singular(condition));
        }
        // into the sparse order, which `solution` reads
        for (i, &v) in rhs.iter().enumerate() {
            scratch[self.symbolic.position(i)] = v;
        }
        Ok(self.solution(freq_hz, scratch, &ws.behaviours, condition))
    }
}

struct DenseFactors<'a> {
    lu: &'a DMatrix<C64>,
    swaps: &'a [usize],
}

impl Solves for DenseFactors<'_> {
    fn solve(&mut self, x: &mut [C64]) {
        lu_solve(self.lu, self.swaps, x);
    }
    fn solve_adjoint(&mut self, x: &mut [C64]) {
        lu_solve_adjoint(self.lu, self.swaps, x);
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
fn lu_solve(lu: &DMatrix<C64>, swaps: &[usize], x: &mut [C64]) {
    let n = lu.nrows();
    let a = lu.as_slice(); // column-major: a[i + j·n] = A[i, j]
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
fn lu_solve_adjoint(lu: &DMatrix<C64>, swaps: &[usize], x: &mut [C64]) {
    let n = lu.nrows();
    let a = lu.as_slice();
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

/// The 1-norm ‖A‖₁ = max over columns of Σ|a_ij|.
fn norm1(a: &DMatrix<C64>) -> f64 {
    a.column_iter()
        .map(|c| c.iter().map(|&v| abs(v)).sum::<f64>())
        .fold(0.0, f64::max)
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
            lu_solve(&lu, &swaps, x.as_mut_slice());
            assert!((&x - &want).norm() < 1e-12 * want.norm(), "n = {n}");
            let mut y = b.clone();
            lu_solve_adjoint(&lu, &swaps, y.as_mut_slice());
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
                let mut x = vec![ZERO; n];
                let est = inverse_norm1_estimate(
                    &mut x,
                    &mut DenseFactors {
                        lu: &lu,
                        swaps: &swaps,
                    },
                );
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
