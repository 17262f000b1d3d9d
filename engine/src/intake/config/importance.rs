//! The `[importance]` section: which importance kinds every spec reports. Declared here,
//! below the importance code (`crate::importance`) that reads it, so the config imports
//! nothing above it.

use serde::{Deserialize, Serialize};

/// `[importance]` settings.
#[derive(Debug, Clone, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ImportanceSection {
    /// Permutation draws per indicator and fold (0 turns the permutation kinds off).
    #[serde(default = "default_repeats")]
    pub repeats: usize,
    /// Which kinds: `permutation`, `group`, `native`.
    #[serde(default = "default_kinds")]
    pub kinds: Vec<String>,
    /// When set, the permutation kinds run only for specs whose skill is within this much
    /// of the best spec's (a second pass after the sweep); native kinds still run for all.
    pub within: Option<f64>,
}

fn default_repeats() -> usize {
    3
}
fn default_kinds() -> Vec<String> {
    vec!["permutation".into(), "group".into(), "native".into()]
}

impl Default for ImportanceSection {
    fn default() -> Self {
        ImportanceSection {
            repeats: default_repeats(),
            kinds: default_kinds(),
            within: None,
        }
    }
}

pub const KINDS: &[&str] = &["permutation", "group", "native"];

impl ImportanceSection {
    /// The same settings restricted to the given kinds.
    pub fn only(&self, kinds: &[&str]) -> ImportanceSection {
        ImportanceSection {
            repeats: self.repeats,
            kinds: self
                .kinds
                .iter()
                .filter(|k| kinds.contains(&k.as_str()))
                .cloned()
                .collect(),
            within: None,
        }
    }

    /// True when the permutation kinds wait for a second pass over the best specs.
    pub fn deferred(&self) -> bool {
        self.within.is_some() && (self.wants("permutation") || self.wants("group"))
    }

    pub fn wants(&self, kind: &str) -> bool {
        self.kinds.iter().any(|k| k == kind) && (kind == "native" || self.repeats > 0)
    }
}
