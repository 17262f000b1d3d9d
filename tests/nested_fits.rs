//! Fits that nest along a path (engine/src/sweep/nest.rs): specs that differ only in their
//! ensemble's number of trees (forest, extremely randomised trees, boosting rounds) are
//! fitted once per fold, and every result is the same, bit for bit, as the spec's own
//! fit; the shared fits are the same whatever the thread count.

use crate::common::prepared;
use forkmap::models::{
    boost::BoostParams, extra::ExtraParams, forest::ForestParams, FitInput, Predictor, Regressor,
};
use forkmap::sweep::{Audit, SpecResult, Sweep};
use ndarray::{Array1, Array2};
use std::sync::atomic::{AtomicUsize, Ordering};
use std::sync::{Arc, Mutex};

/// Paths of three, two and two sizes, under two compressions, two weightings and a
/// smeared back-transform (each spec of a group has its own), with native and
/// permutation importances.
const CFG: &str = toy_config!(
    "23",
    r#"[folds]
k = 4
repeats = 1
[choices]
transform = ["identity", "logit"]
fill = ["median"]
pool = ["all"]
scale = ["minmax"]
compress = ["none", "pca"]
model = ["forest", "extra", "boost", "ridge"]
weighting = ["rows", "units"]
[grid.logit]
smear = [1]
[grid.pca]
k = [3]
[grid.forest]
trees = [3, 8, 20]
tried = [0.5]
min_leaf = [3]
[grid.extra]
trees = [4, 9]
[grid.boost]
trees = [5, 12]
subsample = [0.7]
[importance]
repeats = 1
kinds = ["native", "permutation"]
"#
);

#[derive(Default)]
struct Fits(AtomicUsize);

impl Audit for Fits {
    fn fitted(&self, step: &str, _fold: usize, _rows: &[usize], _data_rows: usize) {
        if step == "model" {
            self.0.fetch_add(1, Ordering::Relaxed);
        }
    }
}

/// A result as bits: status, message, notes, metrics, predictions, importance rows.
fn bits(r: &SpecResult) -> String {
    let scores: Vec<u64> = r
        .scores
        .map(|s| s.columns().iter().map(|(_, v)| v.to_bits()).collect())
        .unwrap_or_default();
    let preds: Vec<(u32, u16, u64)> = r
        .predictions
        .iter()
        .map(|q| (q.row, q.fold, q.value.to_bits()))
        .collect();
    let imp: Vec<(String, String, u64, u64, u32)> = r
        .importance
        .iter()
        .map(|i| {
            (
                i.name.to_string(),
                i.kind.to_string(),
                i.importance.to_bits(),
                i.spread.to_bits(),
                i.rank,
            )
        })
        .collect();
    format!(
        "{} {:?} {:?} {scores:?} {preds:?} {imp:?}",
        r.status, r.message, r.notes
    )
}

fn run(
    p: &forkmap::run::Prepared,
    subset: Option<&[usize]>,
    threads: usize,
) -> (Vec<SpecResult>, usize) {
    let fits = Arc::new(Fits::default());
    let mut sweep = Sweep::new(&p.panel, &p.space, &p.folds, p.cfg.seed, subset)
        .unwrap()
        .with_audit(fits.clone());
    sweep.importance = Some(p.cfg.importance.clone());
    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .unwrap();
    let out = Mutex::new(Vec::new());
    pool.install(|| sweep.run(&|r| out.lock().unwrap().push(r)));
    let mut v = out.into_inner().unwrap();
    v.sort_by_key(|r| r.spec);
    (v, fits.0.load(Ordering::Relaxed))
}

#[test]
fn a_path_fitted_once_gives_each_spec_its_own_fit_bit_for_bit() {
    let p = prepared(CFG);
    let n = p.space.specs.len();
    let folds = p.folds.folds.len();
    // transform 2 x compress 2 x weighting 2 x (forest 3 + extra 2 + boost 2 + ridge 1).
    assert_eq!(n, 64);
    let (together, fits) = run(&p, None, 2);
    assert_eq!(together.len(), n);
    // One fit per fold for each path (8 preparations x weightings x 3 ensembles) and
    // for each ridge spec: 32 groups, not 64 specs.
    assert_eq!(fits, 32 * folds, "model fits of the grouped sweep");
    let (one_thread, fits1) = run(&p, None, 1);
    assert_eq!(fits1, fits);
    for (a, b) in together.iter().zip(&one_thread) {
        assert_eq!(
            bits(a),
            bits(b),
            "threads 1 and 2 differ for spec {}",
            a.spec
        );
    }
    let mut compared = 0;
    for r in &together {
        let spec = &p.space.specs[r.spec];
        assert_eq!(
            r.status.to_string(),
            "ok",
            "{}: {:?}",
            spec.label(),
            r.message
        );
        assert!(!r.predictions.is_empty() && !r.importance.is_empty());
        let (alone, fits) = run(&p, Some(&[r.spec]), 1);
        assert_eq!(fits, folds, "{} fitted alone", spec.label());
        assert_eq!(
            bits(r),
            bits(&alone[0]),
            "{}: fitted along its path and alone differ",
            spec.label()
        );
        // The curves, nested and null fit a spec on its own through fit_spec.
        let fitted = Sweep::new(&p.panel, &p.space, &p.folds, p.cfg.seed, None)
            .unwrap()
            .fit_spec(r.spec, 0)
            .unwrap();
        let test = &p.folds.folds[0].test;
        let x = p.panel.x.select(ndarray::Axis(0), test);
        let own: Vec<u64> = fitted
            .predict_rows(x.view(), test)
            .iter()
            .map(|v| v.to_bits())
            .collect();
        let swept: Vec<u64> = r
            .predictions
            .iter()
            .filter(|q| q.fold == p.folds.folds[0].index as u16 && q.repeat == 0)
            .map(|q| q.value.to_bits())
            .collect();
        assert_eq!(
            own,
            swept,
            "{}: fit_spec and the sweep differ",
            spec.label()
        );
        compared += 1;
    }
    assert_eq!(compared, n);
    // The path's sizes are different models (a prefix is not the whole).
    let id_of = |trees: f64| {
        together
            .iter()
            .find(|r| {
                let s = &p.space.specs[r.spec];
                let m = s.choice(forkmap::decl::Dim::Model);
                m.option == "forest"
                    && m.param("trees") == Some(trees)
                    && s.choice(forkmap::decl::Dim::Compress).option == "none"
                    && s.choice(forkmap::decl::Dim::Weighting).option == "rows"
                    && s.choice(forkmap::decl::Dim::Transform).option == "identity"
            })
            .map(bits)
            .unwrap()
    };
    assert_ne!(id_of(3.0), id_of(20.0));
}

#[test]
fn the_model_stream_leaves_out_the_trees_only() {
    let p = prepared(CFG);
    let specs = &p.space.specs;
    let stream = |si: usize| {
        let m = forkmap::models::build(specs[si].choice(forkmap::decl::Dim::Model)).unwrap();
        forkmap::sweep::model_stream(&specs[si], m.as_ref())
    };
    let without = |si: usize, param: &str| {
        let mut c = specs[si].clone();
        for ch in c
            .choices
            .iter_mut()
            .filter(|c| c.dim == forkmap::decl::Dim::Model)
        {
            ch.params.retain(|(n, _)| *n != param);
        }
        c.choices
            .iter()
            .map(|c| c.canonical())
            .collect::<Vec<_>>()
            .join(";")
    };
    let mut pairs = 0;
    for a in 0..specs.len() {
        for b in 0..specs.len() {
            if a == b {
                continue;
            }
            let model = specs[a].choice(forkmap::decl::Dim::Model).option.clone();
            if model == "ridge" {
                // No path: the spec's own stream.
                assert_eq!(stream(a), specs[a].stream());
                continue;
            }
            let same_path = model == specs[b].choice(forkmap::decl::Dim::Model).option
                && without(a, "trees") == without(b, "trees");
            assert_eq!(
                stream(a) == stream(b),
                same_path,
                "{} and {}",
                specs[a].label(),
                specs[b].label()
            );
            pairs += usize::from(same_path);
        }
    }
    // 4 preparations x 2 weightings; ordered pairs: forests 3 x 2, extra and boost 2 x 1.
    assert_eq!(pairs, 8 * (6 + 2 + 2));
}

/// A small regression problem (seeded normals; two informative columns).
fn data() -> (Array2<f64>, Array1<f64>, Array1<f64>) {
    let (n, p) = (90, 6);
    let z = crate::common::normals(n * p, 3);
    let x = Array2::from_shape_vec((n, p), z).unwrap();
    let e = crate::common::normals(n, 4);
    let y: Array1<f64> = (0..n)
        .map(|i| 2.0 * x[[i, 0]] - x[[i, 1]] * x[[i, 2]] + 0.5 * e[i])
        .collect();
    let w: Array1<f64> = (0..n).map(|i| 0.5 + (i % 3) as f64 * 0.5).collect();
    (x, y, w)
}

fn same_model(a: &dyn Predictor, b: &dyn Predictor, x: &Array2<f64>, what: &str) {
    let bits = |m: &dyn Predictor| -> Vec<u64> {
        m.predict(x.view()).iter().map(|v| v.to_bits()).collect()
    };
    assert_eq!(bits(a), bits(b), "{what}: predictions");
    let native = |m: &dyn Predictor| -> Vec<u64> {
        m.native(x.view())
            .unwrap()
            .1
            .iter()
            .map(|v| v.to_bits())
            .collect()
    };
    assert_eq!(native(a), native(b), "{what}: impurity importances");
}

#[test]
fn ensembles_along_a_path_are_their_own_fits() {
    let (x, y, w) = data();
    let input = FitInput {
        x: x.view(),
        y: y.view(),
        w: w.view(),
        seed: 99,
    };
    let sizes = [1.0, 6.0, 6.0, 15.0, 40.0];
    let forest = |trees| ForestParams {
        trees,
        tried: 0.5,
        min_leaf: 2,
    };
    let extra = |trees| ExtraParams {
        trees,
        tried: 0.7,
        min_leaf: 2,
    };
    let boost = |trees| BoostParams {
        trees,
        rate: 0.2,
        depth: 3,
        min_leaf: 2,
        subsample: 0.6,
    };
    type Make = Box<dyn Fn(usize) -> Box<dyn Regressor>>;
    let families: Vec<(&str, Make)> = vec![
        ("forest", Box::new(move |t| Box::new(forest(t)))),
        ("extra", Box::new(move |t| Box::new(extra(t)))),
        ("boost", Box::new(move |t| Box::new(boost(t)))),
    ];
    for (name, make) in &families {
        let path = make(40).fit_path(&input, &sizes).unwrap();
        assert_eq!(path.len(), sizes.len());
        for (m, &t) in path.iter().zip(&sizes) {
            let own = make(t as usize).fit(&input).unwrap();
            same_model(m.as_ref(), own.as_ref(), &x, &format!("{name} {t}"));
        }
        // More trees are another model; a path must end at the regressor's own size.
        let p: Vec<u64> = path[1]
            .predict(x.view())
            .iter()
            .map(|v| v.to_bits())
            .collect();
        let q: Vec<u64> = path[4]
            .predict(x.view())
            .iter()
            .map(|v| v.to_bits())
            .collect();
        assert_ne!(p, q, "{name}: 6 and 40 trees");
        assert!(make(40).fit_path(&input, &[6.0, 30.0]).is_err());
        assert!(make(40).fit_path(&input, &[15.0, 6.0, 40.0]).is_err());
    }
}

/// `plan` counts a path's fit once: its specs' costs add up to the largest one's.
#[test]
fn plan_counts_a_path_once() {
    let p = prepared(CFG);
    let specs = &p.space.specs;
    let costs = forkmap::sweep::nested_costs(&p.space, &p.panel, None);
    let own = |si: usize| forkmap::shard::spec_cost(&specs[si], &p.panel);
    let mut paths: std::collections::BTreeMap<u64, Vec<usize>> = Default::default();
    for si in 0..specs.len() {
        let m = forkmap::models::build(specs[si].choice(forkmap::decl::Dim::Model)).unwrap();
        if m.path().is_none() {
            assert_eq!(costs[si], own(si), "{}", specs[si].label());
        } else {
            paths
                .entry(forkmap::sweep::model_stream(&specs[si], m.as_ref()))
                .or_default()
                .push(si);
        }
    }
    assert_eq!(paths.len(), 24);
    for members in paths.values() {
        let sum: f64 = members.iter().map(|&si| costs[si]).sum();
        let largest = members.iter().map(|&si| own(si)).fold(0.0, f64::max);
        assert!(
            (sum - largest).abs() <= 1e-9 * largest,
            "{sum} vs {largest}"
        );
    }
    // A probe holding one spec of a path pays its whole fit.
    let one = *paths.values().next().unwrap().last().unwrap();
    let probe = forkmap::sweep::nested_costs(&p.space, &p.panel, Some(&[one]));
    assert_eq!(probe[one], own(one));
}
