//! A starter config written from a data file (`forkmap sketch`).
//!
//! Reads a CSV or Parquet file through the same intake as a sweep, looks at every column,
//! guesses the unit and wave columns (saying how), sorts the other columns into
//! indicators and columns to ignore (text, constant, empty, duplicated, numeric with stray
//! text), and proposes a modest choice space with folds sized to the panel. The text it
//! returns is checked by building the whole sweep from it (config, panel, choice space,
//! folds) before anything is written, so a written starter always passes `forkmap plan`.
//!
//! The guesses are rules, stated here and in the written comments:
//! * wave: a column named like a wave (`wave`, `year`, `round`, `period`, `survey`,
//!   `cycle`, `time`, `date`), present in every row, with 2 to 50 distinct values, each
//!   value on at least two rows; the first such column wins;
//! * unit: among columns present in every row that identify the rows uniquely (together
//!   with the wave, when there is one), the one with the best score: named like a unit
//!   (+2: `unit`, `id`, `code`, `iso`, `country`, `district`, `county`, `region`, `state`,
//!   `province`, `municipality`, `area`, `name`, `geo`, `place`), text rather than numbers
//!   (+1), then the most distinct values, then the leftmost; numbers with fractions, and
//!   numbers not named like a unit, are never guessed;
//! * outcome kind: `proportion` when every outcome value lies in [0, 1]; `percent` when
//!   every value lies in [0, 100] and the name says so (`pct`, `percent`, `share`, `rate`);
//!   otherwise `any`;
//! * folds: fewer than 12 units: leave-one-unit-out; 12 to 29: grouped 3-fold repeated 3
//!   times; 30 to 99: grouped 5-fold repeated twice; 100 or more: grouped 5-fold once.
//!   These sizes are our own choice (common practice, not from a source): with few units
//!   every training unit counts, and repeats steady the estimate of a small test fold.

use crate::config::Config;
use crate::error::{Error, Result};
use crate::panel::{parse_cell, read_table, RawColumn};
use std::collections::{BTreeSet, HashMap, HashSet};
use std::fmt::Write;
use std::path::{Path, PathBuf};

mod columns;
mod roles;
mod sort;
mod text;
use columns::*;
use roles::*;
use sort::*;
use text::*;

/// What the caller fixes; everything left `None` is guessed.
#[derive(Debug, Clone, Default)]
pub struct StarterOptions {
    pub unit: Option<String>,
    pub wave: Option<String>,
    /// True: the panel has no wave column (do not guess one).
    pub no_wave: bool,
    pub outcome: Option<String>,
}

/// Why a column is left out of the indicators.
#[derive(Debug, Clone, PartialEq)]
pub struct Ignored {
    pub column: String,
    pub reason: String,
}

/// The starter config and what was guessed.
#[derive(Debug, Clone)]
pub struct Starter {
    /// The config text (TOML with comments).
    pub text: String,
    pub unit: String,
    pub wave: Option<String>,
    pub outcome: String,
    pub outcome_kind: &'static str,
    pub indicators: Vec<String>,
    pub ignored: Vec<Ignored>,
    /// One line each: how a column was guessed.
    pub guesses: Vec<String>,
    /// Warnings a user should read (also written as comments).
    pub warnings: Vec<String>,
    /// Specs in the proposed space.
    pub specs: usize,
    /// `plan`'s run-time estimate in seconds (None without the probe).
    pub estimate_seconds: Option<f64>,
}

/// The default place of the starter: beside the data, `NAME.forkmap.toml`.
pub fn default_path(data: &Path) -> PathBuf {
    let stem = data
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_else(|| "panel".into());
    data.with_file_name(format!("{stem}.forkmap.toml"))
}

/// Look at `data` and build a starter config meant to live at `config_path`. Nothing is
/// written. `threads` and `probe` feed `plan`'s estimate (None: no probe).
pub fn sketch(
    data: &Path,
    config_path: &Path,
    opts: &StarterOptions,
    probe: Option<usize>,
) -> Result<Starter> {
    if !data.exists() {
        return Err(data_err(data, "file not found"));
    }
    let missing = crate::config::default_missing();
    let (cols, n) = columns(data, &missing)?;
    let mut guesses = Vec::new();
    let mut warnings = Vec::new();
    let roles = choose_roles(&cols, n, data, opts, &mut guesses)?;
    let outcome = outcome_facts(&cols[roles.outcome], &mut guesses);
    let taken: Vec<usize> = [Some(roles.unit), roles.wave, Some(roles.outcome)]
        .into_iter()
        .flatten()
        .collect();
    let (indicators, ignored) =
        sort_columns(&cols, n, &taken, &cols[roles.outcome].name, &mut warnings);
    if indicators.is_empty() {
        return Err(data_err(
            data,
            "no usable numeric indicator columns (every other column is text, empty, constant or a duplicate)",
        ));
    }
    let shape = panel_shape(&cols[roles.unit]);
    let gappy = indicators.iter().any(|&j| cols[j].present < n);
    let names: Vec<String> = indicators.iter().map(|&j| cols[j].name.clone()).collect();
    let (codebook, groups) = codebook_beside(data, &names, &mut guesses, &mut warnings);
    let proposal = propose(&shape, indicators.len(), gappy, outcome.sd);
    let draft = Draft {
        data,
        config_path,
        cols: &cols,
        n,
        roles: &roles,
        outcome: &outcome,
        indicators: &indicators,
        ignored: &ignored,
        guesses: &guesses,
        warnings: &warnings,
        shape: &shape,
        gappy,
        codebook: &codebook,
        groups: groups.as_ref(),
        proposal: &proposal,
    };
    let (text, specs, estimate) = checked_text(&draft, probe)?;
    Ok(Starter {
        text,
        unit: cols[roles.unit].name.clone(),
        wave: roles.wave.map(|w| cols[w].name.clone()),
        outcome: cols[roles.outcome].name.clone(),
        outcome_kind: outcome.kind,
        indicators: names,
        ignored,
        guesses,
        warnings,
        specs,
        estimate_seconds: estimate,
    })
}

/// Check the text by building the sweep from it, then ask `plan` for the count and time
/// and write them into the header: (text, specs, estimate in seconds when probed).
fn checked_text(draft: &Draft, probe: Option<usize>) -> Result<(String, usize, Option<f64>)> {
    let (data, config_path) = (draft.data, draft.config_path);
    let base = config_path.parent().unwrap_or(Path::new("."));
    let check = |text: &str| -> Result<crate::run::Prepared> {
        let cfg = Config::from_toml(text, base, &config_path.display().to_string())?;
        crate::run::prepare_config(cfg)
    };
    let prepared =
        check(&draft.text("Specs and time: see `forkmap plan`.")).map_err(|e| match e {
            // Something in the data that the intake refuses (a value out of range, ...): the
            // user's to fix, named by the intake's own message.
            Error::Data { .. } => data_err(
                data,
                format!(
                "the data holds something forkmap refuses, so no starter config was written: {e}"
            ),
            ),
            e => data_err(
                data,
                format!(
                    "internal: the starter config does not pass plan ({e}); please report this"
                ),
            ),
        })?;
    let report = crate::plan::plan(&prepared, probe.unwrap_or(1), probe.is_some());
    let specs = report.specs;
    let estimate = probe.map(|_| report.estimate_seconds);
    let header = match estimate {
        Some(s) => format!(
            "This space: {specs} specs, {} model fits; plan's estimate {} on {} threads.",
            report.fits,
            crate::plan::human(s),
            probe.unwrap_or(1)
        ),
        None => format!("This space: {specs} specs, {} model fits.", report.fits),
    };
    let text = draft.text(&header);
    check(&text)?;
    Ok((text, specs, estimate))
}

/// Write the starter to `path`, never over an existing file.
pub fn write_new(path: &Path, text: &str) -> Result<()> {
    use std::io::Write as _;
    let mut f = std::fs::OpenOptions::new()
        .write(true)
        .create_new(true)
        .open(path)
        .map_err(|e| match e.kind() {
            std::io::ErrorKind::AlreadyExists => Error::Output {
                path: path.to_path_buf(),
                msg: "already exists; forkmap sketch never overwrites a file (give another path with --out)".into(),
            },
            _ => Error::io(path, e),
        })?;
    let r = f.write_all(text.as_bytes()).and_then(|_| f.sync_all());
    if let Err(e) = r {
        let _ = std::fs::remove_file(path);
        return Err(Error::io(path, e));
    }
    Ok(())
}

/// Whether a column's name says it is a standard error (or margin of error) of the
/// outcome: `se`, `stderr`, `std_error`, `moe` as a whole word of the name (split at `_`,
/// `-`, `.` and spaces, any case), or the outcome's name with such a word. A heuristic on
/// names only; the warning says what was done and how to undo it.
fn looks_like_standard_error(name: &str, outcome: &str) -> bool {
    const WORDS: &[&str] = &["se", "stderr", "std_err", "std_error", "stderror", "moe"];
    let lower = name.to_lowercase();
    let words: Vec<&str> = lower
        .split(|c: char| c == '_' || c == '-' || c == '.' || c.is_whitespace())
        .filter(|w| !w.is_empty())
        .collect();
    let joined = words.join("_");
    WORDS.iter().any(|w| {
        joined == *w
            || joined.starts_with(&format!("{w}_"))
            || joined.ends_with(&format!("_{w}"))
            || joined.contains(&format!("_{w}_"))
    }) || lower == format!("{}_se", outcome.to_lowercase())
}

#[cfg(test)]
mod tests {
    /// Names that say "standard error" as a word, and names that merely contain the letters.
    #[test]
    fn standard_error_names() {
        use super::looks_like_standard_error as se;
        for yes in [
            "se_share",
            "share_se",
            "SE",
            "rate stderr",
            "moe_rate",
            "rate-moe",
            "std_error",
        ] {
            assert!(se(yes, "share"), "{yes}");
        }
        for no in [
            "sector",
            "base",
            "response",
            "case_rate",
            "sequence",
            "house_sales",
        ] {
            assert!(!se(no, "share"), "{no}");
        }
    }
}
