//! The sweep config (TOML): data, folds, choice dimensions, pools, grids, exclusions.
//!
//! Parsing is two-step: the raw TOML table is first walked against the known keys (so an
//! unknown key is named, with the closest valid key suggested), then deserialised into
//! typed sections. Paths are resolved relative to the config file's folder.

pub mod curves;
pub mod importance;
pub mod map;
pub mod nested;
pub mod null;
pub mod refit;

use crate::error::{suggest, Error, Result};
use serde::{Deserialize, Serialize};
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

/// A whole sweep config.
#[derive(Debug, Clone, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Config {
    /// Seed of every random stream (folds, forests, ...).
    #[serde(default = "default_seed")]
    pub seed: u64,
    pub data: DataSection,
    #[serde(default)]
    pub folds: FoldsSection,
    #[serde(default)]
    pub choices: BTreeMap<String, Vec<String>>,
    /// Named indicator lists usable as pool options.
    #[serde(default)]
    pub pools: BTreeMap<String, Vec<String>>,
    /// Parameter grids per option: `[grid.ridge] alpha = [0.1, 1]`.
    #[serde(default)]
    pub grid: BTreeMap<String, BTreeMap<String, Vec<toml::Value>>>,
    /// Combinations never to run: each table matches specs whose dimensions take the listed
    /// options (a string or a list of strings per dimension).
    #[serde(default)]
    pub exclude: Vec<BTreeMap<String, OneOrMany>>,
    #[serde(default)]
    pub output: OutputSection,
    /// Run a seeded random sample of the choice space instead of all of it.
    pub sample: Option<SampleSection>,
    /// Which importances every spec reports.
    #[serde(default)]
    pub importance: importance::ImportanceSection,
    /// How the report (`forkmap map`) is made. Not part of the run's identity: left out of
    /// the canonical form (the manifest stores it apart, under `map`).
    #[serde(default, skip_serializing)]
    pub map: map::MapSection,
    /// Curves drawn by `forkmap run` after the sweep. Not part of the run's identity (the
    /// manifest stores it apart, under `curves`).
    #[serde(default, skip_serializing)]
    pub curves: curves::CurvesSection,
    /// The nested estimate of choosing the best (`[nested]`; run after the sweep when
    /// present). Not part of the run's identity: stored with its tables under nested/.
    #[serde(default, skip_serializing)]
    pub nested: Option<nested::NestedSection>,
    /// The permutation null (`[null]`; absent: no null). Not part of the run's identity:
    /// the null keeps its own in `RUN_DIR/null/manifest.json`.
    #[serde(default, skip_serializing)]
    pub null: Option<null::NullSection>,
    /// The refit of the top N specs on unit subsamples (`[refit]`; absent: none). Not part
    /// of the run's identity: the refit keeps its own in `RUN_DIR/refit/manifest.json`.
    #[serde(default, skip_serializing)]
    pub refit: Option<refit::RefitSection>,
    /// Folder of the config file (not part of the TOML).
    #[serde(skip)]
    pub base_dir: PathBuf,
    /// Where the config came from, for messages.
    #[serde(skip)]
    pub source: String,
}

fn default_seed() -> u64 {
    1
}

#[derive(Debug, Clone, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DataSection {
    /// CSV or Parquet file (by extension: .csv, .parquet / .pq).
    pub file: PathBuf,
    /// Column naming the unit (district, country, ...).
    pub unit: String,
    /// Optional column naming the survey wave.
    pub wave: Option<String>,
    /// Column of the outcome.
    pub outcome: String,
    /// `"auto"` (every numeric column not otherwise named) or an explicit list.
    #[serde(default)]
    pub indicators: IndicatorSelection,
    /// Columns never used as indicators (labels, ids, ...).
    #[serde(default)]
    pub ignore: Vec<String>,
    /// Optional codebook CSV with columns `indicator`, `group`, `label`.
    pub codebook: Option<PathBuf>,
    /// Cell texts read as missing.
    #[serde(default = "default_missing")]
    pub missing: Vec<String>,
    /// What the outcome measures: `any` (default), `proportion` (in [0, 1]) or `percent`
    /// (in [0, 100]); the logit transform needs one of the last two.
    #[serde(default)]
    pub outcome_kind: OutcomeKind,
    /// Optional column with the standard error of each row's outcome (for `invvar`).
    pub standard_error: Option<String>,
}

#[derive(Debug, Clone, Copy, Serialize, Deserialize, PartialEq, Eq, Default)]
#[serde(rename_all = "lowercase")]
pub enum OutcomeKind {
    #[default]
    Any,
    Proportion,
    Percent,
}

impl OutcomeKind {
    /// Full scale of a bounded outcome.
    pub fn scale(self) -> Option<f64> {
        match self {
            OutcomeKind::Any => None,
            OutcomeKind::Proportion => Some(1.0),
            OutcomeKind::Percent => Some(100.0),
        }
    }
}

pub fn default_missing() -> Vec<String> {
    ["", "NA", "NaN", "null"]
        .iter()
        .map(|s| s.to_string())
        .collect()
}

#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
#[serde(untagged)]
pub enum IndicatorSelection {
    /// `"auto"` (also the default).
    Auto(AutoWord),
    List(Vec<String>),
}

impl Default for IndicatorSelection {
    fn default() -> Self {
        IndicatorSelection::Auto(AutoWord::Auto)
    }
}

#[derive(Debug, Clone, Copy, Serialize, Deserialize, PartialEq)]
#[serde(rename_all = "lowercase")]
pub enum AutoWord {
    Auto,
}

#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
#[serde(untagged)]
pub enum OneOrMany {
    One(String),
    Many(Vec<String>),
}

impl OneOrMany {
    pub fn items(&self) -> Vec<&str> {
        match self {
            OneOrMany::One(s) => vec![s.as_str()],
            OneOrMany::Many(v) => v.iter().map(|s| s.as_str()).collect(),
        }
    }
}

#[derive(Debug, Clone, Copy, Serialize, Deserialize, PartialEq, Eq)]
#[serde(rename_all = "kebab-case")]
pub enum FoldScheme {
    /// K folds of whole units, repeated with fresh shuffles.
    GroupedKfold,
    /// One fold per unit.
    LeaveOneUnitOut,
}

#[derive(Debug, Clone, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct FoldsSection {
    #[serde(default = "default_scheme")]
    pub scheme: FoldScheme,
    #[serde(default = "default_k")]
    pub k: usize,
    #[serde(default = "default_repeats")]
    pub repeats: usize,
}

impl FoldScheme {
    /// The config spelling.
    pub fn name(self) -> &'static str {
        match self {
            FoldScheme::GroupedKfold => "grouped-kfold",
            FoldScheme::LeaveOneUnitOut => "leave-one-unit-out",
        }
    }
}

fn default_scheme() -> FoldScheme {
    FoldScheme::GroupedKfold
}
fn default_k() -> usize {
    5
}
fn default_repeats() -> usize {
    1
}

impl Default for FoldsSection {
    fn default() -> Self {
        FoldsSection {
            scheme: default_scheme(),
            k: default_k(),
            repeats: default_repeats(),
        }
    }
}

#[derive(Debug, Clone, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SampleSection {
    /// Number of specs drawn (without replacement) from the full product.
    pub specs: usize,
}

#[derive(Debug, Clone, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct OutputSection {
    /// Specs per Parquet part.
    #[serde(default = "default_batch")]
    pub batch_specs: usize,
}

fn default_batch() -> usize {
    64
}

impl Default for OutputSection {
    fn default() -> Self {
        OutputSection {
            batch_specs: default_batch(),
        }
    }
}

const TOP_KEYS: &[&str] = &[
    "seed",
    "data",
    "folds",
    "choices",
    "pools",
    "grid",
    "exclude",
    "output",
    "sample",
    "importance",
    "map",
    "curves",
    "nested",
    "null",
    "refit",
];
const DATA_KEYS: &[&str] = &[
    "file",
    "unit",
    "wave",
    "outcome",
    "indicators",
    "ignore",
    "codebook",
    "missing",
    "outcome_kind",
    "standard_error",
];
const FOLD_KEYS: &[&str] = &["scheme", "k", "repeats"];
const OUTPUT_KEYS: &[&str] = &["batch_specs"];

impl Config {
    /// Read and check a config file.
    pub fn from_file(path: &Path) -> Result<Config> {
        let text = std::fs::read_to_string(path).map_err(|e| Error::Config {
            file: path.display().to_string(),
            msg: format!("cannot read: {e}"),
        })?;
        let base = path.parent().map(Path::to_path_buf).unwrap_or_default();
        Config::from_toml(&text, &base, &path.display().to_string())
    }

    /// Parse config text; `base_dir` resolves relative paths; `source` names it in messages.
    pub fn from_toml(text: &str, base_dir: &Path, source: &str) -> Result<Config> {
        let err = |msg: String| Error::Config {
            file: source.to_string(),
            msg,
        };
        let table: toml::Table = text
            .parse()
            .map_err(|e: toml::de::Error| err(e.to_string()))?;
        check_keys(&table, "", TOP_KEYS).map_err(&err)?;
        for (section, keys) in [
            ("sample", &["specs"][..]),
            ("importance", &["repeats", "kinds", "within"][..]),
            ("data", DATA_KEYS),
            ("folds", FOLD_KEYS),
            ("output", OUTPUT_KEYS),
            ("map", map::MAP_KEYS),
            ("curves", curves::CURVES_KEYS),
            ("nested", nested::NESTED_KEYS),
            ("null", null::NULL_KEYS),
            ("refit", refit::REFIT_KEYS),
        ] {
            if let Some(v) = table.get(section) {
                let t = v
                    .as_table()
                    .ok_or_else(|| err(format!("`{section}` must be a table")))?;
                check_keys(t, section, keys).map_err(&err)?;
            }
        }
        if let Some(v) = table.get("choices") {
            let t = v
                .as_table()
                .ok_or_else(|| err("`choices` must be a table".into()))?;
            check_keys(t, "choices", crate::decl::DIMENSIONS).map_err(&err)?;
        }
        if let Some(ex) = table.get("exclude") {
            let list = ex
                .as_array()
                .ok_or_else(|| err("`exclude` must be a list of tables ([[exclude]])".into()))?;
            for (i, e) in list.iter().enumerate() {
                let t = e
                    .as_table()
                    .ok_or_else(|| err(format!("exclude[{i}] must be a table")))?;
                check_keys(t, &format!("exclude[{i}]"), crate::decl::DIMENSIONS).map_err(&err)?;
            }
        }
        if let Some(claims) = table.get("map").and_then(|m| m.get("claim")) {
            let list = claims.as_array().ok_or_else(|| {
                err("`map.claim` must be a list of tables ([[map.claim]])".into())
            })?;
            for (i, c) in list.iter().enumerate() {
                let t = c
                    .as_table()
                    .ok_or_else(|| err(format!("map.claim[{i}] must be a table")))?;
                check_keys(t, &format!("map.claim[{i}]"), map::CLAIM_KEYS).map_err(&err)?;
            }
        }
        if !table.contains_key("data") {
            return Err(err(
                "missing the [data] section (file, unit, outcome)".into()
            ));
        }
        let mut cfg: Config =
            toml::from_str(text).map_err(|e: toml::de::Error| err(e.to_string()))?;
        cfg.base_dir = base_dir.to_path_buf();
        cfg.source = source.to_string();
        if cfg.folds.repeats == 0 {
            return Err(err("folds.repeats must be at least 1".into()));
        }
        for k in &cfg.importance.kinds {
            if !importance::KINDS.contains(&k.as_str()) {
                return Err(err(format!(
                    "importance.kinds: unknown kind `{k}`{}; kinds: {}",
                    suggest(k, importance::KINDS.iter().copied()),
                    importance::KINDS.join(", ")
                )));
            }
        }
        if let Some(w) = cfg.importance.within {
            if !(w.is_finite() && w >= 0.0) {
                return Err(err(format!(
                    "importance.within = {w}: must be a skill difference >= 0"
                )));
            }
        }
        cfg.map.check().map_err(&err)?;
        cfg.curves.checked().map_err(&err)?;
        if let Some(n) = &cfg.nested {
            n.check().map_err(&err)?;
        }
        if let Some(n) = &cfg.null {
            let ns = n.check(&cfg.map.metric).map_err(&err)?;
            if (ns.permutation || ns.group) && cfg.importance.repeats == 0 {
                return Err(err(
                    "null.importance asks for permutation importances but importance.repeats = 0: set repeats >= 1 (the null uses the run's repeats)".into(),
                ));
            }
        }
        if let Some(r) = &cfg.refit {
            r.check().map_err(&err)?;
        }
        if cfg.output.batch_specs == 0 {
            return Err(err("output.batch_specs must be at least 1".into()));
        }
        if cfg.folds.scheme == FoldScheme::GroupedKfold && cfg.folds.k < 2 {
            return Err(err(format!(
                "folds.k = {} but grouped K-fold needs k >= 2",
                cfg.folds.k
            )));
        }
        Ok(cfg)
    }

    /// A path from the config, resolved against the config's folder.
    pub fn resolve(&self, p: &Path) -> PathBuf {
        let joined = if p.is_absolute() {
            p.to_path_buf()
        } else {
            self.base_dir.join(p)
        };
        normalise(&joined)
    }

    /// Canonical JSON form (stored in the manifest).
    pub fn canonical_json(&self) -> serde_json::Value {
        serde_json::to_value(self).unwrap_or(serde_json::Value::Null)
    }
}

/// Remove `.` and `name/..` pairs without touching the file system.
fn normalise(p: &Path) -> PathBuf {
    use std::path::Component;
    let mut out: Vec<Component> = Vec::new();
    for c in p.components() {
        match c {
            Component::CurDir => {}
            Component::ParentDir if matches!(out.last(), Some(Component::Normal(_))) => {
                out.pop();
            }
            other => out.push(other),
        }
    }
    if out.is_empty() {
        PathBuf::from(".")
    } else {
        out.iter().collect()
    }
}

fn check_keys(
    table: &toml::Table,
    path: &str,
    allowed: &[&str],
) -> std::result::Result<(), String> {
    for key in table.keys() {
        if !allowed.contains(&key.as_str()) {
            let full = if path.is_empty() {
                key.clone()
            } else {
                format!("{path}.{key}")
            };
            return Err(format!(
                "unknown key `{full}`{}; valid keys here: {}",
                suggest(key, allowed.iter().copied()),
                allowed.join(", ")
            ));
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    const MIN: &str = "[data]\nfile = \"p.csv\"\nunit = \"u\"\noutcome = \"y\"\n";

    #[test]
    fn minimal_config_gets_defaults() {
        let c = Config::from_toml(MIN, Path::new("/cfg"), "t").unwrap();
        assert_eq!(c.folds.k, 5);
        assert_eq!(c.data.indicators, IndicatorSelection::Auto(AutoWord::Auto));
        // The canonical form (stored in the manifest, compared on resume) must exist.
        let j = c.canonical_json();
        assert!(j.is_object() && j["data"]["indicators"] == "auto", "{j}");
        assert_eq!(c.resolve(Path::new("p.csv")), PathBuf::from("/cfg/p.csv"));
        assert_eq!(
            c.resolve(Path::new("../d/./p.csv")),
            PathBuf::from("/d/p.csv")
        );
        assert_eq!(normalise(Path::new("../../a")), PathBuf::from("../../a"));
    }

    #[test]
    fn unknown_key_is_named_with_suggestion() {
        let text = format!("{MIN}outcom = 3\n");
        // `outcom` lands in [data] because it follows that header.
        let e = Config::from_toml(&text, Path::new("."), "t")
            .unwrap_err()
            .to_string();
        assert!(
            e.contains("data.outcom") && e.contains("did you mean `outcome`"),
            "{e}"
        );
        let e = Config::from_toml(&format!("sed = 1\n{MIN}"), Path::new("."), "t")
            .unwrap_err()
            .to_string();
        assert!(
            e.contains("unknown key `sed`") && e.contains("`seed`"),
            "{e}"
        );
    }

    #[test]
    fn map_section_keys_values_and_identity() {
        let text = format!("{MIN}[map]\ntop_k = 5\nmetric = \"rmse\"\n[[map.claim]]\nranks_above = [\"a\", \"b\"]\n");
        let c = Config::from_toml(&text, Path::new("."), "t").unwrap();
        assert_eq!((c.map.top_k, c.map.metric.as_str()), (5, "rmse"));
        assert_eq!(c.map.claim.len(), 1);
        // [map] is not part of the run's identity.
        let plain = Config::from_toml(MIN, Path::new("."), "t").unwrap();
        assert_eq!(c.canonical_json(), plain.canonical_json());
        assert!(c.canonical_json().get("map").is_none());
        let e = Config::from_toml(&format!("{MIN}[map]\ntopk = 5\n"), Path::new("."), "t")
            .unwrap_err()
            .to_string();
        assert!(e.contains("map.topk") && e.contains("`top_k`"), "{e}");
        let e = Config::from_toml(
            &format!("{MIN}[[map.claim]]\nranks_abov = [\"a\", \"b\"]\n"),
            Path::new("."),
            "t",
        )
        .unwrap_err()
        .to_string();
        assert!(
            e.contains("map.claim[0].ranks_abov") && e.contains("`ranks_above`"),
            "{e}"
        );
        let e = Config::from_toml(
            &format!("{MIN}[map]\nmetric = \"r2\"\n"),
            Path::new("."),
            "t",
        )
        .unwrap_err()
        .to_string();
        assert!(e.contains("map.metric") && e.contains("mae"), "{e}");
        let e = Config::from_toml(
            &format!("{MIN}[[map.claim]]\nin_top = \"g\"\nranks_above = [\"a\", \"b\"]\n"),
            Path::new("."),
            "t",
        )
        .unwrap_err()
        .to_string();
        assert!(
            e.contains("map.claim[0]") && e.contains("exactly one"),
            "{e}"
        );
    }

    #[test]
    fn indicator_list_or_auto() {
        let t = MIN.replace(
            "outcome = \"y\"",
            "outcome = \"y\"\nindicators = [\"a\", \"b\"]",
        );
        let c = Config::from_toml(&t, Path::new("."), "t").unwrap();
        assert_eq!(
            c.data.indicators,
            IndicatorSelection::List(vec!["a".into(), "b".into()])
        );
        let t = MIN.replace("outcome = \"y\"", "outcome = \"y\"\nindicators = \"auto\"");
        let c = Config::from_toml(&t, Path::new("."), "t").unwrap();
        assert_eq!(c.data.indicators, IndicatorSelection::Auto(AutoWord::Auto));
    }
}
