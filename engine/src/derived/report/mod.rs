//! The report of a run (`forkmap map`): reads the run's tables through
//! [`crate::results::RunSet`] as a meta-analyst would ([`data`]), computes each section as
//! a pure function of those tables, and writes `report/` (one Parquet table per section,
//! `headline.txt`, `report.json`, then the plots and the HTML page). It never refits.
//!
//! Sections, one file each: [`curve`] (specification curve with unit-bootstrap
//! intervals), [`influence`] (choice influence on the error and on importance ranks, LMG
//! shares), [`goodset`] (three good-set definitions), [`distribution`] (importance over
//! the good set, tau-b agreement), [`conclusions`], [`stability`] (and, read one-way from
//! RUN_DIR/refit/, [`refit`]), [`headline`]. Shared
//! statistics live in [`stats`], the output tables in [`tables`].

pub mod conclusions;
pub mod curve;
pub mod data;
pub mod distribution;
pub mod errors;
pub mod goodset;
pub mod headline;
pub mod html;
pub mod influence;
pub mod model;
pub mod nested;
pub mod null;
pub mod null_claims;
pub mod null_family;
pub mod plots;
pub mod refit;
pub mod shape;
pub use crate::config::map as settings;
pub mod stability;
pub mod stats;
pub mod tables;

use crate::error::{Error, Result};
use crate::results::RunSet;
use crate::space::DIMENSIONS;
use data::{KindTable, RunTables};
use model::{DimensionChoices, Meta, Report, GOOD_DEFINITIONS};
use settings::MapSection;
use std::path::{Path, PathBuf};

/// The cautions printed on every report.
pub const CAUTIONS: [&str; 4] = [
    "The conclusions here are associations found in observational, unit-level data. They are not causal effects: an indicator that predicts the outcome well need not influence it, and choices that change the ranking change what the data can say, not what is true.",
    "Results describe units (districts, regions, countries), not the individuals living in them; reading them as statements about persons is the ecological fallacy.",
    "Good-set membership, supports and intervals depend on the swept space, the sample of specs, the metric and the settings stated with each table; a different space can give a different picture.",
    "Before any use that affects people, defer to domain experts, ethics review and local statistical practice.",
];

/// A report and what is written beside it.
pub struct Built {
    pub report: Report,
    /// The unit bootstrap's draws (`resamples x units`, resample-major, unit indices
    /// into `units`), exported so anyone can recompute the intervals.
    pub resample_units: Vec<u32>,
    pub units: Vec<String>,
    /// The kind table and statement of each importance conclusion, by position in
    /// `report.conclusions` (`None` or absent: no importance statement, e.g. the curves'
    /// sign claims); the null evaluates them in its draws.
    pub tests: Vec<Option<(usize, conclusions::Statement)>>,
}

/// Read a run set and build its report with settings `s` (`seed`: the report's seed).
pub fn build(set: &RunSet, s: &MapSection, seed: u64) -> Result<Built> {
    let t0 = std::time::Instant::now();
    let c = set.completeness();
    let mut notes = Vec::new();
    if !c.is_complete() {
        notes.push("The run set is incomplete: the report covers the specs present.".into());
        notes.extend(c.describe());
    }
    if set.importance_pending() {
        notes.push(
            "Permutation importances are pending (run `forkmap gather`): they are missing here."
                .into(),
        );
    }
    let t = data::read(set)?;
    for (why, n) in &t.left_out {
        notes.push(format!("{n} specs left out: {why}"));
    }
    let mut built = analyse(&t, s, seed)?;
    shape::attach(set, &mut built.report);
    if let Some(n) = nested::load(set, &built.report, &mut notes)? {
        // before the closing cautions sentence
        let h = &mut built.report.headline;
        h.insert(h.len().saturating_sub(1), nested::headline(&n));
        built.report.nested = Some(n);
    }
    built.report.null = null::analyse(set, &t, &built.report, &built.tests)?;
    if let Some(n) = &built.report.null {
        // before the closing cautions sentence
        let h = &mut built.report.headline;
        h.insert(h.len().saturating_sub(1), null::headline(n));
        notes.extend(n.notes.iter().cloned());
    } else if let Some(note) = null::shard_note(set) {
        notes.push(note);
    }
    // A refitted spec whose run fit is bit for bit another's (a scaling before a tree
    // family) is marked as the same fit.
    let classes = t.fit_classes();
    let twin_of = |id: &str| -> Option<String> {
        let i = t.spec_ids.iter().position(|s| s == id)?;
        (classes[i] != i).then(|| t.spec_ids[classes[i]].clone())
    };
    built.report.refit = refit::load(set, &built.report.stability, &twin_of)?;
    if let Some(r) = &built.report.refit {
        notes.extend(r.notes.iter().cloned());
        let m = &built.report.meta;
        if r.metric != m.metric || r.top_k != m.top_k {
            notes.push(format!(
                "The refit ranked its specs by {} with top {} (the settings of the run that made it), this report by {} with top {}: its tables keep the refit's settings (rerun `forkmap run` with these to refit under them).",
                r.metric, r.top_k, m.metric, m.top_k
            ));
        }
        // before the closing cautions sentence
        let h = &mut built.report.headline;
        h.insert(h.len().saturating_sub(1), refit::headline(r));
    }
    let m = &mut built.report.meta;
    m.runs = set
        .dirs
        .iter()
        .map(|d| d.path.display().to_string())
        .collect();
    m.manifest_json = serde_json::to_string_pretty(set.manifest()).unwrap_or_default();
    m.specs_total = c.present;
    notes.extend(std::mem::take(&mut m.notes));
    m.notes = notes;
    m.seconds = t0.elapsed().as_secs_f64();
    Ok(built)
}

/// The varying dimensions and each spec's choice index in them.
pub fn varying(t: &RunTables) -> (Vec<DimensionChoices>, Vec<Vec<usize>>) {
    let mut dims = Vec::new();
    let mut idx: Vec<Vec<usize>> = vec![Vec::new(); t.n_specs()];
    for (d, name) in DIMENSIONS.iter().enumerate() {
        let mut ch: Vec<&str> = t.choices.iter().map(|c| c[d].as_str()).collect();
        ch.sort_unstable();
        ch.dedup();
        if ch.len() < 2 {
            continue;
        }
        for (s, c) in t.choices.iter().enumerate() {
            idx[s].push(ch.binary_search(&c[d].as_str()).unwrap_or(0));
        }
        dims.push(DimensionChoices {
            dimension: name.to_string(),
            choices: ch.iter().map(|c| c.to_string()).collect(),
        });
    }
    (dims, idx)
}

/// The kind table most specs hold at a level, permutation preferred.
fn primary(tables: &[KindTable], level: &str) -> Option<usize> {
    tables
        .iter()
        .position(|k| k.level == level && k.kind == "permutation")
        .or_else(|| {
            (0..tables.len())
                .filter(|&i| tables[i].level == level)
                .max_by_key(|&i| (tables[i].specs.len(), std::cmp::Reverse(i)))
        })
}

/// Every section from the tables (a pure function of tables, settings and seed).
pub fn analyse(t: &RunTables, s: &MapSection, seed: u64) -> Result<Built> {
    s.check().map_err(Error::Space)?;
    let nu = t.n_units();
    let resample_units = stats::resample_indices(nu, s.resamples, seed);
    let counts = stats::resample_counts(&resample_units, nu);
    let e = errors::Errors::compute(t, &s.metric, &counts);
    let mut r = Report {
        meta: Meta {
            metric: s.metric.clone(),
            top_k: s.top_k,
            good: s.good.clone(),
            ratio_eps: s.ratio_eps,
            level: s.level,
            resamples: s.resamples,
            seed,
            specs_total: t.n_specs(),
            specs_ok: t.n_specs(),
            units: nu,
            rows: t.rows,
            kinds: t
                .importance
                .iter()
                .map(|k| (k.level.clone(), k.kind.clone()))
                .collect(),
            ..Default::default()
        },
        cautions: CAUTIONS.iter().map(|c| c.to_string()).collect(),
        ..Default::default()
    };
    // The stored metric must be what the predictions give (same contract, two readings).
    if let Some(stored) = t.stored.get(&s.metric) {
        let off = stored
            .iter()
            .zip(&e.point)
            .filter(|(a, b)| (*a - *b).abs() > 1e-9 * (1.0 + a.abs()))
            .count();
        if off > 0 {
            r.meta.notes.push(format!(
                "{off} specs' stored {} differs from their predictions' (a damaged or mixed run?): the predictions' value is used",
                s.metric
            ));
        }
    }
    let Some(best) = e.best() else {
        r.headline = headline::headline(&r, &[]);
        return Ok(Built {
            report: r,
            resample_units,
            units: t.units.clone(),
            tests: Vec::new(),
        });
    };
    let best_err = e.point[best];
    r.meta.best_spec = t.spec_ids[best].clone();
    r.meta.best_error = best_err;
    r.meta.median_error = stats::median(&e.point);
    let (margin, margin_default) = match s.margin {
        Some(m) => (m, false),
        None => {
            let sd = stats::sd(e.replicates(best));
            (if sd.is_nan() { 0.0 } else { sd }, true)
        }
    };
    r.meta.margin = margin;
    r.meta.margin_default = margin_default;
    let good = [
        goodset::ratio(&e.point, best_err, s.ratio_eps),
        goodset::margin(&e.point, best_err, margin),
        goodset::paired(&e, best, s.level),
    ];
    let mname = &s.metric;
    let classes = t.fit_classes();
    r.good_sets = vec![
        goodset::summary(
            "ratio",
            format!(
                "{mname} <= (1 + {}) x best = {:.4}",
                s.ratio_eps,
                best_err * (1.0 + s.ratio_eps)
            ),
            best_err * (1.0 + s.ratio_eps),
            &good[0],
            &classes,
        ),
        goodset::summary(
            "margin",
            format!(
                "{mname} <= best + {margin:.4}{} = {:.4}",
                if margin_default {
                    " (one bootstrap s.e. of the best)"
                } else {
                    ""
                },
                best_err + margin
            ),
            best_err + margin,
            &good[1],
            &classes,
        ),
        goodset::summary(
            "paired",
            format!(
                "kept unless worse than the best in more than {:.0}% of {} paired unit resamples \
                 (a one-sided test at {:.0}% for each spec on its own: not adjusted for the many \
                 specs, the best chosen on the same data, so not a confidence set for the best spec)",
                100.0 * s.level,
                s.resamples,
                100.0 * (1.0 - s.level)
            ),
            f64::NAN,
            &good[2],
            &classes,
        ),
    ];
    let gi = GOOD_DEFINITIONS
        .iter()
        .position(|g| *g == s.good)
        .unwrap_or(0);
    let chosen = &good[gi];
    let (dims, choices) = varying(t);
    r.curve = curve::curve(&t.spec_ids, &e, s.level, &choices, &good);
    r.error_by_choice = influence::error_by_choice(&dims, &choices, &e.point);
    r.error_by_param = influence::error_by_param(&t.params, &e.point);
    r.error_shares = influence::error_shares(&dims, &choices, &e.point);
    for (g, def) in GOOD_DEFINITIONS.iter().enumerate() {
        for (d, dim) in dims.iter().enumerate() {
            let ci: Vec<usize> = choices.iter().map(|c| c[d]).collect();
            r.good_makeup.extend(goodset::makeup(
                def,
                &dim.dimension,
                &dim.choices,
                &ci,
                &good[g],
            ));
        }
    }
    for kt in &t.importance {
        let (by, sh) = influence::rank_influence(kt, &dims, &choices, s.top_k);
        r.rank_by_choice.extend(by);
        r.rank_shares.extend(sh);
        let (sums, counts) = distribution::summarise(kt, chosen, s.top_k);
        r.importance.extend(sums);
        r.rank_counts.extend(counts);
        if let Some(a) = distribution::agreement(kt, chosen, &e.point, &t.spec_ids, s.agreement_max)
        {
            r.agreement.push(a);
        }
    }
    // Conclusions: automatic ones on the primary kind of each level, then the claims.
    let mut tests = Vec::new();
    let prim: Vec<usize> = ["indicator", "group"]
        .iter()
        .filter_map(|l| primary(&t.importance, l))
        .collect();
    for &ti in &prim {
        let kt = &t.importance[ti];
        for st in conclusions::automatic(kt, &r.importance, s.top_k) {
            r.conclusions.push(conclusions::evaluate(
                "auto",
                st.text(kt),
                &st,
                kt,
                chosen,
                &dims,
                &choices,
            ));
            tests.push(Some((ti, st)));
        }
    }
    let pick = |l: &str| primary(&t.importance, l);
    for (i, c) in s.claim.iter().enumerate() {
        let (ti, st) = conclusions::resolve_claim(c, &t.importance, &pick, s.top_k)
            .map_err(|m| Error::Space(format!("map.claim[{i}]: {m}")))?;
        let kt = &t.importance[ti];
        let text = c.label.clone().unwrap_or_else(|| st.text(kt));
        r.conclusions.push(conclusions::evaluate(
            "claim", text, &st, kt, chosen, &dims, &choices,
        ));
        tests.push(Some((ti, st)));
    }
    // Stability over the same resamples.
    let rule = match s.good.as_str() {
        "margin" => stability::Rule::Margin(margin),
        _ => stability::Rule::Ratio(s.ratio_eps),
    };
    if s.good == "paired" {
        r.meta.notes.push(format!(
            "Stability: each resample's good set uses the ratio rule (eps {}), as the paired rule would need a bootstrap inside every resample.",
            s.ratio_eps
        ));
    }
    let sets = stability::resample_sets(&e, rule);
    for kt in &t.importance {
        r.stability.extend(stability::stability(kt, &sets, s.top_k));
    }
    r.best_frequency = stability::best_frequency(&sets, &t.spec_ids);
    r.dimensions = dims;
    r.meta.specs_ok = t.n_specs();
    let prim_kinds: Vec<(String, String)> = prim
        .iter()
        .map(|&i| (t.importance[i].level.clone(), t.importance[i].kind.clone()))
        .collect();
    r.headline = headline::headline(&r, &prim_kinds);
    Ok(Built {
        report: r,
        resample_units,
        units: t.units.clone(),
        tests,
    })
}

/// Folder of the report inside a run directory.
pub use crate::schema::REPORT_DIR;

/// Marker file of a report folder.
pub use crate::schema::REPORT_MARKER as MARKER;

/// Write a built report into `dir`, replacing a previous report there: everything is
/// written into a hidden sibling folder first and renamed into place when complete. A
/// non-empty `dir` that holds no forkmap report is refused.
pub fn write(built: &Built, dir: &Path) -> Result<Vec<PathBuf>> {
    let out_err = |m: String| Error::Output {
        path: dir.to_path_buf(),
        msg: m,
    };
    if dir.exists() {
        if !dir.is_dir() {
            return Err(out_err("exists and is not a directory".into()));
        }
        let empty = std::fs::read_dir(dir)
            .map_err(|e| Error::io(dir, e))?
            .next()
            .is_none();
        if !empty && !is_report(dir) {
            return Err(out_err(
                "already exists, is not empty and holds no forkmap report: choose another --out"
                    .into(),
            ));
        }
    }
    let parent = match dir.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    };
    std::fs::create_dir_all(&parent).map_err(|e| Error::io(&parent, e))?;
    let name = dir
        .file_name()
        .and_then(|n| n.to_str())
        .unwrap_or("report")
        .to_string();
    let tmp = parent.join(format!(".{name}.tmp-{}", std::process::id()));
    if tmp.exists() {
        std::fs::remove_dir_all(&tmp).map_err(|e| Error::io(&tmp, e))?;
    }
    std::fs::create_dir_all(&tmp).map_err(|e| Error::io(&tmp, e))?;
    let res = write_into(built, &tmp);
    let files = match res {
        Ok(f) => f,
        Err(e) => {
            let _ = std::fs::remove_dir_all(&tmp);
            return Err(e);
        }
    };
    // Swap: old aside, new into place, old removed.
    let old = parent.join(format!(".{name}.old-{}", std::process::id()));
    if dir.exists() {
        std::fs::rename(dir, &old).map_err(|e| Error::io(dir, e))?;
    }
    if let Err(e) = std::fs::rename(&tmp, dir) {
        let _ = std::fs::rename(&old, dir);
        let _ = std::fs::remove_dir_all(&tmp);
        return Err(Error::io(dir, e));
    }
    if old.exists() {
        let _ = std::fs::remove_dir_all(&old);
    }
    Ok(files
        .into_iter()
        .map(|f| dir.join(f.file_name().unwrap_or_default()))
        .collect())
}

/// Whether `dir` holds a report written by [`write`].
pub fn is_report(dir: &Path) -> bool {
    std::fs::read_to_string(dir.join(MARKER))
        .ok()
        .and_then(|t| serde_json::from_str::<serde_json::Value>(&t).ok())
        .is_some_and(|v| v["tool"] == "forkmap map")
}

fn write_into(built: &Built, dir: &Path) -> Result<Vec<PathBuf>> {
    let mut files = tables::write_all(built, dir)?;
    if let Some(n) = &built.report.nested {
        files.extend(nested::write_tables(n, dir)?);
    }
    let head = built.report.headline.join("\n") + "\n";
    let hp = dir.join("headline.txt");
    crate::sink::write_bytes_atomic(&hp, head.as_bytes())?;
    files.push(hp);
    files.extend(render(&built.report, dir)?);
    let m = &built.report.meta;
    let marker = serde_json::json!({
        "tool": "forkmap map",
        "version": env!("CARGO_PKG_VERSION"),
        "runs": m.runs,
        "metric": m.metric,
        "top_k": m.top_k,
        "good": m.good,
        "ratio_eps": m.ratio_eps,
        "margin": m.margin,
        "margin_default": m.margin_default,
        "level": m.level,
        "resamples": m.resamples,
        "seed": m.seed,
        "specs_read": m.specs_total,
        "specs_ok": m.specs_ok,
        "units": m.units,
        "rows": m.rows,
        "notes": m.notes,
        "headline": built.report.headline,
        "files": files.iter().filter_map(|f| f.file_name().and_then(|n| n.to_str())).collect::<Vec<_>>(),
    });
    let mp = dir.join(MARKER);
    crate::sink::write_bytes_atomic(
        &mp,
        serde_json::to_string_pretty(&marker)
            .unwrap_or_default()
            .as_bytes(),
    )?;
    files.push(mp);
    Ok(files)
}

/// The render half: the SVG plots ([`plots`]) and the offline page `index.html` ([`html`]).
fn render(report: &Report, dir: &Path) -> Result<Vec<PathBuf>> {
    let mut files = plots::write_all(report, dir)?;
    html::write(report, dir)?;
    files.push(dir.join("index.html"));
    Ok(files)
}
