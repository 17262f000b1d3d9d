//! The `[refit]` config section: the optional refit of the run's top N specs on unit
//! subsamples (issue 17, stability under resampling). Off unless present. Like `[null]` it
//! is not part of the run's identity: the refit keeps its own in
//! `RUN_DIR/refit/manifest.json`. Imports nothing from the crate but `crate::error`.

use serde::{Deserialize, Serialize};

/// Keys of `[refit]`.
pub const REFIT_KEYS: &[&str] = &["specs", "resamples", "fraction", "seed"];

/// `[refit]` as written.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct RefitSection {
    /// N: the top N specs of the run by the report's metric (ties by spec id) are refitted.
    #[serde(default = "default_specs")]
    pub specs: usize,
    /// B: unit subsamples.
    #[serde(default = "default_resamples")]
    pub resamples: usize,
    /// Share of the units each subsample keeps (without replacement; a unit's waves stay
    /// together).
    #[serde(default = "default_fraction")]
    pub fraction: f64,
    /// Seed of the subsamples and of their folds (default: the run's seed).
    #[serde(default)]
    pub seed: Option<u64>,
}

fn default_specs() -> usize {
    10
}
fn default_resamples() -> usize {
    20
}
fn default_fraction() -> f64 {
    0.8
}

impl Default for RefitSection {
    fn default() -> Self {
        RefitSection {
            specs: default_specs(),
            resamples: default_resamples(),
            fraction: default_fraction(),
            seed: None,
        }
    }
}

/// Most resamples accepted.
pub const MAX_RESAMPLES: usize = 10_000;

impl RefitSection {
    /// Check the values; the message names the key at fault.
    pub fn check(&self) -> Result<(), String> {
        if self.specs == 0 {
            return Err("refit.specs = 0: refit at least 1 spec (the top N of the run)".into());
        }
        if !(1..=MAX_RESAMPLES).contains(&self.resamples) {
            return Err(format!(
                "refit.resamples = {}: must be between 1 and {MAX_RESAMPLES}",
                self.resamples
            ));
        }
        if !(self.fraction.is_finite() && self.fraction > 0.0 && self.fraction < 1.0) {
            return Err(format!(
                "refit.fraction = {}: the share of units each subsample keeps, above 0 and below 1 (e.g. 0.8)",
                self.fraction
            ));
        }
        Ok(())
    }
}
