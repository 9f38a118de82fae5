//! Options shared by `response`, `silencer` and `tune`: ranges written
//! `LO..HI`, the operating speed range, looking up pumps, points and
//! elements by name, and the progress bar.

use super::common::{UsageError, check_output, cli_quantity};
use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};
use ripline::Circuit;
use ripline::analysis::ripple::report_points;
use ripline::circuit::TapLocation;
use ripline::units::Dimension;
use std::io::IsTerminal;
use std::path::{Path, PathBuf};

/// Parses `LO..HI`, each side a quantity (a bare number in `bare_unit`).
pub fn parse_range(
    option: &str,
    text: &str,
    dim: Dimension,
    bare_unit: &str,
) -> anyhow::Result<(f64, f64)> {
    let Some((lo, hi)) = text.split_once("..") else {
        return Err(UsageError(format!(
            "{option} {text}: write the range as LOW..HIGH, e.g. 600..3000"
        ))
        .into());
    };
    let lo = cli_quantity(option, lo.trim(), dim, bare_unit)?;
    let hi = cli_quantity(option, hi.trim(), dim, bare_unit)?;
    if !(lo > 0.0 && hi > lo) {
        return Err(UsageError(format!(
            "{option} {text}: the range must go from a positive low value to a higher one"
        ))
        .into());
    }
    Ok((lo, hi))
}

/// The operating speed range and where it came from.
pub struct SpeedRange {
    /// (low, high) in rev/s; equal when only the pump's speed is known.
    pub rev_s: (f64, f64),
    /// The range and where it comes from, e.g. "800–2400 rpm (the pump's
    /// `speed_range`)".
    pub source: String,
}

impl SpeedRange {
    /// Whether the range is a single speed.
    pub fn is_single(&self) -> bool {
        self.rev_s.0 == self.rev_s.1
    }

    /// "800–2400 rpm" or "1500 rpm".
    pub fn describe(&self) -> String {
        if self.is_single() {
            format!("{:.0} rpm", self.rev_s.0 * 60.0)
        } else {
            format!("{:.0}–{:.0} rpm", self.rev_s.0 * 60.0, self.rev_s.1 * 60.0)
        }
    }
}

/// The speed range: `--speed-range` (rpm unless a unit is given), else the
/// pump's `speed_range`, else the pump's speed alone (and the report says so).
pub fn speed_range(
    option: Option<&str>,
    circuit: &Circuit,
    pump_index: usize,
) -> anyhow::Result<SpeedRange> {
    let pump = &circuit.pumps[pump_index];
    if let Some(text) = option {
        let (lo, hi) = parse_range("--speed-range", text, Dimension::ShaftSpeed, "rpm")?;
        if hi > 1000.0 {
            return Err(UsageError(format!(
                "--speed-range {text}: speeds must be at most 60000 rpm"
            ))
            .into());
        }
        return Ok(SpeedRange {
            rev_s: (lo, hi),
            source: format!("{:.0}–{:.0} rpm (from --speed-range)", lo * 60.0, hi * 60.0),
        });
    }
    Ok(match pump.speed_range_rev_s {
        Some(r) => SpeedRange {
            rev_s: r,
            source: format!(
                "{:.0}–{:.0} rpm (the pump's `speed_range`)",
                r.0 * 60.0,
                r.1 * 60.0
            ),
        },
        None => SpeedRange {
            rev_s: (pump.speed_rev_s, pump.speed_rev_s),
            source: format!(
                "none given (no `speed_range` in the pump section and no --speed-range), so the pump's speed {:.0} rpm alone",
                pump.speed_rev_s * 60.0
            ),
        },
    })
}

/// The index of the pump called `name`, or the first pump.
pub fn pump_index(circuit: &Circuit, name: Option<&str>) -> anyhow::Result<usize> {
    match name {
        None => Ok(0),
        Some(n) => circuit
            .pumps
            .iter()
            .position(|p| p.name == n)
            .ok_or_else(|| {
                UsageError(format!(
                    "--pump {n}: no pump has that name; the circuit has: {}",
                    circuit
                        .pumps
                        .iter()
                        .map(|p| format!("`{}`", p.name))
                        .collect::<Vec<_>>()
                        .join(", ")
                ))
                .into()
            }),
    }
}

/// The measurement point called `name` (a tap, or a node when the circuit
/// has no taps); with no name, the only point if there is exactly one.
pub fn point(circuit: &Circuit, name: Option<&str>) -> anyhow::Result<(String, TapLocation)> {
    let points = report_points(circuit);
    let list = || {
        points
            .iter()
            .map(|p| format!("`{}`", p.name))
            .collect::<Vec<_>>()
            .join(", ")
    };
    match name {
        Some(n) => points
            .iter()
            .find(|p| p.name == n)
            .map(|p| (p.name.clone(), p.location))
            .ok_or_else(|| {
                UsageError(format!(
                    "--tap {n}: no measurement point has that name; the points are: {}",
                    list()
                ))
                .into()
            }),
        None if points.len() == 1 => Ok((points[0].name.clone(), points[0].location)),
        None => Err(UsageError(format!(
            "say where to measure with --tap NAME; the points are: {}",
            list()
        ))
        .into()),
    }
}

/// The index of the element called `name`.
pub fn element(circuit: &Circuit, name: &str) -> anyhow::Result<usize> {
    circuit.element_id(name).ok_or_else(|| {
        UsageError(format!(
            "--element {name}: no element has that name; the elements are: {}",
            circuit
                .elements
                .iter()
                .map(|e| format!("`{}`", e.name))
                .collect::<Vec<_>>()
                .join(", ")
        ))
        .into()
    })
}

/// A fraction written as `10%` or `0.1`.
pub fn parse_fraction(option: &str, text: &str) -> anyhow::Result<f64> {
    let t = text.trim();
    let value = match t.strip_suffix('%') {
        Some(p) => p.trim().parse::<f64>().map(|v| v / 100.0),
        None => t.parse::<f64>(),
    }
    .map_err(|_| UsageError(format!("{option} {text}: write a percentage such as 10%")))?;
    if !(0.0..=1.0).contains(&value) {
        return Err(UsageError(format!("{option} {text}: must be between 0 % and 100 %")).into());
    }
    Ok(value)
}

/// A progress bar on standard error, drawn only when standard error is a
/// terminal (silent when piped or redirected).
pub struct Progress(ProgressBar);

impl Progress {
    /// A bar of `len` steps labelled `what`.
    pub fn new(len: usize, what: &str) -> Self {
        let bar = if std::io::stderr().is_terminal() {
            ProgressBar::with_draw_target(Some(len as u64), ProgressDrawTarget::stderr())
        } else {
            ProgressBar::hidden()
        };
        let style = ProgressStyle::with_template("{msg} [{bar:40}] {pos}/{len} ({eta})")
            .map(|s| s.progress_chars("=> "))
            .unwrap_or_else(|_| ProgressStyle::default_bar());
        bar.set_style(style);
        bar.set_message(what.to_string());
        Progress(bar)
    }

    /// Moves the bar to `done` steps (growing its length if the work ran over).
    pub fn set(&self, done: usize) {
        let done = done as u64;
        if self.0.length().is_some_and(|l| done > l) {
            self.0.set_length(done);
        }
        self.0.set_position(done);
    }

    /// Removes the bar.
    pub fn finish(self) {
        self.0.finish_and_clear();
    }
}

/// Checks an optional CSV output path before any work.
pub fn csv_output(option: &str, path: Option<&Path>) -> anyhow::Result<Option<PathBuf>> {
    path.map(|p| check_output(option, p, &["csv"])).transpose()
}

/// Checks an optional plot output path before any work.
pub fn plot_output(path: Option<&Path>) -> anyhow::Result<Option<PathBuf>> {
    path.map(|p| check_output("--plot", p, &["svg", "png"]))
        .transpose()
}

/// What a frequency sweep of `response` or `silencer` covers.
pub struct Sweep {
    /// The pump that drives it.
    pub pump_index: usize,
    /// The operating speed range.
    pub speeds: SpeedRange,
    /// The band in Hz.
    pub band: (f64, f64),
    /// Number of log-spaced frequencies.
    pub points: usize,
}

/// The options that set up a frequency sweep, shared by `response` and
/// `silencer`.
#[derive(Debug, clap::Args)]
pub struct SweepArgs {
    /// Frequency band LOW..HIGH in Hz (default: a quarter of the lowest
    /// pumping frequency up to 10 harmonics, or the circuit's `harmonics`
    /// if more, at the top speed).
    #[arg(long, value_name = "LOW..HIGH")]
    band: Option<String>,
    /// Number of log-spaced frequencies (default: steps of 0.2 %).
    #[arg(long, value_name = "N")]
    points: Option<usize>,
    /// Operating speed range LOW..HIGH, in rpm unless a unit is given
    /// (overrides the pump's `speed_range`).
    #[arg(long, value_name = "LOW..HIGH")]
    speed_range: Option<String>,
    /// The pump whose source flow drives the circuit (default: the first).
    #[arg(long, value_name = "NAME")]
    pump: Option<String>,
}

/// Lowest and highest frequency `--band` may reach, Hz: far outside the
/// ripple of any pump, and inside the range where every frequency and its
/// logarithm print as ordinary numbers.
pub const BAND_RANGE_HZ: (f64, f64) = (1e-3, 1e6);

/// Resolves the sweep options against a circuit (see [`SweepArgs`]) and
/// prints the circuit's warnings up to the top of the band.
pub fn sweep(circuit: &Circuit, args: &SweepArgs) -> anyhow::Result<Sweep> {
    let (pump, speed_range, band, points) = (
        args.pump.as_deref(),
        args.speed_range.as_deref(),
        args.band.as_deref(),
        args.points,
    );
    let pump_index = pump_index(circuit, pump)?;
    let speeds = self::speed_range(speed_range, circuit, pump_index)?;
    let z = f64::from(circuit.pumps[pump_index].pumping_elements);
    let band = match band {
        Some(text) => {
            let band = parse_range("--band", text, Dimension::Frequency, "Hz")?;
            let (lo, hi) = BAND_RANGE_HZ;
            if band.0 < lo || band.1 > hi {
                return Err(UsageError(format!(
                    "--band {text}: the band must lie within 0.001 Hz .. 1 MHz (pressure ripple of a pump is a few Hz to some kHz)"
                ))
                .into());
            }
            band
        }
        None => (
            0.25 * z * speeds.rev_s.0,
            f64::from(circuit.harmonics.max(10)) * z * speeds.rev_s.1,
        ),
    };
    let points = match points {
        Some(n) if (10..=200_000).contains(&n) => n,
        Some(n) => {
            return Err(
                UsageError(format!("--points must be between 10 and 200000, found {n}")).into(),
            );
        }
        None => ripline::analysis::response::default_points(band.0, band.1),
    };
    for w in ripline::diagnostics::circuit_warnings(circuit, band.1) {
        eprintln!("warning: {w}");
    }
    Ok(Sweep {
        pump_index,
        speeds,
        band,
        points,
    })
}

/// Harmonic bands for a chart: shaded bands over a speed range, or dashed
/// markers when the range is a single speed.
pub fn band_marks(
    bands: &[ripline::analysis::response::HarmonicBand],
) -> (Vec<ripline::plot::Band>, Vec<ripline::plot::Marker>) {
    let label = |order: u32| format!("{order}×");
    let shaded = bands
        .iter()
        .filter(|b| b.high_hz > b.low_hz)
        .map(|b| ripline::plot::Band {
            from: b.low_hz,
            to: b.high_hz,
            label: label(b.order),
        })
        .collect();
    let lines = bands
        .iter()
        .filter(|b| b.high_hz == b.low_hz)
        .map(|b| ripline::plot::Marker {
            value: b.low_hz,
            label: label(b.order),
        })
        .collect();
    (shaded, lines)
}

/// The bands of the harmonics the pump's source flow has, and those of the
/// harmonics it lacks (which excite nothing).
pub fn excited_bands(
    pump: &ripline::source::Pump,
    speeds: &SpeedRange,
    harmonics: u32,
) -> (
    Vec<ripline::analysis::response::HarmonicBand>,
    Vec<ripline::analysis::response::HarmonicBand>,
) {
    ripline::analysis::response::harmonic_bands(pump.pumping_elements, speeds.rev_s, harmonics)
        .into_iter()
        .partition(|b| pump.flow_ripple(b.order).norm() > 0.0)
}
