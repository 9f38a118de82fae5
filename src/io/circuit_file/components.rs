//! The circuit-file keys of the components with dynamics: relief and check
//! valves, cylinders, in-line pulsation dampers, the inlet and outlet
//! geometry of expansion chambers, hoses whose wall follows the mean
//! pressure, and valve blocks (expanded at load time into their galleries
//! and cavities, named `<block>.<gallery>`, with internal junctions named
//! `<block>.<junction>`). Documented in README.md ("elements").

use super::{Checker, RawElement, RawKind, RawLineModel, Res};
use crate::elements::{
    ChamberPorts, CheckState, CheckValve, Cylinder, CylinderPorts, HosePressure, InlineDamper,
    Poppet, PoppetData, ReliefValve, Tube, ValveOperatingPoint, rigid_neck,
};
use crate::fluid::Fluid;
use crate::hose::{
    MAX_PRESSURE_POINTS, PressureData, PressurePoint, TYPICAL_REFERENCE_FREQUENCY_HZ,
};
use crate::io::locate::KeyPath;
use crate::io::quantity::{self as q, Q};
use crate::line::{LineModel, LineProperties, MeanFlow};
use serde::Deserialize;
use std::collections::{BTreeMap, HashSet};

/// A hose's wall at one mean pressure.
#[derive(Debug, Clone, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a hose wall point: a mapping with pressure, wave_speed and loss_factor"
)]
pub(super) struct RawHosePoint {
    pressure: Q<q::Pressure>,
    wave_speed: Q<q::Velocity>,
    loss_factor: Q<q::Ratio>,
}

/// The one port of a cylinder used as a shunt.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Deserialize)]
#[serde(rename_all = "snake_case")]
pub(super) enum RawCylinderPort {
    Cap,
    Rod,
}

/// A gallery of a valve block: a drilled line, a lumped passage or a
/// restriction between two of its ports or junctions.
#[derive(Debug, Clone, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a gallery: a mapping with from, to, and length with bore, or inertance, or resistance"
)]
pub(super) struct RawGallery {
    name: Option<String>,
    from: String,
    to: String,
    length: Option<Q<q::Length>>,
    bore: Option<Q<q::Length>>,
    lumped: Option<bool>,
    inertance: Option<Q<q::Inertance>>,
    resistance: Option<Q<q::Resistance>>,
    model: Option<RawLineModel>,
}

/// A cavity of a valve block at one of its ports or junctions.
#[derive(Debug, Clone, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a cavity: a mapping with at and volume"
)]
pub(super) struct RawCavity {
    at: String,
    volume: Q<q::Volume>,
}

/// A rigid drilled passage of the given bore in the liquid, with the
/// element's friction model (or the circuit's): a resonator's neck, a port.
pub(super) fn drilled_passage(
    bore: f64,
    e: &RawElement,
    fluid: &Fluid,
    default: LineModel,
) -> LineProperties {
    let like = LineProperties {
        radius_m: bore / 2.0,
        density_kg_m3: fluid.density_kg_m3,
        kinematic_viscosity_m2_s: fluid.kinematic_viscosity_m2_s,
        effective_bulk_modulus_pa: fluid.bulk_modulus_pa,
        model: e.model.map_or(default, LineModel::from),
        viscoelastic_wall: None,
        mean_flow: MeanFlow::Unknown,
    };
    rigid_neck(&like, bore, fluid.bulk_modulus_pa)
}

/// The ports of a valve block: port name → circuit node.
pub(super) type RawPorts = BTreeMap<String, String>;

impl Checker<'_> {
    /// A value that may be zero but not negative, at most `hi` (SI).
    fn non_negative(&self, path: &KeyPath, value: f64, hi: f64, unit: &str) -> Res<f64> {
        if value < 0.0 {
            return Err(self.err(
                path,
                format!(
                    "must not be negative, found {} {unit}",
                    crate::units::format_sig(value, 6)
                ),
            ));
        }
        self.in_range(path, value, 0.0, hi, unit)
    }

    /// `at`, or `from` and `to`, for the kinds that may be either a shunt or
    /// a two-port (relief valve, cylinder).
    pub(super) fn either_way(&self, path: &KeyPath, e: &RawElement) -> Res<()> {
        if e.at.is_some() && (e.from.is_some() || e.to.is_some()) {
            return Err(self.err(
                &path.key("at"),
                format!(
                    "a `{}` sits either `at` one node (to tank) or between `from` and `to`, not both",
                    e.kind.name()
                ),
            ));
        }
        Ok(())
    }

    /// The poppet data of a relief or check valve.
    fn poppet_data(&self, path: &KeyPath, e: &RawElement) -> Res<PoppetData> {
        let k = e.kind;
        let mass = self.required_in(path, "mass", e.mass, k, 1e-6, 100.0, "kg")?;
        let spring = self.required_in(path, "spring_rate", e.spring_rate, k, 1.0, 1e10, "N/m")?;
        let area = self.required_in(path, "feedback_area", e.feedback_area, k, 1e-9, 0.1, "m²")?;
        let damping = match (e.damping, e.damping_area, e.damping_resistance) {
            (Some(b), None, None) => self.non_negative(&path.key("damping"), b.si, 1e8, "N·s/m")?,
            (None, Some(a), Some(r)) => {
                let a = self.in_range(&path.key("damping_area"), a.si, 1e-9, 0.1, "m²")?;
                let r =
                    self.in_range(&path.key("damping_resistance"), r.si, 1e3, 1e18, "Pa·s/m³")?;
                a * a * r
            }
            (None, None, None) => 0.0,
            _ => {
                return Err(self.err(
                    path,
                    "give the damping either as `damping` (viscous, N·s/m) or as `damping_area` with `damping_resistance` (a damping piston pushing oil through an orifice: b = A²R), not both",
                ));
            }
        };
        let jet = match e.jet_angle {
            None => None,
            Some(a) => Some(self.non_negative(
                &path.key("jet_angle"),
                a.si,
                0.5 * std::f64::consts::PI,
                "rad",
            )?),
        };
        let flow_gain = match e.flow_gain {
            None => None,
            Some(g) => Some(self.in_range(&path.key("flow_gain"), g.si, 1e-8, 1e4, "m²/s")?),
        };
        let kc = match e.flow_pressure_coefficient {
            None => None,
            Some(c) => Some(self.in_range(
                &path.key("flow_pressure_coefficient"),
                c.si,
                1e-18,
                1e-3,
                "m³/(s·Pa)",
            )?),
        };
        Ok(PoppetData {
            mass_kg: mass,
            spring_rate_n_m: spring,
            damping_n_s_m: damping,
            area_m2: area,
            jet_angle_rad: jet,
            flow_gain_m2_s: flow_gain,
            flow_pressure_coefficient: kc,
        })
    }

    /// The required `cracking_pressure` (Pa, not negative).
    fn cracking_pressure(&self, path: &KeyPath, e: &RawElement) -> Res<f64> {
        let p = self.required(path, "cracking_pressure", e.cracking_pressure, e.kind)?;
        self.non_negative(&path.key("cracking_pressure"), p, 1e9, "Pa")
    }

    /// The operating point `mean_flow`, `pressure_drop` with `cracking_pressure`.
    fn operating_point(&self, path: &KeyPath, e: &RawElement) -> Res<ValveOperatingPoint> {
        let k = e.kind;
        let cracking = self.cracking_pressure(path, e)?;
        let q = self.required_in(path, "mean_flow", e.mean_flow, k, 1e-9, 10.0, "m³/s")?;
        let p = self.required_in(path, "pressure_drop", e.pressure_drop, k, 1.0, 1e9, "Pa")?;
        Ok(ValveOperatingPoint {
            mean_flow_m3_s: q,
            pressure_drop_pa: p,
            cracking_pa: cracking,
        })
    }

    pub(super) fn relief_valve(
        &self,
        path: &KeyPath,
        e: &RawElement,
        fluid: &Fluid,
    ) -> Res<ReliefValve> {
        let data = self.poppet_data(path, e)?;
        let op = self.operating_point(path, e)?;
        let (poppet, opening) = Poppet::linearise(&data, &op, fluid.density_kg_m3)
            .map_err(|err| self.err(&path.key("pressure_drop"), err.to_string()))?;
        Ok(ReliefValve {
            poppet,
            operating: op,
            opening_m: opening,
            in_line: e.at.is_none(),
        })
    }

    pub(super) fn check_valve(
        &self,
        path: &KeyPath,
        e: &RawElement,
        fluid: &Fluid,
    ) -> Res<CheckValve> {
        let k = e.kind;
        let cracking = self.cracking_pressure(path, e)?;
        let dp = self.required(path, "pressure_drop", e.pressure_drop, k)?;
        if dp.abs() > 1e9 {
            return Err(self.err(
                &path.key("pressure_drop"),
                format!(
                    "{} Pa is outside the plausible range -1e9 .. 1e9 Pa: check the unit (a bare number is SI)",
                    crate::units::format_sig(dp, 6)
                ),
            ));
        }
        let full_open = match e.full_open_pressure {
            None => None,
            Some(p) => {
                let p = self.in_range(&path.key("full_open_pressure"), p.si, 1.0, 1e9, "Pa")?;
                if p <= cracking {
                    return Err(self.err(
                        &path.key("full_open_pressure"),
                        format!(
                            "the full-open pressure {:.3} bar must exceed the cracking pressure {:.3} bar",
                            p / 1e5,
                            cracking / 1e5
                        ),
                    ));
                }
                Some(p)
            }
        };
        if dp <= cracking {
            // Held shut: a closed end on both sides; the flow must be zero.
            if let Some(q) = e.mean_flow
                && q.si != 0.0
            {
                return Err(self.err(
                    &path.key("mean_flow"),
                    format!(
                        "the valve is closed at a pressure difference of {:.3} bar (cracking at {:.3} bar), so its mean flow must be 0",
                        dp / 1e5,
                        cracking / 1e5
                    ),
                ));
            }
            return Ok(CheckValve {
                cracking_pa: cracking,
                pressure_drop_pa: dp,
                mean_flow_m3_s: 0.0,
                state: CheckState::Closed,
            });
        }
        let op = self.operating_point(path, e)?;
        let state = match full_open {
            Some(p) if dp >= p => CheckState::FullyOpen {
                conductance: op.mean_flow_m3_s / (2.0 * dp),
            },
            _ => {
                let data = self.poppet_data(path, e)?;
                let (poppet, opening) = Poppet::linearise(&data, &op, fluid.density_kg_m3)
                    .map_err(|err| self.err(&path.key("pressure_drop"), err.to_string()))?;
                CheckState::Opening {
                    poppet,
                    opening_m: opening,
                }
            }
        };
        Ok(CheckValve {
            cracking_pa: cracking,
            pressure_drop_pa: dp,
            mean_flow_m3_s: op.mean_flow_m3_s,
            state,
        })
    }

    pub(super) fn cylinder(&self, path: &KeyPath, e: &RawElement, fluid: &Fluid) -> Res<Cylinder> {
        let k = e.kind;
        let bore = self.required_in(path, "bore", e.bore, k, 1e-3, 2.0, "m")?;
        let rod = match e.rod_diameter {
            None => 0.0,
            Some(d) => {
                let d = self.non_negative(&path.key("rod_diameter"), d.si, 2.0, "m")?;
                if d >= bore {
                    return Err(self.err(
                        &path.key("rod_diameter"),
                        format!(
                            "the rod ({:.2} mm) must be thinner than the bore ({:.2} mm): the annulus area would be {}",
                            d * 1e3,
                            bore * 1e3,
                            if d == bore { "zero" } else { "negative" }
                        ),
                    ));
                }
                d
            }
        };
        let stroke = self.required_in(path, "stroke", e.stroke, k, 1e-3, 50.0, "m")?;
        let position = self.required(path, "position", e.position, k)?;
        if !(0.0..=stroke).contains(&position) {
            return Err(self.err(
                &path.key("position"),
                format!(
                    "the piston position {} m (from the cap end) is outside the cylinder, whose stroke is 0 .. {} m",
                    crate::units::format_sig(position, 6),
                    crate::units::format_sig(stroke, 6)
                ),
            ));
        }
        let dead = match e.dead_volume {
            None => 0.0,
            Some(v) => self.non_negative(&path.key("dead_volume"), v.si, 10.0, "m³")?,
        };
        let ports = match (e.at.is_some(), e.port) {
            (false, None) => CylinderPorts::Both,
            (false, Some(_)) => {
                return Err(self.err(
                    &path.key("port"),
                    "`port` picks the one port of a cylinder sitting `at` a node; between `from` (cap port) and `to` (rod port) both are used",
                ));
            }
            (true, None | Some(RawCylinderPort::Cap)) => CylinderPorts::Cap,
            (true, Some(RawCylinderPort::Rod)) => CylinderPorts::Rod,
        };
        if ports == CylinderPorts::Rod && rod == 0.0 {
            return Err(self.err(
                &path.key("port"),
                "a rod port needs the `rod_diameter` (the annulus area is π(D² − d²)/4)",
            ));
        }
        let mass = self.required_in(path, "load_mass", e.load_mass, k, 1e-3, 1e7, "kg")?;
        let stiffness = match e.load_stiffness {
            None => 0.0,
            Some(s) => self.non_negative(&path.key("load_stiffness"), s.si, 1e12, "N/m")?,
        };
        let mut damping = 0.0;
        for (key, value) in [("load_damping", e.load_damping), ("friction", e.friction)] {
            if let Some(b) = value {
                if b.si < 0.0 && key == "friction" {
                    return Err(self.err(
                        &path.key(key),
                        "a falling friction curve (negative slope, the Stribeck region) cannot be linearised as damping: it needs a nonlinear model",
                    ));
                }
                damping += self.non_negative(&path.key(key), b.si, 1e10, "N·s/m")?;
            }
        }
        let cylinder = Cylinder {
            bore_m: bore,
            rod_m: rod,
            stroke_m: stroke,
            position_m: position,
            dead_volume_m3: dead,
            load_mass_kg: mass,
            load_stiffness_n_m: stiffness,
            damping_n_s_m: damping,
            bulk_modulus_pa: fluid.bulk_modulus_pa,
            ports,
        };
        let empty = |v: f64| v <= 1e-12;
        let cap_used = ports != CylinderPorts::Rod;
        let rod_used = ports != CylinderPorts::Cap;
        if (cap_used && empty(cylinder.cap_volume_m3()))
            || (rod_used && empty(cylinder.rod_volume_m3()))
        {
            return Err(self.err(
                &path.key("position"),
                "at this position a chamber in the circuit holds no oil (the piston is at its end): give the oil volume at each end beyond the stroke as `dead_volume`",
            ));
        }
        Ok(cylinder)
    }

    /// A port passage of an in-line element: `port_length` and `port_bore`,
    /// a rigid line in the liquid with the element's friction model.
    fn port_line(
        &self,
        path: &KeyPath,
        e: &RawElement,
        fluid: &Fluid,
        default: LineModel,
        length_m: f64,
    ) -> Res<(f64, LineProperties)> {
        let bore = self.required_in(path, "port_bore", e.port_bore, e.kind, 1e-4, 0.5, "m")?;
        Ok((length_m, drilled_passage(bore, e, fluid, default)))
    }

    pub(super) fn inline_damper(
        &self,
        path: &KeyPath,
        e: &RawElement,
        fluid: &Fluid,
        fluid_gauge_pa: Option<f64>,
        default: LineModel,
    ) -> Res<InlineDamper> {
        for key in ["gas_volume", "precharge"] {
            let present = match key {
                "gas_volume" => e.gas_volume.is_some(),
                _ => e.precharge.is_some(),
            };
            if !present {
                return Err(self.err(
                    path,
                    format!("an `inline_pulsation_damper` needs the key `{key}`"),
                ));
            }
        }
        let length =
            self.required_in(path, "port_length", e.port_length, e.kind, 1e-4, 1.0, "m")?;
        let (_, port) = self.port_line(path, e, fluid, default, length)?;
        // The gas charge is checked and built as for a teed-off damper, with
        // the port standing for its neck.
        let as_damper = RawElement {
            name: e.name.clone(),
            kind: RawKind::PulsationDamper,
            gas_volume: e.gas_volume,
            precharge: e.precharge,
            operating_pressure: e.operating_pressure,
            polytropic_index: e.polytropic_index,
            neck_length: Some(Q::new(length)),
            neck_bore: Some(Q::new(2.0 * port.radius_m)),
            model: e.model,
            ..RawElement::default()
        };
        let vessel = self.damper(path, &as_damper, fluid, fluid_gauge_pa, default)?;
        let oil = match e.oil_volume {
            None => 0.0,
            Some(v) => self.non_negative(&path.key("oil_volume"), v.si, 1.0, "m³")?,
        };
        Ok(InlineDamper {
            vessel,
            oil_volume_m3: oil,
        })
    }

    /// The inlet and outlet geometry of an expansion chamber, if given.
    pub(super) fn chamber_ports(
        &self,
        path: &KeyPath,
        e: &RawElement,
        fluid: &Fluid,
        default: LineModel,
        shell: &Tube,
    ) -> Res<Option<ChamberPorts>> {
        if e.port_bore.is_none()
            && e.port_length.is_none()
            && e.inlet_extension.is_none()
            && e.outlet_extension.is_none()
        {
            return Ok(None);
        }
        let length = match e.port_length {
            None => 0.0,
            Some(l) => self.non_negative(&path.key("port_length"), l.si, 10.0, "m")?,
        };
        let (_, pipe) = self.port_line(path, e, fluid, default, length)?;
        let port_bore = 2.0 * pipe.radius_m;
        if port_bore >= shell.bore_m() {
            return Err(self.err(
                &path.key("port_bore"),
                format!(
                    "the port bore {:.2} mm is not smaller than the chamber bore {:.2} mm: a port's area cannot exceed the chamber's",
                    port_bore * 1e3,
                    shell.bore_m() * 1e3
                ),
            ));
        }
        let mut ext = [0.0; 2];
        for (slot, (key, value)) in ext.iter_mut().zip([
            ("inlet_extension", e.inlet_extension),
            ("outlet_extension", e.outlet_extension),
        ]) {
            if let Some(v) = value {
                *slot = self.non_negative(&path.key(key), v.si, 10.0, "m")?;
            }
        }
        if ext[0] + ext[1] >= shell.line.length_m {
            return Err(self.err(
                &path.key(if e.outlet_extension.is_some() {
                    "outlet_extension"
                } else {
                    "inlet_extension"
                }),
                format!(
                    "the pipes reach {:.1} mm into a chamber {:.1} mm long: their extensions must leave a gap between them",
                    (ext[0] + ext[1]) * 1e3,
                    shell.line.length_m * 1e3
                ),
            ));
        }
        Ok(Some(ChamberPorts {
            pipe,
            length_m: length,
            inlet_extension_m: ext[0],
            outlet_extension_m: ext[1],
        }))
    }

    /// A hose wall given at several mean pressures (`wave_speeds`),
    /// evaluated at the circuit's mean pressure (the fluid's `pressure`).
    pub(super) fn pressure_wall(
        &self,
        path: &KeyPath,
        points: &[RawHosePoint],
        fluid: &Fluid,
        mean_pressure: Option<f64>,
        reference_frequency_hz: Option<f64>,
    ) -> Res<(crate::hose::ViscoelasticWall, HosePressure)> {
        let wp = path.key("wave_speeds");
        if !(2..=MAX_PRESSURE_POINTS).contains(&points.len()) {
            return Err(self.err(
                &wp,
                format!(
                    "give the hose's wall at 2 to {MAX_PRESSURE_POINTS} mean pressures, found {}",
                    points.len()
                ),
            ));
        }
        let mut pts = Vec::with_capacity(points.len());
        for (i, p) in points.iter().enumerate() {
            let ip = wp.index(i);
            let pressure = p.pressure.si;
            if !(-1e5..=1e9).contains(&pressure) {
                return Err(self.err(
                    &ip.key("pressure"),
                    format!(
                        "mean pressure {:.3} bar is outside -1 .. 10000 bar: check the unit",
                        pressure / 1e5
                    ),
                ));
            }
            if let Some(prev) = pts.last().map(|q: &PressurePoint| q.pressure_pa)
                && pressure <= prev
            {
                return Err(self.err(
                    &ip.key("pressure"),
                    "list the pressures in increasing order, each once",
                ));
            }
            let c = self.in_range(&ip.key("wave_speed"), p.wave_speed.si, 50.0, 2500.0, "m/s")?;
            let eta = p.loss_factor.si;
            if !(0.0..=1.0).contains(&eta) {
                return Err(self.err(
                    &ip.key("loss_factor"),
                    format!("a loss factor must be between 0 and 1, found {eta}"),
                ));
            }
            pts.push(PressurePoint {
                pressure_pa: pressure,
                wave_speed_m_s: c,
                loss_factor: eta,
            });
        }
        let Some(mean) = mean_pressure else {
            return Err(self.err(
                &wp,
                "a hose wall given against pressure is evaluated at the circuit's mean pressure: give the fluid's mean `pressure` (e.g. `pressure: 180 bar`)",
            ));
        };
        let data = PressureData::new(
            &pts,
            reference_frequency_hz.unwrap_or(TYPICAL_REFERENCE_FREQUENCY_HZ),
        )
        .map_err(|err| self.err(&wp, err.to_string()))?;
        let wall = data
            .wall_at(mean, fluid.density_kg_m3, fluid.bulk_modulus_pa)
            .map_err(|err| self.err(&wp, err.to_string()))?;
        Ok((
            wall,
            HosePressure {
                data,
                mean_pressure_pa: mean,
            },
        ))
    }

    /// Replaces every `valve_block` by its galleries (tubes, inertances,
    /// orifices) and cavities (volumes); returns the elements with the key
    /// path each came from.
    pub(super) fn expand_valve_blocks(
        &self,
        root: &KeyPath,
        raws: &[RawElement],
    ) -> Res<(Vec<RawElement>, Vec<KeyPath>)> {
        let mut out = Vec::with_capacity(raws.len());
        let mut paths = Vec::with_capacity(raws.len());
        for (i, e) in raws.iter().enumerate() {
            let path = root.key("elements").index(i);
            if e.kind != RawKind::ValveBlock {
                out.push(e.clone());
                paths.push(path);
                continue;
            }
            for (raw, p) in self.valve_block(&path, e)? {
                out.push(raw);
                paths.push(p);
            }
        }
        Ok((out, paths))
    }

    fn valve_block(&self, path: &KeyPath, e: &RawElement) -> Res<Vec<(RawElement, KeyPath)>> {
        let block = e.name.trim();
        if block.is_empty() {
            return Err(self.err(&path.key("name"), "an element name must not be empty"));
        }
        let Some(ports) = e.ports.as_ref().filter(|p| !p.is_empty()) else {
            return Err(self.err(
                path,
                "a `valve_block` needs its `ports`: a mapping from port name to circuit node, e.g. `{P: pump_out, A: boom_cap}`",
            ));
        };
        for (port, node) in ports {
            if port.trim().is_empty() || node.trim().is_empty() {
                return Err(self.err(
                    &path.key("ports"),
                    "port names and the nodes they join must not be empty",
                ));
            }
        }
        let galleries = e.galleries.as_deref().unwrap_or_default();
        if galleries.is_empty() {
            return Err(self.err(
                path,
                "a `valve_block` needs `galleries` joining its ports (each `from`, `to`, and `length` with `bore`, or `inertance`, or `resistance`)",
            ));
        }
        // a port's circuit node, or the block's own junction
        let node = |name: &str| match ports.get(name) {
            Some(n) => n.clone(),
            None => format!("{block}.{name}"),
        };
        let mut used: HashSet<&str> = HashSet::new();
        let mut names: HashSet<String> = HashSet::new();
        let mut out = Vec::new();
        for (j, g) in galleries.iter().enumerate() {
            let gp = path.key("galleries").index(j);
            for (key, end) in [("from", &g.from), ("to", &g.to)] {
                if end.trim().is_empty() {
                    return Err(self.err(&gp.key(key), "a port or junction name must not be empty"));
                }
            }
            if g.from == g.to {
                return Err(self.err(
                    &gp.key("to"),
                    format!("the gallery starts and ends at `{}`", g.from),
                ));
            }
            used.insert(g.from.as_str());
            used.insert(g.to.as_str());
            let short = g
                .name
                .clone()
                .unwrap_or_else(|| format!("{}-{}", g.from, g.to));
            if !names.insert(short.clone()) {
                return Err(self.err(
                    &gp,
                    format!(
                        "two galleries of `{block}` are called `{short}`: give them distinct `name`s"
                    ),
                ));
            }
            let kind = match (g.length, g.bore, g.inertance, g.resistance) {
                (Some(_), Some(_), None, None) if g.lumped == Some(true) => RawKind::Inertance,
                (Some(_), Some(_), None, None) => RawKind::Tube,
                (None, None, Some(_), _) => RawKind::Inertance,
                (None, None, None, Some(_)) => RawKind::Orifice,
                _ => {
                    return Err(self.err(
                        &gp,
                        "a gallery is `length` with `bore` (a drilled passage; `lumped: true` makes it an inertance), or `inertance` (with an optional `resistance`), or a `resistance` alone (a restriction)",
                    ));
                }
            };
            if g.lumped.is_some() && kind == RawKind::Orifice {
                return Err(self.err(&gp.key("lumped"), "`lumped` goes with `length` and `bore`"));
            }
            if g.model.is_some() && kind != RawKind::Tube {
                return Err(self.err(
                    &gp.key("model"),
                    "`model` applies to a drilled passage given by `length` and `bore`",
                ));
            }
            out.push((
                RawElement {
                    name: format!("{block}.{short}"),
                    kind,
                    from: Some(node(&g.from)),
                    to: Some(node(&g.to)),
                    length: g.length,
                    bore: g.bore,
                    rigid: (kind == RawKind::Tube).then_some(true),
                    model: g.model,
                    inertance: g.inertance,
                    resistance: g.resistance,
                    ..RawElement::default()
                },
                gp,
            ));
        }
        for (j, c) in e.cavities.as_deref().unwrap_or_default().iter().enumerate() {
            let cp = path.key("cavities").index(j);
            if c.at.trim().is_empty() {
                return Err(self.err(&cp.key("at"), "a port or junction name must not be empty"));
            }
            if !used.contains(c.at.as_str()) {
                return Err(self.err(
                    &cp.key("at"),
                    format!(
                        "no gallery of `{block}` reaches `{}`: a cavity sits at a port or junction of the block",
                        c.at
                    ),
                ));
            }
            out.push((
                RawElement {
                    name: format!("{block}.{} cavity", c.at),
                    kind: RawKind::Volume,
                    at: Some(node(&c.at)),
                    volume: Some(c.volume),
                    ..RawElement::default()
                },
                cp,
            ));
        }
        if let Some(port) = ports.keys().find(|p| !used.contains(p.as_str())) {
            return Err(self.err(
                &path.key("ports").key(port),
                format!("no gallery of `{block}` reaches its port `{port}`"),
            ));
        }
        Ok(out)
    }
}
