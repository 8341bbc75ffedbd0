//! Errors a user can act on. Every input problem becomes an [`InputError`] whose message names
//! the file and, where it applies, the line and column; `main` turns it into exit code 2.

use std::fmt;

/// A problem with what the user gave us: a file, a flag, a stack entry. Exit code 2.
#[derive(Debug, Clone, PartialEq)]
pub struct InputError {
    pub message: String,
}

impl InputError {
    pub fn new(message: impl Into<String>) -> Self {
        Self {
            message: message.into(),
        }
    }

    /// `file:line: column 'c': message`, leaving out the parts that are not known.
    pub fn at(
        file: &str,
        line: Option<u64>,
        column: Option<&str>,
        message: impl fmt::Display,
    ) -> Self {
        let mut s = file.to_string();
        if let Some(l) = line {
            s.push_str(&format!(":{l}"));
        }
        s.push_str(": ");
        if let Some(c) = column {
            s.push_str(&format!("column '{c}': "));
        }
        s.push_str(&message.to_string());
        Self { message: s }
    }
}

impl fmt::Display for InputError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.message)
    }
}

impl std::error::Error for InputError {}

pub type Result<T, E = InputError> = std::result::Result<T, E>;
