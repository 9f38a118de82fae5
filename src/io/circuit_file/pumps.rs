//! The pump keys of a circuit file beyond the harmonic table: pump geometry
//! (`gear`, `piston`), the source impedance forms, several pumps and their
//! shafts. Documented in README.md ("pump", "pumps").

use super::{Checker, Res};
use crate::io::locate::KeyPath;
use crate::io::quantity::{self as q, Q};
use crate::source::gear::GearPump;
use crate::source::piston::{PistonPump, Precompression};
use crate::source::{ImpedanceTable, Pump, PumpGeometry, SourceImpedance};
use crate::{C64, fluid::Fluid};
use serde::Deserialize;

/// Pressure angle when a gear pump does not state one: 20°, the standard
/// basic rack (ISO 53; common practice, recalled from memory).
const DEFAULT_PRESSURE_ANGLE_DEG: f64 = 20.0;

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a gear pump: a mapping with teeth, module (or pitch_radius), face_width, and optionally pressure_angle and addendum (or outside_radius)"
)]
pub(super) struct RawGear {
    teeth: u32,
    module: Option<Q<q::Length>>,
    pitch_radius: Option<Q<q::Length>>,
    face_width: Q<q::Length>,
    pressure_angle: Option<Q<q::Angle>>,
    addendum: Option<Q<q::Length>>,
    outside_radius: Option<Q<q::Length>>,
}

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "an axial piston pump: a mapping with pistons, piston_diameter, pitch_radius, swash_angle and optionally precompression"
)]
pub(super) struct RawPiston {
    pistons: u32,
    piston_diameter: Q<q::Length>,
    pitch_radius: Q<q::Length>,
    swash_angle: Q<q::Angle>,
    precompression: Option<RawPrecompression>,
}

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a pre-compression pulse: a mapping with cylinder_volume, pressure_rise, duration and optionally delay"
)]
struct RawPrecompression {
    cylinder_volume: Q<q::Volume>,
    pressure_rise: Q<q::Pressure>,
    duration: Q<q::Angle>,
    delay: Option<Q<q::Angle>>,
}

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a source impedance: a mapping with volume (and optionally leakage_resistance, passage_resistance, passage_inertance), or with table"
)]
pub(super) struct RawSourceImpedance {
    volume: Option<Q<q::Volume>>,
    leakage_resistance: Option<Q<q::Resistance>>,
    passage_resistance: Option<Q<q::Resistance>>,
    passage_inertance: Option<Q<q::Inertance>>,
    table: Option<Vec<RawImpedancePoint>>,
}

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "an impedance point: a mapping with frequency, amplitude and phase"
)]
struct RawImpedancePoint {
    frequency: Q<q::Frequency>,
    amplitude: Q<q::Resistance>,
    phase: Q<q::Angle>,
}

impl Checker<'_> {
    /// An angle within [lo_deg, hi_deg], with a message in degrees.
    fn angle(&self, path: &KeyPath, value_rad: f64, lo_deg: f64, hi_deg: f64) -> Res<f64> {
        let deg = value_rad.to_degrees();
        if (lo_deg..=hi_deg).contains(&deg) {
            Ok(value_rad)
        } else {
            Err(self.err(
                path,
                format!("{deg:.3}° is outside {lo_deg}° .. {hi_deg}° (a bare number is in rad; write e.g. `20 deg`)"),
            ))
        }
    }

    /// A whole number of pumping elements within 3..=99.
    fn count(&self, path: &KeyPath, n: u32, what: &str) -> Res<u32> {
        if (3..=99).contains(&n) {
            Ok(n)
        } else {
            Err(self.err(
                path,
                format!("the number of {what} must be between 3 and 99, found {n}"),
            ))
        }
    }

    pub(super) fn gear(&self, path: &KeyPath, raw: &RawGear) -> Res<PumpGeometry> {
        let teeth = self.count(&path.key("teeth"), raw.teeth, "teeth")?;
        let z = f64::from(teeth);
        let pitch_radius = match (raw.module, raw.pitch_radius) {
            (Some(m), None) => z * self.in_range(&path.key("module"), m.si, 2e-4, 0.05, "m")? / 2.0,
            (None, Some(r)) => self.in_range(&path.key("pitch_radius"), r.si, 1e-3, 1.0, "m")?,
            _ => {
                return Err(self.err(
                    path,
                    "a gear pump needs either `module` or `pitch_radius` (r = m·z/2), not both",
                ));
            }
        };
        let module = 2.0 * pitch_radius / z;
        let tip_radius = match (raw.addendum, raw.outside_radius) {
            (Some(a), None) => {
                pitch_radius
                    + self.in_range(&path.key("addendum"), a.si, 0.3 * module, 1.5 * module, "m")?
            }
            (None, Some(ra)) => self.in_range(
                &path.key("outside_radius"),
                ra.si,
                pitch_radius + 0.3 * module,
                pitch_radius + 1.5 * module,
                "m",
            )?,
            (None, None) => pitch_radius + module,
            (Some(_), Some(_)) => {
                return Err(self.err(
                    &path.key("outside_radius"),
                    "give either `addendum` or `outside_radius` (r_a = r + addendum), not both",
                ));
            }
        };
        let alpha = match raw.pressure_angle {
            Some(a) => self.angle(&path.key("pressure_angle"), a.si, 10.0, 35.0)?,
            None => DEFAULT_PRESSURE_ANGLE_DEG.to_radians(),
        };
        let gear = GearPump {
            teeth,
            pitch_radius_m: pitch_radius,
            tip_radius_m: tip_radius,
            face_width_m: self.in_range(
                &path.key("face_width"),
                raw.face_width.si,
                1e-3,
                1.0,
                "m",
            )?,
            pressure_angle_rad: alpha,
        };
        gear.check().map_err(|m| self.err(path, m))?;
        Ok(PumpGeometry::Gear(gear))
    }

    pub(super) fn piston(
        &self,
        path: &KeyPath,
        raw: &RawPiston,
        fluid: &Fluid,
    ) -> Res<PumpGeometry> {
        let precompression = match &raw.precompression {
            None => None,
            Some(p) => {
                let pp = path.key("precompression");
                Some(Precompression {
                    cylinder_volume_m3: self.in_range(
                        &pp.key("cylinder_volume"),
                        p.cylinder_volume.si,
                        1e-8,
                        1e-2,
                        "m³",
                    )?,
                    pressure_rise_pa: self.in_range(
                        &pp.key("pressure_rise"),
                        p.pressure_rise.si,
                        1e3,
                        1e8,
                        "Pa",
                    )?,
                    bulk_modulus_pa: fluid.bulk_modulus_pa,
                    duration_rad: self.angle(&pp.key("duration"), p.duration.si, 0.5, 120.0)?,
                    delay_rad: match p.delay {
                        Some(d) => self.angle(&pp.key("delay"), d.si, -180.0, 180.0)?,
                        None => 0.0,
                    },
                })
            }
        };
        let pump = PistonPump {
            pistons: self.count(&path.key("pistons"), raw.pistons, "pistons")?,
            piston_diameter_m: self.in_range(
                &path.key("piston_diameter"),
                raw.piston_diameter.si,
                1e-3,
                0.2,
                "m",
            )?,
            pitch_radius_m: self.in_range(
                &path.key("pitch_radius"),
                raw.pitch_radius.si,
                2e-3,
                1.0,
                "m",
            )?,
            swash_angle_rad: self.angle(&path.key("swash_angle"), raw.swash_angle.si, 0.1, 30.0)?,
            precompression,
        };
        pump.check().map_err(|m| self.err(path, m))?;
        Ok(PumpGeometry::Piston(pump))
    }

    /// The source impedance in any of its forms.
    pub(super) fn source_impedance(
        &self,
        path: &KeyPath,
        raw: &RawSourceImpedance,
        fluid: &Fluid,
    ) -> Res<SourceImpedance> {
        if let Some(points) = &raw.table {
            if raw.volume.is_some()
                || raw.leakage_resistance.is_some()
                || raw.passage_resistance.is_some()
                || raw.passage_inertance.is_some()
            {
                return Err(self.err(
                    path,
                    "give either a `table` of the impedance against frequency, or `volume` with its optional resistances and inertance, not both",
                ));
            }
            return self.impedance_table(&path.key("table"), points);
        }
        let Some(volume) = raw.volume else {
            return Err(self.err(
                path,
                "a source impedance needs `volume` (the internal volume; 0 for an ideal flow source) or a `table`",
            ));
        };
        if !(0.0..=1.0).contains(&volume.si) {
            return Err(self.err(
                &path.key("volume"),
                format!(
                    "internal volume must be between 0 and 1 m³, found {} m³: check the unit",
                    volume.si
                ),
            ));
        }
        let capacitance = volume.si / fluid.bulk_modulus_pa;
        let leakage = match raw.leakage_resistance {
            Some(r) => {
                Some(self.in_range(&path.key("leakage_resistance"), r.si, 1e3, 1e20, "Pa·s/m³")?)
            }
            None => None,
        };
        if raw.passage_resistance.is_none() && raw.passage_inertance.is_none() {
            return Ok(SourceImpedance::Volume {
                capacitance_m3_pa: capacitance,
                leakage_resistance_pa_s_m3: leakage,
            });
        }
        let passage_resistance = match raw.passage_resistance {
            Some(r) => {
                self.in_range(&path.key("passage_resistance"), r.si, 0.0, 1e16, "Pa·s/m³")?
            }
            None => 0.0,
        };
        let passage_inertance = match raw.passage_inertance {
            Some(l) => self.in_range(&path.key("passage_inertance"), l.si, 0.0, 1e13, "kg/m⁴")?,
            None => 0.0,
        };
        Ok(SourceImpedance::VolumePassage {
            capacitance_m3_pa: capacitance,
            leakage_resistance_pa_s_m3: leakage,
            passage_resistance_pa_s_m3: passage_resistance,
            passage_inertance_kg_m4: passage_inertance,
        })
    }

    fn impedance_table(&self, path: &KeyPath, raw: &[RawImpedancePoint]) -> Res<SourceImpedance> {
        if raw.is_empty() {
            return Err(self.err(
                path,
                "the impedance table is empty: list at least one point",
            ));
        }
        let mut points: Vec<(f64, C64)> = Vec::with_capacity(raw.len());
        for (i, p) in raw.iter().enumerate() {
            let pp = path.index(i);
            let f = self.in_range(&pp.key("frequency"), p.frequency.si, 1e-3, 1e6, "Hz")?;
            if let Some(&(prev, _)) = points.last().filter(|(prev, _)| f <= *prev) {
                return Err(self.err(
                    &pp.key("frequency"),
                    format!("frequencies must increase down the table ({f} Hz after {prev} Hz)"),
                ));
            }
            let amp = self.in_range(&pp.key("amplitude"), p.amplitude.si, 1e3, 1e20, "Pa·s/m³")?;
            points.push((f, C64::from_polar(amp, p.phase.si)));
        }
        ImpedanceTable::new(&points)
            .map(SourceImpedance::Table)
            .map_err(|m| self.err(path, m))
    }

    /// Pump names are unique, and pumps on one shaft agree on speed and
    /// speed range.
    pub(super) fn check_pumps(&self, paths: &[KeyPath], pumps: &[Pump]) -> Res<()> {
        for (i, p) in pumps.iter().enumerate() {
            let earlier = &pumps[..i];
            if earlier.iter().any(|q| q.name == p.name) {
                return Err(self.err(
                    &paths[i].key("name"),
                    format!("duplicate pump name `{}`: names must be unique", p.name),
                ));
            }
            let Some(shaft) = &p.shaft else { continue };
            let Some(first) = earlier.iter().find(|q| q.shaft.as_ref() == Some(shaft)) else {
                continue;
            };
            if (p.speed_rev_s - first.speed_rev_s).abs() > 1e-9 * first.speed_rev_s {
                return Err(self.err(
                    &paths[i].key("speed"),
                    format!(
                        "pump `{}` shares shaft `{shaft}` with pump `{}`, so it runs at its {:.1} rpm, not {:.1} rpm",
                        p.name,
                        first.name,
                        first.speed_rev_s * 60.0,
                        p.speed_rev_s * 60.0
                    ),
                ));
            }
            if let (Some(a), Some(b)) = (first.speed_range_rev_s, p.speed_range_rev_s)
                && a != b
            {
                return Err(self.err(
                    &paths[i].key("speed_range"),
                    format!(
                        "pump `{}` shares shaft `{shaft}` with pump `{}`, whose speed range differs; state it once",
                        p.name, first.name
                    ),
                ));
            }
        }
        Ok(())
    }
}
