//! Curves through the whole pipeline (engine/src/derived/curves): ICE/PD of OLS against the
//! model's own slope (by hand, through standardise and PCA), step-shaped ICE of a single
//! tree at the planted threshold, hinge recovery, the unit bootstrap, silhouette on a
//! worked example, planted subgroups, departing units, and thread-count determinism.
#![allow(clippy::needless_range_loop)]

use crate::common::normals;
use forkmap::config::Config;
use forkmap::curves::compute::{compute, unit_groups, Settings};
use forkmap::curves::{
    bootstrap_breakpoint, centred, choose, direction, fit_hinge, ice, pd, quantile_grid,
    silhouette, subgroups, Direction, Kind,
};
use forkmap::folds::{Fold, FoldPlan};
use forkmap::panel::Panel;
use forkmap::space::ChoiceSpace;
use forkmap::sweep::{FittedSpec, Sweep};
use ndarray::{Array1, Array2};
use std::path::{Path, PathBuf};

pub(crate) fn panel_of(y: Vec<f64>, cols: &[Vec<f64>]) -> Panel {
    let n = y.len();
    let mut x = Array2::zeros((n, cols.len()));
    for (j, c) in cols.iter().enumerate() {
        for i in 0..n {
            x[[i, j]] = c[i];
        }
    }
    Panel::new(
        (0..n).map(|i| format!("u{i}")).collect(),
        vec![None; n],
        Array1::from(y),
        x,
        (0..cols.len()).map(|j| format!("x{j}")).collect(),
    )
    .unwrap()
}

pub(crate) fn prepared(panel: Panel, choices: &str) -> forkmap::run::Prepared {
    let text = format!("seed = 5\n[data]\nfile = \"unused.csv\"\nunit = \"u\"\noutcome = \"y\"\n[folds]\nk = 5\n{choices}");
    let cfg = Config::from_toml(&text, Path::new("."), "<test>").unwrap();
    let space = ChoiceSpace::build(&cfg, &panel).unwrap();
    let folds = FoldPlan::new(&panel, &cfg.folds, cfg.seed).unwrap();
    forkmap::run::Prepared {
        cfg,
        panel,
        space,
        folds,
        data_path: PathBuf::new(),
        codebook_sha256: None,
    }
}

/// Fit spec `si` on all rows (one fold holding every row for training).
pub(crate) fn fit_all(p: &forkmap::run::Prepared, si: usize) -> FittedSpec {
    let n = p.panel.n_rows();
    let plan = FoldPlan {
        folds: vec![Fold {
            repeat: 0,
            index: 0,
            train: (0..n).collect(),
            test: Vec::new(),
        }],
        repeats: 1,
        k: 1,
    };
    let s = Sweep::new(&p.panel, &p.space, &plan, 5, Some(&[si])).unwrap();
    s.fit_spec(si, 0).unwrap()
}

/// Solve a small dense system by Gaussian elimination (test-only).
fn solve(mut a: Vec<Vec<f64>>, mut b: Vec<f64>) -> Vec<f64> {
    let n = b.len();
    for k in 0..n {
        let p = (k..n)
            .max_by(|&i, &j| a[i][k].abs().total_cmp(&a[j][k].abs()))
            .unwrap();
        a.swap(k, p);
        b.swap(k, p);
        for i in k + 1..n {
            let f = a[i][k] / a[k][k];
            for j in k..n {
                a[i][j] -= f * a[k][j];
            }
            b[i] -= f * b[k];
        }
    }
    let mut z = vec![0.0; n];
    for k in (0..n).rev() {
        let s: f64 = (k + 1..n).map(|j| a[k][j] * z[j]).sum();
        z[k] = (b[k] - s) / a[k][k];
    }
    z
}

/// For OLS the PD (and every ICE curve) is a line whose slope is the model's coefficient
/// on the raw indicator: here the least-squares coefficient of x0 in y ~ 1 + x0 + x1,
/// computed by hand from the normal equations. Holds with no scaling, through
/// standardise, and through PCA keeping both components (a rotation of the standardised
/// columns, so the fit and its raw-scale slope are the same).
#[test]
fn ols_partial_dependence_is_the_raw_slope() {
    let n = 150;
    let z = normals(3 * n, 11);
    let x0: Vec<f64> = (0..n).map(|i| 10.0 + 4.0 * z[i]).collect();
    let x1: Vec<f64> = (0..n).map(|i| 0.6 * z[i] + 0.8 * z[n + i]).collect();
    let y: Vec<f64> = (0..n)
        .map(|i| 1.0 + 0.7 * x0[i] - 2.0 * x1[i] + 0.5 * z[2 * n + i])
        .collect();
    // Hand OLS.
    let f = |i: usize| [1.0, x0[i], x1[i]];
    let mut a = vec![vec![0.0; 3]; 3];
    let mut b = vec![0.0; 3];
    for i in 0..n {
        let r = f(i);
        for j in 0..3 {
            for k in 0..3 {
                a[j][k] += r[j] * r[k];
            }
            b[j] += r[j] * y[i];
        }
    }
    let beta = solve(a, b);
    let p = prepared(
        panel_of(y, &[x0.clone(), x1]),
        "[choices]\nscale = [\"none\", \"standardise\"]\ncompress = [\"none\", \"pca\"]\nmodel = [\"ols\"]\n[grid.pca]\nk = [2]\n",
    );
    let labels: Vec<String> = p.space.specs.iter().map(|s| s.label()).collect();
    assert!(labels.iter().any(|l| l.contains("pca")), "{labels:?}");
    assert!(
        labels.iter().any(|l| l.contains("standardise")),
        "{labels:?}"
    );
    let grid = quantile_grid(p.panel.x.column(0), 12);
    assert_eq!(grid.len(), 12);
    let rows: Vec<usize> = (0..n).collect();
    for si in 0..p.space.specs.len() {
        let fit = fit_all(&p, si);
        let m = ice(&fit, p.panel.x.view(), &rows, 0, &grid);
        let curve = pd(&m);
        for j in 1..grid.len() {
            let slope = (curve[j] - curve[0]) / (grid[j] - grid[0]);
            assert!(
                (slope - beta[1]).abs() < 1e-8 * beta[1].abs().max(1.0),
                "{}: PD slope {slope} vs OLS {}",
                labels[si],
                beta[1]
            );
            for r in [0, 7, n - 1] {
                let s = (m[[r, j]] - m[[r, 0]]) / (grid[j] - grid[0]);
                assert!((s - beta[1]).abs() < 1e-8, "{}: ICE row {r}", labels[si]);
            }
        }
        // Centred ICE of a linear model: every row's curve is the same.
        let c = centred(&m);
        for r in 1..n {
            assert!((c[[r, 5]] - c[[0, 5]]).abs() < 1e-8);
        }
        assert_eq!(direction(&grid, &curve, 0.01), Direction::Rises);
    }
}

/// Through a compression that loses information (PCA keeping 1 of 2 standardised
/// columns), the raw-scale PD slope is gamma x v0 / sd0: gamma the least-squares slope of y
/// on the first component's score, v0 the component's weight on x0 (for two standardised
/// columns with correlation r > 0 the first component is (1, 1) / sqrt 2, by hand), sd0
/// the population sd of x0. Differs from the full OLS slope, so a skipped compression fails.
#[test]
fn ols_partial_dependence_through_one_component() {
    let n = 150;
    let z = normals(3 * n, 12);
    let x0: Vec<f64> = (0..n).map(|i| 10.0 + 4.0 * z[i]).collect();
    let x1: Vec<f64> = (0..n).map(|i| 0.6 * z[i] + 0.8 * z[n + i]).collect();
    let y: Vec<f64> = (0..n)
        .map(|i| 1.0 + 0.7 * x0[i] - 2.0 * x1[i] + 0.5 * z[2 * n + i])
        .collect();
    let mean = |v: &[f64]| v.iter().sum::<f64>() / v.len() as f64;
    let sd = |v: &[f64]| {
        let m = mean(v);
        (v.iter().map(|x| (x - m) * (x - m)).sum::<f64>() / v.len() as f64).sqrt()
    };
    let (m0, s0, m1, s1) = (mean(&x0), sd(&x0), mean(&x1), sd(&x1));
    let r: f64 = (0..n)
        .map(|i| (x0[i] - m0) / s0 * (x1[i] - m1) / s1)
        .sum::<f64>()
        / n as f64;
    assert!(r > 0.3, "the columns are positively correlated: {r}");
    let h = std::f64::consts::FRAC_1_SQRT_2;
    let t: Vec<f64> = (0..n)
        .map(|i| h * (x0[i] - m0) / s0 + h * (x1[i] - m1) / s1)
        .collect();
    let (mt, my) = (mean(&t), mean(&y));
    let gamma = (0..n).map(|i| (t[i] - mt) * (y[i] - my)).sum::<f64>()
        / (0..n).map(|i| (t[i] - mt) * (t[i] - mt)).sum::<f64>();
    let want = gamma * h / s0;
    let p = prepared(
        panel_of(y, &[x0.clone(), x1]),
        "[choices]\nscale = [\"standardise\"]\ncompress = [\"pca\"]\nmodel = [\"ols\"]\n[grid.pca]\nk = [1]\n",
    );
    assert_eq!(p.space.specs.len(), 1);
    let grid = quantile_grid(p.panel.x.column(0), 12);
    let rows: Vec<usize> = (0..n).collect();
    let curve = pd(&ice(&fit_all(&p, 0), p.panel.x.view(), &rows, 0, &grid));
    for j in 1..grid.len() {
        let slope = (curve[j] - curve[0]) / (grid[j] - grid[0]);
        assert!(
            (slope - want).abs() < 1e-8 * want.abs().max(1.0),
            "PD slope {slope} vs one-component slope {want}"
        );
    }
    // Not the full OLS slope (about 0.7 here): the compression is applied.
    assert!((want - 0.7).abs() > 0.1, "{want}");
}

/// A depth-1 tree on an outcome that jumps at x0 = 0.345 (between observed 0.34 and 0.35):
/// every ICE curve is a step function with two levels, low below the split and high above.
#[test]
fn single_tree_ice_are_steps_at_the_threshold() {
    let n = 100;
    let z = normals(n, 3);
    let x0: Vec<f64> = (0..n).map(|i| i as f64 / 100.0).collect();
    let x1: Vec<f64> = z.iter().map(|v| v * 0.1).collect();
    let y: Vec<f64> = x0
        .iter()
        .map(|&v| if v < 0.345 { 1.0 } else { 6.0 })
        .collect();
    let p = prepared(
        panel_of(y, &[x0, x1]),
        "[choices]\nmodel = [\"tree\"]\n[grid.tree]\ndepth = [1]\nmin_leaf = [1]\n",
    );
    assert_eq!(p.space.specs.len(), 1, "one spec");
    let fit = fit_all(&p, 0);
    let grid = quantile_grid(p.panel.x.column(0), 30);
    let rows: Vec<usize> = (0..n).collect();
    let m = ice(&fit, p.panel.x.view(), &rows, 0, &grid);
    for r in 0..n {
        for (j, &g) in grid.iter().enumerate() {
            let want = if g < 0.345 { 1.0 } else { 6.0 };
            assert!(
                (m[[r, j]] - want).abs() < 1e-9,
                "row {r} at {g}: {} vs {want}",
                m[[r, j]]
            );
        }
    }
    let curve = pd(&m);
    let steps = curve.windows(2).filter(|w| w[0] != w[1]).count();
    assert_eq!(steps, 1, "one step: {curve:?}");
}

/// A planted hinge is recovered: noise-free within the search step (range/199 of the
/// inner grid, here 0.043) and slopes to 1e-6; with noise (sd 0.05) within one grid
/// spacing (0.53).
#[test]
fn hinge_recovers_a_planted_breakpoint() {
    let x: Vec<f64> = (0..20).map(|i| i as f64 * 10.0 / 19.0).collect();
    let truth = |v: f64| 1.0 + 0.2 * v + 1.5 * (v - 6.3).max(0.0);
    let y: Vec<f64> = x.iter().map(|&v| truth(v)).collect();
    let h = fit_hinge(&x, &y).unwrap();
    let step = (x[18] - x[1]) / 199.0;
    assert!((h.breakpoint - 6.3).abs() <= step, "{h:?}");
    assert!((h.slope_left - 0.2).abs() < 0.02, "{h:?}");
    assert!((h.slope_right - 1.7).abs() < 0.02, "{h:?}");
    let e = normals(20, 8);
    let yn: Vec<f64> = y.iter().zip(&e).map(|(a, b)| a + 0.05 * b).collect();
    let hn = fit_hinge(&x, &yn).unwrap();
    assert!((hn.breakpoint - 6.3).abs() < x[1], "{hn:?}");
    assert!(fit_hinge(&x[..3], &y[..3]).is_none());
}

/// Unit curves with a shared hinge at 5 plus unit noise: the bootstrap interval covers 5,
/// is narrower than the inner grid, and is the same for the same seed.
#[test]
fn bootstrap_interval_covers_the_breakpoint_and_is_seeded() {
    let grid: Vec<f64> = (0..16).map(|i| i as f64 * 10.0 / 15.0).collect();
    let nu = 40;
    let z = normals(nu * 16 * 2, 21);
    let mut m = Array2::zeros((nu * 2, 16));
    let mut row_unit = Vec::new();
    for r in 0..nu * 2 {
        row_unit.push(r / 2);
        for (j, &g) in grid.iter().enumerate() {
            m[[r, j]] = 2.0 + 0.1 * g + 0.8 * (g - 5.0f64).max(0.0) + 0.2 * z[r * 16 + j];
        }
    }
    let pd0 = pd(&m);
    let shape = choose(&grid, &pd0, 0.05);
    assert_eq!(shape.kind, Kind::Hinge, "{shape:?}");
    let a = bootstrap_breakpoint(&grid, &m, &row_unit, nu, 100, 7, 0.9, 0.05, Kind::Hinge);
    let b = bootstrap_breakpoint(&grid, &m, &row_unit, nu, 100, 7, 0.9, 0.05, Kind::Hinge);
    assert_eq!(a, b);
    assert_eq!(a.draws, 100);
    assert!(a.kept > 0.9, "{a:?}");
    assert!(a.lo <= 5.0 && 5.0 <= a.hi, "{a:?}");
    assert!(a.hi - a.lo < 2.0, "{a:?}");
}

/// Silhouette on a worked example from its definition (Rousseeuw 1987: s = (b - a) /
/// max(a, b), a = mean distance within the own cluster, b = least mean distance to
/// another): points 0, 1 | 10, 11 on a line: the outer points score 9.5/10.5, the
/// inner ones 8.5/9.5.
#[test]
fn silhouette_matches_a_worked_example() {
    let x = Array2::from_shape_vec((4, 1), vec![0.0, 1.0, 10.0, 11.0]).unwrap();
    let s = silhouette(x.view(), &[0, 0, 1, 1]);
    assert!((s - (9.5 / 10.5 + 8.5 / 9.5) / 2.0).abs() < 1e-12, "{s}");
    // A singleton scores 0 (as in scikit-learn's convention, recalled from memory).
    let y = Array2::from_shape_vec((3, 1), vec![0.0, 4.0, 5.0]).unwrap();
    let s = silhouette(y.view(), &[0, 1, 1]);
    // point 0: 0 (singleton); point 4: a=1, b=4 -> 0.75; point 5: a=1, b=5 -> 0.8.
    assert!((s - (0.0 + 0.75 + 0.8) / 3.0).abs() < 1e-12, "{s}");
    assert!(silhouette(y.view(), &[0, 0, 0]).is_nan());
}

fn hinge_row(g: f64, t: f64) -> f64 {
    0.1 * g + 1.2 * (g - t).max(0.0)
}

/// Two planted subgroups (units whose curve bends at 3, and at 7) are separated by the
/// clustering (k = 2 by the gap statistic, labels match the plant), each cluster's own breakpoint is near its
/// plant (within one grid spacing), and no unit departs.
#[test]
fn planted_subgroups_are_separated() {
    let grid: Vec<f64> = (0..21).map(|i| i as f64 * 0.5).collect();
    let nu = 30;
    let z = normals(nu * 21, 4);
    let mut m = Array2::zeros((nu, 21));
    for u in 0..nu {
        let t = if u % 2 == 0 { 3.0 } else { 7.0 };
        for (j, &g) in grid.iter().enumerate() {
            m[[u, j]] = 5.0 + hinge_row(g, t) + 0.05 * z[u * 21 + j];
        }
    }
    let row_unit: Vec<usize> = (0..nu).collect();
    let (sg, hs) = unit_groups(&m, &row_unit, nu, &grid, 1);
    assert_eq!(sg.k, 2, "{:?}", sg.gap.points);
    assert!(sg.silhouette >= 0.5);
    for u in 0..nu {
        assert_eq!(sg.labels[u] == sg.labels[0], u % 2 == 0, "unit {u}");
    }
    let even = sg.labels[0];
    let h_even = hs[even].unwrap();
    let h_odd = hs[1 - even].unwrap();
    assert!((h_even.breakpoint - 3.0).abs() < 0.5, "{h_even:?}");
    assert!((h_odd.breakpoint - 7.0).abs() < 0.5, "{h_odd:?}");
    assert!(sg.departs.iter().all(|d| !d));
}

/// One group plus one unit whose curve falls instead of rises: only that unit is flagged
/// as departing.
#[test]
fn a_departing_unit_is_flagged() {
    let grid: Vec<f64> = (0..11).map(|i| i as f64).collect();
    let nu = 25;
    let z = normals(nu * 11, 9);
    let mut c = Array2::zeros((nu, 11));
    for u in 0..nu {
        for (j, &g) in grid.iter().enumerate() {
            let base = if u == 13 { -0.5 * g } else { 0.3 * g };
            c[[u, j]] = base + 0.05 * z[u * 11 + j];
        }
        let a = c[[u, 0]];
        c.row_mut(u).mapv_inplace(|v| v - a);
    }
    let sg = subgroups(c.view(), 2);
    let flagged: Vec<usize> = (0..nu).filter(|&u| sg.departs[u]).collect();
    assert_eq!(
        flagged,
        vec![13],
        "bound {} distances {:?}",
        sg.bound,
        sg.distance
    );
}

/// The whole pass over several specs gives the same numbers with 1 and 2 threads; the
/// band of a set of OLS/ridge specs on a rising indicator says "rises" for all.
#[test]
fn compute_is_deterministic_across_threads() {
    let n = 80;
    let z = normals(3 * n, 5);
    let x0: Vec<f64> = (0..n).map(|i| z[i]).collect();
    let x1: Vec<f64> = (0..n).map(|i| z[n + i]).collect();
    let y: Vec<f64> = (0..n)
        .map(|i| 2.0 * x0[i] + (x1[i] - 0.3).max(0.0) + 0.3 * z[2 * n + i])
        .collect();
    let p = prepared(
        panel_of(y, &[x0, x1]),
        "[choices]\nmodel = [\"ols\", \"ridge\", \"tree\"]\n[grid.ridge]\nalpha = [1.0, 10.0]\n",
    );
    let specs: Vec<usize> = (0..p.space.specs.len()).collect();
    let s = Settings {
        grid: 10,
        resamples: 30,
        ..Default::default()
    };
    let run = |threads: usize| {
        let pool = rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap();
        pool.install(|| compute(&p, &specs, &[0], &[0, 1], &s))
            .unwrap()
    };
    let (a, b) = (run(1), run(2));
    assert_eq!(a.curves.len(), specs.len() * 2);
    for (ca, cb) in a.curves.iter().zip(&b.curves) {
        assert_eq!(ca.spec, cb.spec);
        assert_eq!(ca.pd, cb.pd);
        assert_eq!(format!("{:?}", ca.shape), format!("{:?}", cb.shape));
        assert_eq!(format!("{:?}", ca.interval), format!("{:?}", cb.interval));
        assert_eq!(ca.ice, cb.ice);
        assert_eq!(
            ca.groups.as_ref().map(|g| &g.0.labels),
            cb.groups.as_ref().map(|g| &g.0.labels)
        );
    }
    let band0 = &a.bands[0].band;
    assert!((band0.rises - 1.0).abs() < 1e-12, "{band0:?}");
    assert!(a.curves.iter().filter(|c| c.ice.is_some()).count() == 2);
}

/// The tables land whole in RUN_DIR/curves (no hidden folder left), are replaced on a
/// second write, and hold one breakpoints row per (spec, indicator) and one ICE row per
/// (detail spec, indicator, row, grid point).
#[test]
fn tables_are_written_whole_and_replaced() {
    use parquet::arrow::arrow_reader::ParquetRecordBatchReaderBuilder;
    let n = 40;
    let z = normals(2 * n, 6);
    let x0: Vec<f64> = z[..n].to_vec();
    let y: Vec<f64> = (0..n).map(|i| x0[i] + 0.2 * z[n + i]).collect();
    let p = prepared(panel_of(y, &[x0]), "[choices]\nmodel = [\"ols\"]\n");
    let s = Settings {
        grid: 8,
        resamples: 10,
        ..Default::default()
    };
    let out = compute(&p, &[0], &[0], &[0], &s).unwrap();
    let run = tempfile::tempdir().unwrap();
    let ids: Vec<String> = p.space.specs.iter().map(|s| s.id.clone()).collect();
    let rows = |name: &str| -> usize {
        let f = std::fs::File::open(run.path().join("curves").join(name)).unwrap();
        ParquetRecordBatchReaderBuilder::try_new(f)
            .unwrap()
            .build()
            .unwrap()
            .map(|b| b.unwrap().num_rows())
            .sum()
    };
    for _ in 0..2 {
        forkmap::curves::table::write(
            &out,
            &p.panel,
            &ids,
            0.9,
            &serde_json::json!({}),
            run.path(),
        )
        .unwrap();
        let names: Vec<String> = std::fs::read_dir(run.path())
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().to_string())
            .collect();
        assert_eq!(names, vec!["curves".to_string()], "{names:?}");
        assert_eq!(rows("breakpoints.parquet"), 1);
        assert_eq!(rows("ice.parquet"), n * 8);
        assert_eq!(rows("pd.parquet"), 8);
        assert_eq!(rows("clusters.parquet"), n);
        assert_eq!(rows("signs.parquet"), 1);
    }
}
