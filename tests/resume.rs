//! Overnight safety: kill -9 at seeded instants, then the same command resumes; the
//! result equals an uninterrupted run. A resume with a changed config is refused.

use crate::common::root;
use crate::end_to_end::read_table;
use arrow_array::{Array, BooleanArray, Float64Array, Int32Array, StringArray};
use std::path::Path;
use std::time::Instant;

fn config(dir: &Path, seed: u64) -> std::path::PathBuf {
    let text = format!(
        r#"
seed = {seed}
[data]
file = "{root}/toy-panel/panel.csv"
unit = "district"
wave = "wave"
outcome = "hardship_pct"
ignore = ["region"]
codebook = "{root}/toy-panel/codebook.csv"
[folds]
k = 4
[choices]
pool = ["all", "core"]
scale = ["standardise", "minmax"]
compress = ["none", "pca"]
model = ["ridge", "tree", "forest"]
weighting = ["rows", "units"]
[pools]
core = ["inc_median_income", "cli_heating_degree_days", "prc_tariff_index", "hou_pre1950_share"]
[grid.pca]
k = [3]
[grid.ridge]
alpha = [1, 10]
[grid.forest]
trees = [40]
[importance]
repeats = 1
kinds = ["group", "native"]
[output]
batch_specs = 2
"#,
        root = root().display()
    );
    let path = dir.join(format!("sweep-{seed}.toml"));
    std::fs::write(&path, text).unwrap();
    path
}

use crate::common::run_cli as run;

/// Every table, as sorted rows of text and bit patterns (seconds columns left out).
pub fn fingerprint(out: &Path) -> Vec<Vec<String>> {
    let mut tables = Vec::new();
    for t in ["specs", "predictions", "loadings", "importance"] {
        let mut rows: Vec<String> = Vec::new();
        for b in read_table(&out.join(t)) {
            for i in 0..b.num_rows() {
                let mut cells = Vec::new();
                for (f, c) in b.schema().fields().iter().zip(b.columns()) {
                    if f.name().ends_with("seconds") {
                        continue;
                    }
                    let any = c.as_any();
                    let cell = if c.is_null(i) {
                        "null".to_string()
                    } else if let Some(a) = any.downcast_ref::<StringArray>() {
                        a.value(i).to_string()
                    } else if let Some(a) = any.downcast_ref::<Float64Array>() {
                        format!("{:x}", a.value(i).to_bits())
                    } else if let Some(a) = any.downcast_ref::<Int32Array>() {
                        a.value(i).to_string()
                    } else if let Some(a) = any.downcast_ref::<BooleanArray>() {
                        a.value(i).to_string()
                    } else if let Some(a) = any.downcast_ref::<arrow_array::Int64Array>() {
                        a.value(i).to_string()
                    } else {
                        panic!("unexpected column type {}", f.data_type())
                    };
                    cells.push(cell);
                }
                rows.push(cells.join("|"));
            }
        }
        rows.sort();
        let n = rows.len();
        rows.dedup();
        assert_eq!(rows.len(), n, "{t}: duplicated rows");
        tables.push(rows);
    }
    tables
}

#[test]
fn kill_at_random_instants_then_resume_equals_an_uninterrupted_run() {
    let tmp = tempfile::tempdir().unwrap();
    let cfg = config(tmp.path(), 3);
    let reference = tmp.path().join("reference");
    let st = run(&cfg, &reference, &[]);
    assert!(
        st.status.success(),
        "{}",
        String::from_utf8_lossy(&st.stderr)
    );
    let want = fingerprint(&reference);
    assert!(want[0].len() >= 40, "specs: {}", want[0].len());
    let n_parts = std::fs::read_dir(reference.join("specs")).unwrap().count();

    // Seeded instants (SplitMix64): each kill waits until a seeded number of specs parts
    // is on disk (so it lands mid-run whatever the machine's load), then a seeded extra
    // 0-20 ms (so it can land inside a write or a rename).
    let mut s: u64 = 0xC0FFEE;
    let mut next = || {
        s = s.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = s;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        ((z ^ (z >> 31)) >> 11) as f64 / (1u64 << 53) as f64
    };
    let mut interrupted = 0;
    for k in 0..10 {
        let target = (next() * 0.8 * n_parts as f64) as usize;
        let extra = std::time::Duration::from_micros((next() * 20_000.0) as u64);
        let out = tmp.path().join(format!("killed-{k}"));
        let mut child = crate::common::spawn_run(&cfg, &out, &[]);
        let t0 = Instant::now();
        let parts = |d: &Path| crate::common::files_in(&d.join("specs"), |n| !n.starts_with('.'));
        while parts(&out) < target
            && child.try_wait().unwrap().is_none()
            && t0.elapsed().as_secs() < 120
        {
            std::thread::sleep(std::time::Duration::from_micros(500));
        }
        std::thread::sleep(extra);
        let at = t0.elapsed();
        let finished_before = child.try_wait().unwrap().is_some();
        let _ = child.kill(); // SIGKILL on Unix
        let _ = child.wait();
        if !finished_before {
            let m = std::fs::read_to_string(out.join("manifest.json")).unwrap_or_default();
            if !m.contains("\"complete\"") {
                interrupted += 1;
            }
        }
        let st = run(&cfg, &out, &[]);
        assert!(
            st.status.success(),
            "resume {k} after {at:?}: {}",
            String::from_utf8_lossy(&st.stderr)
        );
        assert_eq!(
            fingerprint(&out),
            want,
            "resume {k} (killed after {at:?}) differs from the uninterrupted run"
        );
    }
    eprintln!("{interrupted} of 10 kills landed mid-run");
    assert!(
        interrupted >= 8,
        "only {interrupted} of 10 kills landed mid-run"
    );
}

#[test]
fn a_changed_config_is_refused_unless_restarted() {
    let tmp = tempfile::tempdir().unwrap();
    let out = tmp.path().join("run");
    let st = run(&config(tmp.path(), 3), &out, &[]);
    assert!(st.status.success());
    let before = std::fs::read_to_string(out.join("manifest.json")).unwrap();
    let other = config(tmp.path(), 4);
    let st = run(&other, &out, &[]);
    assert_ne!(st.status.code(), Some(0));
    let err = String::from_utf8_lossy(&st.stderr);
    assert!(
        err.contains("config differs") && err.contains("--restart"),
        "{err}"
    );
    assert_eq!(
        std::fs::read_to_string(out.join("manifest.json")).unwrap(),
        before,
        "nothing touched"
    );
    // The same config again: already complete, nothing to run, same results.
    let want = fingerprint(&out);
    assert!(run(&config(tmp.path(), 3), &out, &[]).status.success());
    assert_eq!(fingerprint(&out), want);
    // --restart discards the old run.
    let st = run(&other, &out, &["--restart"]);
    assert!(
        st.status.success(),
        "{}",
        String::from_utf8_lossy(&st.stderr)
    );
    let m: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("manifest.json")).unwrap()).unwrap();
    assert_eq!(m["seed"], 4);
    assert_eq!(m["status"], "complete");
}

/// A run killed before its manifest existed leaves only forkmap's leftovers (the
/// manifest's temporary file, empty table folders): the same command starts afresh.
#[test]
fn leftovers_of_a_run_killed_at_its_start_are_cleared() {
    let tmp = tempfile::tempdir().unwrap();
    let out = tmp.path().join("run");
    std::fs::create_dir_all(out.join("specs")).unwrap();
    std::fs::write(out.join("specs/.part-00000.parquet.tmp"), "half").unwrap();
    std::fs::write(out.join(".manifest.json.tmp"), "{").unwrap();
    let st = run(&config(tmp.path(), 3), &out, &[]);
    assert!(
        st.status.success(),
        "{}",
        String::from_utf8_lossy(&st.stderr)
    );
    assert!(out.join("manifest.json").exists());
    // Anything else in the folder is still refused.
    let other = tmp.path().join("other");
    std::fs::create_dir_all(&other).unwrap();
    std::fs::write(other.join("notes.txt"), "mine").unwrap();
    assert!(!run(&config(tmp.path(), 3), &other, &[]).status.success());
    assert!(other.join("notes.txt").exists());
}
