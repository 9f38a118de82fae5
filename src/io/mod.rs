//! Input and output at the edges: circuit files, CSV tables, staged writes.
//!
//! Everything read here is converted to SI and validated before it reaches the
//! models; every error names the file, the line (where known) and the key.

pub mod bench_file;
pub mod circuit_file;
pub mod csv_out;
pub mod csv_response;
pub mod gas_pressure;
pub mod locate;
pub mod output;
pub mod quantity;
pub mod records;
pub mod source_file;
mod validate;

pub use circuit_file::{
    load_circuit, parse_circuit, parse_circuit_at_temperature, source_file_notes,
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
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}", self.file)?;
        match (self.line, self.column) {
            (Some(l), Some(c)) => write!(f, ":{l}:{c}")?,
            (Some(l), None) => write!(f, ":{l}")?,
            _ => {}
        }
        if self.path.is_empty() {
            write!(f, ": {}", self.message)
        } else {
            write!(f, ": {}: {}", self.path, self.message)
        }
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

/// Reads a whole input file as UTF-8 text, refusing binary data and files
/// over [`MAX_INPUT_BYTES`].
///
/// # Errors
/// [`InputError::Read`] or [`InputError::NotText`].
pub fn read_text(path: &Path) -> Result<String, InputError> {
    let file = path.display().to_string();
    let meta = std::fs::metadata(path).map_err(|cause| InputError::Read {
        file: file.clone(),
        cause,
    })?;
    if meta.is_dir() {
        return Err(InputError::NotText {
            file,
            reason: "is a directory, not a file".into(),
        });
    }
    if meta.len() > MAX_INPUT_BYTES {
        return Err(InputError::NotText {
            file,
            reason: format!(
                "the file is {} bytes; input files larger than {} bytes are refused (is it the right file?)",
                meta.len(),
                MAX_INPUT_BYTES
            ),
        });
    }
    let bytes = std::fs::read(path).map_err(|cause| InputError::Read {
        file: file.clone(),
        cause,
    })?;
    let text = String::from_utf8(bytes).map_err(|e| InputError::NotText {
        file: file.clone(),
        reason: format!(
            "not UTF-8 text (invalid byte at offset {}): is it a binary file?",
            e.utf8_error().valid_up_to()
        ),
    })?;
    if text.contains('\0') {
        return Err(InputError::NotText {
            file,
            reason: "contains NUL bytes: is it a binary file?".into(),
        });
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
    serde_yaml::from_str(text).map_err(|e| {
        let loc = e.location();
        let mut message = e.to_string();
        // The parser appends " at line L column C"; we print the position up front.
        if let Some(pos) = message.rfind(" at line ") {
            message.truncate(pos);
        }
        let (path, message) = match message.split_once(": ") {
            Some((p, m)) if !p.contains(' ') && !p.is_empty() => (p.to_string(), m.to_string()),
            _ => (String::new(), message),
        };
        InputError::Invalid(Located {
            file: file.to_string(),
            line: loc.as_ref().map(|l| l.line()),
            column: loc.as_ref().map(|l| l.column()),
            path,
            message,
        })
    })
}
