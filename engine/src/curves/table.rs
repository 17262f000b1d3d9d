//! The curves pass's Parquet tables, written into a hidden folder renamed into place as
//! RUN_DIR/curves/ (a previous curves folder is replaced only when the new one is whole).
//!
//! - `ice`: spec_id, indicator, unit, wave (nullable), grid_index, grid_value, prediction,
//!   centred (the detailed specs only).
//! - `pd`: spec_id, indicator, grid_index, grid_value, pd.
//! - `breakpoints`: spec_id, indicator, direction, breakpoint, breakpoint_lo,
//!   breakpoint_hi, draws, slope_left, slope_right, sse, flat_tolerance.
//! - `bands`: indicator, grid_index, grid_value, members, pd_median, pd_lo, pd_hi, level.
//! - `signs`: indicator, members, rises, falls, flat, turns (shares of member specs).
//! - `clusters`: spec_id, indicator, unit, cluster, k, silhouette, gap, gap_se, gap_next,
//!   gap_next_se, cluster_breakpoint, cluster_slope_left, cluster_slope_right, distance,
//!   bound, departs (gap* are Gap(k), s(k), Gap(k+1), s(k+1) of the chosen k; NaN when the
//!   units' curves do not differ).
//! - `observed`: indicator, unit, wave (nullable), value (NaN when missing): the chosen
//!   indicators' observed values.
//! - `curves.json`: the settings and the members' rule (written last, read by the report).

use super::compute::Output;
use crate::error::{Error, Result};
use crate::panel::Panel;
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
        .s("spec_id", sid)
        .s("indicator", si)
        .s("unit", un)
        .os("wave", wv)
        .i("grid_index", gi)
        .f("grid_value", gv)
        .f("prediction", pr)
        .f("centred", ce)
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
        .s("spec_id", t.0)
        .s("indicator", t.1)
        .i("grid_index", t.2)
        .f("grid_value", t.3)
        .f("pd", t.4)
        .write(dir, "pd")?;
    // breakpoints
    let nan = f64::NAN;
    let h = |sc: &super::compute::SpecCurve, f: fn(&super::Hinge) -> f64| {
        sc.hinge.as_ref().map_or(nan, f)
    };
    let cs = &o.curves;
    Cols::default()
        .s("spec_id", cs.iter().map(|c| ids[c.spec].clone()))
        .s("indicator", cs.iter().map(|c| ind(c.indicator)))
        .s("direction", cs.iter().map(|c| c.direction.to_string()))
        .f("breakpoint", cs.iter().map(|c| h(c, |x| x.breakpoint)))
        .f("breakpoint_lo", cs.iter().map(|c| c.interval.0))
        .f("breakpoint_hi", cs.iter().map(|c| c.interval.1))
        .i("draws", cs.iter().map(|c| c.interval.2 as i64))
        .f("slope_left", cs.iter().map(|c| h(c, |x| x.slope_left)))
        .f("slope_right", cs.iter().map(|c| h(c, |x| x.slope_right)))
        .f("sse", cs.iter().map(|c| h(c, |x| x.sse)))
        .f("flat_tolerance", vec![o.tol; cs.len()])
        .write(dir, "breakpoints")?;
    // bands and signs
    let mut t = (Vec::new(), Vec::new(), Vec::new(), Vec::new());
    let mut bb = (Vec::new(), Vec::new(), Vec::new());
    for (c, grid, b) in &o.bands {
        let members = cs.iter().filter(|s| s.indicator == *c).count() as i64;
        for (j, &g) in grid.iter().enumerate() {
            t.0.push(ind(*c));
            t.1.push(j as i64);
            t.2.push(g);
            t.3.push(members);
            bb.0.push(b.median[j]);
            bb.1.push(b.lo[j]);
            bb.2.push(b.hi[j]);
        }
    }
    let n = t.0.len();
    Cols::default()
        .s("indicator", t.0)
        .i("grid_index", t.1)
        .f("grid_value", t.2)
        .i("members", t.3)
        .f("pd_median", bb.0)
        .f("pd_lo", bb.1)
        .f("pd_hi", bb.2)
        .f("level", vec![level; n])
        .write(dir, "bands")?;
    let bs = &o.bands;
    Cols::default()
        .s("indicator", bs.iter().map(|b| ind(b.0)))
        .i(
            "members",
            bs.iter()
                .map(|b| cs.iter().filter(|s| s.indicator == b.0).count() as i64),
        )
        .f("rises", bs.iter().map(|b| b.2.rises))
        .f("falls", bs.iter().map(|b| b.2.falls))
        .f("flat", bs.iter().map(|b| b.2.flat))
        .f("turns", bs.iter().map(|b| b.2.turns))
        .write(dir, "signs")?;
    // observed values of the chosen indicators (the report's rug)
    let mut t = (Vec::new(), Vec::new(), Vec::new(), Vec::new());
    for b in &o.bands {
        for r in 0..panel.n_rows() {
            let v = panel.x[[r, b.0]];
            t.0.push(ind(b.0));
            t.1.push(panel.units[panel.row_unit[r]].clone());
            t.2.push(panel.row_wave[r].clone());
            t.3.push(v);
        }
    }
    Cols::default()
        .s("indicator", t.0)
        .s("unit", t.1)
        .os("wave", t.2)
        .f("value", t.3)
        .write(dir, "observed")?;
    // clusters
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
    let mut gp: [Vec<f64>; 4] = Default::default();
    for sc in cs {
        let Some((g, hs)) = &sc.groups else { continue };
        for (u, name) in panel.units.iter().enumerate() {
            let k = g.labels[u];
            let hk = hs.get(k).copied().flatten();
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
        .s("spec_id", t.0)
        .s("indicator", t.1)
        .s("unit", t.2)
        .i("cluster", t.3)
        .i("k", t.4)
        .f("silhouette", f.0)
        .f("gap", std::mem::take(&mut gp[0]))
        .f("gap_se", std::mem::take(&mut gp[1]))
        .f("gap_next", std::mem::take(&mut gp[2]))
        .f("gap_next_se", std::mem::take(&mut gp[3]))
        .f("cluster_breakpoint", f.1)
        .f("cluster_slope_left", f.2)
        .f("cluster_slope_right", f.3)
        .f("distance", f.4)
        .f("bound", f.5)
        .b("departs", dep)
        .write(dir, "clusters")?;
    Ok(())
}

/// Name of the settings file beside the tables (its presence marks a whole curves folder).
pub const META: &str = "curves.json";

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
