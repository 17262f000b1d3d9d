//! Reference checks of the tree families (tree, forest, extremely randomised trees,
//! boosting) against scikit-learn out of fold (values from `tests/reference/`, see
//! make_reference.py).

use crate::common::{cases, close, f64s, matrix, pairs, reference};
use ndarray::Array1;

/// scikit-learn's KFold(5): contiguous folds, the first n % 5 one row larger.
fn kfold5(n: usize) -> Vec<(Vec<usize>, Vec<usize>)> {
    let mut out = Vec::new();
    let mut start = 0;
    for f in 0..5 {
        let size = n / 5 + usize::from(f < n % 5);
        let test: Vec<usize> = (start..start + size).collect();
        let train: Vec<usize> = (0..n)
            .filter(|i| *i < start || *i >= start + size)
            .collect();
        out.push((train, test));
        start += size;
    }
    out
}

fn oof_predictions(
    model: &dyn forkmap::models::Regressor,
    x: &ndarray::Array2<f64>,
    y: &Array1<f64>,
) -> Vec<f64> {
    oof_predictions_seeded(model, x, y, 1000)
}

/// Out-of-fold predictions with fold f fitted under seed `base + f`.
fn oof_predictions_seeded(
    model: &dyn forkmap::models::Regressor,
    x: &ndarray::Array2<f64>,
    y: &Array1<f64>,
    base: u64,
) -> Vec<f64> {
    let mut pred = vec![0.0; y.len()];
    for (f, (train, test)) in kfold5(y.len()).into_iter().enumerate() {
        let xt = x.select(ndarray::Axis(0), &train);
        let yt: Array1<f64> = train.iter().map(|&i| y[i]).collect();
        let w = Array1::ones(train.len());
        let fitted = model
            .fit(&forkmap::models::FitInput {
                x: xt.view(),
                y: yt.view(),
                w: w.view(),
                seed: base + f as u64,
            })
            .expect("fit");
        let p = fitted.predict(x.select(ndarray::Axis(0), &test).view());
        for (k, &i) in test.iter().enumerate() {
            pred[i] = p[k];
        }
    }
    pred
}

/// Trees, boosting, forests, extremely randomised trees and nearest neighbours against
/// scikit-learn with matching hyperparameters on the diabetes data, out of fold over
/// KFold(5). Deterministic models: each prediction equals scikit-learn's (1e-6) under one
/// of the ten seeds it was run with (its seed only breaks ties between equal splits), and
/// rows whose scikit-learn prediction is the same under every seed must match it.
/// Stochastic ensembles, run under five seeds on each side as scikit-learn's were: the
/// mean out-of-fold MAE within 4 standard errors of the difference of the two five-seed
/// means (or 0.5%, whichever is wider), and never more than 3% apart.
#[test]
fn tree_families_match_scikit_learn_out_of_fold() {
    use forkmap::models::{
        boost::BoostParams, extra::ExtraParams, forest::ForestParams, knn::KnnParams,
        tree::TreeParams, Regressor,
    };
    let r = reference("diabetes.json");
    let x = matrix(&r["x"]);
    let y = Array1::from(f64s(&r["y"]));
    let oof = &r["oof"];
    let exact: Vec<(&str, Box<dyn forkmap::models::Regressor>)> = vec![
        (
            "tree_depth4_leaf5",
            Box::new(TreeParams {
                depth: 4,
                min_leaf: 5,
            }),
        ),
        ("nearest_5", Box::new(KnnParams { k: 5 })),
    ];
    // Boosting: in sample, 20 rounds on all rows, the same predictions as scikit-learn.
    let w = Array1::ones(y.len());
    let b20 = BoostParams {
        trees: 20,
        rate: 0.1,
        depth: 3,
        min_leaf: 5,
        subsample: 1.0,
    }
    .fit(&forkmap::models::FitInput {
        x: x.view(),
        y: y.view(),
        w: w.view(),
        seed: 0,
    })
    .unwrap()
    .predict(x.view());
    for (i, (a, b)) in pairs(
        b20.as_slice().unwrap(),
        &f64s(&r["boost20_in_sample"]),
        "boost",
    )
    .into_iter()
    .enumerate()
    {
        close(a, b, 1e-9, &format!("boost 20 rounds in sample, row {i}"));
    }
    // Out of fold over 100 rounds, a later tree can meet two collinear indicators that cut
    // a node's rows identically (gains equal to rounding): either is right, and the test
    // rows then differ. So the 100-round comparison is on the out-of-fold MAE, within 2%.
    let boost = BoostParams {
        trees: 100,
        rate: 0.1,
        depth: 3,
        min_leaf: 5,
        subsample: 1.0,
    };
    let ours = oof_predictions(&boost, &x, &y);
    let mae = forkmap::metrics::mae(y.as_slice().unwrap(), &ours);
    let sk = oof["boost_100_rate0.1_depth3_leaf5"]["mae"]
        .as_f64()
        .unwrap();
    eprintln!("boost 100: ours {mae:.4}, scikit-learn {sk:.4}");
    assert!(
        (mae - sk).abs() <= 0.02 * sk,
        "boost 100 rounds: MAE {mae} vs {sk}"
    );
    for (name, model) in &exact {
        let ours = oof_predictions(model.as_ref(), &x, &y);
        let by_seed: Vec<Vec<f64>> = cases(&oof[*name]["predictions_by_seed"], 10, name)
            .iter()
            .map(f64s)
            .collect();
        for p in &by_seed {
            assert_eq!(p.len(), ours.len(), "{name}: predictions per seed");
        }
        let mut tied = 0;
        for (i, a) in ours.iter().enumerate() {
            let options: Vec<f64> = by_seed.iter().map(|p| p[i]).collect();
            let same = |u: f64, v: f64| (u - v).abs() <= 1e-6 * v.abs().max(1.0);
            if options.iter().any(|o| !same(*o, options[0])) {
                tied += 1;
            }
            assert!(
                options.iter().any(|o| same(*a, *o)),
                "{name} row {i}: {a} is none of scikit-learn's {options:?}"
            );
        }
        assert!(
            tied * 10 <= ours.len(),
            "{name}: {tied} rows behind ties is implausibly many"
        );
    }
    let stochastic: Vec<(&str, Box<dyn forkmap::models::Regressor>)> = vec![
        (
            "forest_300_tried0.3_leaf3",
            Box::new(ForestParams {
                trees: 300,
                tried: 0.3,
                min_leaf: 3,
            }),
        ),
        (
            "extra_300_tried1_leaf3",
            Box::new(ExtraParams {
                trees: 300,
                tried: 1.0,
                min_leaf: 3,
            }),
        ),
    ];
    for (name, model) in &stochastic {
        let maes: Vec<f64> = (0..5u64)
            .map(|s| {
                let ours = oof_predictions_seeded(model.as_ref(), &x, &y, 1000 + 100 * s);
                forkmap::metrics::mae(y.as_slice().unwrap(), &ours)
            })
            .collect();
        let mae = maes.iter().sum::<f64>() / 5.0;
        let our_sd = (maes.iter().map(|m| (m - mae).powi(2)).sum::<f64>() / 4.0).sqrt();
        let sk = oof[*name]["mae"].as_f64().unwrap();
        let sd = oof[*name]["mae_seed_sd"].as_f64().unwrap();
        let se = ((our_sd * our_sd + sd * sd) / 5.0).sqrt();
        eprintln!(
            "{name}: ours {mae:.4} (seed sd {our_sd:.4}), scikit-learn {sk:.4} (seed sd {sd:.4})"
        );
        assert!(
            (mae - sk).abs() <= (4.0 * se).max(0.005 * sk) && (mae - sk).abs() <= 0.03 * sk,
            "{name}: mean MAE {mae} vs {sk} (standard error of the difference {se})"
        );
    }
}
