//! The shape of an association, as the report reads it: the curves tables a run holds in
//! RUN_DIR/curves/ (written by `forkmap curves` or at the end of `forkmap run`), read
//! one-way like any other table of the run, never recomputed. Absent when the run has no
//! curves folder (or the report reads several directories as one run).

use super::data::{col, read_batches};
use crate::error::{Error, Result};
use crate::results::RunSet;
use crate::schema::curves as columns;
use arrow_array::{Array, BooleanArray, Float64Array, Int64Array, StringArray};
use std::collections::BTreeMap;
use std::path::Path;

/// Folder of the curves inside a run directory.
pub use crate::schema::CURVES_DIR;

/// One cluster of units on the best spec's centred curves.
#[derive(Debug, Clone, Default)]
pub struct ShapeCluster {
    pub cluster: usize,
    pub units: Vec<String>,
    /// The cluster's own shape (line, hinge, jump, flat) and its breakpoint (NaN without).
    pub shape: String,
    pub breakpoint: f64,
    pub slope_left: f64,
    pub slope_right: f64,
}

/// One indicator's curves.
#[derive(Debug, Clone, Default)]
pub struct ShapeIndicator {
    pub name: String,
    pub grid: Vec<f64>,
    /// Band of PD over the members: median and the level's quantiles per grid point.
    pub median: Vec<f64>,
    pub lo: Vec<f64>,
    pub hi: Vec<f64>,
    /// The best spec's PD (empty when the best spec is not among the members).
    pub best_pd: Vec<f64>,
    /// Members (all), those whose pool holds the indicator, and the distinct curves among
    /// them (duplicate fits counted once): the band and the shares are over `distinct`.
    pub members: usize,
    pub holding: usize,
    pub distinct: usize,
    pub rises: f64,
    pub falls: f64,
    pub flat: f64,
    pub turns: f64,
    /// The best spec's direction and shape (line, hinge, jump, flat, absent), its
    /// breakpoint and jump (NaN without one), the unit-composition interval (model held
    /// fixed: resamples run, share re-selecting the shape) and slopes.
    pub direction: String,
    pub shape: String,
    pub breakpoint: f64,
    pub jump: f64,
    pub composition_lo: f64,
    pub composition_hi: f64,
    pub composition_draws: usize,
    pub composition_kept: f64,
    pub slope_left: f64,
    pub slope_right: f64,
    /// Median of the breakpoints of the distinct holding curves that have one, and how
    /// many have one.
    pub members_breakpoint: f64,
    pub members_bending: usize,
    /// Subgroups of units for the best spec: k, mean silhouette, clusters.
    pub k: usize,
    pub silhouette: f64,
    pub clusters: Vec<ShapeCluster>,
    /// Units whose curve departs from the mean beyond `bound`, with their distance.
    pub departing: Vec<(String, f64)>,
    pub bound: f64,
    /// Observed values (finite ones), for the rug.
    pub observed: Vec<f64>,
}

/// The whole curves folder.
#[derive(Debug, Clone, Default)]
pub struct Shape {
    /// Members' rule in words, and the good-set definition the curves used.
    pub rule: String,
    pub good: String,
    pub best_spec: String,
    pub members: usize,
    pub indicators_by: String,
    pub grid: usize,
    pub resamples: usize,
    pub level: f64,
    pub flat_share: f64,
    pub flat_tolerance: f64,
    pub indicators: Vec<ShapeIndicator>,
}

/// Read RUN_DIR/curves/ of a single-directory run set; `None` when there is none.
pub fn read(set: &RunSet) -> Result<Option<Shape>> {
    if set.dirs.len() != 1 {
        return Ok(None);
    }
    let dir = set.dirs[0].path.join(CURVES_DIR);
    let meta_path = dir.join("curves.json");
    if !meta_path.is_file() {
        return Ok(None);
    }
    let bad = |m: String| Error::Output {
        path: meta_path.clone(),
        msg: m,
    };
    let text = std::fs::read_to_string(&meta_path).map_err(|e| Error::io(&meta_path, e))?;
    let m: serde_json::Value =
        serde_json::from_str(&text).map_err(|e| bad(format!("unreadable: {e}")))?;
    if let (Some(a), Some(b)) = (
        m["data_sha256"].as_str(),
        Some(set.manifest().data_sha256.as_str()),
    ) {
        if a != b {
            return Err(bad(
                "the curves were drawn from another data file than the run's: draw them again with `forkmap curves`"
                    .into(),
            ));
        }
    }
    let names: Vec<String> = m["indicators"]
        .as_array()
        .map(|v| {
            v.iter()
                .filter_map(|x| x.as_str().map(String::from))
                .collect()
        })
        .unwrap_or_default();
    let best = m["best_spec"].as_str().unwrap_or("").to_string();
    let mut by: BTreeMap<String, ShapeIndicator> = names
        .iter()
        .map(|n| {
            (
                n.clone(),
                ShapeIndicator {
                    name: n.clone(),
                    ..Default::default()
                },
            )
        })
        .collect();
    read_bands(&dir, &mut by)?;
    read_signs(&dir, &mut by)?;
    read_pd(&dir, &best, &mut by)?;
    read_breakpoints(&dir, &best, &mut by)?;
    read_clusters(&dir, &best, &mut by)?;
    read_observed(&dir, &mut by)?;
    Ok(Some(Shape {
        rule: m["members_rule"].as_str().unwrap_or("").to_string(),
        good: m["good"].as_str().unwrap_or("").to_string(),
        best_spec: best,
        members: m["members"].as_u64().unwrap_or(0) as usize,
        indicators_by: m["indicators_by"].as_str().unwrap_or("").to_string(),
        grid: m["grid"].as_u64().unwrap_or(0) as usize,
        resamples: m["resamples"].as_u64().unwrap_or(0) as usize,
        level: m["level"].as_f64().unwrap_or(f64::NAN),
        flat_share: m["flat_share"].as_f64().unwrap_or(f64::NAN),
        flat_tolerance: m["flat_tolerance"].as_f64().unwrap_or(f64::NAN),
        indicators: names.iter().filter_map(|n| by.remove(n)).collect(),
    }))
}

/// A number of a nullable column: NaN for null (undefined).
fn fv(a: &Float64Array, r: usize) -> f64 {
    if a.is_null(r) {
        f64::NAN
    } else {
        a.value(r)
    }
}

fn batches(dir: &Path, name: &str) -> Result<(std::path::PathBuf, Vec<arrow_array::RecordBatch>)> {
    let p = dir.join(format!("{name}.parquet"));
    let b = read_batches(&p)?;
    Ok((p, b))
}

fn read_bands(dir: &Path, by: &mut BTreeMap<String, ShapeIndicator>) -> Result<()> {
    let (p, bs) = batches(dir, "bands")?;
    for b in &bs {
        let ind = col::<StringArray>(b, columns::bands::INDICATOR, &p)?;
        let g = col::<Float64Array>(b, columns::bands::GRID_VALUE, &p)?;
        let (me, lo, hi) = (
            col::<Float64Array>(b, columns::bands::PD_MEDIAN, &p)?,
            col::<Float64Array>(b, columns::bands::PD_LO, &p)?,
            col::<Float64Array>(b, columns::bands::PD_HI, &p)?,
        );
        for r in 0..b.num_rows() {
            if let Some(s) = by.get_mut(ind.value(r)) {
                s.grid.push(g.value(r));
                s.median.push(fv(me, r));
                s.lo.push(fv(lo, r));
                s.hi.push(fv(hi, r));
            }
        }
    }
    Ok(())
}

fn read_signs(dir: &Path, by: &mut BTreeMap<String, ShapeIndicator>) -> Result<()> {
    let (p, bs) = batches(dir, "signs")?;
    for b in &bs {
        let ind = col::<StringArray>(b, columns::signs::INDICATOR, &p)?;
        let n = col::<Int64Array>(b, columns::signs::MEMBERS, &p)?;
        let nh = col::<Int64Array>(b, columns::signs::HOLDING, &p)?;
        let nd = col::<Int64Array>(b, columns::signs::DISTINCT, &p)?;
        let f = |c: &str| col::<Float64Array>(b, c, &p);
        let (ri, fa, fl, tu) = (
            f(columns::signs::RISES)?,
            f(columns::signs::FALLS)?,
            f(columns::signs::FLAT)?,
            f(columns::signs::TURNS)?,
        );
        for r in 0..b.num_rows() {
            if let Some(s) = by.get_mut(ind.value(r)) {
                s.members = n.value(r).max(0) as usize;
                s.holding = nh.value(r).max(0) as usize;
                s.distinct = nd.value(r).max(0) as usize;
                (s.rises, s.falls, s.flat, s.turns) =
                    (ri.value(r), fa.value(r), fl.value(r), tu.value(r));
            }
        }
    }
    Ok(())
}

fn read_pd(dir: &Path, best: &str, by: &mut BTreeMap<String, ShapeIndicator>) -> Result<()> {
    let (p, bs) = batches(dir, "pd")?;
    for b in &bs {
        let id = col::<StringArray>(b, columns::pd::SPEC_ID, &p)?;
        let ind = col::<StringArray>(b, columns::pd::INDICATOR, &p)?;
        let v = col::<Float64Array>(b, columns::pd::PD, &p)?;
        for r in 0..b.num_rows() {
            if id.value(r) == best {
                if let Some(s) = by.get_mut(ind.value(r)) {
                    s.best_pd.push(v.value(r));
                }
            }
        }
    }
    Ok(())
}

fn read_breakpoints(
    dir: &Path,
    best: &str,
    by: &mut BTreeMap<String, ShapeIndicator>,
) -> Result<()> {
    let (p, bs) = batches(dir, "breakpoints")?;
    let mut all: BTreeMap<String, Vec<f64>> = BTreeMap::new();
    for b in &bs {
        let id = col::<StringArray>(b, columns::breakpoints::SPEC_ID, &p)?;
        let ind = col::<StringArray>(b, columns::breakpoints::INDICATOR, &p)?;
        let dirn = col::<StringArray>(b, columns::breakpoints::DIRECTION, &p)?;
        let shape = col::<StringArray>(b, columns::breakpoints::SHAPE, &p)?;
        let same = col::<StringArray>(b, columns::breakpoints::SAME_AS, &p)?;
        let f = |c: &str| col::<Float64Array>(b, c, &p);
        let (bp, jump, lo, hi, kept, sl, sr) = (
            f(columns::breakpoints::BREAKPOINT)?,
            f(columns::breakpoints::JUMP)?,
            f(columns::breakpoints::COMPOSITION_LO)?,
            f(columns::breakpoints::COMPOSITION_HI)?,
            f(columns::breakpoints::COMPOSITION_KEPT)?,
            f(columns::breakpoints::SLOPE_LEFT)?,
            f(columns::breakpoints::SLOPE_RIGHT)?,
        );
        let draws = col::<Int64Array>(b, columns::breakpoints::COMPOSITION_DRAWS, &p)?;
        for r in 0..b.num_rows() {
            let Some(s) = by.get_mut(ind.value(r)) else {
                continue;
            };
            // Duplicate fits (same_as set) and absent members (NaN) are not counted.
            if fv(bp, r).is_finite() && same.is_null(r) {
                all.entry(s.name.clone()).or_default().push(fv(bp, r));
            }
            if id.value(r) == best {
                s.direction = dirn.value(r).to_string();
                s.shape = shape.value(r).to_string();
                s.breakpoint = fv(bp, r);
                s.jump = fv(jump, r);
                s.composition_lo = fv(lo, r);
                s.composition_hi = fv(hi, r);
                s.composition_draws = draws.value(r).max(0) as usize;
                s.composition_kept = fv(kept, r);
                s.slope_left = fv(sl, r);
                s.slope_right = fv(sr, r);
            }
        }
    }
    for (_, s) in by.iter_mut() {
        s.members_breakpoint = f64::NAN;
    }
    for (n, mut v) in all {
        if let Some(s) = by.get_mut(&n) {
            v.sort_by(f64::total_cmp);
            s.members_breakpoint = super::stats::quantile_sorted(&v, 0.5);
            s.members_bending = v.len();
        }
    }
    Ok(())
}

fn read_clusters(dir: &Path, best: &str, by: &mut BTreeMap<String, ShapeIndicator>) -> Result<()> {
    let (p, bs) = batches(dir, "clusters")?;
    for b in &bs {
        let id = col::<StringArray>(b, columns::clusters::SPEC_ID, &p)?;
        let ind = col::<StringArray>(b, columns::clusters::INDICATOR, &p)?;
        let unit = col::<StringArray>(b, columns::clusters::UNIT, &p)?;
        let cl = col::<Int64Array>(b, columns::clusters::CLUSTER, &p)?;
        let k = col::<Int64Array>(b, columns::clusters::K, &p)?;
        let f = |c: &str| col::<Float64Array>(b, c, &p);
        let (sil, cbp, csl, csr, dist, bound) = (
            f(columns::clusters::SILHOUETTE)?,
            f(columns::clusters::CLUSTER_BREAKPOINT)?,
            f(columns::clusters::CLUSTER_SLOPE_LEFT)?,
            f(columns::clusters::CLUSTER_SLOPE_RIGHT)?,
            f(columns::clusters::DISTANCE)?,
            f(columns::clusters::BOUND)?,
        );
        let dep = col::<BooleanArray>(b, columns::clusters::DEPARTS, &p)?;
        let cshape = col::<StringArray>(b, columns::clusters::CLUSTER_SHAPE, &p)?;
        for r in 0..b.num_rows() {
            if id.value(r) != best {
                continue;
            }
            let Some(s) = by.get_mut(ind.value(r)) else {
                continue;
            };
            s.k = k.value(r).max(0) as usize;
            s.silhouette = fv(sil, r);
            s.bound = fv(bound, r);
            let c = cl.value(r).max(0) as usize;
            while s.clusters.len() <= c {
                let i = s.clusters.len();
                s.clusters.push(ShapeCluster {
                    cluster: i,
                    ..Default::default()
                });
            }
            let sc = &mut s.clusters[c];
            sc.units.push(unit.value(r).to_string());
            sc.shape = cshape.value(r).to_string();
            (sc.breakpoint, sc.slope_left, sc.slope_right) = (fv(cbp, r), fv(csl, r), fv(csr, r));
            if dep.value(r) {
                s.departing.push((unit.value(r).to_string(), dist.value(r)));
            }
        }
    }
    Ok(())
}

fn read_observed(dir: &Path, by: &mut BTreeMap<String, ShapeIndicator>) -> Result<()> {
    let (p, bs) = batches(dir, "observed")?;
    for b in &bs {
        let ind = col::<StringArray>(b, columns::observed::INDICATOR, &p)?;
        let v = col::<Float64Array>(b, columns::observed::VALUE, &p)?;
        for r in 0..b.num_rows() {
            if let Some(s) = by.get_mut(ind.value(r)) {
                if v.value(r).is_finite() {
                    s.observed.push(v.value(r));
                }
            }
        }
    }
    Ok(())
}

/// The direction most distinct member curves take (over the members holding the
/// indicator), as a verb phrase, with its share.
pub fn dominant(s: &ShapeIndicator) -> (&'static str, f64) {
    let mut best = ("rises overall", s.rises);
    for (n, v) in [
        ("falls overall", s.falls),
        ("is flat", s.flat),
        ("turns", s.turns),
    ] {
        if v > best.1 {
            best = (n, v);
        }
    }
    best
}

/// Read the run's curves into the report, with their sign claims among the conclusions; an
/// unreadable curves folder is a note, not a failed report.
pub fn attach(set: &RunSet, r: &mut super::model::Report) {
    match read(set) {
        Ok(Some(s)) => {
            let other = !s.good.is_empty() && s.good != r.meta.good && s.rule.starts_with(&s.good);
            r.conclusions.extend(super::conclusions::signs(
                &s,
                other.then_some(&*r.meta.good),
            ));
            if other {
                r.meta.notes.push(format!(
                    "The curves were drawn for the good set by the {} rule; this report's good set uses the {} rule (draw them again with `forkmap curves` to match).",
                    s.good, r.meta.good
                ));
            }
            r.shape = Some(s);
        }
        Ok(None) => {}
        Err(e) => r
            .meta
            .notes
            .push(format!("The run's curves are left out: {e}")),
    }
}
