//! Transducer data files of a bench: time-series CSV and spectra CSV, read
//! with every fault located by file, line and column, and written by
//! `ripline synth`.
//!
//! Time series: a header row, then one row per sample; a column per
//! transducer (named as in the bench, or mapped by `columns`) in the stated
//! unit, and optionally a time column in s. Lines starting with `#` are
//! comments. Spectra: a header `harmonic,frequency_hz,` then `<column>_re`
//! and `<column>_im` (peak phasor, e^{+jωt}, against the shaft reference) per
//! transducer, optionally `<column>_u` (standard uncertainty of the phasor,
//! √E|δP|²), one row per spectral line.

use super::{InputError, Located};
use crate::C64;
use crate::estimate::bench::{Bench, Condition, ConditionKind, DataFile};
use crate::estimate::extract::{self, ConditionSpectra, Phasors, PumpFrequency, TimeRecord};
use crate::estimate::tacho::{self, TachoError};
use crate::estimate::{EstimateError, Observer};
use std::io::Write;
use std::path::Path;

fn located(file: &str, line: Option<u64>, what: &str, message: String) -> InputError {
    InputError::Invalid(Located {
        file: file.to_string(),
        line: line.map(|l| l as usize),
        column: None,
        path: what.to_string(),
        message,
    })
}

/// A CSV table: header, and rows of text with their line numbers.
struct Table {
    file: String,
    header: Vec<String>,
    rows: Vec<(u64, Vec<String>)>,
    /// The first blank line between two data rows (the reader skips it).
    blank_between_rows: Option<u64>,
}

impl Table {
    fn read(path: &Path) -> Result<Self, InputError> {
        let file = path.display().to_string();
        let text = super::read_text_capped(path, super::MAX_RECORD_BYTES)?;
        let mut reader = csv::ReaderBuilder::new()
            .has_headers(true)
            .comment(Some(b'#'))
            .flexible(true)
            .trim(csv::Trim::All)
            .from_reader(text.as_bytes());
        let header: Vec<String> = reader
            .headers()
            .map_err(|e| {
                located(
                    &file,
                    e.position().map(|p| p.line()),
                    "",
                    format!("cannot read the header: {e}"),
                )
            })?
            .iter()
            .map(str::to_string)
            .collect();
        if header.iter().all(String::is_empty) {
            return Err(located(
                &file,
                None,
                "",
                "the file is empty: expected a header row naming the columns".into(),
            ));
        }
        for (i, h) in header.iter().enumerate() {
            if header[..i].contains(h) {
                return Err(located(
                    &file,
                    Some(1),
                    "",
                    format!("the column `{h}` appears twice in the header"),
                ));
            }
        }
        let mut rows = Vec::new();
        for rec in reader.records() {
            let rec = rec.map_err(|e| {
                located(
                    &file,
                    e.position().map(|p| p.line()),
                    "",
                    format!("cannot read the row: {e}"),
                )
            })?;
            let line = rec.position().map_or(0, |p| p.line());
            if rec.len() != header.len() {
                return Err(located(
                    &file,
                    Some(line),
                    "",
                    format!(
                        "the row has {} fields, the header has {} columns",
                        rec.len(),
                        header.len()
                    ),
                ));
            }
            rows.push((line, rec.iter().map(str::to_string).collect()));
        }
        if rows.is_empty() {
            return Err(located(
                &file,
                None,
                "",
                "no data rows after the header".into(),
            ));
        }
        // lines skipped between rows (comments or blank lines): the text is
        // scanned only when there are any
        let first = rows[0].0;
        let last = rows[rows.len() - 1].0;
        let blank_between_rows = if last - first + 1 > rows.len() as u64 {
            text.lines()
                .zip(1u64..)
                .skip(first as usize)
                .take_while(|(_, n)| *n < last)
                .find(|(l, _)| l.trim().is_empty())
                .map(|(_, n)| n)
        } else {
            None
        };
        Ok(Table {
            file,
            header,
            rows,
            blank_between_rows,
        })
    }

    fn column(&self, name: &str) -> Result<usize, InputError> {
        self.header.iter().position(|h| h == name).ok_or_else(|| {
            located(
                &self.file,
                Some(1),
                "",
                format!(
                    "no column `{name}` in the header (columns: {})",
                    self.header.join(", ")
                ),
            )
        })
    }

    fn number(&self, row: usize, col: usize) -> Result<f64, InputError> {
        let (line, fields) = &self.rows[row];
        let text = &fields[col];
        let what = format!("column `{}`", self.header[col]);
        let v: f64 = text.parse().map_err(|_| {
            located(
                &self.file,
                Some(*line),
                &what,
                format!("`{text}` is not a number"),
            )
        })?;
        if !v.is_finite() {
            return Err(located(
                &self.file,
                Some(*line),
                &what,
                format!("`{text}` is not a finite number"),
            ));
        }
        Ok(v)
    }

    /// A pressure in Pa: the number times `unit_pa`, within ±[`MAX_RECORD_PA`].
    fn pressure(&self, row: usize, col: usize, unit_pa: f64) -> Result<f64, InputError> {
        let v = self.number(row, col)?;
        let pa = v * unit_pa;
        if pa.abs() > MAX_RECORD_PA {
            return Err(located(
                &self.file,
                Some(self.rows[row].0),
                &format!("column `{}`", self.header[col]),
                format!(
                    "`{v:e}` × {unit_pa} Pa is outside a plausible pressure (±{:e} Pa, 10 kbar): is the unit right?",
                    MAX_RECORD_PA
                ),
            ));
        }
        Ok(pa)
    }
}

/// A tacho channel read with a record: its samples and the CSV line of each.
#[derive(Debug, Clone, PartialEq)]
pub struct TachoChannel {
    /// The column's name.
    pub column: String,
    /// The samples (in the file's own unit).
    pub samples: Vec<f64>,
    /// The line of the file each sample is on.
    pub lines: Vec<u64>,
}

/// Largest pressure a record may hold, Pa (10 kbar): beyond any hydraulic
/// system, and small enough that sums of squares of a long record stay
/// finite.
pub const MAX_RECORD_PA: f64 = 1e9;

/// Reads a time-series record; values are converted to Pa with `unit_pa`.
///
/// # Errors
/// [`InputError`] naming the file, the line (CSV row) and the column: a
/// missing file or column, a value that is not a finite number, a row of the
/// wrong length, a time column that is not uniformly spaced or disagrees
/// with the stated sample rate.
pub fn read_time_record(
    path: &Path,
    unit_pa: f64,
    sample_rate_hz: Option<f64>,
    time_column: Option<&str>,
    columns: &[String],
) -> Result<TimeRecord, InputError> {
    read_record_and_tacho(path, unit_pa, sample_rate_hz, time_column, columns, None).map(|r| r.0)
}

/// Reads a time-series record and, if `tacho_column` is named, that column
/// as a tacho channel (see [`read_time_record`]).
///
/// # Errors
/// As [`read_time_record`], and a missing or non-numeric tacho column.
pub fn read_record_and_tacho(
    path: &Path,
    unit_pa: f64,
    sample_rate_hz: Option<f64>,
    time_column: Option<&str>,
    columns: &[String],
    tacho_column: Option<&str>,
) -> Result<(TimeRecord, Option<TachoChannel>), InputError> {
    let t = Table::read(path)?;
    let idx: Vec<usize> = columns
        .iter()
        .map(|c| t.column(c))
        .collect::<Result<_, _>>()?;
    let n = t.rows.len();
    let mut channels = vec![Vec::with_capacity(n); columns.len()];
    for r in 0..n {
        for (ch, &c) in idx.iter().enumerate() {
            channels[ch].push(t.pressure(r, c, unit_pa)?);
        }
    }
    if let (None, Some(line)) = (time_column, t.blank_between_rows) {
        return Err(located(
            &t.file,
            Some(line),
            "",
            "a blank line between the samples: with a sample rate and no time column each row is the next sample, so a row lost here would shift every later sample in time; remove the line (or give a time column)".into(),
        ));
    }
    let rate = match time_column {
        None => sample_rate_hz.expect("the bench file checker requires a rate or a time column"),
        Some(name) => {
            let c = t.column(name)?;
            if n < 2 {
                return Err(located(
                    &t.file,
                    None,
                    "",
                    "a time column needs at least two rows".into(),
                ));
            }
            let times: Vec<f64> = (0..n).map(|r| t.number(r, c)).collect::<Result<_, _>>()?;
            // The step: the median of the differences (robust to one gap).
            let mut steps: Vec<f64> = times.windows(2).map(|w| w[1] - w[0]).collect();
            steps.sort_by(f64::total_cmp);
            let dt = steps[steps.len() / 2];
            if dt.is_nan() || dt <= 0.0 {
                return Err(located(
                    &t.file,
                    Some(t.rows[n - 1].0),
                    &format!("column `{name}`"),
                    "time must increase from row to row".into(),
                ));
            }
            for (r, &tr) in times.iter().enumerate() {
                if (tr - (times[0] + r as f64 * dt)).abs() > 0.01 * dt {
                    return Err(located(
                        &t.file,
                        Some(t.rows[r].0),
                        &format!("column `{name}`"),
                        format!(
                            "time {tr} s is off the uniform sampling grid (step {dt:e} s): records must be sampled at a constant rate without gaps"
                        ),
                    ));
                }
            }
            let rate = 1.0 / dt;
            if !(10.0..=1e7).contains(&rate) {
                return Err(located(
                    &t.file,
                    None,
                    &format!("column `{name}`"),
                    format!(
                        "the time column gives a sample rate of {rate:.3e} Hz (step {dt:.3e} s): it must be between 10 Hz and 10 MHz, as `sample_rate` (is the column in seconds?)"
                    ),
                ));
            }
            if let Some(stated) = sample_rate_hz.filter(|s| (rate - s).abs() > 1e-4 * s) {
                return Err(located(
                    &t.file,
                    None,
                    &format!("column `{name}`"),
                    format!(
                        "the time column gives a sample rate of {rate:.3} Hz, the bench file states {stated} Hz"
                    ),
                ));
            }
            rate
        }
    };
    let tacho = match tacho_column {
        None => None,
        Some(name) => {
            let c = t.column(name)?;
            Some(TachoChannel {
                column: name.to_string(),
                samples: (0..n).map(|r| t.number(r, c)).collect::<Result<_, _>>()?,
                lines: t.rows.iter().map(|r| r.0).collect(),
            })
        }
    };
    Ok((
        TimeRecord {
            file: t.file,
            sample_rate_hz: rate,
            channels,
        },
        tacho,
    ))
}

/// Reads a spectra file: one [`Phasors`] per row, in Pa.
///
/// # Errors
/// [`InputError`] naming the file, the line and the column at fault.
pub fn read_spectra(
    path: &Path,
    unit_pa: f64,
    columns: &[String],
) -> Result<Vec<Phasors>, InputError> {
    let t = Table::read(path)?;
    let h = t.column("harmonic")?;
    let f = t.column("frequency_hz")?;
    let re: Vec<usize> = columns
        .iter()
        .map(|c| t.column(&format!("{c}_re")))
        .collect::<Result<_, _>>()?;
    let im: Vec<usize> = columns
        .iter()
        .map(|c| t.column(&format!("{c}_im")))
        .collect::<Result<_, _>>()?;
    let u: Vec<Option<usize>> = columns
        .iter()
        .map(|c| t.header.iter().position(|x| *x == format!("{c}_u")))
        .collect();
    let mut out: Vec<Phasors> = Vec::with_capacity(t.rows.len());
    for r in 0..t.rows.len() {
        let line = t.rows[r].0;
        let order = t.number(r, h)?;
        if !(order >= 1.0 && order.fract() == 0.0 && order <= 10_000.0) {
            return Err(located(
                &t.file,
                Some(line),
                "column `harmonic`",
                format!("`{order}` is not a harmonic order (1, 2, 3, …)"),
            ));
        }
        let freq = t.number(r, f)?;
        if freq <= 0.0 {
            return Err(located(
                &t.file,
                Some(line),
                "column `frequency_hz`",
                format!("the frequency must be positive, found {freq}"),
            ));
        }
        if let Some(prev) = out.last().filter(|p| freq <= p.freq_hz) {
            return Err(located(
                &t.file,
                Some(line),
                "column `frequency_hz`",
                format!(
                    "rows must be in increasing frequency ({freq} Hz after {} Hz)",
                    prev.freq_hz
                ),
            ));
        }
        let mut pressures = Vec::with_capacity(columns.len());
        let mut uncertainty = Vec::with_capacity(columns.len());
        for i in 0..columns.len() {
            pressures.push(C64::new(
                t.pressure(r, re[i], unit_pa)?,
                t.pressure(r, im[i], unit_pa)?,
            ));
            uncertainty.push(match u[i] {
                None => None,
                Some(c) => {
                    let v = t.pressure(r, c, unit_pa)?;
                    if v < 0.0 {
                        return Err(located(
                            &t.file,
                            Some(line),
                            &format!("column `{}`", t.header[c]),
                            "an uncertainty must not be negative".into(),
                        ));
                    }
                    Some(v)
                }
            });
        }
        out.push(Phasors {
            order: order as u32,
            freq_hz: freq,
            pressures,
            uncertainty,
            sensitivity: Vec::new(),
        });
    }
    Ok(out)
}

/// Reads every condition's data file and extracts its phasors, in the
/// bench's condition order; the pumping frequency found in the pump
/// conditions is held in the secondary-source conditions
/// ([`extract::extract_conditions`]).
///
/// # Errors
/// [`InputError`] for a fault in a file or data that cannot be analysed
/// (too short, too low a sample rate, a missing harmonic, a secondary line
/// on a pump harmonic, a tacho channel without regular pulses).
pub fn load_conditions(
    bench: &Bench,
    observer: &mut dyn Observer,
) -> Result<Vec<ConditionSpectra>, InputError> {
    extract::extract_conditions(bench, |i, pump| {
        load_condition(bench, &bench.conditions[i], pump, observer)
    })
}

/// Reads a condition's data file and extracts its phasors, with the pumping
/// frequency searched or held.
///
/// # Errors
/// [`InputError`] for a fault in the file or data that cannot be analysed.
pub fn load_condition(
    bench: &Bench,
    condition: &Condition,
    pump: PumpFrequency,
    observer: &mut dyn Observer,
) -> Result<ConditionSpectra, InputError> {
    let fp = bench.pump.pumping_frequency_hz();
    match &condition.data {
        DataFile::TimeSeries {
            path,
            unit_pa,
            sample_rate_hz,
            time_column,
            tacho_column,
            columns,
        } => {
            let (rec, tacho) = read_record_and_tacho(
                path,
                *unit_pa,
                *sample_rate_hz,
                time_column.as_deref(),
                columns,
                tacho_column.as_deref(),
            )?;
            let at_column = |t: &TachoChannel, line: Option<u64>, message: String| {
                located(
                    &rec.file,
                    line,
                    &format!("column `{}`", t.column),
                    format!("condition `{}`: {message}", condition.name),
                )
            };
            let shaft = match &tacho {
                None => None,
                Some(t) => Some(
                    tacho::shaft_reference(&t.samples, rec.sample_rate_hz).map_err(|e| {
                        let line = match e {
                            TachoError::Irregular { sample, .. } => t.lines.get(sample).copied(),
                            _ => None,
                        };
                        at_column(t, line, e.to_string())
                    })?,
                ),
            };
            let req = extract::request_for(bench, condition, pump, shaft.as_ref());
            let spectra = extract::extract(&rec, &req, observer).map_err(|e| match e {
                EstimateError::Data { file, message } => located(
                    &file,
                    None,
                    "",
                    format!("condition `{}`: {message}", condition.name),
                ),
                other => located(&rec.file, None, "", other.to_string()),
            })?;
            if let (Some(s), Some(t)) = (shaft, &tacho) {
                tacho::check_speed(&s, bench.pump.pumping_elements, spectra.pump_fundamental_hz)
                    .map_err(|m| at_column(t, None, m))?;
            }
            Ok(spectra)
        }
        DataFile::Spectra {
            path,
            unit_pa,
            columns,
        } => {
            let lines = read_spectra(path, *unit_pa, columns)?;
            let file = path.display().to_string();
            if condition.kind == ConditionKind::Pump {
                for k in 1..=bench.harmonics {
                    if !lines.iter().any(|p| p.order == k) {
                        return Err(located(
                            &file,
                            None,
                            "",
                            format!(
                                "harmonic {k} is missing: the bench analyses harmonics 1 to {}",
                                bench.harmonics
                            ),
                        ));
                    }
                }
            }
            let spectra = extract::spectra_condition(condition, lines, pump);
            let f = spectra.pump_fundamental_hz;
            if condition.kind == ConditionKind::Pump
                && (f - fp).abs() > bench.extraction.speed_tolerance * fp
            {
                return Err(located(
                    &file,
                    None,
                    "",
                    format!(
                        "the rows give a pumping frequency of {f:.3} Hz, more than the speed tolerance away from the bench's {fp:.3} Hz"
                    ),
                ));
            }
            Ok(spectra)
        }
    }
}

/// Writes a time-series record: an optional time column, then one column per
/// transducer in the unit `unit_pa` (Pa per unit), then an optional tacho
/// column (its own values). With `exact`, values are written with all the
/// digits a double needs to read back unchanged; otherwise with 7
/// significant digits.
///
/// # Errors
/// The writer's error.
#[allow(clippy::too_many_arguments)]
pub fn write_time_record<W: Write>(
    mut out: W,
    comment: &str,
    time_column: Option<&str>,
    columns: &[String],
    channels: &[Vec<f64>],
    sample_rate_hz: f64,
    unit_pa: f64,
    exact: bool,
    tacho: Option<(&str, &[f64])>,
) -> std::io::Result<()> {
    for line in comment.lines() {
        writeln!(out, "# {line}")?;
    }
    let mut w = csv::Writer::from_writer(&mut out);
    let mut header: Vec<String> = time_column.map(str::to_string).into_iter().collect();
    header.extend(columns.iter().cloned());
    header.extend(tacho.map(|t| t.0.to_string()));
    w.write_record(&header)?;
    let fmt = |v: f64| {
        if exact {
            format!("{v:?}")
        } else {
            format!("{v:.6e}")
        }
    };
    let n = channels.first().map_or(0, Vec::len);
    for i in 0..n {
        let mut row: Vec<String> = Vec::with_capacity(header.len());
        if time_column.is_some() {
            row.push(fmt(i as f64 / sample_rate_hz));
        }
        row.extend(channels.iter().map(|c| fmt(c[i] / unit_pa)));
        if let Some((_, t)) = tacho {
            row.push(fmt(t[i]));
        }
        w.write_record(&row)?;
    }
    w.flush()?;
    Ok(())
}

/// Writes a spectra file from lines of phasors (Pa), in the unit `unit_pa`.
///
/// # Errors
/// The writer's error.
pub fn write_spectra<W: Write>(
    mut out: W,
    comment: &str,
    columns: &[String],
    lines: &[Phasors],
    unit_pa: f64,
) -> std::io::Result<()> {
    for line in comment.lines() {
        writeln!(out, "# {line}")?;
    }
    let mut w = csv::Writer::from_writer(&mut out);
    let mut header = vec!["harmonic".to_string(), "frequency_hz".to_string()];
    let with_u = lines
        .iter()
        .all(|l| l.uncertainty.iter().all(Option::is_some));
    for c in columns {
        header.push(format!("{c}_re"));
        header.push(format!("{c}_im"));
        if with_u {
            header.push(format!("{c}_u"));
        }
    }
    w.write_record(&header)?;
    for l in lines {
        let mut row = vec![l.order.to_string(), format!("{:?}", l.freq_hz)];
        for (p, u) in l.pressures.iter().zip(&l.uncertainty) {
            row.push(format!("{:?}", p.re / unit_pa));
            row.push(format!("{:?}", p.im / unit_pa));
            if with_u {
                row.push(format!("{:?}", u.unwrap_or(0.0) / unit_pa));
            }
        }
        w.write_record(&row)?;
    }
    w.flush()?;
    Ok(())
}
