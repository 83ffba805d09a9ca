//! The library's one error type.

use std::path::PathBuf;

/// Result with the library's [`Error`].
pub type Result<T> = std::result::Result<T, Error>;

/// Everything that can go wrong in amrx. Each variant carries the values involved so that the
/// CLI can print one line naming the file or the parameter and the problem.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum Error {
    /// An operating-system error while reading or writing `path`.
    #[error("{}: {source}", path.display())]
    Io {
        /// The file involved (`-` for standard input or output).
        path: PathBuf,
        /// The underlying error.
        #[source]
        source: std::io::Error,
    },
    /// A file whose contents cannot be used (bad metadata, wrong size, wrong channel count...).
    #[error("{}: {problem}", path.display())]
    InvalidFile {
        /// The file involved.
        path: PathBuf,
        /// What is wrong with it, in words.
        problem: String,
    },
    /// A parameter outside the range the block or receiver can honour.
    #[error("invalid {name} {value}: {problem}")]
    InvalidParameter {
        /// The parameter's name in the library (e.g. `offset_hz`); the command line maps it
        /// to its flag.
        name: &'static str,
        /// The value given, formatted.
        value: String,
        /// Why it cannot be used.
        problem: String,
    },
    /// A streaming stage stopped without an error of its own (e.g. it panicked).
    #[error("pipeline stage '{stage}' failed: {problem}")]
    Pipeline {
        /// The stage's name.
        stage: &'static str,
        /// What happened.
        problem: String,
    },
}

impl Error {
    /// Shorthand for [`Error::InvalidParameter`].
    #[cold]
    pub fn parameter(name: &'static str, value: impl ToString, problem: impl Into<String>) -> Self {
        Error::InvalidParameter {
            name,
            value: value.to_string(),
            problem: problem.into(),
        }
    }

    /// Shorthand for [`Error::InvalidFile`].
    #[cold]
    pub fn file(path: impl Into<PathBuf>, problem: impl Into<String>) -> Self {
        Error::InvalidFile {
            path: path.into(),
            problem: problem.into(),
        }
    }

    /// Shorthand for [`Error::Io`].
    #[cold]
    pub fn io(path: impl Into<PathBuf>, source: std::io::Error) -> Self {
        Error::Io {
            path: path.into(),
            source,
        }
    }
}
