//! The column contract: the names the engine writes (engine/src/base/schema.rs) against the
//! tables of a real run, and against the meta-analyst's own list in
//! tests/python/check_run.py (`CONTRACT`, printed by `check_run.py --names`).

use crate::common::root;
use forkmap::schema;
use parquet::arrow::arrow_reader::ParquetRecordBatchReaderBuilder;
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::process::Command;

/// The engine's columns of a table as check_run.py names it (`None`: not mapped here).
fn engine_columns(table: &str) -> Option<Vec<String>> {
    let own = |c: &[&str]| c.iter().map(|s| s.to_string()).collect::<Vec<_>>();
    Some(match table {
        "specs" => {
            // The fixed columns, one per dimension (named as the dimension) and the metrics.
            let mut c = own(schema::specs::COLUMNS);
            c.extend(own(forkmap::space::DIMENSIONS));
            c.extend(own(&forkmap::metrics::METRIC_COLUMNS));
            c
        }
        "predictions" => own(schema::predictions::COLUMNS),
        "loadings" => own(schema::loadings::COLUMNS),
        "importance" => own(schema::importance::COLUMNS),
        _ => own(schema::DERIVED_COLUMNS.iter().find(|(t, _)| *t == table)?.1),
    })
}

/// Every column check_run.py reads is a column the engine writes under that name, in the
/// table the script reads it from.
#[test]
fn check_run_names_agree_with_schema() {
    let out = Command::new("python3")
        .arg(root().join("tests/python/check_run.py"))
        .arg("--names")
        .output()
        .expect("python3 runs");
    assert!(
        out.status.success(),
        "check_run.py --names: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    let contract: BTreeMap<String, Vec<String>> = serde_json::from_slice(&out.stdout).unwrap();
    assert!(contract.len() >= 7, "{contract:?}");
    for (table, cols) in &contract {
        let engine = engine_columns(table).unwrap_or_else(|| {
            panic!("check_run.py reads `{table}`, which schema.rs does not list: add it")
        });
        for c in cols {
            assert!(
                engine.contains(c),
                "check_run.py reads `{table}`.`{c}`; schema.rs has {engine:?}"
            );
        }
    }
}

/// The same comparison fails on a name the engine does not write (the test above can fail).
#[test]
fn engine_columns_refuse_a_name_they_lack() {
    let c = engine_columns("curves/signs").unwrap();
    assert!(c.contains(&"rises".to_string()));
    assert!(!c.contains(&"rising".to_string()));
    assert!(engine_columns("curves/nowhere").is_none());
}

fn parquet_columns(path: &Path) -> Vec<String> {
    let f = std::fs::File::open(path).unwrap();
    let b = ParquetRecordBatchReaderBuilder::try_new(f).unwrap();
    b.schema()
        .fields()
        .iter()
        .map(|f| f.name().clone())
        .collect()
}

/// The Parquet files of a derived table in a run directory (see `DERIVED_COLUMNS`).
fn derived_files(run: &Path, table: &str) -> Vec<PathBuf> {
    let list = |dir: &Path, keep: &dyn Fn(&str) -> bool| -> Vec<PathBuf> {
        let mut v: Vec<PathBuf> = std::fs::read_dir(dir)
            .map(|r| {
                r.map(|e| e.unwrap().path())
                    .filter(|p| {
                        let n = p.file_name().unwrap().to_string_lossy();
                        keep(&n) && n.ends_with(".parquet")
                    })
                    .collect()
            })
            .unwrap_or_default();
        v.sort();
        v
    };
    match table {
        "null/draws" | "null/tops" | "null/goodranks" | "refit/fits" | "refit/tops" => {
            list(&run.join(table), &|_| true)
        }
        "nested/fold" => list(&run.join("nested"), &|n| n.starts_with("fold-")),
        _ => {
            let p = run.join(format!("{table}.parquet"));
            if p.exists() {
                vec![p]
            } else {
                Vec::new()
            }
        }
    }
}

/// Every derived table of `run` holds its schema.rs columns in that order; tables without
/// columns named at run time hold exactly those. Returns the tables checked.
pub fn written_columns_match_schema(run: &Path) -> Vec<&'static str> {
    let mut seen = Vec::new();
    for &(table, cols) in schema::DERIVED_COLUMNS {
        for f in derived_files(run, table) {
            let got = parquet_columns(&f);
            if table == "report/curve" || table == "nested/fold" {
                let fixed: Vec<&String> =
                    got.iter().filter(|c| cols.contains(&c.as_str())).collect();
                assert_eq!(fixed, cols, "{}: {got:?}", f.display());
            } else {
                assert_eq!(got, cols, "{}", f.display());
            }
            if !seen.contains(&table) {
                seen.push(table);
            }
        }
    }
    // The report names its tables in one list too; each has its columns in schema.rs.
    for t in forkmap::report::tables::REPORT_TABLES
        .iter()
        .chain(forkmap::report::tables::NULL_TABLES)
        .chain(forkmap::report::refit::TABLES)
    {
        let key = format!("report/{t}");
        assert!(
            schema::DERIVED_COLUMNS.iter().any(|(k, _)| *k == key),
            "{key} not in schema::DERIVED_COLUMNS"
        );
    }
    seen
}
