//! The permutation null in the run directory (issue 18, part A): `run` writes
//! `null/draws` and `null/tops`; the tables do not depend on the thread count; a kill -9
//! mid-null resumes to the same tables; changing `draws` keeps the sweep and the complete
//! draws, changing another null key restarts the null alone (named); bad `[null]` keys
//! and values are refused with the key named; `check` reports an incomplete null.

use crate::common::root;
use forkmap::null::table::{read_draws, read_goodranks, read_tops, NULL_DIR};
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::time::Instant;

pub const SPACE: &str = r#"
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
kinds = ["native"]
"#;

pub fn data() -> String {
    format!(
        "seed = 11\n[data]\nfile = \"{root}/toy-panel/panel.csv\"\nunit = \"district\"\nwave = \"wave\"\noutcome = \"hardship_pct\"\nignore = [\"region\"]\ncodebook = \"{root}/toy-panel/codebook.csv\"\n",
        root = root().display()
    )
}

pub fn config(dir: &Path, name: &str, null: &str) -> PathBuf {
    let path = dir.join(format!("{name}.toml"));
    std::fs::write(&path, format!("{}{SPACE}{null}", data())).unwrap();
    path
}

fn run(cfg: &Path, out: &Path, threads: &str, extra: &[&str]) -> std::process::Output {
    let o = Command::new(env!("CARGO_BIN_EXE_forkmap"))
        .arg("run")
        .arg(cfg)
        .arg("--out")
        .arg(out)
        .args(["--threads", threads, "--no-map"])
        .args(extra)
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    o
}

/// The three null tables as text rows (Debug of each row: f64s round-trip exactly).
pub fn null_rows(out: &Path) -> (Vec<String>, Vec<String>, Vec<String>) {
    let dir = out.join(NULL_DIR);
    let draws = read_draws(&dir).unwrap();
    let ids: Vec<u64> = draws.iter().map(|d| d.draw as u64).collect();
    let tops = read_tops(&dir, &ids).unwrap();
    let ranks = read_goodranks(&dir, &ids)
        .unwrap()
        .expect("every complete draw has its goodranks file");
    (
        draws.iter().map(|d| format!("{d:?}")).collect(),
        tops.iter().map(|t| format!("{t:?}")).collect(),
        ranks.iter().map(|t| format!("{t:?}")).collect(),
    )
}

const NULL6: &str = "[null]\ndraws = 6\nspecs = 10\ntop_k = 2\n";

#[test]
fn run_writes_the_null_tables_the_same_on_one_and_two_threads() {
    let tmp = tempfile::tempdir().unwrap();
    let cfg = config(tmp.path(), "a", NULL6);
    let one = tmp.path().join("one");
    let two = tmp.path().join("two");
    run(&cfg, &one, "1", &["--quiet"]);
    run(&cfg, &two, "2", &["--quiet"]);
    let rows = null_rows(&one);
    assert_eq!(rows.0.len(), 6);
    assert!(!rows.2.is_empty(), "no goodranks rows");
    assert_eq!(rows, null_rows(&two));
    let d = read_draws(&one.join(NULL_DIR)).unwrap();
    let specs_in_space = 2 * 2 * 3 * 2; // pool x compress x (ridge 2 alphas + tree) x weighting
    for (i, r) in d.iter().enumerate() {
        assert_eq!(r.draw, i as i64);
        assert_eq!(r.specs, 10);
        assert!(r.n_ok >= 1 && r.n_ok <= 10, "{r:?}");
        assert!(r.best_error <= r.q1_error && r.q1_error <= r.median_error);
        assert!(r.median_error <= r.q3_error, "{r:?}");
        assert!((0.0..=1.0).contains(&r.share_skill_positive));
        assert_eq!(r.metric, "mae");
        assert_eq!(r.seed.len(), 16);
        let want = forkmap::null::draw_seed(11, i as u64);
        assert_eq!(u64::from_str_radix(&r.seed, 16).unwrap(), want);
    }
    // Draws differ from each other (the permutation moves the outcome).
    let mut bests: Vec<u64> = d.iter().map(|r| r.best_error.to_bits()).collect();
    bests.dedup();
    assert!(bests.len() > 1, "every draw gave the same best error");
    // tops: per draw, at most top_k indicators marked top, and ranks agree with `top`.
    let ids: Vec<u64> = (0..6).collect();
    let t = read_tops(&one.join(NULL_DIR), &ids).unwrap();
    assert!(!t.is_empty());
    for dr in 0..6 {
        let ind: Vec<_> = t
            .iter()
            .filter(|r| r.draw == dr && r.level == "indicator")
            .collect();
        assert!(!ind.is_empty(), "draw {dr} has no indicator rows");
        // One set of rows per native kind (the best spec of that kind).
        for kind in ["coefficient", "impurity"] {
            let of: Vec<_> = ind.iter().filter(|r| r.kind == kind).collect();
            if of.is_empty() {
                continue;
            }
            assert!(of.iter().all(|r| r.spec == of[0].spec), "draw {dr} {kind}");
            let top = of.iter().filter(|r| r.top).count();
            assert!(
                (1..=2).contains(&top),
                "draw {dr} {kind}: {top} top indicators"
            );
        }
        for r in &ind {
            assert_eq!(r.top, r.rank <= 2 && r.importance > 0.0, "{r:?}");
        }
        // The codebook has groups: group rows too.
        assert!(t.iter().any(|r| r.draw == dr && r.level == "group"));
    }
    // The manifest names the sampled specs: 10 of the space, the same in both runs.
    let m: serde_json::Value = serde_json::from_str(
        &std::fs::read_to_string(one.join(NULL_DIR).join("manifest.json")).unwrap(),
    )
    .unwrap();
    assert_eq!(m["status"], "complete");
    assert_eq!(m["spec_ids"].as_array().unwrap().len(), 10);
    assert_eq!(m["specs_in_space"], specs_in_space);
}

#[test]
fn changing_draws_keeps_the_sweep_other_keys_restart_the_null_alone() {
    let tmp = tempfile::tempdir().unwrap();
    let out = tmp.path().join("run");
    run(
        &config(tmp.path(), "a", "[null]\ndraws = 3\nspecs = 6\n"),
        &out,
        "2",
        &["--quiet"],
    );
    let (d3, _, g3) = null_rows(&out);
    let specs_mtime = |o: &Path| {
        let mut v: Vec<_> = std::fs::read_dir(o.join("specs"))
            .unwrap()
            .map(|e| e.unwrap().metadata().unwrap().modified().unwrap())
            .collect();
        v.sort();
        v
    };
    let before = specs_mtime(&out);
    // More draws: the sweep is not rerun, the first three draws are kept as they are.
    let o = run(
        &config(tmp.path(), "b", "[null]\ndraws = 5\nspecs = 6\n"),
        &out,
        "2",
        &[],
    );
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("3 of 5 draws already complete"), "{err}");
    assert_eq!(
        specs_mtime(&out),
        before,
        "the sweep's parts were rewritten"
    );
    let (d5, _, g5) = null_rows(&out);
    assert_eq!(d5.len(), 5);
    assert_eq!(&d5[..3], &d3[..]);
    // The kept draws keep their goodranks rows (they come first, by draw).
    assert_eq!(&g5[..g3.len()], &g3[..]);
    // Another sample size: the null alone restarts, and says which key changed.
    let o = run(
        &config(tmp.path(), "c", "[null]\ndraws = 2\nspecs = 4\n"),
        &out,
        "2",
        &[],
    );
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("null.specs changed (was 6, now 4)"), "{err}");
    assert_eq!(specs_mtime(&out), before);
    let d = read_draws(&out.join(NULL_DIR)).unwrap();
    assert_eq!(d.len(), 2);
    assert!(d.iter().all(|r| r.specs == 4));
}

#[test]
fn kill_mid_null_then_resume_gives_the_same_tables() {
    let tmp = tempfile::tempdir().unwrap();
    let null = "[null]\ndraws = 12\nspecs = 8\n";
    let cfg = config(tmp.path(), "a", null);
    let reference = tmp.path().join("reference");
    run(&cfg, &reference, "2", &["--quiet"]);
    let want = null_rows(&reference);
    let mut mid = 0;
    for k in 0..3u64 {
        let out = tmp.path().join(format!("killed-{k}"));
        let mut child = Command::new(env!("CARGO_BIN_EXE_forkmap"))
            .arg("run")
            .arg(&cfg)
            .arg("--out")
            .arg(&out)
            .args(["--quiet", "--threads", "2", "--no-map"])
            .stdout(Stdio::null())
            .stderr(Stdio::null())
            .spawn()
            .unwrap();
        let t0 = Instant::now();
        let target = 1 + 3 * k as usize; // draws on disk before the kill
        let done = |o: &Path| {
            crate::common::files_in(&o.join(NULL_DIR).join("draws"), |n| n.starts_with("draw-"))
        };
        while done(&out) < target
            && child.try_wait().unwrap().is_none()
            && t0.elapsed().as_secs() < 300
        {
            std::thread::sleep(std::time::Duration::from_micros(300));
        }
        std::thread::sleep(std::time::Duration::from_millis(3 * k));
        let finished = child.try_wait().unwrap().is_some();
        let _ = child.kill(); // SIGKILL on Unix
        let _ = child.wait();
        if !finished && done(&out) < 12 {
            mid += 1;
        }
        run(&cfg, &out, "2", &["--quiet"]);
        assert_eq!(null_rows(&out), want, "resume after kill {k} differs");
    }
    assert!(mid >= 2, "only {mid} of 3 kills landed mid-null");
}

fn refused(null: &str) -> String {
    let text = format!("{}{SPACE}{null}", data());
    forkmap::config::Config::from_toml(&text, Path::new("."), "t")
        .unwrap_err()
        .to_string()
}

#[test]
fn bad_null_keys_and_values_are_refused_naming_the_key() {
    let e = refused("[null]\ndraw = 5\n");
    assert!(e.contains("null.draw") && e.contains("`draws`"), "{e}");
    let e = refused("[null]\ntopk = 5\n");
    assert!(e.contains("null.topk") && e.contains("`top_k`"), "{e}");
    let e = refused("[null]\ndraws = 0\n");
    assert!(e.contains("null.draws = 0"), "{e}");
    let e = refused("[null]\nspecs = 0\n");
    assert!(e.contains("null.specs = 0"), "{e}");
    let e = refused("[null]\ntop_k = 0\n");
    assert!(e.contains("null.top_k = 0"), "{e}");
    let e = refused("[null]\nmetric = \"rmsee\"\n");
    assert!(e.contains("null.metric") && e.contains("`rmse`"), "{e}");
    let e = refused("[null]\ndraws = -3\n");
    assert!(e.contains("draws"), "{e}");
    let e = refused("[null]\nimportance = [\"native\", \"permutaton\"]\n");
    assert!(
        e.contains("null.importance") && e.contains("`permutation`"),
        "{e}"
    );
    let e = refused("[null]\nranks_within = -0.1\n");
    assert!(e.contains("null.ranks_within = -0.1"), "{e}");
    // Defaults, and [null] is not part of the run's identity.
    let text = format!("{}{SPACE}[null]\n", data());
    let c = forkmap::config::Config::from_toml(&text, Path::new("."), "t").unwrap();
    let s = c.null.as_ref().unwrap().check(&c.map.metric).unwrap();
    assert_eq!(
        (s.draws, s.specs, s.top_k, s.metric.name()),
        (100, None, 3, "mae")
    );
    assert_eq!(
        (s.kinds(), s.ranks_within),
        (vec!["native"], 0.10),
        "the null computes native importances only unless asked"
    );
    // An unset null.metric follows the report's metric ([map] metric); a set one wins.
    for (map, null, want) in [
        ("rmse", "", "rmse"),
        ("unit_mae", "", "unit_mae"),
        ("rmse", "metric = \"mae\"\n", "mae"),
    ] {
        let text = format!("{}{SPACE}[map]\nmetric = \"{map}\"\n[null]\n{null}", data());
        let c = forkmap::config::Config::from_toml(&text, Path::new("."), "t").unwrap();
        let s = c.null.as_ref().unwrap().check(&c.map.metric).unwrap();
        assert_eq!(s.metric.name(), want, "map {map}, null {null:?}");
    }
    let plain =
        forkmap::config::Config::from_toml(&format!("{}{SPACE}", data()), Path::new("."), "t")
            .unwrap();
    assert_eq!(c.canonical_json(), plain.canonical_json());
}

#[test]
fn check_reports_an_incomplete_null() {
    let tmp = tempfile::tempdir().unwrap();
    let cfg = config(tmp.path(), "a", "[null]\ndraws = 3\nspecs = 4\n");
    let out = tmp.path().join("run");
    run(&cfg, &out, "2", &["--quiet"]);
    let check = || {
        Command::new(env!("CARGO_BIN_EXE_forkmap"))
            .arg("check")
            .arg(&out)
            .output()
            .unwrap()
    };
    let o = check();
    let text = String::from_utf8_lossy(&o.stdout).to_string();
    assert!(o.status.success(), "{text}");
    assert!(text.contains("null       3 of 3 draws"), "{text}");
    std::fs::remove_file(out.join(NULL_DIR).join("draws").join("draw-000001.parquet")).unwrap();
    let o = check();
    let text = String::from_utf8_lossy(&o.stdout).to_string();
    assert_eq!(o.status.code(), Some(1), "{text}");
    assert!(
        text.contains("null       2 of 3 draws (incomplete"),
        "{text}"
    );
}

pub fn column_f64(b: &arrow_array::RecordBatch, name: &str) -> Vec<f64> {
    use arrow_array::Array;
    let c = b.column_by_name(name).unwrap();
    let a = c
        .as_any()
        .downcast_ref::<arrow_array::Float64Array>()
        .unwrap();
    (0..a.len()).map(|i| a.value(i)).collect()
}

pub fn column_str(b: &arrow_array::RecordBatch, name: &str) -> Vec<String> {
    use arrow_array::Array;
    let c = b.column_by_name(name).unwrap();
    let a = c
        .as_any()
        .downcast_ref::<arrow_array::StringArray>()
        .unwrap();
    (0..a.len()).map(|i| a.value(i).to_string()).collect()
}

#[test]
fn the_report_shows_the_null_with_p_from_the_formula() {
    use parquet::arrow::arrow_reader::ParquetRecordBatchReaderBuilder;
    let tmp = tempfile::tempdir().unwrap();
    let cfg = config(tmp.path(), "a", "[null]\ndraws = 9\nspecs = 12\n");
    let out = tmp.path().join("run");
    let o = Command::new(env!("CARGO_BIN_EXE_forkmap"))
        .arg("run")
        .arg(&cfg)
        .arg("--out")
        .arg(&out)
        .args(["--threads", "2", "--quiet"])
        .output()
        .unwrap();
    let stdout = String::from_utf8_lossy(&o.stdout).to_string();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    assert!(stdout.contains("Permutation null (9 draws"), "{stdout}");
    // Observed best and median over the null's sample, from the run's specs table.
    let m: serde_json::Value = serde_json::from_str(
        &std::fs::read_to_string(out.join(NULL_DIR).join("manifest.json")).unwrap(),
    )
    .unwrap();
    let sample: Vec<String> = m["spec_ids"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_str().unwrap().to_string())
        .collect();
    let mut errors = Vec::new();
    for b in crate::end_to_end::read_table(&out.join("specs")) {
        let ids = column_str(&b, "spec_id");
        let mae = column_f64(&b, "mae");
        for (id, e) in ids.iter().zip(mae) {
            if sample.contains(id) && e.is_finite() {
                errors.push(e);
            }
        }
    }
    assert_eq!(errors.len(), 12);
    errors.sort_by(f64::total_cmp);
    let best = errors[0];
    let median = (errors[5] + errors[6]) / 2.0; // 12 values: numpy's linear median
    let draws = read_draws(&out.join(NULL_DIR)).unwrap();
    assert_eq!(draws.len(), 9);
    let p =
        |obs: f64, null: Vec<f64>| (1 + null.iter().filter(|v| **v <= obs).count()) as f64 / 10.0;
    let p_best = p(best, draws.iter().map(|d| d.best_error).collect());
    let p_median = p(median, draws.iter().map(|d| d.median_error).collect());
    let f = std::fs::File::open(out.join("report/null_summary.parquet")).unwrap();
    let b = ParquetRecordBatchReaderBuilder::try_new(f)
        .unwrap()
        .build()
        .unwrap()
        .next()
        .unwrap()
        .unwrap();
    assert_eq!(column_str(&b, "statistic"), ["best", "median"]);
    let obs = column_f64(&b, "observed");
    assert_eq!(obs[0], best);
    assert!((obs[1] - median).abs() < 1e-12, "{} vs {median}", obs[1]);
    let ps = column_f64(&b, "p");
    assert_eq!(ps, [p_best, p_median]);
    // The page shows the section, the histogram with its data marker, and the formula.
    let page = std::fs::read_to_string(out.join("report/index.html")).unwrap();
    assert!(page.contains("id=\"table-null_summary\""));
    assert!(page.contains("id=\"table-null_indicators\""));
    assert!(page.contains("plot-null-best"));
    assert!(page.contains("+1 correction"));
    let svg = std::fs::read_to_string(out.join("report/null-best.svg")).unwrap();
    assert!(svg.contains("class=\"fm-data\""));
    // The indicator table: chance rates in [0, 1], p only where observed top.
    let f = std::fs::File::open(out.join("report/null_indicators.parquet")).unwrap();
    let b = ParquetRecordBatchReaderBuilder::try_new(f)
        .unwrap()
        .build()
        .unwrap()
        .next()
        .unwrap()
        .unwrap();
    let chance = column_f64(&b, "chance_top");
    assert!(chance.iter().all(|c| (0.0..=1.0).contains(c)));
    assert!(chance.iter().any(|c| *c > 0.0));
    let tops = read_tops(&out.join(NULL_DIR), &(0..9).collect::<Vec<_>>()).unwrap();
    let names = column_str(&b, "name");
    let levels = column_str(&b, "level");
    // One kind, the observed top spec's (review S9): the draws' tops of the other kind
    // do not count.
    let kinds = column_str(&b, "kind");
    let kind = kinds[0].clone();
    assert!(
        ["coefficient", "impurity"].contains(&kind.as_str()),
        "{kind}"
    );
    assert!(kinds.iter().all(|k| *k == kind));
    for ((n, l), c) in names.iter().zip(&levels).zip(&chance) {
        let hits = tops
            .iter()
            .filter(|t| &t.name == n && &t.level == l && t.top && t.kind == kind)
            .count();
        assert_eq!(*c, hits as f64 / 9.0, "{l} {n}");
    }
    // The space has ridge (coefficient) and tree (impurity) specs: the draws hold the
    // best spec of each kind, one spec per draw and kind.
    let mut per: std::collections::BTreeMap<(i64, String), Vec<String>> = Default::default();
    for t in &tops {
        per.entry((t.draw, t.kind.clone()))
            .or_default()
            .push(t.spec.clone());
    }
    for (k, specs) in &per {
        assert!(specs.iter().all(|s| *s == specs[0]), "{k:?}: {specs:?}");
    }
    assert!(
        (0..9).any(|d| per.contains_key(&(d, "coefficient".into()))
            && per.contains_key(&(d, "impurity".into()))),
        "no draw holds both kinds: {:?}",
        per.keys().collect::<Vec<_>>()
    );
}

#[test]
fn shards_run_their_draws_and_gather_gives_the_whole_runs_null() {
    let tmp = tempfile::tempdir().unwrap();
    let cfg = config(tmp.path(), "a", "[null]\ndraws = 3\nspecs = 4\n");
    let shards = tmp.path().join("shards");
    let mut held = 0;
    for i in 1..=2 {
        let out = shards.join(format!("shard-{i}"));
        let o = run(&cfg, &out, "2", &["--quiet", "--shard", &format!("{i}/2")]);
        let text = String::from_utf8_lossy(&o.stdout).to_string();
        assert!(
            text.contains(&format!("null       shard {i}/2: ")),
            "{text}"
        );
        held += crate::common::files_in(&out.join(NULL_DIR).join("draws"), |n| {
            n.starts_with("draw-")
        });
    }
    assert_eq!(held, 3, "the shards' draws are not the 3 draws");
    let gathered = tmp.path().join("gathered");
    let fm = |args: &[&std::ffi::OsStr]| {
        Command::new(env!("CARGO_BIN_EXE_forkmap"))
            .args(args)
            .output()
            .unwrap()
    };
    let o = fm(&[
        "gather".as_ref(),
        shards.as_os_str(),
        "--out".as_ref(),
        gathered.as_os_str(),
        "--quiet".as_ref(),
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let o = fm(&["check".as_ref(), gathered.as_os_str()]);
    let text = String::from_utf8_lossy(&o.stdout).to_string();
    assert!(o.status.success(), "{text}");
    assert!(text.contains("null       3 of 3 draws"), "{text}");
    // The same tables as a whole-space run's.
    let whole = tmp.path().join("whole");
    run(&cfg, &whole, "2", &["--quiet"]);
    assert_eq!(null_rows(&gathered), null_rows(&whole));
}
