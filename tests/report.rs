//! The report (`forkmap map`): its statistics against references outside the project, and
//! the verb end to end on a small sweep of the toy panel.

use crate::common::{close, f64s, reference, root};
use crate::end_to_end::col;
use arrow_array::{BooleanArray, Float64Array, Int64Array, RecordBatch, StringArray};
use forkmap::report::data::RunTables;
use forkmap::report::errors::Errors;
use forkmap::report::stats::{percentile_interval, resample_counts, sd, tau_b, LmgDesign};
use parquet::arrow::arrow_reader::ParquetRecordBatchReaderBuilder;
use std::collections::HashMap;
use std::path::Path;
use std::process::Command;

/// Kendall's tau-b with ties against scipy.stats.kendalltau (variant "b") on four fixed
/// draws (tests/reference/report.json, made by make_reference.py).
#[test]
fn tau_b_matches_scipy() {
    let r = reference("report.json");
    let cases = r["tau_b"].as_array().unwrap();
    assert!(cases.len() >= 4);
    for c in cases {
        let (x, y) = (f64s(&c["x"]), f64s(&c["y"]));
        close(tau_b(&x, &y), c["tau_b"].as_f64().unwrap(), 1e-12, "tau-b");
    }
}

/// The LMG decomposition against R^2 of statsmodels OLS over every subset of dummy-coded
/// factors on an unbalanced design (unequal cells, an excluded combination, a sparse
/// level, an interaction), averaged over orderings in Python.
#[test]
fn lmg_matches_statsmodels_subsets() {
    let r = reference("report.json");
    let l = &r["lmg"];
    let levels: Vec<Vec<usize>> = l["levels"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| f64s(f).iter().map(|v| *v as usize).collect())
        .collect();
    let y = f64s(&l["y"]);
    let d = LmgDesign::new(&levels).decompose(&y);
    close(
        d.r2_total,
        l["r2_total"].as_f64().unwrap(),
        1e-10,
        "R2 total",
    );
    for (j, (p, a)) in f64s(&l["parts"]).iter().zip(f64s(&l["alone"])).enumerate() {
        close(d.parts[j], *p, 1e-10, &format!("LMG part {j}"));
        close(d.alone[j], a, 1e-10, &format!("R2 alone {j}"));
    }
    // The parts sum to the total (Shapley efficiency).
    close(d.parts.iter().sum(), d.r2_total, 1e-12, "sum of parts");
}

/// Percentile intervals and the bootstrap standard error against numpy.percentile /
/// numpy.std(ddof=1) on the same resample indices (exported by make_reference.py).
#[test]
fn bootstrap_intervals_match_numpy() {
    let r = reference("report.json");
    let b = &r["bootstrap"];
    let unit_n = f64s(&b["unit_n"]);
    let nu = unit_n.len();
    let idx: Vec<u32> = b["indices"]
        .as_array()
        .unwrap()
        .iter()
        .flat_map(|row| f64s(row).into_iter().map(|u| u as u32))
        .collect();
    let counts = resample_counts(&idx, nu);
    let specs = crate::common::cases(&b["specs"], 2, "bootstrap specs");
    let mut t = RunTables {
        spec_ids: (0..specs.len()).map(|s| format!("s{s}")).collect(),
        units: (0..nu).map(|u| format!("u{u}")).collect(),
        ..Default::default()
    };
    for s in specs {
        t.unit_abs.extend(f64s(&s["abs"]));
        t.unit_sq.extend(f64s(&s["sq"]));
        t.unit_n.extend(&unit_n);
    }
    let level = b["level"].as_f64().unwrap();
    for metric in ["mae", "rmse", "unit_mae"] {
        let e = Errors::compute(&t, metric, &counts);
        let results = crate::common::cases(&b["results"], specs.len(), "bootstrap results");
        assert_eq!(results.len(), specs.len(), "one reference result per spec");
        for (s, res) in results.iter().enumerate() {
            let (lo, hi) = percentile_interval(e.replicates(s), level);
            let want = &res[metric];
            close(lo, want["lower"].as_f64().unwrap(), 1e-12, metric);
            close(hi, want["upper"].as_f64().unwrap(), 1e-12, metric);
            close(
                sd(e.replicates(s)),
                want["sd"].as_f64().unwrap(),
                1e-10,
                metric,
            );
        }
    }
}

fn read(path: &Path) -> Vec<RecordBatch> {
    let f = std::fs::File::open(path).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
    ParquetRecordBatchReaderBuilder::try_new(f)
        .unwrap()
        .build()
        .unwrap()
        .map(|b| b.unwrap())
        .collect()
}

fn small_config(dir: &Path) -> std::path::PathBuf {
    let panel = root().join("toy-panel/panel.csv");
    let codebook = root().join("toy-panel/codebook.csv");
    let text = format!(
        r#"seed = 5
[data]
file = "{}"
unit = "district"
wave = "wave"
outcome = "hardship_pct"
ignore = ["region"]
codebook = "{}"
[folds]
k = 3
[choices]
scale = ["standardise", "minmax"]
compress = ["none", "pca"]
model = ["ridge", "forest"]
[grid.ridge]
alpha = [1.0, 10.0]
[grid.pca]
k = [3]
[grid.forest]
trees = [20]
[importance]
repeats = 1
[map]
resamples = 200
top_k = 3
[[map.claim]]
in_top = "inc_unemployment"
k = 1000
[[map.claim]]
ranks_above = ["inc_unemployment", "inc_median_income"]
[[map.claim]]
ranks_above = ["inc_median_income", "inc_unemployment"]
label = "median income ranks above unemployment"
"#,
        panel.display(),
        codebook.display()
    );
    let p = dir.join("small.toml");
    std::fs::write(&p, text).unwrap();
    p
}

fn forkmap(args: &[&str], cwd: &Path, env: &[(&str, &str)]) -> std::process::Output {
    let mut c = Command::new(env!("CARGO_BIN_EXE_forkmap"));
    c.args(args).current_dir(cwd);
    for (k, v) in env {
        c.env(k, v);
    }
    c.output().unwrap()
}

#[test]
fn run_writes_the_report_and_map_rewrites_it_identically() {
    let tmp = tempfile::tempdir().unwrap();
    let cfg = small_config(tmp.path());
    let run = tmp.path().join("run");
    let o = forkmap(
        &[
            "run",
            cfg.to_str().unwrap(),
            "--out",
            run.to_str().unwrap(),
            "--threads",
            "2",
            "--quiet",
        ],
        tmp.path(),
        &[],
    );
    let stdout = String::from_utf8_lossy(&o.stdout);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    // The closing summary prints the headline, not one spec id.
    assert!(
        stdout.contains("Good specs:") && stdout.contains("cautions"),
        "{stdout}"
    );
    assert!(!stdout.contains("best skill"), "{stdout}");
    let rep = run.join("report");
    for t in forkmap::report::tables::REPORT_TABLES {
        assert!(rep.join(format!("{t}.parquet")).is_file(), "missing {t}");
    }
    assert!(forkmap::report::is_report(&rep));
    // Specs: 2 scales x 2 compressions x 3 models (ridge at two alphas, forest) = 12.
    let specs: Vec<RecordBatch> = std::fs::read_dir(run.join("specs"))
        .unwrap()
        .map(|e| e.unwrap().path())
        .flat_map(|p| read(&p))
        .collect();
    let mut mae: HashMap<String, f64> = HashMap::new();
    for b in &specs {
        let (id, m) = (
            col::<StringArray>(b, "spec_id"),
            col::<Float64Array>(b, "mae"),
        );
        for i in 0..b.num_rows() {
            mae.insert(id.value(i).to_string(), m.value(i));
        }
    }
    assert_eq!(mae.len(), 12);
    let curve = read(&rep.join("curve.parquet"));
    let b = &curve[0];
    assert_eq!(b.num_rows(), 12);
    let (id, err) = (
        col::<StringArray>(b, "spec_id"),
        col::<Float64Array>(b, "error"),
    );
    let (lo, hi) = (
        col::<Float64Array>(b, "lower"),
        col::<Float64Array>(b, "upper"),
    );
    let ratio = col::<BooleanArray>(b, "good_ratio");
    for i in 0..b.num_rows() {
        // The error recomputed from the predictions is the stored one (two readings of
        // the same contract).
        close(
            err.value(i),
            mae[id.value(i)],
            1e-9,
            "curve error vs specs.mae",
        );
        assert!(lo.value(i) <= hi.value(i) && lo.value(i) > 0.0);
        if i > 0 {
            assert!(err.value(i) >= err.value(i - 1), "curve not sorted");
        }
    }
    assert!(ratio.value(0), "the best spec is always good");
    // The claims: "in the top 1000" holds exactly where the name's importance is above 0
    // (a zero or negative importance is never top, whatever its rank): its support is the
    // share of specs with a positive importance, read from the importance table;
    // a pair and its reverse: supports sum to 1 (the two never tie here: no pool, and
    // neither importance is exactly 0 in any spec; tied ranks would hold neither way).
    let c = &read(&rep.join("conclusions.parquet"))[0];
    let (src, st) = (
        col::<StringArray>(c, "source"),
        col::<StringArray>(c, "statement"),
    );
    let (sa, sg) = (
        col::<Float64Array>(c, "support_all"),
        col::<Float64Array>(c, "support_good"),
    );
    let claims: Vec<usize> = (0..c.num_rows())
        .filter(|&i| src.value(i) == "claim")
        .collect();
    assert_eq!(claims.len(), 3);
    let kind = st
        .value(claims[0])
        .rsplit_once('(')
        .and_then(|(_, k)| k.strip_suffix(" importance)"))
        .unwrap_or_else(|| panic!("kind of {}", st.value(claims[0])))
        .to_string();
    let mut positive: HashMap<String, bool> = HashMap::new();
    for p in std::fs::read_dir(run.join("importance")).unwrap() {
        for b in read(&p.unwrap().path()) {
            let (id, name, level, k, v) = (
                col::<StringArray>(&b, "spec_id"),
                col::<StringArray>(&b, "indicator"),
                col::<StringArray>(&b, "level"),
                col::<StringArray>(&b, "kind"),
                col::<Float64Array>(&b, "importance"),
            );
            for i in 0..b.num_rows() {
                if name.value(i) == "inc_unemployment"
                    && level.value(i) == "indicator"
                    && k.value(i) == kind
                {
                    positive.insert(id.value(i).to_string(), v.value(i) > 0.0);
                }
            }
        }
    }
    assert_eq!(positive.len(), 12, "{kind}");
    let want = positive.values().filter(|&&p| p).count() as f64 / 12.0;
    close(
        sa.value(claims[0]),
        want,
        1e-12,
        "in-top support = share positive",
    );
    // Over the good set (the default ratio rule, as curve.parquet marks it).
    let good_ids: Vec<String> = (0..b.num_rows())
        .filter(|&i| ratio.value(i))
        .map(|i| id.value(i).to_string())
        .collect();
    let good_pos = good_ids.iter().filter(|g| positive[g.as_str()]).count();
    close(
        sg.value(claims[0]),
        good_pos as f64 / good_ids.len() as f64,
        1e-12,
        "in-top support over the good set",
    );
    assert!(
        want < 1.0,
        "the check needs a spec where the importance is not positive"
    );
    close(
        sa.value(claims[1]) + sa.value(claims[2]),
        1.0,
        1e-12,
        "pair supports",
    );
    assert_eq!(
        st.value(claims[2]),
        "median income ranks above unemployment"
    );
    let n_all = col::<Int64Array>(c, "n_all");
    assert_eq!(
        n_all.value(claims[0]),
        12,
        "permutation importances for every spec"
    );

    // The page's units and rows are the panel's (each row counted once, not once per
    // spec and repeat).
    let toy = crate::common::toy();
    let rj: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(rep.join("report.json")).unwrap()).unwrap();
    let units: std::collections::HashSet<&str> =
        toy.panel.units.iter().map(|u| u.as_str()).collect();
    assert_eq!(rj["units"].as_u64(), Some(units.len() as u64));
    assert_eq!(rj["rows"].as_u64(), Some(toy.panel.n_rows() as u64));
    // The paired rule says what the code does: a spec is dropped only when it is worse
    // than the best in more than `level` of the resamples, one test per spec.
    let g = &read(&rep.join("good_sets.parquet"))[0];
    let (def, rule) = (
        col::<StringArray>(g, "definition"),
        col::<StringArray>(g, "rule"),
    );
    let paired = (0..g.num_rows())
        .find(|&i| def.value(i) == "paired")
        .unwrap();
    assert!(
        rule.value(paired).starts_with(
            "kept unless worse than the best in more than 95% of 200 paired unit resamples"
        ) && rule.value(paired).contains("not a confidence set"),
        "{}",
        rule.value(paired)
    );

    // `map` on the run reads the settings from the manifest and rewrites the same report,
    // whatever the thread count.
    let before: Vec<Vec<u8>> = forkmap::report::tables::REPORT_TABLES
        .iter()
        .map(|t| std::fs::read(rep.join(format!("{t}.parquet"))).unwrap())
        .collect();
    let headline = std::fs::read_to_string(rep.join("headline.txt")).unwrap();
    for threads in ["1", "2"] {
        let o = forkmap(
            &["map", run.to_str().unwrap(), "--quiet"],
            tmp.path(),
            &[("RAYON_NUM_THREADS", threads)],
        );
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
        for (t, old) in forkmap::report::tables::REPORT_TABLES.iter().zip(&before) {
            let now = std::fs::read(rep.join(format!("{t}.parquet"))).unwrap();
            assert!(
                &now == old,
                "{t} changed when rewritten with {threads} thread(s)"
            );
        }
        assert_eq!(
            std::fs::read_to_string(rep.join("headline.txt")).unwrap(),
            headline
        );
    }
    // Flags override the settings: another seed moves the intervals, not the errors.
    let other = tmp.path().join("other");
    let o = forkmap(
        &[
            "map",
            run.to_str().unwrap(),
            "--out",
            other.to_str().unwrap(),
            "--resample-seed",
            "99",
            "--quiet",
        ],
        tmp.path(),
        &[],
    );
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let c2 = &read(&other.join("curve.parquet"))[0];
    assert_eq!(col::<Float64Array>(c2, "error").values(), err.values());
    assert_ne!(col::<Float64Array>(c2, "lower").values(), lo.values());
    // No leftovers beside the report folders.
    let stray: Vec<String> = std::fs::read_dir(tmp.path())
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().to_string())
        .filter(|n| n.starts_with('.'))
        .collect();
    assert!(stray.is_empty(), "{stray:?}");
    // A folder holding something else is never overwritten.
    let foreign = tmp.path().join("foreign");
    std::fs::create_dir(&foreign).unwrap();
    std::fs::write(foreign.join("notes.txt"), "mine").unwrap();
    let o = forkmap(
        &[
            "map",
            run.to_str().unwrap(),
            "--out",
            foreign.to_str().unwrap(),
        ],
        tmp.path(),
        &[],
    );
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("holds no forkmap report"));
    assert_eq!(
        std::fs::read_to_string(foreign.join("notes.txt")).unwrap(),
        "mine"
    );
    // Bad settings name the key.
    let o = forkmap(
        &["map", run.to_str().unwrap(), "--metric", "r2"],
        tmp.path(),
        &[],
    );
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("map.metric"));
}

/// A shard alone is part of the space: `run --shard` leaves the report to the merged run,
/// and `map` refuses the incomplete set unless told to report on the specs present.
#[test]
fn map_refuses_an_incomplete_set_unless_allowed() {
    let tmp = tempfile::tempdir().unwrap();
    let cfg = small_config(tmp.path());
    let shard = tmp.path().join("s1");
    let o = forkmap(
        &[
            "run",
            cfg.to_str().unwrap(),
            "--out",
            shard.to_str().unwrap(),
            "--shard",
            "1/2",
            "--threads",
            "2",
            "--quiet",
        ],
        tmp.path(),
        &[],
    );
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    assert!(!shard.join("report").exists(), "a shard wrote a report");
    assert!(String::from_utf8_lossy(&o.stdout).contains("left to the gathered run"));
    let o = forkmap(&["map", shard.to_str().unwrap()], tmp.path(), &[]);
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(
        err.contains("incomplete") && err.contains("shard 2/2"),
        "{err}"
    );
    assert!(
        !shard.join("report").exists(),
        "a refused map wrote a report"
    );
    let out = tmp.path().join("partial");
    let o = forkmap(
        &[
            "map",
            shard.to_str().unwrap(),
            "--out",
            out.to_str().unwrap(),
            "--allow-incomplete",
        ],
        tmp.path(),
        &[],
    );
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let marker: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("report.json")).unwrap()).unwrap();
    let notes = marker["notes"].to_string();
    assert!(notes.contains("incomplete"), "{notes}");
    let n = read(&out.join("curve.parquet"))[0].num_rows();
    assert!(n > 0 && n < 12, "{n} specs in a half run");
}
