//! What the permutation null holds fixed (cold review S7): units alone in their set of
//! waves are never permuted, they are counted, and the run output and the page warn when
//! more than 20% of units cannot be exchanged (a rule of thumb of our own).

use crate::common::root;
use forkmap::null::{fixed_warning, permute_units, Exchange, FIXED_WARN_SHARE};
use forkmap::panel::Panel;
use ndarray::{Array1, Array2};
use std::path::Path;

/// Unit u observed in the waves given by the bits of `masks[u]` (three waves).
fn panel(masks: &[u8]) -> Panel {
    let (mut units, mut waves, mut y) = (Vec::new(), Vec::new(), Vec::new());
    for (u, m) in masks.iter().enumerate() {
        for w in 0..3 {
            if m & (1 << w) != 0 {
                units.push(format!("u{u}"));
                waves.push(Some(format!("w{w}")));
                y.push(y.len() as f64);
            }
        }
    }
    let n = y.len();
    let x = Array2::from_shape_fn((n, 1), |(i, _)| i as f64);
    Panel::new(units, waves, Array1::from(y), x, vec!["x".into()]).expect("panel")
}

#[test]
fn units_alone_in_their_wave_set_are_counted_and_never_move() {
    // Wave sets: {w0,w1} x 3, {w0} x 1, {w1} x 1, {w2} x 1, {w0,w1,w2} x 1: 4 of 7 alone.
    let p = panel(&[3, 3, 3, 1, 2, 4, 7]);
    let ex = Exchange::of(&p).unwrap();
    assert_eq!((ex.units(), ex.groups.len(), ex.fixed_units()), (7, 5, 4));
    assert!(ex.warn());
    let alone = [3usize, 4, 5, 6];
    let mut moved = false;
    for seed in 0..50 {
        let q = permute_units(&p, seed).unwrap();
        for r in 0..p.n_rows() {
            if alone.contains(&p.row_unit[r]) {
                assert_eq!(q.y[r], p.y[r], "seed {seed}: a unit alone moved");
            } else {
                moved |= q.y[r] != p.y[r];
            }
        }
    }
    assert!(moved, "the exchangeable units never moved");
    // Balanced: nobody alone. The threshold is strict: 1 of 5 (20%) does not warn,
    // 2 of 9 (22%) does.
    let ex = Exchange::of(&panel(&[7; 6])).unwrap();
    assert_eq!((ex.fixed_units(), ex.warn()), (0, false));
    let ex = Exchange::of(&panel(&[3, 3, 3, 3, 1])).unwrap();
    assert_eq!((ex.fixed_units(), ex.warn()), (1, false));
    let ex = Exchange::of(&panel(&[3, 3, 3, 3, 3, 3, 3, 1, 2])).unwrap();
    assert_eq!((ex.fixed_units(), ex.warn()), (2, true));
    assert_eq!(FIXED_WARN_SHARE, 0.2);
    assert!(fixed_warning(2, 9).contains("2 of 9 units (22%)"));
}

const SPACE: &str = r#"
[folds]
k = 4
[choices]
pool = ["all"]
compress = ["none"]
model = ["ridge", "tree"]
weighting = ["rows"]
[grid.ridge]
alpha = [1, 10]
[importance]
repeats = 1
kinds = ["native"]
[null]
draws = 4
"#;

/// The toy panel with the second wave of the first `n` balanced units relabelled to a
/// wave of their own, so each of them is alone in its set of waves.
fn unbalanced(dir: &Path, n: usize) -> std::path::PathBuf {
    let text = std::fs::read_to_string(root().join("toy-panel/panel.csv")).unwrap();
    let mut lines = text.lines();
    let header = lines.next().unwrap();
    let rows: Vec<Vec<String>> = lines
        .map(|l| l.split(',').map(str::to_string).collect())
        .collect();
    let mut count: std::collections::BTreeMap<String, usize> = Default::default();
    for r in &rows {
        *count.entry(r[0].clone()).or_default() += 1;
    }
    let balanced: Vec<String> = count
        .iter()
        .filter(|(_, c)| **c == 2)
        .map(|(u, _)| u.clone())
        .take(n)
        .collect();
    assert_eq!(balanced.len(), n);
    let mut out = format!("{header}\n");
    for mut r in rows {
        if balanced.contains(&r[0]) && r[2] == "2024" {
            r[2] = format!("2024-{}", r[0]);
        }
        out.push_str(&r.join(","));
        out.push('\n');
    }
    let path = dir.join("panel.csv");
    std::fs::write(&path, out).unwrap();
    path
}

fn run(dir: &Path, panel: &Path, name: &str) -> (String, std::path::PathBuf) {
    let cfg = dir.join(format!("{name}.toml"));
    std::fs::write(
        &cfg,
        format!(
            "seed = 5\n[data]\nfile = \"{}\"\nunit = \"district\"\nwave = \"wave\"\noutcome = \"hardship_pct\"\nignore = [\"region\"]\n{SPACE}",
            panel.display()
        ),
    )
    .unwrap();
    let out = dir.join(name);
    let o = crate::common::run_cli(&cfg, &out, &[]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    (String::from_utf8_lossy(&o.stdout).to_string(), out)
}

#[test]
fn an_unbalanced_panel_warns_in_the_run_and_on_the_page() {
    let tmp = tempfile::tempdir().unwrap();
    // The toy panel: 57 units in both waves, 4 in 2021 only, 3 in 2024 only.
    let (text, out) = run(tmp.path(), &root().join("toy-panel/panel.csv"), "toy");
    assert!(
        text.contains("units never permuted (no other unit with their set of waves): 0 of 64"),
        "{text}"
    );
    assert!(!text.contains("warning    null"), "{text}");
    let page = std::fs::read_to_string(out.join("report/index.html")).unwrap();
    assert!(page.contains("no within-wave, between-unit association"));
    assert!(!page.contains("have no other unit observed in the same set of waves"));
    // 16 of 64 units alone (25% > 20%): the run and the page warn, the manifest counts.
    let panel = unbalanced(tmp.path(), 16);
    let (text, out) = run(tmp.path(), &panel, "unbalanced");
    assert!(
        text.contains("units never permuted (no other unit with their set of waves): 16 of 64"),
        "{text}"
    );
    assert!(
        text.contains("warning    null: 16 of 64 units (25%) have no other unit"),
        "{text}"
    );
    assert!(text.contains("a rule of thumb of our own"), "{text}");
    let m: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("null/manifest.json")).unwrap())
            .unwrap();
    assert_eq!(
        (m["units"].as_u64(), m["units_fixed"].as_u64()),
        (Some(64), Some(16))
    );
    assert!(m["held_fixed"]
        .as_str()
        .unwrap()
        .contains("within each wave"));
    let page = std::fs::read_to_string(out.join("report/index.html")).unwrap();
    assert!(
        page.contains("16 of 64 units (25%) have no other unit observed in the same set of waves")
    );
    // 12 of 64 (19%): counted, no warning.
    let panel = unbalanced(tmp.path(), 12);
    let (text, _) = run(tmp.path(), &panel, "mild");
    assert!(text.contains(": 12 of 64"), "{text}");
    assert!(!text.contains("warning    null"), "{text}");
}

/// The toy panel with every unit's waves relabelled to waves of its own, so no unit shares
/// its set of waves with another and the null can permute nothing.
fn every_unit_alone(dir: &Path) -> std::path::PathBuf {
    let text = std::fs::read_to_string(root().join("toy-panel/panel.csv")).unwrap();
    let mut lines = text.lines();
    let mut out = format!("{}\n", lines.next().unwrap());
    for l in lines {
        let mut r: Vec<String> = l.split(',').map(str::to_string).collect();
        r[2] = format!("{}-{}", r[2], r[0]);
        out.push_str(&r.join(","));
        out.push('\n');
    }
    let path = dir.join("alone.csv");
    std::fs::write(&path, out).unwrap();
    path
}

/// numpy's default ("linear", Hyndman and Fan type 7) quantile of sorted values, written
/// out here independently of the engine's.
fn type7(sorted: &[f64], q: f64) -> f64 {
    let h = (sorted.len() - 1) as f64 * q;
    let (lo, hi) = (h.floor() as usize, h.ceil() as usize);
    sorted[lo] + (h - lo as f64) * (sorted[hi] - sorted[lo])
}

/// When no unit can be exchanged, every null draw is the observed panel: each draw must
/// reproduce the observed sweep's best, quartiles and best spec exactly. This ties the
/// null's own pipeline (permutation, shared stage fits, native importances only, its
/// summary) to the sweep that produced the run's `specs` table.
#[test]
fn a_null_that_permutes_nothing_reproduces_the_observed_sweep() {
    use arrow_array::{Array, Float64Array, StringArray};
    use forkmap::null::table::{read_draws, NULL_DIR};
    let tmp = tempfile::tempdir().unwrap();
    let panel = every_unit_alone(tmp.path());
    let (text, out) = run(tmp.path(), &panel, "alone");
    assert!(text.contains(": 64 of 64"), "{text}");
    let mut observed: Vec<(f64, String)> = Vec::new();
    for b in crate::end_to_end::read_table(&out.join("specs")) {
        let ids = b.column_by_name("spec_id").unwrap();
        let ids = ids.as_any().downcast_ref::<StringArray>().unwrap();
        let mae = b.column_by_name("mae").unwrap();
        let mae = mae.as_any().downcast_ref::<Float64Array>().unwrap();
        for i in 0..mae.len() {
            observed.push((mae.value(i), ids.value(i).to_string()));
        }
    }
    assert_eq!(observed.len(), 3, "ridge x 2 alphas and one tree");
    assert!(observed.iter().all(|o| o.0.is_finite()));
    observed.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)));
    let sorted: Vec<f64> = observed.iter().map(|o| o.0).collect();
    let draws = read_draws(&out.join(NULL_DIR)).unwrap();
    assert_eq!(draws.len(), 4);
    for d in &draws {
        assert_eq!(d.metric, "mae");
        assert_eq!(d.n_ok, 3);
        assert_eq!(d.best_error, sorted[0], "draw {}", d.draw);
        assert_eq!(d.q1_error, type7(&sorted, 0.25), "draw {}", d.draw);
        assert_eq!(d.median_error, type7(&sorted, 0.5), "draw {}", d.draw);
        assert_eq!(d.q3_error, type7(&sorted, 0.75), "draw {}", d.draw);
        assert_eq!(d.best_spec.as_deref(), Some(observed[0].1.as_str()));
    }
}
