//! Why a run stopped: one line for the user and the exit code.

use std::fmt;
use std::path::Path;

/// A message that names the file (where there is one), the problem and the fix, and the exit
/// code: 2 for a usage error (a bad option or value), 1 for everything else.
#[derive(Debug, PartialEq)]
pub struct Failure {
    /// What went wrong and, where it helps, what to do.
    pub message: String,
    /// 2 for usage, 1 otherwise.
    pub code: u8,
}

impl Failure {
    /// A bad option or option value: exit code 2.
    pub fn usage(message: impl Into<String>) -> Self {
        Self {
            message: message.into(),
            code: 2,
        }
    }

    /// A file, data or analysis problem: exit code 1.
    pub fn runtime(message: impl Into<String>) -> Self {
        Self {
            message: message.into(),
            code: 1,
        }
    }

    /// A runtime failure about `path`: "PATH: problem".
    pub fn file(path: &Path, problem: impl fmt::Display) -> Self {
        Self::runtime(format!("{}: {problem}", path.display()))
    }

    /// An I/O error on `path`, with the usual fix for the usual kinds.
    pub fn io(path: &Path, error: &std::io::Error) -> Self {
        use std::io::ErrorKind;
        let hint = match error.kind() {
            ErrorKind::NotFound => "no such file or folder; check the path",
            ErrorKind::PermissionDenied => "permission denied; choose a path you may use",
            ErrorKind::UnexpectedEof => "the file ends early (truncated?)",
            ErrorKind::IsADirectory => "is a folder, not a file",
            _ => "",
        };
        if hint.is_empty() {
            Self::file(path, error)
        } else {
            Self::file(path, hint)
        }
    }
}

impl fmt::Display for Failure {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        // One line, always: a message with a newline would break the one-line rule.
        f.write_str(&self.message.replace('\n', " "))
    }
}

/// The result of a subcommand.
pub type Outcome<T = ()> = Result<T, Failure>;
