//! Leak-freedom: no fitted step ever sees a test row.

use crate::common::prepared;
use forkmap::sweep::{Audit, SpecResult, Sweep};
use std::collections::{BTreeMap, HashSet};
use std::sync::{Arc, Mutex};

/// Config exercising every stage option with folds that repeat.
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

/// (step, fold, row ids given, data rows handed).
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

fn collect(sweep: &Sweep) -> Vec<SpecResult> {
    let out = Mutex::new(Vec::new());
    sweep.run(&|r| out.lock().unwrap().push(r));
    let mut v = out.into_inner().unwrap();
    v.sort_by_key(|r| r.spec);
    v
}

#[test]
fn every_fitted_step_sees_only_training_rows() {
    let p = prepared(CFG);
    let rec = Arc::new(Recorder::default());
    let sweep = Sweep::new(&p.panel, &p.space, &p.folds, p.cfg.seed, None)
        .unwrap()
        .with_audit(rec.clone());
    let results = collect(&sweep);
    assert_eq!(results.len(), p.space.specs.len());
    assert!(results.iter().all(|r| r.status == "ok"), "all specs fit");
    let seen = rec.seen.lock().unwrap();
    let mut steps: BTreeMap<&str, usize> = BTreeMap::new();
    for (step, fi, rows, data_rows) in seen.iter() {
        assert_eq!(
            *data_rows,
            rows.len(),
            "{step} in fold {fi} was handed more data rows than training rows"
        );
        let fold = &p.folds.folds[*fi];
        let test: HashSet<usize> = fold.test.iter().copied().collect();
        assert!(
            rows.iter().all(|r| !test.contains(r)),
            "{step} in fold {fi} saw a test row"
        );
        assert_eq!(
            rows, &fold.train,
            "{step} in fold {fi} saw exactly the training rows"
        );
        *steps.entry(step.as_str()).or_default() += 1;
    }
    for s in [
        "fill", "pool", "scale", "compress", "weights", "model", "baseline",
    ] {
        assert!(
            steps.get(s).copied().unwrap_or(0) > 0,
            "step {s} was audited"
        );
    }
    // Shared stages: each distinct fill is fitted once per fold, not once per spec.
    let folds = p.folds.folds.len();
    assert_eq!(steps["fill"], 3 * folds);
    assert_eq!(steps["model"], p.space.specs.len() * folds);
}

/// Behavioural proof: scrambling the outcome of one fold's test rows leaves that fold's
/// predictions unchanged, and scrambling one test row's indicators leaves the predictions
/// of the fold's test rows of other units unchanged. (If any stage, weight or model had
/// seen those test values, predictions would move. Rows of the same unit may move under
/// within-unit carry, which fills a row's gaps from its own unit's other waves.)
#[test]
fn perturbing_test_rows_does_not_move_other_predictions() {
    let p = prepared(CFG);
    let sweep = Sweep::new(&p.panel, &p.space, &p.folds, p.cfg.seed, None).unwrap();
    let base = collect(&sweep);
    let fold0 = &p.folds.folds[0];
    let target = fold0.test[0];

    let mut panel2 = p.panel.clone();
    for &i in &fold0.test {
        panel2.y[i] = 1000.0 + i as f64;
    }
    for j in 0..panel2.x.ncols() {
        panel2.x[[target, j]] = if j % 2 == 0 { f64::NAN } else { 1e6 };
    }
    let sweep2 = Sweep::new(&panel2, &p.space, &p.folds, p.cfg.seed, None).unwrap();
    let pert = collect(&sweep2);
    let mut compared = 0;
    for (a, b) in base.iter().zip(&pert) {
        assert_eq!(a.spec, b.spec);
        for (pa, pb) in a.predictions.iter().zip(&b.predictions) {
            assert_eq!(pa.row, pb.row);
            let in_fold0 = pa.repeat == 0 && pa.fold == 0;
            let same_unit = p.panel.row_unit[pa.row as usize] == p.panel.row_unit[target];
            if in_fold0 && !same_unit {
                assert_eq!(
                    pa.value.to_bits(),
                    pb.value.to_bits(),
                    "spec {} row {} moved",
                    a.spec,
                    pa.row
                );
                compared += 1;
            }
        }
    }
    assert!(compared > 1000, "compared {compared} predictions");
}

/// A fitted spec is reusable: predicting the raw test rows reproduces the sweep's
/// out-of-fold predictions.
#[test]
fn fitted_spec_predicts_raw_rows_like_the_sweep() {
    let p = prepared(CFG);
    let sweep = Sweep::new(&p.panel, &p.space, &p.folds, p.cfg.seed, None).unwrap();
    let base = collect(&sweep);
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
    let results = collect(&sweep);
    assert_eq!(results.len(), p.space.specs.len());
    let mut singular = 0;
    for r in &results {
        let s = &p.space.specs[r.spec];
        let wide = s.choice("model").option == "ols"
            && s.choice("pool").option == "all"
            && s.choice("compress").option == "none";
        if wide {
            assert_eq!(r.status, "singular", "{}", s.label());
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
            assert_eq!(r.status, "ok", "{}: {:?}", s.label(), r.message);
        }
    }
    assert!(singular > 0);
}
