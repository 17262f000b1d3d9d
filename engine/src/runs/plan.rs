//! What a sweep will do, before it does it: dimensions, counts, a timed estimate, warnings.

use crate::run::Prepared;
use crate::space::{options_of, Dim, DIMENSIONS};
use crate::sweep::Sweep;
use std::collections::BTreeMap;
use std::fmt::Write;
use std::time::Instant;

pub struct PlanReport {
    pub text: String,
    pub specs: usize,
    pub fits: usize,
    pub estimate_seconds: f64,
    pub warnings: Vec<String>,
}

/// Warnings about the design (not errors).
pub fn warnings(p: &Prepared) -> Vec<String> {
    let mut w = p.space.warnings.clone();
    if !p.panel.skipped.is_empty() {
        w.push(format!(
            "data.indicators = \"auto\" skipped {} column(s) whose cells are mostly text: {} (not indicators; list them under data.ignore to silence this, or fix their cells)",
            p.panel.skipped.len(),
            p.panel
                .skipped
                .iter()
                .map(|c| format!("`{c}`"))
                .collect::<Vec<_>>()
                .join(", ")
        ));
    }
    let units = p.panel.n_units();
    let limit = (units as f64 / 10.0).max(1.0);
    let pools = &p.space.options[Dim::Pool.index()];
    let comp = &p.space.options[Dim::Compress.index()];
    let uncompressed = comp.iter().any(|c| c.option == "none");
    for pool in pools {
        let size = pool.members.as_ref().map(|m| m.len()).unwrap_or(0);
        if uncompressed && size as f64 > limit {
            w.push(format!(
                "pool `{}` offers {size} candidate indicators for {units} units uncompressed: more than about one per ten units (a common-practice rule of thumb, no source); expect unstable importances",
                pool.option
            ));
        }
    }
    if p.panel.row_wave.iter().any(Option::is_some) {
        let mut rows = vec![0usize; units];
        for &u in &p.panel.row_unit {
            rows[u] += 1;
        }
        let single: Vec<&str> = (0..units)
            .filter(|&u| rows[u] == 1)
            .map(|u| p.panel.units[u].as_str())
            .collect();
        if !single.is_empty() {
            let shown: Vec<&str> = single.iter().take(5).copied().collect();
            w.push(format!(
                "{} of {units} units have one row only ({}{}): accepted (grouped folds keep each unit whole in one fold); their per-unit errors rest on one wave",
                single.len(),
                shown.join(", "),
                if single.len() > shown.len() { ", ..." } else { "" }
            ));
        }
    }
    for c in comp {
        if let Some(k) = c.param("k") {
            if k > limit {
                w.push(format!("compress `{}` keeps {k} components for {units} units: more than about one per ten units (rule of thumb)", c.label()));
            }
        }
    }
    w
}

/// Build the plan; `probe` times a few fits to estimate the run time with `threads`.
pub fn plan(p: &Prepared, threads: usize, probe: bool) -> PlanReport {
    let mut t = String::new();
    describe_inputs(p, &mut t);
    let (specs, fits) = describe_counts(p, &mut t);
    let estimate = if probe {
        timing_probe(p, threads, &mut t)
    } else {
        f64::NAN
    };
    describe_derived(p, fits, estimate, &mut t);
    let warnings = describe_warnings(p, &mut t);
    PlanReport {
        text: t,
        specs,
        fits,
        estimate_seconds: estimate,
        warnings,
    }
}

/// The config, the data and each dimension's options, then the exclusions.
fn describe_inputs(p: &Prepared, t: &mut String) {
    let _ = writeln!(t, "config  {}", p.cfg.source);
    let _ = writeln!(
        t,
        "data    {}: {} rows, {} units, {} indicators{}",
        p.data_path.display(),
        p.panel.n_rows(),
        p.panel.n_units(),
        p.panel.indicators.len(),
        if p.panel.codebook.is_empty() {
            String::new()
        } else {
            format!(", {} codebook groups", p.panel.groups().len())
        }
    );
    let _ = writeln!(t, "\nchoice dimensions");
    for (d, dim) in DIMENSIONS.iter().enumerate() {
        let opts = &p.space.options[d];
        let labels: Vec<String> = opts
            .iter()
            .map(|c| match &c.members {
                Some(m) => format!("{} ({} indicators)", c.label(), m.len()),
                None => c.label(),
            })
            .collect();
        let _ = writeln!(t, "  {dim:<10} {:>3}  {}", opts.len(), labels.join(", "));
    }
    if !p.space.exclusion_rules.is_empty() {
        let _ = writeln!(
            t,
            "\nexclusions ({} combinations removed)",
            p.space.excluded
        );
        for r in &p.space.exclusion_rules {
            let _ = writeln!(t, "  - {r}");
        }
    }
}

/// Spec, fold and fit counts, the importance and curves work: (specs, model fits).
fn describe_counts(p: &Prepared, t: &mut String) -> (usize, usize) {
    let specs = p.space.specs.len();
    let fits = specs * p.folds.n_fits_per_spec();
    match p.space.sampled_from {
        Some(total) => {
            let _ = writeln!(
                t,
                "\nspecs   {specs} (a seeded random sample of the {total} specs in the space)"
            );
        }
        None => {
            let _ = writeln!(t, "\nspecs   {specs}");
        }
    }
    let _ = writeln!(
        t,
        "folds   {}: k = {}, repeats = {} -> {} fits per spec, {fits} model fits in all",
        p.cfg.folds.scheme.name(),
        p.folds.k,
        p.folds.repeats,
        p.folds.n_fits_per_spec()
    );
    let imp = &p.cfg.importance;
    if imp.wants("permutation") || imp.wants("group") {
        let per_fold = imp.repeats
            * (if imp.wants("permutation") {
                p.panel.indicators.len()
            } else {
                0
            } + if imp.wants("group") {
                p.panel.groups().len()
            } else {
                0
            });
        let _ = writeln!(
            t,
            "importance: {} x {} repeat(s) -> up to {} extra pipeline predictions per spec ({} per fold); the timing probe includes them",
            imp.kinds.join(", "),
            imp.repeats,
            per_fold * p.folds.n_fits_per_spec(),
            per_fold
        );
        if let Some(w) = imp.within {
            let _ = writeln!(t, "            only for specs with skill within {w} of the best (a second pass after the sweep; its cost is not in the estimate)");
        }
    } else if imp.wants("native") {
        let _ = writeln!(t, "importance: native only (no extra fits)");
    }
    if let Some(c) = p.cfg.curves.checked().ok().filter(|c| c.draw) {
        let _ = writeln!(
            t,
            "{}",
            crate::curves::pass::cost(p, c.members, c.top_k, c.grid, c.resamples)
        );
    }
    (specs, fits)
}

/// The stage tree's size and the timing probe: a seeded ~2% of the specs through the real
/// sweep, scaled up by the cost model; the estimated seconds (NaN when the probe cannot run).
fn timing_probe(p: &Prepared, threads: usize, t: &mut String) -> f64 {
    let mut estimate = f64::NAN;
    if let Ok(sweep) = Sweep::new(&p.panel, &p.space, &p.folds, p.cfg.seed, None) {
        let _ = writeln!(
            t,
            "stage tree ({}): {} distinct preparations, each fitted once per fold",
            crate::space::Dim::STAGES.map(|d| d.name()).join(" -> "),
            sweep.n_stage_nodes()
        );
        // Probe: run a seeded random ~2% of the specs (at least 30, at most 200) through
        // the real sweep on `threads` threads, then scale up by the cost model below.
        let n = p.space.specs.len();
        let m = (n / 50).clamp(30, 200).min(n);
        let mut subset: Vec<usize> = {
            use rand::SeedableRng;
            let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(crate::streams::mix(
                p.cfg.seed,
                crate::streams::PLAN_TIMING,
            ));
            rand::seq::index::sample(&mut rng, n, m).into_vec()
        };
        subset.sort_unstable();
        let mut total = f64::NAN;
        if let Ok(mut probe) = Sweep::new(&p.panel, &p.space, &p.folds, p.cfg.seed, Some(&subset)) {
            let imp = &p.cfg.importance;
            probe.importance = Some(if imp.deferred() {
                imp.only(&["native"])
            } else {
                imp.clone()
            });
            // Per family: (fit seconds, count, summed cost units, importance seconds).
            let model_secs: std::sync::Mutex<BTreeMap<String, (f64, usize, f64, f64)>> =
                Default::default();
            // Importance seconds by fill option: permuting an indicator reruns the spec's
            // preparations on the test rows, and the fill dominates that cost.
            let imp_by_fill: std::sync::Mutex<BTreeMap<String, (f64, usize)>> = Default::default();
            let probe_costs = crate::sweep::nested_costs(&p.space, &p.panel, Some(&subset));
            let t0 = Instant::now();
            let run = || {
                probe.run(&|r| {
                    if let Ok(mut g) = model_secs.lock() {
                        let e = g
                            .entry(
                                p.space.specs[r.spec]
                                    .choice(crate::decl::Dim::Model)
                                    .option
                                    .clone(),
                            )
                            .or_default();
                        e.0 += r.seconds;
                        e.1 += 1;
                        e.2 += probe_costs[r.spec];
                        e.3 += r.importance_seconds;
                        drop(g);
                        if let Ok(mut f) = imp_by_fill.lock() {
                            let e = f
                                .entry(
                                    p.space.specs[r.spec]
                                        .choice(crate::decl::Dim::Fill)
                                        .option
                                        .clone(),
                                )
                                .or_default();
                            e.0 += r.importance_seconds;
                            e.1 += 1;
                        }
                    }
                })
            };
            match rayon::ThreadPoolBuilder::new()
                .num_threads(threads.max(1))
                .build()
            {
                Ok(pool) => pool.install(run),
                Err(_) => run(),
            }
            let wall = t0.elapsed().as_secs_f64();
            let _ = writeln!(
                t,
                "\ntiming probe: {m} specs run in {wall:.2}s; model seconds per spec (all folds):"
            );
            let per_family = model_secs.into_inner().unwrap_or_default();
            for (fam, (secs, count, _, imp)) in &per_family {
                let _ = writeln!(
                    t,
                    "  {fam:<10} {:.4}s fits + {:.4}s importances ({count} probed)",
                    secs / *count as f64,
                    imp / *count as f64
                );
            }
            total = estimate_from_probe(
                p,
                &per_family,
                &imp_by_fill.into_inner().unwrap_or_default(),
                Probe {
                    wall,
                    threads: threads.max(1),
                    nodes: (probe.n_stage_nodes(), sweep.n_stage_nodes()),
                    fills: (probe.n_fill_nodes(), sweep.n_fill_nodes()),
                    shared: probe.shared_draw_seconds(),
                },
            );
        }
        estimate = total;
        let _ = writeln!(
            t,
            "estimated run time on {threads} thread(s): {}",
            human(estimate)
        );
    }
    estimate
}

/// The nested estimate's, the null's and the refit's cost lines.
fn describe_derived(p: &Prepared, fits: usize, estimate: f64, t: &mut String) {
    let imp = &p.cfg.importance;
    if let Some(n) = crate::nested::exec::plan_text(&p.cfg, &p.panel, &p.space, fits, estimate) {
        t.push_str(&n);
    }
    if let Some(ns) = p
        .cfg
        .null
        .as_ref()
        .and_then(|n| n.check(&p.cfg.map.metric).ok())
    {
        t.push_str(&crate::null::plan::lines(
            &ns,
            p.space.specs.len(),
            p.folds.n_fits_per_spec(),
            estimate,
            imp.wants("permutation") || imp.wants("group"),
        ));
    }
    if let Some(r) = crate::refit::exec::plan_text(
        &p.cfg,
        &p.panel,
        &p.space,
        p.folds.n_fits_per_spec(),
        estimate,
    ) {
        t.push_str(&r);
    }
}

/// Design warnings (and models that take no row weights); returns the warnings.
fn describe_warnings(p: &Prepared, t: &mut String) -> Vec<String> {
    let mut no_weights = Vec::new();
    let mi = Dim::Model.index();
    for o in options_of(Dim::Model) {
        if !o.weighted && p.space.options[mi].iter().any(|c| c.option == o.name) {
            no_weights.push(o.name);
        }
    }
    let w = warnings(p);
    if !w.is_empty() || !no_weights.is_empty() {
        let _ = writeln!(t, "\nwarnings");
        for x in &w {
            let _ = writeln!(t, "  - {x}");
        }
        for n in no_weights {
            let _ = writeln!(t, "  - model `{n}` takes no row weights: it runs with weighting `rows` only (its other combinations are excluded automatically)");
        }
    }
    w
}

/// What the timing probe measured beside the per-spec seconds.
struct Probe {
    wall: f64,
    threads: usize,
    /// Stage preparations (probe, whole space).
    nodes: (usize, usize),
    /// Fill preparations (probe, whole space).
    fills: (usize, usize),
    /// CPU seconds the probe spent filling shared permutation draws.
    shared: f64,
}

/// The run-time estimate from a probe, by a per-family cost model: each family's fit
/// seconds per cost unit (see `Regressor::cost`) measured on the probed specs, applied to the
/// cost of every spec of the space, plus the mean importance seconds of the probed specs
/// with the same fill (importances permute every indicator whatever the model, and rerun
/// the preparations); a family or fill the probe missed takes the probe's overall rate.
/// The filling of permutation draws is shared by all specs below a fill, so that part of
/// the importance seconds is counted per fill preparation, not per spec. Plus the stage
/// fits: the probe's remaining CPU seconds per stage preparation, times the preparations
/// of the whole tree. Divided by the threads (the sweep keeps them busy).
fn estimate_from_probe(
    p: &Prepared,
    per_family: &BTreeMap<String, (f64, usize, f64, f64)>,
    imp_by_fill: &BTreeMap<String, (f64, usize)>,
    probe: Probe,
) -> f64 {
    let Probe {
        wall,
        threads,
        nodes: (probe_nodes, all_nodes),
        fills: (probe_fills, all_fills),
        shared,
    } = probe;
    let (secs, cost, count, imp) = per_family
        .values()
        .fold((0.0, 0.0, 0usize, 0.0), |(s, c, k, i), v| {
            (s + v.0, c + v.2, k + v.1, i + v.3)
        });
    if cost <= 0.0 || count == 0 {
        return f64::NAN;
    }
    // The part of each spec's importance seconds that is its own (not shared draws).
    let own = if imp > 0.0 {
        (1.0 - shared / imp).clamp(0.0, 1.0)
    } else {
        1.0
    };
    let overall = (secs / cost, own * imp / count as f64);
    // Per spec: fit seconds by its family's rate, plus its own importance seconds; the
    // fit seconds are also summed by family for the debug log.
    let mut fit_by_family: BTreeMap<&str, f64> = BTreeMap::new();
    let mut model = 0.0;
    let costs = crate::sweep::nested_costs(&p.space, &p.panel, None);
    for (s, &cost) in p.space.specs.iter().zip(&costs) {
        let fam = s.choice(crate::decl::Dim::Model).option.as_str();
        let rate = per_family
            .get(fam)
            .filter(|v| v.2 > 0.0)
            .map_or(overall.0, |v| v.0 / v.2);
        let fit = rate * cost;
        *fit_by_family.entry(fam).or_default() += fit;
        let imp = imp_by_fill
            .get(&s.choice(crate::decl::Dim::Fill).option)
            .filter(|v| v.1 > 0)
            .map_or(overall.1, |v| own * v.0 / v.1 as f64);
        model += fit + imp;
    }
    if probe_fills > 0 {
        model += shared / probe_fills as f64 * all_fills as f64;
    }
    tracing::debug!(?fit_by_family, "plan: estimated fit seconds by family");
    let stage_cpu = (wall * threads as f64 - secs - imp).max(0.0);
    let stages = if probe_nodes > 0 {
        stage_cpu / probe_nodes as f64 * all_nodes as f64
    } else {
        0.0
    };
    tracing::debug!(
        model,
        shared,
        own,
        probe_fills,
        all_fills,
        stages,
        stage_cpu,
        probe_nodes,
        all_nodes,
        "plan estimate"
    );
    (model + stages) / threads as f64
}

pub use crate::progress::human;
