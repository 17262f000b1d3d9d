//! The good set (Rashomon set) under three definitions, side by side:
//!
//! * `ratio`: error <= (1 + eps) x best error;
//! * `margin`: error <= best error + margin (an absolute margin in the metric's units;
//!   by default the bootstrap standard error of the best spec's error, the
//!   one-standard-error rule of common practice);
//! * `paired`: not distinguishable from the best by a paired bootstrap over units: with
//!   d_r = error_r(spec) - error_r(best) on the same resample r, the spec is good unless
//!   the (1 - level) quantile of d is above 0, i.e. unless it is worse than the best in
//!   more than `level` of the resamples (a one-sided test at 1 - level for each spec on
//!   its own). It is not a confidence set for the best spec: the many tests are not
//!   adjusted for multiplicity and the best is chosen on the same data (its replicates are
//!   optimistic), so the set is a screen of specs the data cannot tell from the best one
//!   at a time, stated as such in the rule text.
//!
//! Each is a pure function of the errors; membership is reported for every ok spec.

use super::errors::Errors;
use super::model::{GoodMakeup, GoodSet};
use super::stats::quantile_sorted;

/// Within (1 + eps) x best.
pub fn ratio(point: &[f64], best: f64, eps: f64) -> Vec<bool> {
    let cut = best * (1.0 + eps);
    point.iter().map(|&e| e <= cut).collect()
}

/// Within best + margin.
pub fn margin(point: &[f64], best: f64, m: f64) -> Vec<bool> {
    let cut = best + m;
    point.iter().map(|&e| e <= cut).collect()
}

/// Not distinguishable from spec `best` by the paired unit bootstrap at `level`.
pub fn paired(e: &Errors, best: usize, level: f64) -> Vec<bool> {
    let rb = e.replicates(best);
    (0..e.point.len())
        .map(|s| {
            if s == best {
                return true;
            }
            let mut d: Vec<f64> = e
                .replicates(s)
                .iter()
                .zip(rb)
                .map(|(a, b)| a - b)
                .filter(|v| !v.is_nan())
                .collect();
            if d.is_empty() {
                return false;
            }
            d.sort_by(f64::total_cmp);
            quantile_sorted(&d, 1.0 - level) <= 0.0
        })
        .collect()
}

/// Size and rule of one good set.
pub fn summary(
    definition: &str,
    rule: String,
    threshold: f64,
    members: &[bool],
    classes: &[usize],
) -> GoodSet {
    let size = members.iter().filter(|m| **m).count();
    let distinct: std::collections::BTreeSet<usize> = members
        .iter()
        .zip(classes)
        .filter(|(m, _)| **m)
        .map(|(_, c)| *c)
        .collect();
    GoodSet {
        definition: definition.into(),
        rule,
        threshold,
        size,
        distinct_fits: distinct.len(),
        share_of_ok: size as f64 / members.len().max(1) as f64,
    }
}

/// Make-up of a good set by choice: `choices[s]` is spec s's choice index in a dimension
/// with `labels`.
pub fn makeup(
    definition: &str,
    dimension: &str,
    labels: &[String],
    choices: &[usize],
    members: &[bool],
) -> Vec<GoodMakeup> {
    let size = members.iter().filter(|m| **m).count();
    let mut good = vec![0usize; labels.len()];
    let mut all = vec![0usize; labels.len()];
    for (s, &c) in choices.iter().enumerate() {
        all[c] += 1;
        if members[s] {
            good[c] += 1;
        }
    }
    labels
        .iter()
        .enumerate()
        .map(|(c, l)| GoodMakeup {
            definition: definition.into(),
            dimension: dimension.into(),
            choice: l.clone(),
            in_good: good[c],
            in_ok: all[c],
            share_of_good: if size == 0 {
                f64::NAN
            } else {
                good[c] as f64 / size as f64
            },
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Fit classes: specs whose per-unit errors are bit for bit another's are one fit;
    /// a good set counts its distinct fits (by hand: specs 0 and 2 equal, 1 and 3 differ
    /// from them and from each other in one unit's squared error).
    #[test]
    fn good_sets_count_distinct_fits() {
        let t = crate::report::data::RunTables {
            spec_ids: (0..4).map(|i| format!("s{i}")).collect(),
            units: vec!["a".into(), "b".into()],
            unit_abs: vec![1.0, 2.0, 1.0, 2.0, 1.0, 2.0, 1.0, 2.0],
            unit_sq: vec![1.0, 4.0, 1.0, 4.5, 1.0, 4.0, 1.5, 4.0],
            unit_n: vec![1.0; 8],
            ..Default::default()
        };
        let classes = t.fit_classes();
        assert_eq!(classes, vec![0, 1, 0, 3]);
        let g = summary(
            "ratio",
            String::new(),
            1.0,
            &[true, false, true, true],
            &classes,
        );
        assert_eq!((g.size, g.distinct_fits), (3, 2));
        let g = summary(
            "ratio",
            String::new(),
            1.0,
            &[true, true, false, true],
            &classes,
        );
        assert_eq!((g.size, g.distinct_fits), (3, 3));
    }

    /// A hand-made error table: 5 specs, 4 resamples (rows are specs).
    fn table() -> Errors {
        Errors {
            point: vec![1.00, 1.04, 1.06, 1.10, 2.00],
            b: 4,
            reps: vec![
                1.0, 1.1, 0.9, 1.0, // best
                0.9, 1.2, 1.0, 1.1, // sometimes better than the best
                1.1, 1.2, 1.0, 1.1, // always worse (by 0.1)
                1.0, 1.1, 0.9, 1.0, // equal to the best on every resample
                2.0, 2.1, 1.9, 2.0, // far worse
            ],
        }
    }

    #[test]
    fn ratio_and_margin_membership() {
        let e = table();
        // 1.05 x 1.00 = 1.05: specs 0 and 1.
        assert_eq!(
            ratio(&e.point, 1.0, 0.05),
            vec![true, true, false, false, false]
        );
        // 1.00 + 0.08 = 1.08: specs 0, 1, 2.
        assert_eq!(
            margin(&e.point, 1.0, 0.08),
            vec![true, true, true, false, false]
        );
        // The boundary is inclusive.
        assert_eq!(ratio(&[1.0, 1.5], 1.0, 0.5), vec![true, true]);
    }

    #[test]
    fn paired_membership() {
        let e = table();
        // Differences to the best: spec 1 [-0.1, 0.1, 0.1, 0.1] (5% quantile < 0: good);
        // spec 2 [0.1; 4] (worse in every resample: out); spec 3 zeros (good); spec 4 out.
        assert_eq!(paired(&e, 0, 0.95), vec![true, true, false, true, false]);
        // At level 0.5 the 50% quantile of spec 1's differences is 0.1 > 0: out.
        assert_eq!(paired(&e, 0, 0.5), vec![true, false, false, true, false]);
    }

    #[test]
    fn makeup_counts() {
        let labels = vec!["a".to_string(), "b".to_string()];
        let m = makeup(
            "ratio",
            "model",
            &labels,
            &[0, 0, 1, 1],
            &[true, false, true, true],
        );
        assert_eq!((m[0].in_good, m[0].in_ok), (1, 2));
        assert_eq!((m[1].in_good, m[1].in_ok), (2, 2));
        assert!((m[1].share_of_good - 2.0 / 3.0).abs() < 1e-12);
    }
}
