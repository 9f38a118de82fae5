//! The pressure ripple a pump makes at every measurement point, harmonic by
//! harmonic (what `ripline solve` reports).
//!
//! For pump harmonic k at f = k·f_p the network is solved with the pump's
//! source flow ripple Qs(k) injected at its node (every pump's source
//! impedance stays in the network). Overall levels follow methods.md §7.4:
//! P_rms = √(Σ_k |P_k|²/2), L = 20 log10(P_rms/p_ref), and the peak-to-peak
//! value of the waveform rebuilt from the harmonics.

use super::waveform;
use crate::circuit::{Circuit, Tap, TapLocation};
use crate::diagnostics::{Warning, conditioning_warning};
use crate::elements::{Connection, NodeId};
use crate::line::Propagation;
use crate::network::{Plan, Solution, SolveError, Workspace};
use crate::source::Shaft;
use num_complex::Complex64 as C64;

/// The ripple of one harmonic at one point.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct HarmonicPressure {
    /// Harmonic order k of the pumping frequency.
    pub order: u32,
    /// Frequency k·f_p in Hz.
    pub freq_hz: f64,
    /// Pressure ripple phasor (peak) in Pa.
    pub pressure: C64,
}

/// All harmonics at one measurement point.
#[derive(Debug, Clone, PartialEq)]
pub struct TapRipple {
    /// The point's name.
    pub name: String,
    /// One entry per harmonic, in order.
    pub harmonics: Vec<HarmonicPressure>,
}

impl TapRipple {
    /// Overall rms ripple √(Σ|P_k|²/2) in Pa.
    pub fn rms_pa(&self) -> f64 {
        (self
            .harmonics
            .iter()
            .map(|h| h.pressure.norm_sqr())
            .sum::<f64>()
            / 2.0)
            .sqrt()
    }

    /// Overall level 20·log10(P_rms/p_ref) in dB re `p_ref_pa`.
    pub fn level_db(&self, p_ref_pa: f64) -> f64 {
        20.0 * (self.rms_pa() / p_ref_pa).log10()
    }

    /// Peak-to-peak of the waveform rebuilt from the harmonics, in Pa.
    pub fn peak_to_peak_pa(&self) -> f64 {
        let h: Vec<(u32, C64)> = self
            .harmonics
            .iter()
            .map(|h| (h.order, h.pressure))
            .collect();
        waveform::peak_to_peak(&h)
    }

    /// The same from a [`waveform::Period`] shared by the points (built for
    /// this point's orders; the plain search otherwise): the same bits.
    pub fn peak_to_peak_pa_with(&self, period: &waveform::Period) -> f64 {
        let phasors: Vec<C64> = self.harmonics.iter().map(|h| h.pressure).collect();
        if period.orders().len() != phasors.len()
            || period
                .orders()
                .iter()
                .zip(&self.harmonics)
                .any(|(&k, h)| k != h.order)
        {
            return self.peak_to_peak_pa();
        }
        let e = period.extremes(&phasors);
        e.max.1 - e.min.1
    }
}

/// The ripple of one pump at every measurement point.
#[derive(Debug, Clone, PartialEq)]
pub struct RippleReport {
    /// The pump's name.
    pub pump: String,
    /// Shaft speed in rev/s.
    pub speed_rev_s: f64,
    /// Pumping frequency f_p in Hz.
    pub pumping_frequency_hz: f64,
    /// One entry per measurement point.
    pub taps: Vec<TapRipple>,
    /// Harmonics solved close to an undamped resonance (ill-conditioned).
    pub warnings: Vec<Warning>,
    /// Orders 1..=N without source flow, left out of `taps`
    /// ([`Shaft::silent_orders`]).
    pub silent_orders: Vec<u32>,
}

impl RippleReport {
    /// The waveform period of its points' orders (every point has the
    /// same), shared by their peak-to-peak searches
    /// ([`TapRipple::peak_to_peak_pa_with`]): its table of e^{jkθ} costs
    /// more than a waveform's search.
    pub fn period(&self) -> waveform::Period {
        let orders: Vec<u32> = self
            .taps
            .first()
            .map_or_else(Vec::new, |t| t.harmonics.iter().map(|h| h.order).collect());
        waveform::Period::new(&orders)
    }
}

/// The measurement points a report covers: the circuit's taps, or every node
/// when it defines none.
pub fn report_points(circuit: &Circuit) -> Vec<Tap> {
    if circuit.taps.is_empty() {
        circuit
            .nodes
            .iter()
            .enumerate()
            .map(|(id, n)| Tap {
                name: n.name.clone(),
                location: TapLocation::Node(id),
            })
            .collect()
    } else {
        circuit.taps.clone()
    }
}

/// The pressure ripple at a measurement point from a solved network.
pub fn tap_pressure(circuit: &Circuit, solution: &Solution, location: TapLocation) -> C64 {
    match location {
        TapLocation::Node(id) => solution.node_pressures[id],
        TapLocation::AlongTube {
            element,
            distance_m,
        } => along_tube(
            circuit,
            solution.freq_hz,
            element,
            distance_m,
            |n| solution.node_pressures[n],
            solution.end_flows[element],
            None,
        ),
    }
}

/// [`tap_pressure`] in the state a [`Plan::solve_in_place`] at `freq_hz`
/// left in `ws`.
pub(crate) fn solved_pressure(
    plan: &Plan<'_>,
    ws: &Workspace,
    freq_hz: f64,
    location: TapLocation,
) -> C64 {
    match location {
        TapLocation::Node(id) => plan.node_pressure(ws, id),
        TapLocation::AlongTube {
            element,
            distance_m,
        } => along_tube(
            plan.circuit(),
            freq_hz,
            element,
            distance_m,
            |n| plan.node_pressure(ws, n),
            plan.end_flows(ws, element),
            plan.line_propagation(ws, element),
        ),
    }
}

/// The pressure `distance_m` from the "from" end of tube or hose `element`
/// from its end pressures and end flows, with the line's propagation at
/// `freq_hz` (`known`, or evaluated here).
fn along_tube(
    circuit: &Circuit,
    freq_hz: f64,
    element: usize,
    distance_m: f64,
    pressure: impl Fn(usize) -> C64,
    end_flows: Option<(C64, C64)>,
    known: Option<Propagation>,
) -> C64 {
    let e = &circuit.elements[element];
    let (Some(line), Connection::Series { a, b }) = (e.kind.line(), e.connection) else {
        unreachable!("taps along elements are validated to be on tubes or hoses");
    };
    let (qa, qb) = end_flows.expect("a line is a two-port");
    let prop = known.unwrap_or_else(|| {
        line.properties
            .propagation(2.0 * std::f64::consts::PI * freq_hz)
    });
    let (p, _) = line.state_at(&prop, distance_m, (pressure(a), qa), (pressure(b), qb));
    p
}

/// Solves harmonics 1..=`harmonics` of pump `pump_index` and reads every
/// measurement point: that pump's contribution alone (every pump's source
/// impedance stays in the network).
///
/// # Errors
/// [`SolveError`] if the network is singular at a harmonic frequency.
///
/// # Panics
/// If `pump_index` is out of range.
pub fn harmonic_ripple(
    plan: &Plan<'_>,
    pump_index: usize,
    harmonics: u32,
) -> Result<RippleReport, SolveError> {
    let pumps = &plan.circuit().pumps;
    let shaft = Shaft::single(pumps, pump_index);
    shaft_ripple(plan, &shaft, harmonics, pumps[pump_index].speed_rev_s)
}

/// Solves the pumps on `shaft` together at shaft speed `speed_rev_s`, at
/// every order of the shaft fundamental n·g where one of them has one of
/// its harmonics 1..=`harmonics` (see [`Shaft::orders`]), and reads every
/// measurement point. The report's `pump` is the shaft's name, its
/// `pumping_frequency_hz` the shaft fundamental and each entry's `order` the
/// order of that fundamental (for one pump: its harmonic number).
///
/// # Errors
/// [`SolveError`] if the network is singular at one of these frequencies.
pub fn shaft_ripple(
    plan: &Plan<'_>,
    shaft: &Shaft,
    harmonics: u32,
    speed_rev_s: f64,
) -> Result<RippleReport, SolveError> {
    let circuit = plan.circuit();
    let points = report_points(circuit);
    let orders = shaft.orders(&circuit.pumps, harmonics);
    let mut taps: Vec<TapRipple> = points
        .iter()
        .map(|t| TapRipple {
            name: t.name.clone(),
            harmonics: Vec::with_capacity(orders.len()),
        })
        .collect();
    // each order on its own (in parallel when the circuit is large),
    // collected in order
    let solved = crate::parallel::ordered_map(
        &orders,
        crate::parallel::pays(plan.unknowns(), orders.len()),
        || OrderSolver::new(plan, shaft, harmonics),
        |solver, &order| {
            let freq_hz = solver.solve(order, speed_rev_s)?;
            Ok((freq_hz, solver.pressures.clone(), solver.warning.take()))
        },
        &mut |_| {},
    )?;
    let mut warnings = Vec::new();
    for (&order, (freq_hz, pressures, warning)) in orders.iter().zip(solved) {
        warnings.extend(warning);
        for (tap, pressure) in taps.iter_mut().zip(pressures) {
            tap.harmonics.push(HarmonicPressure {
                order,
                freq_hz,
                pressure,
            });
        }
    }
    Ok(RippleReport {
        pump: shaft.name.clone(),
        speed_rev_s,
        pumping_frequency_hz: shaft.fundamental_hz(speed_rev_s),
        taps,
        warnings,
        silent_orders: shaft.silent_orders(&circuit.pumps, harmonics),
    })
}

/// Solves one order of a shaft's fundamental at a time, reusing its
/// workspace, and keeps the pressure at every measurement point.
pub(crate) struct OrderSolver<'p, 'c> {
    plan: &'p Plan<'c>,
    shaft: &'p Shaft,
    harmonics: u32,
    points: Vec<Tap>,
    workspace: Workspace,
    injections: Vec<(NodeId, C64)>,
    /// The pressure (peak phasor, Pa) at each point after the last solve.
    pub pressures: Vec<C64>,
    /// The last solve's warning if it was nearly singular.
    pub warning: Option<Warning>,
}

impl<'p, 'c> OrderSolver<'p, 'c> {
    pub(crate) fn new(plan: &'p Plan<'c>, shaft: &'p Shaft, harmonics: u32) -> Self {
        let points = report_points(plan.circuit());
        OrderSolver {
            plan,
            shaft,
            harmonics,
            pressures: vec![C64::new(0.0, 0.0); points.len()],
            points,
            workspace: plan.workspace(),
            injections: Vec::new(),
            warning: None,
        }
    }

    /// The plan it solves.
    pub(crate) fn plan(&self) -> &'p Plan<'c> {
        self.plan
    }

    /// Solves order `order` of the shaft fundamental at `speed_rev_s` and
    /// returns its frequency in Hz.
    pub(crate) fn solve(&mut self, order: u32, speed_rev_s: f64) -> Result<f64, SolveError> {
        let circuit = self.plan.circuit();
        let freq_hz = f64::from(order) * self.shaft.fundamental_hz(speed_rev_s);
        for &i in &self.shaft.pumps {
            self.workspace.set_pump_speed(i, speed_rev_s);
        }
        self.shaft.injections(
            &circuit.pumps,
            order,
            self.harmonics,
            speed_rev_s,
            &mut self.injections,
        );
        let condition = self
            .plan
            .solve_in_place(freq_hz, &self.injections, &mut self.workspace)?;
        for (p, point) in self.pressures.iter_mut().zip(&self.points) {
            *p = solved_pressure(self.plan, &self.workspace, freq_hz, point.location);
        }
        self.warning = conditioning_warning(freq_hz, condition);
        Ok(freq_hz)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // A solve read in place gives the same bits as the full `Solution`, at a
    // node and along a line (the crane demo's pressure line has a tap at its
    // midpoint; the in-place reading takes the line's propagation from the
    // solve instead of evaluating it again).
    #[test]
    fn reading_in_place_gives_the_solutions_bits() {
        let text = include_str!("../../networks/crane_pressure_line.yaml");
        let circuit = crate::io::parse_circuit(text, "crane.yaml").unwrap();
        assert!(
            circuit
                .taps
                .iter()
                .any(|t| matches!(t.location, TapLocation::AlongTube { .. }))
        );
        let plan = Plan::compile(&circuit).unwrap();
        let (mut ws, mut ws2) = (plan.workspace(), plan.workspace());
        let node = circuit.pumps[0].node;
        for k in 1..=40 {
            let f = 13.7 * f64::from(k);
            let injections = [(node, C64::new(1e-4, 2e-5))];
            let solution = plan.solve(f, &injections, &mut ws).unwrap();
            let condition = plan.solve_in_place(f, &injections, &mut ws2).unwrap();
            assert_eq!(condition.to_bits(), solution.condition.to_bits());
            for tap in &circuit.taps {
                let full = tap_pressure(&circuit, &solution, tap.location);
                let in_place = solved_pressure(&plan, &ws2, f, tap.location);
                assert_eq!(
                    (full.re.to_bits(), full.im.to_bits()),
                    (in_place.re.to_bits(), in_place.im.to_bits()),
                    "{} at {f} Hz",
                    tap.name
                );
            }
        }
    }
}
