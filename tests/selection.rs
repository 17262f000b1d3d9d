//! Permutation null of the sweep (engine/src/derived/null/): the p-value formula, unit-wise
//! permutation, determinism per draw, and significance on the toy panel vs pure noise.

use crate::common::toy;
use forkmap::null::{draw_seed, null_draw, p_value, permute_units, sample_specs, sweep_summary};
use forkmap::panel::Panel;
use ndarray::{Array1, Array2};
use proptest::prelude::*;

/// Hand-made example: observed MAE 1.0, null best MAEs [0.9, 1.0, 1.1, 1.2]: two draws
/// are at least as good (0.9, 1.0 — ties count), so p = (1 + 2) / (1 + 4) = 0.6.
/// For a skill (higher is better) of 0.3 against [0.1, 0.3, 0.5, 0.2]: (1 + 2) / 5 = 0.6;
/// against all-worse draws the smallest attainable p is 1 / (1 + D).
#[test]
fn p_value_on_a_hand_made_example() {
    assert!((p_value(&[0.9, 1.0, 1.1, 1.2], 1.0, true) - 0.6).abs() < 1e-15);
    assert!((p_value(&[0.1, 0.3, 0.5, 0.2], 0.3, false) - 0.6).abs() < 1e-15);
    assert!((p_value(&[2.0; 19], 1.0, true) - 0.05).abs() < 1e-15);
    assert!((p_value(&[], 1.0, true) - 1.0).abs() < 1e-15);
    // A draw with no result counts against the observed one: (1 + 2) / (1 + 3).
    assert!((p_value(&[f64::NAN, 2.0, 0.5], 1.0, true) - 0.75).abs() < 1e-15);
}

/// A panel with `n` units, unit u observed in waves given by the bits of `mask[u]`.
fn panel_from(masks: &[u8], ys: &[f64]) -> Panel {
    let mut units = Vec::new();
    let mut waves = Vec::new();
    let mut y = Vec::new();
    let mut k = 0;
    for (u, m) in masks.iter().enumerate() {
        for w in 0..3 {
            if m & (1 << w) != 0 {
                units.push(format!("u{u}"));
                waves.push(Some(format!("w{w}")));
                y.push(ys[k % ys.len()] + k as f64 * 1e-3);
                k += 1;
            }
        }
    }
    let n = y.len();
    let x = Array2::from_shape_fn((n, 1), |(i, _)| i as f64);
    let mut p = Panel::new(units, waves, Array1::from(y), x, vec!["x".into()]).expect("panel");
    p.se = Some(p.y.mapv(|v| v * 10.0 + 1.0));
    p
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(64))]
    /// Every unit receives all of one donor unit's outcomes, wave by wave, the donor has
    /// the same set of waves, the multiset of outcomes is kept, and the se moves with y.
    #[test]
    fn permutation_keeps_each_units_waves_together(
        masks in prop::collection::vec(1u8..8, 2..30),
        ys in prop::collection::vec(-5.0f64..5.0, 1..20),
        seed in any::<u64>(),
    ) {
        let p = panel_from(&masks, &ys);
        let q = permute_units(&p, seed).expect("permute");
        prop_assert_eq!(&q.x, &p.x);
        prop_assert_eq!(&q.row_unit, &p.row_unit);
        let rows_of = |u: usize| -> Vec<usize> { (0..p.n_rows()).filter(|&r| p.row_unit[r] == u).collect() };
        for u in 0..p.n_units() {
            let mine = rows_of(u);
            // the donor: the unit whose first row's outcome we received
            let donor = (0..p.n_units()).find(|&d| {
                let theirs = rows_of(d);
                theirs.len() == mine.len()
                    && mine.iter().zip(&theirs).all(|(&a, &b)| {
                        p.row_wave[a] == p.row_wave[b] && q.y[a] == p.y[b]
                    })
            });
            prop_assert!(donor.is_some(), "unit {} got no whole donor", u);
        }
        let mut a: Vec<f64> = p.y.to_vec();
        let mut b: Vec<f64> = q.y.to_vec();
        a.sort_by(f64::total_cmp);
        b.sort_by(f64::total_cmp);
        prop_assert_eq!(a, b);
        let (se, y) = (q.se.as_ref().expect("se"), &q.y);
        for r in 0..q.n_rows() {
            prop_assert_eq!(se[r], y[r] * 10.0 + 1.0);
        }
    }
}

#[test]
fn draws_are_seeded_per_draw_and_distinct() {
    let p = panel_from(&[7; 40], &[1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0]);
    let a = permute_units(&p, draw_seed(11, 3)).expect("a");
    let b = permute_units(&p, draw_seed(11, 3)).expect("b");
    let c = permute_units(&p, draw_seed(11, 4)).expect("c");
    assert_eq!(a.y, b.y);
    assert_ne!(a.y, c.y);
    assert_ne!(draw_seed(11, 3), draw_seed(12, 3));
    let s = sample_specs(100, Some(10), 5);
    assert_eq!(s, sample_specs(100, Some(10), 5));
    assert_eq!(s.len(), 10);
    assert_eq!(sample_specs(5, Some(10), 5), vec![0, 1, 2, 3, 4]);
}

/// Fast linear specs of the toy space (ols, compress none), so the test stays modest.
fn fast_specs(p: &forkmap::run::Prepared) -> Vec<usize> {
    (0..p.space.specs.len())
        .filter(|&i| {
            let s = &p.space.specs[i];
            s.choice(forkmap::decl::Dim::Model).option == "ols"
                && s.choice(forkmap::decl::Dim::Compress).option == "none"
        })
        .collect()
}

/// On the toy panel (outcome built from indicators) the observed best MAE beats every one
/// of 19 null draws: p = 1/20 = 0.05. A draw is a pure function of (seed, d).
#[test]
fn toy_best_is_significant_against_the_null() {
    let p = toy();
    let subset = fast_specs(&p);
    assert!(!subset.is_empty());
    let obs = sweep_summary(&p.panel, &p.space, &p.folds, p.cfg.seed, &subset)
        .expect("observed")
        .expect("some spec succeeded");
    let null: Vec<f64> = (0..19)
        .map(|d| {
            null_draw(&p.panel, &p.space, &p.folds, p.cfg.seed, &subset, d)
                .expect("draw")
                .map_or(f64::NAN, |s| s.best_mae)
        })
        .collect();
    let again = null_draw(&p.panel, &p.space, &p.folds, p.cfg.seed, &subset, 4)
        .expect("draw")
        .map(|s| s.best_mae);
    assert_eq!(again, Some(null[4]));
    let pv = p_value(&null, obs.best_mae, true);
    assert!(
        pv <= 0.05,
        "observed best {} vs null {null:?}: p = {pv}",
        obs.best_mae
    );
    // on the real outcome most of these linear specs beat the training-median baseline
    assert!(obs.share_skill_positive > 0.5, "observed {obs:?}");
}

/// Pure noise: the toy indicators with an outcome unrelated to them (a fixed permutation
/// of units, i.e. one null draw taken as "observed"). Over 20 seeded repetitions with 19
/// draws each, the observed best is significant at 5% in at most 3 (expected 1; the
/// binomial(20, 0.05) tail P(X >= 4) is about 0.016).
#[test]
fn pure_noise_best_is_rarely_significant() {
    let p = toy();
    let subset: Vec<usize> = fast_specs(&p).into_iter().take(4).collect();
    let mut significant = 0;
    for rep in 0..20u64 {
        let noise = permute_units(&p.panel, draw_seed(1_000 + rep, u64::MAX)).expect("noise");
        let seed = 7_000 + rep;
        let obs = sweep_summary(&noise, &p.space, &p.folds, seed, &subset)
            .expect("obs")
            .expect("ok");
        let null: Vec<f64> = (0..19)
            .map(|d| {
                null_draw(&noise, &p.space, &p.folds, seed, &subset, d)
                    .expect("draw")
                    .map_or(f64::NAN, |s| s.best_mae)
            })
            .collect();
        if p_value(&null, obs.best_mae, true) <= 0.05 {
            significant += 1;
        }
    }
    assert!(
        significant <= 3,
        "{significant} of 20 noise runs significant"
    );
}
