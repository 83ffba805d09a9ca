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
            value: cap_echo(value.to_string(), ECHO_LIMIT),
            problem: cap_echo(problem.into(), PROBLEM_LIMIT),
        }
    }

    /// Shorthand for [`Error::InvalidFile`].
    #[cold]
    pub fn file(path: impl Into<PathBuf>, problem: impl Into<String>) -> Self {
        Error::InvalidFile {
            path: path.into(),
            problem: cap_echo(problem.into(), PROBLEM_LIMIT),
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

/// The most characters of user-supplied text an error repeats (a 10 MB string in a wrong-typed
/// field must not become a 10 MB error line); common practice, no source.
pub const ECHO_LIMIT: usize = 200;

/// The most characters of a whole problem description (the library's words plus what it
/// repeats of the input).
pub const PROBLEM_LIMIT: usize = 2 * ECHO_LIMIT;

/// `text` cut to `limit` characters, saying how much was left out.
pub fn cap_echo(text: String, limit: usize) -> String {
    match text.char_indices().nth(limit) {
        None => text,
        Some((cut, _)) => {
            let omitted = text[cut..].chars().count();
            format!("{}… ({omitted} more characters)", &text[..cut])
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn long_echoes_are_capped() {
        let huge = "x".repeat(10_000_000);
        let e = Error::file("scene.json", format!("invalid type: string \"{huge}\""));
        let line = e.to_string();
        assert!(line.len() < 500, "{} characters", line.len());
        assert!(line.contains("more characters"));
        let e = Error::parameter("offset_hz", &huge, "bad");
        assert!(e.to_string().len() < 300);
        assert_eq!(
            cap_echo("é".repeat(ECHO_LIMIT), ECHO_LIMIT),
            "é".repeat(ECHO_LIMIT)
        );
        assert!(cap_echo("é".repeat(ECHO_LIMIT + 1), ECHO_LIMIT).ends_with("(1 more characters)"));
    }
}
