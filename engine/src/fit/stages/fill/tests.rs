//! The fill stage's tests: by rule, the chained fill, its row-by-row fills, the within-unit carry.

use super::*;

mod by_rule {
    use super::*;
    use ndarray::array;

    fn input<'a>(
        x: &'a Array2<f64>,
        y: &'a ndarray::Array1<f64>,
        names: &'a [String],
        rows: &'a [usize],
    ) -> StageInput<'a> {
        StageInput {
            x: x.view(),
            y: y.view(),
            rows,
            names,
        }
    }

    #[test]
    fn fills_from_training_values_only() {
        let x = array![
            [1.0, f64::NAN],
            [f64::NAN, 4.0],
            [3.0, 10.0],
            [5.0, f64::NAN]
        ];
        let names = vec!["a".to_string(), "b".to_string()];
        let y = array![0.0, 0.0, 0.0, 0.0];
        let rows = [0, 1, 2, 3];
        let mk = |rule| Fill {
            rule,
            drop_share: 1.0,
            flags: false,
            waves: None,
        };
        let mean = mk(Rule::Mean).fit(&input(&x, &y, &names, &rows)).unwrap();
        let med = mk(Rule::Median).fit(&input(&x, &y, &names, &rows)).unwrap();
        let test = array![[f64::NAN, f64::NAN]];
        // Hand-checked: mean(1,3,5) = 3, mean(4,10) = 7; median(1,3,5) = 3, median(4,10) = 7.
        assert_eq!(mean.apply(test.view()), array![[3.0, 7.0]]);
        assert_eq!(med.apply(test.view()), array![[3.0, 7.0]]);
        let mut v = vec![5.0, 1.0, 4.0, 100.0];
        assert_eq!(median(&mut v), 4.5);
    }

    #[test]
    fn drop_rule_and_flags() {
        // Column b is missing in 2 of 4 training rows (share 0.5).
        let x = array![[1.0, f64::NAN], [2.0, 4.0], [3.0, 10.0], [5.0, f64::NAN]];
        let names = vec!["a".to_string(), "b".to_string()];
        let y = array![0.0, 0.0, 0.0, 0.0];
        let rows = [0, 1, 2, 3];
        let dropped = Fill {
            rule: Rule::Mean,
            drop_share: 0.4,
            flags: false,
            waves: None,
        }
        .fit(&input(&x, &y, &names, &rows))
        .unwrap();
        assert_eq!(dropped.names(), &["a".to_string()]);
        let flagged = Fill {
            rule: Rule::Mean,
            drop_share: 0.5,
            flags: true,
            waves: None,
        }
        .fit(&input(&x, &y, &names, &rows))
        .unwrap();
        assert_eq!(
            flagged.names(),
            &["a".to_string(), "b".to_string(), "b__missing".to_string()]
        );
        assert_eq!(
            flagged.apply(array![[9.0, f64::NAN]].view()),
            array![[9.0, 7.0, 1.0]]
        );
    }

    /// A gap takes the k nearest donors that have its column, whether they are among the
    /// first nearest (the fast path) or further out (the full search). Worked by hand:
    /// donor r has a = r + 1; the test row has only a = 0, so donors rank by a. With b
    /// present only from donor 30 on, the two nearest with b are 30 and 31 (b = 130, 131),
    /// beyond the 4k + 8 = 16 nearest; with b present at donors 5 and 9 as well, those two.
    #[test]
    fn knn_fill_finds_donors_with_the_column_near_or_far() {
        let names = vec!["a".to_string(), "b".to_string()];
        let mk_donors = |near_b: bool| {
            Array2::from_shape_fn((40, 2), |(r, j)| match j {
                0 => r as f64 + 1.0,
                _ if r >= 30 || (near_b && (r == 5 || r == 9)) => 100.0 + r as f64,
                _ => f64::NAN,
            })
        };
        let rows: Vec<usize> = (0..40).collect();
        let y = ndarray::Array1::zeros(40);
        let stage = Fill {
            rule: Rule::Knn(2),
            drop_share: 1.0,
            flags: false,
            waves: None,
        };
        for (near_b, want) in [(false, 130.5), (true, 107.0)] {
            let x = mk_donors(near_b);
            let f = stage.fit(&input(&x, &y, &names, &rows)).unwrap();
            let out = f.apply(array![[0.0, f64::NAN]].view());
            assert_eq!(out[[0, 1]], want, "b present near: {near_b}");
            assert_eq!(out[[0, 0]], 0.0);
        }
    }

    #[test]
    fn nan_euclidean_matches_the_documented_formula() {
        // scikit-learn's docs example for nan_euclidean_distances: X = [[0, 1], [1, nan]],
        // distance = sqrt(2 / 1 * (0 - 1)^2) = sqrt(2).
        let d = nan_euclidean(array![0.0, 1.0].view(), array![1.0, f64::NAN].view()).unwrap();
        assert!((d - 2f64.sqrt()).abs() < 1e-15);
        assert!(nan_euclidean(array![f64::NAN].view(), array![1.0].view()).is_none());
    }
}

mod chained_tests {
    use super::*;
    use ndarray::array;

    #[test]
    fn chained_fill_recovers_a_linear_relation() {
        // b = 2a + 1 exactly on the observed rows; c is unrelated noise. A small ridge
        // penalty (alpha = 1e-6) makes the regression of b on (a, c) nearly exact, so the
        // gaps of b are filled with ~2a + 1 (worked by hand: a = 3 -> 7, a = 10 -> 21),
        // where a mean fill would give mean(b) = 9.
        let x = array![
            [1.0, 3.0, 0.3],
            [2.0, 5.0, -0.1],
            [3.0, f64::NAN, 0.2],
            [4.0, 9.0, 0.0],
            [5.0, 11.0, 0.4],
            [6.0, 13.0, -0.3],
            [7.0, 15.0, 0.1],
            [8.0, 17.0, 0.2],
        ];
        let names: Vec<String> = ["a", "b", "c"].iter().map(|s| s.to_string()).collect();
        let y = ndarray::Array1::zeros(8);
        let rows: Vec<usize> = (0..8).collect();
        let stage = Fill {
            rule: Rule::Chained {
                rounds: 3,
                alpha: 1e-6,
            },
            drop_share: 1.0,
            flags: false,
            waves: None,
        };
        let f = stage
            .fit(&StageInput {
                x: x.view(),
                y: y.view(),
                rows: &rows,
                names: &names,
            })
            .unwrap();
        let out = f.apply(x.view());
        assert!((out[[2, 1]] - 7.0).abs() < 0.01, "{}", out[[2, 1]]);
        let new = f.apply(array![[10.0, f64::NAN, 0.0]].view());
        assert!((new[[0, 1]] - 21.0).abs() < 0.02, "{}", new[[0, 1]]);
        assert_eq!(new[[0, 0]], 10.0);
    }
}

mod chained_row_tests {
    use super::*;

    /// A row's chained fill is the same, bit for bit, whether the row is filled alone or
    /// in a batch with other rows that have gaps in the same or other columns (a batched
    /// matrix product sums a one-row batch in another order than a many-row one).
    #[test]
    fn chained_fill_of_a_row_does_not_depend_on_the_batch() {
        let (n, p) = (40, 12);
        let mut s = 7u64;
        let mut next = || {
            s = s
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            (s >> 11) as f64 / (1u64 << 53) as f64
        };
        let x = Array2::from_shape_fn((n, p), |(i, j)| {
            let v = (i as f64 * 0.37 + j as f64 * 1.3).sin() * 10.0 + next();
            if (i * 5 + j * 3) % 7 == 0 {
                f64::NAN
            } else {
                v
            }
        });
        let names: Vec<String> = (0..p).map(|j| format!("x{j}")).collect();
        let y = ndarray::Array1::zeros(n);
        let rows: Vec<usize> = (0..n).collect();
        let stage = Fill {
            rule: Rule::Chained {
                rounds: 3,
                alpha: 0.5,
            },
            drop_share: 1.0,
            flags: false,
            waves: None,
        };
        let f = stage
            .fit(&StageInput {
                x: x.view(),
                y: y.view(),
                rows: &rows,
                names: &names,
            })
            .unwrap();
        let batch = f.apply(x.view());
        let mut gaps = 0;
        for i in 0..n {
            let alone = f.apply(x.slice(ndarray::s![i..i + 1, ..]));
            for j in 0..p {
                gaps += usize::from(x[[i, j]].is_nan());
                assert_eq!(
                    alone[[0, j]].to_bits(),
                    batch[[i, j]].to_bits(),
                    "row {i} column {j}: {} alone, {} in the batch",
                    alone[[0, j]],
                    batch[[i, j]]
                );
            }
        }
        assert!(gaps > 50, "{gaps} gaps");
    }
}

mod carry_tests {
    use super::*;
    use ndarray::array;

    #[test]
    fn carry_takes_the_units_nearest_wave_then_the_median() {
        // Rows: unit 0 waves 2019, 2021, 2024; unit 1 wave 2021. Worked by hand:
        // unit 0's gap at 2021 takes 2019's value 1 (|2021-2019| = 2 < |2024-2021| = 3);
        // unit 1 has no other wave, so it takes the training median of (1, 5) = 3.
        let x = array![[1.0], [f64::NAN], [5.0], [f64::NAN]];
        let w = Waves {
            unit: Arc::new(vec![0, 0, 0, 1]),
            pos: Arc::new(vec![2019.0, 2021.0, 2024.0, 2021.0]),
        };
        let stage = Fill {
            rule: Rule::Carry,
            drop_share: 1.0,
            flags: true,
            waves: Some(w),
        };
        let names = vec!["a".to_string()];
        let y = ndarray::Array1::zeros(4);
        let rows = [0, 1, 2, 3];
        let f = stage
            .fit(&StageInput {
                x: x.view(),
                y: y.view(),
                rows: &rows,
                names: &names,
            })
            .unwrap();
        let out = f.apply_rows(x.view(), Some(&rows));
        assert_eq!(out.column(0).to_vec(), vec![1.0, 1.0, 5.0, 3.0]);
        assert_eq!(
            out.column(1).to_vec(),
            vec![0.0, 1.0, 0.0, 1.0],
            "flags mark original gaps"
        );
        // Without row identity (new raw rows): the median.
        assert_eq!(
            f.apply(x.view()).column(0).to_vec(),
            vec![1.0, 3.0, 5.0, 3.0]
        );
    }
}
