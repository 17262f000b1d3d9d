//! Stage fits shared across sweeps that differ only in the outcome (the permutation
//! null's draws): a fitted stage that does not read the outcome
//! ([`crate::stages::Stage::reads_outcome`]), under ancestors that do not either, is the
//! same in every draw, so it is fitted once per fold and reused.
//!
//! A cache is valid for one panel's indicators, one fold plan and one choice space only
//! (the null makes one per run and hands it to every draw's [`super::Sweep`]). An entry is
//! keyed by the node's path in the stage tree (pool, fill, scale, compress labels: not
//! the outcome transform, whose output these fits never read, so specs under different
//! transforms share them too) and the fold index, and holds the fitted stage with its outputs on the fold's
//! training and test rows: exactly what a fresh fit would give, as the fit reads the
//! fold's training indicator rows only. Leak-freedom is unchanged: the cached fit was made
//! on the same fold's training rows.
//!
//! Two draws reaching the same node at once may both fit it; the first stored is kept (the
//! two are identical), so results never depend on timing.

use crate::stages::Fitted;
use ndarray::Array2;
use std::collections::HashMap;
use std::sync::atomic::{AtomicUsize, Ordering};
use std::sync::{Arc, Mutex};

/// A fitted node of one fold.
pub struct Entry {
    pub fitted: Arc<dyn Fitted>,
    pub train: Array2<f64>,
    pub test: Array2<f64>,
}

/// Fitted outcome-independent stage nodes, by (tree path, fold).
#[derive(Default)]
pub struct StageCache {
    map: Mutex<HashMap<(String, usize), Arc<Entry>>>,
    hits: AtomicUsize,
    stored: AtomicUsize,
}

impl StageCache {
    pub fn get(&self, path: &str, fold: usize) -> Option<Arc<Entry>> {
        let got = self
            .map
            .lock()
            .ok()?
            .get(&(path.to_string(), fold))
            .cloned();
        if got.is_some() {
            self.hits.fetch_add(1, Ordering::Relaxed);
        }
        got
    }

    /// Store a fit (the first one stored for a key is kept).
    pub fn put(&self, path: &str, fold: usize, entry: Entry) {
        if let Ok(mut m) = self.map.lock() {
            m.entry((path.to_string(), fold)).or_insert_with(|| {
                self.stored.fetch_add(1, Ordering::Relaxed);
                Arc::new(entry)
            });
        }
    }

    /// Lookups that found a fit.
    pub fn hits(&self) -> usize {
        self.hits.load(Ordering::Relaxed)
    }

    /// Fits stored (distinct node-folds).
    pub fn stored(&self) -> usize {
        self.stored.load(Ordering::Relaxed)
    }
}
