//! Cross-validation folds over whole units: grouped K-fold (repeated with fresh seeded
//! shuffles) and leave-one-unit-out. All rows of a unit fall on the same side.

use crate::config::{FoldScheme, FoldsSection};
use crate::error::{Error, Result};
use crate::panel::Panel;
use rand::seq::SliceRandom;
use rand::SeedableRng;

/// One train/test split.
#[derive(Debug, Clone, PartialEq)]
pub struct Fold {
    pub repeat: usize,
    pub index: usize,
    /// Panel row ids, ascending.
    pub train: Vec<usize>,
    pub test: Vec<usize>,
}

/// All folds of a run.
#[derive(Debug, Clone)]
pub struct FoldPlan {
    pub folds: Vec<Fold>,
    pub repeats: usize,
    pub k: usize,
}

pub use crate::streams::mix;

impl FoldPlan {
    pub fn new(panel: &Panel, cfg: &FoldsSection, seed: u64) -> Result<FoldPlan> {
        let nu = panel.n_units();
        let (k, repeats) = match cfg.scheme {
            FoldScheme::GroupedKfold => (cfg.k, cfg.repeats),
            FoldScheme::LeaveOneUnitOut => {
                if cfg.repeats != 1 {
                    return Err(Error::Folds(format!(
                        "leave-one-unit-out has no randomness: set folds.repeats = 1 (it is {})",
                        cfg.repeats
                    )));
                }
                (nu, 1)
            }
        };
        if k < 2 {
            return Err(Error::Folds(format!("need at least 2 folds, have {k}")));
        }
        if nu < k {
            return Err(Error::Folds(format!(
                "{k} folds need at least {k} units, the panel has {nu}"
            )));
        }
        let mut folds = Vec::with_capacity(k * repeats);
        for r in 0..repeats {
            // fold_of[unit]
            let mut order: Vec<usize> = (0..nu).collect();
            if cfg.scheme == FoldScheme::GroupedKfold {
                let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(mix(
                    seed,
                    crate::streams::FOLD_SHUFFLE + r as u64,
                ));
                order.shuffle(&mut rng);
            }
            let mut fold_of = vec![0usize; nu];
            for (pos, &u) in order.iter().enumerate() {
                fold_of[u] = pos % k;
            }
            for f in 0..k {
                let (mut train, mut test) = (Vec::new(), Vec::new());
                for (i, &u) in panel.row_unit.iter().enumerate() {
                    if fold_of[u] == f {
                        test.push(i);
                    } else {
                        train.push(i);
                    }
                }
                folds.push(Fold {
                    repeat: r,
                    index: f,
                    train,
                    test,
                });
            }
        }
        Ok(FoldPlan { folds, repeats, k })
    }

    pub fn n_fits_per_spec(&self) -> usize {
        self.folds.len()
    }
}
