//! What the resonance and silencer analyses share: the operating speed
//! range and where it came from, the frequency band and grid of a sweep,
//! and the pump harmonics that can excite anything.

use super::Origin;
use crate::Circuit;
use crate::analysis::response::{HarmonicBand, default_points, harmonic_bands};
use crate::source::shafts;
use serde::Serialize;

/// The pump and the speeds and frequencies a frequency sweep of
/// `response` or `silencer` covers, resolved against the circuit.
#[derive(Debug, Clone, Default)]
pub struct FrequencySweep {
    /// The pump whose source flow drives the circuit.
    pub pump_index: usize,
    /// Its shaft's speed (rev/s) instead of the file's.
    pub speed_rev_s: Option<f64>,
    /// The operating speed range (rev/s) instead of the file's.
    pub speed_range: Option<(f64, f64)>,
    /// The `speed` range of the file's `envelope` (rev/s), if it has one.
    pub envelope_speed_range: Option<(f64, f64)>,
    /// Harmonics per pump, overriding the circuit's.
    pub harmonics: Option<u32>,
    /// The band in Hz.
    pub band: Option<(f64, f64)>,
    /// Number of log-spaced frequencies.
    pub points: Option<usize>,
}

/// Where an operating speed range came from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum RangeOrigin {
    /// Given on the command line (`--speed-range`).
    Request,
    /// The `speed` range of the circuit file's `envelope`.
    Envelope,
    /// The pump's own `speed_range`.
    Pump,
    /// The `speed_range` of another pump on the same shaft.
    Shaft,
    /// None given: the pump's speed alone.
    PumpSpeed,
}

/// The operating speed range of a pump.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SpeedRange {
    /// Lowest speed, rev/s.
    pub low_rev_s: f64,
    /// Highest speed, rev/s (equal to the lowest for a single speed).
    pub high_rev_s: f64,
    /// Where it came from.
    pub origin: RangeOrigin,
    /// The shaft whose range it is.
    pub shaft: String,
}

impl SpeedRange {
    /// (low, high) in rev/s.
    pub fn rev_s(&self) -> (f64, f64) {
        (self.low_rev_s, self.high_rev_s)
    }

    /// Whether the range is a single speed.
    pub fn is_single(&self) -> bool {
        self.low_rev_s == self.high_rev_s
    }

    /// "800–2400 rpm" or "1500 rpm".
    pub fn describe(&self) -> String {
        if self.is_single() {
            format!("{:.0} rpm", self.low_rev_s * 60.0)
        } else {
            format!(
                "{:.0}–{:.0} rpm",
                self.low_rev_s * 60.0,
                self.high_rev_s * 60.0
            )
        }
    }

    /// The range and where it comes from, e.g. "800–2400 rpm (the pump's
    /// `speed_range`)".
    pub fn describe_origin(&self) -> String {
        match self.origin {
            RangeOrigin::Request => format!("{} (from --speed-range)", self.describe()),
            RangeOrigin::Envelope => format!("{} (the envelope's `speed`)", self.describe()),
            RangeOrigin::Pump => format!("{} (the pump's `speed_range`)", self.describe()),
            RangeOrigin::Shaft => format!(
                "{} (the `speed_range` of shaft `{}`)",
                self.describe(),
                self.shaft
            ),
            RangeOrigin::PumpSpeed => format!(
                "none given (no `speed_range` on the pump's shaft and no --speed-range), so the pump's speed {} alone",
                self.describe()
            ),
        }
    }
}

/// The speed range of pump `pump_index`: `requested` (rev/s), else the
/// `speed` range of the file's envelope (`envelope`, rev/s: the machine's
/// operating range, as `assess` reads it), else the pump's own
/// `speed_range`, else that of another pump on its shaft, else its speed
/// alone.
///
/// # Panics
/// If `pump_index` is out of range.
pub fn speed_range(
    circuit: &Circuit,
    pump_index: usize,
    requested: Option<(f64, f64)>,
    envelope: Option<(f64, f64)>,
) -> SpeedRange {
    let pump = &circuit.pumps[pump_index];
    let shaft = shafts(&circuit.pumps)
        .into_iter()
        .find(|s| s.pumps.contains(&pump_index))
        .expect("every pump is on a shaft");
    let (range, origin) = match (requested, envelope, pump.speed_range_rev_s) {
        (Some(r), _, _) => (r, RangeOrigin::Request),
        (None, Some(r), _) => (r, RangeOrigin::Envelope),
        (None, None, Some(r)) => (r, RangeOrigin::Pump),
        (None, None, None) => match shaft.speed_range_rev_s(&circuit.pumps) {
            Some(r) => (r, RangeOrigin::Shaft),
            None => ((pump.speed_rev_s, pump.speed_rev_s), RangeOrigin::PumpSpeed),
        },
    };
    SpeedRange {
        low_rev_s: range.0,
        high_rev_s: range.1,
        origin,
        shaft: shaft.name,
    }
}

/// The log-spaced frequency grid of a sweep.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Grid {
    /// Lowest frequency, Hz.
    pub low_hz: f64,
    /// Highest frequency, Hz.
    pub high_hz: f64,
    /// Where the band came from.
    pub band_origin: Origin,
    /// Number of log-spaced frequencies.
    pub points: usize,
    /// Where the number came from.
    pub points_origin: Origin,
}

/// The grid: `band` (Hz) or, by default, a quarter of the lowest pumping
/// frequency up to 10 harmonics (or the circuit's `harmonics` if more) at
/// the top speed; `points`, or steps of 0.2 %.
pub fn grid(
    circuit: &Circuit,
    pump_index: usize,
    speeds: &SpeedRange,
    band: Option<(f64, f64)>,
    points: Option<usize>,
) -> Grid {
    let z = f64::from(circuit.pumps[pump_index].pumping_elements);
    let (band, band_origin) = match band {
        Some(b) => (b, Origin::Request),
        None => (
            (
                0.25 * z * speeds.low_rev_s,
                f64::from(circuit.harmonics.max(10)) * z * speeds.high_rev_s,
            ),
            Origin::Derived,
        ),
    };
    let (points, points_origin) = match points {
        Some(n) => (n, Origin::Request),
        None => (default_points(band.0, band.1), Origin::Default),
    };
    Grid {
        low_hz: band.0,
        high_hz: band.1,
        band_origin,
        points,
        points_origin,
    }
}

/// The bands of the harmonics the pump's source flow has over the speed
/// range, and the orders of those it lacks (which excite nothing).
///
/// # Panics
/// If `pump_index` is out of range.
pub fn excited_bands(
    circuit: &Circuit,
    pump_index: usize,
    speeds: &SpeedRange,
) -> (Vec<HarmonicBand>, Vec<u32>) {
    let pump = &circuit.pumps[pump_index];
    let (bands, silent): (Vec<_>, Vec<_>) =
        harmonic_bands(pump.pumping_elements, speeds.rev_s(), circuit.harmonics)
            .into_iter()
            .partition(|b| pump.flow_ripple(b.order).norm() > 0.0);
    (bands, silent.iter().map(|b| b.order).collect())
}
