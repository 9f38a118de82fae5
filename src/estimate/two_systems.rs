//! Source flow ripple and impedance from two or more downstream systems at
//! the same speed: the principle of the two-pressures/two-systems method of
//! ISO 10767-1:2015 (methods.md §6b), as a least-squares problem.
//!
//! For each harmonic and each system m the pump-outlet state (P0ᵐ, Q0ᵐ)
//! comes from the wave decomposition with shaft-referenced phases. The
//! Norton law Q0 = Qs − Ys P0 (Ys = 1/Zs) is linear in the unknowns:
//!
//! ```text
//! [1, −P0ᵐ]·[Qs; Ys] = Q0ᵐ,   m = 1..M ≥ 2
//! M = 2:  Ys = −(Q0¹ − Q0²)/(P0¹ − P0²),   Qs = Q0¹ + Ys P0¹
//! ```
//!
//! It is singular when the systems present the same load impedance to the
//! pump (P0¹/Q0¹ = P0²/Q0²); the condition number of the column-equilibrated
//! matrix measures how different the loads are.

use super::decompose::{Ls2, ls2};
use crate::C64;

/// Qs and Zs of one harmonic.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct NortonEstimate {
    /// Source flow ripple in m³/s.
    pub flow: C64,
    /// Source impedance in Pa·s/m³.
    pub impedance: C64,
    /// Condition number of the identification.
    pub cond: f64,
}

/// Estimates Qs and Zs from the outlet states (P0, Q0) of M ≥ 2 systems;
/// `None` if the loads are identical or Ys comes out zero.
///
/// # Panics
/// With fewer than two states.
pub fn estimate(states: &[(C64, C64)]) -> Option<NortonEstimate> {
    let one = C64::new(1.0, 0.0);
    let rows: Vec<(C64, C64)> = states.iter().map(|&(p0, _)| (one, -p0)).collect();
    let y: Vec<C64> = states.iter().map(|&(_, q0)| q0).collect();
    let w = vec![1.0; states.len()];
    let Ls2 {
        x: [qs, ys], cond, ..
    } = ls2(&rows, &y, &w)?;
    if ys.norm() == 0.0 {
        return None;
    }
    Some(NortonEstimate {
        flow: qs,
        impedance: ys.inv(),
        cond,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn two_loads_give_the_closed_form() {
        // A Norton source into two resistive loads: P0 = Qs/(Ys + 1/R),
        // Q0 = P0/R; the estimator must return Qs and Zs (methods.md §6b).
        let qs = C64::new(1e-5, 2e-6);
        let zs = C64::new(1e8, -1.1e10);
        let states: Vec<(C64, C64)> = [6e10, 1.5e10]
            .iter()
            .map(|&r| {
                let p0 = qs / (zs.inv() + 1.0 / r);
                (p0, p0 / r)
            })
            .collect();
        let e = estimate(&states).unwrap();
        assert!((e.flow - qs).norm() < 1e-14 * qs.norm());
        assert!((e.impedance - zs).norm() < 1e-14 * zs.norm());
        assert!(estimate(&[states[0], states[0]]).is_none());
    }
}
