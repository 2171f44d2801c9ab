//! The crate's error type. Every variant names where the problem is: the file,
//! the line, the conformer or the atom, so that the command line can print it on
//! one line and exit non-zero.

use std::path::PathBuf;

/// Result alias used throughout the library.
pub type Result<T, E = Error> = std::result::Result<T, E>;

/// What went wrong, and where.
#[derive(Debug, thiserror::Error)]
pub enum Error {
    /// The operating system refused to open, read or write a file.
    #[error("{}: {source}", path.display())]
    Io {
        /// The file involved (`-` for standard input or output).
        path: PathBuf,
        /// The underlying I/O error.
        source: std::io::Error,
    },

    /// A malformed line in an input file (`file:line: what is wrong`).
    #[error("{}:{line}: {msg}", path.display())]
    Parse {
        /// The file being read.
        path: PathBuf,
        /// 1-based line number.
        line: usize,
        /// What is wrong with the line.
        msg: String,
    },

    /// A problem with a whole file that no single line carries (empty file,
    /// unknown format).
    #[error("{}: {msg}", path.display())]
    File {
        /// The file involved.
        path: PathBuf,
        /// What is wrong.
        msg: String,
    },

    /// A conformer that cannot join the ensemble (different atoms, changed
    /// bonding, bad coordinates). `conformer` is 1-based across the ensemble.
    #[error("{}:{line}: conformer {conformer}: {msg}", path.display())]
    Conformer {
        /// The file the conformer came from.
        path: PathBuf,
        /// 1-based line where the conformer starts.
        line: usize,
        /// 1-based index of the conformer in the ensemble.
        conformer: usize,
        /// What is wrong, naming the atoms involved.
        msg: String,
    },

    /// The molecule cannot be analysed as given (no hydrogens, atoms on top of
    /// each other, an atom reference that matches nothing).
    #[error("{0}")]
    Structure(String),

    /// A coupling model cannot be evaluated or a parameter file is malformed.
    #[error("{0}")]
    Model(String),

    /// A fit cannot be made or means nothing with the data given.
    #[error("{0}")]
    Fit(String),

    /// The request itself is inconsistent (conflicting options, missing data).
    #[error("{0}")]
    Usage(String),
}

impl Error {
    /// Builds an [`Error::Parse`].
    pub fn parse(path: impl Into<PathBuf>, line: usize, msg: impl Into<String>) -> Self {
        Error::Parse {
            path: path.into(),
            line,
            msg: msg.into(),
        }
    }

    /// Builds an [`Error::Io`].
    pub fn io(path: impl Into<PathBuf>, source: std::io::Error) -> Self {
        Error::Io {
            path: path.into(),
            source,
        }
    }

    /// Builds an [`Error::File`].
    pub fn file(path: impl Into<PathBuf>, msg: impl Into<String>) -> Self {
        Error::File {
            path: path.into(),
            msg: msg.into(),
        }
    }
}
