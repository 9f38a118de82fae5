//! Uncertainty of predictions: values of a circuit with tolerances (and a
//! pump source file's uncertainties) propagated to the ripple, by Monte
//! Carlo (JCGM 101:2008, GUM Supplement 1: [`monte_carlo`]) and to first
//! order (JCGM 100:2008, the GUM's law of propagation of uncertainty:
//! [`linear`]).
//!
//! The uncertain inputs ([`Inputs`]) are
//! * every value of the circuit file written with a tolerance (`1.55 GPa ±
//!   5 %`: limits, a rectangular distribution; `0.2 L, u = 0.02 L`: a
//!   standard uncertainty, a normal distribution; see `io::quantity`);
//! * the standard uncertainties of |Qs| and |Zs| per harmonic in a pump's
//!   source file (`flow_uncertainty`, `impedance_uncertainty`), each a
//!   normal distribution of the amplitude with the phase kept (the file
//!   states the uncertainty of the amplitude only).
//!
//! The inputs are taken as independent. A draw writes the drawn values into
//! the circuit file (`io::CircuitTemplate`), so everything derived from them
//! follows as for a file written with those values, and perturbs the pumps'
//! source tables.

pub mod bands;
pub mod linear;
pub mod monte_carlo;
pub mod stats;

use crate::Circuit;
use crate::envelope::OperatingPoint;
use crate::estimate::rng::Rng;
use crate::io::quantity::Spread;
use crate::io::{CircuitTemplate, InputError, Setting, Target};
use crate::source::{FlowRipple, SourceImpedance};
use serde::Serialize;

/// Where an uncertain input acts.
#[derive(Debug, Clone, PartialEq)]
pub enum Acts {
    /// A value of the circuit file.
    Value(Target),
    /// |Qs| of a harmonic of a pump given by a source file.
    SourceFlow {
        /// The pump (index in the circuit).
        pump: usize,
        /// The harmonic.
        order: u32,
    },
    /// |Zs| of a harmonic of a pump given by a source file.
    SourceImpedance {
        /// The pump.
        pump: usize,
        /// The harmonic.
        order: u32,
    },
}

/// One uncertain input.
#[derive(Debug, Clone, PartialEq)]
pub struct Input {
    /// Its name (`fluid.bulk_modulus`, `pump |Qs| harmonic 2`).
    pub name: String,
    /// The unit of its numbers (as written; empty: SI).
    pub unit: String,
    /// Its value.
    pub nominal: f64,
    /// Its distribution.
    pub spread: Spread,
    /// Half-width of the limits, or the standard uncertainty.
    pub amount: f64,
    /// Where it acts.
    pub acts: Acts,
}

impl Input {
    /// Its standard uncertainty.
    pub fn standard_uncertainty(&self) -> f64 {
        match self.spread {
            Spread::Limits => self.amount / 3f64.sqrt(),
            Spread::Standard => self.amount,
        }
    }

    /// A value drawn from its distribution.
    pub fn draw(&self, rng: &mut Rng) -> f64 {
        match self.spread {
            Spread::Limits => self.nominal + self.amount * (2.0 * rng.uniform() - 1.0),
            Spread::Standard => self.nominal + self.amount * rng.normal(),
        }
    }
}

/// An uncertain input as reported.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct InputSummary {
    /// Its name.
    pub name: String,
    /// The unit of the numbers.
    pub unit: String,
    /// Its value.
    pub nominal: f64,
    /// `limits` (rectangular) or `standard` (normal).
    pub spread: Spread,
    /// Half-width of the limits, or the standard uncertainty.
    pub amount: f64,
    /// Its standard uncertainty.
    pub standard_uncertainty: f64,
}

/// The uncertain inputs of a circuit and how to evaluate it with any values
/// of them.
#[derive(Debug, Clone)]
pub struct Inputs {
    /// The inputs.
    pub inputs: Vec<Input>,
}

/// Most uncertain inputs.
pub const MAX_INPUTS: usize = 200;

impl Inputs {
    /// The uncertain inputs of the circuit file: its tolerances and its
    /// pumps' source-file uncertainties.
    ///
    /// # Errors
    /// [`InputError`] for a tolerance where none is used (the envelope), a
    /// source file that cannot be read again, or more than [`MAX_INPUTS`]
    /// inputs.
    pub fn of(template: &CircuitTemplate) -> Result<Self, InputError> {
        let mut inputs: Vec<Input> = template
            .uncertain()?
            .into_iter()
            .filter_map(|u| {
                let t = u.target.written.tolerance?;
                Some(Input {
                    name: u.target.name.clone(),
                    unit: u.target.written.unit.clone(),
                    nominal: u.target.written.number,
                    spread: t.spread,
                    amount: t.amount,
                    acts: Acts::Value(u.target),
                })
            })
            .collect();
        for (pump, name, path) in template.source_files() {
            let src = crate::io::source_file::load_source_file(&path)?;
            // One condition: |Qs| and |Zs| as written. A map: a factor on
            // each harmonic's |Qs| (|Zs|) over the whole map, nominal 1,
            // with the largest relative uncertainty of its conditions
            // (conservative where the conditions differ). An amplitude of
            // zero has no relative uncertainty and is left.
            let single = src.conditions.len() == 1;
            let orders: Vec<u32> = src.conditions[0]
                .harmonics
                .iter()
                .map(|h| h.order)
                .collect();
            for (j, &order) in orders.iter().enumerate() {
                let mut add =
                    |what: &str, unit: &str, values: Vec<(f64, Option<f64>)>, flow: bool| {
                        let acts = if flow {
                            Acts::SourceFlow { pump, order }
                        } else {
                            Acts::SourceImpedance { pump, order }
                        };
                        let relative = values
                            .iter()
                            .filter(|(x, _)| *x > 0.0)
                            .filter_map(|(x, u)| u.filter(|u| *u > 0.0).map(|u| u / x))
                            .fold(None, |m: Option<f64>, r| Some(m.map_or(r, |m| m.max(r))));
                        let Some(relative) = relative else { return };
                        inputs.push(if single {
                            Input {
                                name: format!("{name} {what} harmonic {order}"),
                                unit: unit.into(),
                                nominal: values[0].0,
                                spread: Spread::Standard,
                                amount: values[0].1.unwrap_or(0.0),
                                acts,
                            }
                        } else {
                            Input {
                                name: format!(
                                    "{name} {what} harmonic {order} (factor over the source map)"
                                ),
                                unit: String::new(),
                                nominal: 1.0,
                                spread: Spread::Standard,
                                amount: relative,
                                acts,
                            }
                        });
                    };
                let of =
                    |f: &dyn Fn(&crate::io::source_file::SourceHarmonic) -> (f64, Option<f64>)| {
                        src.conditions
                            .iter()
                            .map(|c| f(&c.harmonics[j]))
                            .collect::<Vec<_>>()
                    };
                add(
                    "|Qs|",
                    "m³/s",
                    of(&|h| (h.flow.norm(), h.flow_uncertainty)),
                    true,
                );
                add(
                    "|Zs|",
                    "Pa·s/m³",
                    of(&|h| (h.impedance.norm(), h.impedance_uncertainty)),
                    false,
                );
            }
        }
        if inputs.len() > MAX_INPUTS {
            return Err(InputError::located(
                template.file(),
                template.text(),
                &crate::io::locate::KeyPath::root(),
                format!(
                    "{} uncertain values: at most {MAX_INPUTS} are propagated",
                    inputs.len()
                ),
            ));
        }
        Ok(Inputs { inputs })
    }

    /// Whether there is nothing uncertain.
    pub fn is_empty(&self) -> bool {
        self.inputs.is_empty()
    }

    /// The inputs as reported.
    pub fn summary(&self) -> Vec<InputSummary> {
        self.inputs
            .iter()
            .map(|i| InputSummary {
                name: i.name.clone(),
                unit: i.unit.clone(),
                nominal: i.nominal,
                spread: i.spread,
                amount: i.amount,
                standard_uncertainty: i.standard_uncertainty(),
            })
            .collect()
    }

    /// The nominal values.
    pub fn nominal(&self) -> Vec<f64> {
        self.inputs.iter().map(|i| i.nominal).collect()
    }

    /// The circuit at `point` with every input at `values` (in input
    /// order); `why` says what the values are, for messages.
    ///
    /// # Errors
    /// [`InputError`] when the circuit is not valid with these values (the
    /// message names them and `why`).
    pub fn circuit(
        &self,
        template: &CircuitTemplate,
        point: &OperatingPoint,
        values: &[f64],
        why: &str,
    ) -> Result<Circuit, InputError> {
        let settings: Vec<Setting> = self
            .inputs
            .iter()
            .zip(values)
            .filter(|(i, v)| **v != i.nominal)
            .filter_map(|(i, &v)| match &i.acts {
                Acts::Value(t) => Some(t.setting(v, why)),
                _ => None,
            })
            .collect();
        let mut circuit = template.circuit(point, &settings)?;
        // Source-file values: a factor on the map's |Qs| or |Zs| of the
        // harmonic (a negative draw of an amplitude is its reflection).
        for (input, &v) in self.inputs.iter().zip(values) {
            if v == input.nominal || input.nominal == 0.0 {
                continue;
            }
            let factor = v.abs() / input.nominal;
            match input.acts {
                Acts::SourceFlow { pump, order } => {
                    if let FlowRipple::Map(m) = &mut circuit.pumps[pump].flow_ripple {
                        m.scale_flow(order, factor);
                    }
                }
                Acts::SourceImpedance { pump, order } => {
                    if let SourceImpedance::Map(m) = &mut circuit.pumps[pump].source_impedance {
                        m.scale_impedance(order, factor.max(1e-300));
                    }
                }
                Acts::Value(_) => {}
            }
        }
        Ok(circuit)
    }

    /// Values drawn from every input's distribution.
    pub fn draw(&self, rng: &mut Rng) -> Vec<f64> {
        self.inputs.iter().map(|i| i.draw(rng)).collect()
    }
}
