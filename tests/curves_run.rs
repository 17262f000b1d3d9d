//! The curves wired into the verbs: `forkmap run` draws them by default (RUN_DIR/curves/)
//! and not with `--no-curves` or `[curves] draw = false`; `plan` prints their cost; the
//! report reads them into its own section and the sign claims into its conclusions;
//! `forkmap curves` writes the same bytes on 1 and 2 threads; an incomplete run and a
//! changed data file are refused; a misspelt `[curves]` key is named.

use crate::common::root;
use arrow_array::{Array, Float64Array, RecordBatch, StringArray};
use parquet::arrow::arrow_reader::ParquetRecordBatchReaderBuilder;
use std::path::{Path, PathBuf};
use std::process::{Command, Output};

const TABLES: [&str; 7] = [
    "ice",
    "pd",
    "breakpoints",
    "bands",
    "signs",
    "clusters",
    "observed",
];

fn forkmap(args: &[&str], cwd: &Path) -> Output {
    Command::new(env!("CARGO_BIN_EXE_forkmap"))
        .args(args)
        .current_dir(cwd)
        .output()
        .unwrap()
}

fn ok(o: &Output) {
    assert!(
        o.status.success(),
        "exit {:?}: {}",
        o.status.code(),
        String::from_utf8_lossy(&o.stderr)
    );
}

/// A small sweep on a copy of the toy panel (so the test may change the data file).
fn config(dir: &Path, curves: &str) -> PathBuf {
    let data = dir.join("panel.csv");
    std::fs::copy(root().join("toy-panel/panel.csv"), &data).unwrap();
    let text = format!(
        r#"seed = 7
[data]
file = "panel.csv"
unit = "district"
wave = "wave"
outcome = "hardship_pct"
ignore = ["region"]
[folds]
k = 3
[choices]
compress = ["none", "pca"]
model = ["ols", "ridge"]
[grid.ridge]
alpha = [1.0, 10.0]
[grid.pca]
k = [3]
[importance]
repeats = 1
[map]
resamples = 100
ratio_eps = 0.2
{curves}
"#
    );
    let p = dir.join("sweep.toml");
    std::fs::write(&p, text).unwrap();
    p
}

fn read(path: &Path) -> Vec<RecordBatch> {
    let f = std::fs::File::open(path).unwrap();
    ParquetRecordBatchReaderBuilder::try_new(f)
        .unwrap()
        .build()
        .unwrap()
        .map(|b| b.unwrap())
        .collect()
}

fn strs(b: &RecordBatch, c: &str) -> Vec<String> {
    let a = b.column_by_name(c).unwrap();
    let s = a.as_any().downcast_ref::<StringArray>().unwrap();
    (0..s.len()).map(|i| s.value(i).to_string()).collect()
}

fn floats(b: &RecordBatch, c: &str) -> Vec<f64> {
    let a = b.column_by_name(c).unwrap();
    a.as_any()
        .downcast_ref::<Float64Array>()
        .unwrap()
        .values()
        .to_vec()
}

const CURVES: &str = "[curves]\ntop_k = 2\ngrid = 8\nresamples = 50\n";

#[test]
fn run_draws_curves_by_default_and_the_report_shows_them() {
    let tmp = tempfile::tempdir().unwrap();
    let cfg = config(tmp.path(), CURVES);
    let cfg_s = cfg.to_str().unwrap();
    // plan states the cost before anything runs.
    let o = forkmap(&["plan", cfg_s, "--no-probe"], tmp.path());
    ok(&o);
    let out = String::from_utf8_lossy(&o.stdout);
    let rows = crate::common::prepared(&std::fs::read_to_string(&cfg).unwrap().replace(
        "file = \"panel.csv\"",
        &format!("file = \"{}\"", tmp.path().join("panel.csv").display()),
    ))
    .panel
    .n_rows();
    let want = format!(
        "2 indicators x 8 grid points x {rows} rows = {} predictions, 1 fit on all rows, at most 100 bootstrap shape choices",
        2 * 8 * rows
    );
    assert!(out.contains(&want), "plan: {out}\nwanted: {want}");

    let run = tmp.path().join("run");
    let o = forkmap(
        &[
            "run",
            cfg_s,
            "--out",
            run.to_str().unwrap(),
            "--threads",
            "2",
        ],
        tmp.path(),
    );
    ok(&o);
    let cv = run.join("curves");
    for t in TABLES {
        assert!(cv.join(format!("{t}.parquet")).is_file(), "{t} missing");
    }
    let meta: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(cv.join("curves.json")).unwrap()).unwrap();
    let members = meta["members"].as_u64().unwrap() as usize;
    assert!(members >= 1);
    assert_eq!(meta["good"], "ratio");
    assert_eq!(meta["indicators"].as_array().unwrap().len(), 2);
    // The members are the report's ratio good set: its size in good_sets.parquet.
    let g = &read(&run.join("report/good_sets.parquet"))[0];
    let defs = strs(g, "definition");
    let size = g
        .column_by_name("size")
        .unwrap()
        .as_any()
        .downcast_ref::<arrow_array::Int64Array>()
        .map(|a| a.value(defs.iter().position(|d| d == "ratio").unwrap()) as usize)
        .unwrap();
    assert_eq!(
        members, size,
        "curves' members vs the report's ratio good set"
    );
    // Signs: shares of the members sum to one per indicator.
    let s = &read(&cv.join("signs.parquet"))[0];
    for i in 0..s.num_rows() {
        let t: f64 = ["rises", "falls", "flat", "turns"]
            .iter()
            .map(|c| floats(s, c)[i])
            .sum();
        assert!((t - 1.0).abs() < 1e-12, "shares sum to {t}");
    }
    // The report: its own section with one plot per indicator (data markers), the methods
    // and the caution, and the sign claims among the conclusions.
    let html = std::fs::read_to_string(run.join("report/index.html")).unwrap();
    let sec = &html[html.find("<section id=\"shape\">").expect("shape section")..];
    let sec = &sec[..sec.find("<section id=\"tables\">").unwrap()];
    for name in meta["indicators"].as_array().unwrap() {
        let name = name.as_str().unwrap();
        let file: String = name
            .chars()
            .map(|c| {
                if c.is_ascii_alphanumeric() {
                    c.to_ascii_lowercase()
                } else {
                    '-'
                }
            })
            .collect();
        assert!(run.join(format!("report/shape-{file}.svg")).is_file());
        assert!(sec.contains(&format!("<h3>{name}</h3>")), "{name}");
    }
    assert_eq!(sec.matches("<svg").count(), 2);
    assert!(sec.contains("rect class=\"fm-data\""));
    for words in [
        "hinge",
        "least squares",
        "gap statistic",
        "bootstrap",
        "not a causal effect",
    ] {
        assert!(sec.contains(words), "section lacks `{words}`");
    }
    let c = &read(&run.join("report/conclusions.parquet"))[0];
    let src = strs(c, "source");
    let st = strs(c, "statement");
    let signs: Vec<&String> = st
        .iter()
        .zip(&src)
        .filter(|(_, s)| *s == "curves")
        .map(|(t, _)| t)
        .collect();
    assert_eq!(signs.len(), 2, "{st:?}");
    assert!(
        signs[0].contains(&format!("of {members} members")),
        "{}",
        signs[0]
    );

    // `forkmap curves` rewrites the same bytes on 1 and 2 threads.
    let snap = |d: &Path| -> Vec<Vec<u8>> {
        TABLES
            .iter()
            .map(|t| std::fs::read(d.join(format!("{t}.parquet"))).unwrap())
            .collect()
    };
    let first = snap(&cv);
    for th in ["1", "2"] {
        let o = forkmap(
            &[
                "curves",
                run.to_str().unwrap(),
                "--threads",
                th,
                "--grid",
                "8",
                "--resamples",
                "50",
                "--top",
                "2",
                "--quiet",
            ],
            tmp.path(),
        );
        ok(&o);
        assert!(snap(&cv) == first, "tables differ with --threads {th}");
    }

    // Refusals: a changed data file, an incomplete run.
    let data = tmp.path().join("panel.csv");
    let orig = std::fs::read_to_string(&data).unwrap();
    std::fs::write(&data, format!("{orig}\n")).unwrap();
    let o = forkmap(&["curves", run.to_str().unwrap()], tmp.path());
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("has changed since the run"));
    std::fs::write(&data, orig).unwrap();
    let mp = run.join("manifest.json");
    let m = std::fs::read_to_string(&mp).unwrap();
    std::fs::write(
        &mp,
        m.replace("\"status\": \"complete\"", "\"status\": \"running\""),
    )
    .unwrap();
    let o = forkmap(&["curves", run.to_str().unwrap()], tmp.path());
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("incomplete"));
    assert!(snap(&cv) == first, "a refused pass changed the tables");
}

#[test]
fn curves_switched_off_leave_no_tables_and_no_section() {
    let tmp = tempfile::tempdir().unwrap();
    // By flag.
    let cfg = config(tmp.path(), CURVES);
    let run = tmp.path().join("flag");
    let o = forkmap(
        &[
            "run",
            cfg.to_str().unwrap(),
            "--out",
            run.to_str().unwrap(),
            "--no-curves",
            "--quiet",
        ],
        tmp.path(),
    );
    ok(&o);
    assert!(!run.join("curves").exists());
    let html = std::fs::read_to_string(run.join("report/index.html")).unwrap();
    assert!(!html.contains("<section id=\"shape\">"));
    // By config.
    let cfg = config(tmp.path(), "[curves]\ndraw = false\n");
    let run = tmp.path().join("config");
    let o = forkmap(
        &[
            "run",
            cfg.to_str().unwrap(),
            "--out",
            run.to_str().unwrap(),
            "--quiet",
        ],
        tmp.path(),
    );
    ok(&o);
    assert!(!run.join("curves").exists());
    let o = forkmap(&["plan", cfg.to_str().unwrap(), "--no-probe"], tmp.path());
    ok(&o);
    assert!(!String::from_utf8_lossy(&o.stdout).contains("curves:"));
    // A misspelt key and a bad value are named, before anything runs.
    let cfg = config(tmp.path(), "[curves]\ntopk = 3\n");
    let o = forkmap(&["plan", cfg.to_str().unwrap(), "--no-probe"], tmp.path());
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        err.contains("curves.topk") && err.contains("top_k"),
        "{err}"
    );
    let cfg = config(tmp.path(), "[curves]\ngrid = 2\n");
    let bad = tmp.path().join("never");
    let o = forkmap(
        &["run", cfg.to_str().unwrap(), "--out", bad.to_str().unwrap()],
        tmp.path(),
    );
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("curves.grid"));
    assert!(!bad.exists());
}
