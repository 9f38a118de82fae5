//! Results as data: one result type per analysis, holding everything any
//! output needs.
//!
//! Each module here runs one analysis the way a command does (`solve`,
//! `check`, `profile`, `response`, `silencer`, `tune`, `sweep`, `fit`, `fit --self-check`) from
//! a validated circuit or bench and a resolved request (SI values, indices
//! and locations, never option text), and returns one `#[derive(Serialize)]`
//! result: the inputs echoed with their units and where they came from, the
//! numbers in SI (pressures in Pa, flows in m³/s, speeds in rev/s,
//! frequencies in Hz, phases in degrees), the warnings and the safety
//! cautions. Nothing here prints or writes a file: the renderers in
//! [`crate::render`] turn a result into terminal text, CSV, JSON and charts.

pub mod assess;
pub mod bands;
pub mod calibrate;
pub mod check;
pub mod compare;
pub mod describe;
pub mod fit;
pub mod fit_check;
pub mod inputs;
pub mod over_envelope;
pub mod plan_bench;
pub mod profile;
pub mod report;
pub mod response;
pub mod setup;
pub mod silencer;
pub mod solve;
pub mod sweep;
pub mod tune;

use crate::diagnostics::Warning;
use num_complex::Complex64 as C64;
use serde::Serialize;

/// Where an input value came from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Origin {
    /// Given on the command line (or in the request).
    Request,
    /// Read from the input file.
    File,
    /// Not given: ripline's default.
    Default,
    /// Derived from other inputs.
    Derived,
}

impl Origin {
    /// A few words for reports: "from the command line", "from the file"...
    pub fn describe(self) -> &'static str {
        match self {
            Origin::Request => "given on the command line",
            Origin::File => "from the file",
            Origin::Default => "default",
            Origin::Derived => "derived",
        }
    }
}

/// The value of an echoed input.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(untagged)]
pub enum Value {
    /// A number in the SI unit stated beside it.
    Number(f64),
    /// A range `[low, high]` in the SI unit stated beside it.
    Range([f64; 2]),
    /// A name or a choice.
    Text(String),
}

/// An input of an analysis, echoed in its result.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Input {
    /// What it is (`speed`, `harmonics`, `db_ref`, `speed_range`...).
    pub name: String,
    /// Its value, SI.
    pub value: Value,
    /// The SI unit of the value (`rev/s`, `Pa`, `Hz`, `1` for counts, empty
    /// for text).
    pub unit: &'static str,
    /// Where it came from.
    pub origin: Origin,
}

impl Input {
    /// A number.
    pub fn number(name: &str, value: f64, unit: &'static str, origin: Origin) -> Self {
        Input {
            name: name.into(),
            value: Value::Number(value),
            unit,
            origin,
        }
    }

    /// A range.
    pub fn range(name: &str, value: (f64, f64), unit: &'static str, origin: Origin) -> Self {
        Input {
            name: name.into(),
            value: Value::Range([value.0, value.1]),
            unit,
            origin,
        }
    }

    /// A name or a choice.
    pub fn text(name: &str, value: &str, origin: Origin) -> Self {
        Input {
            name: name.into(),
            value: Value::Text(value.into()),
            unit: "",
            origin,
        }
    }
}

/// The file an analysis read and its title.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Subject {
    /// The input file (or the built-in demo's name).
    pub file: String,
    /// Its `title`, if any.
    pub title: Option<String>,
}

/// A complex amplitude as amplitude and phase (peak value in the unit its
/// field names; phase in degrees, −180..180).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Phasor {
    /// |X|, a peak value.
    pub amplitude: f64,
    /// arg X in degrees.
    pub phase_deg: f64,
}

impl From<C64> for Phasor {
    fn from(x: C64) -> Self {
        Phasor {
            amplitude: x.norm(),
            phase_deg: x.arg().to_degrees(),
        }
    }
}

impl Phasor {
    /// Whether both parts are finite numbers.
    pub fn is_finite(&self) -> bool {
        self.amplitude.is_finite() && self.phase_deg.is_finite()
    }
}

/// A warning echoed in a result (see [`crate::diagnostics::Warning`]).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Notice {
    /// What it is about.
    pub subject: String,
    /// What is wrong and which limit applies.
    pub message: String,
}

impl From<&Warning> for Notice {
    fn from(w: &Warning) -> Self {
        Notice {
            subject: w.subject.clone(),
            message: w.message.clone(),
        }
    }
}

impl std::fmt::Display for Notice {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(f, "{}: {}", self.subject, self.message)
    }
}

/// Converts warnings for a result.
pub fn notices(warnings: &[Warning]) -> Vec<Notice> {
    warnings.iter().map(Notice::from).collect()
}

/// Which findings a report shows: the highest first, at most `top`, none
/// lying more than `floor_db` below its reference (its measurement point's
/// worst level); the full list stays in the CSV or JSON output.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Ranking {
    /// Most findings shown.
    pub top: usize,
    /// How far below its reference a finding may lie, dB.
    pub floor_db: f64,
}

impl Ranking {
    /// The echoed inputs `top` and `floor`, given with `origin`.
    pub fn inputs(&self, origin: Origin) -> [Input; 2] {
        [
            Input::number("top", self.top as f64, "1", origin),
            Input::number("floor", self.floor_db, "dB", origin),
        ]
    }

    /// The indices of `items`, each (its level in dB, its reference level
    /// in dB), to show: highest level first (earlier first among equals),
    /// those within the floor of their reference, at most `top`.
    pub fn shown(&self, items: impl IntoIterator<Item = (f64, f64)>) -> Vec<usize> {
        let mut kept: Vec<(usize, f64)> = items
            .into_iter()
            .enumerate()
            .filter(|(_, (level, reference))| reference - level <= self.floor_db)
            .map(|(i, (level, _))| (i, level))
            .collect();
        kept.sort_by(|a, b| b.1.total_cmp(&a.1).then(a.0.cmp(&b.0)));
        kept.into_iter().take(self.top).map(|(i, _)| i).collect()
    }
}

/// A level in dB re `p_ref_pa` of an rms pressure, `None` when there is no
/// ripple (the level would be −∞). Taken as a difference of logarithms, so
/// it is finite for every positive finite pressure (the ratio itself can
/// underflow or overflow).
pub fn level_db(rms_pa: f64, p_ref_pa: f64) -> Option<f64> {
    (rms_pa > 0.0).then(|| 20.0 * (rms_pa.log10() - p_ref_pa.log10()))
}

/// Why an analysis could not produce its result.
#[derive(Debug, thiserror::Error)]
pub enum Error {
    /// The request does not fit the input (a name or a value that cannot
    /// be used); the caller's mistake, reported as an input error.
    #[error("{0}")]
    Request(String),
    /// A computation failed (a singular network, an estimator that could
    /// not proceed); `context` says what was being done.
    #[error("{context}")]
    Failed {
        /// What was being done.
        context: String,
        /// Why it failed.
        #[source]
        source: Box<dyn std::error::Error + Send + Sync + 'static>,
    },
    /// A result that is not a finite number (never printed).
    #[error("{0}")]
    NotFinite(String),
}

impl Error {
    /// A failed computation with its context.
    pub fn failed(
        context: impl Into<String>,
        source: impl std::error::Error + Send + Sync + 'static,
    ) -> Self {
        Error::Failed {
            context: context.into(),
            source: Box::new(source),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::Ranking;

    // Levels (dB) against their references: 60 is 40 dB below its 100, so
    // it is left out by a 20 dB floor; the rest come highest first, equal
    // levels in their order, at most `top`.
    #[test]
    fn a_ranking_keeps_the_highest_within_the_floor() {
        let items = [
            (90.0, 100.0),
            (60.0, 100.0),
            (95.0, 95.0),
            (90.0, 91.0),
            (50.0, 60.0),
        ];
        let r = Ranking {
            top: 10,
            floor_db: 20.0,
        };
        assert_eq!(r.shown(items), vec![2, 0, 3, 4]);
        let r = Ranking {
            top: 2,
            floor_db: 5.0,
        };
        assert_eq!(r.shown(items), vec![2, 3]);
    }
}
