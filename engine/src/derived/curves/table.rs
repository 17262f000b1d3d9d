//! The curves pass's Parquet tables, written into a hidden folder renamed into place as
//! RUN_DIR/curves/ (a previous curves folder is replaced only when the new one is whole).
//!
//! - `ice`: spec_id, indicator, unit, wave (nullable), grid_index, grid_value, prediction,
//!   centred (the detailed specs only).
//! - `pd`: spec_id, indicator, grid_index, grid_value, pd.
//! - `breakpoints`: spec_id, indicator, direction, shape, breakpoint, jump,
//!   composition_lo, composition_hi, composition_draws, composition_kept, slope_left,
//!   slope_right, sse, bic_line, bic_hinge, bic_jump, same_as (nullable), flat_tolerance.
//! - `bands`: indicator, grid_index, grid_value, members, holding, distinct, pd_median,
//!   pd_lo, pd_hi, level (the band over the distinct curves of the members holding it).
//! - `signs`: indicator, members, holding, distinct, rises, falls, flat, turns (shares of
//!   the distinct curves of the members holding the indicator).
//! - `clusters`: spec_id, indicator, unit, cluster, k, silhouette, cluster_shape,
//!   cluster_breakpoint, cluster_jump, cluster_slope_left, cluster_slope_right, distance,
//!   bound, departs, gap, gap_se, gap_next, gap_next_se (each cluster's shape chosen like a
//!   member's; gap* are Gap(k), s(k), Gap(k+1), s(k+1) of the chosen k by the gap statistic,
//!   null when the units' curves do not differ; silhouette null for one group).
//! - `observed`: indicator, unit, wave (nullable), value (NaN when missing): the chosen
//!   indicators' observed values.
//! - `curves.json`: the settings and the members' rule (written last, read by the report).
//!
//! Undefined numbers (no breakpoint, no fit, no member holding the indicator) are null.

use super::compute::Output;
use crate::error::{Error, Result};
use crate::panel::Panel;
use crate::schema::curves as columns;
use crate::sink::Cols;
use std::path::{Path, PathBuf};

pub use crate::report::shape::CURVES_DIR;

fn write_tables(o: &Output, panel: &Panel, ids: &[String], level: f64, dir: &Path) -> Result<()> {
    let ind = |c: usize| panel.indicators[c].clone();
    // ice
    let mut sid: Vec<String> = Vec::new();
    let mut si: Vec<String> = Vec::new();
    let mut un: Vec<String> = Vec::new();
    let mut wv: Vec<Option<String>> = Vec::new();
    let mut gi: Vec<i64> = Vec::new();
    let (mut gv, mut pr, mut ce): (Vec<f64>, Vec<f64>, Vec<f64>) = Default::default();
    for sc in &o.curves {
        let Some(m) = &sc.ice else { continue };
        let c = super::centred(m);
        for r in 0..m.nrows() {
            for (j, &g) in sc.grid.iter().enumerate() {
                sid.push(ids[sc.spec].clone());
                si.push(ind(sc.indicator));
                un.push(panel.units[panel.row_unit[r]].clone());
                wv.push(panel.row_wave[r].clone());
                gi.push(j as i64);
                gv.push(g);
                pr.push(m[[r, j]]);
                ce.push(c[[r, j]]);
            }
        }
    }
    Cols::default()
        .s(columns::ice::SPEC_ID, sid)
        .s(columns::ice::INDICATOR, si)
        .s(columns::ice::UNIT, un)
        .os(columns::ice::WAVE, wv)
        .i(columns::ice::GRID_INDEX, gi)
        .f(columns::ice::GRID_VALUE, gv)
        .f(columns::ice::PREDICTION, pr)
        .f(columns::ice::CENTRED, ce)
        .write(dir, "ice")?;
    // pd
    let mut t = (Vec::new(), Vec::new(), Vec::new(), Vec::new(), Vec::new());
    for sc in &o.curves {
        for (j, (&g, &p)) in sc.grid.iter().zip(&sc.pd).enumerate() {
            t.0.push(ids[sc.spec].clone());
            t.1.push(ind(sc.indicator));
            t.2.push(j as i64);
            t.3.push(g);
            t.4.push(p);
        }
    }
    Cols::default()
        .s(columns::pd::SPEC_ID, t.0)
        .s(columns::pd::INDICATOR, t.1)
        .i(columns::pd::GRID_INDEX, t.2)
        .f(columns::pd::GRID_VALUE, t.3)
        .f(columns::pd::PD, t.4)
        .write(dir, "pd")?;
    // breakpoints
    let cs = &o.curves;
    let f = |g: fn(&super::compute::SpecCurve) -> f64| cs.iter().map(g).collect::<Vec<f64>>();
    Cols::default()
        .s(
            columns::breakpoints::SPEC_ID,
            cs.iter().map(|c| ids[c.spec].clone()),
        )
        .s(
            columns::breakpoints::INDICATOR,
            cs.iter().map(|c| ind(c.indicator)),
        )
        .s(
            columns::breakpoints::DIRECTION,
            cs.iter().map(|c| c.direction.name().to_string()),
        )
        .s(
            columns::breakpoints::SHAPE,
            cs.iter().map(|c| c.shape.kind.name().to_string()),
        )
        .of(columns::breakpoints::BREAKPOINT, f(|c| c.shape.breakpoint))
        .of(columns::breakpoints::JUMP, f(|c| c.shape.jump))
        .of(columns::breakpoints::COMPOSITION_LO, f(|c| c.interval.lo))
        .of(columns::breakpoints::COMPOSITION_HI, f(|c| c.interval.hi))
        .i(
            columns::breakpoints::COMPOSITION_DRAWS,
            cs.iter().map(|c| c.interval.draws as i64),
        )
        .of(
            columns::breakpoints::COMPOSITION_KEPT,
            f(|c| c.interval.kept),
        )
        .of(columns::breakpoints::SLOPE_LEFT, f(|c| c.shape.slope_left))
        .of(
            columns::breakpoints::SLOPE_RIGHT,
            f(|c| c.shape.slope_right),
        )
        .of(columns::breakpoints::SSE, f(|c| c.shape.sse))
        .of(columns::breakpoints::BIC_LINE, f(|c| c.shape.bic[0]))
        .of(columns::breakpoints::BIC_HINGE, f(|c| c.shape.bic[1]))
        .of(columns::breakpoints::BIC_JUMP, f(|c| c.shape.bic[2]))
        .os(
            columns::breakpoints::SAME_AS,
            cs.iter().map(|c| c.same_as.map(|i| ids[i].clone())),
        )
        .f(columns::breakpoints::FLAT_TOLERANCE, vec![o.tol; cs.len()])
        .write(dir, "breakpoints")?;
    // bands and signs
    let mut t = (Vec::new(), Vec::new(), Vec::new(), Vec::new());
    let mut counts = (Vec::new(), Vec::new());
    let mut bb = (Vec::new(), Vec::new(), Vec::new());
    for ib in &o.bands {
        for (j, &g) in ib.grid.iter().enumerate() {
            t.0.push(ind(ib.indicator));
            t.1.push(j as i64);
            t.2.push(g);
            t.3.push(ib.members as i64);
            counts.0.push(ib.holding as i64);
            counts.1.push(ib.distinct as i64);
            bb.0.push(ib.band.median[j]);
            bb.1.push(ib.band.lo[j]);
            bb.2.push(ib.band.hi[j]);
        }
    }
    let n = t.0.len();
    Cols::default()
        .s(columns::bands::INDICATOR, t.0)
        .i(columns::bands::GRID_INDEX, t.1)
        .f(columns::bands::GRID_VALUE, t.2)
        .i(columns::bands::MEMBERS, t.3)
        .i(columns::bands::HOLDING, counts.0)
        .i(columns::bands::DISTINCT, counts.1)
        .of(columns::bands::PD_MEDIAN, bb.0)
        .of(columns::bands::PD_LO, bb.1)
        .of(columns::bands::PD_HI, bb.2)
        .f(columns::bands::LEVEL, vec![level; n])
        .write(dir, "bands")?;
    let bs = &o.bands;
    Cols::default()
        .s(
            columns::signs::INDICATOR,
            bs.iter().map(|b| ind(b.indicator)),
        )
        .i(columns::signs::MEMBERS, bs.iter().map(|b| b.members as i64))
        .i(columns::signs::HOLDING, bs.iter().map(|b| b.holding as i64))
        .i(
            columns::signs::DISTINCT,
            bs.iter().map(|b| b.distinct as i64),
        )
        .f(columns::signs::RISES, bs.iter().map(|b| b.band.rises))
        .f(columns::signs::FALLS, bs.iter().map(|b| b.band.falls))
        .f(columns::signs::FLAT, bs.iter().map(|b| b.band.flat))
        .f(columns::signs::TURNS, bs.iter().map(|b| b.band.turns))
        .write(dir, "signs")?;
    // observed values of the chosen indicators (the report's rug)
    let mut t = (Vec::new(), Vec::new(), Vec::new(), Vec::new());
    for b in &o.bands {
        for r in 0..panel.n_rows() {
            let v = panel.x[[r, b.indicator]];
            t.0.push(ind(b.indicator));
            t.1.push(panel.units[panel.row_unit[r]].clone());
            t.2.push(panel.row_wave[r].clone());
            t.3.push(v);
        }
    }
    Cols::default()
        .s(columns::observed::INDICATOR, t.0)
        .s(columns::observed::UNIT, t.1)
        .os(columns::observed::WAVE, t.2)
        .f(columns::observed::VALUE, t.3)
        .write(dir, "observed")?;
    // clusters
    let nan = f64::NAN;
    let mut t = (Vec::new(), Vec::new(), Vec::new(), Vec::new(), Vec::new());
    let mut f = (
        Vec::new(),
        Vec::new(),
        Vec::new(),
        Vec::new(),
        Vec::new(),
        Vec::new(),
    );
    let mut dep = Vec::new();
    let mut shapes: (Vec<String>, Vec<f64>) = Default::default();
    let mut gp: [Vec<f64>; 4] = Default::default();
    for sc in cs {
        let Some((g, _)) = &sc.groups else { continue };
        for (u, name) in panel.units.iter().enumerate() {
            let k = g.labels[u];
            let hk = sc.cluster_shapes.get(k);
            shapes
                .0
                .push(hk.map_or("flat", |x| x.kind.name()).to_string());
            shapes.1.push(hk.map_or(nan, |x| x.jump));
            t.0.push(ids[sc.spec].clone());
            t.1.push(ind(sc.indicator));
            t.2.push(name.clone());
            t.3.push(k as i64);
            t.4.push(g.k as i64);
            f.0.push(g.silhouette);
            let (at, next) = (g.gap.at(g.k), g.gap.at(g.k + 1));
            gp[0].push(at.map_or(nan, |p| p.gap));
            gp[1].push(at.map_or(nan, |p| p.se));
            gp[2].push(next.map_or(nan, |p| p.gap));
            gp[3].push(next.map_or(nan, |p| p.se));
            f.1.push(hk.map_or(nan, |x| x.breakpoint));
            f.2.push(hk.map_or(nan, |x| x.slope_left));
            f.3.push(hk.map_or(nan, |x| x.slope_right));
            f.4.push(g.distance[u]);
            f.5.push(g.bound);
            dep.push(g.departs[u]);
        }
    }
    Cols::default()
        .s(columns::clusters::SPEC_ID, t.0)
        .s(columns::clusters::INDICATOR, t.1)
        .s(columns::clusters::UNIT, t.2)
        .i(columns::clusters::CLUSTER, t.3)
        .i(columns::clusters::K, t.4)
        .of(columns::clusters::SILHOUETTE, f.0)
        .s(columns::clusters::CLUSTER_SHAPE, shapes.0)
        .of(columns::clusters::CLUSTER_BREAKPOINT, f.1)
        .of(columns::clusters::CLUSTER_JUMP, shapes.1)
        .of(columns::clusters::CLUSTER_SLOPE_LEFT, f.2)
        .of(columns::clusters::CLUSTER_SLOPE_RIGHT, f.3)
        .f(columns::clusters::DISTANCE, f.4)
        .f(columns::clusters::BOUND, f.5)
        .b(columns::clusters::DEPARTS, dep)
        .of(columns::clusters::GAP, std::mem::take(&mut gp[0]))
        .of(columns::clusters::GAP_SE, std::mem::take(&mut gp[1]))
        .of(columns::clusters::GAP_NEXT, std::mem::take(&mut gp[2]))
        .of(columns::clusters::GAP_NEXT_SE, std::mem::take(&mut gp[3]))
        .write(dir, "clusters")?;
    Ok(())
}

/// Name of the settings file beside the tables (its presence marks a whole curves folder).
pub use crate::schema::CURVES_META as META;

/// Write the tables (and `meta` as `curves.json`) into RUN_DIR/curves atomically (hidden
/// folder, then rename).
pub fn write(
    o: &Output,
    panel: &Panel,
    ids: &[String],
    level: f64,
    meta: &serde_json::Value,
    run: &Path,
) -> Result<PathBuf> {
    let dest = run.join(CURVES_DIR);
    let tmp = run.join(format!(".{CURVES_DIR}.tmp-{}", std::process::id()));
    if tmp.exists() {
        std::fs::remove_dir_all(&tmp).map_err(|e| Error::io(&tmp, e))?;
    }
    std::fs::create_dir_all(&tmp).map_err(|e| Error::io(&tmp, e))?;
    let written = write_tables(o, panel, ids, level, &tmp).and_then(|_| {
        let text = serde_json::to_string_pretty(meta).unwrap_or_default();
        crate::sink::write_bytes_atomic(&tmp.join(META), text.as_bytes())
    });
    if let Err(e) = written {
        let _ = std::fs::remove_dir_all(&tmp);
        return Err(e);
    }
    let old = run.join(format!(".{CURVES_DIR}.old-{}", std::process::id()));
    if dest.exists() {
        std::fs::rename(&dest, &old).map_err(|e| Error::io(&dest, e))?;
    }
    if let Err(e) = std::fs::rename(&tmp, &dest) {
        let _ = std::fs::rename(&old, &dest);
        let _ = std::fs::remove_dir_all(&tmp);
        return Err(Error::io(&dest, e));
    }
    if old.exists() {
        let _ = std::fs::remove_dir_all(&old);
    }
    Ok(dest)
}
