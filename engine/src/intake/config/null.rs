//! The `[null]` config section: the permutation null of the whole sweep (issue 18). Its
//! presence asks `forkmap run` to run the null after the sweep. It is NOT part of the run's
//! identity (changing the number of draws must not invalidate a finished sweep): it is left
//! out of the canonical form, and the null keeps its own identity (these settings plus the
//! run's identity) in `RUN_DIR/null/manifest.json`. Imports nothing from the crate but
//! `crate::error`.

use serde::{Deserialize, Serialize};

/// Keys of `[null]`.
pub const NULL_KEYS: &[&str] = &[
    "draws",
    "specs",
    "top_k",
    "metric",
    "importance",
    "ranks_within",
];

/// Importance kinds a null draw can compute (`[importance] kinds` names). `native` is
/// always computed; `permutation` and `group` use the run's `[importance] repeats`.
pub const NULL_KINDS: &[&str] = &["native", "permutation", "group"];

/// Error metrics a null draw can rank its specs by.
pub const NULL_METRICS: &[&str] = &["mae", "rmse", "unit_mae"];

/// `[null]` as written.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct NullSection {
    /// Permutation draws D (default 100).
    #[serde(default = "default_draws")]
    pub draws: usize,
    /// Specs per draw: a seeded sample of this many specs of the run's space (default:
    /// every spec). The same sample in every draw and for the observed statistics.
    #[serde(default)]
    pub specs: Option<usize>,
    /// An indicator (group) is "top" in a draw when its native-importance rank in the
    /// draw's best spec is <= top_k (default 3).
    #[serde(default = "default_top_k")]
    pub top_k: usize,
    /// Error the draws rank specs by: mae, rmse or unit_mae (default: `[map] metric`, the
    /// report's metric).
    #[serde(default)]
    pub metric: Option<String>,
    /// Importance kinds computed in every draw (default `["native"]`); `permutation` and
    /// `group` let the report test the claims made on those kinds under the null, at the
    /// cost of the permutation importances of every spec of every draw.
    #[serde(default = "default_importance")]
    pub importance: Vec<String>,
    /// Each draw keeps the importance ranks of its specs whose error is within this
    /// relative distance of the draw's best (`null/goodranks`), so that the report can
    /// evaluate its claims over each draw's good set. Default 0.10: it covers the
    /// report's ratio rule up to `map.ratio_eps = 0.10` (the default is 0.05).
    #[serde(default = "default_ranks_within")]
    pub ranks_within: f64,
}

fn default_importance() -> Vec<String> {
    vec!["native".into()]
}
fn default_ranks_within() -> f64 {
    0.10
}

fn default_draws() -> usize {
    100
}
fn default_top_k() -> usize {
    3
}

impl Default for NullSection {
    fn default() -> Self {
        NullSection {
            draws: default_draws(),
            specs: None,
            top_k: default_top_k(),
            metric: None,
            importance: default_importance(),
            ranks_within: default_ranks_within(),
        }
    }
}

/// The error a null ranks by (checked).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum NullMetric {
    Mae,
    Rmse,
    UnitMae,
}

impl NullMetric {
    pub fn name(self) -> &'static str {
        match self {
            NullMetric::Mae => "mae",
            NullMetric::Rmse => "rmse",
            NullMetric::UnitMae => "unit_mae",
        }
    }
}

/// `[null]` checked: what the null code reads.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct NullSettings {
    pub draws: u32,
    pub specs: Option<u32>,
    pub top_k: u32,
    pub metric: NullMetric,
    /// Whether the draws compute permutation importances per indicator and per group
    /// (native importances are always computed).
    pub permutation: bool,
    pub group: bool,
    /// Relative band of `null/goodranks` (`[null] ranks_within`).
    pub ranks_within: f64,
}

impl NullSettings {
    /// The importance kinds of a draw, as `[importance] kinds` names them.
    pub fn kinds(&self) -> Vec<&'static str> {
        let mut k = vec!["native"];
        if self.permutation {
            k.push("permutation");
        }
        if self.group {
            k.push("group");
        }
        k
    }
}

/// Most draws accepted (a p-value resolution of 1e-5 is more than any report needs).
pub const MAX_DRAWS: usize = 100_000;

impl NullSection {
    /// Check values into [`NullSettings`]; the message names the key at fault.
    /// `map_metric` (`[map] metric`, the report's metric) is the metric when `metric` is
    /// unset.
    pub fn check(&self, map_metric: &str) -> Result<NullSettings, String> {
        use crate::error::suggest;
        if !(1..=MAX_DRAWS).contains(&self.draws) {
            return Err(format!(
                "null.draws = {}: must be between 1 and {MAX_DRAWS} (the smallest p-value is 1/(1 + draws))",
                self.draws
            ));
        }
        let specs = match self.specs {
            Some(0) => {
                return Err(
                    "null.specs = 0: must be at least 1 (or leave it out to use every spec)".into(),
                )
            }
            Some(s) => Some(u32::try_from(s).map_err(|_| format!("null.specs = {s}: too large"))?),
            None => None,
        };
        if !(1..=1000).contains(&self.top_k) {
            return Err(format!(
                "null.top_k = {}: must be between 1 and 1000",
                self.top_k
            ));
        }
        let (key, metric) = match &self.metric {
            Some(m) => ("null.metric", m.as_str()),
            None => ("map.metric (the default of null.metric)", map_metric),
        };
        let metric = match metric {
            "mae" => NullMetric::Mae,
            "rmse" => NullMetric::Rmse,
            "unit_mae" => NullMetric::UnitMae,
            other => {
                return Err(format!(
                    "{key} = \"{other}\"{}: the null ranks by one of {}",
                    suggest(other, NULL_METRICS.iter().copied()),
                    NULL_METRICS.join(", ")
                ))
            }
        };
        for k in &self.importance {
            if !NULL_KINDS.contains(&k.as_str()) {
                return Err(format!(
                    "null.importance = \"{k}\"{}: kinds a null draw computes: {} (native always)",
                    suggest(k, NULL_KINDS.iter().copied()),
                    NULL_KINDS.join(", ")
                ));
            }
        }
        if !(self.ranks_within.is_finite() && (0.0..=10.0).contains(&self.ranks_within)) {
            return Err(format!(
                "null.ranks_within = {}: must be between 0 and 10 (a relative distance to the draw's best error)",
                self.ranks_within
            ));
        }
        let wants = |k: &str| self.importance.iter().any(|x| x == k);
        Ok(NullSettings {
            draws: self.draws as u32,
            specs,
            top_k: self.top_k as u32,
            metric,
            permutation: wants("permutation"),
            group: wants("group"),
            ranks_within: self.ranks_within,
        })
    }
}
