//! `forkmap sketch`: a starter config written from a data file passes `plan` on the same
//! data; guesses, ignored columns and warnings on a panel with odd columns; refusals.

use crate::common::root;
use forkmap::starter::{sketch, StarterOptions};
use std::fmt::Write;
use std::path::Path;
use std::process::Command;

fn with_outcome(o: &str) -> StarterOptions {
    StarterOptions {
        outcome: Some(o.into()),
        ..Default::default()
    }
}

/// The written file builds a sweep through the ordinary config path (what `plan` does).
fn prepares(path: &Path) -> forkmap::run::Prepared {
    forkmap::run::prepare(path).unwrap_or_else(|e| panic!("starter does not prepare: {e}"))
}

#[test]
fn toy_panel_starter_passes_plan() {
    let dir = tempfile::tempdir().unwrap();
    for f in ["panel.csv", "codebook.csv"] {
        std::fs::copy(root().join("toy-panel").join(f), dir.path().join(f)).unwrap();
    }
    let data = dir.path().join("panel.csv");
    let out = forkmap::starter::default_path(&data);
    assert_eq!(out, dir.path().join("panel.forkmap.toml"));
    let s = sketch(&data, &out, &with_outcome("hardship_pct"), None).unwrap();
    assert_eq!(s.unit, "district");
    assert_eq!(s.wave.as_deref(), Some("wave"));
    assert_eq!(s.outcome_kind, "percent");
    let ignored: Vec<&str> = s.ignored.iter().map(|i| i.column.as_str()).collect();
    assert_eq!(ignored, ["region"]);
    assert_eq!(s.indicators.len(), 90);
    assert!(s.text.contains("codebook = \"codebook.csv\""), "{}", s.text);
    forkmap::starter::write_new(&out, &s.text).unwrap();
    let p = prepares(&out);
    assert_eq!(p.panel.n_units(), 64);
    assert_eq!(p.panel.indicators.len(), 90);
    assert_eq!(p.space.specs.len(), s.specs);
    // 64 units: 5 grouped folds, twice.
    assert_eq!(p.folds.n_fits_per_spec(), 10);
    let report = forkmap::plan::plan(&p, 1, false);
    assert_eq!(report.specs, s.specs);
}

/// A panel with odd columns: numeric unit codes beside a text label, a year wave, a
/// share outcome, text, constant, empty, nearly empty, duplicated and stray-text columns.
fn odd_panel(dir: &Path, units: usize) -> std::path::PathBuf {
    let mut t = String::from(
        "label,code,year,share_poor,a,b,c,const,dup_a,empty,sparse,stray,note,se_share\n",
    );
    for u in 0..units {
        for (w, year) in [2019, 2022].iter().enumerate() {
            let a = (u * 7 % 13) as f64 + w as f64 * 0.5;
            let b = (u * 3 % 11) as f64 * 1.5 - w as f64;
            let c = if u % 5 == 0 {
                String::new()
            } else {
                format!("{}", (u % 4) as f64 * 2.25)
            };
            let y = 0.1 + 0.02 * a + 0.01 * (u % 3) as f64;
            let sparse = if u % 10 == 0 {
                format!("{u}")
            } else {
                String::new()
            };
            let stray = if u == 3 && w == 1 {
                "n/a?".to_string()
            } else {
                format!("{}", u as f64 * 0.1)
            };
            let _ = writeln!(
                t,
                "\"Place, {u}\",{},{year},{y},{a},{b},{c},4,{a},,{sparse},{stray},words {u},{}",
                100 + u,
                0.01 + 0.001 * (u % 3) as f64
            );
        }
    }
    let p = dir.join("odd.csv");
    std::fs::write(&p, t).unwrap();
    p
}

#[test]
fn odd_columns_are_guessed_named_and_ignored() {
    let dir = tempfile::tempdir().unwrap();
    let data = odd_panel(dir.path(), 40);
    let out = dir.path().join("odd.toml");
    let s = sketch(&data, &out, &with_outcome("share_poor"), None).unwrap();
    assert_eq!(s.wave.as_deref(), Some("year"));
    // `code` (named like a unit, whole numbers, identifies rows with the year) beats
    // `label` (text, also identifying, but not named like a unit).
    assert_eq!(s.unit, "code", "{:?}", s.guesses);
    assert_eq!(s.outcome_kind, "proportion");
    let mut ignored: Vec<&str> = s.ignored.iter().map(|i| i.column.as_str()).collect();
    ignored.sort();
    assert_eq!(
        ignored,
        ["const", "dup_a", "empty", "label", "note", "se_share", "stray"]
    );
    let warned = s.warnings.join("\n");
    for col in ["const", "dup_a", "empty", "stray", "sparse"] {
        assert!(
            warned.contains(&format!("`{col}`")),
            "{col} not warned: {warned}"
        );
    }
    assert!(warned.contains("row 8: `n/a?`"), "{warned}");
    assert!(
        !warned.contains("`note`"),
        "a text column is not a warning: {warned}"
    );
    let mut ind = s.indicators.clone();
    ind.sort();
    assert_eq!(ind, ["a", "b", "c", "sparse"]);
    // A column named like the outcome's standard error is set aside (as an indicator it
    // would carry the outcome into every spec), with a pointer to `standard_error`.
    assert!(
        warned.contains("`se_share`: named like a standard error")
            && warned.contains("standard_error = \"se_share\""),
        "{warned}"
    );
    forkmap::starter::write_new(&out, &s.text).unwrap();
    let p = prepares(&out);
    assert_eq!(p.panel.n_units(), 40);
    assert_eq!(p.space.specs.len(), s.specs);
}

#[test]
fn flags_win_over_guesses() {
    let dir = tempfile::tempdir().unwrap();
    let data = odd_panel(dir.path(), 40);
    let out = dir.path().join("odd.toml");
    let opts = StarterOptions {
        unit: Some("label".into()),
        ..with_outcome("share_poor")
    };
    let s = sketch(&data, &out, &opts, None).unwrap();
    assert_eq!(s.unit, "label");
    assert!(s.guesses.iter().any(|g| g == "unit: `label` (given)"));
    // `code` is now an indicator.
    assert!(s.indicators.iter().any(|i| i == "code"));
    forkmap::starter::write_new(&out, &s.text).unwrap();
    prepares(&out);
}

#[test]
fn few_units_get_leave_one_unit_out() {
    let dir = tempfile::tempdir().unwrap();
    let data = odd_panel(dir.path(), 10);
    let out = dir.path().join("odd.toml");
    let s = sketch(&data, &out, &with_outcome("share_poor"), None).unwrap();
    assert!(
        s.text.contains("scheme = \"leave-one-unit-out\""),
        "{}",
        s.text
    );
    forkmap::starter::write_new(&out, &s.text).unwrap();
    let p = prepares(&out);
    assert_eq!(p.folds.n_fits_per_spec(), 10);
}

#[test]
fn sketch_refuses_to_overwrite_and_lists_outcomes() {
    let dir = tempfile::tempdir().unwrap();
    let data = odd_panel(dir.path(), 40);
    let out = dir.path().join("odd.forkmap.toml");
    let bin = env!("CARGO_BIN_EXE_forkmap");
    // No outcome: candidates listed, nothing written, exit 2.
    let o = Command::new(bin)
        .args(["sketch", "--no-probe"])
        .arg(&data)
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("--outcome"), "{err}");
    assert!(
        err.contains("share_poor") && err.contains("se_share"),
        "{err}"
    );
    assert!(
        !err.contains("sparse"),
        "a gappy column is no outcome candidate: {err}"
    );
    assert!(!out.exists());
    // Written once.
    let o = Command::new(bin)
        .args(["sketch", "--no-probe", "--outcome", "share_poor"])
        .arg(&data)
        .output()
        .unwrap();
    assert_eq!(
        o.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    let first = std::fs::read(&out).unwrap();
    // Never overwritten.
    std::fs::write(&out, b"mine").unwrap();
    let o = Command::new(bin)
        .args(["sketch", "--no-probe", "--outcome", "share_poor"])
        .arg(&data)
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&o.stderr).contains("never overwrites"));
    assert_eq!(std::fs::read(&out).unwrap(), b"mine");
    assert!(!first.is_empty());
    // Unknown columns are named with a suggestion.
    let o = Command::new(bin)
        .args(["sketch", "--no-probe", "--outcome", "share_pour", "--out"])
        .arg(dir.path().join("other.toml"))
        .arg(&data)
        .output()
        .unwrap();
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        err.contains("`share_pour` not found") && err.contains("share_poor"),
        "{err}"
    );
    assert!(!dir.path().join("other.toml").exists());
}

#[test]
fn no_unit_found_is_refused_with_a_hint() {
    let dir = tempfile::tempdir().unwrap();
    let data = dir.path().join("p.csv");
    // Two rows share every candidate key and there is no wave column.
    std::fs::write(&data, "place,y,x\nA,1,2\nA,2,3\nB,3,1\nB,4,5\n").unwrap();
    let err = sketch(&data, &dir.path().join("p.toml"), &with_outcome("y"), None)
        .unwrap_err()
        .to_string();
    assert!(err.contains("--unit"), "{err}");
}

/// A value the intake refuses (above 1e150) is the user's to fix: sketch names it and does
/// not call it an internal error (cold review 3, S4).
#[test]
fn sketch_names_a_refused_value_as_the_data_s_fault() {
    let dir = tempfile::tempdir().unwrap();
    let data = dir.path().join("huge.csv");
    let mut t = String::from("place,rate,x,z\n");
    for u in 0..30 {
        let x = if u == 7 {
            "1e200".to_string()
        } else {
            format!("{}", u % 7)
        };
        let _ = writeln!(
            t,
            "p{u},{},{x},{}",
            0.1 + 0.01 * u as f64,
            (u * 5 % 11) as f64
        );
    }
    std::fs::write(&data, t).unwrap();
    let o = std::process::Command::new(env!("CARGO_BIN_EXE_forkmap"))
        .args([
            "sketch".as_ref(),
            data.as_os_str(),
            "--outcome".as_ref(),
            "rate".as_ref(),
        ])
        .output()
        .unwrap();
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(!o.status.success(), "{err}");
    assert!(
        err.contains("refuses") && err.contains("1e150") && !err.contains("internal"),
        "{err}"
    );
    assert!(!dir.path().join("huge.forkmap.toml").exists());
}
