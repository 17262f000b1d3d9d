//! Each conclusion's support under the permutation null: how often would the report's
//! statements hold over the good set if the outcome carried no between-unit association
//! with the indicators at all?
//!
//! One-way: the null runs before the report and cannot know its statements. Each draw
//! keeps, in `null/goodranks`, the importance ranks of every spec whose error is within
//! `[null] ranks_within` of the draw's best (every kind the draw computed). The report
//! rebuilds each draw's good set from those errors with its own rule and evaluates every
//! statement there with the same code as on the observed run
//! ([`super::conclusions::Statement::holds`]).
//!
//! * Good set in a draw: `ratio`: error <= (1 + ratio_eps) x the draw's best; `margin`:
//!   error <= best + the report's margin (the observed run's value, absolute); `paired`
//!   falls back to the ratio rule (a paired bootstrap would need every spec's per-unit
//!   errors in every draw). A draw whose good set could reach past the stored band
//!   (its cut above (1 + ranks_within) x best) has an unknown support.
//! * Observed, on the same basis: the good set of the null's own spec sample in the
//!   observed run, under the same rule and the null's metric (equal to the report's good
//!   set when the null runs every spec, with the report's metric and a ratio or margin rule).
//! * Support = share of the good specs holding the statement's kind where it holds (NaN
//!   when no good spec holds the kind), as in the conclusions table.
//! * `p = (1 + #{draws with support >= observed}) / (1 + D)`: the +1 correction of the
//!   null's other p-values; a draw with an unknown support counts as at least as high (it
//!   cannot make the observed support look rarer than it is). Mean and 95th percentile over
//!   the draws with a known support.
//! * Automatic conclusions were picked on the observed data; each also gets a p adjusted
//!   for that choice by a max-type null that redoes the selection in every draw
//!   ([`super::null_family`]). Listed claims are tested as stated (no adjusted p).

use super::conclusions::{support, Statement};
use super::data::{KindTable, RunTables};
use super::model::Conclusion;
use crate::null::table::{DrawRow, RankRow};
use std::collections::BTreeMap;

/// The good-set rule applied in every draw (and to the observed sample).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum DrawRule {
    Ratio(f64),
    Margin(f64),
}

impl DrawRule {
    /// Highest error still good when the best error is `best`.
    pub fn cut(self, best: f64) -> f64 {
        match self {
            DrawRule::Ratio(e) => best * (1.0 + e),
            DrawRule::Margin(m) => best + m,
        }
    }

    pub fn describe(self, metric: &str) -> String {
        match self {
            DrawRule::Ratio(e) => format!("{metric} <= (1 + {e}) x the best"),
            DrawRule::Margin(m) => format!("{metric} <= the best + {m:.4}"),
        }
    }
}

/// One conclusion under the null.
#[derive(Debug, Clone, Default)]
pub struct NullClaim {
    pub source: String,
    pub statement: String,
    pub level: String,
    pub kind: String,
    /// The report's support over its good set (the conclusions table's).
    pub support_good: f64,
    /// Support over the good set of the null's sample in the observed run, and its size.
    pub observed: f64,
    pub n_observed: usize,
    /// Mean and 95th percentile of the draws' supports (draws with a known support).
    pub null_mean: f64,
    pub null_q95: f64,
    /// Draws whose support is at least the observed one (unknown ones included).
    pub draws_at_least: usize,
    /// Draws whose support is unknown (no good spec of the kind, or a good set reaching
    /// past the stored band).
    pub draws_unknown: usize,
    pub draws: usize,
    /// The unadjusted p (as if the statement had been fixed before seeing the data).
    pub p: f64,
    /// Automatic conclusions: the family they were picked from ([`super::null_family`]),
    /// the draws whose family maximum is at least the observed support (unknown ones
    /// included), the unknown ones, the 95th percentile of the known maxima and the
    /// adjusted p. "" / 0 / NaN for listed claims and untested statements.
    pub family: String,
    pub family_draws_at_least: usize,
    pub family_draws_unknown: usize,
    pub family_max_q95: f64,
    pub p_adjusted: f64,
    /// Why the statement cannot be tested under the null ("" when it is).
    pub why: String,
}

/// The conclusions under the null.
#[derive(Debug, Clone, Default)]
pub struct NullClaims {
    /// The rule of each draw's good set, in words.
    pub rule: String,
    pub ranks_within: f64,
    /// Importance kinds the draws computed (`[null] importance`).
    pub kinds: Vec<String>,
    pub claims: Vec<NullClaim>,
    /// Specs of the report's own good set, and of them those in the null's spec sample
    /// (the observed support is over that sample's good set, not the report's).
    pub report_good: usize,
    pub report_good_in_sample: usize,
    /// Automatic conclusions (tested) that the selection would not pick on the good set of
    /// the null's specs in the observed run (0 when the null runs every spec with the
    /// report's metric and a ratio or margin rule): their adjusted p rests on the report's
    /// choice, not on the same selection as in the draws.
    pub auto_not_chosen_on_sample: usize,
    /// Why no statement can be tested (an old null without `goodranks`), if so.
    pub unavailable: Option<String>,
}

/// What the evaluation reads.
pub struct Inputs<'a> {
    pub t: &'a RunTables,
    /// The null's spec sample (ids) and metric.
    pub sample: &'a [&'a str],
    pub metric: &'a str,
    pub rule: DrawRule,
    pub ranks_within: f64,
    /// `[null] importance` of the null (`native`, `permutation`, `group`).
    pub kinds: Vec<String>,
    /// The report's top k (the automatic selection's k).
    pub top_k: usize,
    pub draws: &'a [DrawRow],
    /// `None`: the null has no `goodranks` table.
    pub ranks: Option<&'a [RankRow]>,
}

/// Whether the null's draws computed importances of `kind` at `level`.
pub fn computed(kinds: &[String], level: &str, kind: &str) -> bool {
    let has = |k: &str| kinds.iter().any(|x| x == k);
    match kind {
        "coefficient" | "impurity" => has("native"),
        "permutation" if level == "group" => has("group"),
        "permutation" => has("permutation"),
        _ => false,
    }
}

/// `p = (1 + #{null >= observed or unknown}) / (1 + D)`, the mean and 95th percentile of
/// the known supports, the count at least as high and the unknown count.
pub fn null_stats(null: &[f64], observed: f64) -> (f64, f64, f64, usize, usize) {
    let known: Vec<f64> = null.iter().copied().filter(|v| v.is_finite()).collect();
    let mean = if known.is_empty() {
        f64::NAN
    } else {
        known.iter().sum::<f64>() / known.len() as f64
    };
    let at_least = null
        .iter()
        .filter(|v| !v.is_finite() || **v >= observed)
        .count();
    (
        crate::null::p_value(null, observed, false),
        mean,
        super::null::q(&known, 0.95),
        at_least,
        null.len() - known.len(),
    )
}

/// One draw's specs: id -> (error, rows).
type DrawSpecs<'a> = BTreeMap<&'a str, (f64, Vec<&'a RankRow>)>;

/// Support of `st` (names of `kt`) over one draw's good set: the specs of `specs` with
/// error <= `cut` holding rows of `kt`'s level and kind. NaN when none holds them.
pub fn draw_support(st: &Statement, kt: &KindTable, specs: &DrawSpecs, cut: f64) -> f64 {
    let d = draw_table(kt, specs, cut);
    let rows: Vec<usize> = (0..d.specs.len()).collect();
    support(st, &d, &rows)
}

/// One draw's good set as a kind table with `kt`'s names: the specs of `specs` with error
/// <= `cut` holding rows of `kt`'s level and kind, numbered 0.. in spec id order.
pub fn draw_table(kt: &KindTable, specs: &DrawSpecs, cut: f64) -> KindTable {
    let m = kt.names.len();
    let mut d = KindTable {
        level: kt.level.clone(),
        kind: kt.kind.clone(),
        names: kt.names.clone(),
        specs: Vec::new(),
        values: Vec::new(),
        ranks: Vec::new(),
        in_pool: Vec::new(),
    };
    for (error, rows) in specs.values() {
        // NaN errors and cuts never pass.
        if error.partial_cmp(&cut) == Some(std::cmp::Ordering::Greater)
            || error.is_nan()
            || cut.is_nan()
        {
            continue;
        }
        let mine: Vec<&&RankRow> = rows
            .iter()
            .filter(|r| r.level == kt.level && r.kind == kt.kind)
            .collect();
        if mine.is_empty() {
            continue;
        }
        let at = d.values.len();
        // A name the spec holds no row for is never top and ranks last (as the observed
        // run's reading ranks it, [`super::data`]).
        d.values.resize(at + m, 0.0);
        d.ranks.resize(at + m, u32::try_from(m).unwrap_or(u32::MAX));
        d.in_pool.resize(at + m, false);
        for r in mine {
            if let Some(j) = kt.name_index(&r.name) {
                d.values[at + j] = r.importance;
                d.ranks[at + j] = u32::try_from(r.rank).unwrap_or(u32::MAX);
                d.in_pool[at + j] = r.in_pool;
            }
        }
        d.specs.push(d.specs.len());
    }
    d
}

/// Evaluate every conclusion (`tests[i]`: its kind table and statement, `None` for the
/// curves' sign claims) under the null.
pub fn evaluate(
    inp: &Inputs,
    conclusions: &[Conclusion],
    tests: &[Option<(usize, Statement)>],
) -> NullClaims {
    let t = inp.t;
    let mut out = NullClaims {
        rule: inp.rule.describe(inp.metric),
        ranks_within: inp.ranks_within,
        kinds: inp.kinds.clone(),
        ..Default::default()
    };
    let blank = |c: &Conclusion, why: &str| NullClaim {
        source: c.source.clone(),
        statement: c.statement.clone(),
        level: c.level.clone(),
        kind: c.kind.clone(),
        support_good: c.support_good,
        observed: f64::NAN,
        null_mean: f64::NAN,
        null_q95: f64::NAN,
        p: f64::NAN,
        family_max_q95: f64::NAN,
        p_adjusted: f64::NAN,
        draws: inp.draws.len(),
        why: why.to_string(),
        ..Default::default()
    };
    let Some(ranks) = inp.ranks else {
        let why = "this run's null predates null/goodranks (the importance ranks of each draw's good set), so the conclusions' support under the null is not available; rerunning the same `forkmap run` restarts the null with it";
        out.unavailable = Some(why.into());
        out.claims = conclusions.iter().map(|c| blank(c, why)).collect();
        return out;
    };
    // The observed good set of the null's sample, by the same rule and metric.
    let index: BTreeMap<&str, usize> = t
        .spec_ids
        .iter()
        .enumerate()
        .map(|(i, s)| (s.as_str(), i))
        .collect();
    let stored = t.stored.get(inp.metric);
    let obs: Vec<(usize, f64)> = inp
        .sample
        .iter()
        .filter_map(|id| index.get(id).copied())
        .filter_map(|i| stored.map(|s| (i, s[i])))
        .filter(|(_, e)| e.is_finite())
        .collect();
    let best = obs.iter().map(|o| o.1).fold(f64::INFINITY, f64::min);
    let obs_cut = inp.rule.cut(best);
    let obs_good: Vec<usize> = obs.iter().filter(|o| o.1 <= obs_cut).map(|o| o.0).collect();
    // The draws' specs, by draw.
    let mut by_draw: BTreeMap<i64, DrawSpecs> = BTreeMap::new();
    for r in ranks {
        by_draw
            .entry(r.draw)
            .or_default()
            .entry(r.spec.as_str())
            .or_insert_with(|| (r.error, Vec::new()))
            .1
            .push(r);
    }
    let empty = DrawSpecs::new();
    // Per draw: its good set's cut, or None when the good set may reach past the band.
    let cuts: Vec<Option<f64>> = inp
        .draws
        .iter()
        .map(|d| {
            let cut = inp.rule.cut(d.best_error);
            (d.best_error.is_finite() && cut <= d.best_error * (1.0 + inp.ranks_within))
                .then_some(cut)
        })
        .collect();
    let uncovered = cuts.iter().filter(|c| c.is_none()).count();
    for (i, c) in conclusions.iter().enumerate() {
        let mut nc = blank(c, "");
        match tests.get(i).and_then(|x| x.as_ref()) {
            None => {
                nc.why = "not tested: the null computes no curves".into();
            }
            Some((ti, _))
                if !computed(
                    &inp.kinds,
                    &t.importance[*ti].level,
                    &t.importance[*ti].kind,
                ) =>
            {
                let kt = &t.importance[*ti];
                nc.why = format!(
                    "not tested: the null's draws compute {} importances, not {} at level {} (add \"{}\" to null.importance to test it, at the cost of permutation importances in every draw)",
                    inp.kinds.join(", "),
                    kt.kind,
                    kt.level,
                    if kt.level == "group" { "group" } else { "permutation" }
                );
            }
            Some(_) if uncovered == inp.draws.len() => {
                nc.why = format!(
                    "not tested: the good set ({}) reaches past the ranks the null kept (within {} of each draw's best): raise null.ranks_within",
                    out.rule, inp.ranks_within
                );
            }
            Some((ti, st)) => {
                let kt = &t.importance[*ti];
                let rows: Vec<usize> = obs_good
                    .iter()
                    .filter_map(|&s| kt.specs.binary_search(&s).ok())
                    .collect();
                nc.observed = support(st, kt, &rows);
                nc.n_observed = rows.len();
                let null: Vec<f64> = inp
                    .draws
                    .iter()
                    .zip(&cuts)
                    .map(|(d, cut)| match cut {
                        Some(cut) => {
                            draw_support(st, kt, by_draw.get(&d.draw).unwrap_or(&empty), *cut)
                        }
                        None => f64::NAN,
                    })
                    .collect();
                if nc.observed.is_nan() {
                    nc.why = "not tested: no spec of the null's sample in the observed good set holds this kind".into();
                } else {
                    let (p, mean, q95, at_least, unknown) = null_stats(&null, nc.observed);
                    nc.p = p;
                    nc.null_mean = mean;
                    nc.null_q95 = q95;
                    nc.draws_at_least = at_least;
                    nc.draws_unknown = unknown;
                }
            }
        }
        out.claims.push(nc);
    }
    adjust(inp, tests, &by_draw, &cuts, &obs_good, &mut out);
    out
}

/// The max-type null of the automatic conclusions ([`super::null_family`]): per family
/// (kind table and rule) every draw's maximum, then each tested member's adjusted p.
fn adjust(
    inp: &Inputs,
    tests: &[Option<(usize, Statement)>],
    by_draw: &BTreeMap<i64, DrawSpecs>,
    cuts: &[Option<f64>],
    obs_good: &[usize],
    out: &mut NullClaims,
) {
    use super::null_family::{adjusted, family_max, selected, sub_table, Rule};
    // Families: (kind table, rule) -> the automatic conclusions picked from it.
    let mut families: BTreeMap<(usize, Rule), Vec<usize>> = BTreeMap::new();
    for (i, c) in out.claims.iter().enumerate() {
        if c.source != "auto" {
            continue;
        }
        if let Some(Some((ti, st))) = tests.get(i) {
            families.entry((*ti, Rule::of(st))).or_default().push(i);
        }
    }
    let empty = DrawSpecs::new();
    for ((ti, rule), members) in families {
        if members.iter().all(|&i| !out.claims[i].why.is_empty()) {
            continue;
        }
        let kt = &inp.t.importance[ti];
        let stated: Vec<Statement> = members
            .iter()
            .filter_map(|&i| tests[i].as_ref().map(|x| x.1.clone()))
            .collect();
        let maxima: Vec<f64> = inp
            .draws
            .iter()
            .zip(cuts)
            .map(|(d, cut)| match cut {
                Some(cut) => {
                    let dt = draw_table(kt, by_draw.get(&d.draw).unwrap_or(&empty), *cut);
                    family_max(&dt, inp.top_k, rule, &stated)
                }
                None => f64::NAN,
            })
            .collect();
        // The same selection on the null's specs' good set in the observed run.
        let rows: Vec<usize> = obs_good
            .iter()
            .filter_map(|&s| kt.specs.binary_search(&s).ok())
            .collect();
        let on_sample = selected(&sub_table(kt, &rows), inp.top_k, rule);
        let family = rule.describe(kt, inp.top_k);
        for (&i, st) in members.iter().zip(&stated) {
            let nc = &mut out.claims[i];
            if !nc.why.is_empty() {
                continue;
            }
            let (p, at_least, unknown, q95) = adjusted(&maxima, nc.observed);
            nc.family = family.clone();
            nc.p_adjusted = p;
            nc.family_draws_at_least = at_least;
            nc.family_draws_unknown = unknown;
            nc.family_max_q95 = q95;
            if !on_sample.contains(st) {
                out.auto_not_chosen_on_sample += 1;
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn row(draw: i64, spec: &str, error: f64, name: &str, imp: f64, rank: i64) -> RankRow {
        RankRow {
            draw,
            spec: spec.into(),
            error,
            level: "indicator".into(),
            kind: "coefficient".into(),
            name: name.into(),
            importance: imp,
            rank,
            in_pool: true,
        }
    }

    /// The p-value, mean and 95th percentile on a hand-made example: supports 0.2, 0.5,
    /// unknown, 1.0 against an observed 0.5. At least as high: 0.5, unknown, 1.0 -> 3, so
    /// p = (1 + 3) / (1 + 4) = 0.8; mean of the known = 1.7 / 3; the 95th percentile of
    /// (0.2, 0.5, 1.0) by numpy's linear rule = 0.5 + 0.9 x 0.5 = 0.95 (by hand).
    #[test]
    fn null_support_p_by_hand() {
        let (p, mean, q95, at_least, unknown) = null_stats(&[0.2, 0.5, f64::NAN, 1.0], 0.5);
        assert_eq!((at_least, unknown), (3, 1));
        assert!((p - 0.8).abs() < 1e-15);
        assert!((mean - 1.7 / 3.0).abs() < 1e-15);
        assert!((q95 - 0.95).abs() < 1e-12);
        // Nothing as high: the floor 1 / (1 + D).
        let (p, ..) = null_stats(&[0.0, 0.1, 0.2, 0.3], 0.9);
        assert!((p - 0.2).abs() < 1e-15);
    }

    /// One draw's good set from its stored ranks: specs s1 (error 1.0), s2 (1.04) and s3
    /// (1.2); ratio 0.05 keeps s1 and s2. "a above b" holds in s1 only -> 1/2; "b in the
    /// top 1" holds in s2 only (s3, where it also holds, is not good) -> 1/2; a name a
    /// spec holds no row for is never top.
    #[test]
    fn draw_support_uses_the_draws_good_set() {
        let kt = KindTable {
            level: "indicator".into(),
            kind: "coefficient".into(),
            names: vec!["a".into(), "b".into(), "c".into()],
            specs: vec![],
            values: vec![],
            ranks: vec![],
            in_pool: vec![],
        };
        let rows = [
            row(0, "s1", 1.0, "a", 3.0, 1),
            row(0, "s1", 1.0, "b", 2.0, 2),
            row(0, "s1", 1.0, "c", 1.0, 3),
            row(0, "s2", 1.04, "a", 1.0, 2),
            row(0, "s2", 1.04, "b", 4.0, 1),
            row(0, "s3", 1.2, "b", 9.0, 1),
            row(0, "s3", 1.2, "a", 1.0, 2),
        ];
        let mut specs = DrawSpecs::new();
        for r in &rows {
            specs
                .entry(r.spec.as_str())
                .or_insert_with(|| (r.error, Vec::new()))
                .1
                .push(r);
        }
        let cut = DrawRule::Ratio(0.05).cut(1.0);
        let above = Statement::Above { a: 0, b: 1 };
        assert_eq!(draw_support(&above, &kt, &specs, cut), 0.5);
        let top = Statement::InTop { g: 1, k: 1 };
        assert_eq!(draw_support(&top, &kt, &specs, cut), 0.5);
        // c has no row in s2: never top there, so "c in the top 3" holds in s1 only.
        let c_top = Statement::InTop { g: 2, k: 3 };
        assert_eq!(draw_support(&c_top, &kt, &specs, cut), 0.5);
        // A wider rule takes s3 in: b above a then holds in s2 and s3 -> 2/3.
        let ba = Statement::Above { a: 1, b: 0 };
        let wide = DrawRule::Margin(0.25).cut(1.0);
        assert!((draw_support(&ba, &kt, &specs, wide) - 2.0 / 3.0).abs() < 1e-15);
        // No good spec holds another kind: unknown.
        let other = KindTable {
            kind: "impurity".into(),
            ..kt.clone()
        };
        assert!(draw_support(&above, &other, &specs, cut).is_nan());
    }

    #[test]
    fn kinds_computed_under_the_null() {
        let native = vec!["native".to_string()];
        assert!(computed(&native, "indicator", "coefficient"));
        assert!(computed(&native, "group", "impurity"));
        assert!(!computed(&native, "indicator", "permutation"));
        let perm = vec!["native".to_string(), "permutation".to_string()];
        assert!(computed(&perm, "indicator", "permutation"));
        assert!(!computed(&perm, "group", "permutation"));
    }
}
