//! The `[map]` config section: how the report is made. It is not part of a run's identity
//! (a run resumes, and its shards merge, whatever `[map]` says): the run stores it in the
//! manifest under `map`, and `forkmap map` reads it from there, from `--config`, and from
//! its own flags (flags win).

use serde::{Deserialize, Serialize};

/// Names of the three good-set definitions, in report order.
pub const GOOD_DEFINITIONS: [&str; 3] = ["ratio", "margin", "paired"];

/// Error metrics the report can rank by: those computable from per-unit errors, so that
/// units can be resampled.
pub const METRICS: &[&str] = &["mae", "rmse", "unit_mae"];

/// Values of the importance table's `kind` column.
pub const TABLE_KINDS: &[&str] = &["permutation", "coefficient", "impurity"];

/// Keys of `[map]`.
pub const MAP_KEYS: &[&str] = &[
    "metric",
    "top_k",
    "good",
    "ratio_eps",
    "margin",
    "level",
    "resamples",
    "seed",
    "agreement_max",
    "claim",
];

/// Keys of one `[[map.claim]]`.
pub const CLAIM_KEYS: &[&str] = &["ranks_above", "in_top", "k", "level", "kind", "label"];

#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct MapSection {
    /// Error metric the specs are ranked by: mae (default), rmse or unit_mae.
    #[serde(default = "default_metric")]
    pub metric: String,
    /// "Top" means rank <= top_k.
    #[serde(default = "default_top_k")]
    pub top_k: usize,
    /// Good-set definition used where one good set is needed: ratio, margin or paired.
    #[serde(default = "default_good")]
    pub good: String,
    /// `ratio`: error <= (1 + ratio_eps) x best error.
    #[serde(default = "default_eps")]
    pub ratio_eps: f64,
    /// `margin`: error <= best error + margin (default: the bootstrap standard error of
    /// the best spec's error).
    #[serde(default)]
    pub margin: Option<f64>,
    /// Level of the bootstrap intervals and of the `paired` test.
    #[serde(default = "default_level")]
    pub level: f64,
    /// Unit resamples of the bootstrap.
    #[serde(default = "default_resamples")]
    pub resamples: usize,
    /// Seed of the resamples (default: the run's seed).
    #[serde(default)]
    pub seed: Option<u64>,
    /// Most good-set members in the tau-b matrix (the best ones by error).
    #[serde(default = "default_agreement_max")]
    pub agreement_max: usize,
    /// The user's claims.
    #[serde(default)]
    pub claim: Vec<ClaimSpec>,
}

/// One user claim: exactly one of `ranks_above = ["A", "B"]` (A ranks above B) or
/// `in_top = "G"` (with `k`, default the report's top_k).
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq, Default)]
#[serde(deny_unknown_fields)]
pub struct ClaimSpec {
    #[serde(default)]
    pub ranks_above: Option<Vec<String>>,
    #[serde(default)]
    pub in_top: Option<String>,
    #[serde(default)]
    pub k: Option<usize>,
    /// indicator or group (default: where the names are found, indicator first).
    #[serde(default)]
    pub level: Option<String>,
    /// Importance kind as in the importance table: permutation, coefficient or impurity
    /// (default: permutation when present, else the kind most specs hold).
    #[serde(default)]
    pub kind: Option<String>,
    /// Own wording of the statement.
    #[serde(default)]
    pub label: Option<String>,
}

fn default_metric() -> String {
    "mae".into()
}
fn default_top_k() -> usize {
    3
}
fn default_good() -> String {
    "ratio".into()
}
fn default_eps() -> f64 {
    0.05
}
fn default_level() -> f64 {
    0.95
}
fn default_resamples() -> usize {
    1000
}
fn default_agreement_max() -> usize {
    300
}

impl Default for MapSection {
    fn default() -> Self {
        MapSection {
            metric: default_metric(),
            top_k: default_top_k(),
            good: default_good(),
            ratio_eps: default_eps(),
            margin: None,
            level: default_level(),
            resamples: default_resamples(),
            seed: None,
            agreement_max: default_agreement_max(),
            claim: Vec::new(),
        }
    }
}

impl MapSection {
    /// Check values; the message names the key at fault.
    pub fn check(&self) -> Result<(), String> {
        use crate::error::suggest;
        if !METRICS.contains(&self.metric.as_str()) {
            return Err(format!(
                "map.metric = \"{}\"{}: the report ranks by an error computable per unit: {}",
                self.metric,
                suggest(&self.metric, METRICS.iter().copied()),
                METRICS.join(", ")
            ));
        }
        let goods = GOOD_DEFINITIONS;
        if !goods.contains(&self.good.as_str()) {
            return Err(format!(
                "map.good = \"{}\"{}: one of {}",
                self.good,
                suggest(&self.good, goods.iter().copied()),
                goods.join(", ")
            ));
        }
        if self.top_k == 0 {
            return Err("map.top_k must be at least 1".into());
        }
        if !(self.ratio_eps.is_finite() && self.ratio_eps >= 0.0) {
            return Err(format!("map.ratio_eps = {}: must be >= 0", self.ratio_eps));
        }
        if let Some(m) = self.margin {
            if !(m.is_finite() && m >= 0.0) {
                return Err(format!("map.margin = {m}: must be >= 0"));
            }
        }
        if !(self.level > 0.0 && self.level < 1.0) {
            return Err(format!(
                "map.level = {}: must be between 0 and 1 (e.g. 0.95)",
                self.level
            ));
        }
        if !(10..=100_000).contains(&self.resamples) {
            return Err(format!(
                "map.resamples = {}: must be between 10 and 100000",
                self.resamples
            ));
        }
        if self.agreement_max < 2 {
            return Err("map.agreement_max must be at least 2".into());
        }
        for (i, c) in self.claim.iter().enumerate() {
            let at = format!("map.claim[{i}]");
            match (&c.ranks_above, &c.in_top) {
                (Some(v), None) => {
                    if v.len() != 2 || v[0] == v[1] {
                        return Err(format!(
                            "{at}.ranks_above must name two different indicators or groups: [\"A\", \"B\"] (A ranks above B)"
                        ));
                    }
                    if c.k.is_some() {
                        return Err(format!("{at}.k belongs with in_top, not ranks_above"));
                    }
                }
                (None, Some(_)) => {
                    if c.k == Some(0) {
                        return Err(format!("{at}.k must be at least 1"));
                    }
                }
                _ => {
                    return Err(format!(
                        "{at} needs exactly one of ranks_above = [\"A\", \"B\"] or in_top = \"G\""
                    ))
                }
            }
            if let Some(l) = &c.level {
                if l != "indicator" && l != "group" {
                    return Err(format!("{at}.level = \"{l}\": indicator or group"));
                }
            }
            if let Some(k) = &c.kind {
                if !TABLE_KINDS.contains(&k.as_str()) {
                    return Err(format!(
                        "{at}.kind = \"{k}\"{}; kinds of the importance table: {}",
                        suggest(k, TABLE_KINDS.iter().copied()),
                        TABLE_KINDS.join(", ")
                    ));
                }
            }
        }
        Ok(())
    }
}
