//! Curves for chosen specs and indicators of a prepared run: each spec is fitted on all
//! rows (one fold whose training rows are every row), then ICE, PD, hinge, band and
//! subgroups as in the sibling modules. Specs are processed in parallel (rayon) and
//! gathered in input order, so results do not depend on the thread count.

use super::bend::{choose, Kind, Shape};
use super::hinge::Composition;
use super::{
    band, bootstrap_breakpoint, centred, direction, fit_hinge, ice, pd, quantile_grid, Direction,
};
use crate::choices::prepared::Prepared;
use crate::error::{Error, Result};
use crate::folds::{Fold, FoldPlan};
use crate::sweep::Sweep;
use ndarray::Array2;
use rayon::prelude::*;

/// Settings of a curves pass.
#[derive(Debug, Clone)]
pub struct Settings {
    /// Grid points (observed quantiles) per indicator.
    pub grid: usize,
    /// Unit-bootstrap resamples for the breakpoint interval.
    pub resamples: usize,
    /// Level of the breakpoint interval and of the band (e.g. 0.9).
    pub level: f64,
    /// Flatness tolerance as a share of the outcome's standard deviation.
    pub flat_share: f64,
    pub seed: u64,
}

impl Default for Settings {
    fn default() -> Self {
        Settings {
            grid: 20,
            resamples: 200,
            level: 0.9,
            flat_share: 0.05,
            seed: 0,
        }
    }
}

/// One spec's results on one indicator.
pub struct SpecCurve {
    pub spec: usize,
    pub indicator: usize,
    pub grid: Vec<f64>,
    /// ICE (rows x grid); kept only for specs asked for in detail.
    pub ice: Option<Array2<f64>>,
    pub pd: Vec<f64>,
    pub direction: Direction,
    /// The chosen shape (line, hinge, jump, flat; absent when the pool lacks the indicator).
    pub shape: Shape,
    /// Unit-composition interval of the breakpoint (model held fixed; none without one).
    pub interval: Composition,
    /// The first earlier member (spec index) holding the indicator whose PD is the same
    /// curve (equal within 1e-12 relative at every grid point), if any: a duplicate fit.
    pub same_as: Option<usize>,
    /// Subgroups of units (only with ICE kept) and each cluster's own hinge.
    pub groups: Option<(super::Subgroups, Vec<Option<super::Hinge>>)>,
    /// Each subgroup's own shape, chosen like the member's (empty without subgroups).
    pub cluster_shapes: Vec<Shape>,
}

/// The whole pass.
pub struct Output {
    pub tol: f64,
    pub curves: Vec<SpecCurve>,
    /// Band per indicator over the distinct curves of the members holding it.
    pub bands: Vec<IndicatorBand>,
}

/// One indicator's band and counts.
pub struct IndicatorBand {
    pub indicator: usize,
    pub grid: Vec<f64>,
    pub band: super::Band,
    /// Members (all), those whose pool holds the indicator, and the distinct curves among
    /// the latter (the band and the shares are over these).
    pub members: usize,
    pub holding: usize,
    pub distinct: usize,
}

/// Whether spec `si`'s pool holds panel column `c` (a screening pool chooses its columns
/// when fitted, so it counts as holding every indicator).
pub fn pool_holds(p: &Prepared, si: usize, c: usize) -> bool {
    p.space.specs[si]
        .choice(crate::decl::Dim::Pool)
        .members
        .as_deref()
        .is_none_or(|m| m.contains(&c))
}

/// Two PD curves are the same fit's when equal within 1e-12 relative at every point.
fn same_curve(a: &[f64], b: &[f64]) -> bool {
    a.len() == b.len()
        && a.iter()
            .zip(b)
            .all(|(x, y)| (x - y).abs() <= 1e-12 * x.abs().max(y.abs()).max(1.0))
}

fn sd(v: &[f64]) -> f64 {
    let n = v.len() as f64;
    if n < 2.0 {
        return 0.0;
    }
    let m = v.iter().sum::<f64>() / n;
    (v.iter().map(|x| (x - m) * (x - m)).sum::<f64>() / (n - 1.0)).sqrt()
}

/// Compute curves of `specs` (indices into the space) on `indicators` (panel columns);
/// specs listed in `detail` keep their ICE rows and get subgroups.
pub fn compute(
    p: &Prepared,
    specs: &[usize],
    detail: &[usize],
    indicators: &[usize],
    s: &Settings,
) -> Result<Output> {
    let panel = &p.panel;
    let n = panel.n_rows();
    let all: Vec<usize> = (0..n).collect();
    let plan = FoldPlan {
        folds: vec![Fold {
            repeat: 0,
            index: 0,
            train: all.clone(),
            test: Vec::new(),
        }],
        repeats: 1,
        k: 1,
    };
    let tol = s.flat_share * sd(panel.y.as_slice().unwrap_or(&[]));
    let grids: Vec<Vec<f64>> = indicators
        .iter()
        .map(|&c| quantile_grid(panel.x.column(c), s.grid))
        .collect();
    let per_spec: Vec<Result<Vec<SpecCurve>>> = specs
        .par_iter()
        .map(|&si| {
            let sweep = Sweep::new(panel, &p.space, &plan, p.cfg.seed, Some(&[si]))?;
            let fitted = sweep.fit_spec(si, 0).map_err(|e| {
                Error::Space(format!(
                    "curves: spec {} failed to fit on all rows: {e}",
                    p.space.specs[si].id
                ))
            })?;
            let keep = detail.contains(&si);
            let mut out = Vec::new();
            for (k, &c) in indicators.iter().enumerate() {
                let grid = &grids[k];
                let m = ice(&fitted, panel.x.view(), &all, c, grid);
                let curve = pd(&m);
                let holds = pool_holds(p, si, c);
                let dirn = if holds {
                    direction(grid, &curve, tol)
                } else {
                    Direction::Absent
                };
                let shape = if holds {
                    choose(grid, &curve, tol)
                } else {
                    Shape::none(Kind::Absent)
                };
                let interval = if shape.kind.bends() {
                    bootstrap_breakpoint(
                        grid,
                        &m,
                        &panel.row_unit,
                        panel.n_units(),
                        s.resamples,
                        s.seed,
                        s.level,
                        tol,
                        shape.kind,
                    )
                } else {
                    Composition::none()
                };
                let groups = (keep && holds)
                    .then(|| unit_groups(&m, &panel.row_unit, panel.n_units(), grid, s.seed));
                let cluster_shapes = groups.as_ref().map_or(Vec::new(), |(g, _)| {
                    cluster_shapes(&m, &panel.row_unit, &g.labels, g.k, grid, tol)
                });
                out.push(SpecCurve {
                    spec: si,
                    indicator: c,
                    grid: grid.clone(),
                    direction: dirn,
                    ice: keep.then_some(m),
                    pd: curve,
                    shape,
                    interval,
                    same_as: None,
                    groups,
                    cluster_shapes,
                });
            }
            Ok(out)
        })
        .collect();
    let mut curves = Vec::new();
    for r in per_spec {
        curves.extend(r?);
    }
    // Duplicate fits: a holding member whose PD equals an earlier holding member's.
    for i in 0..curves.len() {
        if curves[i].direction == Direction::Absent {
            continue;
        }
        let (earlier, rest) = curves.split_at_mut(i);
        let me = &mut rest[0];
        me.same_as = earlier
            .iter()
            .find(|o| {
                o.indicator == me.indicator
                    && o.direction != Direction::Absent
                    && o.same_as.is_none()
                    && same_curve(&o.pd, &me.pd)
            })
            .map(|o| o.spec);
    }
    let a = (1.0 - s.level) / 2.0;
    let bands = indicators
        .iter()
        .enumerate()
        .map(|(k, &c)| {
            let of: Vec<&SpecCurve> = curves.iter().filter(|sc| sc.indicator == c).collect();
            let holding = of
                .iter()
                .filter(|sc| sc.direction != Direction::Absent)
                .count();
            let pds: Vec<Vec<f64>> = of
                .iter()
                .filter(|sc| sc.direction != Direction::Absent && sc.same_as.is_none())
                .map(|sc| sc.pd.clone())
                .collect();
            IndicatorBand {
                indicator: c,
                grid: grids[k].clone(),
                band: band(&grids[k], &pds, a, 1.0 - a, tol),
                members: of.len(),
                holding,
                distinct: pds.len(),
            }
        })
        .collect();
    Ok(Output { tol, curves, bands })
}

/// Per-unit mean centred ICE curves, their subgroups, and each cluster's hinge (fitted to
/// the mean uncentred curve of its units' rows).
pub fn unit_groups(
    m: &Array2<f64>,
    row_unit: &[usize],
    n_units: usize,
    grid: &[f64],
    seed: u64,
) -> (super::Subgroups, Vec<Option<super::Hinge>>) {
    let c = centred(m);
    let g = grid.len();
    let mut uc = Array2::<f64>::zeros((n_units, g));
    let mut cnt = vec![0.0f64; n_units];
    for (r, &u) in row_unit.iter().enumerate() {
        cnt[u] += 1.0;
        for j in 0..g {
            uc[[u, j]] += c[[r, j]];
        }
    }
    for (u, &cu) in cnt.iter().enumerate() {
        let d = cu.max(1.0);
        uc.row_mut(u).mapv_inplace(|v| v / d);
    }
    let sg = super::subgroups(uc.view(), seed);
    let hinges = (0..sg.k)
        .map(|k| {
            let rows: Vec<usize> = (0..row_unit.len())
                .filter(|&r| sg.labels[row_unit[r]] == k)
                .collect();
            if rows.is_empty() {
                return None;
            }
            let sub = m.select(ndarray::Axis(0), &rows);
            fit_hinge(grid, &pd(&sub))
        })
        .collect();
    (sg, hinges)
}

/// Each cluster's shape: [`choose`] on the mean curve of its units' rows (`labels` per
/// unit, clusters 0..k; an empty cluster is flat).
pub fn cluster_shapes(
    m: &Array2<f64>,
    row_unit: &[usize],
    labels: &[usize],
    k: usize,
    grid: &[f64],
    tol: f64,
) -> Vec<Shape> {
    (0..k)
        .map(|c| {
            let rows: Vec<usize> = (0..row_unit.len())
                .filter(|&r| labels.get(row_unit[r]) == Some(&c))
                .collect();
            if rows.is_empty() {
                return Shape::none(Kind::Flat);
            }
            choose(grid, &pd(&m.select(ndarray::Axis(0), &rows)), tol)
        })
        .collect()
}
