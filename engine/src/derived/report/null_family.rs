//! The selection-aware (max-type) null for the report's automatic conclusions.
//!
//! The report does not test a fixed list of automatic statements: it picks them on the
//! observed good set ([`super::conclusions::automatic`]), on the primary importance kind
//! of each level, by two rules:
//!
//! * `top`: "name g is in the top k" for every name whose share of good specs where it is
//!   top k is at least 1/2. That share is the statement's support, so the rule picks
//!   exactly the statements of the family "g in the top k, for every name g" whose support
//!   is >= 1/2.
//! * `above`: "a ranks above b" for the first k adjacent pairs of the names ordered by
//!   median good rank (ties by name), whatever their support.
//!
//! A family is one rule on one kind table (level and kind). In every draw the report
//! rebuilds the draw's good set ([`super::null_claims`]), runs the same selection there
//! (the same summaries, the same rule, the same k) and records the family maximum
//!
//! `M_d = max support over (the statements the selection picks in draw d) and (the
//! family's statements the report picked on the observed data)`,
//!
//! both evaluated over draw d's good set. An automatic conclusion of observed support `t`
//! (over the null's specs, the same basis as the draws) gets
//!
//! `p_adjusted = (1 + #{draws with M_d >= t, or M_d unknown}) / (1 + D)`,
//!
//! the single-step max-statistic adjustment of Westfall and Young (1993, recalled from
//! memory), with the selection redone in every draw. Including the observed statements in
//! `M_d` makes `M_d` at least each one's own draw support, so `p_adjusted >= p` (the
//! unadjusted p) always, and makes `M_d` at least the pure selection maximum, so the
//! adjustment is conservative against it. The permutation null is the complete null (no
//! between-unit association with any indicator), so what is controlled is the chance that
//! any statement of a family gets `p_adjusted <= alpha` when nothing is there: weak
//! control of the family-wise error, per family. That argument needs the observed
//! supports to be what the selection finds on the same basis as the draws: exact when the
//! null runs every spec with the report's metric and a ratio or margin rule; with a spec
//! sample, a statement the report picked on its own good set may not be picked on the
//! sample's ([`NullClaims::auto_not_chosen_on_sample`](super::null_claims::NullClaims)
//! counts them).

use super::conclusions::{automatic, support, Statement};
use super::data::KindTable;
use super::distribution::summarise;

/// The selection rule a statement comes from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub enum Rule {
    Top,
    Above,
}

impl Rule {
    pub fn of(st: &Statement) -> Rule {
        match st {
            Statement::InTop { .. } => Rule::Top,
            Statement::Above { .. } => Rule::Above,
        }
    }

    /// The family in words (`kt`: its kind table).
    pub fn describe(self, kt: &KindTable, top_k: usize) -> String {
        match self {
            Rule::Top => format!(
                "{} {} importance: \"in the top {top_k}\" for every name top {top_k} in at least half of the good set",
                kt.level, kt.kind
            ),
            Rule::Above => format!(
                "{} {} importance: \"ranks above\" for the first {top_k} adjacent pairs by median good rank",
                kt.level, kt.kind
            ),
        }
    }
}

/// The statements the report's selection picks by `rule` when every spec of `kt` is good.
pub fn selected(kt: &KindTable, top_k: usize, rule: Rule) -> Vec<Statement> {
    let good = vec![true; kt.specs.iter().max().map_or(0, |m| m + 1)];
    let (sums, _) = summarise(kt, &good, top_k);
    automatic(kt, &sums, top_k)
        .into_iter()
        .filter(|s| Rule::of(s) == rule)
        .collect()
}

/// The family maximum over one good set (every spec of `kt`): the largest support of the
/// statements the selection picks there by `rule` and of `observed` (the family's
/// statements picked on the observed data). NaN when `kt` holds no spec.
pub fn family_max(kt: &KindTable, top_k: usize, rule: Rule, observed: &[Statement]) -> f64 {
    if kt.specs.is_empty() {
        return f64::NAN;
    }
    let rows: Vec<usize> = (0..kt.specs.len()).collect();
    selected(kt, top_k, rule)
        .iter()
        .chain(observed)
        .map(|s| support(s, kt, &rows))
        .fold(f64::NEG_INFINITY, f64::max)
}

/// `(p_adjusted, draws at or above, unknown draws, 95th percentile of the known maxima)`
/// of an observed support `t` against the draws' family maxima (NaN: unknown, counted as
/// at least as high).
pub fn adjusted(maxima: &[f64], t: f64) -> (f64, usize, usize, f64) {
    let at_least = maxima.iter().filter(|m| !m.is_finite() || **m >= t).count();
    let unknown = maxima.iter().filter(|m| !m.is_finite()).count();
    (
        (1 + at_least) as f64 / (1 + maxima.len()) as f64,
        at_least,
        unknown,
        super::null::q(maxima, 0.95),
    )
}

/// The rows `rows` of `kt` as a table of their own (their specs renumbered 0..).
pub fn sub_table(kt: &KindTable, rows: &[usize]) -> KindTable {
    let m = kt.n_names();
    let mut out = KindTable {
        level: kt.level.clone(),
        kind: kt.kind.clone(),
        names: kt.names.clone(),
        specs: (0..rows.len()).collect(),
        ..Default::default()
    };
    for &i in rows {
        out.values.extend_from_slice(&kt.values[i * m..(i + 1) * m]);
        out.ranks.extend_from_slice(&kt.ranks[i * m..(i + 1) * m]);
        out.in_pool
            .extend_from_slice(&kt.in_pool[i * m..(i + 1) * m]);
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Names a, b, c, d; rows are specs (ranks by hand, importances 4 - rank + 1 > 0,
    /// every name in every pool).
    fn table(ranks: &[[u32; 4]]) -> KindTable {
        KindTable {
            level: "indicator".into(),
            kind: "coefficient".into(),
            names: vec!["a".into(), "b".into(), "c".into(), "d".into()],
            specs: (0..ranks.len()).collect(),
            values: ranks
                .iter()
                .flat_map(|r| r.iter().map(|&x| f64::from(5 - x)))
                .collect(),
            ranks: ranks.iter().flat_map(|r| r.iter().copied()).collect(),
            in_pool: vec![true; 4 * ranks.len()],
        }
    }

    /// A draw's good set of four specs, k = 2, by hand.
    ///
    /// Ranks (a, b, c, d): s1 (1, 2, 3, 4), s2 (2, 1, 3, 4), s3 (1, 3, 2, 4), s4 (3, 1, 2, 4).
    /// Top-2 shares: a is top 2 in s1, s2, s3 = 3/4; b in s1, s2, s4 = 3/4; c in s3, s4 =
    /// 2/4; d never = 0. Picked by `top` (share >= 1/2):
    /// a, b, c; the family maximum = 3/4.
    /// Median ranks: a 1.5, b 1.5, c 2.5, d 4 -> order a, b (tie by name), c, d; the first
    /// 2 adjacent pairs: a above b (s1, s3: 2/4), b above c (s1, s2, s4: 3/4). Maximum 3/4.
    /// With the observed statement "a above d" (holds in every spec) added: 1.
    #[test]
    fn family_maximum_by_hand() {
        let kt = table(&[[1, 2, 3, 4], [2, 1, 3, 4], [1, 3, 2, 4], [3, 1, 2, 4]]);
        let top = selected(&kt, 2, Rule::Top);
        assert_eq!(
            top,
            vec![
                Statement::InTop { g: 0, k: 2 },
                Statement::InTop { g: 1, k: 2 },
                Statement::InTop { g: 2, k: 2 }
            ]
        );
        assert_eq!(family_max(&kt, 2, Rule::Top, &[]), 0.75);
        let above = selected(&kt, 2, Rule::Above);
        assert_eq!(
            above,
            vec![
                Statement::Above { a: 0, b: 1 },
                Statement::Above { a: 1, b: 2 }
            ]
        );
        assert_eq!(family_max(&kt, 2, Rule::Above, &[]), 0.75);
        let ad = Statement::Above { a: 0, b: 3 };
        assert_eq!(family_max(&kt, 2, Rule::Above, &[ad]), 1.0);
        // An observed statement below the picked ones leaves the maximum alone.
        let d_top = Statement::InTop { g: 3, k: 2 };
        assert_eq!(family_max(&kt, 2, Rule::Top, &[d_top]), 0.75);
        // No spec: unknown.
        assert!(family_max(&table(&[]), 2, Rule::Top, &[]).is_nan());
    }

    /// Family maxima 0.75, unknown, 1.0, 0.5 against observed 0.75: at or above = 0.75,
    /// unknown, 1.0 -> 3, p = (1 + 3) / (1 + 4) = 0.8; against 1.0: unknown, 1.0 -> 0.6;
    /// against 0.4: all 4 -> 1.0. The 95th percentile of (0.5, 0.75, 1.0) by numpy's
    /// linear rule: 0.75 + 0.9 x 0.25 = 0.975 (by hand).
    #[test]
    fn adjusted_p_by_hand() {
        let m = [0.75, f64::NAN, 1.0, 0.5];
        let (p, at, unknown, q95) = adjusted(&m, 0.75);
        assert_eq!((at, unknown), (3, 1));
        assert!((p - 0.8).abs() < 1e-15);
        assert!((q95 - 0.975).abs() < 1e-12);
        assert!((adjusted(&m, 1.0).0 - 0.6).abs() < 1e-15);
        assert_eq!(adjusted(&m, 0.4).0, 1.0);
    }

    #[test]
    fn a_sub_table_keeps_the_rows_asked_for() {
        let kt = table(&[[1, 2, 3, 4], [2, 1, 3, 4], [1, 3, 2, 4]]);
        let s = sub_table(&kt, &[2, 0]);
        assert_eq!(s.specs, vec![0, 1]);
        assert_eq!(s.ranks, vec![1, 3, 2, 4, 1, 2, 3, 4]);
        assert_eq!(s.values[..4], kt.values[8..12]);
    }

    use crate::null::table::{DrawRow, RankRow};
    use crate::report::data::RunTables;
    use crate::report::model::Conclusion;
    use crate::report::null_claims::{evaluate, DrawRule, Inputs};
    use proptest::prelude::*;

    const NAMES: [&str; 4] = ["a", "b", "c", "d"];

    fn draw(d: i64, best: f64) -> DrawRow {
        DrawRow {
            draw: d,
            seed: String::new(),
            metric: "mae".into(),
            best_error: best,
            q1_error: f64::NAN,
            median_error: f64::NAN,
            q3_error: f64::NAN,
            best_skill: f64::NAN,
            share_skill_positive: f64::NAN,
            specs: 3,
            n_ok: 3,
            best_spec: None,
        }
    }

    /// Rows of one spec in a draw: ranks of a, b, c, d.
    fn spec_rows(d: i64, spec: &str, error: f64, kind: &str, ranks: [u32; 4]) -> Vec<RankRow> {
        NAMES
            .iter()
            .zip(ranks)
            .map(|(n, r)| RankRow {
                draw: d,
                spec: spec.into(),
                error,
                level: "indicator".into(),
                kind: kind.into(),
                name: (*n).into(),
                importance: f64::from(5 - r),
                rank: i64::from(r),
                in_pool: true,
            })
            .collect()
    }

    /// The observed run: specs s1, s2, s3 with these errors and ranks.
    fn observed(errors: &[f64], ranks: &[[u32; 4]]) -> RunTables {
        let mut t = RunTables {
            spec_ids: (1..=errors.len()).map(|i| format!("s{i}")).collect(),
            ..Default::default()
        };
        t.stored.insert("mae".into(), errors.to_vec());
        let mut kt = table(ranks);
        kt.specs = (0..ranks.len()).collect();
        t.importance.push(kt);
        t
    }

    fn conclusion(source: &str) -> Conclusion {
        Conclusion {
            source: source.into(),
            level: "indicator".into(),
            kind: "coefficient".into(),
            ..Default::default()
        }
    }

    /// The whole evaluation on a hand-made null, k = 2, ratio 0.05.
    ///
    /// Observed: s1 (mae 1.0) ranks (1, 2, 3, 4), s2 (1.02) (1, 3, 2, 4), s3 (1.5, not good).
    /// Supports over {s1, s2}: "a top 2" 1, "b top 2" 1/2, "a above b" 1, "b above c" 1/2.
    /// Draws (three):
    /// * d0: s1 (1.0) (2, 1, 3, 4), s2 (1.03) (3, 1, 2, 4). Top 2 shares a 1/2, b 1, c 1/2:
    ///   the top family's maximum is 1 (b). Median ranks b 1, a 2.5, c 2.5, d 4: picked
    ///   "b above a" (1) and "a above c" (1/2); the observed "b above c" holds in both: 1.
    /// * d1: s1 (1.0) (1, 2, 3, 4), s2 (1.04) (3, 4, 1, 2). Every name is top 2 once: top
    ///   maximum 1/2. Picked "a above c" and "c above b", both 1/2; but the observed "a
    ///   above b" holds in both specs: the above family's maximum is 1.
    /// * d2: its good set holds only impurity rows: unknown for both families.
    ///
    /// Top family maxima (1, 1/2, unknown): "a top 2" (observed 1) has 2 draws at or
    /// above, p_adjusted = 3/4; its own draw supports (1/2, 1/2, unknown) give p = 2/4.
    /// "b top 2" (1/2): all 3, p_adjusted = 1 (own supports 1, 1/2, unknown: p = 1).
    /// Above maxima (1, 1, unknown): "a above b" (1): p_adjusted = 1 (own supports 0, 1,
    /// unknown: p = 3/4). The listed claim gets no adjusted p.
    #[test]
    fn adjusted_p_of_an_evaluation_by_hand() {
        let t = observed(
            &[1.0, 1.02, 1.5],
            &[[1, 2, 3, 4], [1, 3, 2, 4], [4, 3, 2, 1]],
        );
        let mut ranks = Vec::new();
        ranks.extend(spec_rows(0, "s1", 1.0, "coefficient", [2, 1, 3, 4]));
        ranks.extend(spec_rows(0, "s2", 1.03, "coefficient", [3, 1, 2, 4]));
        ranks.extend(spec_rows(1, "s1", 1.0, "coefficient", [1, 2, 3, 4]));
        ranks.extend(spec_rows(1, "s2", 1.04, "coefficient", [3, 4, 1, 2]));
        ranks.extend(spec_rows(2, "s3", 1.0, "impurity", [1, 2, 3, 4]));
        let draws = [draw(0, 1.0), draw(1, 1.0), draw(2, 1.0)];
        let sample = ["s1", "s2", "s3"];
        let inp = Inputs {
            t: &t,
            sample: &sample,
            metric: "mae",
            rule: DrawRule::Ratio(0.05),
            ranks_within: 0.1,
            kinds: vec!["native".into()],
            top_k: 2,
            draws: &draws,
            ranks: Some(&ranks),
        };
        let tests = vec![
            Some((0, Statement::InTop { g: 0, k: 2 })),
            Some((0, Statement::InTop { g: 1, k: 2 })),
            Some((0, Statement::Above { a: 0, b: 1 })),
            Some((0, Statement::Above { a: 1, b: 2 })),
            Some((0, Statement::Above { a: 0, b: 1 })),
        ];
        let cs = [
            conclusion("auto"),
            conclusion("auto"),
            conclusion("auto"),
            conclusion("auto"),
            conclusion("claim"),
        ];
        let out = evaluate(&inp, &cs, &tests);
        let c = &out.claims;
        assert_eq!(c[0].observed, 1.0);
        assert_eq!((c[0].p, c[0].p_adjusted), (0.5, 0.75));
        assert_eq!(
            (c[0].family_draws_at_least, c[0].family_draws_unknown),
            (2, 1)
        );
        assert_eq!(c[1].observed, 0.5);
        assert_eq!((c[1].p, c[1].p_adjusted), (1.0, 1.0));
        assert_eq!(c[2].observed, 1.0);
        assert_eq!((c[2].p, c[2].p_adjusted), (0.75, 1.0));
        assert_eq!(c[2].family_draws_at_least, 3);
        assert!(c[0].family.contains("\"in the top 2\""), "{}", c[0].family);
        assert!(c[2].family.contains("\"ranks above\""), "{}", c[2].family);
        // The listed claim: unadjusted p only.
        assert_eq!(c[4].p, 0.75);
        assert!(c[4].p_adjusted.is_nan() && c[4].family.is_empty());
        // Every spec is in the null's sample: the selection there is the report's.
        assert_eq!(out.auto_not_chosen_on_sample, 0);
    }

    fn perm() -> impl Strategy<Value = [u32; 4]> {
        Just(vec![1u32, 2, 3, 4])
            .prop_shuffle()
            .prop_map(|v| [v[0], v[1], v[2], v[3]])
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(64))]
        /// Whatever the draws, every tested automatic conclusion's adjusted p is at least
        /// its unadjusted p (the family maximum includes its own draw support).
        #[test]
        fn adjusted_p_is_never_below_the_unadjusted_p(
            obs in proptest::collection::vec((1.0f64..1.1, perm()), 2..6),
            draws in proptest::collection::vec(
                proptest::collection::vec((1.0f64..1.12, perm()), 0..5), 1..8),
            picks in proptest::collection::vec((0usize..4, 0usize..4, any::<bool>()), 1..6),
        ) {
            let (errors, ranks): (Vec<f64>, Vec<[u32; 4]>) = obs.into_iter().unzip();
            let t = observed(&errors, &ranks);
            let mut rows = Vec::new();
            let mut rows_draws = Vec::new();
            for (d, specs) in draws.iter().enumerate() {
                let best = specs.iter().map(|s| s.0).fold(f64::INFINITY, f64::min);
                rows_draws.push(draw(d as i64, best));
                for (i, (e, r)) in specs.iter().enumerate() {
                    rows.extend(spec_rows(d as i64, &format!("s{}", i + 1), *e, "coefficient", *r));
                }
            }
            let ids: Vec<String> = t.spec_ids.clone();
            let sample: Vec<&str> = ids.iter().map(|s| s.as_str()).collect();
            let inp = Inputs {
                t: &t,
                sample: &sample,
                metric: "mae",
                rule: DrawRule::Ratio(0.05),
                ranks_within: 0.12,
                kinds: vec!["native".into()],
                top_k: 2,
                draws: &rows_draws,
                ranks: Some(&rows),
            };
            let tests: Vec<Option<(usize, Statement)>> = picks
                .iter()
                .map(|&(a, b, top)| {
                    Some((0, if top { Statement::InTop { g: a, k: 2 } } else { Statement::Above { a, b } }))
                })
                .collect();
            let cs: Vec<Conclusion> = tests.iter().map(|_| conclusion("auto")).collect();
            let out = evaluate(&inp, &cs, &tests);
            for c in out.claims.iter().filter(|c| c.why.is_empty()) {
                prop_assert!(c.p_adjusted >= c.p, "{} < {}", c.p_adjusted, c.p);
                prop_assert!(c.family_draws_at_least >= c.draws_at_least);
            }
        }
    }
}
