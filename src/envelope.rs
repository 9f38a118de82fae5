//! Operating envelopes and limits: the conditions a machine runs at and the
//! ripple it may have there.
//!
//! A circuit file describes one operating point. Its `envelope` section
//! spans the others: a speed range of one shaft, mean pressure levels, oil
//! temperatures and named load cases (element values overridden, elements
//! closed off). An envelope **point** is one combination of a pressure, a
//! temperature and a case; the speed runs over the range at every point.
//! The circuit at a point is the file re-read with the point's values
//! (`io::CircuitFile::at`), so every quantity that follows the mean
//! pressure or the temperature follows it by its own law: the oil's density,
//! bulk modulus, viscosity and free air (`oil`), each pulsation damper's gas
//! volume by Boyle's law from its precharge (bottomed below it), and any
//! line model that reads the fluid's state.
//!
//! The `limits` section gives, per measurement point, the largest overall
//! rms, peak-to-peak or single-harmonic ripple allowed; the verdict
//! (`analysis::envelope`) compares the worst of the envelope with them.

use serde::Serialize;

/// The operating envelope of a circuit file (SI: rev/s, Pa gauge, K).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Envelope {
    /// Speed range of the swept shaft in rev/s; `None`: the pump's own
    /// `speed_range`.
    pub speed_range_rev_s: Option<(f64, f64)>,
    /// The shaft (or pump) the speed range applies to; `None`: the first
    /// pump's shaft.
    pub shaft: Option<String>,
    /// Mean pressure levels, gauge, in Pa; empty: the file's own.
    pub pressures_pa: Vec<f64>,
    /// Oil temperatures in K; empty: the file's own.
    pub temperatures_k: Vec<f64>,
    /// Named load cases; empty: the circuit as written.
    pub cases: Vec<LoadCase>,
}

/// A named load case: element values overridden and elements closed off.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LoadCase {
    /// Its name.
    pub name: String,
    /// What it stands for, as the file says (`note`).
    pub note: Option<String>,
    /// The elements whose values it sets, by name.
    pub changed: Vec<String>,
    /// The elements it closes off, by name.
    pub closed: Vec<String>,
}

/// One point of an envelope: a pressure, a temperature and a load case
/// (each `None` where the envelope does not vary it: the file's own).
#[derive(Debug, Clone, PartialEq, Default, Serialize)]
pub struct OperatingPoint {
    /// Mean pressure, gauge, in Pa.
    pub pressure_pa: Option<f64>,
    /// Oil temperature in K.
    pub temperature_k: Option<f64>,
    /// The load case's name.
    pub case: Option<String>,
}

impl OperatingPoint {
    /// A short label such as `120 bar, 50 °C, boom raising`, or `as
    /// written` for the file's own point.
    pub fn label(&self) -> String {
        let mut parts = Vec::new();
        if let Some(p) = self.pressure_pa {
            parts.push(format!("{} bar", trim_number(p / 1e5)));
        }
        if let Some(t) = self.temperature_k {
            parts.push(format!(
                "{} °C",
                trim_number(t - crate::oil::ZERO_CELSIUS_K)
            ));
        }
        if let Some(c) = &self.case {
            parts.push(c.clone());
        }
        if parts.is_empty() {
            "as written".into()
        } else {
            parts.join(", ")
        }
    }
}

/// A number with at most two decimals and no trailing zeros.
fn trim_number(v: f64) -> String {
    let s = format!("{v:.2}");
    let s = s.trim_end_matches('0').trim_end_matches('.');
    if s == "-0" { "0".into() } else { s.into() }
}

impl Envelope {
    /// Every point: each case (outermost), each pressure, each temperature.
    pub fn points(&self) -> Vec<OperatingPoint> {
        fn or_none<T: Clone>(v: &[T]) -> Vec<Option<T>> {
            if v.is_empty() {
                vec![None]
            } else {
                v.iter().cloned().map(Some).collect()
            }
        }
        let cases: Vec<Option<String>> = or_none(
            &self
                .cases
                .iter()
                .map(|c| c.name.clone())
                .collect::<Vec<_>>(),
        );
        let mut out = Vec::new();
        for case in &cases {
            for &pressure_pa in &or_none(&self.pressures_pa) {
                for &temperature_k in &or_none(&self.temperatures_k) {
                    out.push(OperatingPoint {
                        pressure_pa,
                        temperature_k,
                        case: case.clone(),
                    });
                }
            }
        }
        out
    }
}

/// Which envelope points a command runs at: every point matching all the
/// given parts (all of them when none is given). A command that runs at
/// one point takes the options that select it (`--at LABEL`, or the
/// pressure, temperature and case).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct PointFilter {
    /// A point's full label, as [`OperatingPoint::label`] writes it.
    pub label: Option<String>,
    /// A mean pressure (gauge, Pa) of the envelope.
    pub pressure_pa: Option<f64>,
    /// An oil temperature (K) of the envelope.
    pub temperature_k: Option<f64>,
    /// A load case's name.
    pub case: Option<String>,
}

/// A point filter that matches no point of the envelope.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("{what} is not in the envelope; it has: {valid}")]
pub struct NoSuchPoint {
    /// What was asked for.
    pub what: String,
    /// What the envelope has.
    pub valid: String,
}

impl Envelope {
    /// The points that match `filter`, in the envelope's order.
    ///
    /// # Errors
    /// [`NoSuchPoint`] naming the part that matches nothing and the values
    /// the envelope has for it.
    pub fn select(&self, filter: &PointFilter) -> Result<Vec<OperatingPoint>, NoSuchPoint> {
        let close = |a: f64, b: f64| (a - b).abs() <= 1e-9 * a.abs().max(b.abs()).max(1.0);
        let list = |v: Vec<String>| {
            if v.is_empty() {
                "none (the envelope does not vary it)".to_string()
            } else {
                v.join(", ")
            }
        };
        if let Some(p) = filter.pressure_pa
            && !self.pressures_pa.iter().any(|&x| close(x, p))
        {
            return Err(NoSuchPoint {
                what: format!("the mean pressure {} bar", trim_number(p / 1e5)),
                valid: list(
                    self.pressures_pa
                        .iter()
                        .map(|x| format!("{} bar", trim_number(x / 1e5)))
                        .collect(),
                ),
            });
        }
        if let Some(t) = filter.temperature_k
            && !self.temperatures_k.iter().any(|&x| close(x, t))
        {
            return Err(NoSuchPoint {
                what: format!(
                    "the oil temperature {} °C",
                    trim_number(t - crate::oil::ZERO_CELSIUS_K)
                ),
                valid: list(
                    self.temperatures_k
                        .iter()
                        .map(|x| format!("{} °C", trim_number(x - crate::oil::ZERO_CELSIUS_K)))
                        .collect(),
                ),
            });
        }
        if let Some(c) = &filter.case
            && !self.cases.iter().any(|x| &x.name == c)
        {
            return Err(NoSuchPoint {
                what: format!("the load case `{c}`"),
                valid: list(self.cases.iter().map(|x| format!("`{}`", x.name)).collect()),
            });
        }
        let all = self.points();
        let chosen: Vec<OperatingPoint> = all
            .iter()
            .filter(|p| {
                filter.label.as_ref().is_none_or(|l| p.label() == *l)
                    && filter
                        .pressure_pa
                        .is_none_or(|x| p.pressure_pa.is_some_and(|y| close(x, y)))
                    && filter
                        .temperature_k
                        .is_none_or(|x| p.temperature_k.is_some_and(|y| close(x, y)))
                    && filter
                        .case
                        .as_ref()
                        .is_none_or(|c| p.case.as_ref() == Some(c))
            })
            .cloned()
            .collect();
        if chosen.is_empty() {
            return Err(NoSuchPoint {
                what: format!("the point `{}`", filter.label.clone().unwrap_or_default()),
                valid: list(all.iter().map(|p| format!("`{}`", p.label())).collect()),
            });
        }
        Ok(chosen)
    }
}

/// What a limit bounds.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum LimitKind {
    /// The overall rms ripple, √(Σ|P_k|²/2).
    Rms,
    /// The peak-to-peak of the waveform rebuilt from the harmonics.
    PeakToPeak,
    /// The peak amplitude |P_k| of every single harmonic.
    Harmonic,
}

impl LimitKind {
    /// The key that sets it in a `limits` entry.
    pub fn key(self) -> &'static str {
        match self {
            LimitKind::Rms => "rms",
            LimitKind::PeakToPeak => "peak_to_peak",
            LimitKind::Harmonic => "harmonic",
        }
    }
}

/// A limit on the ripple at a measurement point.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Limit {
    /// What it bounds.
    pub kind: LimitKind,
    /// The largest value allowed, in Pa (an rms for [`LimitKind::Rms`], a
    /// peak-to-peak, or a harmonic's peak amplitude).
    pub value_pa: f64,
    /// The dB reference when the limit was written as a level (rms levels:
    /// L = 20·log10(P_rms/p_ref); a harmonic's level is that of its rms,
    /// |P_k|/√2; a peak-to-peak level is that of the peak-to-peak value).
    pub db_ref_pa: Option<f64>,
    /// The limit as written in the file.
    pub written: String,
}

impl Limit {
    /// The value of a limit written as `level_db` dB re `db_ref_pa`, in the
    /// units of [`Limit::value_pa`].
    pub fn from_level(kind: LimitKind, level_db: f64, db_ref_pa: f64) -> f64 {
        let p = db_ref_pa * 10f64.powf(level_db / 20.0);
        match kind {
            LimitKind::Harmonic => p * std::f64::consts::SQRT_2,
            LimitKind::Rms | LimitKind::PeakToPeak => p,
        }
    }
}

/// The limits of one measurement point.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TapLimits {
    /// The point (a tap, or a node when the circuit has no taps).
    pub tap: String,
    /// Its limits, at most one of each kind.
    pub limits: Vec<Limit>,
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn points_are_the_product_with_cases_outermost() {
        let e = Envelope {
            speed_range_rev_s: None,
            shaft: None,
            pressures_pa: vec![25e5, 250e5],
            temperatures_k: vec![273.15, 353.15],
            cases: vec![
                LoadCase {
                    name: "a".into(),
                    note: None,
                    changed: vec![],
                    closed: vec![],
                },
                LoadCase {
                    name: "b".into(),
                    note: None,
                    changed: vec![],
                    closed: vec![],
                },
            ],
        };
        let p = e.points();
        assert_eq!(p.len(), 8);
        assert_eq!(p[0].label(), "25 bar, 0 °C, a");
        assert_eq!(p[3].label(), "250 bar, 80 °C, a");
        assert_eq!(p[4].case.as_deref(), Some("b"));
        let bare = Envelope {
            pressures_pa: vec![],
            temperatures_k: vec![],
            cases: vec![],
            ..e
        };
        assert_eq!(bare.points(), vec![OperatingPoint::default()]);
        assert_eq!(bare.points()[0].label(), "as written");
    }

    #[test]
    fn points_are_selected_by_label_or_part() {
        let e = Envelope {
            speed_range_rev_s: None,
            shaft: None,
            pressures_pa: vec![25e5, 250e5],
            temperatures_k: vec![273.15, 353.15],
            cases: vec![LoadCase {
                name: "lift".into(),
                note: None,
                changed: vec![],
                closed: vec![],
            }],
        };
        let by_label = PointFilter {
            label: Some("250 bar, 80 °C, lift".into()),
            ..Default::default()
        };
        assert_eq!(e.select(&by_label).unwrap().len(), 1);
        let by_pressure = PointFilter {
            pressure_pa: Some(25e5),
            ..Default::default()
        };
        let p = e.select(&by_pressure).unwrap();
        assert_eq!(p.len(), 2);
        assert!(p.iter().all(|p| p.pressure_pa == Some(25e5)));
        assert_eq!(e.select(&PointFilter::default()).unwrap().len(), 4);
        let err = e
            .select(&PointFilter {
                pressure_pa: Some(100e5),
                ..Default::default()
            })
            .unwrap_err();
        assert_eq!(
            err.to_string(),
            "the mean pressure 100 bar is not in the envelope; it has: 25 bar, 250 bar"
        );
        let err = e
            .select(&PointFilter {
                label: Some("nowhere".into()),
                ..Default::default()
            })
            .unwrap_err();
        assert!(err.to_string().contains("`25 bar, 0 °C, lift`"), "{err}");
    }

    // L = 20·log10(p/p_ref) (the definition of a level in dB): 100 dB re
    // 1 Pa is 1e5 Pa = 1 bar. A harmonic's level is that of its rms
    // |P|/√2, so its peak-amplitude limit is √2 times that.
    #[test]
    fn levels_become_pressures() {
        assert!((Limit::from_level(LimitKind::Rms, 100.0, 1.0) - 1e5).abs() < 1e-6);
        let h = Limit::from_level(LimitKind::Harmonic, 100.0, 1.0);
        assert!((h - 1e5 * 2f64.sqrt()).abs() < 1e-6);
        assert!((Limit::from_level(LimitKind::PeakToPeak, 0.0, 1e5) - 1e5).abs() < 1e-9);
    }
}
