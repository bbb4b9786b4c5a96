//! The one error type the library returns.
//!
//! Every message is a single line that says where the problem is (file, line,
//! key, dataset or cell) and what to do about it, in the style of cargo and
//! ripgrep, so that the CLI can print it as it is. A manifest with several
//! problems gives one such line per problem.

use std::fmt;
use std::path::Path;

/// What went wrong, grouped by what the user has to fix.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Error {
    /// The experiment manifest is malformed or inconsistent.
    Manifest(String),
    /// A dataset file or its contents cannot be used.
    Data(String),
    /// Reading or writing a file failed.
    Io(String),
    /// A learner or calibrator could not be fitted in one cell.
    Fit(String),
}

impl Error {
    /// Wraps an I/O failure with the path it concerns and a hint.
    pub fn io(path: &Path, action: &str, err: &std::io::Error) -> Self {
        Error::Io(format!("{}: cannot {action}: {err}", path.display()))
    }
}

impl fmt::Display for Error {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Error::Manifest(m) | Error::Data(m) | Error::Io(m) | Error::Fit(m) => f.write_str(m),
        }
    }
}

impl std::error::Error for Error {}

/// The library's result type.
pub type Result<T> = std::result::Result<T, Error>;
