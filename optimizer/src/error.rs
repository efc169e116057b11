//! The one error type of the core crate. Every variant says where the
//! problem is (file, line, column or key) and what was expected, so the CLI
//! and the page can show it as it is.

use std::fmt;

/// Where in the user's input a problem lies.
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub struct Location {
    /// The file (or upload, or "need") the text came from.
    pub file: String,
    /// 1-based line, where known.
    pub line: Option<usize>,
    /// 1-based column, or the CSV column name, where known.
    pub column: Option<String>,
    /// The key path (`adc.high_v`) for structured input, where known.
    pub key: Option<String>,
}

impl Location {
    /// A location naming only the file.
    pub fn file(file: &str) -> Self {
        Location {
            file: file.to_string(),
            ..Default::default()
        }
    }

    /// A location naming a key in a structured file.
    pub fn key(file: &str, key: &str) -> Self {
        Location {
            file: file.to_string(),
            key: Some(key.to_string()),
            ..Default::default()
        }
    }

    /// A location naming a line and column (name or 1-based number).
    pub fn cell(file: &str, line: usize, column: &str) -> Self {
        Location {
            file: file.to_string(),
            line: Some(line),
            column: Some(column.to_string()),
            key: None,
        }
    }
}

impl fmt::Display for Location {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}", self.file)?;
        if let Some(line) = self.line {
            write!(f, ", line {line}")?;
        }
        if let Some(col) = &self.column {
            write!(f, ", column {col}")?;
        }
        if let Some(key) = &self.key {
            write!(f, ", key `{key}`")?;
        }
        Ok(())
    }
}

/// Everything that can go wrong in the core.
#[derive(Debug, Clone, PartialEq)]
#[non_exhaustive]
pub enum Error {
    /// The input could not be read as the format it claims (TOML, JSON,
    /// CSV, UTF-8) or has a value that does not fit.
    Input {
        /// Where.
        at: Location,
        /// What is wrong and what was expected.
        message: String,
    },
    /// A design refers to something that does not exist or cannot be built
    /// (a part id not in stock, a stage shape that needs a value it lacks).
    Design {
        /// What is wrong.
        message: String,
    },
}

impl Error {
    /// An input error at a location.
    pub fn input(at: Location, message: impl Into<String>) -> Self {
        Error::Input {
            at,
            message: message.into(),
        }
    }

    /// A design error.
    pub fn design(message: impl Into<String>) -> Self {
        Error::Design {
            message: message.into(),
        }
    }
}

impl fmt::Display for Error {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Error::Input { at, message } => write!(f, "{at}: {message}"),
            Error::Design { message } => write!(f, "design: {message}"),
        }
    }
}

impl std::error::Error for Error {}

/// Result with the core error.
pub type Result<T> = std::result::Result<T, Error>;
