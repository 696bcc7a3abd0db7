//! Errors about input the tool cannot use (exit status 2).
//!
//! Every variant names the place: the file, and the line, column or channel
//! where there is one, and says what to do. Findings about a recording
//! (a failed check, a missing pre-fault window) are results, not errors.

use std::fmt;
use std::path::{Path, PathBuf};

/// Input that cannot be used: a bad recording, rule set, plan or argument.
#[derive(Debug, Clone, PartialEq)]
pub struct InputError {
    pub path: PathBuf,
    /// One-based line number in the file, where known.
    pub line: Option<u64>,
    /// One-based column number (character), where known.
    pub column: Option<u64>,
    /// Column, channel, field or key name, where known.
    pub field: Option<String>,
    pub message: String,
    /// What the user can do about it.
    pub hint: Option<String>,
}

impl InputError {
    pub fn new(path: &Path, message: impl Into<String>) -> Self {
        InputError {
            path: path.to_path_buf(),
            line: None,
            column: None,
            field: None,
            message: message.into(),
            hint: None,
        }
    }
    pub fn line(mut self, line: u64) -> Self {
        self.line = Some(line);
        self
    }
    pub fn column(mut self, column: u64) -> Self {
        self.column = Some(column);
        self
    }
    pub fn field(mut self, field: impl Into<String>) -> Self {
        self.field = Some(field.into());
        self
    }
    pub fn hint(mut self, hint: impl Into<String>) -> Self {
        self.hint = Some(hint.into());
        self
    }
}

/// Longest quoted passage of file content an error message shows.
pub const EXCERPT_CHARS: usize = 60;

impl fmt::Display for InputError {
    /// Paths, names and messages may hold text from the files: control
    /// characters are escaped and quoted content is cut to a short excerpt.
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        use crate::text;
        write!(f, "{}", text::line(&self.path.display().to_string()))?;
        if let Some(l) = self.line {
            write!(f, ":{l}")?;
            if let Some(c) = self.column {
                write!(f, ":{c}")?;
            }
        }
        write!(f, ": ")?;
        if let Some(field) = &self.field {
            write!(f, "'{}': ", text::excerpt(field, EXCERPT_CHARS))?;
        }
        let msg = text::shorten_quotes(&self.message, EXCERPT_CHARS);
        write!(f, "{}", text::lines(&msg))?;
        if let Some(h) = &self.hint {
            let h = text::shorten_quotes(h, 4 * EXCERPT_CHARS);
            write!(f, "\n  hint: {}", text::lines(&h))?;
        }
        Ok(())
    }
}

impl std::error::Error for InputError {}

/// Error for a bad command-line argument (exit status 2).
#[derive(Debug, Clone, PartialEq)]
pub struct UsageError(pub String);

impl fmt::Display for UsageError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&crate::text::lines(&self.0))
    }
}

impl std::error::Error for UsageError {}

/// Several input problems found in one run (e.g. by `rules lint`).
#[derive(Debug, Clone, PartialEq)]
pub struct InputErrors(pub Vec<InputError>);

impl fmt::Display for InputErrors {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        for (i, e) in self.0.iter().enumerate() {
            if i > 0 {
                writeln!(f)?;
            }
            write!(f, "{e}")?;
        }
        if self.0.len() > 1 {
            write!(f, "\n({} problems)", self.0.len())?;
        }
        Ok(())
    }
}

impl std::error::Error for InputErrors {}

impl From<InputError> for InputErrors {
    fn from(e: InputError) -> Self {
        InputErrors(vec![e])
    }
}
