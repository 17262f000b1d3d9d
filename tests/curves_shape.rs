//! The curves' shape (engine/src/derived/curves/bend.rs): a breakpoint only when a hinge or a jump
//! beats a straight line by BIC (and departs from it by more than the flat tolerance); the
//! direction from the least-squares trend with `turns` for reversals; members whose pool
//! lacks the indicator are `absent`; duplicate fits are counted once.

use crate::common::normals;
use crate::curves::{fit_all, panel_of, prepared};
use forkmap::curves::compute::{compute, Settings};
use forkmap::curves::{bootstrap_breakpoint, choose, direction, ice, pd, Direction, Kind};
use ndarray::Array2;

fn grid20() -> Vec<f64> {
    (0..20).map(|i| i as f64 * 10.0 / 19.0).collect()
}

/// A planted step at 6.2 (between grid points 5.79 and 6.32): the jump is chosen, its
/// breakpoint lies within one grid spacing of the step, the jump size is the step's, and
/// the slopes either side are 0. With noise (sd 0.1 against a step of 3) it still lands
/// within one grid spacing. The continuous hinge alone would put its bend before the
/// step (its ramp starts early), which is why the jump is fitted too.
#[test]
fn a_planted_step_is_a_jump_within_one_grid_spacing() {
    let x = grid20();
    let dx = x[1] - x[0];
    let y: Vec<f64> = x.iter().map(|&v| if v > 6.2 { 4.0 } else { 1.0 }).collect();
    let s = choose(&x, &y, 0.05);
    assert_eq!(s.kind, Kind::Jump, "{s:?}");
    assert!((s.breakpoint - 6.2).abs() <= dx, "{s:?}");
    assert!((s.jump - 3.0).abs() < 1e-9, "{s:?}");
    assert!(
        s.slope_left.abs() < 1e-9 && s.slope_right.abs() < 1e-9,
        "{s:?}"
    );
    assert!(s.bic[2] < s.bic[0] && s.bic[2] < s.bic[1], "{s:?}");
    let e = normals(20, 31);
    let yn: Vec<f64> = y.iter().zip(&e).map(|(a, b)| a + 0.1 * b).collect();
    let sn = choose(&x, &yn, 0.05);
    assert_eq!(sn.kind, Kind::Jump, "{sn:?}");
    assert!((sn.breakpoint - 6.2).abs() <= dx, "{sn:?}");
    // A step on top of a slope (the discontinuous hinge) is a jump too.
    let ys: Vec<f64> = x
        .iter()
        .map(|&v| 0.3 * v + if v > 2.9 { 2.0 } else { 0.0 })
        .collect();
    let ss = choose(&x, &ys, 0.05);
    assert_eq!(ss.kind, Kind::Jump, "{ss:?}");
    assert!((ss.breakpoint - 2.9).abs() <= dx, "{ss:?}");
    assert!((ss.slope_left - 0.3).abs() < 1e-9 && (ss.slope_right - 0.3).abs() < 1e-9);
}

/// A straight line gives no breakpoint, exact or in at least 18 of 20 seeded repetitions
/// with noise of sd 0.4 x the flat tolerance (our numpy simulation of the rule put the
/// false-breakpoint rate at 2-6%); the line's slope is reported on both sides.
#[test]
fn a_straight_line_has_no_breakpoint() {
    let x = grid20();
    let y: Vec<f64> = x.iter().map(|&v| 3.0 - 0.8 * v).collect();
    let s = choose(&x, &y, 0.05);
    assert_eq!(s.kind, Kind::Line, "{s:?}");
    assert!(s.breakpoint.is_nan() && s.jump.is_nan());
    assert!((s.slope_left + 0.8).abs() < 1e-12 && s.slope_left == s.slope_right);
    let bent: Vec<String> = (0..20)
        .filter_map(|seed| {
            let e = normals(20, 100 + seed);
            let yn: Vec<f64> = y.iter().zip(&e).map(|(a, b)| a + 0.02 * b).collect();
            let sn = choose(&x, &yn, 0.05);
            (sn.kind != Kind::Line).then(|| format!("seed {seed}: {sn:?}"))
        })
        .collect();
    assert!(bent.len() <= 2, "{bent:?}");
    // A line on large values (a grid in the thousands, as degree days) stays a line.
    let xb: Vec<f64> = x.iter().map(|v| 1500.0 + 200.0 * v).collect();
    let yb: Vec<f64> = xb.iter().map(|v| 12.0 + 0.004 * v).collect();
    assert_eq!(choose(&xb, &yb, 0.3).kind, Kind::Line);
}

/// A flat curve (range within the tolerance, and an exactly constant one) has no fit at
/// all: no breakpoint, no slopes, no interval.
#[test]
fn a_flat_curve_has_no_breakpoint_and_no_slopes() {
    let x = grid20();
    for y in [
        vec![2.5; 20],
        x.iter().map(|v| 2.5 + 1e-14 * v).collect::<Vec<_>>(),
        x.iter().map(|v| 2.5 + 0.004 * v).collect::<Vec<_>>(),
    ] {
        let s = choose(&x, &y, 0.05);
        assert_eq!(s.kind, Kind::Flat, "{s:?}");
        assert!(s.breakpoint.is_nan() && s.slope_left.is_nan() && s.slope_right.is_nan());
        assert_eq!(direction(&x, &y, 0.05), Direction::Flat);
    }
}

/// A planted hinge is still a hinge (not a jump, not a line), at its plant: 6.3 lies
/// inside a gap of the grid, where the two separate lines meet exactly.
#[test]
fn a_planted_hinge_is_still_a_hinge() {
    let x = grid20();
    let y: Vec<f64> = x
        .iter()
        .map(|&v| 1.0 + 0.2 * v + 1.5 * (v - 6.3).max(0.0))
        .collect();
    let s = choose(&x, &y, 0.05);
    assert_eq!(s.kind, Kind::Hinge, "{s:?}");
    assert!((s.breakpoint - 6.3).abs() < 1e-9, "{s:?}");
    assert_eq!(s.jump, 0.0);
    assert!((s.slope_left - 0.2).abs() < 1e-9 && (s.slope_right - 1.7).abs() < 1e-9);
}

/// A bend smaller than the flat tolerance is not called a breakpoint (our own rule on top
/// of BIC): the same hinge scaled down to a bend of 0.02 against tol 0.05 is a line.
#[test]
fn a_bend_within_the_tolerance_is_a_line() {
    let x = grid20();
    let y: Vec<f64> = x
        .iter()
        .map(|&v| 1.0 + 0.2 * v + 0.01 * (v - 6.3).max(0.0))
        .collect();
    let s = choose(&x, &y, 0.05);
    assert_eq!(s.kind, Kind::Line, "{s:?}");
}

/// Direction: the least-squares trend decides rises/falls, a reversal beyond the
/// tolerance makes it `turns`, and the two ends alone do not decide.
#[test]
fn direction_uses_the_trend_and_reversals() {
    let x: Vec<f64> = (0..8).map(|i| i as f64).collect();
    let tol = 0.5;
    // Rises steadily: rises.
    assert_eq!(
        direction(&x, &[0., 1., 2., 3., 4., 5., 6., 7.], tol),
        Direction::Rises
    );
    // Falls with a small wiggle (0.3 < tol): falls.
    assert_eq!(
        direction(&x, &[7., 6., 5., 5.3, 4., 3., 2., 1.], tol),
        Direction::Falls
    );
    // Rises but drops by 2 midway (> tol): turns, though its end is far above its start.
    assert_eq!(
        direction(&x, &[0., 1., 3., 1., 2., 4., 5., 6.], tol),
        Direction::Turns
    );
    // A peak: ends equal, no overall trend: turns.
    assert_eq!(
        direction(&x, &[0., 2., 4., 6., 6., 4., 2., 0.], tol),
        Direction::Turns
    );
    // A first point 0.45 above the second (within tol), then a steady rise: rises.
    assert_eq!(
        direction(&x, &[0.45, 0., 0.4, 0.8, 1.2, 1.6, 2.0, 2.4], tol),
        Direction::Rises
    );
}

/// Through the whole pipeline: a depth-1 tree on an outcome stepping at x0 = 0.345 gives a
/// jump within one grid spacing of the step; OLS gives a line (no breakpoint). A `core`
/// pool without x0 makes its members `absent` for x0 (no shape, no subgroups, left out of
/// the shares); scale does not change a tree, so the `standardise` tree duplicates the
/// `none` tree's curve and is counted once.
#[test]
fn pipeline_jump_line_absent_and_duplicates() {
    let n = 100;
    let z = normals(n, 3);
    let x0: Vec<f64> = (0..n).map(|i| i as f64 / 100.0).collect();
    let x1: Vec<f64> = z.iter().map(|v| v * 0.1).collect();
    let y: Vec<f64> = x0
        .iter()
        .zip(&x1)
        .map(|(&v, &w)| if v < 0.345 { 1.0 } else { 6.0 } + 0.5 * w)
        .collect();
    let p = prepared(
        panel_of(y, &[x0, x1]),
        "[pools]\ncore = [\"x1\"]\n[choices]\npool = [\"all\", \"core\"]\nscale = [\"none\", \"standardise\"]\nmodel = [\"ols\", \"tree\"]\n[grid.tree]\ndepth = [1]\nmin_leaf = [1]\n",
    );
    let labels: Vec<String> = p.space.specs.iter().map(|s| s.label()).collect();
    let find = |pool: &str, scale: &str, model: &str| {
        labels
            .iter()
            .position(|l| {
                l.contains(&format!("pool={pool}"))
                    && l.contains(&format!("scale={scale}"))
                    && l.contains(&format!("model={model}"))
            })
            .unwrap_or_else(|| panic!("{pool}/{scale}/{model} in {labels:?}"))
    };
    let tree = find("all", "none", "tree");
    let tree_std = find("all", "standardise", "tree");
    let ols = find("all", "none", "ols");
    let core = find("core", "none", "ols");
    let specs = vec![tree, tree_std, ols, core];
    let s = Settings {
        grid: 20,
        resamples: 40,
        ..Default::default()
    };
    let out = compute(&p, &specs, &[tree, core], &[0], &s).unwrap();
    let of = |si: usize| out.curves.iter().find(|c| c.spec == si).unwrap();
    let grid = &of(tree).grid;
    let dx = grid.windows(2).map(|w| w[1] - w[0]).fold(0.0, f64::max);
    let t = of(tree);
    assert_eq!(t.shape.kind, Kind::Jump, "{:?}", t.shape);
    assert!((t.shape.breakpoint - 0.345).abs() <= dx, "{:?}", t.shape);
    assert!(
        t.interval.draws == 40 && t.interval.kept > 0.9,
        "{:?}",
        t.interval
    );
    let (g, _) = t.groups.as_ref().expect("the detailed tree has subgroups");
    assert_eq!(t.cluster_shapes.len(), g.k);
    // One cluster here (every unit's curve is the same step): its shape is the member's.
    if g.k == 1 {
        assert_eq!(t.cluster_shapes[0].kind, Kind::Jump);
        assert_eq!(t.cluster_shapes[0].breakpoint, t.shape.breakpoint);
    }
    assert_eq!(of(ols).shape.kind, Kind::Line, "{:?}", of(ols).shape);
    assert!(of(ols).shape.breakpoint.is_nan() && of(ols).interval.draws == 0);
    let c = of(core);
    assert_eq!(c.direction, Direction::Absent);
    assert_eq!(c.shape.kind, Kind::Absent);
    assert!(c.groups.is_none(), "no subgroups for an absent indicator");
    assert_eq!(
        of(tree_std).same_as,
        Some(tree),
        "standardise does not change a tree"
    );
    assert_eq!(of(tree).same_as, None);
    let b = &out.bands[0];
    assert_eq!((b.members, b.holding, b.distinct), (4, 3, 2));
    // Shares over the 2 distinct curves (both rise): none flat, though the absent member
    // is exactly flat.
    assert!((b.band.rises - 1.0).abs() < 1e-12, "{:?}", b.band);
    assert_eq!(b.band.flat, 0.0);
}

/// The unit-composition range re-selects the shape per resample: when only 4 of 40 units
/// carry a step and the rest are flat, the resamples that draw few of the 4 lose the jump
/// (the share that keep it is below 1) and the range is over those that keep it.
#[test]
fn the_composition_range_reselects_the_shape() {
    let grid = grid20();
    let nu = 40;
    let z = normals(nu * 20, 5);
    let mut m = Array2::zeros((nu, 20));
    for u in 0..nu {
        for (j, &g) in grid.iter().enumerate() {
            let step = if u < 4 && g > 5.0 { 1.0 } else { 0.0 };
            m[[u, j]] = step + 0.01 * z[u * 20 + j];
        }
    }
    let row_unit: Vec<usize> = (0..nu).collect();
    let curve = pd(&m);
    let tol = 0.05;
    let s = choose(&grid, &curve, tol);
    assert_eq!(s.kind, Kind::Jump, "{s:?}");
    let c = bootstrap_breakpoint(&grid, &m, &row_unit, nu, 200, 3, 0.9, tol, Kind::Jump);
    assert_eq!(c.draws, 200);
    assert!(c.kept > 0.5 && c.kept < 1.0, "{c:?}");
    assert!(c.lo <= s.breakpoint && s.breakpoint <= c.hi, "{c:?} {s:?}");
    let _ = (ice, fit_all);
}

/// The sign claims: over the distinct curves of the members holding the indicator, with
/// the counts in words; none for an indicator no member holds; marked, with no
/// `support_good`, when the curves' members come from another good-set rule.
#[test]
fn sign_claims_count_holding_distinct_curves_and_mark_another_rule() {
    use forkmap::report::conclusions::signs;
    use forkmap::report::shape::{Shape, ShapeIndicator};
    let held = ShapeIndicator {
        name: "a".into(),
        members: 20,
        holding: 12,
        distinct: 6,
        falls: 1.0,
        ..Default::default()
    };
    let none = ShapeIndicator {
        name: "b".into(),
        members: 20,
        ..Default::default()
    };
    let sh = Shape {
        rule: "ratio: mae <= (1 + 0.05) x best".into(),
        good: "ratio".into(),
        members: 20,
        indicators: vec![held, none],
        ..Default::default()
    };
    let c = signs(&sh, None);
    assert_eq!(c.len(), 1, "no claim for an indicator no member holds");
    let st = &c[0].statement;
    assert!(
        st.contains("a falls overall in 100% of 6 distinct curves"),
        "{st}"
    );
    assert!(st.contains("12 of 20 members"), "{st}");
    assert_eq!((c[0].support_good, c[0].n_good), (1.0, 6));
    let m = signs(&sh, Some("margin"));
    assert!(
        m[0].statement.contains("not this report's margin good set"),
        "{}",
        m[0].statement
    );
    assert!(m[0].support_good.is_nan() && m[0].n_good == 0);
}
