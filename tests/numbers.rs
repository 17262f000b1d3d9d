//! Numbers the analysis can stand on: back-transforms (Duan's smearing), scale-free power
//! weights, the training-median baseline, and notes instead of silent drops (an indicator
//! without a training value, an NMF at its iteration limit, importances that could not be
//! computed, text columns skipped by `indicators = "auto"`, undefined metrics stored as
//! null).

use crate::common::{normals, pairs, prepared, results, sweep_mem};
use crate::end_to_end::{col, read_table};
use arrow_array::{Array, Float64Array, StringArray};
use forkmap::config::Config;
use forkmap::importance::ImportanceSection;
use forkmap::importance::DRAWS_BUDGET;
use forkmap::panel::Panel;
use forkmap::sweep::{SpecResult, Sweep};
use ndarray::{Array1, Array2, Axis};
use std::path::Path;

/// The toy panel with `choices` (TOML after `[choices]`, grids included), 5 folds.
fn toy_with(choices: &str) -> forkmap::run::Prepared {
    prepared(&format!(
        r#"
seed = 9
[data]
file = "toy-panel/panel.csv"
unit = "district"
wave = "wave"
outcome = "hardship_pct"
outcome_kind = "percent"
ignore = ["region"]
codebook = "toy-panel/codebook.csv"
[folds]
k = 5
[pools]
core = ["inc_median_income", "inc_unemployment", "hou_pre1950_share", "cli_heating_degree_days", "prc_tariff_index"]
{choices}
"#
    ))
}

fn permutation_only(repeats: usize) -> Option<ImportanceSection> {
    Some(ImportanceSection {
        repeats,
        kinds: vec!["permutation".into()],
        within: None,
    })
}

fn panel_of(y: Vec<f64>, cols: &[(&str, Vec<f64>)]) -> Panel {
    let n = y.len();
    let mut x = Array2::zeros((n, cols.len()));
    for (j, (_, c)) in cols.iter().enumerate() {
        for i in 0..n {
            x[[i, j]] = c[i];
        }
    }
    Panel::new(
        (0..n).map(|i| format!("u{i}")).collect(),
        vec![None; n],
        Array1::from(y),
        x,
        cols.iter().map(|(n, _)| n.to_string()).collect(),
    )
    .unwrap()
}

/// Duan's smearing estimate goes everywhere a prediction is made, fitted on training rows:
/// `smear = 0` specs keep the ids they had before the parameter existed; under OLS (whose
/// training residuals average 0) and log1p the smeared prediction is never below the plain
/// inverse (Jensen); the fitted spec reproduces, by hand, the mean of expm1(z_hat + e_i)
/// over the training residuals of the fold's model; and the sweep's predictions are the
/// fitted spec's.
#[test]
fn smearing_back_transform_is_fitted_in_fold_and_passes_through() {
    let base = "[choices]\ntransform = [\"log1p\"]\nfill = [\"median\"]\npool = [\"core\"]\nmodel = [\"ols\"]\n";
    let p = toy_with(&format!("{base}[grid.log1p]\nsmear = [0, 1]\n"));
    let plain = toy_with(base);
    assert_eq!(p.space.specs.len(), 2);
    assert_eq!(plain.space.specs.len(), 1);
    let s0 = p
        .space
        .specs
        .iter()
        .position(|s| !s.label().contains("smear"))
        .unwrap();
    let s1 = 1 - s0;
    assert_eq!(p.space.specs[s0].id, plain.space.specs[0].id, "id moved");
    assert!(p.space.specs[s1].label().contains("log1p(smear=1)"));
    let sweep = Sweep::new(&p.panel, &p.space, &p.folds, p.cfg.seed, None).unwrap();
    let res = results(&sweep);
    let (r0, r1) = (&res[s0], &res[s1]);
    assert_eq!(r0.status, forkmap::error::Status::Ok);
    assert_eq!(r1.status, forkmap::error::Status::Ok);
    let mut above = 0;
    for (a, b) in pairs(&r0.predictions, &r1.predictions, "predictions") {
        assert_eq!(a.row, b.row);
        assert!(b.value >= a.value * (1.0 - 1e-12), "row {}", a.row);
        above += usize::from(b.value > a.value);
    }
    assert!(
        above * 10 > r0.predictions.len() * 9,
        "smearing moved too few rows"
    );
    // The same numbers by hand, from the fold's own fitted model and training rows.
    let fi = 0;
    let fold = &p.folds.folds[fi];
    let fitted = sweep.fit_spec(s1, fi).unwrap();
    let prep = |rows: &[usize]| {
        let mut cur = p.panel.x.select(Axis(0), rows);
        for st in &fitted.chain {
            cur = st.apply_rows(cur.view(), Some(rows));
        }
        cur
    };
    let z_hat_train = fitted.model.predict(prep(&fold.train).view());
    let e: Vec<f64> = fold
        .train
        .iter()
        .zip(z_hat_train.iter())
        .map(|(&i, zh)| p.panel.y[i].ln_1p() - zh)
        .collect();
    assert_eq!(e.len(), fold.train.len());
    let z_hat_test = fitted.model.predict(prep(&fold.test).view());
    let by_hand: Vec<f64> = z_hat_test
        .iter()
        .map(|z| e.iter().map(|ei| (z + ei).exp_m1()).sum::<f64>() / e.len() as f64)
        .collect();
    let raw = p.panel.x.select(Axis(0), &fold.test);
    let got = fitted.predict_rows(raw.view(), &fold.test);
    let swept: Vec<f64> = r1
        .predictions
        .iter()
        .filter(|q| q.repeat as usize == fold.repeat && q.fold as usize == fold.index)
        .map(|q| q.value)
        .collect();
    for ((g, h), s) in pairs(got.as_slice().unwrap(), &by_hand, "fitted spec")
        .into_iter()
        .zip(pairs(&by_hand, &swept, "sweep"))
    {
        assert!((g - h).abs() <= 1e-12 * h.abs(), "{g} vs by hand {h}");
        assert_eq!(g.to_bits(), s.1.to_bits(), "fitted spec vs sweep");
    }
}

/// Permutation importances use the same back-transform as the predictions they are
/// compared with: a depth-1 tree uses one indicator per fold, so every indicator it never
/// splits on must get importance exactly 0 under smearing too (with the plain inverse on
/// the permuted side and the smeared one on the other, none would).
#[test]
fn permutation_importance_uses_the_smeared_back_transform() {
    let p = toy_with(
        "[choices]\ntransform = [\"log1p\"]\nfill = [\"median\"]\nscale = [\"none\"]\nmodel = [\"tree\"]\n[grid.log1p]\nsmear = [1]\n[grid.tree]\ndepth = [1]\nmin_leaf = [5]\n",
    );
    let mut sweep = Sweep::new(&p.panel, &p.space, &p.folds, p.cfg.seed, None).unwrap();
    sweep.importance = permutation_only(1);
    let res = results(&sweep);
    assert_eq!(res.len(), 1);
    assert_eq!(
        res[0].status,
        forkmap::error::Status::Ok,
        "{:?}",
        res[0].message
    );
    let rows: Vec<_> = res[0]
        .importance
        .iter()
        .filter(|r| r.level == "indicator" && r.kind == "permutation")
        .collect();
    assert_eq!(rows.len(), p.panel.indicators.len());
    let zero = rows.iter().filter(|r| r.importance == 0.0).count();
    assert!(
        zero + p.folds.folds.len() >= rows.len(),
        "{zero} of {} indicators at exactly 0",
        rows.len()
    );
    assert!(rows.iter().any(|r| r.importance > 0.0));
}

/// `power` weights are scale-free: the same outcome in other units (x 100) gives the same
/// weights, so a ridge fit (linear in the outcome for fixed weights) predicts exactly 100
/// times as much. With weights (y - min + 1)^a it did not.
#[test]
fn power_weighting_does_not_depend_on_the_outcomes_units() {
    let p = toy_with(
        "[choices]\nfill = [\"median\"]\npool = [\"core\"]\nmodel = [\"ridge\"]\nweighting = [\"power\"]\n[grid.power]\na = [2]\n",
    );
    let scaled = p.panel.with_outcome(&p.panel.y * 100.0).unwrap();
    let a = results(&Sweep::new(&p.panel, &p.space, &p.folds, p.cfg.seed, None).unwrap());
    let b = results(&Sweep::new(&scaled, &p.space, &p.folds, p.cfg.seed, None).unwrap());
    for (x, y) in pairs(&a[0].predictions, &b[0].predictions, "predictions") {
        assert!(
            (y.value - 100.0 * x.value).abs() <= 1e-9 * (100.0 * x.value).abs(),
            "row {}: {} vs 100 x {}",
            x.row,
            y.value,
            x.value
        );
    }
}

/// `baseline_mae` is the MAE of predicting each test row by the median of its fold's
/// training outcomes (recomputed here from the fold plan).
#[test]
fn baseline_is_the_training_median() {
    let p = toy_with("[choices]\nfill = [\"median\"]\npool = [\"core\"]\nmodel = [\"ridge\"]\n");
    let res = results(&Sweep::new(&p.panel, &p.space, &p.folds, p.cfg.seed, None).unwrap());
    let (mut sum, mut n) = (0.0, 0usize);
    for f in &p.folds.folds {
        let mut t: Vec<f64> = f.train.iter().map(|&i| p.panel.y[i]).collect();
        t.sort_by(f64::total_cmp);
        let m = if t.len() % 2 == 1 {
            t[t.len() / 2]
        } else {
            0.5 * (t[t.len() / 2 - 1] + t[t.len() / 2])
        };
        for &i in &f.test {
            sum += (p.panel.y[i] - m).abs();
            n += 1;
        }
    }
    let want = sum / n as f64;
    let s = res[0].scores.unwrap();
    assert!(
        (s.baseline_mae - want).abs() <= 1e-12 * want,
        "{} vs {want}",
        s.baseline_mae
    );
    assert!((s.skill - (1.0 - s.mae / want)).abs() <= 1e-12);
}

/// An indicator with no value in a fold's training rows is dropped for that fold with a
/// note (it used to be filled with 0); that fold then predicts as if the column did not
/// exist, the other folds keep it, and importances still cover it.
#[test]
fn indicator_without_training_values_is_dropped_with_a_note() {
    let n = 60;
    let (a, b, e) = (normals(n, 1), normals(n, 2), normals(n, 3));
    let y: Vec<f64> = (0..n).map(|i| 2.0 * a[i] - b[i] + 0.3 * e[i]).collect();
    let probe = panel_of(y.clone(), &[("a", a.clone()), ("b", b.clone())]);
    let choices = "[choices]\nfill = [\"mean\", \"knn\"]\nmodel = [\"ridge\"]\n";
    let (_, folds, without) = sweep_mem(&probe, choices, None, DRAWS_BUDGET);
    // `c` has values only in two test rows of fold 0.
    let t = &folds.folds[0].test;
    let mut c = vec![f64::NAN; n];
    c[t[0]] = 1.5;
    c[t[1]] = -0.5;
    let panel = panel_of(y, &[("a", a), ("b", b), ("c", c)]);
    let (space, _, with) = sweep_mem(&panel, choices, permutation_only(1), DRAWS_BUDGET);
    for (si, r) in with.iter().enumerate() {
        let label = space.specs[si].label();
        assert_eq!(
            r.status,
            forkmap::error::Status::Ok,
            "{label}: {:?}",
            r.message
        );
        assert_eq!(r.notes.len(), 1, "{label}: {:?}", r.notes);
        let note = &r.notes[0];
        assert!(
            note.starts_with("repeat 0, fold 0: fill")
                && note.contains("`c` has no value in the training rows: dropped"),
            "{note}"
        );
        let fold0 = |res: &SpecResult| -> Vec<u64> {
            res.predictions
                .iter()
                .filter(|q| q.fold == 0)
                .map(|q| q.value.to_bits())
                .collect()
        };
        assert_eq!(fold0(r), fold0(&without[si]), "{label}: fold 0 moved");
        assert!(
            r.importance.iter().any(|i| &*i.name == "c" && i.in_pool),
            "{label}: no importance row for c"
        );
    }
}

/// An NMF that stops at its iteration limit says so in the spec's notes, per fold.
#[test]
fn nmf_at_its_iteration_limit_is_noted() {
    let p = toy_with(
        "[choices]\nfill = [\"median\"]\npool = [\"core\"]\nscale = [\"minmax\"]\ncompress = [\"nmf\"]\nmodel = [\"ridge\"]\n[grid.nmf]\nk = [3]\nmax_iter = [1, 2000]\n",
    );
    let res = results(&Sweep::new(&p.panel, &p.space, &p.folds, p.cfg.seed, None).unwrap());
    for (si, r) in res.iter().enumerate() {
        assert_eq!(r.status, forkmap::error::Status::Ok);
        let one = p.space.specs[si].label().contains("max_iter=1,");
        if one {
            assert_eq!(r.notes.len(), p.folds.folds.len(), "{:?}", r.notes);
            assert!(r
                .notes
                .iter()
                .all(|n| n.contains("compress `nmf(")
                    && n.contains("iteration limit (max_iter = 1)")));
        } else {
            assert!(r.notes.is_empty(), "{:?}", r.notes);
        }
    }
}

/// Two nearly collinear indicators with large opposite coefficients under log1p: the
/// predictions are finite, but permuting one of them sends z_hat past where exp overflows.
/// Before, the importances came out infinite without a word; now the spec keeps its status
/// and metrics, has no importance rows, and a note says which fold and indicator.
fn collinear_panel() -> (Vec<f64>, Vec<(&'static str, Vec<f64>)>) {
    let n = 60;
    let (u, v, w, e) = (
        normals(n, 11),
        normals(n, 12),
        normals(n, 13),
        normals(n, 14),
    );
    let a: Vec<f64> = u.iter().map(|x| 100.0 * x).collect();
    let b: Vec<f64> = (0..n).map(|i| a[i] + 0.1 * v[i]).collect();
    let y: Vec<f64> = (0..n)
        .map(|i| (20.0 * (a[i] - b[i]) + 0.1 * e[i]).exp_m1())
        .collect();
    (y, vec![("a", a), ("b", b), ("d", w)])
}

#[test]
fn failed_importance_is_recorded() {
    let (y, cols) = collinear_panel();
    let panel = panel_of(y, &cols);
    let (_, _, res) = sweep_mem(
        &panel,
        "[choices]\ntransform = [\"log1p\"]\nfill = [\"mean\"]\nmodel = [\"ols\"]\n",
        permutation_only(2),
        DRAWS_BUDGET,
    );
    let r = &res[0];
    assert_eq!(r.status, forkmap::error::Status::Ok, "{:?}", r.message);
    assert!(r.scores.unwrap().mae.is_finite());
    assert!(r.importance_failed);
    assert!(r.importance.is_empty(), "{:?}", &r.importance[..2]);
    assert_eq!(r.notes.len(), 1, "{:?}", r.notes);
    assert!(
        r.notes[0].contains("importance: permuting `")
            && r.notes[0].contains("non-finite prediction")
            && r.notes[0].ends_with("the spec has no importance rows"),
        "{}",
        r.notes[0]
    );
}

fn write_csv(dir: &Path, header: &[&str], rows: &[Vec<String>]) -> std::path::PathBuf {
    let mut s = header.join(",");
    s.push('\n');
    for r in rows {
        s.push_str(&r.join(","));
        s.push('\n');
    }
    let p = dir.join("data.csv");
    std::fs::write(&p, s).unwrap();
    p
}

fn manifest(out: &Path) -> serde_json::Value {
    serde_json::from_str(&std::fs::read_to_string(out.join("manifest.json")).unwrap()).unwrap()
}

/// Through a whole run: a text column skipped by `indicators = "auto"` is warned about in
/// `plan` and listed in the manifest; the spec whose importances failed has a `notes`
/// value in `specs` and is counted in the summary and the manifest.
#[test]
fn run_records_skipped_columns_notes_and_importance_failures() {
    let tmp = tempfile::tempdir().unwrap();
    let (y, cols) = collinear_panel();
    let rows: Vec<Vec<String>> = (0..y.len())
        .map(|i| {
            let mut r = vec![format!("u{i}"), format!("{:.17e}", y[i])];
            r.extend(cols.iter().map(|(_, c)| format!("{:.17e}", c[i])));
            r.push(format!("label {}", i % 3));
            r
        })
        .collect();
    write_csv(tmp.path(), &["u", "y", "a", "b", "d", "note_text"], &rows);
    let cfg_text = "seed = 5\n[data]\nfile = \"data.csv\"\nunit = \"u\"\noutcome = \"y\"\n[folds]\nk = 5\n[choices]\ntransform = [\"log1p\", \"identity\"]\nfill = [\"mean\"]\nmodel = [\"ols\"]\n[importance]\nrepeats = 1\nkinds = [\"permutation\"]\n";
    let cfg = Config::from_toml(cfg_text, tmp.path(), "<test>").unwrap();
    let p = forkmap::run::prepare_config(cfg).unwrap();
    assert_eq!(p.panel.skipped, vec!["note_text".to_string()]);
    assert_eq!(p.panel.indicators, vec!["a", "b", "d"]);
    let warned = forkmap::plan::warnings(&p);
    assert!(
        warned
            .iter()
            .any(|w| w.contains("`note_text`") && w.contains("mostly text")),
        "{warned:?}"
    );
    let plan = forkmap::plan::plan(&p, 1, false);
    assert!(plan.text.contains("`note_text`"), "{}", plan.text);
    let out = tmp.path().join("run");
    let s = forkmap::run::run_to_dir(
        &p,
        &out,
        &forkmap::run::RunOptions {
            threads: 1,
            quiet: true,
            restart: false,
            shard: None,
        },
    )
    .unwrap();
    assert_eq!((s.specs, s.ok, s.noted, s.importance_failed), (2, 2, 1, 1));
    let m = manifest(&out);
    assert_eq!(m["skipped_columns"], serde_json::json!(["note_text"]));
    assert_eq!(m["specs_with_notes"], 1);
    assert_eq!(m["importance_failures"], 1);
    let specs = read_table(&out.join("specs"));
    let mut noted = Vec::new();
    for b in &specs {
        let (t, notes) = (
            col::<StringArray>(b, "transform"),
            col::<StringArray>(b, "notes"),
        );
        for i in 0..b.num_rows() {
            if !notes.is_null(i) {
                noted.push((t.value(i).to_string(), notes.value(i).to_string()));
            }
        }
    }
    assert_eq!(noted.len(), 1, "{noted:?}");
    assert_eq!(noted[0].0, "log1p");
    assert!(
        noted[0].1.contains("importance: permuting"),
        "{}",
        noted[0].1
    );
}

/// Undefined metrics are stored as null, not NaN (NaN sorts first in DuckDB's descending
/// order): on a constant outcome R2 and Spearman are undefined and the baseline is exact,
/// so skill is too.
#[test]
fn undefined_metrics_are_null() {
    let tmp = tempfile::tempdir().unwrap();
    let n = 30;
    let (a, b) = (normals(n, 21), normals(n, 22));
    let rows: Vec<Vec<String>> = (0..n)
        .map(|i| {
            vec![
                format!("u{i}"),
                "5".into(),
                a[i].to_string(),
                b[i].to_string(),
            ]
        })
        .collect();
    write_csv(tmp.path(), &["u", "y", "a", "b"], &rows);
    let cfg_text = "seed = 5\n[data]\nfile = \"data.csv\"\nunit = \"u\"\noutcome = \"y\"\n[folds]\nk = 3\n[choices]\nmodel = [\"ridge\", \"tree\"]\n";
    let cfg = Config::from_toml(cfg_text, tmp.path(), "<test>").unwrap();
    let p = forkmap::run::prepare_config(cfg).unwrap();
    let out = tmp.path().join("run");
    let s = forkmap::run::run_to_dir(
        &p,
        &out,
        &forkmap::run::RunOptions {
            threads: 1,
            quiet: true,
            restart: false,
            shard: None,
        },
    )
    .unwrap();
    assert_eq!(s.ok, 2);
    assert_eq!(manifest(&out)["specs_ok"], 2);
    let mut seen = 0;
    for bt in read_table(&out.join("specs")) {
        for name in forkmap::metrics::METRIC_COLUMNS {
            let c = col::<Float64Array>(&bt, name);
            for i in 0..bt.num_rows() {
                assert!(c.is_null(i) || !c.value(i).is_nan(), "{name} is NaN");
            }
        }
        let (r2, sp) = (
            col::<Float64Array>(&bt, "r2"),
            col::<Float64Array>(&bt, "spearman"),
        );
        for i in 0..bt.num_rows() {
            assert!(r2.is_null(i) && sp.is_null(i));
            seen += 1;
        }
        assert!(!col::<Float64Array>(&bt, "mae").is_null(0));
    }
    assert_eq!(seen, 2);
}

/// The comparison helpers can fail where they used to pass: a bare tolerance is relative
/// even below 1 (the old helper took 1e-9 as absolute there, so an explained variance of
/// 0.01 passed with a relative error of 1e-7), and pairs of different lengths are refused
/// (a zip stops at the shorter one).
#[test]
#[should_panic(expected = "relative tol")]
fn a_bare_tolerance_is_relative_for_small_values() {
    crate::common::close(0.01 * (1.0 + 1e-7), 0.01, 1e-9, "small value");
}

#[test]
#[should_panic(expected = "lengths differ")]
fn pairs_of_different_lengths_are_refused() {
    let _ = pairs(&[1.0, 2.0], &[1.0], "short reference");
}

#[test]
#[should_panic(expected = "reference cases")]
fn a_missing_case_list_is_refused() {
    let v = serde_json::json!({"cases": []});
    let _ = crate::common::cases(&v["cases"], 1, "empty");
}
