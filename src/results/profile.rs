//! `profile`: the ripple along every tube and hose at one harmonic of a
//! pump (the standing-wave pattern), with the shaft's other pumps injecting
//! what they have at that frequency.

use super::{Error, Input, Notice, Origin, Phasor, Subject, notices};
use crate::Circuit;
use crate::analysis::profile::shaft_profile;
use crate::circuit::TapLocation;
use crate::network::Plan;
use crate::source::shafts;
use serde::Serialize;

/// What to profile, resolved against the circuit.
#[derive(Debug, Clone)]
pub struct ProfileRequest {
    /// The pump whose harmonic is shown.
    pub pump_index: usize,
    /// The harmonic of its pumping frequency (1 = the pumping frequency).
    pub harmonic: u32,
    /// The shaft speed (rev/s) instead of the file's.
    pub speed_rev_s: Option<f64>,
}

/// One sample along a line.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Sample {
    /// Distance from the line's `from` end, m.
    pub position_m: f64,
    /// Distance along the circuit from the nearest pump that injects at
    /// this frequency, m.
    pub path_position_m: f64,
    /// Pressure ripple, Pa (peak).
    pub pressure_pa: Phasor,
}

/// The ripple along one tube or hose.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LineResult {
    /// The element's name.
    pub name: String,
    /// Its kind (`tube`, `hose`).
    pub kind: &'static str,
    /// Its length, m.
    pub length_m: f64,
    /// Whether a pump injecting at this frequency reaches it along the
    /// circuit (a line of another pump's separate circuit has no ripple
    /// from it).
    pub reached: bool,
    /// The largest amplitude (an antinode or a line end): (position from
    /// the `from` end in m, amplitude in Pa).
    pub largest: (f64, f64),
    /// The smallest amplitude (a node or a line end).
    pub smallest: (f64, f64),
    /// The samples, from the `from` end to the `to` end.
    pub samples: Vec<Sample>,
}

/// The ripple at a node.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NodeResult {
    /// The node's name.
    pub name: String,
    /// Distance from the nearest pump of the shaft along the circuit, m
    /// (`None` when no path leads there).
    pub distance_m: Option<f64>,
    /// Pressure ripple, Pa (peak).
    pub pressure_pa: Phasor,
}

/// The ripple at a tap.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TapResult {
    /// The tap's name.
    pub name: String,
    /// Where it sits on the distance-from-the-pump axis, m.
    pub path_position_m: Option<f64>,
    /// Pressure ripple, Pa (peak).
    pub pressure_pa: Phasor,
}

/// The result of `profile`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ProfileResult {
    /// The circuit file.
    pub subject: Subject,
    /// Inputs: pump, harmonic, speed.
    pub inputs: Vec<Input>,
    /// The pump whose harmonic is shown.
    pub pump: String,
    /// The node it feeds.
    pub pump_node: String,
    /// Its shaft and the other pumps on it (which inject at this frequency
    /// what they have there).
    pub shaft: String,
    /// The pumps on the shaft.
    pub shaft_pumps: Vec<String>,
    /// Shaft speed, rev/s.
    pub speed_rev_s: f64,
    /// The pump's pumping elements z.
    pub pumping_elements: u32,
    /// Harmonic k of the pump's pumping frequency.
    pub harmonic: u32,
    /// Its frequency k·n·z, Hz.
    pub freq_hz: f64,
    /// One entry per tube and hose, in circuit order.
    pub lines: Vec<LineResult>,
    /// Every node.
    pub nodes: Vec<NodeResult>,
    /// The circuit's taps.
    pub taps: Vec<TapResult>,
    /// Model-validity warnings.
    pub warnings: Vec<Notice>,
}

/// Profiles `circuit` as `profile` does.
///
/// # Errors
/// [`Error::Request`] if the pump has no such harmonic, the circuit has no
/// line or cannot be compiled; [`Error::Failed`] if it is singular at the
/// frequency; [`Error::NotFinite`] for a value that is not a finite number.
pub fn profile(
    mut circuit: Circuit,
    file: &str,
    request: &ProfileRequest,
) -> Result<ProfileResult, Error> {
    let all = shafts(&circuit.pumps);
    let shaft = all
        .iter()
        .find(|s| s.pumps.contains(&request.pump_index))
        .expect("every pump is on a shaft")
        .clone();
    let mut inputs = vec![
        Input::text(
            "pump",
            &circuit.pumps[request.pump_index].name,
            Origin::Request,
        ),
        Input::number("harmonic", request.harmonic.into(), "1", Origin::Request),
    ];
    if let Some(rev_s) = request.speed_rev_s {
        shaft.set_speed(&mut circuit.pumps, rev_s);
        crate::meanflow::resolve_line_mean_flows(&mut circuit);
    }
    let pump = &circuit.pumps[request.pump_index];
    inputs.push(Input::number(
        "speed",
        pump.speed_rev_s,
        "rev/s",
        if request.speed_rev_s.is_some() {
            Origin::Request
        } else {
            Origin::File
        },
    ));
    if pump.flow_ripple(request.harmonic).norm() == 0.0 {
        return Err(Error::Request(format!(
            "{file}: pump `{}` has no harmonic {} in its flow ripple table (its highest is {})",
            pump.name,
            request.harmonic,
            pump.max_order()
        )));
    }
    if circuit.elements.iter().all(|e| e.kind.line().is_none()) {
        return Err(Error::Request(format!(
            "{file}: the circuit has no tube or hose to show a profile along"
        )));
    }
    let freq = f64::from(request.harmonic) * pump.pumping_frequency_hz();
    let warnings = notices(&crate::diagnostics::circuit_warnings(&circuit, freq));
    let samples = crate::analysis::profile::sample_total(&circuit, freq);
    if samples > crate::limits::MAX_PROFILE_SAMPLES {
        return Err(Error::Request(format!(
            "{file}: a profile of harmonic {} samples {samples} points along the circuit's lines, more than ripline's limit of {}: choose a lower --harmonic",
            request.harmonic,
            crate::limits::MAX_PROFILE_SAMPLES
        )));
    }
    let plan = Plan::compile(&circuit).map_err(|e| Error::Request(format!("{file}: {e}")))?;
    let p = shaft_profile(&plan, &shaft, request.pump_index, request.harmonic)
        .map_err(|e| Error::failed(format!("solving {file}"), e))?;
    for line in &p.lines {
        if let Some(s) = line.points.iter().find(|s| !s.pressure.is_finite()) {
            return Err(Error::NotFinite(format!(
                "the ripple along `{}` at {:.4} m ({:.3} Hz) is not a finite number",
                line.name, s.position_m, p.freq_hz
            )));
        }
    }
    let lines = p
        .lines
        .iter()
        .map(|l| {
            let (hi, lo) = (l.max(), l.min());
            let element = &circuit.elements[l.element];
            let reached = match element.connection {
                crate::elements::Connection::Series { a, b } => {
                    p.node_distances_m[a].is_some() || p.node_distances_m[b].is_some()
                }
                crate::elements::Connection::Shunt { .. } => false,
            };
            LineResult {
                name: l.name.clone(),
                kind: l.kind,
                length_m: l.length_m,
                reached,
                largest: (hi.position_m, hi.pressure.norm()),
                smallest: (lo.position_m, lo.pressure.norm()),
                samples: l
                    .points
                    .iter()
                    .map(|s| Sample {
                        position_m: s.position_m,
                        path_position_m: l.path_position(s.position_m),
                        pressure_pa: s.pressure.into(),
                    })
                    .collect(),
            }
        })
        .collect();
    let nodes = circuit
        .nodes
        .iter()
        .enumerate()
        .map(|(id, n)| NodeResult {
            name: n.name.clone(),
            distance_m: p.node_distances_m[id],
            pressure_pa: p.node_pressures[id].into(),
        })
        .collect();
    // the profiled line of each element, for the taps along lines
    let mut line_of = vec![None; circuit.elements.len()];
    for l in &p.lines {
        line_of[l.element] = Some(l);
    }
    let taps = circuit
        .taps
        .iter()
        .zip(&p.tap_pressures)
        .map(|(tap, pressure)| TapResult {
            name: tap.name.clone(),
            path_position_m: match tap.location {
                TapLocation::Node(id) => p.node_distances_m[id],
                TapLocation::AlongTube {
                    element,
                    distance_m,
                } => line_of[element].map(|l| l.path_position(distance_m)),
            },
            pressure_pa: (*pressure).into(),
        })
        .collect();
    Ok(ProfileResult {
        subject: Subject {
            file: file.to_string(),
            title: circuit.title.clone(),
        },
        inputs,
        pump: pump.name.clone(),
        pump_node: circuit.nodes[pump.node].name.clone(),
        shaft: shaft.name.clone(),
        shaft_pumps: shaft
            .pumps
            .iter()
            .map(|&i| circuit.pumps[i].name.clone())
            .collect(),
        speed_rev_s: pump.speed_rev_s,
        pumping_elements: pump.pumping_elements,
        harmonic: request.harmonic,
        freq_hz: p.freq_hz,
        lines,
        nodes,
        taps,
        warnings,
    })
}
