//! Grouped folds: no unit on both sides; every row tested exactly once per repeat.

use forkmap::config::{FoldScheme, FoldsSection};
use forkmap::folds::FoldPlan;
use forkmap::panel::Panel;
use proptest::prelude::*;

fn check(p: &Panel, plan: &FoldPlan) {
    for r in 0..plan.repeats {
        let mut tested = vec![0usize; p.n_rows()];
        for f in plan.folds.iter().filter(|f| f.repeat == r) {
            let test_units: std::collections::HashSet<usize> =
                f.test.iter().map(|&i| p.row_unit[i]).collect();
            for &i in &f.train {
                assert!(!test_units.contains(&p.row_unit[i]), "unit on both sides");
            }
            assert_eq!(f.train.len() + f.test.len(), p.n_rows());
            assert!(!f.test.is_empty());
            for &i in &f.test {
                tested[i] += 1;
            }
        }
        assert!(
            tested.iter().all(|&c| c == 1),
            "every row tested once per repeat"
        );
    }
}

proptest! {
    #[test]
    fn grouped_kfold_properties(
        rows in proptest::collection::vec(1usize..4, 2..40),
        k in 2usize..10,
        repeats in 1usize..4,
        seed in any::<u64>(),
    ) {
        let p = crate::common::unit_panel(&rows);
        let cfg = FoldsSection { scheme: FoldScheme::GroupedKfold, k, repeats };
        match FoldPlan::new(&p, &cfg, seed) {
            Ok(plan) => {
                prop_assert!(p.n_units() >= k);
                prop_assert_eq!(plan.folds.len(), k * repeats);
                check(&p, &plan);
                // Same seed, same folds.
                let again = FoldPlan::new(&p, &cfg, seed).unwrap();
                prop_assert_eq!(plan.folds, again.folds);
            }
            Err(e) => {
                prop_assert!(p.n_units() < k, "unexpected error {}", e);
            }
        }
    }

    #[test]
    fn leave_one_unit_out_properties(rows in proptest::collection::vec(1usize..4, 2..30)) {
        let p = crate::common::unit_panel(&rows);
        let cfg = FoldsSection { scheme: FoldScheme::LeaveOneUnitOut, k: 0, repeats: 1 };
        let plan = FoldPlan::new(&p, &cfg, 1).unwrap();
        prop_assert_eq!(plan.folds.len(), p.n_units());
        for f in &plan.folds {
            let u = p.row_unit[f.test[0]];
            prop_assert!(f.test.iter().all(|&i| p.row_unit[i] == u));
        }
        check(&p, &plan);
    }
}

#[test]
fn repeats_reshuffle() {
    let p = crate::common::unit_panel(&[1; 30]);
    let plan = FoldPlan::new(
        &p,
        &FoldsSection {
            scheme: FoldScheme::GroupedKfold,
            k: 5,
            repeats: 2,
        },
        9,
    )
    .unwrap();
    assert_ne!(
        plan.folds[0].test, plan.folds[5].test,
        "a repeat draws a new shuffle"
    );
}
