//! Conclusions: plain statements about importance ranks, each with its support (the share
//! of specs where it holds) over every ok spec holding the importance kind and over the
//! good set, and the choice whose removal changes its support over all ok specs most.
//! Automatic statements (the names top-k in at least half of the good set, and each
//! adjacent pair of the top names by median good rank) and the user's claims
//! (`[[map.claim]]`) are treated alike.

use super::data::KindTable;
use super::model::{Conclusion, DimensionChoices, ImportanceSummary};
use super::settings::ClaimSpec;

/// A checkable statement on one kind table.
#[derive(Debug, Clone, PartialEq)]
pub enum Statement {
    /// Name a ranks above (better than) name b.
    Above { a: usize, b: usize },
    /// Name g is top k ([`KindTable::is_top`]: rank <= k with importance above 0).
    InTop { g: usize, k: usize },
}

impl Statement {
    pub fn holds(&self, kt: &KindTable, row: usize) -> bool {
        match *self {
            Statement::Above { a, b } => kt.rank(row, a) < kt.rank(row, b),
            Statement::InTop { g, k } => kt.is_top(row, g, k),
        }
    }

    pub fn text(&self, kt: &KindTable) -> String {
        let what = if kt.level == "group" {
            "group"
        } else {
            "indicator"
        };
        match *self {
            Statement::Above { a, b } => format!(
                "{what} {} ranks above {} ({} importance)",
                kt.names[a], kt.names[b], kt.kind
            ),
            Statement::InTop { g, k } => format!(
                "{what} {} is in the top {k} ({} importance)",
                kt.names[g], kt.kind
            ),
        }
    }
}

/// The sign claims of the curves (RUN_DIR/curves/): per indicator, the direction most
/// distinct member curves take (over the members whose pool holds the indicator, a
/// duplicate fit counted once), with every direction's share. No claim for an indicator
/// no member holds. When the curves' members come from another good-set rule than the
/// report's (`report_good` is then this report's rule), the statement says so and its
/// `support_good` is NaN: the share is not over this report's good set.
pub fn signs(shape: &super::shape::Shape, report_good: Option<&str>) -> Vec<Conclusion> {
    shape
        .indicators
        .iter()
        .filter(|s| s.distinct > 0)
        .map(|s| {
            let (dir, share) = super::shape::dominant(s);
            let p = |v: f64| format!("{:.0}%", 100.0 * v);
            // A share tied with another direction is no majority: say so rather than name
            // the first of the tied directions.
            let tied = [s.rises, s.falls, s.flat, s.turns]
                .iter()
                .filter(|&&v| v == share)
                .count()
                > 1;
            let dir = if tied {
                "has no single direction (a tie) across".to_string()
            } else {
                format!("{dir} in {} of", p(share))
            };
            let mark = report_good.map_or(String::new(), |g| {
                format!(
                    " [members from the {} good set, not this report's {g} good set]",
                    shape.good
                )
            });
            Conclusion {
                source: "curves".into(),
                statement: format!(
                    "the partial dependence on {} {dir} {} distinct curves ({} of {} members ({}) hold it; duplicate fits counted once): rises overall {}, falls overall {}, flat {}, turns {}{mark}",
                    s.name,
                    s.distinct,
                    s.holding,
                    s.members,
                    shape.rule,
                    p(s.rises),
                    p(s.falls),
                    p(s.flat),
                    p(s.turns)
                ),
                level: "indicator".into(),
                kind: "partial dependence".into(),
                support_all: f64::NAN,
                n_all: 0,
                support_good: if report_good.is_some() { f64::NAN } else { share },
                n_good: if report_good.is_some() { 0 } else { s.distinct },
                pivot_dimension: String::new(),
                pivot_choice: String::new(),
                support_without: f64::NAN,
            }
        })
        .collect()
}

/// Share of `rows` (positions in the kind table) where the statement holds; NaN when empty.
pub fn support(st: &Statement, kt: &KindTable, rows: &[usize]) -> f64 {
    if rows.is_empty() {
        return f64::NAN;
    }
    rows.iter().filter(|&&i| st.holds(kt, i)).count() as f64 / rows.len() as f64
}

/// Evaluate a statement: support over all holding specs and over the good ones, and the
/// pivot choice. `choices[s][d]` is indexed by spec.
pub fn evaluate(
    source: &str,
    text: String,
    st: &Statement,
    kt: &KindTable,
    good: &[bool],
    dims: &[DimensionChoices],
    choices: &[Vec<usize>],
) -> Conclusion {
    let all: Vec<usize> = (0..kt.specs.len()).collect();
    let good_rows: Vec<usize> = all.iter().copied().filter(|&i| good[kt.specs[i]]).collect();
    let s_all = support(st, kt, &all);
    let mut pivot: (String, String, f64, f64) = (String::new(), String::new(), f64::NAN, 0.0);
    for (d, dim) in dims.iter().enumerate() {
        for (c, label) in dim.choices.iter().enumerate() {
            let rest: Vec<usize> = all
                .iter()
                .copied()
                .filter(|&i| choices[kt.specs[i]][d] != c)
                .collect();
            if rest.is_empty() || rest.len() == all.len() {
                continue;
            }
            let s = support(st, kt, &rest);
            let change = (s - s_all).abs();
            if change > pivot.3 + 1e-12 {
                pivot = (dim.dimension.clone(), label.clone(), s, change);
            }
        }
    }
    Conclusion {
        source: source.into(),
        statement: text,
        level: kt.level.clone(),
        kind: kt.kind.clone(),
        support_all: s_all,
        n_all: all.len(),
        support_good: support(st, kt, &good_rows),
        n_good: good_rows.len(),
        pivot_dimension: pivot.0,
        pivot_choice: pivot.1,
        support_without: pivot.2,
    }
}

/// Automatic statements for one kind table from its good-set summaries.
pub fn automatic(kt: &KindTable, sums: &[ImportanceSummary], top_k: usize) -> Vec<Statement> {
    let mut out = Vec::new();
    let mine: Vec<(usize, &ImportanceSummary)> = sums
        .iter()
        .filter(|s| s.level == kt.level && s.kind == kt.kind)
        .filter_map(|s| kt.name_index(&s.name).map(|j| (j, s)))
        .collect();
    for (j, s) in &mine {
        if s.share_top_k >= 0.5 {
            out.push(Statement::InTop { g: *j, k: top_k });
        }
    }
    let mut order: Vec<&(usize, &ImportanceSummary)> = mine
        .iter()
        .filter(|(_, s)| !s.median_rank.is_nan())
        .collect();
    order.sort_by(|a, b| {
        a.1.median_rank
            .total_cmp(&b.1.median_rank)
            .then(a.0.cmp(&b.0))
    });
    for w in order.windows(2).take(top_k) {
        out.push(Statement::Above {
            a: w[0].0,
            b: w[1].0,
        });
    }
    out
}

/// A user claim resolved against the kind tables: (table index, statement), or a message
/// naming what is missing.
pub fn resolve_claim(
    c: &ClaimSpec,
    tables: &[KindTable],
    primary: &dyn Fn(&str) -> Option<usize>,
    top_k: usize,
) -> Result<(usize, Statement), String> {
    let names: Vec<&str> = match (&c.ranks_above, &c.in_top) {
        (Some(v), _) => v.iter().map(|s| s.as_str()).collect(),
        (None, Some(g)) => vec![g.as_str()],
        _ => return Err("needs ranks_above or in_top".into()),
    };
    let has_all = |kt: &KindTable| names.iter().all(|n| kt.name_index(n).is_some());
    let level = match &c.level {
        Some(l) => l.clone(),
        None => {
            if tables.iter().any(|t| t.level == "indicator" && has_all(t)) {
                "indicator".into()
            } else {
                "group".into()
            }
        }
    };
    let ti = match &c.kind {
        Some(k) => tables
            .iter()
            .position(|t| t.level == level && &t.kind == k)
            .ok_or_else(|| format!("the run has no {k} importance at level {level}"))?,
        None => {
            primary(&level).ok_or_else(|| format!("the run has no importance at level {level}"))?
        }
    };
    let kt = &tables[ti];
    let idx = |n: &str| {
        kt.name_index(n).ok_or_else(|| {
            format!(
                "`{n}` is not a{} {level} of the {} importance{}",
                if level == "indicator" { "n" } else { "" },
                kt.kind,
                crate::error::suggest(n, kt.names.iter().map(|s| s.as_str()))
            )
        })
    };
    let st = match (&c.ranks_above, &c.in_top) {
        (Some(v), _) => Statement::Above {
            a: idx(&v[0])?,
            b: idx(&v[1])?,
        },
        (None, Some(g)) => Statement::InTop {
            g: idx(g)?,
            k: c.k.unwrap_or(top_k),
        },
        _ => return Err("needs ranks_above or in_top".into()),
    };
    Ok((ti, st))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Three specs, names a, b, c; a is first everywhere, c last.
    fn kt() -> KindTable {
        KindTable {
            level: "indicator".into(),
            kind: "permutation".into(),
            names: vec!["a".into(), "b".into(), "c".into()],
            specs: vec![0, 1, 2],
            values: vec![3.0, 2.0, 1.0, 3.0, 1.0, 2.0, 5.0, 4.0, 0.0],
            ranks: vec![1, 2, 3, 1, 3, 2, 1, 2, 3],
            in_pool: vec![true; 9],
        }
    }

    #[test]
    fn true_claim_full_support_false_claim_none() {
        let t = kt();
        let good = vec![true, true, false];
        let dims = vec![DimensionChoices {
            dimension: "model".into(),
            choices: vec!["x".into(), "y".into()],
        }];
        let choices = vec![vec![0], vec![1], vec![0]];
        let yes = Statement::Above { a: 0, b: 2 };
        let no = Statement::Above { a: 2, b: 0 };
        let c = evaluate("claim", yes.text(&t), &yes, &t, &good, &dims, &choices);
        assert_eq!(
            (c.support_all, c.support_good, c.n_all, c.n_good),
            (1.0, 1.0, 3, 2)
        );
        // No removal changes a unanimous support: no pivot.
        assert!(c.pivot_dimension.is_empty() && c.support_without.is_nan());
        let c = evaluate("claim", no.text(&t), &no, &t, &good, &dims, &choices);
        assert_eq!((c.support_all, c.support_good), (0.0, 0.0));
        // b above c holds in specs 0 and 2 (both model x): 2/3; dropping model x leaves
        // spec 1 only (0), dropping y leaves specs 0, 2 (1): the larger change is x.
        let bc = Statement::Above { a: 1, b: 2 };
        let c = evaluate("auto", bc.text(&t), &bc, &t, &good, &dims, &choices);
        assert!((c.support_all - 2.0 / 3.0).abs() < 1e-12);
        assert_eq!((c.pivot_choice.as_str(), c.support_without), ("x", 0.0));
        let top = Statement::InTop { g: 1, k: 2 };
        assert!((support(&top, &t, &[0, 1, 2]) - 2.0 / 3.0).abs() < 1e-12);
    }

    /// A zero importance is never top k (cold review 2, M1): ranks share ties, so in a spec
    /// whose importances are all 0 every name has rank 1, and a sparse spec's zeros tie just
    /// below its non-zero names; an out-of-pool name is never top either.
    #[test]
    fn zero_importances_and_out_of_pool_names_are_never_top() {
        let t = KindTable {
            level: "indicator".into(),
            kind: "coefficient".into(),
            names: vec!["a".into(), "b".into(), "c".into()],
            specs: vec![0, 1, 2],
            // spec 0: all zero (every rank 1); spec 1: only a non-zero (b and c tie at 2);
            // spec 2: a and c non-zero, b out of the pool.
            values: vec![0.0, 0.0, 0.0, 2.0, 0.0, 0.0, 3.0, 0.0, 1.0],
            ranks: vec![1, 1, 1, 1, 2, 2, 1, 3, 2],
            in_pool: vec![true, true, true, true, true, true, true, false, true],
        };
        let b_top = Statement::InTop { g: 1, k: 3 };
        assert_eq!(support(&b_top, &t, &[0, 1, 2]), 0.0);
        let a_top = Statement::InTop { g: 0, k: 1 };
        assert!((support(&a_top, &t, &[0, 1, 2]) - 2.0 / 3.0).abs() < 1e-12);
        let c_top = Statement::InTop { g: 2, k: 2 };
        assert!((support(&c_top, &t, &[0, 1, 2]) - 1.0 / 3.0).abs() < 1e-12);
        let (sums, _) = crate::report::distribution::summarise(&t, &[true, true, true], 3);
        let share: Vec<f64> = sums.iter().map(|s| s.share_top_k).collect();
        assert_eq!(share, vec![2.0 / 3.0, 0.0, 1.0 / 3.0]);
    }

    #[test]
    fn claims_resolve_or_name_the_unknown() {
        let t = vec![kt()];
        let prim = |l: &str| (l == "indicator").then_some(0);
        let c = ClaimSpec {
            ranks_above: Some(vec!["a".into(), "b".into()]),
            ..Default::default()
        };
        assert_eq!(
            resolve_claim(&c, &t, &prim, 3).unwrap(),
            (0, Statement::Above { a: 0, b: 1 })
        );
        let c = ClaimSpec {
            in_top: Some("bb".into()),
            level: Some("indicator".into()),
            ..Default::default()
        };
        let e = resolve_claim(&c, &t, &prim, 3).unwrap_err();
        assert!(e.contains("`bb`") && e.contains("`b`"), "{e}");
    }
}
