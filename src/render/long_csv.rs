//! Long CSV tables (hundreds of thousands of rows, such as a response at
//! every point and frequency) written as bytes: each text field quoted
//! once by the `csv` crate's rules, the numbers laid out by
//! [`super::decimal`] (they never need quoting), and the rows formatted in
//! blocks on rayon's pool, joined in order. The bytes are those the `csv`
//! crate's writer gives for the same records, on any number of threads.

use rayon::prelude::*;
use std::io::Write;

/// Rows per block formatted on one thread: large enough that a block costs
/// far more than handing it to a thread.
const BLOCK_ROWS: usize = 4096;

/// `text` as one CSV field of a record of several, quoted where the `csv`
/// crate's writer quotes it (a comma, quote or line break in it); an empty
/// field stays empty.
///
/// # Errors
/// The `csv` writer's error (none for a writer into memory).
pub fn field(text: &str) -> Result<Vec<u8>, csv::Error> {
    if text.is_empty() {
        // alone in a record the writer quotes it, beside others it does not
        return Ok(Vec::new());
    }
    let mut w = csv::WriterBuilder::new()
        .terminator(csv::Terminator::Any(b'\n'))
        .from_writer(Vec::new());
    w.write_record([text])?;
    let mut bytes = w.into_inner().map_err(|e| e.into_error())?;
    bytes.pop();
    Ok(bytes)
}

/// Writes the header record through the `csv` crate's writer.
///
/// # Errors
/// The writer's error.
pub fn write_header(out: &mut impl Write, header: &[&str]) -> Result<(), csv::Error> {
    let mut w = csv::Writer::from_writer(out);
    w.write_record(header)?;
    w.flush()?;
    Ok(())
}

/// Rows `0..count`, each appended by `row` with its line break, formatted
/// in blocks (in parallel when there are several) and returned in order.
pub fn rows(count: usize, row: impl Fn(usize, &mut Vec<u8>) + Sync) -> Vec<Vec<u8>> {
    let block = |b: usize| {
        let range = b * BLOCK_ROWS..((b + 1) * BLOCK_ROWS).min(count);
        let mut bytes = Vec::with_capacity(range.len() * 64);
        for i in range {
            row(i, &mut bytes);
        }
        bytes
    };
    let blocks = count.div_ceil(BLOCK_ROWS);
    if blocks > 1 {
        (0..blocks).into_par_iter().map(block).collect()
    } else {
        (0..blocks).map(block).collect()
    }
}

/// [`rows`] written to `out` in order, then flushed.
///
/// # Errors
/// The writer's error.
pub fn write_rows(
    out: &mut impl Write,
    count: usize,
    row: impl Fn(usize, &mut Vec<u8>) + Sync,
) -> std::io::Result<()> {
    for block in rows(count, row) {
        out.write_all(&block)?;
    }
    out.flush()
}

/// Appends the two columns of a band's ends, `,low,high`, each empty when
/// it is unknown (`None`) or not finite.
pub fn push_band_ends(out: &mut Vec<u8>, ends: Option<(f64, f64)>) {
    let (low, high) = ends.unwrap_or((f64::NAN, f64::NAN));
    out.push(b',');
    super::decimal::push_finite_or_empty(out, low);
    out.push(b',');
    super::decimal::push_finite_or_empty(out, high);
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Reference: the `csv` crate's own writer, field by field.
    #[test]
    fn fields_quoted_as_the_csv_writer_quotes_them() {
        for text in [
            "n0",
            "impedance seen by pump P1",
            "a,b",
            "say \"hi\"",
            "x\ny",
            "",
        ] {
            let mut w = csv::Writer::from_writer(Vec::new());
            w.write_record([text, "1"]).unwrap();
            let expected = w.into_inner().unwrap();
            let mut ours = field(text).unwrap();
            ours.extend_from_slice(b",1\n");
            assert_eq!(ours, expected, "{text:?}");
        }
    }

    #[test]
    fn rows_in_order_across_blocks() {
        let count = 3 * BLOCK_ROWS + 17;
        let joined: Vec<u8> = rows(count, |i, out| {
            out.extend_from_slice(format!("{i}\n").as_bytes());
        })
        .concat();
        let expected: String = (0..count).map(|i| format!("{i}\n")).collect();
        assert_eq!(joined, expected.as_bytes());
    }
}
