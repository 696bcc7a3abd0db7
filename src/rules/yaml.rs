//! The one place that parses YAML (rule sets and test plans).
//!
//! Everything else calls [`parse`]; replacing the YAML crate (for example by a
//! maintained fork with the same serde interface) touches only this file.
//! Files are capped at [`MAX_BYTES`] so that pathological nesting or alias
//! expansion cannot cost seconds: rule sets and plans are a few kilobytes.

use crate::error::InputError;
use serde::de::DeserializeOwned;
use std::path::Path;

/// Largest accepted rule-set or plan file.
pub const MAX_BYTES: u64 = 256 * 1024;

/// Reads `path` (a regular file of at most [`MAX_BYTES`], counted while
/// reading) as UTF-8 text, with the SHA-256 of the bytes read.
pub fn read_text_hashed(path: &Path, what: &str) -> Result<(String, String), InputError> {
    let bytes = crate::files::read_capped(path, what, MAX_BYTES)?;
    let sha = crate::digest::sha256_bytes(&bytes);
    let text = String::from_utf8(bytes).map_err(|e| {
        InputError::new(
            path,
            format!(
                "{what} is not UTF-8 text (byte {})",
                e.utf8_error().valid_up_to()
            ),
        )
        .hint("save the file as UTF-8")
    })?;
    Ok((
        text.strip_prefix('\u{feff}').unwrap_or(&text).to_string(),
        sha,
    ))
}

/// Reads `path` (at most [`MAX_BYTES`]) as UTF-8 text.
pub fn read_text(path: &Path, what: &str) -> Result<String, InputError> {
    read_text_hashed(path, what).map(|(t, _)| t)
}

/// Parses YAML text into `T`; errors carry line, column and the field path.
pub fn parse<T: DeserializeOwned>(path: &Path, text: &str) -> Result<T, InputError> {
    if text.trim().is_empty() {
        return Err(InputError::new(path, "the file is empty"));
    }
    serde_yaml::from_str::<T>(text).map_err(|e| {
        let mut msg = e.to_string();
        // The crate appends " at line L column C"; the place goes in front instead.
        if let Some(i) = msg.find(" at line ") {
            msg.truncate(i);
        }
        let mut err = InputError::new(path, msg);
        if let Some(loc) = e.location() {
            err = err.line(loc.line() as u64).column(loc.column() as u64);
        }
        err.hint("see docs/rules.md for the format, or run `holdfast rules lint`")
    })
}
