//! The `[nested]` config section: the nested estimate of choosing the best spec (issue 18).
//! Like `[map]` it is not part of the main sweep's identity: the run stores it with the
//! nested tables (RUN_DIR/nested/settings.json) and resumes them only under the same
//! settings. Imports nothing from the crate but `crate::error`.

use serde::{Deserialize, Serialize};

/// Keys of `[nested]`.
pub const NESTED_KEYS: &[&str] = &["outer_folds", "inner_folds", "specs", "seed"];

/// `[nested]` as written in the config.
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct NestedSection {
    /// Outer grouped folds (units grouped, a unit's waves together).
    #[serde(default = "default_outer")]
    pub outer_folds: usize,
    /// Inner grouped folds on each outer training set; absent: the run's `[folds]`.
    #[serde(default)]
    pub inner_folds: Option<usize>,
    /// A seeded sample of this many specs (its own stream); absent: every spec.
    #[serde(default)]
    pub specs: Option<usize>,
    /// Seed of the outer folds, inner folds and spec sample; absent: the run's seed.
    #[serde(default)]
    pub seed: Option<u64>,
}

fn default_outer() -> usize {
    5
}

impl NestedSection {
    /// Check the values; the message names the key at fault.
    pub fn check(&self) -> std::result::Result<(), String> {
        if self.outer_folds < 2 {
            return Err(format!(
                "nested.outer_folds = {}: need at least 2 outer folds",
                self.outer_folds
            ));
        }
        if let Some(k) = self.inner_folds {
            if k < 2 {
                return Err(format!(
                    "nested.inner_folds = {k}: need at least 2 inner folds"
                ));
            }
        }
        if self.specs == Some(0) {
            return Err(
                "nested.specs = 0: sample at least 1 spec (or leave it out: every spec)".into(),
            );
        }
        Ok(())
    }
}
