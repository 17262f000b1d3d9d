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
use columns::*;

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

fn plural(k: usize, word: &str) -> String {
    if k == 1 {
        format!("{k} {word}")
    } else {
        format!("{k} {word}s")
    }
}

fn toml_str(s: &str) -> String {
    toml::Value::String(s.to_string()).to_string()
}

fn toml_list(items: &[String]) -> String {
    let inner: Vec<String> = items.iter().map(|s| toml_str(s)).collect();
    format!("[{}]", inner.join(", "))
}

/// Two significant digits (the shortest decimal that reads back as the rounded value).
fn round2(x: f64) -> f64 {
    format!("{x:.1e}").parse().unwrap_or(x)
}

fn float(x: f64) -> String {
    let s = format!("{x}");
    if s.contains('.') || s.contains('e') {
        s
    } else {
        format!("{s}.0")
    }
}

/// Folds sized to the panel: (comment, TOML lines).
fn folds_for(units: usize) -> (String, String) {
    if units < 12 {
        (
            format!("{units} units (fewer than 12): leave-one-unit-out, so every fit trains on all units but one"),
            "scheme = \"leave-one-unit-out\"\n".into(),
        )
    } else if units < 30 {
        (
            format!(
                "{units} units (12 to 29): 3 grouped folds, repeated 3 times with fresh shuffles"
            ),
            "scheme = \"grouped-kfold\"\nk = 3\nrepeats = 3\n".into(),
        )
    } else if units < 100 {
        (
            format!("{units} units (30 to 99): 5 grouped folds, repeated twice"),
            "scheme = \"grouped-kfold\"\nk = 5\nrepeats = 2\n".into(),
        )
    } else {
        (
            format!("{units} units (100 or more): 5 grouped folds"),
            "scheme = \"grouped-kfold\"\nk = 5\nrepeats = 1\n".into(),
        )
    }
}

/// The path to write into `data.file`: relative to the config's folder when the data
/// sits in it, else absolute.
fn data_ref(data: &Path, config: &Path) -> String {
    let dir = config.parent().unwrap_or(Path::new(""));
    let data_dir = data.parent().unwrap_or(Path::new(""));
    let same = match (dir.canonicalize(), data_dir.canonicalize()) {
        (Ok(a), Ok(b)) => a == b,
        _ => dir == data_dir,
    };
    match (same, data.file_name()) {
        (true, Some(f)) => f.to_string_lossy().into_owned(),
        _ => data
            .canonicalize()
            .unwrap_or_else(|_| data.to_path_buf())
            .display()
            .to_string(),
    }
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

    // Wave.
    let wave = if opts.no_wave {
        guesses.push("wave: none (--no-wave)".to_string());
        None
    } else if let Some(w) = &opts.wave {
        let c = find(&cols, w, "wave", data)?;
        guesses.push(format!("wave: `{w}` (given)"));
        cols.iter().position(|x| x.name == c.name)
    } else {
        let g = guess_wave(&cols, n);
        match g {
            Some(j) => guesses.push(format!(
                "wave: `{}` (guessed: named like a wave, present in every row, {} values each on two rows or more; --wave or --no-wave to change)",
                cols[j].name,
                cols[j].distinct()
            )),
            None => guesses.push(
                "wave: none (no column is named like wave/year/round/period/survey with repeated values; --wave COL to name one)"
                    .to_string(),
            ),
        }
        g
    };

    // Outcome (needed before the unit so that it is not taken for one).
    let outcome_j = match &opts.outcome {
        Some(o) => {
            let c = find(&cols, o, "outcome", data)?;
            Some(cols.iter().position(|x| x.name == c.name).unwrap_or(0))
        }
        None => None,
    };

    // Unit.
    let unit = match &opts.unit {
        Some(u) => {
            let c = find(&cols, u, "unit", data)?;
            guesses.push(format!("unit: `{u}` (given)"));
            cols.iter().position(|x| x.name == c.name).unwrap_or(0)
        }
        None => {
            let skip: Vec<usize> = outcome_j.into_iter().collect();
            match guess_unit(&cols, wave, &skip, n) {
                Some(j) => {
                    let c = &cols[j];
                    let mut why = Vec::new();
                    if named_like(&c.name, UNIT_HINTS) {
                        why.push("named like a unit");
                    }
                    if !c.is_numeric() {
                        why.push("text");
                    }
                    why.push(if wave.is_some() {
                        "identifies every row together with the wave"
                    } else {
                        "identifies every row"
                    });
                    guesses.push(format!(
                        "unit: `{}` (guessed: {}, {} distinct values; --unit COL to change)",
                        c.name,
                        why.join(", "),
                        c.distinct()
                    ));
                    j
                }
                None => {
                    return Err(data_err(
                        data,
                        match wave {
                            Some(w) => format!(
                                "no column identifies the rows together with the wave `{}`: name the unit with --unit COL (or the wave with --wave, or --no-wave)",
                                cols[w].name
                            ),
                            None => "no column identifies the rows on its own: name the unit with --unit COL (and the wave with --wave COL if units repeat over waves)".to_string(),
                        },
                    ))
                }
            }
        }
    };
    if Some(unit) == wave {
        return Err(data_err(
            data,
            format!(
                "the unit and the wave are the same column `{}`",
                cols[unit].name
            ),
        ));
    }
    if !identifies(&cols[unit], wave.map(|w| &cols[w]), n) {
        return Err(data_err(
            data,
            format!(
                "unit `{}`{} does not identify every row once (a gap or a repeated key): check the columns",
                cols[unit].name,
                wave.map(|w| format!(" with wave `{}`", cols[w].name)).unwrap_or_default()
            ),
        ));
    }

    // Outcome, now that unit and wave are known.
    let taken: Vec<usize> = [Some(unit), wave].into_iter().flatten().collect();
    let outcome_j = match outcome_j {
        Some(j) => j,
        None => {
            let cands = outcome_candidates(&cols, &taken, n);
            let list = if cands.is_empty() {
                "no numeric column is present in every row".to_string()
            } else {
                format!(
                    "candidates (numeric, present in every row): {}",
                    cands.join(", ")
                )
            };
            return Err(data_err(
                data,
                format!("name the outcome with --outcome COL; {list}"),
            ));
        }
    };
    if taken.contains(&outcome_j) {
        return Err(data_err(
            data,
            format!(
                "the outcome `{}` is also the unit or wave column",
                cols[outcome_j].name
            ),
        ));
    }
    let oc = &cols[outcome_j];
    if !oc.is_numeric() {
        let (i, s) = oc.stray.clone().unwrap_or((0, String::new()));
        return Err(data_err(
            data,
            format!(
                "outcome `{}` is not numeric (row {}: `{s}`)",
                oc.name,
                i + 1
            ),
        ));
    }
    if let Some(i) = oc.num.iter().position(|v| v.is_none_or(|x| !x.is_finite())) {
        return Err(data_err(
            data,
            format!(
                "outcome `{}` is missing or not finite in row {}: remove rows without an outcome first",
                oc.name,
                i + 1
            ),
        ));
    }
    let y: Vec<f64> = oc.num.iter().flatten().copied().collect();
    let (ymin, ymax) = y
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &v| {
            (a.min(v), b.max(v))
        });
    let outcome_kind = if ymin >= 0.0 && ymax <= 1.0 {
        guesses.push(format!(
            "outcome kind: proportion (every value of `{}` lies in [0, 1])",
            oc.name
        ));
        "proportion"
    } else if ymin >= 0.0 && ymax <= 100.0 && named_like(&oc.name, PERCENT_HINTS) {
        guesses.push(format!(
            "outcome kind: percent (every value of `{}` lies in [0, 100] and its name says so)",
            oc.name
        ));
        "percent"
    } else {
        "any"
    };
    let mean = y.iter().sum::<f64>() / y.len() as f64;
    let sd = (y.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / y.len() as f64).sqrt();

    // Indicators and ignored columns.
    let mut taken = taken;
    taken.push(outcome_j);
    let mut indicators: Vec<usize> = Vec::new();
    let mut ignored: Vec<Ignored> = Vec::new();
    let mut ignore = |j: usize, reason: String, warn: bool, warnings: &mut Vec<String>| {
        if warn {
            warnings.push(format!("`{}`: {reason}", cols[j].name));
        }
        ignored.push(Ignored {
            column: cols[j].name.clone(),
            reason,
        });
    };
    for (j, c) in cols.iter().enumerate() {
        if taken.contains(&j) {
            continue;
        }
        if c.present == 0 {
            ignore(j, "empty in every row".into(), true, &mut warnings);
            continue;
        }
        if c.n_stray > 0 {
            let numbers = c.present - c.n_stray;
            let (i, s) = c.stray.clone().unwrap_or((0, String::new()));
            if numbers * 2 > c.present {
                ignore(
                    j,
                    format!(
                        "numbers with {} text cell(s), first in row {}: `{s}`; fix or blank them to use it",
                        c.n_stray,
                        i + 1
                    ),
                    true,
                    &mut warnings,
                );
            } else {
                ignore(j, "text".into(), false, &mut warnings);
            }
            continue;
        }
        if looks_like_standard_error(&c.name, &cols[outcome_j].name) {
            ignore(
                j,
                format!(
                    "named like a standard error of the outcome: as an indicator it would carry the outcome into every \
                     spec (a survey share's standard error is a function of the share); to weight rows by it, set \
                     `standard_error = \"{}\"` under [data] and add `invvar` to the weightings",
                    c.name
                ),
                true,
                &mut warnings,
            );
            continue;
        }
        if distinct_numbers(c) < 2 {
            ignore(
                j,
                "one value in every row: it cannot explain anything".into(),
                true,
                &mut warnings,
            );
            continue;
        }
        if let Some(&k) = indicators.iter().find(|&&k| cols[k].num == c.num) {
            ignore(
                j,
                format!("the same values as `{}` in every row", cols[k].name),
                true,
                &mut warnings,
            );
            continue;
        }
        let gaps = n - c.present;
        if gaps as f64 > NEARLY_EMPTY * n as f64 {
            warnings.push(format!(
                "`{}`: nearly empty ({gaps} of {n} rows are gaps); kept, but its filled values rest on few rows",
                c.name
            ));
        }
        indicators.push(j);
    }
    if indicators.is_empty() {
        return Err(data_err(
            data,
            "no usable numeric indicator columns (every other column is text, empty, constant or a duplicate)",
        ));
    }

    // Panel shape.
    let mut rows_per_unit: HashMap<&str, usize> = HashMap::new();
    for t in cols[unit].text.iter().flatten() {
        *rows_per_unit.entry(t.as_str()).or_default() += 1;
    }
    let units = rows_per_unit.len();
    let mut counts: Vec<usize> = rows_per_unit.values().copied().collect();
    counts.sort_unstable();
    let (rmin, rmax) = (counts[0], counts[counts.len() - 1]);
    let rmed = counts[counts.len() / 2];
    let gappy = indicators.iter().any(|&j| cols[j].present < n);
    // A codebook beside the data is used when it reads cleanly against the indicators.
    let codebook = data.with_file_name("codebook.csv");
    let groups = if codebook.exists() {
        let kept: Vec<String> = indicators.iter().map(|&j| cols[j].name.clone()).collect();
        match crate::panel::read_codebook(&codebook, &kept) {
            Ok(cb) => {
                let g: BTreeSet<String> = cb.values().map(|e| e.group.clone()).collect();
                guesses.push(format!(
                    "codebook: `{}` beside the data ({} groups: {})",
                    codebook.display(),
                    g.len(),
                    g.iter().cloned().collect::<Vec<_>>().join(", ")
                ));
                Some(g)
            }
            Err(e) => {
                warnings.push(format!("codebook.csv beside the data is not used: {e}"));
                None
            }
        }
    } else {
        None
    };
    let p = indicators.len();

    // The proposed space.
    let ks: Vec<usize> = [2usize, 3, 5]
        .into_iter()
        .filter(|&k| k < p && (k as f64) <= (units as f64 / 10.0).max(2.0))
        .collect();
    let mut compress = vec!["none".to_string()];
    if !ks.is_empty() {
        compress.push("pca".into());
    }
    let fills: Vec<String> = if gappy {
        vec!["median".into(), "knn".into()]
    } else {
        vec!["median".into()]
    };
    let weighting: Vec<String> = if rmin != rmax {
        vec!["rows".into(), "units".into()]
    } else {
        vec!["rows".into()]
    };
    let lasso: Vec<String> = [0.01, 0.1]
        .iter()
        .map(|f| float(round2(f * sd.max(f64::MIN_POSITIVE))))
        .collect();
    let (fold_note, fold_lines) = folds_for(units);

    let names =
        |js: &[usize]| -> Vec<String> { js.iter().map(|&j| cols[j].name.clone()).collect() };
    let ignore_names: Vec<String> = ignored.iter().map(|i| i.column.clone()).collect();
    let build = |header: &str| -> String {
        let mut t = String::new();
        let _ = writeln!(
            t,
            "# forkmap starter config, written by `forkmap sketch` from {}.",
            data.display()
        );
        let _ = writeln!(
            t,
            "# Read it, change what does not fit your question, then `forkmap plan` it."
        );
        let _ = writeln!(t, "# Paths are relative to this file.");
        let _ = writeln!(t, "#");
        for line in header.lines() {
            let _ = writeln!(t, "# {line}");
        }
        let _ = writeln!(t, "#");
        let _ = writeln!(
            t,
            "# Panel: {n} rows, {units} units, rows per unit {rmin} to {rmax} (median {rmed}); {p} indicators, {} ignored.",
            plural(ignored.len(), "column")
        );
        for g in &guesses {
            let _ = writeln!(t, "# {g}");
        }
        for w in &warnings {
            let _ = writeln!(t, "# warning: {w}");
        }
        let _ = writeln!(t, "\nseed = 1\n\n[data]");
        let _ = writeln!(t, "file = {}", toml_str(&data_ref(data, config_path)));
        let _ = writeln!(t, "unit = {}", toml_str(&cols[unit].name));
        match wave {
            Some(w) => {
                let _ = writeln!(t, "wave = {}", toml_str(&cols[w].name));
            }
            None => {
                let _ = writeln!(
                    t,
                    "# wave = \"year\"   # no wave column: each unit appears once"
                );
            }
        }
        let _ = writeln!(t, "outcome = {}", toml_str(&cols[outcome_j].name));
        let _ = writeln!(t, "outcome_kind = {}", toml_str(outcome_kind));
        let _ = writeln!(
            t,
            "indicators = \"auto\"   # every numeric column not named here or ignored ({p})"
        );
        for ig in &ignored {
            let _ = writeln!(t, "# ignored `{}`: {}", ig.column, ig.reason);
        }
        let _ = writeln!(t, "ignore = {}", toml_list(&ignore_names));
        match &groups {
            Some(g) => {
                let _ = writeln!(
                    t,
                    "codebook = {}   # enables pools group:NAME and group importances",
                    toml_str(&data_ref(&codebook, config_path))
                );
                let _ = writeln!(
                    t,
                    "# groups: {}",
                    g.iter().cloned().collect::<Vec<_>>().join(", ")
                );
            }
            None => {
                let _ = writeln!(t, "# codebook = \"codebook.csv\"   # columns indicator, group: enables pools group:NAME");
            }
        }
        let _ = writeln!(t, "\n# {fold_note}.\n[folds]\n{fold_lines}");
        let _ = writeln!(
            t,
            "# A modest first space; widen it once the plan's time suits you."
        );
        let _ = writeln!(t, "[choices]");
        let _ = writeln!(t, "transform = [\"identity\"]");
        let _ = writeln!(
            t,
            "fill = {}{}",
            toml_list(&fills),
            if gappy {
                ""
            } else {
                "   # no gaps in the indicators"
            }
        );
        let _ = writeln!(t, "pool = [\"all\"]");
        let _ = writeln!(t, "scale = [\"standardise\"]");
        let _ = writeln!(t, "compress = {}", toml_list(&compress));
        let _ = writeln!(t, "model = [\"ridge\", \"lasso\", \"forest\", \"boost\"]");
        let _ = writeln!(
            t,
            "weighting = {}{}",
            toml_list(&weighting),
            if rmin != rmax {
                "   # units: a unit's rows share one weight (units have different numbers of rows)"
            } else {
                ""
            }
        );
        let _ = writeln!(t, "\n[grid.ridge]\nalpha = [0.1, 1.0, 10.0]");
        let _ = writeln!(
            t,
            "\n# lasso's penalty is in outcome units: 1% and 10% of the outcome's sd ({}).",
            float(round2(sd))
        );
        let _ = writeln!(t, "[grid.lasso]\nalpha = [{}]", lasso.join(", "));
        if !ks.is_empty() {
            let ks: Vec<String> = ks.iter().map(|k| k.to_string()).collect();
            let _ = writeln!(t, "\n[grid.pca]\nk = [{}]   # at most about one component per ten units (rule of thumb)", ks.join(", "));
        }
        let _ = writeln!(t, "\n[grid.forest]\ntrees = [200]");
        t
    };

    // Check the text by building the sweep from it, then ask plan for the count and time.
    let draft = build("Specs and time: see `forkmap plan`.");
    let base = config_path.parent().unwrap_or(Path::new("."));
    let check = |text: &str| -> Result<crate::run::Prepared> {
        let cfg = Config::from_toml(text, base, &config_path.display().to_string())?;
        crate::run::prepare_config(cfg)
    };
    let prepared = check(&draft).map_err(|e| match e {
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
            format!("internal: the starter config does not pass plan ({e}); please report this"),
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
    let text = build(&header);
    check(&text)?;
    Ok(Starter {
        text,
        unit: cols[unit].name.clone(),
        wave: wave.map(|w| cols[w].name.clone()),
        outcome: cols[outcome_j].name.clone(),
        outcome_kind,
        indicators: names(&indicators),
        ignored,
        guesses,
        warnings,
        specs,
        estimate_seconds: estimate,
    })
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
