//! Input and output at the edges: circuit files, CSV tables, staged writes.
//!
//! Everything read here is converted to SI and validated before it reaches the
//! models; every error names the file, the line (where known) and the key.

pub mod bench_file;
pub mod circuit_file;
pub mod csv_envelope;
pub mod gas_pressure;
pub mod locate;
pub mod measurement_file;
pub mod message;
pub mod output;
pub mod quantity;
pub mod records;
pub mod source_file;
mod validate;
pub mod yaml_limits;

pub use circuit_file::{
    CircuitFile, CircuitTemplate, Setting, Target, Uncertain, load_circuit, load_circuit_file,
    parse_circuit, parse_circuit_at, parse_circuit_at_temperature, parse_circuit_file,
    source_file_notes,
};

use locate::KeyPath;
use std::fmt;
use std::path::Path;

/// Largest input file read, in bytes: circuit and bench files are small; a
/// larger file is almost certainly the wrong file.
pub const MAX_INPUT_BYTES: u64 = 8 * 1024 * 1024;

/// A position in an input file and what is wrong there.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Located {
    /// The file as the user named it.
    pub file: String,
    /// 1-based line, if known.
    pub line: Option<usize>,
    /// 1-based column, if known.
    pub column: Option<usize>,
    /// Key path such as `elements[2].bore`; empty for the whole document.
    pub path: String,
    /// What is wrong and what would be valid.
    pub message: String,
}

impl fmt::Display for Located {
    /// `FILE:LINE:COL: key.path: message`, with long quoted values cut and
    /// long numbers shortened ([`message::readable`]).
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let mut text = self.file.clone();
        match (self.line, self.column) {
            (Some(l), Some(c)) => text.push_str(&format!(":{l}:{c}")),
            (Some(l), None) => text.push_str(&format!(":{l}")),
            _ => {}
        }
        if !self.path.is_empty() {
            text.push_str(&format!(": {}", self.path));
        }
        text.push_str(&format!(": {}", self.message));
        f.write_str(&message::readable(&text))
    }
}

/// A problem with an input file.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum InputError {
    /// The file could not be read.
    #[error("{file}: cannot read the file: {cause}")]
    Read {
        /// The file.
        file: String,
        /// The I/O error (shown in the message, so not chained again).
        cause: std::io::Error,
    },
    /// The file is not UTF-8 text, or too large to be an input file.
    #[error("{file}: {reason}")]
    NotText {
        /// The file.
        file: String,
        /// Why.
        reason: String,
    },
    /// A value in the file is wrong.
    #[error("{0}")]
    Invalid(Located),
}

impl InputError {
    /// An error at `path` in `text`, located by the key path.
    pub fn located(file: &str, text: &str, path: &KeyPath, message: impl Into<String>) -> Self {
        let pos = locate::locate(text, path);
        InputError::Invalid(Located {
            file: file.to_string(),
            line: pos.map(|p| p.0),
            column: pos.map(|p| p.1),
            path: path.to_string(),
            message: message.into(),
        })
    }
}

/// Largest record file (time series or spectra CSV) read, in bytes.
pub const MAX_RECORD_BYTES: u64 = 32 * 1024 * 1024;

/// The files this process has read as input, as they were named, for the
/// output checks (an output may never be an input).
static FILES_READ: std::sync::Mutex<Vec<std::path::PathBuf>> = std::sync::Mutex::new(Vec::new());

/// Every file read so far through [`read_text`] and [`read_text_capped`].
pub fn files_read() -> Vec<std::path::PathBuf> {
    FILES_READ
        .lock()
        .unwrap_or_else(std::sync::PoisonError::into_inner)
        .clone()
}

/// Reads a whole input file as UTF-8 text, refusing binary data and files
/// over [`MAX_INPUT_BYTES`].
///
/// # Errors
/// [`InputError::Read`] or [`InputError::NotText`].
pub fn read_text(path: &Path) -> Result<String, InputError> {
    read_text_capped(path, MAX_INPUT_BYTES)
}

/// Reads a whole input file as UTF-8 text of at most `cap` bytes. Only a
/// regular file is read (after following links): a folder, a pipe or a
/// device such as `/dev/zero` is refused without reading, and the cap is
/// enforced while reading, since a file's stated size can be wrong (files
/// under `/proc` state 0) or change.
///
/// # Errors
/// [`InputError::Read`] or [`InputError::NotText`].
pub fn read_text_capped(path: &Path, cap: u64) -> Result<String, InputError> {
    use std::io::Read;
    let file = path.display().to_string();
    let read_error = |cause| InputError::Read {
        file: file.clone(),
        cause,
    };
    let not_text = |reason: String| InputError::NotText {
        file: file.clone(),
        reason,
    };
    let too_large = |size: String| {
        not_text(format!(
            "the file is {size} bytes; input files larger than {cap} bytes are refused (is it the right file?)"
        ))
    };
    // Checked before opening: opening a pipe waits for a writer.
    let kind = |meta: &std::fs::Metadata| {
        let t = meta.file_type();
        if t.is_dir() {
            Some("is a folder, not a file")
        } else if t.is_file() {
            None
        } else {
            Some("is not a regular file (a device, a pipe or a socket): give a file")
        }
    };
    let meta = std::fs::metadata(path).map_err(read_error)?;
    if let Some(reason) = kind(&meta) {
        return Err(not_text(reason.into()));
    }
    if meta.len() > cap {
        return Err(too_large(meta.len().to_string()));
    }
    let handle = std::fs::File::open(path).map_err(read_error)?;
    // The file opened may not be the one checked (the path can change).
    let meta = handle.metadata().map_err(read_error)?;
    if let Some(reason) = kind(&meta) {
        return Err(not_text(reason.into()));
    }
    let mut bytes = Vec::with_capacity(usize::try_from(meta.len().min(cap)).unwrap_or(0));
    handle
        .take(cap + 1)
        .read_to_end(&mut bytes)
        .map_err(read_error)?;
    if bytes.len() as u64 > cap {
        return Err(too_large(format!("more than {cap}")));
    }
    FILES_READ
        .lock()
        .unwrap_or_else(std::sync::PoisonError::into_inner)
        .push(path.to_path_buf());
    let text = String::from_utf8(bytes).map_err(|e| {
        not_text(format!(
            "not UTF-8 text (invalid byte at offset {}): is it a binary file?",
            e.utf8_error().valid_up_to()
        ))
    })?;
    if text.contains('\0') {
        return Err(not_text("contains NUL bytes: is it a binary file?".into()));
    }
    Ok(text)
}

/// Deserialises YAML text, turning parser errors into located errors.
///
/// # Errors
/// [`InputError::Invalid`] with the parser's line and column.
pub fn parse_yaml<T: serde::de::DeserializeOwned>(text: &str, file: &str) -> Result<T, InputError> {
    if text.trim().is_empty()
        || text
            .lines()
            .all(|l| l.trim().is_empty() || l.trim_start().starts_with('#'))
    {
        return Err(InputError::Invalid(Located {
            file: file.to_string(),
            line: None,
            column: None,
            path: String::new(),
            message: "the file is empty".into(),
        }));
    }
    use yaml_limits::{Excess, MAX_YAML_DEPTH, MAX_YAML_NODES};
    if let Some((line, column, excess)) = yaml_limits::excess(text, MAX_YAML_DEPTH, MAX_YAML_NODES)
    {
        return Err(InputError::Invalid(Located {
            file: file.to_string(),
            line: Some(line),
            column: Some(column),
            path: String::new(),
            message: match excess {
                Excess::Depth => format!(
                    "collections nested more than {MAX_YAML_DEPTH} levels deep: a circuit or bench file needs only a few"
                ),
                Excess::Nodes => format!(
                    "more than {MAX_YAML_NODES} keys and values: too large for a circuit or bench file"
                ),
            },
        }));
    }
    serde_yaml::from_str(text).map_err(|e| {
        let loc = e.location().map(|l| (l.line(), l.column()));
        let loc = loc.or_else(|| {
            e.to_string()
                .contains("more than one document")
                .then(|| second_document(text))
                .flatten()
        });
        let mut message = e.to_string();
        // The parser appends " at line L column C"; we print the position up front.
        if let Some(pos) = message.rfind(" at line ") {
            message.truncate(pos);
        }
        let (path, mut message) = match message.split_once(": ") {
            Some((p, m)) if !p.contains(' ') && !p.is_empty() => (p.to_string(), m.to_string()),
            _ => (String::new(), message),
        };
        message.push_str(&uncertainty_as_a_key(&message));
        InputError::Invalid(Located {
            file: file.to_string(),
            line: loc.map(|l| l.0),
            column: loc.map(|l| l.1),
            path,
            message,
        })
    })
}

/// A hint for `unknown field `u = 1 L/min``: in a flow mapping a comma ends
/// the value, so an unquoted `, u = …` after it is read as a key of its own.
fn uncertainty_as_a_key(message: &str) -> String {
    let field = message
        .strip_prefix("unknown field `")
        .and_then(|rest| rest.split_once('`'))
        .map(|(field, _)| field.trim());
    match field.and_then(|f| f.strip_prefix('u')) {
        Some(rest) if rest.trim_start().starts_with('=') => format!(
            "; `{}` looks like a standard uncertainty cut off from its value: in a `{{...}}` mapping a comma ends a value, so quote the value with it, e.g. `amplitude: \"1.3 L/min, u = 0.1 L/min\"`",
            field.unwrap_or_default()
        ),
        _ => String::new(),
    }
}

/// The position (line, column 1) of the marker that starts a second YAML
/// document: a `---` after content, or the content after a `...` end marker.
fn second_document(text: &str) -> Option<(usize, usize)> {
    let marker = |l: &str, m: &str| {
        l.strip_prefix(m)
            .is_some_and(|r| r.is_empty() || r.starts_with([' ', '\t']))
    };
    let mut content = false;
    let mut ended = false;
    for (i, line) in text.lines().enumerate() {
        let blank = line.trim().is_empty() || line.trim_start().starts_with('#');
        if marker(line, "---") {
            if content || ended {
                return Some((i + 1, 1));
            }
            content = true;
        } else if marker(line, "...") {
            ended = true;
        } else if !blank {
            if ended {
                return Some((i + 1, 1));
            }
            content = true;
        }
    }
    None
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A file under /proc states size 0 but has content: the cap must be
    /// counted while reading, not taken from the stated size.
    #[cfg(target_os = "linux")]
    #[test]
    fn the_cap_is_counted_while_reading() {
        let status = Path::new("/proc/self/status");
        assert_eq!(std::fs::metadata(status).unwrap().len(), 0);
        let e = read_text_capped(status, 16).unwrap_err().to_string();
        assert!(e.contains("more than 16 bytes"), "{e}");
        assert!(read_text_capped(status, 1 << 20).is_ok());
    }

    #[test]
    fn a_second_document_is_found_at_its_marker() {
        assert_eq!(second_document("a: 1\n---\nb: 2\n"), Some((2, 1)));
        assert_eq!(second_document("---\na: 1\n--- \nb: 2\n"), Some((3, 1)));
        assert_eq!(second_document("# c\n---\na: 1\n...\nb: 2\n"), Some((5, 1)));
        assert_eq!(second_document("---\na: 1\n"), None);
        let e = parse_yaml::<serde_yaml::Value>("a: 1\n---\nb: 2\n", "f.yaml")
            .unwrap_err()
            .to_string();
        assert!(e.starts_with("f.yaml:2:1: "), "{e}");
    }
}
