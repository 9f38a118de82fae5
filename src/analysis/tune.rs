//! Silencer sizing: the design of one element that minimises the pressure
//! ripple at a measurement point over the operating conditions
//! (what `ripline tune` does).
//!
//! **Objective.** At each operating condition (a pump speed) the overall
//! ripple at the point is P_rms = √(Σ_k |P_k|²/2) over the pump harmonics
//! k = 1..N (methods.md §7.4), each solved with the source flow ripple at
//! that speed. Over the conditions the objective is either the **worst**
//! (largest) P_rms or their **rms** √(mean P_rms²). The worst is not taken
//! from the conditions' speeds alone: every resonance crossing between them
//! is refined ([`super::worst`]), so it is the true worst over the range to
//! 0.01 dB.
//!
//! **Conditions.** Speeds spread evenly in log(speed) over the range and,
//! optionally, fluid temperatures: [`TuneProblem::fluid_states`] holds the
//! same circuit with the oil at each temperature of a range (built with
//! `io::parse_circuit_at_temperature`), so the wave speed, the damping and
//! the damper's oil compliance follow the temperature. The objective then
//! runs over every (temperature, speed) pair, which makes a design robust
//! to the wave-speed drift between a cold and a hot circuit.
//!
//! **Search.** Each parameter varies between positive bounds and is
//! searched in log scale, u ∈ [0, 1] ↦ x = lo·(hi/lo)^u, so that a volume
//! from 0.1 L to 4 L is covered evenly. A bounded global stage samples the
//! box (one parameter: an even grid; two or three: a Halton space-filling
//! design), then the best few separated samples are refined locally (one
//! parameter: golden-section search between the grid neighbours; two or
//! three: Nelder–Mead in the box, see [`super::search`]). The element is
//! rebuilt and the network recompiled for every candidate; a candidate that
//! is not physical (a precharge above the operating pressure, a wall thicker
//! than the bore radius) or whose network cannot be solved counts as
//! infinitely bad.
//!
//! **Steepness.** With the best design found, each parameter in turn is set
//! 10 % below and above its best value and the ripple recomputed; the rise
//! in dB is the attenuation lost by that manufacturing or drift error.

use super::ripple::{report_points, tap_pressure};
use super::search::{golden_section_max, halton, nelder_mead_in_box};
use super::tune_limits::{LimitGoal, Tightest, tightest_limit};
use super::tune_rules::{RuleCheck, RuleContext, Rules};
use super::worst::{Measure, SpeedGrid, WorstSettings, worst_speed};
use crate::circuit::{Circuit, TapLocation};
use crate::elements::ElementKind;
use crate::fluid::Fluid;
use crate::network::{NetworkError, Plan, SolveError};
use crate::source::Pump;
use crate::units::Dimension;
use num_complex::Complex64 as C64;

/// A design parameter of a silencer element.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum Parameter {
    /// Length of a side branch or an expansion chamber.
    Length,
    /// Bore of a side branch or an expansion chamber.
    Bore,
    /// Cavity volume of a Helmholtz resonator.
    Volume,
    /// Neck length of a resonator or a damper.
    NeckLength,
    /// Neck bore of a resonator or a damper.
    NeckBore,
    /// Gas volume at precharge of a damper.
    GasVolume,
    /// Precharge pressure of a damper (absolute).
    Precharge,
    /// How far an expansion chamber's inlet pipe reaches into its shell.
    InletExtension,
    /// How far an expansion chamber's outlet pipe reaches into its shell.
    OutletExtension,
    /// Viscous damping of a relief or check valve's poppet (a damping
    /// orifice or piston to be chosen).
    Damping,
}

impl Parameter {
    /// Every parameter.
    pub const ALL: [Parameter; 10] = [
        Parameter::Length,
        Parameter::Bore,
        Parameter::Volume,
        Parameter::NeckLength,
        Parameter::NeckBore,
        Parameter::GasVolume,
        Parameter::Precharge,
        Parameter::InletExtension,
        Parameter::OutletExtension,
        Parameter::Damping,
    ];

    /// The name used on the command line (the circuit-file key).
    pub fn name(self) -> &'static str {
        match self {
            Parameter::Length => "length",
            Parameter::Bore => "bore",
            Parameter::Volume => "volume",
            Parameter::NeckLength => "neck_length",
            Parameter::NeckBore => "neck_bore",
            Parameter::GasVolume => "gas_volume",
            Parameter::Precharge => "precharge",
            Parameter::InletExtension => "inlet_extension",
            Parameter::OutletExtension => "outlet_extension",
            Parameter::Damping => "damping",
        }
    }

    /// Looks a parameter up by name.
    pub fn from_name(name: &str) -> Option<Parameter> {
        Parameter::ALL.into_iter().find(|p| p.name() == name)
    }

    /// Its physical dimension (a precharge is a gas pressure, written with
    /// `abs` or `gauge`).
    pub fn dimension(self) -> Dimension {
        match self {
            Parameter::Length
            | Parameter::Bore
            | Parameter::NeckLength
            | Parameter::NeckBore
            | Parameter::InletExtension
            | Parameter::OutletExtension => Dimension::Length,
            Parameter::Volume | Parameter::GasVolume => Dimension::Volume,
            Parameter::Precharge => Dimension::Pressure,
            Parameter::Damping => Dimension::Damping,
        }
    }

    /// The parameters an element kind has.
    pub fn for_kind(kind: &ElementKind) -> &'static [Parameter] {
        use Parameter::*;
        match kind {
            ElementKind::ExpansionChamber(c) if c.ports.is_some() => {
                &[Length, Bore, InletExtension, OutletExtension]
            }
            ElementKind::SideBranch(_) | ElementKind::ExpansionChamber(_) => &[Length, Bore],
            ElementKind::InlineDamper(_) => &[GasVolume, Precharge],
            ElementKind::ReliefValve(_)
            | ElementKind::CheckValve(crate::elements::CheckValve {
                state: crate::elements::CheckState::Opening { .. },
                ..
            }) => &[Damping],
            ElementKind::Helmholtz(_) => &[Volume, NeckLength, NeckBore],
            ElementKind::Damper(_) => &[GasVolume, Precharge, NeckLength, NeckBore],
            _ => &[],
        }
    }

    /// The parameter's value in an element (SI; absolute Pa for a precharge).
    pub fn value(self, kind: &ElementKind) -> Option<f64> {
        Some(match (self, kind) {
            (Parameter::Length, ElementKind::SideBranch(s)) => s.tube.line.length_m,
            (Parameter::Length, ElementKind::ExpansionChamber(c)) => c.tube.line.length_m,
            (Parameter::Bore, ElementKind::SideBranch(s)) => s.tube.bore_m(),
            (Parameter::Bore, ElementKind::ExpansionChamber(c)) => c.tube.bore_m(),
            (Parameter::Volume, ElementKind::Helmholtz(h)) => h.volume_m3,
            (Parameter::NeckLength, ElementKind::Helmholtz(h)) => h.neck_length_m,
            (Parameter::NeckBore, ElementKind::Helmholtz(h)) => 2.0 * h.neck.radius_m,
            (Parameter::GasVolume, ElementKind::Damper(d)) => d.gas_volume_m3,
            (Parameter::Precharge, ElementKind::Damper(d)) => d.precharge_pa,
            (Parameter::NeckLength, ElementKind::Damper(d)) => d.neck_length_m,
            (Parameter::NeckBore, ElementKind::Damper(d)) => 2.0 * d.neck.radius_m,
            (Parameter::InletExtension, ElementKind::ExpansionChamber(c)) => {
                c.ports?.inlet_extension_m
            }
            (Parameter::OutletExtension, ElementKind::ExpansionChamber(c)) => {
                c.ports?.outlet_extension_m
            }
            (Parameter::GasVolume, ElementKind::InlineDamper(d)) => d.vessel.gas_volume_m3,
            (Parameter::Precharge, ElementKind::InlineDamper(d)) => d.vessel.precharge_pa,
            (Parameter::Damping, ElementKind::ReliefValve(v)) => v.poppet.damping_n_s_m,
            (
                Parameter::Damping,
                ElementKind::CheckValve(crate::elements::CheckValve {
                    state: crate::elements::CheckState::Opening { poppet, .. },
                    ..
                }),
            ) => poppet.damping_n_s_m,
            _ => return None,
        })
    }

    /// The element rebuilt with this parameter set to `value` (SI).
    ///
    /// # Errors
    /// A message when the kind has no such parameter or the result is not
    /// physical.
    pub fn apply(
        self,
        kind: &ElementKind,
        value: f64,
        fluid: &Fluid,
    ) -> Result<ElementKind, String> {
        if !(value.is_finite() && value > 0.0) {
            return Err(format!("{} must be positive, found {value}", self.name()));
        }
        let mut k = kind.clone();
        match (self, &mut k) {
            (Parameter::Length, ElementKind::SideBranch(s)) => s.tube.line.length_m = value,
            (Parameter::Length, ElementKind::ExpansionChamber(c)) => {
                c.tube.line.length_m = value;
                check_chamber(c)?;
            }
            (Parameter::Bore, ElementKind::SideBranch(s)) => set_bore(&mut s.tube, value, fluid)?,
            (Parameter::Bore, ElementKind::ExpansionChamber(c)) => {
                set_bore(&mut c.tube, value, fluid)?;
                check_chamber(c)?;
            }
            (Parameter::InletExtension, ElementKind::ExpansionChamber(c)) if c.ports.is_some() => {
                if let Some(p) = c.ports.as_mut() {
                    p.inlet_extension_m = value;
                }
                check_chamber(c)?;
            }
            (Parameter::OutletExtension, ElementKind::ExpansionChamber(c)) if c.ports.is_some() => {
                if let Some(p) = c.ports.as_mut() {
                    p.outlet_extension_m = value;
                }
                check_chamber(c)?;
            }
            (Parameter::GasVolume, ElementKind::InlineDamper(d)) => d.vessel.gas_volume_m3 = value,
            (Parameter::Precharge, ElementKind::InlineDamper(d)) => {
                d.vessel.precharge_pa = value;
                if d.vessel.is_bottomed() {
                    return Err(format!(
                        "a precharge of {:.2} bar abs is above the operating pressure {:.2} bar abs: the damper would be bottomed (its gas out of the circuit)",
                        value / 1e5,
                        d.vessel.operating_pa / 1e5
                    ));
                }
            }
            (Parameter::Damping, ElementKind::ReliefValve(v)) => v.poppet.damping_n_s_m = value,
            (
                Parameter::Damping,
                ElementKind::CheckValve(crate::elements::CheckValve {
                    state: crate::elements::CheckState::Opening { poppet, .. },
                    ..
                }),
            ) => poppet.damping_n_s_m = value,
            (Parameter::Volume, ElementKind::Helmholtz(h)) => h.volume_m3 = value,
            (Parameter::NeckLength, ElementKind::Helmholtz(h)) => h.neck_length_m = value,
            (Parameter::NeckBore, ElementKind::Helmholtz(h)) => h.neck.radius_m = value / 2.0,
            (Parameter::GasVolume, ElementKind::Damper(d)) => d.gas_volume_m3 = value,
            (Parameter::Precharge, ElementKind::Damper(d)) => {
                d.precharge_pa = value;
                if d.is_bottomed() {
                    return Err(format!(
                        "a precharge of {:.2} bar abs is above the operating pressure {:.2} bar abs: the damper would be bottomed (its gas out of the circuit)",
                        value / 1e5,
                        d.operating_pa / 1e5
                    ));
                }
            }
            (Parameter::NeckLength, ElementKind::Damper(d)) => d.neck_length_m = value,
            (Parameter::NeckBore, ElementKind::Damper(d)) => d.neck.radius_m = value / 2.0,
            _ => {
                return Err(format!(
                    "a `{}` has no parameter `{}`",
                    kind.name(),
                    self.name()
                ));
            }
        }
        Ok(k)
    }
}

/// An expansion chamber's ports must be narrower than its shell and its
/// extended pipes must leave a gap between them.
fn check_chamber(c: &crate::elements::ExpansionChamber) -> Result<(), String> {
    let Some(p) = &c.ports else { return Ok(()) };
    if p.pipe.radius_m >= c.tube.line.properties.radius_m {
        return Err(format!(
            "a chamber bore of {:.2} mm is not larger than its ports' {:.2} mm",
            c.tube.bore_m() * 1e3,
            p.pipe.radius_m * 2e3
        ));
    }
    if p.inlet_extension_m + p.outlet_extension_m >= c.tube.line.length_m {
        return Err(format!(
            "extended pipes of {:.1} mm together fill a chamber {:.1} mm long",
            (p.inlet_extension_m + p.outlet_extension_m) * 1e3,
            c.tube.line.length_m * 1e3
        ));
    }
    Ok(())
}

/// A new bore for a tube, with its wall's compliance at that bore.
fn set_bore(tube: &mut crate::elements::Tube, bore_m: f64, fluid: &Fluid) -> Result<(), String> {
    if let crate::wall::Wall::Elastic { thickness_m, .. } = tube.wall
        && thickness_m >= bore_m / 2.0
    {
        return Err(format!(
            "a bore of {:.2} mm is not larger than twice the wall thickness",
            bore_m * 1e3
        ));
    }
    tube.line.properties.radius_m = bore_m / 2.0;
    tube.line.properties.effective_bulk_modulus_pa = tube
        .wall
        .effective_bulk_modulus(fluid.bulk_modulus_pa, bore_m);
    Ok(())
}

/// The range a parameter is searched over (SI, low < high, both positive).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Bound {
    /// The parameter.
    pub parameter: Parameter,
    /// Lower bound.
    pub low: f64,
    /// Upper bound.
    pub high: f64,
}

/// One operating speed the ripple is evaluated at (fluid temperatures are
/// given as circuit variants, [`TuneProblem::fluid_states`]).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Condition {
    /// Pump shaft speed in rev/s.
    pub speed_rev_s: f64,
}

/// `count` speeds spread evenly in log(speed) over `range` (rev/s); one
/// condition at the low end when `count` is 1 or the range is a single speed.
pub fn speed_conditions(range: (f64, f64), count: usize) -> Vec<Condition> {
    if count <= 1 || range.0 == range.1 {
        return vec![Condition {
            speed_rev_s: range.0,
        }];
    }
    let ratio = (range.1 / range.0).ln();
    (0..count)
        .map(|i| Condition {
            speed_rev_s: range.0 * (ratio * i as f64 / (count - 1) as f64).exp(),
        })
        .collect()
}

/// How the ripple over the conditions becomes one number.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Objective {
    /// The largest overall rms ripple over the speed range (refined
    /// between the conditions' speeds, [`super::worst`]).
    Worst,
    /// The rms over the conditions of the overall rms ripple.
    Rms,
}

impl Objective {
    /// The objective over per-condition overall rms ripples (Pa), as
    /// sampled (the worst is refined by [`RippleEvaluator::evaluate`]).
    pub fn over(self, per_condition_pa: &[f64]) -> f64 {
        match self {
            Objective::Worst => per_condition_pa.iter().copied().fold(0.0, f64::max),
            Objective::Rms => (per_condition_pa.iter().map(|p| p * p).sum::<f64>()
                / per_condition_pa.len().max(1) as f64)
                .sqrt(),
        }
    }

    /// How reports describe it.
    pub fn describe(self) -> &'static str {
        match self {
            Objective::Worst => "worst overall rms ripple over the speed range",
            Objective::Rms => "rms over the speeds of the overall rms ripple",
        }
    }
}

/// The ripple at a point over a set of conditions, for any variant of a
/// circuit (the pump and the point stay the same).
///
/// With [`Objective::Worst`] the conditions' speeds are only the start: the
/// worst speed is found between them to 0.01 dB by
/// [`super::worst::worst_speed`] (every resonance crossing refined), so the
/// objective is the true worst ripple over the speed range, the same
/// `sweep` and the envelope verdicts report.
#[derive(Debug, Clone)]
pub struct RippleEvaluator {
    pump_index: usize,
    point: TapLocation,
    objective: Objective,
    /// The pump, to set at any speed.
    pump: Pump,
    /// The harmonics with source flow.
    orders: Vec<u32>,
    /// The conditions' speeds (rev/s), increasing.
    speeds_rev_s: Vec<f64>,
    /// For each condition, the (frequency, source flow) of each order.
    excitations: Vec<Vec<(f64, C64)>>,
}

/// The ripple of one circuit variant (or of several, [`RippleSummary::combine`]).
#[derive(Debug, Clone, PartialEq)]
pub struct RippleSummary {
    /// The objective in Pa (rms).
    pub objective_pa: f64,
    /// Overall rms ripple at each condition, in Pa.
    pub per_condition_pa: Vec<f64>,
    /// With [`Objective::Worst`]: where the ripple is largest, as (fluid
    /// state, shaft speed in rev/s): the index of the circuit among those
    /// combined (0 for one), and the refined speed.
    pub worst: Option<(usize, f64)>,
}

impl RippleSummary {
    /// The summary over several circuit variants (fluid states), in order:
    /// the worst of their worst ripples, or the rms over all their
    /// conditions.
    pub fn combine(objective: Objective, parts: Vec<RippleSummary>) -> RippleSummary {
        let per_condition_pa: Vec<f64> = parts
            .iter()
            .flat_map(|s| s.per_condition_pa.iter().copied())
            .collect();
        match objective {
            Objective::Worst => {
                let (state, top) = parts.iter().enumerate().fold((0, &parts[0]), |b, (i, s)| {
                    if s.objective_pa > b.1.objective_pa {
                        (i, s)
                    } else {
                        b
                    }
                });
                RippleSummary {
                    objective_pa: top.objective_pa,
                    worst: top.worst.map(|(_, speed)| (state, speed)),
                    per_condition_pa,
                }
            }
            Objective::Rms => RippleSummary {
                objective_pa: objective.over(&per_condition_pa),
                per_condition_pa,
                worst: None,
            },
        }
    }
}

/// Why a ripple evaluation failed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum EvaluateError {
    /// The variant does not form a network.
    #[error(transparent)]
    Network(#[from] NetworkError),
    /// The network could not be solved.
    #[error(transparent)]
    Solve(#[from] SolveError),
    /// The worst-speed search met an undamped resonance: the ripple is
    /// unbounded at that speed.
    #[error("the ripple is unbounded at {:.2} rpm (an undamped resonance)", speed_rev_s * 60.0)]
    Unbounded {
        /// The shaft speed in rev/s.
        speed_rev_s: f64,
        /// The solver's failure there.
        #[source]
        source: SolveError,
    },
}

impl RippleEvaluator {
    /// Prepares the harmonic excitations of pump `pump_index` of `circuit`
    /// at each condition (harmonics 1..=`circuit.harmonics` that have
    /// source flow).
    ///
    /// # Panics
    /// If `pump_index` is out of range.
    pub fn new(
        circuit: &Circuit,
        pump_index: usize,
        point: TapLocation,
        conditions: &[Condition],
        objective: Objective,
    ) -> Self {
        let pump = circuit.pumps[pump_index].clone();
        let orders: Vec<u32> = (1..=circuit.harmonics)
            .filter(|&k| pump.flow_ripple(k) != C64::new(0.0, 0.0))
            .collect();
        let mut evaluator = RippleEvaluator {
            pump_index,
            point,
            objective,
            pump,
            orders,
            speeds_rev_s: conditions.iter().map(|c| c.speed_rev_s).collect(),
            excitations: Vec::new(),
        };
        let mut pump = evaluator.pump.clone();
        evaluator.excitations = evaluator
            .speeds_rev_s
            .iter()
            .map(|&n| {
                evaluator
                    .orders
                    .iter()
                    .map(|&k| excitation(&mut pump, k, n))
                    .collect()
            })
            .collect();
        evaluator
    }

    /// Number of network solves on the conditions' speeds per evaluation
    /// (the worst objective adds its refinement of the crossings).
    pub fn solves_per_evaluation(&self) -> usize {
        self.excitations.iter().map(Vec::len).sum()
    }

    /// The ripple of `circuit` (a variant of the one given to [`Self::new`]).
    ///
    /// # Errors
    /// [`EvaluateError`] when the variant cannot be compiled or solved
    /// (also when the worst-speed search meets an undamped resonance).
    pub fn evaluate(&self, circuit: &Circuit) -> Result<RippleSummary, EvaluateError> {
        self.evaluate_at(circuit, self.point)
    }

    /// The ripple of `circuit` at `point` (for a variant whose nodes or
    /// taps are numbered differently, e.g. at another envelope point).
    ///
    /// # Errors
    /// As [`Self::evaluate`].
    pub fn evaluate_at(
        &self,
        circuit: &Circuit,
        point: TapLocation,
    ) -> Result<RippleSummary, EvaluateError> {
        let plan = Plan::compile(circuit)?;
        let mut ws = plan.workspace();
        let node = circuit.pumps[self.pump_index].node;
        let mut phasors = Vec::with_capacity(self.solves_per_evaluation());
        let mut per_condition_pa = Vec::with_capacity(self.excitations.len());
        for harmonics in &self.excitations {
            let mut sum = 0.0;
            for &(f, q) in harmonics {
                let s = plan.solve(f, &[(node, q)], &mut ws)?;
                let p = tap_pressure(circuit, &s, point);
                sum += p.norm_sqr();
                phasors.push(p);
            }
            per_condition_pa.push((sum / 2.0).sqrt());
        }
        if self.objective == Objective::Rms || self.orders.is_empty() {
            return Ok(RippleSummary {
                objective_pa: self.objective.over(&per_condition_pa),
                per_condition_pa,
                worst: None,
            });
        }
        let grid = SpeedGrid {
            speeds_rev_s: &self.speeds_rev_s,
            orders: &self.orders,
            phasors: &phasors,
            other_ms_pa2: &[],
        };
        let mut pump = self.pump.clone();
        let worst = worst_speed(
            grid,
            Measure::Rms,
            &mut |o, n| {
                let (f, q) = excitation(&mut pump, self.orders[o], n);
                let s = plan.solve(f, &[(node, q)], &mut ws)?;
                Ok(tap_pressure(circuit, &s, point))
            },
            &WorstSettings::default(),
        )
        .map_err(|u| EvaluateError::Unbounded {
            speed_rev_s: u.speed_rev_s,
            source: u.error,
        })?;
        Ok(RippleSummary {
            objective_pa: worst.value_pa,
            per_condition_pa,
            worst: Some((0, worst.speed_rev_s)),
        })
    }
}

/// The (frequency, source flow) of harmonic `k` of `pump` at speed `n`.
fn excitation(pump: &mut Pump, k: u32, speed_rev_s: f64) -> (f64, C64) {
    pump.speed_rev_s = speed_rev_s;
    (
        f64::from(k) * pump.pumping_frequency_hz(),
        pump.flow_ripple(k),
    )
}

/// Why a search cannot run.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum TuneError {
    /// 0 or more than 3 parameters.
    #[error("vary 1 to 3 parameters, found {0}")]
    ParameterCount(usize),
    /// A parameter the element does not have.
    #[error("element `{element}` (a `{kind}`) has no parameter `{parameter}`; it has: {valid}")]
    NoSuchParameter {
        /// The element.
        element: String,
        /// Its kind.
        kind: &'static str,
        /// The parameter asked for.
        parameter: &'static str,
        /// The ones it has.
        valid: String,
    },
    /// The same parameter twice.
    #[error("parameter `{0}` is varied twice")]
    Repeated(&'static str),
    /// Bounds not positive or not increasing.
    #[error("the bounds of `{0}` must be positive and increasing (low < high)")]
    BadBounds(&'static str),
    /// A damper's precharge range reaches above its lowest operating
    /// pressure over the states tuned (the gas would not be compressed there:
    /// no valid damper).
    #[error(
        "the precharge bounds reach {high_bar:.3} bar abs, above the damper's lowest operating pressure of {operating_bar:.3} bar abs: a precharge must stay below the lowest operating pressure"
    )]
    PrechargeAboveOperating {
        /// The upper bound, bar absolute.
        high_bar: f64,
        /// The lowest operating pressure, bar absolute.
        operating_bar: f64,
    },
    /// The design as given cannot be evaluated.
    #[error("the circuit as given cannot be evaluated: {0}")]
    Baseline(String),
    /// The smallest-silencer objective on a kind without that size.
    #[error(
        "a `{kind}` has no {size} to minimise (length: side branches and expansion chambers; volume: those, resonators and dampers)"
    )]
    NoSize {
        /// The element's kind.
        kind: &'static str,
        /// The size asked for.
        size: &'static str,
    },
    /// The smallest-silencer objective without limits.
    #[error(
        "the smallest-silencer objective needs limits: give the circuit file a `limits` section"
    )]
    NoLimits,
    /// No candidate in the bounds could be evaluated.
    #[error("no design within the bounds gives a valid circuit: {0}")]
    NothingValid(String),
}

/// A search problem.
#[derive(Debug, Clone)]
pub struct TuneProblem<'c> {
    /// The circuit.
    pub circuit: &'c Circuit,
    /// Index of the element to size.
    pub element: usize,
    /// The parameters to vary and their bounds.
    pub bounds: Vec<Bound>,
    /// The ripple to minimise.
    pub evaluator: RippleEvaluator,
    /// The same circuit in other states: with the fluid at each
    /// temperature of a range, or at each point of an operating envelope
    /// (`io::CircuitFile::circuits`; empty: only `circuit`, at its own
    /// state). The element and the measurement point are found in each by
    /// name (a load case may renumber or cut off parts). When given, the
    /// ripple is evaluated on these variants only, at every speed each, in
    /// this order; the element's design is applied to each.
    pub fluid_states: Vec<Circuit>,
}

/// How much effort the search spends.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SearchSettings {
    /// Samples of the global stage.
    pub global_points: usize,
    /// How many separated good samples are refined.
    pub refine_starts: usize,
    /// Evaluation budget of each local refinement.
    pub local_evaluations: usize,
}

impl SearchSettings {
    /// Defaults for `dims` parameters: 120, 600 or 1500 global samples, three
    /// refinements of up to 42 (one parameter: 40 golden-section steps shrink
    /// the bracket by 4e-9) or 300 evaluations.
    pub fn for_dims(dims: usize) -> Self {
        SearchSettings {
            global_points: match dims {
                1 => 120,
                2 => 600,
                _ => 1500,
            },
            refine_starts: 3,
            local_evaluations: if dims == 1 { 42 } else { 300 },
        }
    }

    /// The most evaluations a search can make (for a progress bar).
    pub fn budget(&self) -> usize {
        self.global_points + self.refine_starts * (self.local_evaluations + 4)
    }
}

/// Ripple lost when one parameter is off its best value.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Steepness {
    /// The parameter.
    pub parameter: Parameter,
    /// 20 log10(ripple at 0.9 × best / ripple at best), in dB; `None` when
    /// that design is not physical or cannot be solved.
    pub minus_10_percent_db: Option<f64>,
    /// The same at 1.1 × best.
    pub plus_10_percent_db: Option<f64>,
}

/// One design the search evaluated.
#[derive(Debug, Clone, PartialEq)]
pub struct Design {
    /// The varied parameters' values (SI), in the order of the bounds.
    pub values: Vec<f64>,
    /// Its objective in Pa; `None` when the design is not valid (not
    /// physical, not solvable, or breaking a hard rule), and with the
    /// smallest-silencer objective (which looks at the limits instead).
    pub objective_pa: Option<f64>,
    /// Smallest-silencer objective: its size (SI, see
    /// [`super::tune_limits::SizeMeasure`]).
    pub size: Option<f64>,
    /// Smallest-silencer objective: its margin to the tightest limit, dB.
    pub margin_db: Option<f64>,
    /// Whether it keeps every practical rule.
    pub keeps_rules: bool,
    /// The search stage: `global` or `local`.
    pub stage: &'static str,
}

/// Two parameters the objective cannot separate near the optimum (or one
/// it hardly depends on), from the local sensitivity of the ripple at
/// every condition: with J_i = ∂ln P/∂ln x_i over the conditions (central
/// differences at ±10 %), columns nearly parallel (|cos| ≥ 0.995) mean the
/// ripple follows only the combination x_first·x_second^exponent.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Degeneracy {
    /// The first parameter.
    pub first: Parameter,
    /// The second (`None`: the ripple hardly depends on `first` at all,
    /// |J| under 1 % of the largest).
    pub second: Option<Parameter>,
    /// cos of the angle between their sensitivity columns.
    pub correlation: f64,
    /// a in x_first·x_second^a, a = J_first·J_second/|J_first|².
    pub exponent: f64,
}

/// Parallel columns: |cos| at least this.
const DEGENERATE_COS: f64 = 0.995;

/// The outcome of a search.
#[derive(Debug, Clone, PartialEq)]
pub struct TuneResult {
    /// Best value of each varied parameter (SI), in the order of the bounds.
    pub best: Vec<f64>,
    /// The element with the best design.
    pub element: ElementKind,
    /// The ripple with the element as given in the circuit.
    pub before: RippleSummary,
    /// The ripple with the best design.
    pub after: RippleSummary,
    /// How steep the optimum is.
    pub steepness: Vec<Steepness>,
    /// Number of ripple evaluations made.
    pub evaluations: usize,
    /// Every design evaluated, in order.
    pub designs: Vec<Design>,
    /// The practical rules applied to the best design.
    pub rule_checks: Vec<RuleCheck>,
    /// The practical rules' context (lowest operating pressure, mean flow).
    pub rule_context: RuleContext,
    /// Parameters the objective cannot separate near the optimum.
    pub degeneracies: Vec<Degeneracy>,
    /// Smallest-silencer objective: the best design's tightest limit
    /// (`None` without that objective, or when no limited point has
    /// ripple); a negative margin means no design in the bounds meets the
    /// limits and this is the nearest.
    pub tightest: Option<Tightest>,
    /// The same for the design as in the file.
    pub tightest_before: Option<Tightest>,
}

/// What one design scored in the search.
struct Score {
    cost: f64,
    objective_pa: Option<f64>,
    size: Option<f64>,
    margin_db: Option<f64>,
}

impl TuneProblem<'_> {
    /// Checks the parameters against the element.
    ///
    /// # Errors
    /// [`TuneError`] for a wrong count, an unknown or repeated parameter, or
    /// bad bounds.
    pub fn validate(&self) -> Result<(), TuneError> {
        let n = self.bounds.len();
        if !(1..=3).contains(&n) {
            return Err(TuneError::ParameterCount(n));
        }
        let e = &self.circuit.elements[self.element];
        let valid = Parameter::for_kind(&e.kind);
        for (i, b) in self.bounds.iter().enumerate() {
            if !valid.contains(&b.parameter) {
                return Err(TuneError::NoSuchParameter {
                    element: e.name.clone(),
                    kind: e.kind.name(),
                    parameter: b.parameter.name(),
                    valid: if valid.is_empty() {
                        "none (only silencers can be tuned)".into()
                    } else {
                        valid
                            .iter()
                            .map(|p| p.name())
                            .collect::<Vec<_>>()
                            .join(", ")
                    },
                });
            }
            if self.bounds[..i].iter().any(|o| o.parameter == b.parameter) {
                return Err(TuneError::Repeated(b.parameter.name()));
            }
            if !(b.low > 0.0 && b.high > b.low && b.high.is_finite()) {
                return Err(TuneError::BadBounds(b.parameter.name()));
            }
            if let (Parameter::Precharge, Some(lowest)) = (b.parameter, self.lowest_operating_pa())
                && b.high > lowest
            {
                return Err(TuneError::PrechargeAboveOperating {
                    high_bar: b.high / 1e5,
                    operating_bar: lowest / 1e5,
                });
            }
        }
        Ok(())
    }

    /// The lowest operating pressure (absolute, Pa) of the element's gas
    /// over the states evaluated (a damper only).
    pub fn lowest_operating_pa(&self) -> Option<f64> {
        let name = &self.circuit.elements[self.element].name;
        self.states()
            .into_iter()
            .filter_map(|c| {
                let i = c.element_id(name)?;
                match &c.elements[i].kind {
                    ElementKind::Damper(d) => Some(d.operating_pa),
                    ElementKind::InlineDamper(d) => Some(d.vessel.operating_pa),
                    _ => None,
                }
            })
            .reduce(f64::min)
    }

    /// What the practical rules need: the lowest operating pressure and the
    /// largest mean flow through the element over the states, scaled from
    /// the pump's speed to the top of the speed range (a displacement
    /// pump's mean flow follows its speed).
    pub fn rule_context(&self) -> RuleContext {
        let name = &self.circuit.elements[self.element].name;
        let top = self.evaluator.speeds_rev_s.last().copied().unwrap_or(0.0);
        let scale = if self.evaluator.pump.speed_rev_s > 0.0 {
            (top / self.evaluator.pump.speed_rev_s).max(1.0)
        } else {
            1.0
        };
        let mean_flow_m3_s = self
            .states()
            .into_iter()
            .filter_map(|c| {
                let i = c.element_id(name)?;
                crate::meanflow::mean_flows(c).element_flows_m3_s[i]
            })
            .map(f64::abs)
            .fold(0.0, f64::max)
            * scale;
        RuleContext {
            lowest_operating_pa: self.lowest_operating_pa(),
            mean_flow_m3_s,
        }
    }

    /// The element with the given parameter values.
    fn element_with(&self, values: &[f64]) -> Result<ElementKind, String> {
        let mut kind = self.circuit.elements[self.element].kind.clone();
        for (b, &v) in self.bounds.iter().zip(values) {
            kind = b.parameter.apply(&kind, v, &self.circuit.fluid)?;
        }
        Ok(kind)
    }

    /// The circuits the ripple is evaluated on.
    fn states(&self) -> Vec<&Circuit> {
        if self.fluid_states.is_empty() {
            vec![self.circuit]
        } else {
            self.fluid_states.iter().collect()
        }
    }

    /// The ripple over every state and speed of circuits built by `variant`
    /// from each state. A state is matched to the circuit by names: the
    /// measurement point is found in it by its name (a load case that cuts
    /// it off leaves it no ripple there).
    fn evaluate_states(
        &self,
        variant: impl Fn(&Circuit) -> Result<Circuit, String>,
    ) -> Result<RippleSummary, String> {
        let points = report_points(self.circuit);
        let name = points
            .iter()
            .find(|t| t.location == self.evaluator.point)
            .map(|t| t.name.clone());
        let mut parts = Vec::new();
        for state in self.states() {
            let circuit = variant(state)?;
            let location = match &name {
                None => Some(self.evaluator.point),
                Some(n) => report_points(&circuit)
                    .into_iter()
                    .find(|t| &t.name == n)
                    .map(|t| t.location),
            };
            parts.push(match location {
                Some(at) => self
                    .evaluator
                    .evaluate_at(&circuit, at)
                    .map_err(|e| e.to_string())?,
                None => RippleSummary {
                    objective_pa: 0.0,
                    per_condition_pa: vec![0.0; self.evaluator.speeds_rev_s.len()],
                    worst: None,
                },
            });
        }
        Ok(RippleSummary::combine(self.evaluator.objective, parts))
    }

    /// `state` with the element rebuilt from `values` (unchanged when a
    /// load case cut the element off).
    fn variant(&self, state: &Circuit, values: &[f64]) -> Result<Circuit, String> {
        let name = &self.circuit.elements[self.element].name;
        let mut circuit = state.clone();
        if let Some(i) = state.element_id(name) {
            let mut kind = state.elements[i].kind.clone();
            for (b, &v) in self.bounds.iter().zip(values) {
                kind = b.parameter.apply(&kind, v, &state.fluid)?;
            }
            circuit.elements[i].kind = kind;
        }
        Ok(circuit)
    }

    /// The ripple with the element rebuilt from `values` (in every state
    /// that has it: a load case may cut the element off).
    fn evaluate_values(&self, values: &[f64]) -> Result<RippleSummary, String> {
        self.evaluate_states(|state| self.variant(state, values))
    }

    /// The tightest limit of the design `values` (`None`: as in the file)
    /// over every state.
    fn tightest(
        &self,
        values: Option<&[f64]>,
        goal: &LimitGoal,
    ) -> Result<Option<Tightest>, String> {
        let circuits = self
            .states()
            .into_iter()
            .map(|s| match values {
                Some(v) => self.variant(s, v),
                None => Ok(s.clone()),
            })
            .collect::<Result<Vec<_>, _>>()?;
        let refs: Vec<&Circuit> = circuits.iter().collect();
        tightest_limit(&refs, goal, &self.evaluator.speeds_rev_s)
    }

    fn values_at(&self, u: &[f64]) -> Vec<f64> {
        self.bounds
            .iter()
            .zip(u)
            .map(|(b, &u)| b.low * (b.high / b.low).powf(u.clamp(0.0, 1.0)))
            .collect()
    }

    /// Runs the search. `progress` is called after each evaluation with the
    /// number done so far.
    ///
    /// # Errors
    /// [`TuneError`] when the problem is invalid, the circuit as given
    /// cannot be evaluated, or no candidate is valid.
    pub fn solve(
        &self,
        settings: SearchSettings,
        progress: &mut dyn FnMut(usize),
    ) -> Result<TuneResult, TuneError> {
        self.solve_with_rules(settings, &Rules::default(), progress)
    }

    /// Runs the search with practical rules: each design is checked against
    /// them; with hard rules a design that breaks one counts as invalid,
    /// otherwise the best design's checks are reported.
    ///
    /// # Errors
    /// As [`Self::solve`].
    pub fn solve_with_rules(
        &self,
        settings: SearchSettings,
        rules: &Rules,
        progress: &mut dyn FnMut(usize),
    ) -> Result<TuneResult, TuneError> {
        self.run(settings, rules, None, progress)
    }

    /// Searches for the smallest design that meets every limit of `goal`
    /// over the states ([`super::tune_limits`]); the result's `tightest`
    /// says how near the best design is to its tightest limit (negative
    /// margin: no design in the bounds meets them).
    ///
    /// # Errors
    /// As [`Self::solve`], and [`TuneError::NoSize`] / [`TuneError::NoLimits`].
    pub fn solve_smallest(
        &self,
        settings: SearchSettings,
        rules: &Rules,
        goal: &LimitGoal,
        progress: &mut dyn FnMut(usize),
    ) -> Result<TuneResult, TuneError> {
        if goal.limits.iter().all(|t| t.limits.is_empty()) {
            return Err(TuneError::NoLimits);
        }
        let kind = &self.circuit.elements[self.element].kind;
        if goal.size.of(kind).is_none() {
            return Err(TuneError::NoSize {
                kind: kind.name(),
                size: goal.size.name(),
            });
        }
        self.run(settings, rules, Some(goal), progress)
    }

    fn run(
        &self,
        settings: SearchSettings,
        rules: &Rules,
        goal: Option<&LimitGoal>,
        progress: &mut dyn FnMut(usize),
    ) -> Result<TuneResult, TuneError> {
        self.validate()?;
        // sizes are scaled by the largest at the bounds' corners
        let scale = goal.map_or(1.0, |g| {
            let ends = [
                self.bounds.iter().map(|b| b.low).collect::<Vec<_>>(),
                self.bounds.iter().map(|b| b.high).collect(),
            ];
            ends.iter()
                .filter_map(|v| self.element_with(v).ok())
                .filter_map(|k| g.size.of(&k))
                .fold(0.0, f64::max)
                .max(f64::MIN_POSITIVE)
        });
        let score = |values: &[f64]| -> Result<Score, String> {
            match goal {
                None => self.evaluate_values(values).map(|s| Score {
                    cost: s.objective_pa,
                    objective_pa: Some(s.objective_pa),
                    size: None,
                    margin_db: None,
                }),
                Some(g) => {
                    let kind = self.element_with(values)?;
                    let size = g.size.of(&kind).unwrap_or(f64::INFINITY);
                    let t = self.tightest(Some(values), g)?;
                    Ok(Score {
                        cost: super::tune_limits::cost(size, scale, t.as_ref()),
                        objective_pa: None,
                        size: Some(size),
                        margin_db: t.map(|t| t.margin_db),
                    })
                }
            }
        };
        let before = self
            .evaluate_states(|state| Ok(state.clone()))
            .map_err(TuneError::Baseline)?;
        let dims = self.bounds.len();
        let context = self.rule_context();
        // One design scored, with nothing shared changed: the global stage
        // runs it in parallel, the local stage one at a time.
        let design_at = |u: &[f64], stage: &'static str| -> (Design, f64, Option<String>) {
            let values = self.values_at(u);
            let keeps_rules = self
                .element_with(&values)
                .map(|k| rules.check(&k, &context).iter().all(|c| c.pass))
                .unwrap_or(true);
            let (scored, error) = if rules.hard && !keeps_rules {
                (
                    None,
                    Some("every design tried breaks a practical rule".to_string()),
                )
            } else {
                match score(&values) {
                    Ok(s) => (Some(s), None),
                    Err(e) => (None, Some(e)),
                }
            };
            let cost = scored.as_ref().map_or(f64::INFINITY, |s| s.cost);
            let design = Design {
                values,
                objective_pa: scored.as_ref().and_then(|s| s.objective_pa),
                size: scored.as_ref().and_then(|s| s.size),
                margin_db: scored.as_ref().and_then(|s| s.margin_db),
                keeps_rules,
                stage,
            };
            (design, cost, error)
        };
        let mut last_error = String::new();
        let mut designs: Vec<Design> = Vec::new();
        let mut costs: Vec<f64> = Vec::new();
        let mut record = |(design, cost, error): (Design, f64, Option<String>)| -> f64 {
            if let Some(e) = error {
                last_error = e;
            }
            designs.push(design);
            costs.push(cost);
            cost
        };

        // Global stage: every candidate compiled and solved on its own, in
        // parallel, collected in order.
        let samples: Vec<Vec<f64>> = if dims == 1 {
            let n = settings.global_points.max(3);
            (0..n).map(|i| vec![i as f64 / (n - 1) as f64]).collect()
        } else {
            (1..=settings.global_points)
                .map(|i| halton(i, dims))
                .collect()
        };
        let evaluated = crate::parallel::ordered_map(
            &samples,
            true,
            || (),
            |_, u| Ok::<_, std::convert::Infallible>(design_at(u, "global")),
            progress,
        )
        .unwrap_or_else(|never| match never {});
        let mut count = samples.len();
        let values: Vec<f64> = evaluated.into_iter().map(&mut record).collect();
        // Local stage: one design at a time.
        let mut cost = |u: &[f64]| -> f64 {
            count += 1;
            progress(count);
            record(design_at(u, "local"))
        };

        // Starts for the local stage.
        let mut order: Vec<usize> = (0..samples.len())
            .filter(|&i| values[i].is_finite())
            .collect();
        order.sort_by(|&a, &b| values[a].total_cmp(&values[b]));
        let mut best_u: Option<(Vec<f64>, f64)> =
            order.first().map(|&i| (samples[i].clone(), values[i]));
        if dims == 1 {
            // Local minima of the grid, best first.
            let n = samples.len();
            let minima: Vec<usize> = order
                .iter()
                .copied()
                .filter(|&i| {
                    (i == 0 || values[i] <= values[i - 1])
                        && (i + 1 == n || values[i] <= values[i + 1])
                })
                .take(settings.refine_starts)
                .collect();
            for i in minima {
                let a = samples[i.saturating_sub(1)][0];
                let b = samples[(i + 1).min(n - 1)][0];
                let (u, neg) = golden_section_max(
                    |u| -cost(&[u]),
                    a,
                    b,
                    settings.local_evaluations.saturating_sub(2),
                );
                if -neg < best_u.as_ref().map_or(f64::INFINITY, |b| b.1) {
                    best_u = Some((vec![u], -neg));
                }
            }
        } else {
            let mut starts: Vec<usize> = Vec::new();
            for &i in &order {
                let far = starts.iter().all(|&j| {
                    samples[i]
                        .iter()
                        .zip(&samples[j])
                        .map(|(a, b)| (a - b).abs())
                        .fold(0.0, f64::max)
                        > 0.15
                });
                if far {
                    starts.push(i);
                }
                if starts.len() == settings.refine_starts {
                    break;
                }
            }
            let step = (1.0 / (settings.global_points as f64).powf(1.0 / dims as f64)).min(0.2);
            for i in starts {
                let (u, v) = nelder_mead_in_box(
                    &mut cost,
                    &samples[i],
                    step,
                    1e-7,
                    settings.local_evaluations,
                );
                if v < best_u.as_ref().map_or(f64::INFINITY, |b| b.1) {
                    best_u = Some((u, v));
                }
            }
        }
        let Some((u, _)) = best_u else {
            return Err(TuneError::NothingValid(last_error));
        };
        let mut best = self.values_at(&u);
        // the limits objective: the best design evaluated (the search's
        // last step may sit just across the edge of the region that meets
        // the limits)
        if goal.is_some()
            && let Some(i) = (0..costs.len())
                .filter(|&i| costs[i].is_finite())
                .min_by(|&a, &b| costs[a].total_cmp(&costs[b]))
        {
            best = designs[i].values.clone();
        }
        let tightest = goal
            .map(|g| self.tightest(Some(&best), g))
            .transpose()
            .map_err(TuneError::NothingValid)?
            .flatten();
        let tightest_before = goal
            .map(|g| self.tightest(None, g))
            .transpose()
            .map_err(TuneError::Baseline)?
            .flatten();
        let after = self
            .evaluate_values(&best)
            .map_err(TuneError::NothingValid)?;
        let element = self.element_with(&best).map_err(TuneError::NothingValid)?;
        // each parameter 10 % off: the steepness, and the sensitivity of
        // the ripple at every condition for the degeneracy check
        let off: Vec<(Option<RippleSummary>, Option<RippleSummary>)> = (0..dims)
            .map(|i| {
                let at = |factor: f64| {
                    let mut v = best.clone();
                    v[i] *= factor;
                    self.evaluate_values(&v).ok()
                };
                (at(0.9), at(1.1))
            })
            .collect();
        let loss = |s: &Option<RippleSummary>| {
            s.as_ref()
                .map(|s| 20.0 * (s.objective_pa / after.objective_pa).log10())
                .filter(|db| db.is_finite())
        };
        let steepness = off
            .iter()
            .enumerate()
            .map(|(i, (minus, plus))| Steepness {
                parameter: self.bounds[i].parameter,
                minus_10_percent_db: loss(minus),
                plus_10_percent_db: loss(plus),
            })
            .collect();
        let degeneracies = degeneracies(
            &self.bounds.iter().map(|b| b.parameter).collect::<Vec<_>>(),
            &off,
        );
        let rule_checks = rules.check(&element, &context);
        Ok(TuneResult {
            best,
            element,
            before,
            after,
            steepness,
            evaluations: count,
            designs,
            rule_checks,
            rule_context: context,
            degeneracies,
            tightest,
            tightest_before,
        })
    }
}

/// The sensitivity columns J_i = ∂ln P/∂ln x_i at every condition, by
/// central differences between 0.9 and 1.1 × the best value, and the pairs
/// (or single parameters) the ripple cannot separate ([`Degeneracy`]).
/// Conditions without ripple on either side are left out.
fn degeneracies(
    parameters: &[Parameter],
    off: &[(Option<RippleSummary>, Option<RippleSummary>)],
) -> Vec<Degeneracy> {
    if parameters.len() < 2 {
        return Vec::new();
    }
    let step = (1.1f64 / 0.9).ln();
    let columns: Vec<Option<Vec<f64>>> = off
        .iter()
        .map(|pair| match pair {
            (Some(m), Some(p)) => Some(
                m.per_condition_pa
                    .iter()
                    .zip(&p.per_condition_pa)
                    .map(|(&a, &b)| {
                        if a > 0.0 && b > 0.0 {
                            (b / a).ln() / step
                        } else {
                            0.0
                        }
                    })
                    .collect(),
            ),
            _ => None,
        })
        .collect();
    let norm = |v: &[f64]| v.iter().map(|x| x * x).sum::<f64>().sqrt();
    let largest = columns
        .iter()
        .flatten()
        .map(|c| norm(c))
        .fold(0.0, f64::max);
    if largest <= 0.0 {
        return Vec::new();
    }
    let mut out = Vec::new();
    for (i, ci) in columns.iter().enumerate() {
        let Some(ci) = ci else { continue };
        let ni = norm(ci);
        if ni < 0.01 * largest {
            out.push(Degeneracy {
                first: parameters[i],
                second: None,
                correlation: 0.0,
                exponent: 0.0,
            });
            continue;
        }
        for (j, cj) in columns.iter().enumerate().skip(i + 1) {
            let Some(cj) = cj else { continue };
            let nj = norm(cj);
            if nj < 0.01 * largest {
                continue;
            }
            let dot: f64 = ci.iter().zip(cj).map(|(a, b)| a * b).sum();
            let cos = dot / (ni * nj);
            if cos.abs() >= DEGENERATE_COS {
                out.push(Degeneracy {
                    first: parameters[i],
                    second: Some(parameters[j]),
                    correlation: cos,
                    exponent: dot / (ni * ni),
                });
            }
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    fn summary(per_condition_pa: Vec<f64>) -> Option<RippleSummary> {
        Some(RippleSummary {
            objective_pa: per_condition_pa.iter().copied().fold(0.0, f64::max),
            per_condition_pa,
            worst: None,
        })
    }

    #[test]
    fn a_product_of_two_parameters_is_degenerate_and_an_unused_one_named() {
        // P = (a·b)^-2 at three conditions of different weights; c unused
        let p = |a: f64, b: f64, k: f64| k * (a * b).powi(-2);
        let at = |a: f64, b: f64| summary(vec![p(a, b, 1.0), p(a, b, 2.0), p(a, b, 3.0)]);
        let off = vec![
            (at(0.9, 1.0), at(1.1, 1.0)),
            (at(1.0, 0.9), at(1.0, 1.1)),
            (at(1.0, 1.0), at(1.0, 1.0)),
        ];
        let d = degeneracies(
            &[
                Parameter::GasVolume,
                Parameter::Precharge,
                Parameter::NeckLength,
            ],
            &off,
        );
        assert_eq!(d.len(), 2, "{d:?}");
        assert_eq!(d[0].second, Some(Parameter::Precharge));
        assert!((d[0].correlation - 1.0).abs() < 1e-12);
        assert!((d[0].exponent - 1.0).abs() < 1e-12);
        assert_eq!((d[1].first, d[1].second), (Parameter::NeckLength, None));
        // independent parameters (different shapes over the conditions)
        let q = |a: f64, b: f64| summary(vec![a, b, a * b]);
        let off = vec![(q(0.9, 1.0), q(1.1, 1.0)), (q(1.0, 0.9), q(1.0, 1.1))];
        assert!(degeneracies(&[Parameter::GasVolume, Parameter::NeckLength], &off).is_empty());
    }

    #[test]
    fn parameter_names_round_trip() {
        for p in Parameter::ALL {
            assert_eq!(Parameter::from_name(p.name()), Some(p));
        }
        assert_eq!(Parameter::from_name("colour"), None);
    }

    #[test]
    fn speeds_are_log_spaced_and_include_the_ends() {
        let c = speed_conditions((10.0, 40.0), 3);
        assert_eq!(c.len(), 3);
        assert!((c[0].speed_rev_s - 10.0).abs() < 1e-12);
        assert!((c[1].speed_rev_s - 20.0).abs() < 1e-12);
        assert!((c[2].speed_rev_s - 40.0).abs() < 1e-12);
        assert_eq!(speed_conditions((25.0, 25.0), 9).len(), 1);
    }
}
