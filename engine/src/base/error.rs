//! Errors a user can meet. Every message names the file, key, column or row at fault.

use std::path::PathBuf;

/// Everything that stops forkmap before or during a sweep.
#[derive(Debug, thiserror::Error)]
pub enum Error {
    /// A problem in the sweep config (key path, what is wrong).
    #[error("config {file}: {msg}")]
    Config { file: String, msg: String },
    /// A problem in the data file.
    #[error("data {file}: {msg}")]
    Data { file: String, msg: String },
    /// A problem in the codebook.
    #[error("codebook {file}: {msg}")]
    Codebook { file: String, msg: String },
    /// The choice space cannot be built (empty dimension, exclusions leave nothing, ...).
    #[error("choice space: {0}")]
    Space(String),
    /// The fold scheme does not fit the data.
    #[error("folds: {0}")]
    Folds(String),
    /// Output directory problems.
    #[error("output {path}: {msg}")]
    Output { path: PathBuf, msg: String },
    /// I/O with the path that failed.
    #[error("{path}: {source}")]
    Io {
        path: PathBuf,
        #[source]
        source: std::io::Error,
    },
    /// Writing Parquet failed.
    #[error("writing {path}: {msg}")]
    Write { path: PathBuf, msg: String },
}

impl Error {
    pub fn io(path: impl Into<PathBuf>, source: std::io::Error) -> Self {
        Error::Io {
            path: path.into(),
            source,
        }
    }
}

pub type Result<T, E = Error> = std::result::Result<T, E>;

/// Why one spec (or one stage under it) could not be fitted. Recorded, never fatal.
#[derive(Debug, Clone, thiserror::Error)]
pub enum FitError {
    #[error("singular system: {0}")]
    Singular(String),
    #[error("invalid input: {0}")]
    Invalid(String),
    #[error("did not converge: {0}")]
    NoConvergence(String),
    #[error("panic: {0}")]
    Panic(String),
}

impl FitError {
    /// The failure's status (the `status` column and the exit summary).
    pub fn cause(&self) -> Status {
        match self {
            FitError::Singular(_) => Status::Singular,
            FitError::Invalid(_) => Status::Invalid,
            FitError::NoConvergence(_) => Status::NoConvergence,
            FitError::Panic(_) => Status::Panic,
        }
    }
}

/// What became of a spec: `ok`, or the cause of its failure. Stored by name in the `status`
/// column of `specs`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Status {
    Ok,
    Singular,
    Invalid,
    NoConvergence,
    Panic,
}

impl Status {
    pub const ALL: [Status; 5] = [
        Status::Ok,
        Status::Singular,
        Status::Invalid,
        Status::NoConvergence,
        Status::Panic,
    ];

    /// The stored name.
    pub fn name(self) -> &'static str {
        match self {
            Status::Ok => "ok",
            Status::Singular => "singular",
            Status::Invalid => "invalid",
            Status::NoConvergence => "no_convergence",
            Status::Panic => "panic",
        }
    }

    /// The status of a stored name; `None` for a name this version never writes.
    pub fn parse(name: &str) -> Option<Status> {
        Status::ALL.into_iter().find(|s| s.name() == name)
    }

    pub fn is_ok(self) -> bool {
        self == Status::Ok
    }
}

impl std::fmt::Display for Status {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.name())
    }
}

/// Levenshtein distance, for "did you mean" hints.
pub fn edit_distance(a: &str, b: &str) -> usize {
    let b: Vec<char> = b.chars().collect();
    let mut prev: Vec<usize> = (0..=b.len()).collect();
    let mut cur = vec![0; b.len() + 1];
    for (i, ca) in a.chars().enumerate() {
        cur[0] = i + 1;
        for (j, cb) in b.iter().enumerate() {
            let sub = prev[j] + usize::from(ca != *cb);
            cur[j + 1] = sub.min(prev[j + 1] + 1).min(cur[j] + 1);
        }
        std::mem::swap(&mut prev, &mut cur);
    }
    prev[b.len()]
}

/// " (did you mean `x`?)" when a candidate is close enough, else "".
pub fn suggest<'a>(word: &str, candidates: impl IntoIterator<Item = &'a str>) -> String {
    let best = candidates
        .into_iter()
        .map(|c| (edit_distance(word, c), c))
        .min_by_key(|(d, _)| *d);
    match best {
        Some((d, c)) if d <= (word.len().max(3) / 2).max(2) => format!(" (did you mean `{c}`?)"),
        _ => String::new(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn edit_distance_known_values() {
        // Classic worked example: kitten -> sitting needs 3 edits.
        assert_eq!(edit_distance("kitten", "sitting"), 3);
        assert_eq!(edit_distance("", "abc"), 3);
        assert_eq!(edit_distance("same", "same"), 0);
    }

    #[test]
    fn suggestion_only_when_close() {
        assert_eq!(
            suggest("outcom", ["outcome", "unit"]),
            " (did you mean `outcome`?)"
        );
        assert_eq!(suggest("zzzzzzzz", ["outcome", "unit"]), "");
    }
}
