//! JSON files (`tallies.json`, `summary.json`, `timing.json`, `gate.json`): serde's pretty
//! form and a closing line break, the one JSON layout of every file the project writes.

use serde::Serialize;
use std::io;

/// Writes `value` as pretty JSON followed by a line break.
///
/// # Errors
/// I/O errors of `out`, or a value serde cannot write as JSON (a map with non-string keys).
pub fn write_json<W: io::Write, T: Serialize + ?Sized>(mut out: W, value: &T) -> io::Result<()> {
    serde_json::to_writer_pretty(&mut out, value).map_err(io::Error::other)?;
    writeln!(out)
}

/// `value` as the bytes [`write_json`] writes.
///
/// # Errors
/// A value serde cannot write as JSON.
pub fn json_bytes<T: Serialize + ?Sized>(value: &T) -> io::Result<Vec<u8>> {
    let mut out = Vec::new();
    write_json(&mut out, value)?;
    Ok(out)
}
