//! Shared helpers for the integration tests.
#![allow(dead_code)]

use std::path::{Path, PathBuf};

/// The workspace root.
pub fn root() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("..")
}

/// Folder with the reference JSON files.
pub fn reference_dir() -> PathBuf {
    match std::env::var_os("FORKMAP_REFERENCE_DIR") {
        Some(d) => PathBuf::from(d),
        None => root().join("tests/reference"),
    }
}

pub fn reference(name: &str) -> serde_json::Value {
    let p = reference_dir().join(name);
    let text =
        std::fs::read_to_string(&p).unwrap_or_else(|e| panic!("reading {}: {e}", p.display()));
    serde_json::from_str(&text).unwrap_or_else(|e| panic!("parsing {}: {e}", p.display()))
}

pub fn f64s(v: &serde_json::Value) -> Vec<f64> {
    v.as_array()
        .expect("array")
        .iter()
        .map(|x| x.as_f64().expect("number"))
        .collect()
}

pub fn matrix(v: &serde_json::Value) -> ndarray::Array2<f64> {
    let rows: Vec<Vec<f64>> = v.as_array().expect("rows").iter().map(f64s).collect();
    let (n, p) = (rows.len(), rows[0].len());
    ndarray::Array2::from_shape_vec((n, p), rows.into_iter().flatten().collect()).expect("shape")
}

/// Assert |a - b| <= tol * max(1, |b|).
pub fn close(a: f64, b: f64, tol: f64, what: &str) {
    assert!(
        (a - b).abs() <= tol * b.abs().max(1.0),
        "{what}: {a} vs reference {b} (tol {tol})"
    );
}

/// The toy panel loaded through the quick config, with the config.
pub fn toy() -> forkmap::run::Prepared {
    forkmap::run::prepare(&root().join("configs/toy-quick.toml")).expect("quick config prepares")
}

/// A prepared sweep from config text whose data path is relative to the workspace root.
pub fn prepared(text: &str) -> forkmap::run::Prepared {
    let cfg = forkmap::config::Config::from_toml(text, &root(), "<test>").expect("config");
    forkmap::run::prepare_config(cfg).expect("prepare")
}
