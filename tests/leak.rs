//! Leak-freedom: no fitted step ever sees a test row.
//!
//! Two independent proofs over every option of every dimension (a sample of specs in which
//! every pair of options of two dimensions appears together, see [`covering`]):
//! * the audit: every fitted step (pool, fill, scale, compress, weights, baseline, model)
//!   reports the row ids behind the data it is actually handed and how many data rows it
//!   got; they must be exactly a fold's training rows, derived here from the fold's test
//!   list alone;
//! * behaviour: changing one fold's test rows (their outcomes, standard errors and
//!   indicators, gaps added and removed) leaves every prediction that fold's fitted chains
//!   make for its other test rows bit-identical. "Other" means every unchanged test row,
//!   except under the `carry` fill, which fills a row's gaps from the same unit's other rows
//!   being predicted (grouped folds keep a unit's rows on one side): there it means the
//!   test rows of units with no changed row.

use crate::common::{prepared, results, root};
use forkmap::config::Config;
use forkmap::folds::FoldPlan;
use forkmap::panel::Panel;
use forkmap::space::{ChoiceSpace, DIMENSIONS};
use forkmap::sweep::{Audit, Sweep};
use std::collections::{BTreeMap, BTreeSet, HashSet};
use std::sync::{Arc, Mutex};

/// A smaller config (fills, pools, scalings, compressions, three models) with folds that
/// repeat, for the reuse and failure tests.
const CFG: &str = r#"
seed = 3
[data]
file = "toy-panel/panel.csv"
unit = "district"
wave = "wave"
outcome = "hardship_pct"
ignore = ["region"]
codebook = "toy-panel/codebook.csv"
[folds]
k = 4
repeats = 2
[choices]
fill = ["mean", "median", "carry"]
pool = ["all", "group:housing"]
scale = ["standardise", "minmax"]
compress = ["none", "pca"]
model = ["ridge", "tree", "forest"]
weighting = ["rows", "units"]
[grid.forest]
trees = [10]
[grid.pca]
k = [3]
"#;

/// Every option of every dimension, one grid point each, on the toy panel with an invented
/// standard-error column (for `invvar`).
const EVERY_OPTION: &str = toy_config!(
    "3",
    r#"[folds]
k = 4
repeats = 2
[choices]
transform = ["identity", "log1p", "logit"]
fill = ["mean", "median", "knn", "carry", "chained"]
pool = ["all", "group:housing", "core", "screen"]
scale = ["standardise", "minmax", "none"]
compress = ["none", "pca", "nmf", "pls"]
model = ["ols", "ridge", "lasso", "elastic", "plsr", "tree", "forest", "extra", "boost", "nearest"]
weighting = ["rows", "units", "high", "power", "invvar"]
[pools]
core = [
  "inc_median_income", "inc_unemployment", "hou_pre1950_share", "hou_poor_insulation",
  "cli_heating_degree_days", "prc_tariff_index", "acc_travel_time_gp", "ppl_over_75",
]
[grid.log1p]
smear = [0, 1]
[grid.logit]
smear = [0, 1]
[grid.screen]
k = [5]
[grid.knn]
k = [3]
flags = [1]
[grid.chained]
rounds = [2]
[grid.pca]
k = [3]
[grid.nmf]
k = [3]
max_iter = [100]
[grid.pls]
k = [2]
[grid.plsr]
k = [2]
[grid.lasso]
alpha = [0.05]
[grid.elastic]
alpha = [0.05]
[grid.forest]
trees = [8]
[grid.extra]
trees = [8]
[grid.boost]
trees = [15]
subsample = [0.8]
[[exclude]]
model = "ols"
pool = "all"
compress = "none"
"#
);

struct Setup {
    panel: Panel,
    space: ChoiceSpace,
    folds: FoldPlan,
    seed: u64,
    /// The covering sample of spec indices.
    subset: Vec<usize>,
}

/// The toy panel with a standard error per row (invented: 0.5 to 1.5, unrelated to the
/// outcome), its full choice space and a covering sample of it.
fn every_option() -> Setup {
    let cfg = Config::from_toml(EVERY_OPTION, &root(), "<test>").unwrap();
    let mut panel = forkmap::panel::load(&cfg).unwrap();
    panel.se = Some(
        (0..panel.n_rows())
            .map(|i| 0.5 + 0.1 * ((i * 7) % 11) as f64)
            .collect(),
    );
    let space = ChoiceSpace::build(&cfg, &panel).unwrap();
    let folds = FoldPlan::new(&panel, &cfg.folds, cfg.seed).unwrap();
    let subset = covering(&space);
    Setup {
        panel,
        space,
        folds,
        seed: cfg.seed,
        subset,
    }
}

/// A deterministic sample of the space in which every pair of options of two different
/// dimensions that the space holds at all (exclusions remove some) appears together in
/// at least one spec, so every option runs with every option of every other dimension:
/// greedy, each step taking the spec that covers the most pairs not yet covered (ties:
/// the first spec). The full product here is 3 x 5 x 4 x 3 x 4 x 10 x 5 = 36,000 specs.
fn covering(space: &ChoiceSpace) -> Vec<usize> {
    let dims = space.options.len();
    let width = space.options.iter().map(Vec::len).max().unwrap();
    let code: Vec<Vec<usize>> = space
        .specs
        .iter()
        .map(|s| {
            (0..dims)
                .map(|d| {
                    space.options[d]
                        .iter()
                        .position(|c| *c == s.choices[d])
                        .unwrap()
                })
                .collect()
        })
        .collect();
    let pair =
        |d1: usize, o1: usize, d2: usize, o2: usize| ((d1 * dims + d2) * width + o1) * width + o2;
    let mut open = vec![false; dims * dims * width * width];
    let pairs_of = |c: &[usize]| {
        let mut v = Vec::new();
        for d1 in 0..dims {
            for d2 in d1 + 1..dims {
                v.push(pair(d1, c[d1], d2, c[d2]));
            }
        }
        v
    };
    for c in &code {
        for q in pairs_of(c) {
            open[q] = true;
        }
    }
    let mut left = open.iter().filter(|&&b| b).count();
    let mut chosen = Vec::new();
    while left > 0 {
        let (best, gain) = code
            .iter()
            .enumerate()
            .map(|(si, c)| (si, pairs_of(c).into_iter().filter(|&q| open[q]).count()))
            .fold((0, 0), |a, b| if b.1 > a.1 { b } else { a });
        assert!(gain > 0);
        for q in pairs_of(&code[best]) {
            open[q] = false;
        }
        left -= gain;
        chosen.push(best);
    }
    chosen.sort_unstable();
    chosen
}

/// (step, fold, row ids handed, data rows handed).
type Seen = (String, usize, Vec<usize>, usize);

#[derive(Default)]
struct Recorder {
    seen: Mutex<Vec<Seen>>,
}

impl Audit for Recorder {
    fn fitted(&self, step: &str, fold: usize, rows: &[usize], data_rows: usize) {
        self.seen
            .lock()
            .unwrap()
            .push((step.to_string(), fold, rows.to_vec(), data_rows));
    }
}

#[test]
fn the_covering_sample_holds_every_option_with_every_partner() {
    let c = every_option();
    let n = c.subset.len();
    assert!((50..=150).contains(&n), "{n} specs");
    for (d, dim) in DIMENSIONS.iter().enumerate() {
        for o in &c.space.options[d] {
            let count = c
                .subset
                .iter()
                .filter(|&&si| c.space.specs[si].choices[d] == *o)
                .count();
            assert!(count >= 5, "{dim} `{}` appears in {count} specs", o.label());
        }
    }
}

#[test]
fn every_fitted_step_is_handed_only_training_rows() {
    let c = every_option();
    let rec = Arc::new(Recorder::default());
    let sweep = Sweep::new(&c.panel, &c.space, &c.folds, c.seed, Some(&c.subset))
        .unwrap()
        .with_audit(rec.clone());
    let results = results(&sweep);
    assert_eq!(results.len(), c.subset.len());
    for r in &results {
        assert_eq!(
            r.status,
            forkmap::error::Status::Ok,
            "{}: {:?}",
            c.space.specs[r.spec].label(),
            r.message
        );
    }
    // Each fold's training rows, from its test list alone: every other row.
    let n = c.panel.n_rows();
    let training: Vec<Vec<usize>> = c
        .folds
        .folds
        .iter()
        .map(|f| {
            let test: HashSet<usize> = f.test.iter().copied().collect();
            (0..n).filter(|i| !test.contains(i)).collect()
        })
        .collect();
    let seen = rec.seen.lock().unwrap();
    let mut steps: BTreeMap<&str, usize> = BTreeMap::new();
    for (step, fi, rows, data_rows) in seen.iter() {
        assert_eq!(
            *data_rows,
            rows.len(),
            "{step} in fold {fi} was handed {data_rows} data rows for {} row ids",
            rows.len()
        );
        let mut ids = rows.clone();
        ids.sort_unstable();
        ids.dedup();
        assert_eq!(ids.len(), rows.len(), "{step} in fold {fi}: a row id twice");
        let test = &c.folds.folds[*fi].test;
        assert!(
            rows.iter().all(|r| !test.contains(r)),
            "{step} in fold {fi} was handed a test row"
        );
        assert_eq!(
            ids, training[*fi],
            "{step} in fold {fi} was handed exactly the training rows"
        );
        *steps.entry(step.as_str()).or_default() += 1;
    }
    // Every fit was audited: each distinct preparation once per fold, each spec's weights
    // and model once per fold, the baseline once per fold.
    let folds = c.folds.folds.len();
    let distinct = |upto: &[&str]| {
        c.subset
            .iter()
            .map(|&si| {
                let s = &c.space.specs[si];
                // The stage tree shares a forward transform across back-transforms (smear).
                let mut key = vec![forkmap::transform::fit_key(
                    s.choice(forkmap::decl::Dim::Transform),
                )];
                key.extend(upto.iter().map(|d| {
                    s.choice(forkmap::decl::Dim::parse(d).expect("a dimension name"))
                        .canonical()
                }));
                key
            })
            .collect::<BTreeSet<_>>()
            .len()
    };
    let want = [
        ("pool", distinct(&["pool"]) * folds),
        ("fill", distinct(&["pool", "fill"]) * folds),
        ("scale", distinct(&["pool", "fill", "scale"]) * folds),
        (
            "compress",
            distinct(&["pool", "fill", "scale", "compress"]) * folds,
        ),
        ("weights", c.subset.len() * folds),
        ("model", c.subset.len() * folds),
        ("baseline", folds),
    ];
    for (step, count) in want {
        assert_eq!(steps.get(step).copied(), Some(count), "audits of {step}");
    }
    assert_eq!(steps.len(), want.len(), "{steps:?}");
}

/// Behavioural proof (see the module doc): fold 1 of repeat 0. Every test row's outcome
/// (100 - y, still a percent) and standard error (x 10) change; half the fold's test units
/// have every indicator of every row changed (gaps filled with the column's largest value,
/// a third of the values turned into gaps, the others reflected within the column's range,
/// lo + hi - v, so the panel stays valid for every option), and one row of every other
/// remaining unit with two or more rows too.
#[test]
fn changing_a_folds_test_rows_moves_none_of_its_other_predictions() {
    let c = every_option();
    let base = results(&Sweep::new(&c.panel, &c.space, &c.folds, c.seed, Some(&c.subset)).unwrap());
    let fi = 1;
    let fold = &c.folds.folds[fi];
    let mut units: Vec<usize> = fold.test.iter().map(|&i| c.panel.row_unit[i]).collect();
    units.sort_unstable();
    units.dedup();
    assert!(units.len() >= 8, "{} test units", units.len());
    let rows_of = |u: usize| -> Vec<usize> {
        fold.test
            .iter()
            .copied()
            .filter(|&i| c.panel.row_unit[i] == u)
            .collect()
    };
    let mut changed: BTreeSet<usize> = BTreeSet::new();
    let mut multi = 0;
    for (k, &u) in units.iter().enumerate() {
        let rows = rows_of(u);
        if k % 2 == 0 {
            changed.extend(rows);
        } else if rows.len() >= 2 {
            if multi % 2 == 0 {
                changed.insert(rows[0]);
            }
            multi += 1;
        }
    }
    let touched: BTreeSet<usize> = changed.iter().map(|&i| c.panel.row_unit[i]).collect();
    let mut panel2 = c.panel.clone();
    let se = panel2.se.as_mut().unwrap();
    for &i in &fold.test {
        panel2.y[i] = 100.0 - panel2.y[i];
        se[i] *= 10.0;
    }
    let (mut gaps_added, mut gaps_filled) = (0, 0);
    for j in 0..panel2.x.ncols() {
        let present: Vec<f64> = c
            .panel
            .x
            .column(j)
            .iter()
            .copied()
            .filter(|v| !v.is_nan())
            .collect();
        let lo = present.iter().copied().fold(f64::INFINITY, f64::min);
        let hi = present.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        for &i in &changed {
            let v = panel2.x[[i, j]];
            panel2.x[[i, j]] = if v.is_nan() {
                gaps_filled += 1;
                hi
            } else if (i + j) % 3 == 0 {
                gaps_added += 1;
                f64::NAN
            } else {
                lo + hi - v
            };
        }
    }
    assert!(
        gaps_added > 100 && gaps_filled > 10,
        "{gaps_added} {gaps_filled}"
    );
    let pert = results(&Sweep::new(&panel2, &c.space, &c.folds, c.seed, Some(&c.subset)).unwrap());
    assert_eq!(base.len(), pert.len());
    let mut per_option: BTreeMap<(usize, String), usize> = BTreeMap::new();
    let (mut compared, mut felt, mut ok) = (0, 0, 0);
    let mut failed = Vec::new();
    for (a, b) in base.iter().zip(&pert) {
        assert_eq!(a.spec, b.spec);
        let spec = &c.space.specs[a.spec];
        if !a.status.is_ok() || !b.status.is_ok() {
            failed.push(format!(
                "{}: {:?} / {:?}",
                spec.label(),
                a.message,
                b.message
            ));
            continue;
        }
        ok += 1;
        let carry = spec.choice(forkmap::decl::Dim::Fill).option == "carry";
        let mut moved_elsewhere = false;
        assert_eq!(a.predictions.len(), b.predictions.len());
        for (pa, pb) in a.predictions.iter().zip(&b.predictions) {
            assert_eq!((pa.row, pa.repeat, pa.fold), (pb.row, pb.repeat, pb.fold));
            let row = pa.row as usize;
            let in_fold = pa.repeat as usize == fold.repeat && pa.fold as usize == fold.index;
            if !in_fold {
                moved_elsewhere |= pa.value.to_bits() != pb.value.to_bits();
                continue;
            }
            if changed.contains(&row) || (carry && touched.contains(&c.panel.row_unit[row])) {
                continue;
            }
            assert_eq!(
                pa.value.to_bits(),
                pb.value.to_bits(),
                "{}: row {} moved from {} to {}",
                spec.label(),
                row,
                pa.value,
                pb.value
            );
            compared += 1;
            for (d, ch) in spec.choices.iter().enumerate() {
                *per_option.entry((d, ch.label())).or_default() += 1;
            }
        }
        felt += usize::from(moved_elsewhere);
    }
    assert_eq!(ok, base.len(), "failed: {failed:#?}");
    // The change is felt where it should be: other folds train on these rows.
    assert!(
        felt * 10 >= ok * 9,
        "{felt} of {ok} specs moved in other folds"
    );
    for (d, dim) in DIMENSIONS.iter().enumerate() {
        for o in &c.space.options[d] {
            let k = per_option.get(&(d, o.label())).copied().unwrap_or(0);
            assert!(k >= 20, "{dim} `{}`: {k} predictions compared", o.label());
        }
    }
    assert!(compared > 500, "{compared} predictions compared");
}

/// A fitted spec is reusable: predicting the raw test rows reproduces the sweep's
/// out-of-fold predictions.
#[test]
fn fitted_spec_predicts_raw_rows_like_the_sweep() {
    let p = prepared(CFG);
    let sweep = Sweep::new(&p.panel, &p.space, &p.folds, p.cfg.seed, None).unwrap();
    let base = results(&sweep);
    for si in [0, p.space.specs.len() / 2, p.space.specs.len() - 1] {
        let fi = 1;
        let fold = &p.folds.folds[fi];
        let fitted = sweep.fit_spec(si, fi).unwrap();
        let raw = p.panel.x.select(ndarray::Axis(0), &fold.test);
        let got = fitted.predict_rows(raw.view(), &fold.test);
        let want: Vec<f64> = base[si]
            .predictions
            .iter()
            .filter(|q| q.repeat as usize == fold.repeat && q.fold as usize == fold.index)
            .map(|q| q.value)
            .collect();
        assert_eq!(got.len(), want.len());
        for (g, w) in got.iter().zip(&want) {
            assert!(
                (g - w).abs() <= 1e-9 * w.abs().max(1.0),
                "spec {si}: {g} vs {w}"
            );
        }
    }
}

/// A failing spec (OLS with more columns than training rows) is recorded with its cause
/// and message; every other spec still runs.
#[test]
fn failing_specs_are_recorded_and_the_sweep_goes_on() {
    let text = CFG.replace(
        "model = [\"ridge\", \"tree\", \"forest\"]",
        "model = [\"ols\", \"ridge\"]",
    );
    let p = prepared(&text);
    let sweep = Sweep::new(&p.panel, &p.space, &p.folds, p.cfg.seed, None).unwrap();
    let results = results(&sweep);
    assert_eq!(results.len(), p.space.specs.len());
    let mut singular = 0;
    for r in &results {
        let s = &p.space.specs[r.spec];
        let wide = s.choice(forkmap::decl::Dim::Model).option == "ols"
            && s.choice(forkmap::decl::Dim::Pool).option == "all"
            && s.choice(forkmap::decl::Dim::Compress).option == "none";
        if wide {
            assert_eq!(r.status, forkmap::error::Status::Singular, "{}", s.label());
            assert!(
                r.message
                    .as_deref()
                    .unwrap_or("")
                    .contains("OLS with 90 columns"),
                "{:?}",
                r.message
            );
            assert!(r.predictions.is_empty() && r.scores.is_none());
            singular += 1;
        } else {
            assert_eq!(
                r.status,
                forkmap::error::Status::Ok,
                "{}: {:?}",
                s.label(),
                r.message
            );
        }
    }
    assert!(singular > 0);
}
