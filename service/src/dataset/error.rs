//! Errors of the dataset layer: one enum, and the located [`Problem`] it carries.

use std::fmt;
use std::path::PathBuf;

/// One thing wrong in a dataset file, located as precisely as the file allows.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub struct Problem {
    /// The file, as named to the loader (a path on disk, or an embedded file name).
    pub file: String,
    /// 1-based line of the offending key or value; `None` when the problem is the whole file.
    pub line: Option<usize>,
    /// Path of the field inside the file, e.g. `collision[2].upsilon[3]` (array positions 0-based).
    pub field: String,
    /// What is wrong, naming the value and what is allowed.
    pub message: String,
}

impl fmt::Display for Problem {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self.line {
            Some(line) => write!(f, "{}:{}: {}: {}", self.file, line, self.field, self.message),
            None => write!(f, "{}: {}: {}", self.file, self.field, self.message),
        }
    }
}

/// Everything that can go wrong while reading, checking or cataloguing datasets.
#[derive(Debug, thiserror::Error)]
pub enum DatasetError {
    /// A file or folder could not be read.
    #[error("cannot read {}: {source}", path.display())]
    Io {
        /// The file or folder.
        path: PathBuf,
        /// The operating-system error.
        #[source]
        source: std::io::Error,
    },
    /// A folder or file of a dataset is a symbolic link that leads out of the data folder
    /// (`path` relative to the data folder; where it leads is never shown).
    #[error("{path} is a symbolic link leading out of the data folder; links must stay inside it")]
    Escapes {
        /// The link, relative to the data folder.
        path: String,
    },
    /// A dataset folder (or set of embedded files) has no manifest `dataset.toml`.
    #[error("no dataset manifest `{}` in {location}", super::MANIFEST_FILE)]
    MissingManifest {
        /// The folder, or the name of the embedded file set.
        location: String,
    },
    /// A file, or the dataset as a whole, is over a configured size limit.
    #[error("{0}")]
    OverLimit(#[from] crate::limits::LimitError),
    /// The files were read but break the format; every problem found is listed.
    #[error("{}", list_problems(problems))]
    Invalid {
        /// All problems, sorted by file and line.
        problems: Vec<Problem>,
    },
}

impl DatasetError {
    /// All located problems inside this error (empty for I/O and missing-manifest errors).
    pub fn problems(&self) -> Vec<&Problem> {
        match self {
            DatasetError::Invalid { problems } => problems.iter().collect(),
            DatasetError::Io { .. }
            | DatasetError::MissingManifest { .. }
            | DatasetError::Escapes { .. }
            | DatasetError::OverLimit(_) => Vec::new(),
        }
    }
}

fn list_problems(problems: &[Problem]) -> String {
    let mut out = format!("invalid dataset ({} problem(s)):", problems.len());
    for p in problems {
        out.push_str("\n  ");
        out.push_str(&p.to_string());
    }
    out
}
