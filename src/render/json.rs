//! JSON output of any result (`--json FILE`): the result under a small
//! envelope that names the schema version, the program version and the
//! command. The schema is documented in `docs/json.md`.

use serde::Serialize;
use std::io::Write;

/// Version of the JSON schema; raised whenever a key is renamed or removed
/// or its meaning changes (adding keys keeps the version).
pub const SCHEMA_VERSION: u32 = 1;

#[derive(Serialize)]
struct Envelope<'a, T: Serialize> {
    schema_version: u32,
    program: &'static str,
    version: &'static str,
    command: &'a str,
    result: &'a T,
}

/// Writes `result` of `command` as one pretty-printed JSON document.
///
/// Non-finite numbers never reach here (results are checked when they are
/// computed); serde_json would write them as `null`.
///
/// # Errors
/// The serializer's or the writer's error.
pub fn write<T: Serialize>(command: &str, result: &T, out: impl Write) -> serde_json::Result<()> {
    let mut out = out;
    serde_json::to_writer_pretty(
        &mut out,
        &Envelope {
            schema_version: SCHEMA_VERSION,
            program: "ripline",
            version: env!("CARGO_PKG_VERSION"),
            command,
            result,
        },
    )?;
    out.write_all(b"\n").map_err(serde_json::Error::io)
}
