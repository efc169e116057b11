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
    /// Where in the line, when known: a 1-based column number (characters)
    /// written as digits, or the header name of a CSV column. Read it with
    /// [`Location::column_number`] and [`Location::column_name`].
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

    /// The column as a 1-based number, when the location gives one in
    /// digits. A parser that reports column 0 (serde_json at the start of a
    /// line) means the first column, so 0 reads as 1.
    pub fn column_number(&self) -> Option<usize> {
        let text = self.column.as_deref()?;
        if text.is_empty() || !text.bytes().all(|b| b.is_ascii_digit()) {
            return None;
        }
        // Digits that overflow are no column anyone can point at.
        text.parse::<usize>().ok().map(|c| c.max(1))
    }

    /// The column as a CSV header name, when the location names one.
    pub fn column_name(&self) -> Option<&str> {
        let text = self.column.as_deref()?;
        if self.column_number().is_some() {
            None
        } else {
            Some(text)
        }
    }
}

impl fmt::Display for Location {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}", self.file)?;
        if let Some(line) = self.line {
            write!(f, ", line {line}")?;
        }
        match (self.column_number(), &self.column) {
            (Some(number), _) => write!(f, ", column {number}")?,
            (None, Some(name)) => write!(f, ", column {name}")?,
            (None, None) => {}
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

    /// What is wrong and what to enter, without the location prefix.
    pub fn detail(&self) -> &str {
        match self {
            Error::Input { message, .. } | Error::Design { message } => message,
        }
    }

    /// Where the problem is, for input errors.
    pub fn location(&self) -> Option<&Location> {
        match self {
            Error::Input { at, .. } => Some(at),
            Error::Design { .. } => None,
        }
    }

    /// The error as a front end shows it: kind, full message, detail and
    /// the location in parts.
    pub fn report(&self) -> crate::report::ErrorReport {
        crate::report::ErrorReport::from(self)
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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn columns_are_numbers_or_names() {
        let mut at = Location::file("need.toml");
        at.line = Some(3);
        at.column = Some("7".into());
        assert_eq!((at.column_number(), at.column_name()), (Some(7), None));
        assert_eq!(at.to_string(), "need.toml, line 3, column 7");
        let cell = Location::cell("opamps.csv", 4, "gbw_mhz");
        assert_eq!(cell.column_number(), None);
        assert_eq!(cell.column_name(), Some("gbw_mhz"));
        assert_eq!(cell.to_string(), "opamps.csv, line 4, column gbw_mhz");
    }

    /// Columns start at 1: a parser's column 0 (the start of a line) is
    /// shown and reported as column 1.
    #[test]
    fn column_zero_reads_as_one() {
        let mut at = Location::file("d.json");
        at.line = Some(2);
        at.column = Some("0".into());
        assert_eq!(at.column_number(), Some(1));
        assert_eq!(at.to_string(), "d.json, line 2, column 1");
    }

    #[test]
    fn error_reports_split_the_message() {
        let e = Error::input(
            Location::cell("resistors.csv", 5, "unit_cost"),
            "expected a unit cost",
        );
        let r = e.report();
        assert_eq!(r.kind, crate::report::ErrorKind::Input);
        assert_eq!(r.message, e.to_string());
        assert_eq!(r.detail, "expected a unit cost");
        assert_eq!(r.file.as_deref(), Some("resistors.csv"));
        assert_eq!((r.line, r.column), (Some(5), None));
        assert_eq!(r.column_name.as_deref(), Some("unit_cost"));
        assert!(r.message.ends_with(&r.detail));
        let d = Error::design("op-amp `X` is not in stock").report();
        assert_eq!(d.kind, crate::report::ErrorKind::Design);
        assert_eq!(d.message, "design: op-amp `X` is not in stock");
        assert_eq!(d.detail, "op-amp `X` is not in stock");
        assert!(d.file.is_none() && d.line.is_none() && d.key.is_none());
    }
}
