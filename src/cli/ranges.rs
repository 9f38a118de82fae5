//! Options shared by `response`, `silencer` and `tune`: ranges written
//! `LO..HI`, the operating speed range, looking up pumps, points and
//! elements by name, and the progress bar.

use super::common::{UsageError, check_output, cli_quantity};
use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};
use ripline::Circuit;
use ripline::analysis::ripple::report_points;
use ripline::circuit::TapLocation;
use ripline::results::setup::FrequencySweep;
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

/// The index of the pump called `name` (or the first pump on the shaft
/// called `name`), or the first pump.
pub fn pump_index(circuit: &Circuit, name: Option<&str>) -> anyhow::Result<usize> {
    let Some(n) = name else { return Ok(0) };
    circuit
        .pumps
        .iter()
        .position(|p| p.name == n)
        .or_else(|| {
            circuit
                .pumps
                .iter()
                .position(|p| p.shaft.as_deref() == Some(n))
        })
        .ok_or_else(|| {
            UsageError(format!(
                "--pump {n}: no pump or shaft has that name; the circuit has: {}",
                circuit
                    .pumps
                    .iter()
                    .map(|p| format!("`{}`", p.name))
                    .collect::<Vec<_>>()
                    .join(", ")
            ))
            .into()
        })
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

    /// Moves the bar to `done` of `total` steps.
    pub fn set_of(&self, done: usize, total: usize) {
        self.0.set_length(total as u64);
        self.0.set_position(done as u64);
    }

    /// Removes the bar.
    pub fn finish(self) {
        self.0.finish_and_clear();
    }
}

/// A bar per stage of a bench estimation or plan (`estimate::Observer`) on
/// standard error when it is a terminal; silent otherwise.
#[derive(Default)]
pub struct StageBars(Option<ProgressBar>);

impl ripline::estimate::Observer for StageBars {
    fn stage(&mut self, label: &str, total: u64) {
        if let Some(old) = self.0.take() {
            old.finish_and_clear();
        }
        if std::io::stderr().is_terminal() {
            let bar = ProgressBar::new(total);
            if let Ok(style) = ProgressStyle::with_template("{msg} [{bar:30}] {pos}/{len} ({eta})")
            {
                bar.set_style(style.progress_chars("=> "));
            }
            bar.set_message(label.to_string());
            self.0 = Some(bar);
        }
    }
    fn advance(&mut self, steps: u64) {
        if let Some(b) = &self.0 {
            b.inc(steps);
        }
    }
    fn finish(&mut self) {
        if let Some(b) = self.0.take() {
            b.finish_and_clear();
        }
    }
}

/// Checks an optional CSV output path before any work.
pub fn csv_output(option: &str, path: Option<&Path>) -> anyhow::Result<Option<PathBuf>> {
    path.map(|p| check_output(option, p, &["csv"])).transpose()
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
    /// (overrides the envelope's `speed` and the pump's `speed_range`).
    #[arg(long, value_name = "LOW..HIGH")]
    speed_range: Option<String>,
    /// The pump whose source flow drives the circuit (or a shaft: its
    /// first pump); default: the first pump.
    #[arg(long, value_name = "NAME")]
    pump: Option<String>,
    /// The pump's shaft speed, in rpm unless a unit is given (overrides the file).
    #[arg(long, value_name = "RPM")]
    speed: Option<String>,
    /// Number of harmonics of the pumping frequency (overrides the file).
    #[arg(long, value_name = "N")]
    harmonics: Option<u32>,
}

/// Lowest and highest frequency `--band` may reach, Hz: far outside the
/// ripple of any pump, and inside the range where every frequency and its
/// logarithm print as ordinary numbers.
pub const BAND_RANGE_HZ: (f64, f64) = (1e-3, 1e6);

/// `--band LOW..HIGH` in Hz, within [`BAND_RANGE_HZ`].
pub fn band_option(text: &str) -> anyhow::Result<(f64, f64)> {
    let band = parse_range("--band", text, Dimension::Frequency, "Hz")?;
    let (lo, hi) = BAND_RANGE_HZ;
    if band.0 < lo || band.1 > hi {
        return Err(UsageError(format!(
            "--band {text}: the band must lie within 0.001 Hz .. 1 MHz (pressure ripple of a pump is a few Hz to some kHz)"
        ))
        .into());
    }
    Ok(band)
}

impl SweepArgs {
    /// Checks the options and looks the pump up in `circuit`;
    /// `envelope_speed_range` is the file's envelope `speed` (rev/s), used
    /// when `--speed-range` is not given.
    pub fn resolve(
        &self,
        circuit: &Circuit,
        envelope_speed_range: Option<(f64, f64)>,
    ) -> anyhow::Result<FrequencySweep> {
        let points = match self.points {
            Some(n) if !(10..=200_000).contains(&n) => {
                return Err(UsageError(format!(
                    "--points must be between 10 and 200000, found {n}"
                ))
                .into());
            }
            n => n,
        };
        Ok(FrequencySweep {
            pump_index: pump_index(circuit, self.pump.as_deref())?,
            speed_rev_s: self
                .speed
                .as_deref()
                .map(|s| super::common::speed_option("--speed", s))
                .transpose()?,
            speed_range: self
                .speed_range
                .as_deref()
                .map(speed_range_option)
                .transpose()?,
            envelope_speed_range,
            band: self.band.as_deref().map(band_option).transpose()?,
            points,
            harmonics: super::common::harmonics_option(self.harmonics)?,
        })
    }
}

/// `--speed-range LOW..HIGH` in rev/s (rpm when bare), at most 60000 rpm.
pub fn speed_range_option(text: &str) -> anyhow::Result<(f64, f64)> {
    let (lo, hi) = parse_range("--speed-range", text, Dimension::ShaftSpeed, "rpm")?;
    if hi > 1000.0 {
        return Err(UsageError(format!(
            "--speed-range {text}: speeds must be at most 60000 rpm"
        ))
        .into());
    }
    Ok((lo, hi))
}
