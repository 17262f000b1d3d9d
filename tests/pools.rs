//! A pool bounds what a spec uses: the pool is the first stage of the tree, so no step
//! that reads indicator values (the fill included) sees an indicator outside it.
//!
//! For every fill, and a codebook-group pool, a named list and `screen`: replacing every
//! column outside the pool (values and gaps) by seeded noise with its own gaps leaves the
//! pooled specs' predictions and importance rows bit-identical, and the importance rows
//! of indicators outside the pool (for `screen`: never screened in, in any fold) are
//! exactly 0 with `in_pool = false`.

use crate::common::prepared;
use forkmap::importance::{ImportanceRow, ImportanceSection};
use forkmap::panel::Panel;
use forkmap::run::Prepared;
use forkmap::sweep::{SpecResult, Sweep};
use std::collections::BTreeSet;

/// Every fill (kNN with missingness flags, median with a drop rule), three kinds of pool,
/// with and without compression, a linear and a tree model.
const CFG: &str = r#"
seed = 17
[data]
file = "toy-panel/panel.csv"
unit = "district"
wave = "wave"
outcome = "hardship_pct"
ignore = ["region"]
codebook = "toy-panel/codebook.csv"
[folds]
k = 4
[choices]
fill = ["mean", "median", "knn", "carry", "chained"]
pool = ["group:housing", "core", "screen"]
scale = ["standardise"]
compress = ["none", "pca"]
model = ["ridge", "forest"]
[pools]
core = [
  "inc_median_income", "inc_unemployment", "hou_pre1950_share", "hou_poor_insulation",
  "cli_heating_degree_days", "prc_tariff_index", "acc_travel_time_gp", "ppl_over_75",
]
[grid.screen]
k = [6]
[grid.knn]
k = [3]
flags = [1]
[grid.median]
drop_share = [0.3]
[grid.chained]
rounds = [2]
[grid.pca]
k = [3]
[grid.forest]
trees = [10]
"#;

fn run(panel: &Panel, p: &Prepared, subset: &[usize]) -> Vec<SpecResult> {
    let mut sweep = Sweep::new(panel, &p.space, &p.folds, p.cfg.seed, Some(subset)).unwrap();
    sweep.importance = Some(ImportanceSection {
        repeats: 1,
        kinds: vec!["permutation".into(), "group".into(), "native".into()],
        within: None,
    });
    crate::common::results(&sweep)
}

/// Seeded noise (SplitMix64): test data only.
fn noise(seed: u64) -> impl FnMut() -> f64 {
    let mut s = seed;
    move || {
        s = s.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = s;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        ((z ^ (z >> 31)) >> 11) as f64 / (1u64 << 53) as f64
    }
}

/// The panel with every column outside `keep` replaced: a third of its cells become
/// gaps, the rest noise on a scale of thousands (gaps where there were values and values
/// where there were gaps).
fn scramble_outside(panel: &Panel, keep: &BTreeSet<usize>) -> Panel {
    let mut out = panel.clone();
    let mut u = noise(4242);
    let mut changed = 0;
    for j in 0..out.x.ncols() {
        if keep.contains(&j) {
            continue;
        }
        for i in 0..out.x.nrows() {
            let v = if u() < 0.33 {
                f64::NAN
            } else {
                5000.0 * u() - 1000.0
            };
            changed += usize::from(v.to_bits() != out.x[[i, j]].to_bits());
            out.x[[i, j]] = v;
        }
    }
    assert!(changed > out.x.nrows() * (out.x.ncols() - keep.len()) / 2);
    out
}

fn indicator_rows(r: &SpecResult) -> impl Iterator<Item = &ImportanceRow> {
    r.importance.iter().filter(|x| x.level == "indicator")
}

#[test]
fn a_pool_bounds_what_a_spec_uses_under_every_fill() {
    let p = prepared(CFG);
    let base_all: Vec<usize> = (0..p.space.specs.len()).collect();
    let base = run(&p.panel, &p, &base_all);
    assert_eq!(base.len(), 60);
    let mut fills_seen = BTreeSet::new();
    let mut compared = 0usize;
    for pool in ["group:housing", "core", "screen"] {
        let subset: Vec<usize> = (0..p.space.specs.len())
            .filter(|&si| p.space.specs[si].choice(forkmap::decl::Dim::Pool).option == pool)
            .collect();
        assert_eq!(subset.len(), 20, "{pool}");
        // The indicators the pool's specs may use: a fixed pool's members; for `screen`,
        // those screened in in some fold (in_pool in the unscrambled run).
        let keep: BTreeSet<usize> = match &p.space.specs[subset[0]]
            .choice(forkmap::decl::Dim::Pool)
            .members
        {
            Some(m) => m.iter().copied().collect(),
            None => indicator_rows(&base[subset[0]])
                .filter(|x| x.kind == "permutation" && x.in_pool)
                .map(|x| p.panel.indicator_index(&x.name).unwrap())
                .collect(),
        };
        assert!(
            keep.len() >= 6 && keep.len() < 40,
            "{pool}: {} indicators",
            keep.len()
        );
        let scrambled = scramble_outside(&p.panel, &keep);
        let again = run(&scrambled, &p, &subset);
        assert_eq!(again.len(), subset.len());
        for (b, &si) in again.iter().zip(&subset) {
            let a = &base[si];
            let spec = &p.space.specs[si];
            let label = spec.label();
            assert_eq!(a.spec, b.spec);
            assert_eq!(
                a.status,
                forkmap::error::Status::Ok,
                "{label}: {:?}",
                a.message
            );
            assert_eq!(
                b.status,
                forkmap::error::Status::Ok,
                "{label}: {:?}",
                b.message
            );
            assert_eq!(a.predictions.len(), b.predictions.len());
            for (x, y) in a.predictions.iter().zip(&b.predictions) {
                assert_eq!(x.row, y.row);
                assert_eq!(
                    x.value.to_bits(),
                    y.value.to_bits(),
                    "{label}: row {} moved from {} to {} when columns outside the pool were scrambled",
                    x.row,
                    x.value,
                    y.value
                );
                compared += 1;
            }
            assert_eq!(a.importance, b.importance, "{label}: importances moved");
            // Outside the pool: exactly 0, in_pool = false, for every kind; inside a fixed
            // pool: in_pool = true.
            let mut outside = 0;
            for x in indicator_rows(a) {
                let j = p.panel.indicator_index(&x.name).unwrap();
                if keep.contains(&j) {
                    assert!(x.in_pool, "{label}: {} {} is in the pool", x.name, x.kind);
                } else {
                    assert!(
                        !x.in_pool && x.importance == 0.0 && x.spread == 0.0,
                        "{label}: {} ({}) is outside the pool but has {:?}",
                        x.name,
                        x.kind,
                        x
                    );
                    outside += 1;
                }
            }
            // Permutation and native rows for each of the 90 indicators.
            assert_eq!(outside, 2 * (90 - keep.len()), "{label}");
            let moved = indicator_rows(a)
                .filter(|x| x.kind == "permutation" && x.importance != 0.0)
                .count();
            assert!(moved > 0, "{label}: some pooled indicator matters");
            for g in a.importance.iter().filter(|x| x.level == "group") {
                let members = p.panel.groups()[&*g.name].clone();
                let any = members.iter().any(|j| keep.contains(j));
                assert_eq!(g.in_pool, any, "{label}: group {}", g.name);
                if !any {
                    assert_eq!(g.importance, 0.0, "{label}: group {}", g.name);
                }
            }
            // Ranks are competition ranks on the value alone: 1 + the number of strictly
            // larger importances in the spec's (level, kind) block, so the exact zeros
            // outside the pool tie instead of following their names.
            for x in &a.importance {
                let above = a
                    .importance
                    .iter()
                    .filter(|y| {
                        y.level == x.level && y.kind == x.kind && y.importance > x.importance
                    })
                    .count();
                assert_eq!(
                    x.rank as usize,
                    above + 1,
                    "{label}: rank of {} ({})",
                    x.name,
                    x.kind
                );
            }
            fills_seen.insert(spec.choice(forkmap::decl::Dim::Fill).option.clone());
        }
    }
    assert_eq!(fills_seen.len(), 5, "every fill compared: {fills_seen:?}");
    // Every spec predicts every row once per repeat, and all of them were compared.
    assert_eq!(compared, 60 * p.panel.n_rows() * p.folds.repeats);
}
