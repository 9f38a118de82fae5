//! Pump source files: a pump's Norton parameters per harmonic, as estimated
//! on a bench (`ripline fit --source-out`) or typed in from a datasheet, and
//! read by circuit files through `pump.source_file`.
//!
//! ```yaml
//! # ripline pump source
//! pump: bench pump A           # a name
//! speed: 1500 rpm              # shaft speed of the measurement
//! pumping_elements: 9
//! harmonics:
//!   - harmonic: 1
//!     flow_amplitude: 1.2e-5        # m³/s, peak (units allowed)
//!     flow_phase: 12.5 deg
//!     impedance_amplitude: 1.1e10   # Pa·s/m³
//!     impedance_phase: -87.0 deg
//!     flow_uncertainty: 2e-7        # optional, m³/s
//!     impedance_uncertainty: 3e8    # optional, Pa·s/m³
//!     status: ill_conditioned       # optional: estimated (default), extrapolated,
//!                                   # ill_conditioned, unstable
//!     note: "…"                     # optional: why, and the bias to expect
//! ```
//!
//! A harmonic whose status is not `estimated` is still used by circuits,
//! with a warning (see [`source_file_notes`](super::circuit_file::source_file_notes)).
//!
//! The flow ripple becomes a harmonic table at the measured speed (scaled in
//! proportion to speed elsewhere) and the impedance a table against
//! frequency k·f_p at the measured speed, interpolated between harmonics.

use super::InputError;
use super::locate::KeyPath;
use super::quantity::{self as q, Q};
use crate::C64;
use crate::estimate::fit::HarmonicStatus;
use crate::source::{FlowHarmonic, FlowRipple, ImpedanceTable, SourceImpedance};
use serde::Deserialize;
use std::io::Write;
use std::path::Path;

/// One harmonic of a pump source.
#[derive(Debug, Clone, PartialEq)]
pub struct SourceHarmonic {
    /// Harmonic order k of the pumping frequency.
    pub order: u32,
    /// Source flow ripple Qs (peak phasor) in m³/s.
    pub flow: C64,
    /// Source impedance Zs in Pa·s/m³.
    pub impedance: C64,
    /// Standard uncertainty of |Qs| in m³/s, if known.
    pub flow_uncertainty: Option<f64>,
    /// Standard uncertainty of |Zs| in Pa·s/m³, if known.
    pub impedance_uncertainty: Option<f64>,
    /// How far the estimate can be trusted (from the bench fit).
    pub status: HarmonicStatus,
    /// Why, and the bias to expect, if the status is not `estimated`.
    pub note: Option<String>,
}

/// A pump's Norton parameters per harmonic at one speed.
#[derive(Debug, Clone, PartialEq)]
pub struct PumpSource {
    /// The pump's name.
    pub name: String,
    /// Shaft speed of the data in rev/s.
    pub speed_rev_s: f64,
    /// Its standard uncertainty in rev/s, if known (written as a comment,
    /// and setting the digits the speed is written with).
    pub speed_uncertainty_rev_s: Option<f64>,
    /// Number of pumping elements (teeth or pistons).
    pub pumping_elements: u32,
    /// The harmonics, in increasing order.
    pub harmonics: Vec<SourceHarmonic>,
}

impl PumpSource {
    /// Pumping frequency of the data in Hz.
    pub fn pumping_frequency_hz(&self) -> f64 {
        self.speed_rev_s * f64::from(self.pumping_elements)
    }

    /// The flow ripple as a harmonic table at the data's speed.
    pub fn flow_ripple(&self) -> FlowRipple {
        FlowRipple::Table {
            reference_speed_rev_s: self.speed_rev_s,
            harmonics: self
                .harmonics
                .iter()
                .map(|h| FlowHarmonic {
                    order: h.order,
                    amplitude_m3_s: h.flow.norm(),
                    phase_rad: h.flow.arg(),
                })
                .collect(),
        }
    }

    /// The source impedance as a table against frequency.
    ///
    /// # Errors
    /// A message if the table is not valid (see [`ImpedanceTable::new`]).
    pub fn source_impedance(&self) -> Result<SourceImpedance, String> {
        let fp = self.pumping_frequency_hz();
        let points: Vec<(f64, C64)> = self
            .harmonics
            .iter()
            .map(|h| (f64::from(h.order) * fp, h.impedance))
            .collect();
        ImpedanceTable::new(&points).map(SourceImpedance::Table)
    }
}

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a pump source: a mapping with pump, speed, pumping_elements and harmonics"
)]
struct RawSource {
    pump: Option<String>,
    speed: Q<q::ShaftSpeed>,
    pumping_elements: u32,
    harmonics: Vec<RawSourceHarmonic>,
}

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a source harmonic: a mapping with harmonic, flow_amplitude, flow_phase, impedance_amplitude and impedance_phase"
)]
struct RawSourceHarmonic {
    harmonic: u32,
    flow_amplitude: Q<q::Flow>,
    flow_phase: Q<q::Angle>,
    impedance_amplitude: Q<q::Resistance>,
    impedance_phase: Q<q::Angle>,
    flow_uncertainty: Option<Q<q::Flow>>,
    impedance_uncertainty: Option<Q<q::Resistance>>,
    status: Option<String>,
    note: Option<String>,
}

/// Reads and validates a pump source file.
///
/// # Errors
/// [`InputError`] naming the file, line and key at fault.
pub fn load_source_file(path: &Path) -> Result<PumpSource, InputError> {
    let text = super::read_text(path)?;
    parse_source(&text, &path.display().to_string())
}

/// Parses and validates pump source text; `file` names it in messages.
///
/// # Errors
/// [`InputError`] naming the file, line and key at fault.
pub fn parse_source(text: &str, file: &str) -> Result<PumpSource, InputError> {
    let raw: RawSource = super::parse_yaml(text, file)?;
    let root = KeyPath::root();
    let err = |path: &KeyPath, msg: String| InputError::located(file, text, path, msg);
    let speed = raw.speed.si;
    if !(0.1..=1000.0).contains(&speed) {
        return Err(err(
            &root.key("speed"),
            format!("speed {:.1} rpm is outside 6 .. 60000 rpm", speed * 60.0),
        ));
    }
    if !(1..=99).contains(&raw.pumping_elements) {
        return Err(err(
            &root.key("pumping_elements"),
            format!("must be between 1 and 99, found {}", raw.pumping_elements),
        ));
    }
    if raw.harmonics.is_empty() {
        return Err(err(
            &root.key("harmonics"),
            "no harmonics are listed".into(),
        ));
    }
    let mut harmonics: Vec<SourceHarmonic> = Vec::with_capacity(raw.harmonics.len());
    for (i, h) in raw.harmonics.iter().enumerate() {
        let hp = root.key("harmonics").index(i);
        if let Some(prev) = harmonics.last().filter(|p| h.harmonic <= p.order) {
            return Err(err(
                &hp.key("harmonic"),
                format!(
                    "harmonics must be listed in increasing order without repeats ({} after {})",
                    h.harmonic, prev.order
                ),
            ));
        }
        if h.harmonic == 0 || h.harmonic > 200 {
            return Err(err(
                &hp.key("harmonic"),
                format!(
                    "harmonic order must be between 1 and 200, found {}",
                    h.harmonic
                ),
            ));
        }
        if !(0.0..=10.0).contains(&h.flow_amplitude.si) {
            return Err(err(
                &hp.key("flow_amplitude"),
                format!(
                    "must be between 0 and 10 m³/s, found {}",
                    h.flow_amplitude.si
                ),
            ));
        }
        if h.impedance_amplitude.si <= 0.0 {
            return Err(err(
                &hp.key("impedance_amplitude"),
                format!(
                    "must be greater than zero, found {}",
                    h.impedance_amplitude.si
                ),
            ));
        }
        let status = match h.status.as_deref() {
            None => HarmonicStatus::Estimated,
            Some(s) => HarmonicStatus::from_key(s).ok_or_else(|| {
                err(
                    &hp.key("status"),
                    format!(
                        "unknown status `{s}`: write estimated, extrapolated, ill_conditioned or unstable"
                    ),
                )
            })?,
        };
        harmonics.push(SourceHarmonic {
            order: h.harmonic,
            flow: C64::from_polar(h.flow_amplitude.si, h.flow_phase.si),
            impedance: C64::from_polar(h.impedance_amplitude.si, h.impedance_phase.si),
            flow_uncertainty: h.flow_uncertainty.map(|q| q.si),
            impedance_uncertainty: h.impedance_uncertainty.map(|q| q.si),
            status,
            note: h.note.clone(),
        });
    }
    for (i, h) in harmonics.iter().enumerate() {
        let bad = |v: Option<f64>| v.is_some_and(|u| u < 0.0);
        if bad(h.flow_uncertainty) || bad(h.impedance_uncertainty) {
            return Err(err(
                &root.key("harmonics").index(i),
                "uncertainties must not be negative".into(),
            ));
        }
    }
    Ok(PumpSource {
        name: raw.pump.unwrap_or_else(|| "pump".into()),
        speed_rev_s: speed,
        speed_uncertainty_rev_s: None,
        pumping_elements: raw.pumping_elements,
        harmonics,
    })
}

/// Writes a pump source file that [`load_source_file`] reads back: each
/// value with the digits its standard uncertainty supports (JCGM 100:2008
/// §7.2.6; [`crate::estimate::uncertainty::scientific`]), and with all of a
/// double's digits where no uncertainty is known, so that such values read
/// back exactly. Phases take the digits of the amplitude's relative
/// uncertainty (for circular noise σ_φ = σ_A/|X| rad); the speed is written
/// in rpm.
///
/// # Errors
/// The writer's I/O error.
pub fn write_source_file<W: Write>(
    source: &PumpSource,
    mut out: W,
    comment: &str,
) -> std::io::Result<()> {
    use crate::estimate::uncertainty::{fixed, scientific};
    writeln!(out, "# ripline pump source")?;
    for line in comment.lines() {
        writeln!(out, "# {line}")?;
    }
    writeln!(out, "pump: {}", yaml_string(&source.name))?;
    let rpm_u = source.speed_uncertainty_rev_s.map(|u| 60.0 * u);
    write!(
        out,
        "speed: {} rpm",
        fixed(60.0 * source.speed_rev_s, rpm_u)
    )?;
    match rpm_u {
        Some(u) => writeln!(out, "   # ± {u:.1e} rpm (standard uncertainty)")?,
        None => writeln!(out)?,
    }
    writeln!(out, "pumping_elements: {}", source.pumping_elements)?;
    writeln!(out, "harmonics:")?;
    // Amplitude and phase of a phasor; the phase's uncertainty is the
    // amplitude's over |X| (circular noise).
    let polar = |out: &mut W, name: &str, x: C64, u: Option<f64>, unit: &str| {
        writeln!(
            out,
            "    {name}_amplitude: {} {unit}",
            scientific(x.norm(), u)
        )?;
        let u_deg = u.map(|u| (u / x.norm()).to_degrees());
        writeln!(
            out,
            "    {name}_phase: {} deg",
            fixed(x.arg().to_degrees(), u_deg)
        )
    };
    for h in &source.harmonics {
        writeln!(out, "  - harmonic: {}", h.order)?;
        polar(&mut out, "flow", h.flow, h.flow_uncertainty, "m3/s")?;
        polar(
            &mut out,
            "impedance",
            h.impedance,
            h.impedance_uncertainty,
            "Pa.s/m3",
        )?;
        if let Some(u) = h.flow_uncertainty {
            writeln!(out, "    flow_uncertainty: {u:.1e} m3/s")?;
        }
        if let Some(u) = h.impedance_uncertainty {
            writeln!(out, "    impedance_uncertainty: {u:.1e} Pa.s/m3")?;
        }
        if h.status != HarmonicStatus::Estimated {
            writeln!(out, "    status: {}", h.status.key())?;
        }
        if let Some(n) = &h.note {
            writeln!(out, "    note: {}", yaml_string(n))?;
        }
    }
    Ok(())
}

/// A YAML double-quoted string.
fn yaml_string(s: &str) -> String {
    let mut out = String::from("\"");
    for c in s.chars() {
        match c {
            '"' => out.push_str("\\\""),
            '\\' => out.push_str("\\\\"),
            c if c.is_control() => out.push_str(&format!("\\u{:04x}", c as u32)),
            c => out.push(c),
        }
    }
    out.push('"');
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn written_files_read_back_to_the_digits_their_uncertainty_supports() {
        let src = PumpSource {
            name: "bench \"A\"".into(),
            speed_rev_s: 25.0,
            speed_uncertainty_rev_s: None,
            pumping_elements: 9,
            harmonics: vec![
                SourceHarmonic {
                    order: 1,
                    flow: C64::new(1.2e-5, -3.4e-6),
                    impedance: C64::new(1.0e8, -1.13e10),
                    flow_uncertainty: Some(1e-7),
                    impedance_uncertainty: None,
                    status: HarmonicStatus::Estimated,
                    note: None,
                },
                SourceHarmonic {
                    order: 2,
                    flow: C64::new(-2e-6, 1e-6),
                    impedance: C64::new(5e7, -5.6e9),
                    flow_uncertainty: None,
                    impedance_uncertainty: Some(2e8),
                    status: HarmonicStatus::IllConditioned,
                    note: Some("cond = 14 \"high\"".into()),
                },
            ],
        };
        let mut buf = Vec::new();
        write_source_file(&src, &mut buf, "test").unwrap();
        let text = String::from_utf8(buf).unwrap();
        let back = parse_source(&text, "t.yaml").unwrap();
        assert_eq!(back.name, src.name);
        assert_eq!(back.speed_rev_s, src.speed_rev_s);
        // Without an uncertainty a value reads back exactly; with one, to
        // its rounding: at most 0.05 u in amplitude and 0.05 u/|X| rad in
        // phase (the uncertainty's second significant digit, JCGM 100:2008
        // §7.2.6), so within 0.1 u.
        let tol = |x: C64, u: Option<f64>| u.map_or(1e-15 * x.norm(), |u| 0.1 * u);
        for (a, b) in back.harmonics.iter().zip(&src.harmonics) {
            assert!((a.flow - b.flow).norm() <= tol(b.flow, b.flow_uncertainty));
            assert!(
                (a.impedance - b.impedance).norm() <= tol(b.impedance, b.impedance_uncertainty)
            );
            assert_eq!(a.flow_uncertainty, b.flow_uncertainty);
            assert_eq!(a.impedance_uncertainty, b.impedance_uncertainty);
            assert_eq!((a.status, &a.note), (b.status, &b.note));
        }
        assert!(text.contains("flow_amplitude: 1.247e-5 m3/s"), "{text}");
        // A measured speed: 25.0500342 ± 1.23e-5 rev/s is 1503.002052 ±
        // 7.4e-4 rpm, written to 1e-5 rpm.
        let measured = PumpSource {
            speed_rev_s: 25.050_034_2,
            speed_uncertainty_rev_s: Some(1.23e-5),
            ..src.clone()
        };
        let mut buf = Vec::new();
        write_source_file(&measured, &mut buf, "test").unwrap();
        let text = String::from_utf8(buf).unwrap();
        assert!(
            text.contains("speed: 1503.00205 rpm   # ± 7.4e-4 rpm (standard uncertainty)"),
            "{text}"
        );
        // The impedance table holds the values at k·f_p.
        let SourceImpedance::Table(t) = back.source_impedance().unwrap() else {
            panic!("a table")
        };
        assert_eq!(t.range_hz(), (225.0, 450.0));
        assert!((t.at(450.0) - src.harmonics[1].impedance).norm() < 0.1 * 2e8);
    }

    #[test]
    fn bad_source_files_are_located() {
        let text = "speed: 1500 rpm\npumping_elements: 9\nharmonics:\n  - harmonic: 2\n    flow_amplitude: 1e-5\n    flow_phase: 0\n    impedance_amplitude: 1e10\n    impedance_phase: 0\n  - harmonic: 1\n    flow_amplitude: 1e-5\n    flow_phase: 0\n    impedance_amplitude: 1e10\n    impedance_phase: 0\n";
        let msg = parse_source(text, "s.yaml").unwrap_err().to_string();
        assert!(
            msg.starts_with("s.yaml:9:") && msg.contains("increasing order"),
            "{msg}"
        );
    }
}
