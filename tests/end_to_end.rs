//! End to end: the quick config on the toy panel through the `forkmap` binary; the
//! Parquet read back with arrow.

use crate::common::root;
use arrow_array::{Array, Float64Array, Int32Array, RecordBatch, StringArray};
use parquet::arrow::arrow_reader::ParquetRecordBatchReaderBuilder;
use std::collections::HashSet;
use std::path::Path;
use std::process::Command;

pub fn read_table(dir: &Path) -> Vec<RecordBatch> {
    let mut parts: Vec<_> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .collect();
    parts.sort();
    assert!(!parts.is_empty(), "no parts in {}", dir.display());
    let mut out = Vec::new();
    for p in parts {
        let name = p.file_name().unwrap().to_string_lossy().to_string();
        assert!(
            name.starts_with("part-") && name.ends_with(".parquet"),
            "stray file {name}"
        );
        let f = std::fs::File::open(&p).unwrap();
        for b in ParquetRecordBatchReaderBuilder::try_new(f)
            .unwrap()
            .build()
            .unwrap()
        {
            out.push(b.unwrap());
        }
    }
    out
}

pub fn col<'a, T: 'static>(b: &'a RecordBatch, name: &str) -> &'a T {
    b.column_by_name(name)
        .unwrap_or_else(|| panic!("column {name}"))
        .as_any()
        .downcast_ref::<T>()
        .unwrap()
}

#[test]
fn quick_config_runs_end_to_end() {
    let tmp = tempfile::tempdir().unwrap();
    let out = tmp.path().join("run");
    let st = Command::new(env!("CARGO_BIN_EXE_forkmap"))
        .args(["run", "configs/toy-quick.toml", "--out"])
        .arg(&out)
        .args(["--threads", "2", "--quiet"])
        .current_dir(root())
        .output()
        .unwrap();
    assert!(
        st.status.success(),
        "run failed: {}",
        String::from_utf8_lossy(&st.stderr)
    );

    let p = crate::common::toy();
    let n_specs = p.space.specs.len();
    let rows = p.panel.n_rows() * p.folds.repeats;

    let specs = read_table(&out.join("specs"));
    let total: usize = specs.iter().map(|b| b.num_rows()).sum();
    assert_eq!(total, n_specs);
    let mut ids = HashSet::new();
    let mut best = f64::NEG_INFINITY;
    for b in &specs {
        let id = col::<StringArray>(b, "spec_id");
        let status = col::<StringArray>(b, "status");
        let skill = col::<Float64Array>(b, "skill");
        let mae = col::<Float64Array>(b, "mae");
        let base = col::<Float64Array>(b, "baseline_mae");
        for i in 0..b.num_rows() {
            assert!(
                ids.insert(id.value(i).to_string()),
                "duplicate id {}",
                id.value(i)
            );
            assert_eq!(status.value(i), "ok", "spec {} failed", id.value(i));
            assert!((skill.value(i) - (1.0 - mae.value(i) / base.value(i))).abs() < 1e-12);
            best = best.max(skill.value(i));
        }
        for c in [
            "fill",
            "pool",
            "scale",
            "compress",
            "model",
            "weighting",
            "ridge_alpha",
            "pca_k",
            "rmse",
            "r2",
            "seconds",
        ] {
            assert!(b.column_by_name(c).is_some(), "specs column {c}");
        }
    }
    let expected: HashSet<String> = p.space.specs.iter().map(|s| s.id.clone()).collect();
    assert_eq!(ids, expected);
    assert!(
        best > 0.0,
        "the best spec beats the training-mean baseline (best skill {best})"
    );

    let preds = read_table(&out.join("predictions"));
    let total: usize = preds.iter().map(|b| b.num_rows()).sum();
    assert_eq!(total, n_specs * rows, "specs x rows x repeats");
    let mut per_spec: std::collections::HashMap<String, usize> = Default::default();
    for b in &preds {
        let id = col::<StringArray>(b, "spec_id");
        let fold = col::<Int32Array>(b, "fold");
        let obs = col::<Float64Array>(b, "observed");
        assert_eq!(col::<StringArray>(b, "wave").null_count(), 0);
        for i in 0..b.num_rows() {
            *per_spec.entry(id.value(i).to_string()).or_default() += 1;
            assert!(fold.value(i) >= 0 && (fold.value(i) as usize) < p.folds.k);
            assert!(obs.value(i).is_finite());
        }
    }
    assert!(per_spec.values().all(|&c| c == rows));

    let manifest: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("manifest.json")).unwrap()).unwrap();
    assert_eq!(manifest["status"], "complete");
    assert_eq!(manifest["specs"], n_specs);
    let sha = forkmap::run::sha256_file(&root().join("toy-panel/panel.csv")).unwrap();
    assert_eq!(manifest["data_sha256"], sha.as_str());
    // The derived tables (null, nested, curves, report) hold the columns schema.rs names.
    let checked = crate::contract::written_columns_match_schema(&out);
    for t in [
        "report/curve",
        "report/null_summary",
        "report/nested_summary",
        "curves/breakpoints",
        "null/draws",
        "null/tops",
        "nested/fold",
    ] {
        assert!(checked.contains(&t), "{t} not written: {checked:?}");
    }
    // No temporary files left behind.
    for t in ["specs", "predictions"] {
        for e in std::fs::read_dir(out.join(t)).unwrap() {
            let name = e.unwrap().file_name().to_string_lossy().to_string();
            assert!(!name.starts_with('.'), "temporary file {name} left in {t}");
        }
    }
}

#[test]
fn plan_prints_dimensions_counts_and_estimate() {
    let st = Command::new(env!("CARGO_BIN_EXE_forkmap"))
        .args(["plan", "configs/toy-quick.toml", "--threads", "2"])
        .current_dir(root())
        .output()
        .unwrap();
    assert!(st.status.success());
    let text = String::from_utf8_lossy(&st.stdout);
    let n = crate::common::toy().space.specs.len();
    for want in [
        "fill",
        "pool",
        "compress",
        "weighting",
        "exclusions",
        "estimated run time",
        "warnings",
        "one per ten units",
    ] {
        assert!(text.contains(want), "plan output lacks `{want}`:\n{text}");
    }
    assert!(text.contains(&format!("specs   {n}")), "{text}");
}

#[test]
fn help_on_every_verb() {
    for verb in ["plan", "run", "check", "gather", "completions"] {
        let st = Command::new(env!("CARGO_BIN_EXE_forkmap"))
            .args([verb, "--help"])
            .output()
            .unwrap();
        assert!(st.status.success());
        assert!(String::from_utf8_lossy(&st.stdout).contains("Usage"));
    }
    let st = Command::new(env!("CARGO_BIN_EXE_forkmap"))
        .args(["completions", "bash"])
        .output()
        .unwrap();
    assert!(String::from_utf8_lossy(&st.stdout).contains("forkmap"));
}

/// Every shipped config parses (unknown keys would fail here); the toy ones also prepare.
#[test]
fn shipped_configs_parse_and_toy_ones_prepare() {
    let dir = root().join("configs");
    let mut n = 0;
    for e in std::fs::read_dir(&dir).unwrap() {
        let path = e.unwrap().path();
        if path.extension().and_then(|x| x.to_str()) != Some("toml") {
            continue;
        }
        let cfg = forkmap::config::Config::from_file(&path)
            .unwrap_or_else(|e| panic!("{}: {e}", path.display()));
        if path
            .file_name()
            .unwrap()
            .to_string_lossy()
            .starts_with("toy-")
        {
            let p = forkmap::run::prepare_config(cfg)
                .unwrap_or_else(|e| panic!("{}: {e}", path.display()));
            assert!(!p.space.specs.is_empty());
        }
        n += 1;
    }
    assert!(n >= 3, "configs found: {n}");
}

/// The same panel read from Parquet (written here with arrow's writer) and from CSV gives
/// the same specs and the same predictions.
#[test]
fn parquet_data_reads_like_csv() {
    use arrow_array::{ArrayRef, Float64Array, RecordBatch, StringArray};
    use std::sync::Arc;
    let p = crate::common::toy();
    let tmp = tempfile::tempdir().unwrap();
    let mut fields = vec![
        arrow_schema::Field::new("district", arrow_schema::DataType::Utf8, false),
        arrow_schema::Field::new("wave", arrow_schema::DataType::Utf8, false),
        arrow_schema::Field::new("hardship_pct", arrow_schema::DataType::Float64, false),
    ];
    let mut cols: Vec<ArrayRef> = vec![
        Arc::new(StringArray::from_iter_values(
            p.panel.row_unit.iter().map(|&u| p.panel.units[u].clone()),
        )),
        Arc::new(StringArray::from_iter_values(
            p.panel
                .row_wave
                .iter()
                .map(|w| w.clone().unwrap_or_default()),
        )),
        Arc::new(Float64Array::from(p.panel.y.to_vec())),
    ];
    for (j, name) in p.panel.indicators.iter().enumerate() {
        fields.push(arrow_schema::Field::new(
            name,
            arrow_schema::DataType::Float64,
            true,
        ));
        cols.push(Arc::new(Float64Array::from_iter(
            p.panel
                .x
                .column(j)
                .iter()
                .map(|v| (!v.is_nan()).then_some(*v)),
        )));
    }
    let batch = RecordBatch::try_new(Arc::new(arrow_schema::Schema::new(fields)), cols).unwrap();
    let path = tmp.path().join("panel.parquet");
    let mut w = parquet::arrow::ArrowWriter::try_new(
        std::fs::File::create(&path).unwrap(),
        batch.schema(),
        None,
    )
    .unwrap();
    w.write(&batch).unwrap();
    w.close().unwrap();
    let text = std::fs::read_to_string(root().join("configs/toy-quick.toml"))
        .unwrap()
        .replace(
            "file = \"../toy-panel/panel.csv\"",
            &format!("file = \"{}\"", path.display()),
        )
        .replace("ignore = [\"region\"]", "ignore = []");
    let cfg = forkmap::config::Config::from_toml(&text, &root().join("configs"), "t").unwrap();
    let q = forkmap::run::prepare_config(cfg).unwrap();
    assert_eq!(q.panel.indicators, p.panel.indicators);
    assert_eq!(q.panel.units, p.panel.units);
    assert_eq!(q.panel.y, p.panel.y);
    assert_eq!(q.panel.x.dim(), p.panel.x.dim());
    for (a, b) in q.panel.x.iter().zip(p.panel.x.iter()) {
        assert!((a.is_nan() && b.is_nan()) || a == b);
    }
    let ids = |x: &forkmap::run::Prepared| {
        x.space
            .specs
            .iter()
            .map(|s| s.id.clone())
            .collect::<Vec<_>>()
    };
    assert_eq!(ids(&q), ids(&p));
}
