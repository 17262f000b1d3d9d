//! One curves pass over a finished run, shared by `forkmap curves` and the end of
//! `forkmap run`: check the run (complete, same data), choose the specs (best, the
//! report's good set, or listed ids) and indicators (listed, or the top K by importance)
//! from the run's tables (one-way), compute, and write RUN_DIR/curves/ whole.

use super::compute::{compute, Output, Settings};
use super::{select, table};
use crate::choices::prepared::Prepared;
use crate::config::map::MapSection;
use crate::error::{Error, Result};
use crate::results::RunSet;
use std::path::{Path, PathBuf};

/// Which specs get curves.
#[derive(Debug, Clone, PartialEq)]
pub enum Specs {
    /// The best spec only.
    Best,
    /// The best spec and the report's good set.
    Good,
    /// Listed spec ids (each gets ICE rows and subgroups).
    Ids(Vec<String>),
}

/// What to draw.
#[derive(Debug, Clone)]
pub struct Request {
    pub specs: Specs,
    /// Indicator names; `None`: the `top_k` of largest mean importance.
    pub indicators: Option<Vec<String>>,
    pub top_k: usize,
    /// Force the ratio rule with this eps for the good set (else `[map] good`).
    pub ratio_eps: Option<f64>,
    pub settings: Settings,
    /// The report's settings and seed (the good set is the report's).
    pub map: MapSection,
    pub map_seed: u64,
}

/// What a pass wrote.
pub struct Drawn {
    pub dir: PathBuf,
    pub output: Output,
    pub indicators: Vec<String>,
    pub members: usize,
    pub rule: String,
    pub seconds: f64,
}

fn fail(m: String) -> Error {
    Error::Space(format!("curves: {m}"))
}

/// Check that `run` is complete and was made from `p`'s data file.
pub fn check_run(set: &RunSet, p: &Prepared) -> Result<()> {
    let c = set.completeness();
    if !c.is_complete() {
        return Err(fail(format!(
            "the run is incomplete:\n  {}\n(finish the run first)",
            c.describe().join("\n  ")
        )));
    }
    let sha = crate::choices::prepared::sha256_file(&p.data_path)?;
    {
        let want = &set.manifest().data_sha256;
        if *want != sha {
            return Err(fail(format!(
                "{} has changed since the run (sha256 {want} in the manifest, {sha} now): curves would not describe the run's fits",
                p.data_path.display()
            )));
        }
    }
    Ok(())
}

/// Run one pass on the run directory `run` (prepared as `p`); writes RUN_DIR/curves/.
pub fn draw(p: &Prepared, run: &Path, req: &Request) -> Result<Drawn> {
    let t0 = std::time::Instant::now();
    let set = RunSet::open(std::slice::from_ref(&run.to_path_buf()))?;
    check_run(&set, p)?;
    let t = crate::report::data::read(&set)?;
    let mut ms = req.map.clone();
    if let Some(e) = req.ratio_eps {
        if !(e.is_finite() && e >= 0.0) {
            return Err(fail(format!(
                "--ratio-eps must be a finite number >= 0, got {e}"
            )));
        }
        ms.good = "ratio".into();
        ms.ratio_eps = e;
    }
    let (best, good, rule) = select::chosen_good(&t, &ms, req.map_seed)
        .ok_or_else(|| fail("the run has no ok spec to draw curves for".into()))?;
    let pick_among = good.clone();
    let (ids, detail, rule): (Vec<String>, Vec<String>, String) = match &req.specs {
        Specs::Best => (vec![best.clone()], vec![best], "the best spec".into()),
        Specs::Good => (good, vec![best], rule),
        Specs::Ids(v) => (v.clone(), v.clone(), "listed spec ids".into()),
    };
    let index = |id: &String| {
        p.space
            .specs
            .iter()
            .position(|s| &s.id == id)
            .ok_or_else(|| fail(format!("--specs: no spec `{id}` in the run's choice space")))
    };
    let specs: Vec<usize> = ids.iter().map(index).collect::<Result<_>>()?;
    let detail: Vec<usize> = detail.iter().map(index).collect::<Result<_>>()?;
    let (kind, names): (String, Vec<String>) = match &req.indicators {
        Some(v) => ("listed".into(), v.clone()),
        None => select::top_indicators(&t, req.top_k, Some(&pick_among)).ok_or_else(|| {
            fail(format!(
                "the run holds no indicator-level importance to pick the top {} from: pass --indicators A,B",
                req.top_k
            ))
        })?,
    };
    let cols: Vec<usize> = names
        .iter()
        .map(|n| {
            p.panel
                .indicators
                .iter()
                .position(|x| x == n)
                .ok_or_else(|| {
                    fail(format!(
                        "--indicators: `{n}` is not an indicator of the panel"
                    ))
                })
        })
        .collect::<Result<_>>()?;
    let s = &req.settings;
    let output = compute(p, &specs, &detail, &cols, s)?;
    let ids_all: Vec<String> = p.space.specs.iter().map(|s| s.id.clone()).collect();
    let meta = serde_json::json!({
        "tool": "forkmap curves",
        "version": env!("CARGO_PKG_VERSION"),
        "members": specs.len(),
        "members_rule": rule,
        "good": ms.good,
        "metric": ms.metric,
        "best_spec": ids.first(),
        "detail_specs": detail.iter().map(|&i| ids_all[i].clone()).collect::<Vec<_>>(),
        "indicators": names,
        "indicators_by": kind,
        "grid": s.grid,
        "resamples": s.resamples,
        "level": s.level,
        "flat_share": s.flat_share,
        "flat_tolerance": output.tol,
        "seed": s.seed,
        "rows": p.panel.n_rows(),
        "units": p.panel.n_units(),
        "data_sha256": set.manifest().data_sha256,
    });
    let dir = table::write(&output, &p.panel, &ids_all, s.level, &meta, run)?;
    Ok(Drawn {
        dir,
        output,
        indicators: names,
        members: specs.len(),
        rule,
        seconds: t0.elapsed().as_secs_f64(),
    })
}

/// The cost of a pass in words (for `plan` and the start of `run`): per member, one fit on
/// all rows, `indicators x grid x rows` predictions and `indicators x resamples` hinge
/// fits; the good set's size is known only after the sweep, so the line gives the cost per
/// member and the bound over every spec.
pub fn cost(p: &Prepared, members: super::Members, top_k: usize, grid: usize, b: usize) -> String {
    let k = top_k.min(p.panel.indicators.len());
    let rows = p.panel.n_rows();
    let per = k * grid * rows;
    let specs = p.space.specs.len();
    match members {
        super::Members::Best => format!(
            "curves: the best spec x {k} indicators x {grid} grid points x {rows} rows = {per} predictions, 1 fit on all rows, at most {} bootstrap shape choices (line, hinge, jump; only for curves with a breakpoint)",
            k * b
        ),
        super::Members::Good => format!(
            "curves: per good-set member {k} indicators x {grid} grid points x {rows} rows = {per} predictions, 1 fit on all rows, at most {} bootstrap shape choices (line, hinge, jump; only for curves with a breakpoint); the good set's size is known after the sweep (at most {specs} specs: {} predictions)",
            k * b,
            per * specs
        ),
    }
}
