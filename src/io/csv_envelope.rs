//! The envelope columns of CSV tables, and the tables of several envelope
//! points merged into one.
//!
//! Every row carries the envelope columns `speed_rpm,pressure_pa,
//! temperature_c,case` after its fixed leading columns: the shaft speed,
//! the mean pressure (gauge, Pa), the oil temperature (°C) and the load
//! case of the row. Where the envelope does not vary a quantity the file's
//! own value is written, or nothing when the file states none.

use crate::envelope::OperatingPoint;
use std::io::Write;

/// The envelope columns, in order.
pub const ENVELOPE_COLUMNS: [&str; 4] = ["speed_rpm", "pressure_pa", "temperature_c", "case"];

/// The file's own mean pressure (gauge, Pa) and oil temperature (K), for
/// the envelope columns of a quantity the envelope does not vary.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct FileOperatingPoint {
    /// Mean pressure, gauge, Pa.
    pub pressure_pa: Option<f64>,
    /// Oil temperature, K.
    pub temperature_k: Option<f64>,
}

/// The envelope columns of a row at `speed_rev_s` and `point`.
pub fn envelope_columns(
    speed_rev_s: f64,
    point: &OperatingPoint,
    own: &FileOperatingPoint,
) -> [String; 4] {
    let number = |v: Option<f64>| v.map_or(String::new(), |v| format!("{v}"));
    [
        format!("{}", speed_rev_s * 60.0),
        number(point.pressure_pa.or(own.pressure_pa)),
        number(
            point
                .temperature_k
                .or(own.temperature_k)
                .map(|t| t - crate::oil::ZERO_CELSIUS_K),
        ),
        point.case.clone().unwrap_or_default(),
    ]
}

/// One analysis table at one envelope point: its CSV text as the
/// analysis writes it for a single point.
#[derive(Debug, Clone, Copy)]
pub struct PointTable<'a> {
    /// The envelope point.
    pub point: &'a OperatingPoint,
    /// The shaft speed of every row (rev/s), for a table without its own
    /// `speed_rpm` column (e.g. `solve` at the pump's speed).
    pub speed_rev_s: Option<f64>,
    /// The table, header first.
    pub csv: &'a [u8],
}

/// Why tables cannot be merged.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum MergeError {
    /// The tables do not have the same header.
    #[error("the tables of the envelope points have different columns")]
    Headers,
    /// A table has fewer columns than the leading ones.
    #[error("a table has fewer than {0} columns")]
    Leading(usize),
    /// Reading or writing CSV.
    #[error(transparent)]
    Csv(#[from] csv::Error),
}

/// Writes the tables of several envelope points as one table with the
/// envelope columns ([`ENVELOPE_COLUMNS`]) after the first `leading`
/// columns: a table's own `speed_rpm` column, if it has one, moves into
/// that place; otherwise every row gets the table's speed. The rows keep
/// their order, point after point.
///
/// # Errors
/// [`MergeError`] when the tables' headers differ or have fewer than
/// `leading` columns, or the CSV cannot be read or written.
pub fn merge_with_envelope<W: Write>(
    tables: &[PointTable<'_>],
    leading: usize,
    own: &FileOperatingPoint,
    out: W,
) -> Result<(), MergeError> {
    let mut w = csv::Writer::from_writer(out);
    let mut first_header: Option<csv::StringRecord> = None;
    for table in tables {
        let mut reader = csv::Reader::from_reader(table.csv);
        let header = reader.headers()?.clone();
        let speed_column = header.iter().position(|h| h == "speed_rpm");
        let rest = |r: &csv::StringRecord| -> Vec<String> {
            r.iter()
                .enumerate()
                .filter(|(i, _)| Some(*i) != speed_column)
                .map(|(_, v)| v.to_string())
                .collect()
        };
        let names = rest(&header);
        if names.len() < leading {
            return Err(MergeError::Leading(leading));
        }
        match &first_header {
            None => {
                let mut h: Vec<String> = names[..leading].to_vec();
                h.extend(ENVELOPE_COLUMNS.iter().map(|c| c.to_string()));
                h.extend(names[leading..].iter().cloned());
                w.write_record(&h)?;
                first_header = Some(header.clone());
            }
            Some(f) if *f != header => return Err(MergeError::Headers),
            Some(_) => {}
        }
        for record in reader.records() {
            let record = record?;
            let values = rest(&record);
            let own_speed = speed_column.and_then(|i| record.get(i));
            let speed = if own_speed.is_some() {
                None
            } else {
                table.speed_rev_s
            };
            let mut columns = envelope_columns(speed.unwrap_or(f64::NAN), table.point, own);
            // the table's own speed as it wrote it, or none known
            columns[0] = match (own_speed, speed) {
                (Some(rpm), _) => rpm.to_string(),
                (None, None) => String::new(),
                (None, Some(_)) => std::mem::take(&mut columns[0]),
            };
            let mut row: Vec<String> = values[..leading].to_vec();
            row.extend(columns);
            row.extend(values[leading..].iter().cloned());
            w.write_record(&row)?;
        }
    }
    w.flush().map_err(|e| MergeError::Csv(e.into()))?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    // Two `solve`-style tables (point,harmonic,…) at two envelope points
    // become one with the envelope columns after `point,harmonic`; a
    // `sweep`-style table's own speed_rpm column moves into their place.
    #[test]
    fn tables_of_several_points_merge_with_the_envelope_columns() {
        let hot = OperatingPoint {
            pressure_pa: Some(25e5),
            temperature_k: Some(353.15),
            case: Some("lift".into()),
        };
        let cold = OperatingPoint {
            temperature_k: Some(273.15),
            ..Default::default()
        };
        let own = FileOperatingPoint {
            pressure_pa: Some(120e5),
            temperature_k: None,
        };
        let a = b"point,harmonic,frequency_hz,amplitude_pa\nout,1,270,1000\n";
        let b = b"point,harmonic,frequency_hz,amplitude_pa\nout,1,270,2000\nout,2,540,5\n";
        let mut buf = Vec::new();
        merge_with_envelope(
            &[
                PointTable {
                    point: &hot,
                    speed_rev_s: Some(30.0),
                    csv: a,
                },
                PointTable {
                    point: &cold,
                    speed_rev_s: Some(30.0),
                    csv: b,
                },
            ],
            2,
            &own,
            &mut buf,
        )
        .unwrap();
        assert_eq!(
            String::from_utf8(buf).unwrap(),
            "point,harmonic,speed_rpm,pressure_pa,temperature_c,case,frequency_hz,amplitude_pa\n\
             out,1,1800,2500000,80,lift,270,1000\n\
             out,1,1800,12000000,0,,270,2000\n\
             out,2,1800,12000000,0,,540,5\n"
        );
        let sweep = b"speed_rpm,point,harmonic,frequency_hz,amplitude_pa\n900,out,1,135,7\n";
        let mut buf = Vec::new();
        merge_with_envelope(
            &[PointTable {
                point: &hot,
                speed_rev_s: None,
                csv: sweep,
            }],
            2,
            &own,
            &mut buf,
        )
        .unwrap();
        assert!(
            String::from_utf8(buf)
                .unwrap()
                .ends_with("out,1,900,2500000,80,lift,135,7\n")
        );
        let other = b"point,frequency_hz\nout,1\n";
        let err = merge_with_envelope(
            &[
                PointTable {
                    point: &hot,
                    speed_rev_s: None,
                    csv: a,
                },
                PointTable {
                    point: &cold,
                    speed_rev_s: None,
                    csv: other,
                },
            ],
            1,
            &own,
            Vec::new(),
        );
        assert!(matches!(err, Err(MergeError::Headers)));
    }
}
