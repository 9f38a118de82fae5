//! Assembly of Y·P = J at one frequency and its sparse LU solve.
//!
//! Per frequency: the viscous factor of each distinct (bore, fluid), the
//! propagation of each distinct line, every element's behaviour; the
//! behaviours are scattered straight into the factor storage of the plan's
//! symbolic analysis ([`super::sparse`]), factorised in the static order
//! (or, where that order is unsafe at this frequency, by the pivoted
//! fallback), and solved. Every solve estimates the condition number of the
//! (non-dimensionalised) matrix; above [`SINGULAR_CONDITION`], or with a
//! non-finite solution, the frequency is reported as singular, because a
//! lossless circuit exactly at a resonance has no solution.

use super::condition::{Solves, abs, inverse_norm1_estimate};
use super::dense::DenseWorkspace;
use super::sparse::{self, PivotedLu, Symbolic};
use super::{NO_SLOT, Plan, Slot, Stamp};
use crate::elements::{Behaviour, Connection, NodeId, lossy_line_behaviour};
use crate::line::viscous::one_minus_viscous_factor;
use crate::line::{Propagation, admittance_matrix, admittance_terms};
use num_complex::Complex64 as C64;

const ZERO: C64 = C64 { re: 0.0, im: 0.0 };
const ONE: C64 = C64 { re: 1.0, im: 0.0 };

/// Lossy lines whose admittances are evaluated together
/// ([`admittance_terms`]).
const LANES: usize = 4;

/// Condition number (1-norm estimate) above which a frequency is treated as
/// singular: fewer than about 3 significant digits would survive (ε·κ > 1e-3).
pub const SINGULAR_CONDITION: f64 = 1e-3 / f64::EPSILON;

/// Smallest/largest LU pivot magnitude below which the condition number is
/// estimated in full (Hager–Higham); above it the matrix is well conditioned
/// and 1/ratio is reported.
pub(super) const CONDITION_SCREEN: f64 = 1e-4;

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

/// Scratch space reused across frequencies: memory in proportion to the
/// circuit. Results never depend on what a workspace solved before, so any
/// workspace made for a plan gives the same bits for the same frequency.
#[derive(Debug, Clone)]
pub struct Workspace {
    pub(super) behaviours: Vec<Behaviour>,
    propagations: Vec<Propagation>,
    viscous: Vec<C64>,
    /// Factor storage (the plan's slots), the matrix as assembled (for the
    /// fallback and the norm), growth sums.
    vals: Vec<C64>,
    assembled: Vec<C64>,
    mass: Vec<f64>,
    rhs: Vec<C64>,
    scratch: Vec<C64>,
    scratch2: Vec<C64>,
    pivoted: PivotedLu,
    pub(super) dense: Option<Box<DenseWorkspace>>,
    /// The shaft speed (rev/s) each pump's source impedance is taken at:
    /// the circuit's, or the speed a sweep solves at (a source map's
    /// impedance depends on the speed; see [`Workspace::set_pump_speed`]).
    pub(super) pump_speeds: Vec<f64>,
    /// (unknowns, slots, elements, lines, bores) of the plan it was made for.
    shape: [usize; 5],
}

impl Workspace {
    /// Takes pump `pump`'s source impedance at shaft speed `speed_rev_s` in
    /// the solves with this workspace (a sweep solving at speeds other than
    /// the circuit's; only a source map depends on it).
    pub fn set_pump_speed(&mut self, pump: usize, speed_rev_s: f64) {
        if let Some(s) = self.pump_speeds.get_mut(pump) {
            *s = speed_rev_s;
        }
    }

    pub(super) fn new(plan: &Plan<'_>) -> Self {
        let n = plan.unknowns;
        let slots = plan.symbolic.slots();
        Workspace {
            behaviours: vec![Behaviour::Nothing; plan.slots.len()],
            propagations: vec![
                Propagation {
                    gamma: ZERO,
                    zc: ZERO,
                };
                plan.lines.len()
            ],
            viscous: vec![ZERO; plan.bores.len()],
            vals: vec![ZERO; slots],
            assembled: vec![ZERO; slots],
            mass: vec![0.0; slots],
            rhs: vec![ZERO; n],
            scratch: vec![ZERO; n],
            scratch2: vec![ZERO; n],
            pivoted: PivotedLu::default(),
            dense: None,
            pump_speeds: plan.circuit.pumps.iter().map(|p| p.speed_rev_s).collect(),
            shape: plan.shape(),
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

/// Which factorisation holds the factors.
#[derive(Clone, Copy, PartialEq)]
enum Factored {
    Static,
    Pivoted,
}

/// The factors of one solve, with the plan's order, seen in the original
/// (compile-order) numbering, so that the condition estimate runs exactly
/// as on the dense matrix.
struct SparseFactors<'a> {
    symbolic: &'a Symbolic,
    which: Factored,
    vals: &'a [C64],
    pivoted: &'a mut PivotedLu,
    permuted: &'a mut [C64],
}

impl SparseFactors<'_> {
    fn apply(&mut self, x: &mut [C64], adjoint: bool) {
        for (i, &v) in x.iter().enumerate() {
            self.permuted[self.symbolic.position(i)] = v;
        }
        match (self.which, adjoint) {
            (Factored::Static, false) => {
                sparse::solve_static(self.symbolic, self.vals, self.permuted, None);
            }
            (Factored::Static, true) => {
                sparse::solve_static_adjoint(self.symbolic, self.vals, self.permuted);
            }
            (Factored::Pivoted, false) => self.pivoted.solve(self.permuted),
            (Factored::Pivoted, true) => self.pivoted.solve_adjoint(self.permuted),
        }
        for (i, v) in x.iter_mut().enumerate() {
            *v = self.permuted[self.symbolic.position(i)];
        }
    }
}

impl Solves for SparseFactors<'_> {
    fn solve(&mut self, x: &mut [C64]) {
        self.apply(x, false);
    }
    fn solve_adjoint(&mut self, x: &mut [C64]) {
        self.apply(x, true);
    }
}

impl Plan<'_> {
    /// (unknowns, slots, elements, lines, bores): what a workspace must fit.
    fn shape(&self) -> [usize; 5] {
        [
            self.unknowns,
            self.symbolic.slots(),
            self.slots.len(),
            self.lines.len(),
            self.bores.len(),
        ]
    }

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
        let condition = self.solve_in_place(freq_hz, injections, ws)?;
        Ok(self.solution(freq_hz, &ws.rhs, &ws.behaviours, condition))
    }

    /// [`Plan::solve`] without building its [`Solution`]: the solved state
    /// stays in the workspace, to be read at the points wanted
    /// ([`Plan::node_pressure`], [`Plan::end_flows`]) until the next solve;
    /// returns the condition estimate ([`Solution::condition`]). The same
    /// bits as [`Plan::solve`], without its two allocations and every
    /// element's end flows.
    ///
    /// # Errors
    /// As [`Plan::solve`].
    pub fn solve_in_place(
        &self,
        freq_hz: f64,
        injections: &[(NodeId, C64)],
        ws: &mut Workspace,
    ) -> Result<f64, SolveError> {
        let omega = self.evaluate(freq_hz, ws)?;
        let sym = &self.symbolic;
        ws.vals.fill(ZERO);
        self.assemble(omega, &ws.behaviours, &ws.pump_speeds, &mut ws.vals);
        ws.rhs.fill(ZERO);
        let zr = self.z_ref;
        for &(node, q) in injections {
            if let Some(at) = self.node_index[node] {
                ws.rhs[sym.position(at)] += q * zr;
            }
        }
        let singular = |condition: f64| SolveError::Singular { freq_hz, condition };
        let mut assembled = false;
        let (pivot_ratio, which) = match sparse::factor_static(sym, &mut ws.vals, &mut ws.mass) {
            Some(ratio) => (ratio, Factored::Static),
            None => {
                ws.assembled.fill(ZERO);
                self.assemble(omega, &ws.behaviours, &ws.pump_speeds, &mut ws.assembled);
                assembled = true;
                (ws.pivoted.factor(sym, &ws.assembled), Factored::Pivoted)
            }
        };
        if pivot_ratio.is_nan() || pivot_ratio <= 0.0 {
            return Err(singular(f64::INFINITY));
        }
        let mut factors = SparseFactors {
            symbolic: sym,
            which,
            vals: &ws.vals,
            pivoted: &mut ws.pivoted,
            permuted: &mut ws.scratch2,
        };
        // Screen: the Hager–Higham estimate costs several triangular solves,
        // so it runs only when the pivots hint at trouble; otherwise the
        // pivot ratio's reciprocal stands in (then well below ILL_CONDITIONED).
        let condition = if pivot_ratio < CONDITION_SCREEN {
            if !assembled {
                ws.assembled.fill(ZERO);
                self.assemble(omega, &ws.behaviours, &ws.pump_speeds, &mut ws.assembled);
            }
            let a_norm = norm1(sym, &ws.assembled, &mut ws.scratch);
            if !a_norm.is_finite() {
                return Err(singular(f64::INFINITY));
            }
            a_norm * inverse_norm1_estimate(&mut ws.scratch, &mut factors)
        } else {
            1.0 / pivot_ratio
        };
        // NaN-safe: a NaN condition is not <= the limit.
        let solvable = condition <= SINGULAR_CONDITION;
        let clean = match which {
            Factored::Static => sparse::solve_static(
                sym,
                &ws.vals,
                &mut ws.rhs,
                Some(&mut ws.mass[..self.unknowns]),
            ),
            Factored::Pivoted => {
                ws.pivoted.solve(&mut ws.rhs);
                false
            }
        };
        if !clean && solvable {
            // One step of iterative refinement (sparse module docs): the
            // residual of the assembled matrix, solved with the same factors.
            if !assembled {
                ws.assembled.fill(ZERO);
                self.assemble(omega, &ws.behaviours, &ws.pump_speeds, &mut ws.assembled);
            }
            let r = &mut ws.scratch;
            r.fill(ZERO);
            for &(node, q) in injections {
                if let Some(at) = self.node_index[node] {
                    r[sym.position(at)] += q * zr;
                }
            }
            let x = &ws.rhs;
            sym.for_each_entry(|slot, row, col| r[row] -= ws.assembled[slot] * x[col]);
            match which {
                Factored::Static => {
                    sparse::solve_static(sym, &ws.vals, r, None);
                }
                Factored::Pivoted => ws.pivoted.solve(r),
            }
            for (x, d) in ws.rhs.iter_mut().zip(r.iter()) {
                *x += d;
            }
        }
        if !solvable || !ws.rhs.iter().all(|v| v.is_finite()) {
            return Err(singular(condition));
        }
        Ok(condition)
    }

    /// The pressure (Pa) at node `node` in the state the last
    /// [`Plan::solve_in_place`] with `ws` left; zero at a tank node.
    pub fn node_pressure(&self, ws: &Workspace, node: NodeId) -> C64 {
        unknown_at(&ws.rhs, self.node_pos[node])
    }

    /// The propagation of tube or hose `element`'s line at the frequency
    /// of the last solve with `ws` (each distinct line's is evaluated once
    /// per solve); `None` for an element that is not a line.
    pub fn line_propagation(&self, ws: &Workspace, element: usize) -> Option<Propagation> {
        self.line_of[element].map(|l| ws.propagations[l])
    }

    /// Element `element`'s end flows ([`Solution::end_flows`]) in the state
    /// the last [`Plan::solve_in_place`] with `ws` left.
    pub fn end_flows(&self, ws: &Workspace, element: usize) -> Option<(C64, C64)> {
        self.end_flows_from(element, &ws.rhs, &ws.behaviours, |n| {
            self.node_pressure(ws, n)
        })
    }

    /// Element `i`'s end flows from the unknowns `x` (sparse order), the
    /// behaviours and the node pressures.
    fn end_flows_from(
        &self,
        i: usize,
        x: &[C64],
        behaviours: &[Behaviour],
        pressure: impl Fn(NodeId) -> C64,
    ) -> Option<(C64, C64)> {
        let zr = self.z_ref;
        match (
            &self.stamps[i],
            &behaviours[i],
            self.circuit.elements[i].connection,
        ) {
            (Stamp::Admittance(_), Behaviour::Admittance(m), Connection::Series { a, b }) => {
                let (pa, pb) = (pressure(a), pressure(b));
                let qa_in = m[0][0] * pa + m[0][1] * pb;
                let qb_in = m[1][0] * pa + m[1][1] * pb;
                Some((qa_in, -qb_in))
            }
            (Stamp::Transfer(_, [qa, qb]), _, _) => {
                Some((x[*qa as usize] / zr, x[*qb as usize] / zr))
            }
            (Stamp::Shunt(_), Behaviour::Shunt(y), Connection::Shunt { at }) => {
                let q = y * pressure(at);
                Some((q, q))
            }
            _ => None,
        }
    }

    /// Checks the frequency and fills the workspace's behaviours: the
    /// viscous factor once per distinct bore, the propagation once per
    /// distinct line, then every element. Returns ω.
    pub(super) fn evaluate(&self, freq_hz: f64, ws: &mut Workspace) -> Result<f64, SolveError> {
        if !(freq_hz.is_finite() && freq_hz > 0.0) {
            return Err(SolveError::BadFrequency { freq_hz });
        }
        if ws.shape != self.shape() {
            *ws = self.workspace(); // a workspace made for another plan
        }
        let omega = 2.0 * std::f64::consts::PI * freq_hz;
        for (g, &(radius_m, nu)) in ws.viscous.iter_mut().zip(&self.bores) {
            // the shear number as `LineProperties::shear_number` forms it
            *g = one_minus_viscous_factor(radius_m * (omega / nu).sqrt());
        }
        for ((prop, line), bore) in ws
            .propagations
            .iter_mut()
            .zip(&self.lines)
            .zip(&self.bore_of)
        {
            *prop = line.propagation_with(omega, bore.map(|b| ws.viscous[b]));
        }
        // The lossy lines' admittances, LANES at a time (the same bits as
        // `Line::admittance` of each, whose chains of dependent operations
        // then overlap; unused lanes get a harmless Γl = 1).
        let mut is_lossy_line = self.lossy_lines.iter().map(|l| l.element).peekable();
        for chunk in self.lossy_lines.chunks(LANES) {
            let mut gl = [ONE; LANES];
            let mut zc = [ONE; LANES];
            for (k, l) in chunk.iter().enumerate() {
                let p = &ws.propagations[l.line];
                (gl[k], zc[k]) = (p.gamma * l.length_m, p.zc);
            }
            let terms = admittance_terms(gl, zc);
            for (l, t) in chunk.iter().zip(terms) {
                ws.behaviours[l.element] = lossy_line_behaviour(t.map(admittance_matrix));
            }
        }
        for (i, (element, slot)) in self.circuit.elements.iter().zip(&self.slots).enumerate() {
            if is_lossy_line.next_if_eq(&i).is_none() {
                let prop = self.line_of[i].map(|l| &ws.propagations[l]);
                ws.behaviours[i] = element.kind.behaviour_with(omega, prop);
            }
            let finite = match (slot, &ws.behaviours[i]) {
                (Slot::Admittance { .. }, Behaviour::Admittance(m))
                | (Slot::Transfer { .. }, Behaviour::Transfer(m)) => {
                    m.iter().flatten().all(|v| v.is_finite())
                }
                (Slot::Shunt { .. }, Behaviour::Shunt(y)) => y.is_finite(),
                (Slot::Empty, _) | (Slot::Shunt { at: None }, _) => true,
                _ => {
                    // A two-port whose model has no admittance form here.
                    return Err(SolveError::Singular {
                        freq_hz,
                        condition: f64::INFINITY,
                    });
                }
            };
            if !finite {
                return Err(SolveError::ElementNotFinite {
                    element: element.name.clone(),
                    freq_hz,
                });
            }
        }
        Ok(omega)
    }

    /// Adds every element's behaviour and the pumps' source admittances
    /// into `vals` (the plan's slots), scaled by Z_ref (module docs). A
    /// transfer two-port's flow row comes first in the order (its pivot is
    /// 1), its pressure row second.
    fn assemble(&self, omega: f64, behaviours: &[Behaviour], speeds: &[f64], vals: &mut [C64]) {
        let zr = self.z_ref;
        let mut add = |slot: u32, v: C64| {
            if slot != NO_SLOT {
                vals[slot as usize] += v;
            }
        };
        for (stamp, behaviour) in self.stamps.iter().zip(behaviours) {
            match (*stamp, *behaviour) {
                (Stamp::Admittance(s), Behaviour::Admittance(m)) => {
                    add(s[0], m[0][0] * zr);
                    add(s[1], m[0][1] * zr);
                    add(s[2], m[1][0] * zr);
                    add(s[3], m[1][1] * zr);
                }
                (Stamp::Transfer(s, _), Behaviour::Transfer(t)) => {
                    // KCL: flow qa leaves node a into the element, qb enters node b.
                    add(s[0], ONE);
                    add(s[1], -ONE);
                    // Flow row: Qa − T21 Pb − T22 Qb = 0, times Z_ref.
                    add(s[2], ONE);
                    add(s[3], -(t[1][0] * zr));
                    add(s[4], -t[1][1]);
                    // Pressure row: Pa − T11 Pb − T12 Qb = 0 (Qb carried as Z_ref·Qb).
                    add(s[5], ONE);
                    add(s[6], -t[0][0]);
                    add(s[7], -(t[0][1] / zr));
                }
                (Stamp::Shunt(s), Behaviour::Shunt(y)) => add(s, y * zr),
                _ => {}
            }
        }
        for ((pump, &slot), &speed) in self.circuit.pumps.iter().zip(&self.pump_slots).zip(speeds) {
            if slot != NO_SLOT {
                add(slot, pump.source_impedance.admittance_at(omega, speed) * zr);
            }
        }
    }

    /// The solution from the unknowns `x` (in the sparse order) and the
    /// elements' behaviours.
    pub(super) fn solution(
        &self,
        freq_hz: f64,
        x: &[C64],
        behaviours: &[Behaviour],
        condition: f64,
    ) -> Solution {
        let node_pressures: Vec<C64> = self.node_pos.iter().map(|&p| unknown_at(x, p)).collect();
        let end_flows = (0..self.circuit.elements.len())
            .map(|i| self.end_flows_from(i, x, behaviours, |n| node_pressures[n]))
            .collect();
        Solution {
            freq_hz,
            node_pressures,
            end_flows,
            condition,
        }
    }
}

/// The unknown at position `pos` of `x` (sparse order); zero for
/// [`NO_SLOT`] (a tank node's pressure).
fn unknown_at(x: &[C64], pos: u32) -> C64 {
    if pos == NO_SLOT {
        ZERO
    } else {
        x[pos as usize]
    }
}

/// ‖A‖₁ = max over columns of Σ|a_ij| from the slots (`colsum`: n scratch).
fn norm1(sym: &Symbolic, vals: &[C64], colsum: &mut [C64]) -> f64 {
    // sums kept in the real parts of the scratch vector
    colsum.fill(ZERO);
    sym.for_each_entry(|slot, _, col| colsum[col].re += abs(vals[slot]));
    colsum.iter().map(|c| c.re).fold(0.0, f64::max)
}
