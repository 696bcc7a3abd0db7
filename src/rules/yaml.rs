//! The one place that parses YAML (rule sets and test plans).
//!
//! Everything else calls [`parse`] (or [`parse_tree`] for a loose look at a
//! document); replacing the YAML crate touches only this file.
//!
//! The parser is serde-saphyr (no unsafe code; limits on nesting depth,
//! node count and alias expansion that stop a hostile file within
//! milliseconds; the place of an error at the offending key). Booleans are
//! YAML 1.2's (`yes` stays a string) and a key given twice is an error.
//! Files are also capped at [`MAX_BYTES`]: rule sets and plans are a few
//! kilobytes.

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

/// The parser's settings: YAML 1.2 booleans, no source snippets in the
/// messages (the error names file, line and column itself), the default
/// budget (depth 64, 250 000 nodes, 50 000 aliases).
fn options() -> serde_saphyr::Options {
    serde_saphyr::options! {
        strict_booleans: true,
        with_snippet: false,
    }
}

/// Parses YAML text into `T`; errors carry line and column.
pub fn parse<T: DeserializeOwned>(path: &Path, text: &str) -> Result<T, InputError> {
    if text.trim().is_empty() {
        return Err(InputError::new(path, "the file is empty"));
    }
    serde_saphyr::from_str_with_options::<T>(text, options()).map_err(|e| {
        let mut msg = e.without_snippet().to_string();
        // The crate appends " at line L, column C"; the place goes in front instead.
        if let Some(i) = msg.rfind(" at line ") {
            msg.truncate(i);
        }
        let mut err = InputError::new(path, crate::text::with_suggestion(msg));
        if let Some(loc) = e.location().filter(|l| l.line() > 0) {
            err = err.line(loc.line()).column(loc.column());
        }
        err.hint("see docs/rules.md for the format, or run `holdfast rules lint`")
    })
}

/// Parses YAML text into a generic tree (for looking at parts of a document
/// that does not deserialise as a whole); `None` when it is not YAML.
pub fn parse_tree<T: DeserializeOwned>(text: &str) -> Option<T> {
    serde_saphyr::from_str_with_options::<T>(text, options()).ok()
}
