//! The permutation null in the report (issue 18): reads `RUN_DIR/null/` one-way and sets
//! the observed run against it.
//!
//! * Observed statistics are taken over the null's own spec sample (`spec_ids` of
//!   `null/manifest.json`), from the run's `specs` table, with the null's metric: the
//!   observed best and median error are compared with the same statistics of every draw.
//! * p-values: `p = (1 + #{draws at least as extreme}) / (1 + D)`, with "at least as
//!   extreme" meaning a null error <= the observed one (ties count), and `D` the complete
//!   draws. The +1 correction counts the observed data as one of the permutations, so p is
//!   never 0 and its smallest value is 1/(1 + D).
//! * Indicators: the observed top spec is the best of the sample's specs holding native
//!   importances; its kind (`coefficient` or `impurity`) is then fixed, and each draw's top
//!   spec is the draw's best spec of that kind (review S9: kinds are never mixed). An
//!   indicator (group) is "top" when its rank there is <= top_k and its importance > 0,
//!   the same rule in the observed run and in every draw. Its
//!   chance rate is the share of draws where it is top (about top_k names are top in each
//!   draw, so the rates average about top_k / names). No per-indicator p-value is given:
//!   one for the names that came out top would be selected after the fact (under the
//!   complete null every observed-top name would get p of about top_k / names).
//! * Conclusions: each one's support over every draw's good set, from `null/goodranks`
//!   ([`super::null_claims`]).

use super::conclusions::Statement;
use super::data::RunTables;
use super::model::{Report, GOOD_DEFINITIONS};
use super::null_claims::{DrawRule, NullClaims};
use crate::error::Result;
use crate::null::table::{read_draws, read_goodranks, read_tops, NULL_DIR};
use crate::results::RunSet;
use crate::schema::report as columns;
use crate::sink::Cols;
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

/// The null as the report shows it.
#[derive(Debug, Clone, Default)]
pub struct NullReport {
    /// Complete draws read (D).
    pub draws: usize,
    /// Draws the null asked for.
    pub draws_asked: usize,
    /// Specs per draw (the null's sample) and of the space.
    pub specs: usize,
    pub specs_in_space: usize,
    pub metric: String,
    pub top_k: usize,
    /// Over the sample's ok specs in the observed run.
    pub observed_best: f64,
    pub observed_median: f64,
    /// Per draw (draw order).
    pub null_best: Vec<f64>,
    pub null_median: Vec<f64>,
    pub p_best: f64,
    pub p_median: f64,
    /// The observed spec whose native importances decide "top" (None: no sample spec
    /// holds native importances).
    pub top_spec: Option<String>,
    /// Its native importance kind: every draw's top is the draw's best spec of this kind.
    pub top_kind: Option<String>,
    /// Draws that hold a spec of that kind (the others count as "not top" for every name).
    pub draws_with_kind: usize,
    pub indicators: Vec<NullIndicator>,
    /// Units, and of them those never permuted (alone in their set of waves).
    pub units: usize,
    pub units_fixed: usize,
    /// Notes (an incomplete null, specs missing from the observed run).
    pub notes: Vec<String>,
    /// Each conclusion's support under the null (`report::null_claims`).
    pub claims: NullClaims,
}

/// One indicator (or group) under the null.
#[derive(Debug, Clone, Default)]
pub struct NullIndicator {
    pub level: String,
    pub name: String,
    /// Rank and top-k membership in the observed best spec (None: not held there).
    pub observed_rank: Option<u32>,
    pub observed_top: bool,
    /// Share of draws where it is top.
    pub chance_top: f64,
}

const NATIVE: [&str; 2] = ["coefficient", "impurity"];

/// When `set` is shards holding null draws: a note that the draws are spread over them
/// and `forkmap gather` joins them (the report shows no null section for shards).
pub fn shard_note(set: &RunSet) -> Option<String> {
    let draws: usize = set
        .dirs
        .iter()
        .filter(|d| d.shard.is_some())
        .filter_map(|d| std::fs::read_dir(d.path.join(NULL_DIR).join("draws")).ok())
        .map(|rd| {
            rd.filter_map(|e| e.ok())
                .filter(|e| e.file_name().to_string_lossy().ends_with(".parquet"))
                .count()
        })
        .sum();
    (draws > 0).then(|| {
        format!("The permutation null's draws are spread over the shards ({draws} done): `forkmap gather` joins them; its section is left out here.")
    })
}

/// The null of a whole-space run read as `set` (its tables `t`), when it has one. `r` is
/// the report so far (its settings and conclusions), `tests[i]` the kind table and
/// statement of `r.conclusions[i]` (`None`: not an importance statement).
pub fn analyse(
    set: &RunSet,
    t: &RunTables,
    r: &Report,
    tests: &[Option<(usize, Statement)>],
) -> Result<Option<NullReport>> {
    let report_metric = r.meta.metric.as_str();
    // The null of the report lives in a whole-space (or gathered) run directory; shards
    // hold only the draws dealt to them (see [`shard_note`]).
    let Some(dir) = set.dirs.iter().find(|d| d.shard.is_none()) else {
        return Ok(None);
    };
    let null_dir = dir.path.join(NULL_DIR);
    let Ok(text) = std::fs::read_to_string(null_dir.join(crate::schema::MANIFEST)) else {
        return Ok(None);
    };
    let m: serde_json::Value = serde_json::from_str(&text).unwrap_or_default();
    let draws = read_draws(&null_dir)?;
    if draws.is_empty() {
        return Ok(None);
    }
    let asked = m["draws"].as_u64().unwrap_or(0) as usize;
    let draws: Vec<_> = draws
        .into_iter()
        .filter(|d| (d.draw as usize) < asked)
        .collect();
    let ids: Vec<u64> = draws.iter().map(|d| d.draw as u64).collect();
    let tops = read_tops(&null_dir, &ids)?;
    let goodranks = read_goodranks(&null_dir, &ids)?;
    let metric = m["identity"]["metric"]
        .as_str()
        .unwrap_or("mae")
        .to_string();
    let top_k = m["identity"]["top_k"].as_u64().unwrap_or(3) as usize;
    let sample: Vec<&str> = m["spec_ids"]
        .as_array()
        .map(|a| a.iter().filter_map(|v| v.as_str()).collect())
        .unwrap_or_default();
    let mut n = NullReport {
        draws: draws.len(),
        draws_asked: asked,
        specs: sample.len(),
        specs_in_space: m["specs_in_space"].as_u64().unwrap_or(0) as usize,
        metric: metric.clone(),
        top_k,
        null_best: draws.iter().map(|d| d.best_error).collect(),
        null_median: draws.iter().map(|d| d.median_error).collect(),
        ..Default::default()
    };
    n.units = m["units"].as_u64().unwrap_or(0) as usize;
    n.units_fixed = m["units_fixed"].as_u64().unwrap_or(0) as usize;
    if n.units_fixed as f64 > crate::null::FIXED_WARN_SHARE * n.units as f64 {
        n.notes.push(format!(
            "Warning: permutation null: {}",
            crate::null::fixed_warning(n.units_fixed, n.units)
        ));
    }
    if n.draws < asked {
        n.notes.push(format!(
            "The null is incomplete: {} of {asked} draws (rerun the same `forkmap run` to finish it); the p-values use the draws present.",
            n.draws
        ));
    }
    if metric != report_metric {
        n.notes.push(format!(
            "The null ranks specs by {metric} (null.metric), the report by {report_metric}: the null's statistics and its top spec are those of {metric}."
        ));
    }
    // Observed: the sample's ok specs in the run, by spec index of `t`.
    let index: BTreeMap<&str, usize> = t
        .spec_ids
        .iter()
        .enumerate()
        .map(|(i, s)| (s.as_str(), i))
        .collect();
    let stored = t.stored.get(&metric);
    let mut obs: Vec<(f64, usize)> = sample
        .iter()
        .filter_map(|id| index.get(id).copied())
        .filter_map(|i| stored.map(|s| (s[i], i)))
        .filter(|(e, _)| e.is_finite())
        .collect();
    if obs.len() < sample.len() {
        n.notes.push(format!(
            "{} of the null's {} specs are not ok in the observed run: the observed statistics use the other {}.",
            sample.len() - obs.len(),
            sample.len(),
            obs.len()
        ));
    }
    // Lowest error first, then the spec id (the draws break ties by spec index, which
    // follows the id order of the space, not the report's).
    obs.sort_by(|a, b| {
        a.0.total_cmp(&b.0)
            .then_with(|| t.spec_ids[a.1].cmp(&t.spec_ids[b.1]))
    });
    let errors: Vec<f64> = obs.iter().map(|o| o.0).collect();
    n.observed_best = errors.first().copied().unwrap_or(f64::NAN);
    n.observed_median = if errors.is_empty() {
        f64::NAN
    } else {
        crate::metrics::quantile(&errors, 0.5)
    };
    n.p_best = crate::null::p_value(&n.null_best, n.observed_best, true);
    n.claims = claims(
        &m,
        t,
        r,
        tests,
        &sample,
        &metric,
        &draws,
        goodranks.as_deref(),
    );
    n.p_median = crate::null::p_value(&n.null_median, n.observed_median, true);

    // Observed top: the best sample spec holding a native kind at indicator level.
    let held = |i: usize| {
        t.importance.iter().position(|kt| {
            kt.level == "indicator"
                && NATIVE.contains(&kt.kind.as_str())
                && kt.specs.binary_search(&i).is_ok()
        })
    };
    let found = obs.iter().find_map(|&(_, i)| held(i).map(|k| (i, k)));
    let mut observed: BTreeMap<(String, String), (u32, bool)> = BTreeMap::new();
    if let Some((si, ki)) = found {
        n.top_spec = Some(t.spec_ids[si].clone());
        let kind = t.importance[ki].kind.clone();
        for kt in t.importance.iter().filter(|kt| kt.kind == kind) {
            let Ok(row) = kt.specs.binary_search(&si) else {
                continue;
            };
            let vals = kt.row_values(row);
            for (j, name) in kt.names.iter().enumerate() {
                let r = kt.rank(row, j);
                observed.insert(
                    (kt.level.clone(), name.clone()),
                    (r, r as usize <= top_k && vals[j] > 0.0),
                );
            }
        }
        n.top_kind = Some(kind);
    }
    // Chance: only the draws' tops of the observed top's kind (each draw's best spec
    // among the specs of that kind), so every draw's top is of the same kind.
    let mut chance: BTreeMap<(String, String), usize> = BTreeMap::new();
    let mut with_kind: Vec<i64> = Vec::new();
    for r in tops.iter().filter(|r| Some(&r.kind) == n.top_kind.as_ref()) {
        with_kind.push(r.draw);
        let e = chance.entry((r.level.clone(), r.name.clone())).or_default();
        if r.top {
            *e += 1;
        }
    }
    with_kind.sort_unstable();
    with_kind.dedup();
    n.draws_with_kind = with_kind.len();
    if let Some(kind) = &n.top_kind {
        if n.draws_with_kind < n.draws {
            n.notes.push(format!(
                "Null tops: {} of {} draws have no ok spec with {kind} importances; they count as draws where no name is top.",
                n.draws - n.draws_with_kind,
                n.draws
            ));
        }
    }
    let mut keys: Vec<(String, String)> = observed.keys().chain(chance.keys()).cloned().collect();
    keys.sort();
    keys.dedup();
    let d = n.draws as f64;
    for (level, name) in keys {
        let hits = chance
            .get(&(level.clone(), name.clone()))
            .copied()
            .unwrap_or(0);
        let o = observed.get(&(level.clone(), name.clone())).copied();
        let observed_top = o.is_some_and(|o| o.1);
        n.indicators.push(NullIndicator {
            observed_rank: o.map(|o| o.0),
            observed_top,
            chance_top: hits as f64 / d.max(1.0),
            level,
            name,
        });
    }
    // Indicators before groups; observed top first, then by chance rate.
    n.indicators.sort_by(|a, b| {
        (a.level != "indicator")
            .cmp(&(b.level != "indicator"))
            .then(b.observed_top.cmp(&a.observed_top))
            .then(b.chance_top.total_cmp(&a.chance_top))
            .then(a.name.cmp(&b.name))
    });
    Ok(Some(n))
}

/// The headline's sentence on the conclusions under the null. Claims listed in the config
/// are judged by their own p; automatic conclusions, picked on the observed good set, only
/// by their p adjusted for that choice (`report::null_family`). Each counts only when its
/// smallest possible p, (1 + unknown draws) / (1 + draws), reaches 5%. Not reaching 5% is
/// no evidence against a statement.
fn claims_headline(n: &NullReport) -> String {
    let c = &n.claims;
    let reach = |unknown: usize| (1.0 + unknown as f64) / (1.0 + n.draws as f64) <= 0.05;
    let listed: Vec<&super::null_claims::NullClaim> = c
        .claims
        .iter()
        .filter(|x| x.source == "claim" && x.why.is_empty())
        .collect();
    let testable: Vec<&&super::null_claims::NullClaim> =
        listed.iter().filter(|x| reach(x.draws_unknown)).collect();
    let auto: Vec<&super::null_claims::NullClaim> = c
        .claims
        .iter()
        .filter(|x| x.source == "auto" && x.why.is_empty())
        .collect();
    let auto_ok: Vec<&&super::null_claims::NullClaim> = auto
        .iter()
        .filter(|x| reach(x.family_draws_unknown))
        .collect();
    let sample = format!(
        "the null's {} sampled specs hold {} of the report's {} good specs",
        n.specs, c.report_good_in_sample, c.report_good
    );
    let families = auto
        .iter()
        .map(|x| x.family.as_str())
        .collect::<std::collections::BTreeSet<_>>()
        .len();
    let mut caveat = sample.clone();
    if c.report_good_in_sample == 0 && c.report_good > 0 {
        caveat.push_str(
            ", so these were tested on the sample's good set, not the report's (a null over every spec tests the report's)",
        );
    }
    if c.auto_not_chosen_on_sample > 0 {
        caveat.push_str(&format!(
            "; {} of them would not be picked on the sample's own good set",
            c.auto_not_chosen_on_sample
        ));
    }
    let auto_note = if auto.is_empty() {
        String::new()
    } else if auto_ok.is_empty() {
        format!(
            " The {} automatic conclusions the draws rerun could not reach an adjusted p <= 0.05 with {} draws (p adjusted for picking them on the observed data, within each of their {families} families; {caveat}; table null_claims).",
            auto.len(),
            n.draws
        )
    } else {
        let low = auto_ok.iter().filter(|x| x.p_adjusted <= 0.05).count();
        format!(
            " Of the {} automatic conclusions that {} draws can test at 5%, {low} have more support than the same selection reaches in the outcome-shuffled draws (p adjusted for picking them on the observed data <= 0.05, a bound that holds within each of their {families} families, not across them) and {} do not, which is no evidence against them ({caveat}; table null_claims).",
            auto_ok.len(),
            n.draws,
            auto_ok.len() - low
        )
    };
    if listed.is_empty() {
        return auto_note;
    }
    if testable.is_empty() {
        return format!(
            " The {} claims listed in the config could not reach p <= 0.05 with {} draws (draws where their support is unknown count against them; {sample}).{auto_note}",
            listed.len(),
            n.draws
        );
    }
    let low = testable.iter().filter(|x| x.p <= 0.05).count();
    format!(
        " Of the {} claims listed in the config that {} draws can test at 5%, {low} have more support than the outcome-shuffled draws give (p <= 0.05) and {} are not distinguishable from the null at 5%, which is no evidence against them ({sample}; table null_claims).{auto_note}",
        testable.len(),
        n.draws,
        testable.len() - low
    )
}

/// Each conclusion under the null (`report::null_claims`), with the report's good rule.
#[allow(clippy::too_many_arguments)]
fn claims(
    m: &serde_json::Value,
    t: &RunTables,
    r: &Report,
    tests: &[Option<(usize, Statement)>],
    sample: &[&str],
    metric: &str,
    draws: &[crate::null::table::DrawRow],
    ranks: Option<&[crate::null::table::RankRow]>,
) -> NullClaims {
    let rule = match r.meta.good.as_str() {
        "margin" => DrawRule::Margin(r.meta.margin),
        _ => DrawRule::Ratio(r.meta.ratio_eps),
    };
    let kinds: Vec<String> = m["identity"]["importance"]
        .as_array()
        .map(|a| {
            a.iter()
                .filter_map(|v| v.as_str().map(String::from))
                .collect()
        })
        .unwrap_or_else(|| vec!["native".into()]);
    let inp = super::null_claims::Inputs {
        t,
        sample,
        metric,
        rule,
        ranks_within: m["identity"]["ranks_within"].as_f64().unwrap_or(0.0),
        kinds,
        top_k: r.meta.top_k,
        draws,
        ranks,
    };
    let mut c = super::null_claims::evaluate(&inp, &r.conclusions, tests);
    let gi = GOOD_DEFINITIONS
        .iter()
        .position(|g| *g == r.meta.good)
        .unwrap_or(0);
    let good: Vec<&str> = r
        .curve
        .iter()
        .filter(|p| p.good[gi])
        .map(|p| p.spec_id.as_str())
        .collect();
    c.report_good = good.len();
    c.report_good_in_sample = good.iter().filter(|id| sample.contains(id)).count();
    if r.meta.good == "paired" {
        c.rule = format!(
            "{} (the ratio rule stands in for the paired rule: a paired bootstrap would need every spec's per-unit errors in every draw)",
            c.rule
        );
    }
    c
}

/// The headline sentence.
pub fn headline(n: &NullReport) -> String {
    let floor = 1.0 / (1.0 + n.draws as f64);
    let verdict = if floor > 0.05 {
        "not testable at the 5% level with so few draws (the smallest possible p is 1/(1 + draws))"
    } else if n.p_best <= 0.05 {
        "better than chance at the 5% level"
    } else {
        "not distinguishable from chance at the 5% level"
    };
    let beaten = n
        .null_best
        .iter()
        .filter(|v| !v.is_finite() || **v <= n.observed_best)
        .count();
    let over = if n.specs < n.specs_in_space {
        format!(
            " of the same {} sampled specs (not the report's best over all {} specs)",
            n.specs, n.specs_in_space
        )
    } else {
        String::new()
    };
    let claims = claims_headline(n);
    format!(
        "Permutation null ({} draws, outcome shuffled across units, {} specs each): the observed best {}{over} {} is {verdict} \
         (p = {:.3}; {beaten} of {} draws did as well); the observed median {} {} has p = {:.3}.{claims}",
        n.draws,
        n.specs,
        n.metric,
        super::plots::num(n.observed_best),
        n.p_best,
        n.draws,
        n.metric,
        super::plots::num(n.observed_median),
        n.p_median
    )
}

/// Quantile of the finite values (NaN when none).
pub fn q(v: &[f64], p: f64) -> f64 {
    let f: Vec<f64> = v.iter().copied().filter(|x| x.is_finite()).collect();
    if f.is_empty() {
        f64::NAN
    } else {
        crate::metrics::quantile(&f, p)
    }
}

/// `null_summary.parquet` and `null_indicators.parquet` under the report folder.
pub fn write_tables(n: &NullReport, dir: &Path) -> Result<Vec<PathBuf>> {
    let stats = [
        ("best", n.observed_best, &n.null_best, n.p_best),
        ("median", n.observed_median, &n.null_median, n.p_median),
    ];
    let s = Cols::default()
        .s(columns::null_summary::STATISTIC, stats.iter().map(|s| s.0))
        .s(
            columns::null_summary::METRIC,
            stats.iter().map(|_| n.metric.as_str()),
        )
        .f(columns::null_summary::OBSERVED, stats.iter().map(|s| s.1))
        .f(
            columns::null_summary::NULL_Q05,
            stats.iter().map(|s| q(s.2, 0.05)),
        )
        .f(
            columns::null_summary::NULL_MEDIAN,
            stats.iter().map(|s| q(s.2, 0.5)),
        )
        .f(
            columns::null_summary::NULL_Q95,
            stats.iter().map(|s| q(s.2, 0.95)),
        )
        .i(
            columns::null_summary::DRAWS_AS_GOOD,
            stats
                .iter()
                .map(|s| s.2.iter().filter(|v| !v.is_finite() || **v <= s.1).count() as i64),
        )
        .i(
            columns::null_summary::DRAWS,
            stats.iter().map(|_| n.draws as i64),
        )
        .i(
            columns::null_summary::SPECS,
            stats.iter().map(|_| n.specs as i64),
        )
        .f(columns::null_summary::P, stats.iter().map(|s| s.3))
        .write(dir, "null_summary")?;
    let ind = &n.indicators;
    let i = Cols::default()
        .s(
            columns::null_indicators::LEVEL,
            ind.iter().map(|r| r.level.as_str()),
        )
        .s(
            columns::null_indicators::NAME,
            ind.iter().map(|r| r.name.as_str()),
        )
        .s(
            columns::null_indicators::KIND,
            ind.iter().map(|_| n.top_kind.as_deref().unwrap_or("")),
        )
        .i(
            columns::null_indicators::OBSERVED_RANK,
            ind.iter().map(|r| r.observed_rank.map_or(-1, i64::from)),
        )
        .b(
            columns::null_indicators::OBSERVED_TOP,
            ind.iter().map(|r| r.observed_top),
        )
        .f(
            columns::null_indicators::CHANCE_TOP,
            ind.iter().map(|r| r.chance_top),
        )
        .i(
            columns::null_indicators::DRAWS,
            ind.iter().map(|_| n.draws as i64),
        )
        .i(
            columns::null_indicators::TOP_K,
            ind.iter().map(|_| n.top_k as i64),
        )
        .write(dir, "null_indicators")?;
    let c = &n.claims.claims;
    let cl = Cols::default()
        .s(
            columns::null_claims::SOURCE,
            c.iter().map(|x| x.source.as_str()),
        )
        .s(
            columns::null_claims::STATEMENT,
            c.iter().map(|x| x.statement.as_str()),
        )
        .s(
            columns::null_claims::LEVEL,
            c.iter().map(|x| x.level.as_str()),
        )
        .s(
            columns::null_claims::KIND,
            c.iter().map(|x| x.kind.as_str()),
        )
        .of(
            columns::null_claims::SUPPORT_GOOD,
            c.iter().map(|x| x.support_good),
        )
        .of(columns::null_claims::OBSERVED, c.iter().map(|x| x.observed))
        .i(
            columns::null_claims::N_OBSERVED,
            c.iter().map(|x| x.n_observed as i64),
        )
        .of(
            columns::null_claims::NULL_MEAN,
            c.iter().map(|x| x.null_mean),
        )
        .of(columns::null_claims::NULL_Q95, c.iter().map(|x| x.null_q95))
        .i(
            columns::null_claims::DRAWS_AT_LEAST,
            c.iter().map(|x| x.draws_at_least as i64),
        )
        .i(
            columns::null_claims::DRAWS_UNKNOWN,
            c.iter().map(|x| x.draws_unknown as i64),
        )
        .i(
            columns::null_claims::DRAWS,
            c.iter().map(|x| x.draws as i64),
        )
        .of(columns::null_claims::P_UNADJUSTED, c.iter().map(|x| x.p))
        .os(
            columns::null_claims::FAMILY,
            c.iter()
                .map(|x| (!x.family.is_empty()).then(|| x.family.clone())),
        )
        .i(
            columns::null_claims::FAMILY_DRAWS_AT_LEAST,
            c.iter().map(|x| x.family_draws_at_least as i64),
        )
        .i(
            columns::null_claims::FAMILY_DRAWS_UNKNOWN,
            c.iter().map(|x| x.family_draws_unknown as i64),
        )
        .of(
            columns::null_claims::FAMILY_MAX_Q95,
            c.iter().map(|x| x.family_max_q95),
        )
        .of(
            columns::null_claims::P_ADJUSTED,
            c.iter().map(|x| x.p_adjusted),
        )
        .s(
            columns::null_claims::GOOD_RULE,
            c.iter().map(|_| n.claims.rule.as_str()),
        )
        .s(
            columns::null_claims::NOT_TESTED,
            c.iter().map(|x| x.why.as_str()),
        )
        .write(dir, "null_claims")?;
    Ok(vec![s, i, cl])
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::report::null_claims::NullClaim;

    fn claim(source: &str, p: f64, unknown: usize) -> NullClaim {
        NullClaim {
            source: source.into(),
            p,
            draws_unknown: unknown,
            draws: 99,
            ..Default::default()
        }
    }

    /// An automatic conclusion: unadjusted p, adjusted p and unknown family draws.
    fn auto(p: f64, p_adjusted: f64, unknown: usize) -> NullClaim {
        NullClaim {
            source: "auto".into(),
            p,
            p_adjusted,
            family_draws_unknown: unknown,
            draws: 99,
            ..Default::default()
        }
    }

    /// The headline counts only claims listed in the config, only those whose smallest
    /// possible p reaches 5%, and calls the rest "not distinguishable", never "no evidence
    /// for them"; automatic conclusions count by their adjusted p only.
    #[test]
    fn the_headline_tests_only_listed_claims_that_can_reach_five_percent() {
        let mut n = NullReport {
            draws: 99,
            specs: 20,
            ..Default::default()
        };
        n.claims.report_good = 20;
        n.claims.report_good_in_sample = 4;
        n.claims.claims = vec![
            claim("claim", 0.01, 0),
            claim("claim", 0.30, 1),
            // (1 + 5) / 100 = 0.06: cannot reach 5%.
            claim("claim", 0.06, 5),
            // Small unadjusted p, large adjusted p: not counted as holding.
            auto(0.01, 0.40, 0),
            auto(0.01, 0.02, 0),
            // (1 + 4) / 100 = 0.05 reaches 5%; (1 + 5) / 100 does not.
            auto(0.01, 0.05, 4),
            auto(0.01, 0.06, 5),
        ];
        let h = claims_headline(&n);
        assert!(h.contains("Of the 2 claims listed in the config that 99 draws can test at 5%, 1 have more support"), "{h}");
        assert!(
            h.contains(
                "1 are not distinguishable from the null at 5%, which is no evidence against them"
            ),
            "{h}"
        );
        assert!(h.contains("hold 4 of the report's 20 good specs"), "{h}");
        assert!(
            h.contains("Of the 3 automatic conclusions that 99 draws can test at 5%, 2 have more support than the same selection reaches"),
            "{h}"
        );
        assert!(
            h.contains("and 1 do not, which is no evidence against them"),
            "{h}"
        );
        // With 24 draws and an unknown family draw, none can reach 5%: said so.
        n.draws = 24;
        n.claims.claims = vec![auto(0.04, 0.08, 1)];
        let h = claims_headline(&n);
        assert!(h.contains("The 1 automatic conclusions the draws rerun could not reach an adjusted p <= 0.05 with 24 draws"), "{h}");
        // With 24 draws and 2 unknown ones no claim can reach 5%: said so, none counted.
        n.draws = 24;
        n.claims.claims = vec![claim("claim", 0.12, 2)];
        let h = claims_headline(&n);
        assert!(h.contains("could not reach p <= 0.05 with 24 draws"), "{h}");
        assert!(!h.contains("have more support"), "{h}");
    }
}
