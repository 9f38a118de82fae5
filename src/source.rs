//! Pump sources: the Norton model of a positive-displacement pump.
//!
//! At its outlet node a pump is a source flow ripple Qs in parallel with a
//! source impedance Zs to the reference (ISO 10767-1 convention): the flow it
//! delivers into the circuit is Q = Qs − P/Zs. Harmonic k of the ripple sits at
//! k·f_p, with the pumping frequency f_p = n·z (shaft speed n in rev/s times
//! the number z of teeth or pistons).
//!
//! The source flow ripple is a table of harmonics ([`FlowRipple::Table`]) or
//! is computed from the pump's geometry ([`FlowRipple::Kinematic`]:
//! [`gear`], [`piston`], [`kinematic`]). Harmonic phases are against the
//! shaft angle θ (rad, from the shaft's reference mark): harmonic k
//! contributes Re{Q_k e^{jkzθ}}, θ = 2π n t. Pumps on one shaft share that
//! reference ([`shaft`]).

pub mod gear;
pub mod kinematic;
pub mod map;
pub mod piston;
pub mod shaft;

use crate::elements::NodeId;
use num_complex::Complex64 as C64;

pub use kinematic::{KinematicRipple, PumpGeometry};
pub use map::SourceMap;
pub use shaft::{Shaft, shafts};

/// One harmonic of a source flow ripple table.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FlowHarmonic {
    /// Harmonic order k of the pumping frequency (1 = f_p).
    pub order: u32,
    /// Peak amplitude |Qs| in m³/s.
    pub amplitude_m3_s: f64,
    /// Phase in rad against the pump's shaft-angle reference (e^{+jωt}).
    pub phase_rad: f64,
}

/// The source flow ripple of a pump.
#[derive(Debug, Clone, PartialEq)]
#[non_exhaustive]
pub enum FlowRipple {
    /// A table of harmonics measured (or computed) at a reference speed.
    ///
    /// At another speed the amplitudes scale in proportion to speed and the
    /// phases are kept: at a fixed displacement the kinematic ripple is a fixed
    /// fraction of the mean flow, which is proportional to speed (common
    /// practice).
    Table {
        /// Shaft speed at which the table holds, in rev/s.
        reference_speed_rev_s: f64,
        /// The harmonics, each order at most once.
        harmonics: Vec<FlowHarmonic>,
    },
    /// The kinematic ripple computed from the pump's geometry (harmonics up
    /// to [`kinematic::MAX_ORDER`], in proportion to speed).
    Kinematic(KinematicRipple),
    /// A pump source file's map of conditions, evaluated at the operating
    /// speed and the circuit's mean pressure ([`map`]; a map of one speed
    /// scales in proportion to speed).
    Map(Box<SourceMap>),
}

impl FlowRipple {
    /// Harmonic `order` (peak phasor in m³/s, phase against the shaft angle)
    /// at shaft speed `speed_rev_s`; zero for an order it does not hold.
    /// Both forms are in proportion to speed.
    pub fn at(&self, order: u32, speed_rev_s: f64) -> C64 {
        match self {
            FlowRipple::Table {
                reference_speed_rev_s,
                harmonics,
            } => harmonics
                .iter()
                .find(|h| h.order == order)
                .map_or(C64::new(0.0, 0.0), |h| {
                    C64::from_polar(
                        h.amplitude_m3_s * speed_rev_s / reference_speed_rev_s,
                        h.phase_rad,
                    )
                }),
            FlowRipple::Kinematic(k) => k.harmonic(order, speed_rev_s),
            FlowRipple::Map(m) => m.flow(order, speed_rev_s),
        }
    }

    /// The same ripple for a pump mounted at shaft angle `angle_rad` (its
    /// own reference position occurs there): harmonic k of a pump with `z`
    /// pumping elements is turned by −k·z·angle.
    pub fn rotated(self, z: u32, angle_rad: f64) -> FlowRipple {
        match self {
            FlowRipple::Table {
                reference_speed_rev_s,
                harmonics,
            } => FlowRipple::Table {
                reference_speed_rev_s,
                harmonics: harmonics
                    .into_iter()
                    .map(|h| FlowHarmonic {
                        phase_rad: h.phase_rad - f64::from(h.order * z) * angle_rad,
                        ..h
                    })
                    .collect(),
            },
            FlowRipple::Kinematic(k) => FlowRipple::Kinematic(k.rotated(angle_rad)),
            FlowRipple::Map(m) => FlowRipple::Map(Box::new(m.rotated(angle_rad))),
        }
    }
}

/// The source impedance of a pump.
#[derive(Debug, Clone, PartialEq)]
#[non_exhaustive]
pub enum SourceImpedance {
    /// Internal (discharge) volume, with an optional leakage path in parallel:
    /// Zs = 1/(jωC + 1/R), C = V/B (methods.md §5, forms a and b).
    /// C = 0 and no leakage gives an ideal flow source (Zs = ∞).
    Volume {
        /// Capacitance C = V/B in m³/Pa.
        capacitance_m3_pa: f64,
        /// Leakage resistance R in Pa·s/m³, if any.
        leakage_resistance_pa_s_m3: Option<f64>,
    },
    /// A measured table of Zs against frequency (e.g. from a bench
    /// estimation), interpolated (see [`ImpedanceTable::at`]).
    Table(ImpedanceTable),
    /// Internal volume and leakage behind a discharge passage with
    /// resistance and inertance: Zs = R_p + jωL_p + 1/(jωC + 1/R_leak)
    /// (methods.md §5, form c; Edge & Johnston 1990). With C = 0 and no
    /// leakage the source is ideal (Zs = ∞) whatever the passage.
    VolumePassage {
        /// Capacitance C = V/B in m³/Pa.
        capacitance_m3_pa: f64,
        /// Leakage resistance R_leak in Pa·s/m³, if any.
        leakage_resistance_pa_s_m3: Option<f64>,
        /// Passage resistance R_p in Pa·s/m³.
        passage_resistance_pa_s_m3: f64,
        /// Passage inertance L_p in kg/m⁴ (Pa·s²/m³).
        passage_inertance_kg_m4: f64,
    },
    /// A pump source file's map of conditions: Zs against frequency at the
    /// operating speed and the circuit's mean pressure ([`map`]). It
    /// depends on the speed: see [`SourceImpedance::admittance_at`].
    Map(Box<SourceMap>),
}

impl SourceImpedance {
    /// Source admittance Ys = 1/Zs at ω with the shaft at `speed_rev_s`
    /// (only a map depends on the speed).
    pub fn admittance_at(&self, omega: f64, speed_rev_s: f64) -> C64 {
        match self {
            SourceImpedance::Map(m) => m
                .impedance(omega / std::f64::consts::TAU, speed_rev_s)
                .inv(),
            other => other.admittance(omega),
        }
    }

    /// Source admittance Ys = 1/Zs at ω; a map is taken at its lowest
    /// speed here: use [`SourceImpedance::admittance_at`] (or
    /// [`Pump::source_admittance`]) where a map may occur.
    pub fn admittance(&self, omega: f64) -> C64 {
        match self {
            SourceImpedance::Map(m) => m
                .impedance(omega / std::f64::consts::TAU, m.speed_range_rev_s().0)
                .inv(),
            SourceImpedance::Volume {
                capacitance_m3_pa,
                leakage_resistance_pa_s_m3,
            } => C64::new(
                leakage_resistance_pa_s_m3.map_or(0.0, |r| 1.0 / r),
                omega * capacitance_m3_pa,
            ),
            SourceImpedance::Table(t) => t.at(omega / std::f64::consts::TAU).inv(),
            SourceImpedance::VolumePassage {
                capacitance_m3_pa,
                leakage_resistance_pa_s_m3,
                passage_resistance_pa_s_m3,
                passage_inertance_kg_m4,
            } => {
                let inner = C64::new(
                    leakage_resistance_pa_s_m3.map_or(0.0, |r| 1.0 / r),
                    omega * capacitance_m3_pa,
                );
                if inner == C64::new(0.0, 0.0) {
                    return inner; // an ideal flow source
                }
                let passage =
                    C64::new(*passage_resistance_pa_s_m3, omega * passage_inertance_kg_m4);
                inner / (C64::new(1.0, 0.0) + passage * inner)
            }
        }
    }
}

/// Source impedance known at discrete frequencies.
///
/// Between points, the amplitude and the (unwrapped) phase are interpolated
/// linearly in frequency; outside the table the end values are held (the
/// circuit's warnings say when a solve leaves the table's range).
#[derive(Debug, Clone, PartialEq)]
pub struct ImpedanceTable {
    points: Vec<(f64, f64, f64)>, // (frequency Hz, |Zs| Pa·s/m³, unwrapped phase rad)
}

impl ImpedanceTable {
    /// Builds a table from (frequency in Hz, Zs) pairs.
    ///
    /// # Errors
    /// A message when the table is empty, a frequency is not finite and
    /// positive, frequencies are not strictly increasing, or a Zs is zero or
    /// not finite.
    pub fn new(points: &[(f64, C64)]) -> Result<Self, String> {
        if points.is_empty() {
            return Err("the impedance table is empty".into());
        }
        let mut out: Vec<(f64, f64, f64)> = Vec::with_capacity(points.len());
        for (i, &(f, z)) in points.iter().enumerate() {
            if !(f.is_finite() && f > 0.0) {
                return Err(format!(
                    "point {}: frequency {f} Hz is not finite and positive",
                    i + 1
                ));
            }
            if let Some(&(prev, _, _)) = out.last().filter(|p| f <= p.0) {
                return Err(format!(
                    "point {}: frequencies must increase strictly ({f} Hz after {prev} Hz)",
                    i + 1
                ));
            }
            if !(z.is_finite() && z.norm() > 0.0) {
                return Err(format!(
                    "point {}: impedance {z} is zero or not finite",
                    i + 1
                ));
            }
            let mut phase = z.arg();
            if let Some(&(_, _, last)) = out.last() {
                // unwrap: keep each step within ±π of the previous phase
                phase += std::f64::consts::TAU * ((last - phase) / std::f64::consts::TAU).round();
            }
            out.push((f, z.norm(), phase));
        }
        Ok(ImpedanceTable { points: out })
    }

    /// The frequency range covered, in Hz.
    pub fn range_hz(&self) -> (f64, f64) {
        (self.points[0].0, self.points[self.points.len() - 1].0)
    }

    /// Zs at `freq_hz`: linear in amplitude and unwrapped phase between
    /// points, end values held outside.
    pub fn at(&self, freq_hz: f64) -> C64 {
        let p = &self.points;
        let i = p.partition_point(|q| q.0 < freq_hz);
        let (amp, phase) = if i == 0 {
            (p[0].1, p[0].2)
        } else if i == p.len() {
            (p[i - 1].1, p[i - 1].2)
        } else {
            let (f0, a0, ph0) = p[i - 1];
            let (f1, a1, ph1) = p[i];
            let t = (freq_hz - f0) / (f1 - f0);
            (a0 + t * (a1 - a0), ph0 + t * (ph1 - ph0))
        };
        C64::from_polar(amp, phase)
    }
}

/// A pump in a circuit.
#[derive(Debug, Clone, PartialEq)]
pub struct Pump {
    /// Name, for reports.
    pub name: String,
    /// The outlet node it feeds.
    pub node: NodeId,
    /// Shaft speed n in rev/s.
    pub speed_rev_s: f64,
    /// Operating speed range (lowest, highest) in rev/s, for sweeps and
    /// resonance checks, if the circuit states one.
    pub speed_range_rev_s: Option<(f64, f64)>,
    /// Number of pumping elements z (teeth of one gear, or pistons).
    pub pumping_elements: u32,
    /// Geometric displacement per revolution in m³, if known.
    pub displacement_m3: Option<f64>,
    /// The shaft it shares with other pumps (same speed, same angle
    /// reference), if any; `None` is a shaft of its own ([`shafts`]).
    pub shaft: Option<String>,
    /// The source flow ripple.
    pub flow_ripple: FlowRipple,
    /// The source impedance.
    pub source_impedance: SourceImpedance,
}

impl Pump {
    /// Pumping frequency f_p = n·z in Hz at the pump's speed.
    pub fn pumping_frequency_hz(&self) -> f64 {
        self.speed_rev_s * f64::from(self.pumping_elements)
    }

    /// Mean delivered flow (displacement × speed) in m³/s, if the
    /// displacement is known.
    pub fn mean_flow_m3_s(&self) -> Option<f64> {
        self.displacement_m3.map(|d| d * self.speed_rev_s)
    }

    /// The highest harmonic order the flow ripple defines.
    pub fn max_order(&self) -> u32 {
        match &self.flow_ripple {
            FlowRipple::Table { harmonics, .. } => {
                harmonics.iter().map(|h| h.order).max().unwrap_or(0)
            }
            FlowRipple::Kinematic(_) => kinematic::MAX_ORDER,
            FlowRipple::Map(m) => m.orders().iter().copied().max().unwrap_or(0),
        }
    }

    /// Whether harmonic `order` has any source flow (a table lists it with
    /// a non-zero amplitude, or the kinematics give it). Harmonics without
    /// source flow excite nothing: reports, plots and tables leave them out.
    pub fn has_source_flow(&self, order: u32) -> bool {
        match &self.flow_ripple {
            FlowRipple::Map(m) => m.lists_flow(order),
            _ => self.flow_ripple_at(order, 1.0) != C64::new(0.0, 0.0),
        }
    }

    /// Source admittance Ys = 1/Zs at ω and the pump's speed.
    pub fn source_admittance(&self, omega: f64) -> C64 {
        self.source_impedance.admittance_at(omega, self.speed_rev_s)
    }

    /// Complex source flow ripple Qs of harmonic `order` at the pump's speed
    /// (zero for an order the table does not list).
    pub fn flow_ripple(&self, order: u32) -> C64 {
        self.flow_ripple_at(order, self.speed_rev_s)
    }

    /// Complex source flow ripple Qs of harmonic `order` (peak, m³/s, phase
    /// against the shaft angle) at shaft speed `speed_rev_s`: both forms are
    /// in proportion to speed.
    pub fn flow_ripple_at(&self, order: u32, speed_rev_s: f64) -> C64 {
        self.flow_ripple.at(order, speed_rev_s)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    // methods.md §5 worked example: C_s = 6.25e-14 m³/Pa (0.1 L at 1.6 GPa),
    // R_leak = 1.2e12 Pa·s/m³; at 225 Hz Zs = 1.067322e8 − j1.131668e10
    // (computed with numpy; recomputable by hand from Zs = 1/(jωC + 1/R)).
    #[test]
    fn volume_with_leakage_impedance() {
        let zs = SourceImpedance::Volume {
            capacitance_m3_pa: 1e-4 / 1.6e9,
            leakage_resistance_pa_s_m3: Some(1.2e12),
        };
        let z = zs.admittance(2.0 * std::f64::consts::PI * 225.0).inv();
        assert!((z.re - 1.067322e8).abs() / 1.067322e8 < 1e-6);
        assert!((z.im + 1.131668e10).abs() / 1.131668e10 < 1e-6);
    }

    #[test]
    fn impedance_table_interpolates_amplitude_and_unwrapped_phase() {
        // Two points either side of the ±180° cut: the phase must pass
        // through 180°, not through 0°.
        let t = ImpedanceTable::new(&[
            (100.0, C64::from_polar(2.0, 170f64.to_radians())),
            (200.0, C64::from_polar(4.0, -170f64.to_radians())),
        ])
        .unwrap();
        let mid = t.at(150.0);
        assert!((mid.norm() - 3.0).abs() < 1e-12);
        assert!((mid.arg().abs() - std::f64::consts::PI).abs() < 1e-12);
        assert_eq!(t.at(50.0), t.at(100.0));
        assert_eq!(t.at(500.0), t.at(200.0));
        assert!(
            ImpedanceTable::new(&[(200.0, C64::new(1.0, 0.0)), (100.0, C64::new(1.0, 0.0))])
                .is_err()
        );
        assert!(ImpedanceTable::new(&[]).is_err());
    }

    #[test]
    fn ripple_scales_with_speed_and_pumping_frequency_is_n_times_z() {
        let pump = Pump {
            name: "p".into(),
            node: 0,
            speed_rev_s: 30.0,
            speed_range_rev_s: None,
            pumping_elements: 12,
            displacement_m3: Some(25e-6),
            shaft: None,
            flow_ripple: FlowRipple::Table {
                reference_speed_rev_s: 25.0,
                harmonics: vec![FlowHarmonic {
                    order: 1,
                    amplitude_m3_s: 1e-5,
                    phase_rad: 0.5,
                }],
            },
            source_impedance: SourceImpedance::Volume {
                capacitance_m3_pa: 0.0,
                leakage_resistance_pa_s_m3: None,
            },
        };
        assert_eq!(pump.pumping_frequency_hz(), 360.0);
        let q = pump.flow_ripple(1);
        assert!((q.norm() - 1.2e-5).abs() < 1e-18);
        assert!((q.arg() - 0.5).abs() < 1e-15);
        assert_eq!(pump.flow_ripple(2), C64::new(0.0, 0.0));
        assert!((pump.mean_flow_m3_s().unwrap() - 7.5e-4).abs() < 1e-18);
    }
}
