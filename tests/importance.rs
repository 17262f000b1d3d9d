//! Importances: theory for a linear model, scikit-learn's permutation_importance ranking,
//! groups, pools and compression.

use crate::common::{f64s, matrix, normals, reference, sweep_mem};
use forkmap::importance::{ImportanceRow, ImportanceSection};
use forkmap::panel::{CodebookEntry, Panel};
use forkmap::space::ChoiceSpace;
use forkmap::sweep::SpecResult;
use ndarray::{Array1, Array2};

/// Sweep an in-memory panel under a config's choices; importances with `repeats` draws.
fn sweep(panel: &Panel, choices: &str, repeats: usize) -> (ChoiceSpace, Vec<SpecResult>) {
    sweep_sharing(panel, choices, repeats, forkmap::importance::DRAWS_BUDGET)
}

/// [`sweep`], keeping up to `budget` bytes of filled draws per fill (0: none shared).
fn sweep_sharing(
    panel: &Panel,
    choices: &str,
    repeats: usize,
    budget: usize,
) -> (ChoiceSpace, Vec<SpecResult>) {
    let importance = Some(ImportanceSection {
        repeats,
        kinds: vec!["permutation".into(), "group".into(), "native".into()],
        within: None,
    });
    let (space, _, v) = sweep_mem(panel, choices, importance, budget);
    (space, v)
}

fn find<'a>(rows: &'a [ImportanceRow], name: &str, level: &str, kind: &str) -> &'a ImportanceRow {
    rows.iter()
        .find(|r| &*r.name == name && r.level == level && r.kind == kind)
        .unwrap_or_else(|| panic!("no row {name} {level} {kind}"))
}

/// y = x b + e with independent indicators: the MSE-based permutation importance of j
/// has expectation 2 b_j^2 var(x_j) (derivation in `importance.rs`). With 600 rows and 30
/// draws per fold the estimate's relative error is a few percent; the tolerance is 15%.
#[test]
fn linear_model_permutation_importance_is_two_b_squared_var() {
    let n = 600;
    let b = [1.0, 1.0, 0.5, 0.0];
    let sd = [1.0, 2.0, 1.0, 1.0];
    let cols: Vec<Vec<f64>> = (0..4)
        .map(|j| {
            normals(n, 100 + j as u64)
                .into_iter()
                .map(|v| v * sd[j])
                .collect()
        })
        .collect();
    let e = normals(n, 999);
    let mut x = Array2::zeros((n, 4));
    let mut y = Array1::zeros(n);
    for i in 0..n {
        for j in 0..4 {
            x[[i, j]] = cols[j][i];
            y[i] += b[j] * cols[j][i];
        }
        y[i] += 0.5 * e[i];
    }
    let names: Vec<String> = (0..4).map(|j| format!("x{j}")).collect();
    let panel = Panel::new(
        (0..n).map(|i| format!("u{i}")).collect(),
        vec![None; n],
        y,
        x,
        names,
    )
    .unwrap();
    let (_, res) = sweep(
        &panel,
        "[choices]\nscale = [\"none\"]\nmodel = [\"ols\"]\n",
        30,
    );
    let rows = &res[0].importance;
    for j in 0..4 {
        let var = cols[j].iter().map(|v| v * v).sum::<f64>() / n as f64
            - (cols[j].iter().sum::<f64>() / n as f64).powi(2);
        let expect = 2.0 * b[j] * b[j] * var;
        let got = find(rows, &format!("x{j}"), "indicator", "permutation").importance;
        if expect == 0.0 {
            assert!(got.abs() < 0.05, "x{j}: {got} should be ~0");
        } else {
            assert!(
                (got - expect).abs() <= 0.15 * expect,
                "x{j}: {got} vs 2 b^2 var = {expect}"
            );
        }
    }
    // The ranking follows: x1 (8) > x0 (2) > x2 (0.5) > x3 (0).
    let rank = |j: usize| find(rows, &format!("x{j}"), "indicator", "permutation").rank;
    assert!(rank(1) < rank(0) && rank(0) < rank(2) && rank(2) < rank(3));
}

/// Ridge on the diabetes data (shipped with scikit-learn): for every pair of indicators
/// that scikit-learn's permutation_importance (neg MSE, 30 repeats, in sample) separates by
/// more than twice the combined spreads (theirs and ours), our out-of-fold ranking agrees.
#[test]
fn ridge_ranking_matches_scikit_learn_permutation_importance() {
    let r = reference("diabetes.json");
    let x = matrix(&r["x"]);
    let y = Array1::from(f64s(&r["y"]));
    let n = y.len();
    let names: Vec<String> = r["feature_names"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_str().unwrap().to_string())
        .collect();
    let panel = Panel::new(
        (0..n).map(|i| format!("p{i}")).collect(),
        vec![None; n],
        y,
        x,
        names.clone(),
    )
    .unwrap();
    let (_, res) = sweep(
        &panel,
        "[choices]\nscale = [\"none\"]\nmodel = [\"ridge\"]\n[grid.ridge]\nalpha = [0.1]\n",
        10,
    );
    let rows = &res[0].importance;
    let sk = &r["ridge_permutation_importance"];
    let (m, s) = (f64s(&sk["mean"]), f64s(&sk["std"]));
    assert_eq!(
        m.len(),
        names.len(),
        "one scikit-learn importance per feature"
    );
    assert_eq!(s.len(), names.len());
    let mut checked = 0;
    for a in 0..names.len() {
        for b in 0..names.len() {
            let ours_a = find(rows, &names[a], "indicator", "permutation");
            let ours_b = find(rows, &names[b], "indicator", "permutation");
            let spread = s[a] + s[b] + ours_a.spread + ours_b.spread;
            if m[a] - m[b] > 2.0 * spread {
                assert!(
                    ours_a.importance > ours_b.importance,
                    "{} vs {}: scikit-learn {} > {}, ours {} <= {}",
                    names[a],
                    names[b],
                    m[a],
                    m[b],
                    ours_a.importance,
                    ours_b.importance
                );
                checked += 1;
            }
        }
    }
    assert!(checked >= 10, "only {checked} clearly separated pairs");
}

fn small_panel() -> Panel {
    let n = 80;
    let cols: Vec<Vec<f64>> = (0..4).map(|j| normals(n, 7 + j as u64)).collect();
    let mut x = Array2::zeros((n, 4));
    let mut y = Array1::zeros(n);
    for i in 0..n {
        for j in 0..4 {
            x[[i, j]] = cols[j][i];
        }
        y[i] =
            2.0 * cols[0][i] - cols[1][i] + 0.5 * cols[2][i] + 0.3 * normals(1, 500 + i as u64)[0];
    }
    let names: Vec<String> = ["a", "b", "c", "d"].iter().map(|s| s.to_string()).collect();
    let mut p = Panel::new(
        (0..n).map(|i| format!("u{i}")).collect(),
        vec![None; n],
        y,
        x,
        names,
    )
    .unwrap();
    for (ind, g) in [("a", "solo"), ("b", "pair"), ("c", "pair"), ("d", "rest")] {
        p.codebook.insert(
            ind.into(),
            CodebookEntry {
                group: g.into(),
                label: String::new(),
            },
        );
    }
    p
}

/// A one-indicator group's importance equals its indicator's (same draws); an indicator
/// outside the pool gets 0 and in_pool = false; a group with no pooled member too.
#[test]
fn groups_and_pools() {
    let panel = small_panel();
    let (_, res) = sweep(
        &panel,
        "[choices]\npool = [\"abc\"]\nmodel = [\"ridge\"]\n[pools]\nabc = [\"a\", \"b\", \"c\"]\n",
        4,
    );
    let rows = &res[0].importance;
    let a = find(rows, "a", "indicator", "permutation");
    let solo = find(rows, "solo", "group", "permutation");
    assert_eq!(a.importance, solo.importance);
    assert!(a.importance > 1.0);
    let d = find(rows, "d", "indicator", "permutation");
    assert!(!d.in_pool && d.importance == 0.0 && d.spread == 0.0);
    let rest = find(rows, "rest", "group", "permutation");
    assert!(!rest.in_pool && rest.importance == 0.0);
    let pair = find(rows, "pair", "group", "permutation");
    assert!(pair.in_pool && pair.importance > 0.0);
    assert_eq!(find(rows, "a", "indicator", "permutation").rank, 1);
    let native_d = find(rows, "d", "indicator", "coefficient");
    assert!(!native_d.in_pool && native_d.importance == 0.0);
}

/// The filled permutation draws shared by the specs below one fill change nothing: the
/// importances (and predictions) are the same as when every spec fills its own draws, and
/// as when the budget runs out part way (some draws kept, the rest filled by each spec),
/// on a panel with gaps under each fill, several pools, scalings, compressions and models.
/// And every spec is scored against the same draws: two specs that differ only in a
/// model setting that does not change the fit get equal permutation importances.
#[test]
fn shared_draws_change_nothing() {
    let mut panel = small_panel();
    for i in (0..panel.x.nrows()).step_by(7) {
        panel.x[[i, (i / 7) % 4]] = f64::NAN;
    }
    let choices = "[choices]\nfill = [\"mean\", \"knn\", \"chained\"]\npool = [\"all\", \"abc\"]\nscale = [\"standardise\", \"minmax\"]\ncompress = [\"none\", \"pca\"]\nmodel = [\"ridge\", \"forest\"]\n[pools]\nabc = [\"a\", \"b\", \"c\"]\n[grid.pca]\nk = [2]\n[grid.forest]\ntrees = [10]\n";
    let (space, shared) = sweep_sharing(&panel, choices, 2, forkmap::importance::DRAWS_BUDGET);
    let (_, own) = sweep_sharing(&panel, choices, 2, 0);
    // Draws are kept per fill node (below one pool). Under pool `all`: 16 test rows x 4
    // columns x 8 bytes = 512 bytes a draw; a fill asks for 50 (5 folds x 2 repeats x 4
    // indicators and the group of two), so 40 are kept and 10 are not. Under `abc` (3
    // columns, 384 bytes, 40 draws) all are kept.
    let (_, part) = sweep_sharing(&panel, choices, 2, 20 << 10);
    assert_eq!(shared.len(), space.specs.len());
    assert_eq!(shared.len(), own.len());
    assert_eq!(part.len(), own.len());
    for (a, b) in part.iter().zip(&own) {
        assert_eq!(a.spec, b.spec);
        assert_eq!(a.importance, b.importance);
    }
    let mut permuted = 0;
    for (a, b) in shared.iter().zip(&own) {
        assert_eq!(a.spec, b.spec);
        assert_eq!(a.status, forkmap::error::Status::Ok, "{:?}", a.message);
        assert_eq!(a.predictions, b.predictions);
        assert_eq!(
            a.importance,
            b.importance,
            "spec {}",
            space.specs[a.spec].label()
        );
        permuted += a
            .importance
            .iter()
            .filter(|r| r.kind == "permutation" && r.importance != 0.0)
            .count();
    }
    assert!(permuted > 100, "{permuted} nonzero permutation importances");
    // Common draws: ridge with alpha 1e-300 and 1e-299 fit the same coefficients to the
    // last bit on this well-conditioned panel, so their importances must be equal too.
    let (_, twins) = sweep(
        &panel,
        "[choices]\nmodel = [\"ridge\"]\n[grid.ridge]\nalpha = [1e-300, 1e-299]\n",
        3,
    );
    assert_eq!(twins.len(), 2);
    assert_eq!(twins[0].predictions, twins[1].predictions);
    assert_eq!(twins[0].importance, twins[1].importance);
}

/// Behind PCA or NMF, importances still land on the raw indicators, for permutation and
/// for the model's own (carried back through the loadings).
#[test]
fn compressed_specs_report_raw_indicators() {
    let panel = small_panel();
    let (space, res) = sweep(&panel, "[choices]\nscale = [\"minmax\"]\ncompress = [\"pca\", \"nmf\"]\nmodel = [\"ridge\", \"forest\"]\n[grid.pca]\nk = [2]\n[grid.nmf]\nk = [2]\n[grid.forest]\ntrees = [20]\n", 2);
    assert_eq!(res.len(), 4);
    for r in &res {
        let label = space.specs[r.spec].label();
        assert_eq!(r.status, forkmap::error::Status::Ok, "{label}");
        let perm: Vec<&ImportanceRow> = r
            .importance
            .iter()
            .filter(|x| x.level == "indicator" && x.kind == "permutation")
            .collect();
        assert_eq!(perm.len(), 4, "{label}");
        assert!(perm
            .iter()
            .all(|x| x.in_pool && ["a", "b", "c", "d"].contains(&&*x.name)));
        assert!(
            find(&r.importance, "a", "indicator", "permutation").importance > 0.0,
            "{label}"
        );
        let native: Vec<&ImportanceRow> = r
            .importance
            .iter()
            .filter(|x| x.level == "indicator" && (x.kind == "coefficient" || x.kind == "impurity"))
            .collect();
        assert_eq!(
            native.len(),
            4,
            "{label}: native importances on raw indicators"
        );
        assert!(native.iter().any(|x| x.importance > 0.0));
    }
}

/// `importance.within`: permutation kinds only for the specs whose skill is within the
/// band of the best (second pass), native kinds for every spec; the manifest says so.
#[test]
fn importance_band_limits_the_permutation_kinds() {
    use crate::end_to_end::{col, read_table};
    use arrow_array::{Float64Array, StringArray};
    let text = r#"
seed = 2
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
pool = ["all", "core", "group:people"]
model = ["ridge", "tree"]
[pools]
core = ["inc_median_income", "cli_heating_degree_days", "prc_tariff_index"]
[grid.ridge]
alpha = [0.1, 1, 10, 100]
[importance]
repeats = 1
within = 0.03
"#;
    let p = crate::common::prepared(text);
    let tmp = tempfile::tempdir().unwrap();
    let out = tmp.path().join("run");
    let s = forkmap::run::run_to_dir(
        &p,
        &out,
        &forkmap::run::RunOptions {
            threads: 2,
            quiet: true,
            restart: false,
            shard: None,
        },
    )
    .unwrap();
    let best = s.best.unwrap().1;
    let mut skill = std::collections::HashMap::new();
    for b in read_table(&out.join("specs")) {
        let id = col::<StringArray>(&b, "spec_id");
        let sk = col::<Float64Array>(&b, "skill");
        for i in 0..b.num_rows() {
            skill.insert(id.value(i).to_string(), sk.value(i));
        }
    }
    let mut perm = std::collections::HashSet::new();
    let mut native = std::collections::HashSet::new();
    for b in read_table(&out.join("importance")) {
        let id = col::<StringArray>(&b, "spec_id");
        let kind = col::<StringArray>(&b, "kind");
        for i in 0..b.num_rows() {
            match kind.value(i) {
                "permutation" => perm.insert(id.value(i).to_string()),
                _ => native.insert(id.value(i).to_string()),
            };
        }
    }
    let near: std::collections::HashSet<String> = skill
        .iter()
        .filter(|(_, s)| **s >= best - 0.03)
        .map(|(k, _)| k.clone())
        .collect();
    assert!(
        !near.is_empty() && near.len() < skill.len(),
        "the band selects some specs: {} of {}",
        near.len(),
        skill.len()
    );
    assert_eq!(
        perm, near,
        "permutation rows exactly for the specs within the band"
    );
    assert_eq!(native.len(), skill.len(), "native rows for every spec");
    let m: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("manifest.json")).unwrap()).unwrap();
    assert_eq!(m["importance_permutation_specs"], near.len());
}
