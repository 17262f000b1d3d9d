//! The refit of the top N specs on unit subsamples (engine/src/derived/refit/, `[refit]`):
//! a subsample keeps every wave of a kept unit (property test); no fitted step sees a row
//! outside the subsample's training rows (the audit hook) and the dropped units reach
//! nothing (poisoning); the tables are the same on 1 and 2 threads; a kill -9 mid-refit
//! resumes to the same tables; the report page shows the refit beside the stored-error
//! stability; plan shows its cost; bad keys are refused naming the key.

use crate::common::prepared;
use forkmap::panel::Panel;
use forkmap::refit::table::{read_fits, read_tops, REFIT_DIR};
use forkmap::refit::{self, RefitInput, Rule};
use forkmap::sweep::Audit;
use proptest::prelude::*;
use std::collections::HashSet;
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::sync::{Arc, Mutex};
use std::time::Instant;

const SPACE: &str = r#"
[folds]
k = 4
[choices]
pool = ["all", "core"]
compress = ["none", "pca"]
model = ["ridge", "tree"]
weighting = ["rows", "units"]
[pools]
core = ["inc_median_income", "cli_heating_degree_days", "prc_tariff_index", "hou_pre1950_share"]
[grid.pca]
k = [3]
[grid.ridge]
alpha = [1, 10]
[importance]
repeats = 1
kinds = ["native", "permutation", "group"]
"#;

fn config(dir: &Path, name: &str, refit: &str) -> PathBuf {
    let path = dir.join(format!("{name}.toml"));
    std::fs::write(&path, format!("{}{SPACE}{refit}", crate::null::data())).unwrap();
    path
}

fn run(cfg: &Path, out: &Path, threads: &str, extra: &[&str]) -> std::process::Output {
    let o = Command::new(env!("CARGO_BIN_EXE_forkmap"))
        .arg("run")
        .arg(cfg)
        .arg("--out")
        .arg(out)
        .args(["--threads", threads, "--no-curves"])
        .args(extra)
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    o
}

/// Both refit tables as text rows (Debug of each row: f64s round-trip exactly).
fn refit_rows(out: &Path) -> (Vec<String>, Vec<String>) {
    let dir = out.join(REFIT_DIR);
    let fits = read_fits(&dir, u64::MAX).unwrap();
    let mut ids: Vec<u64> = fits.iter().map(|f| f.resample as u64).collect();
    ids.dedup();
    let tops = read_tops(&dir, &ids).unwrap();
    (
        fits.iter().map(|d| format!("{d:?}")).collect(),
        tops.iter().map(|t| format!("{t:?}")).collect(),
    )
}

proptest! {
    /// A subsample keeps round(fraction x units) units with every one of their rows
    /// (waves) and no row of a dropped unit; the derived panel's rows are the originals'.
    #[test]
    fn a_subsample_keeps_each_units_waves_together(
        rows in proptest::collection::vec(1usize..5, 3..40),
        fraction in 0.05f64..0.95,
        seed in any::<u64>(),
        r in 0u64..1000,
    ) {
        let p = crate::common::unit_panel(&rows);
        let units = refit::subsample_units(p.n_units(), fraction, seed, r);
        prop_assert_eq!(units.len(), refit::kept(p.n_units(), fraction));
        prop_assert!(units.windows(2).all(|w| w[0] < w[1]));
        let (sub, kept_rows) = refit::subsample(&p, fraction, seed, r).unwrap();
        let want: usize = units.iter().map(|&u| rows[u]).sum();
        prop_assert_eq!(kept_rows.len(), want, "every wave of a kept unit");
        for (i, &orig) in kept_rows.iter().enumerate() {
            prop_assert!(units.binary_search(&p.row_unit[orig]).is_ok(), "a dropped unit's row");
            prop_assert_eq!(&sub.units[sub.row_unit[i]], &p.units[p.row_unit[orig]]);
            prop_assert_eq!(&sub.row_wave[i], &p.row_wave[orig]);
            prop_assert_eq!(sub.y[i], p.y[orig]);
            prop_assert_eq!(sub.x[[i, 1]], p.x[[orig, 1]]);
        }
        prop_assert_eq!(sub.n_units(), units.len());
        // The same subsample again (a pure function of seed and r).
        prop_assert_eq!(refit::subsample_units(p.n_units(), fraction, seed, r), units);
    }
}

/// One audited fit: step, fold, the rows it was told about, the rows it was handed.
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

fn small() -> forkmap::run::Prepared {
    prepared(&format!("{}{SPACE}", crate::null::data()))
}

/// Three specs of the small space (a ridge without compression, a ridge with PCA, a tree).
fn three(p: &forkmap::run::Prepared) -> Vec<(usize, f64)> {
    use forkmap::decl::Dim;
    let find = |model: &str, compress: &str, pool: &str| {
        (0..p.space.specs.len())
            .find(|&i| {
                let s = &p.space.specs[i];
                s.choice(Dim::Model).option == model
                    && s.choice(Dim::Compress).option == compress
                    && s.choice(Dim::Pool).option == pool
            })
            .unwrap()
    };
    vec![
        (find("ridge", "none", "core"), 1.0),
        (find("ridge", "pca", "all"), 1.1),
        (find("tree", "none", "all"), 1.2),
    ]
}

fn input<'a>(p: &'a forkmap::run::Prepared, panel: &'a Panel) -> RefitInput<'a> {
    RefitInput {
        panel,
        space: &p.space,
        folds: &p.cfg.folds,
        importance: &p.cfg.importance,
        run_seed: p.cfg.seed,
        seed: 5,
        fraction: 0.7,
        top: three(p),
        metric: "mae".into(),
        top_k: 3,
        rule: Rule::Ratio(0.05),
    }
}

/// Every fitted step of a subsample's refit sees only training rows of that subsample's
/// folds (audit), and poisoning the dropped units (outcome and every indicator) moves
/// nothing, while poisoning a kept unit does (the check can fail).
#[test]
fn no_fit_sees_a_unit_outside_the_subsamples_training_rows() {
    let p = small();
    let clean = &p.panel;
    let inp = input(&p, clean);
    let r = 3;
    let rec = Arc::new(Recorder::default());
    let got = refit::resample(&inp, r, Some(rec.clone())).unwrap();
    let (sub, rows) = refit::subsample(clean, inp.fraction, inp.seed, r).unwrap();
    let folds = refit::fold_plan(&inp, &sub, r).unwrap();
    let kept: HashSet<usize> = refit::subsample_units(clean.n_units(), inp.fraction, inp.seed, r)
        .into_iter()
        .collect();
    assert!(kept.len() < clean.n_units());
    let seen = rec.seen.lock().unwrap();
    assert!(seen.iter().any(|s| s.0 == "model"), "no model fit audited");
    for (step, fold, seen_rows, data_rows) in seen.iter() {
        assert_eq!(
            *data_rows,
            seen_rows.len(),
            "{step}: handed rows it was not told about"
        );
        let train: HashSet<usize> = folds.folds[*fold].train.iter().copied().collect();
        for &i in seen_rows {
            assert!(train.contains(&i), "{step} fold {fold} saw a test row");
            assert!(
                kept.contains(&clean.row_unit[rows[i]]),
                "{step} saw a dropped unit"
            );
        }
    }
    assert_eq!(got.0.len(), 3);
    assert!(got.0.iter().all(|f| f.status == "ok"), "{:?}", got.0);
    assert!(!got.1.is_empty());
    // Poison every unit outside the subsample.
    let mut bad = clean.clone();
    for i in 0..bad.n_rows() {
        if !kept.contains(&bad.row_unit[i]) {
            bad.y[i] = 1e6 + i as f64;
            bad.x.row_mut(i).fill(-7e8);
        }
    }
    let poisoned = refit::resample(&input(&p, &bad), r, None).unwrap();
    assert_eq!(got, poisoned, "the dropped units moved the refit");
    // A kept unit's outcome does move it.
    let mut moved = clean.clone();
    moved.y[rows[0]] += 40.0;
    let m = refit::resample(&input(&p, &moved), r, None).unwrap();
    assert_ne!(got.0, m.0);
}

#[test]
fn the_refit_tables_are_the_same_on_one_and_two_threads() {
    let tmp = tempfile::tempdir().unwrap();
    let cfg = config(
        tmp.path(),
        "a",
        "[refit]\nspecs = 4\nresamples = 5\nfraction = 0.75\n",
    );
    let one = tmp.path().join("one");
    let two = tmp.path().join("two");
    run(&cfg, &one, "1", &["--quiet", "--no-map"]);
    run(&cfg, &two, "2", &["--quiet", "--no-map"]);
    let (fits, tops) = refit_rows(&one);
    assert_eq!(fits.len(), 4 * 5);
    assert!(!tops.is_empty());
    assert_eq!((fits, tops), refit_rows(&two));
    // Each subsample: one best, the best is good, 48 of 64 units.
    let f = read_fits(&one.join(REFIT_DIR), 99).unwrap();
    for r in 0..5 {
        let of: Vec<_> = f.iter().filter(|x| x.resample == r).collect();
        assert_eq!(of.len(), 4);
        assert_eq!(of.iter().filter(|x| x.best).count(), 1);
        assert!(of.iter().all(|x| !x.best || x.good));
        assert!(of.iter().all(|x| x.units == 48));
        let best = of.iter().find(|x| x.best).unwrap().error;
        for x in &of {
            assert_eq!(x.good, x.error <= best * 1.05, "{x:?}");
        }
        let ranks: Vec<i64> = of.iter().map(|x| x.run_rank).collect();
        assert_eq!(ranks, vec![1, 2, 3, 4]);
    }
    // The top 4 are the run's best 4 by mae (ties by id), as the specs table says.
    let run_errs: Vec<(f64, String)> = f
        .iter()
        .filter(|x| x.resample == 0)
        .map(|x| (x.run_error, x.spec_id.clone()))
        .collect();
    let sorted = {
        let mut v = run_errs.clone();
        v.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)));
        v
    };
    assert_eq!(run_errs, sorted);
    let m: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(one.join("refit/manifest.json")).unwrap())
            .unwrap();
    assert_eq!(m["status"], "complete");
    assert_eq!(m["units_kept"], 48);
}

#[test]
fn kill_mid_refit_then_resume_gives_the_same_tables() {
    let tmp = tempfile::tempdir().unwrap();
    let cfg = config(tmp.path(), "a", "[refit]\nspecs = 8\nresamples = 24\n");
    let reference = tmp.path().join("reference");
    run(&cfg, &reference, "2", &["--quiet", "--no-map"]);
    let want = refit_rows(&reference);
    assert_eq!(want.0.len(), 8 * 24);
    let mut mid = 0;
    for k in 0..3u64 {
        let out = tmp.path().join(format!("killed-{k}"));
        let mut child = Command::new(env!("CARGO_BIN_EXE_forkmap"))
            .arg("run")
            .arg(&cfg)
            .arg("--out")
            .arg(&out)
            .args(["--quiet", "--threads", "2", "--no-map", "--no-curves"])
            .stdout(Stdio::null())
            .stderr(Stdio::null())
            .spawn()
            .unwrap();
        let t0 = Instant::now();
        let target = 1 + 5 * k as usize; // subsamples on disk before the kill
        let done = |o: &Path| {
            crate::common::files_in(&o.join(REFIT_DIR).join("fits"), |n| {
                n.starts_with("resample-")
            })
        };
        while done(&out) < target
            && child.try_wait().unwrap().is_none()
            && t0.elapsed().as_secs() < 300
        {
            std::thread::sleep(std::time::Duration::from_micros(300));
        }
        let finished = child.try_wait().unwrap().is_some();
        let _ = child.kill(); // SIGKILL on Unix
        let _ = child.wait();
        if !finished && done(&out) < 24 {
            mid += 1;
        }
        run(&cfg, &out, "2", &["--quiet", "--no-map"]);
        assert_eq!(refit_rows(&out), want, "resume after kill {k} differs");
    }
    assert!(mid >= 2, "only {mid} of 3 kills landed mid-refit");
}

/// The page shows the refit beside the stored-error stability (B, N, the scheme, that only
/// the top N are refitted), and report/ holds its two tables; plan shows its cost.
#[test]
fn the_page_shows_the_refit_and_plan_its_cost() {
    let tmp = tempfile::tempdir().unwrap();
    let cfg = config(tmp.path(), "a", "[refit]\nspecs = 3\nresamples = 4\n");
    let out = tmp.path().join("run");
    let o = run(&cfg, &out, "2", &["--quiet"]);
    let text = String::from_utf8_lossy(&o.stdout);
    assert!(
        text.contains("refit      top 3 specs x 4 subsamples"),
        "{text}"
    );
    // The refit's tables and the report's refit tables hold the columns schema.rs names.
    let checked = crate::contract::written_columns_match_schema(&out);
    for t in [
        "refit/fits",
        "refit/tops",
        "report/refit_stability",
        "report/refit_specs",
    ] {
        assert!(checked.contains(&t), "{t} not checked: {checked:?}");
    }
    let page = std::fs::read_to_string(out.join("report/index.html")).unwrap();
    let stab = page
        .find("id=\"table-stability\"")
        .expect("stability table");
    let refit = page
        .find("id=\"table-refit_stability\"")
        .expect("refit table");
    let best = page.find("id=\"table-best_frequency\"").unwrap();
    assert!(
        stab < best && best < refit,
        "the refit follows the stability tables"
    );
    for want in [
        "top 3 specs by mae",
        "each of 4 unit subsamples",
        "subsampling without replacement",
        "among those 3 specs only, not over the whole space",
        "id=\"table-refit_specs\"",
        "Refitting the top 3 specs on 4 unit subsamples (51 of 64 units each, without replacement)",
    ] {
        assert!(page.contains(want), "page lacks {want:?}");
    }
    for t in ["refit_stability.parquet", "refit_specs.parquet"] {
        assert!(out.join("report").join(t).is_file(), "{t}");
    }
    let plan = Command::new(env!("CARGO_BIN_EXE_forkmap"))
        .args(["plan"])
        .arg(&cfg)
        .output()
        .unwrap();
    let plan = String::from_utf8_lossy(&plan.stdout);
    assert!(
        plan.contains("refit   top 3 specs x 4 subsamples (51 of 64 units each, without replacement) x 4 fits = 48 model fits"),
        "{plan}"
    );
    assert!(plan.contains("estimated refit time"), "{plan}");
    // `check` counts the subsamples, and a lost one makes the run incomplete.
    let check = || {
        Command::new(env!("CARGO_BIN_EXE_forkmap"))
            .arg("check")
            .arg(&out)
            .output()
            .unwrap()
    };
    let c = check();
    let text = String::from_utf8_lossy(&c.stdout).to_string();
    assert!(
        c.status.success() && text.contains("refit      4 of 4 subsamples"),
        "{text}"
    );
    std::fs::remove_file(out.join(REFIT_DIR).join("fits/resample-000002.parquet")).unwrap();
    let c = check();
    let text = String::from_utf8_lossy(&c.stdout).to_string();
    assert_eq!(c.status.code(), Some(1), "{text}");
    assert!(
        text.contains("refit      3 of 4 subsamples (incomplete"),
        "{text}"
    );
}

#[test]
fn bad_refit_keys_and_values_are_refused_naming_the_key() {
    let refused = |refit: &str| {
        let text = format!("{}{SPACE}{refit}", crate::null::data());
        forkmap::config::Config::from_toml(&text, Path::new("."), "t")
            .unwrap_err()
            .to_string()
    };
    assert!(refused("[refit]\nspecz = 3\n").contains("specz"));
    assert!(refused("[refit]\nspecs = 0\n").contains("refit.specs"));
    assert!(refused("[refit]\nresamples = 0\n").contains("refit.resamples"));
    assert!(refused("[refit]\nfraction = 1.0\n").contains("refit.fraction"));
    // A subsample too small for the folds is refused before anything runs.
    let tmp = tempfile::tempdir().unwrap();
    let cfg = config(tmp.path(), "a", "[refit]\nfraction = 0.02\n");
    let o = Command::new(env!("CARGO_BIN_EXE_forkmap"))
        .args(["plan"])
        .arg(&cfg)
        .output()
        .unwrap();
    assert!(
        String::from_utf8_lossy(&o.stdout).contains("refit   cannot run: "),
        "{}",
        String::from_utf8_lossy(&o.stdout)
    );
    // `run` refuses it before the sweep: exit 2, the key named, nothing written.
    let out = tmp.path().join("never");
    let o = crate::common::run_cli(&cfg, &out, &[]);
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("refit.fraction = 0.02 keeps"), "{err}");
    assert!(!out.exists(), "a refused run wrote {}", out.display());
}
