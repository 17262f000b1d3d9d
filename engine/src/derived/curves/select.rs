//! Which specs and indicators a curves pass covers, read from the run's tables the way
//! the report reads them (one-way: the tables are never written here).

use crate::report::data::RunTables;
use crate::report::errors::Errors;
use crate::report::goodset;

/// The best spec (lowest `metric`, ties to the lower id) and the good set under the ratio
/// rule `error <= (1 + eps) x best` (the report's `ratio` definition), as spec ids, best
/// first then the others in id order.
pub fn best_and_good(t: &RunTables, metric: &str, eps: f64) -> Option<(String, Vec<String>)> {
    let e = Errors::compute(t, metric, &[]);
    let best = e.best()?;
    let members = goodset::ratio(&e.point, e.point[best], eps);
    let mut good = vec![t.spec_ids[best].clone()];
    for (i, &m) in members.iter().enumerate() {
        if m && i != best {
            good.push(t.spec_ids[i].clone());
        }
    }
    Some((t.spec_ids[best].clone(), good))
}

/// The `k` indicators with the largest mean importance over the specs holding the kind
/// (those listed in `among` when any of them holds the kind; a spec without a finite
/// importance for an indicator, e.g. one whose pool lacks it, counts as 0), in the
/// report's primary indicator-level kind (permutation, else the kind most specs hold; ties
/// by name); `None` when the run
/// has no indicator-level importance.
pub fn top_indicators(
    t: &RunTables,
    k: usize,
    among: Option<&[String]>,
) -> Option<(String, Vec<String>)> {
    // The report's primary kind: permutation when present, else the kind most specs hold.
    let kt = t
        .importance
        .iter()
        .find(|kt| kt.level == "indicator" && kt.kind == "permutation" && !kt.specs.is_empty())
        .or_else(|| {
            t.importance
                .iter()
                .enumerate()
                .filter(|(_, kt)| kt.level == "indicator" && !kt.specs.is_empty())
                .max_by_key(|(i, kt)| (kt.specs.len(), std::cmp::Reverse(*i)))
                .map(|(_, kt)| kt)
        })?;
    let nn = kt.n_names();
    let rows: Vec<usize> = (0..kt.specs.len())
        .filter(|&i| among.is_none_or(|m| m.contains(&t.spec_ids[kt.specs[i]])))
        .collect();
    let rows = if rows.is_empty() {
        (0..kt.specs.len()).collect()
    } else {
        rows
    };
    let ns = rows.len() as f64;
    let mut mean: Vec<(f64, &String)> = (0..nn)
        .map(|j| {
            let s: f64 = rows
                .iter()
                .map(|&i| kt.values[i * nn + j])
                .filter(|v| v.is_finite())
                .sum();
            (s / ns, &kt.names[j])
        })
        .collect();
    mean.sort_by(|a, b| b.0.total_cmp(&a.0).then(a.1.cmp(b.1)));
    Some((
        kt.kind.clone(),
        mean.into_iter().take(k).map(|(_, n)| n.clone()).collect(),
    ))
}

/// The good set under the report's chosen definition (`[map] good`: ratio, margin or
/// paired), computed as `forkmap map` computes it (same metric, resamples and seed), so
/// the curves' members are the report's good set. Returns the best spec's id, the members
/// (best first, then by id) and the rule in words.
pub fn chosen_good(
    t: &RunTables,
    ms: &crate::config::map::MapSection,
    seed: u64,
) -> Option<(String, Vec<String>, String)> {
    use crate::report::stats;
    let nu = t.n_units();
    let ru = stats::resample_indices(nu, ms.resamples, seed);
    let counts = stats::resample_counts(&ru, nu);
    let e = Errors::compute(t, &ms.metric, &counts);
    let best = e.best()?;
    let be = e.point[best];
    let (members, rule) = match ms.good.as_str() {
        "margin" => {
            let m = ms.margin.unwrap_or_else(|| {
                let sd = stats::sd(e.replicates(best));
                if sd.is_nan() {
                    0.0
                } else {
                    sd
                }
            });
            (
                goodset::margin(&e.point, be, m),
                format!("margin: {} <= best + {m:.4}", ms.metric),
            )
        }
        "paired" => (
            goodset::paired(&e, best, ms.level),
            format!(
                "paired: not worse than the best in more than {:.0}% of {} paired unit resamples",
                100.0 * ms.level,
                ms.resamples
            ),
        ),
        _ => (
            goodset::ratio(&e.point, be, ms.ratio_eps),
            format!("ratio: {} <= (1 + {}) x best", ms.metric, ms.ratio_eps),
        ),
    };
    let mut good = vec![t.spec_ids[best].clone()];
    for (i, &m) in members.iter().enumerate() {
        if m && i != best {
            good.push(t.spec_ids[i].clone());
        }
    }
    Some((t.spec_ids[best].clone(), good, rule))
}
