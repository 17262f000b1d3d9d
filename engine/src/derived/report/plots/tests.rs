use super::*;
use crate::report::model::*;

/// A small hand-built report with awkward names (markup characters, quotes).
pub(crate) fn sample(n_specs: usize) -> Report {
    let dims = vec![
        DimensionChoices {
            dimension: "fill".into(),
            choices: vec!["mean".into(), "knn(k=5)".into()],
        },
        DimensionChoices {
            dimension: "model".into(),
            choices: (0..15)
                .map(|i| format!("ridge(alpha={i})"))
                .chain(["ols".into()])
                .collect(),
        },
    ];
    let curve = (0..n_specs)
        .map(|i| {
            let e = 0.4 + 0.3 * (i as f64 / n_specs as f64).powi(2);
            CurvePoint {
                spec_id: format!("{i:016x}"),
                position: i + 1,
                error: e,
                lower: e - 0.03,
                upper: e + 0.04,
                choices: vec![i % 2, (i * 7) % 16],
                good: [i < n_specs / 10 + 1, i < 3, i < n_specs / 5 + 1],
            }
        })
        .collect();
    let spread = |m: f64| Spread {
        n: 10,
        min: m - 0.1,
        q1: m - 0.03,
        median: m,
        q3: m + 0.04,
        max: m + 0.2,
    };
    let names = [
        "wage <gap> & \"rent\"",
        "school's_dropout",
        "clinic_visits",
        "rain",
    ];
    let mut importance = Vec::new();
    let mut rank_counts = Vec::new();
    let mut rank_shares = Vec::new();
    let mut rank_by_choice = Vec::new();
    for (i, n) in names.iter().enumerate() {
        importance.push(ImportanceSummary {
            level: "indicator".into(),
            kind: "permutation".into(),
            name: n.to_string(),
            importance: spread(1.0 / (i + 1) as f64),
            median_rank: (i + 1) as f64,
            best_rank: 1,
            worst_rank: 4,
            share_top_k: 1.0 / (i + 1) as f64,
            share_top_k_all: 0.8 / (i + 1) as f64,
            out_of_pool: 0,
        });
        for r in 1..=4u32 {
            rank_counts.push(RankCount {
                level: "indicator".into(),
                kind: "permutation".into(),
                name: n.to_string(),
                rank: r,
                count: if r as usize == i + 1 { 7 } else { 1 },
            });
        }
        for d in &dims {
            rank_shares.push(RankShare {
                level: "indicator".into(),
                kind: "permutation".into(),
                name: n.to_string(),
                dimension: d.dimension.clone(),
                lmg: 0.1 * (i + 1) as f64,
                share: 0.5,
                r2_total: 0.2 * (i + 1) as f64,
            });
            for c in &d.choices {
                rank_by_choice.push(RankByChoice {
                    level: "indicator".into(),
                    kind: "permutation".into(),
                    name: n.to_string(),
                    dimension: d.dimension.clone(),
                    choice: c.clone(),
                    n: 5,
                    median_rank: 2.0,
                    share_top_k: (c.len() % 5) as f64 / 4.0,
                });
            }
        }
    }
    let m = 5;
    let matrix = (0..m * m)
        .map(|ij| {
            if ij / m == ij % m {
                1.0
            } else {
                0.2 * ((ij % 7) as f64) - 0.4
            }
        })
        .collect();
    Report {
        meta: Meta {
            runs: vec!["runs/demo <1>".into()],
            manifest_json: "{\n  \"tool\": \"forkmap\",\n  \"note\": \"<b>&amp;\"\n}".into(),
            notes: vec!["complete: 1 of 1 run".into()],
            metric: "mae".into(),
            top_k: 3,
            good: "ratio".into(),
            ratio_eps: 0.05,
            margin: 0.02,
            margin_default: true,
            level: 0.9,
            resamples: 200,
            seed: 7,
            specs_total: n_specs + 2,
            specs_ok: n_specs,
            units: 40,
            rows: 120,
            best_spec: "0000000000000000".into(),
            best_error: 0.4,
            median_error: 0.5,
            kinds: vec![("indicator".into(), "permutation".into())],
            seconds: 0.1,
        },
        headline: vec!["Of 12 specs, 3 are <good> & \"near\" the best.".into()],
        cautions: vec!["These are associations, not causes.".into()],
        dimensions: dims.clone(),
        curve,
        error_by_choice: dims
            .iter()
            .flat_map(|d| {
                d.choices.iter().enumerate().map(|(i, c)| ChoiceSummary {
                    dimension: d.dimension.clone(),
                    choice: c.clone(),
                    error: spread(0.45 + 0.01 * i as f64),
                })
            })
            .collect(),
        error_by_param: vec![],
        error_shares: vec![
            Share {
                dimension: "fill".into(),
                lmg: 0.1,
                share: 0.25,
                r2_total: 0.4,
                r2_alone: 0.12,
            },
            Share {
                dimension: "model".into(),
                lmg: 0.3,
                share: 0.75,
                r2_total: 0.4,
                r2_alone: 0.31,
            },
        ],
        rank_by_choice,
        rank_shares,
        good_sets: vec![],
        good_makeup: vec![],
        importance,
        rank_counts,
        agreement: vec![Agreement {
            level: "indicator".into(),
            kind: "permutation".into(),
            members: (0..m).map(|i| format!("{i:016x}")).collect(),
            capped: false,
            mean: 0.3,
            min: -0.4,
            matrix,
        }],
        conclusions: vec![],
        stability: vec![],
        best_frequency: vec![],
        shape: None,
        nested: None,
        null: Some(crate::report::null::NullReport {
            draws: 19,
            draws_asked: 19,
            specs: 40,
            specs_in_space: 544,
            metric: "mae".into(),
            top_k: 3,
            observed_best: 3.2,
            observed_median: 4.0,
            null_best: (0..19).map(|d| 3.6 + 0.05 * d as f64).collect(),
            null_median: (0..19).map(|d| 4.1 + 0.02 * d as f64).collect(),
            p_best: 0.05,
            p_median: 0.05,
            top_spec: Some("abc".into()),
            indicators: vec![],
            notes: vec![],
            ..Default::default()
        }),
        refit: None,
    }
}

#[test]
fn every_plot_renders_with_title_caption_and_data_marks() {
    let report = sample(40);
    let plots = render_all(&report).unwrap();
    let files: Vec<&str> = plots.iter().map(|p| p.file.as_str()).collect();
    assert_eq!(
        files,
        [
            "curve.svg",
            "error-influence.svg",
            "rank-influence-indicator-permutation.svg",
            "importance-indicator-permutation.svg",
            "null-best.svg",
            "agreement-indicator-permutation.svg"
        ]
    );
    for p in &plots {
        assert!(p.svg.starts_with("<svg "), "{}", p.file);
        assert!(p.svg.trim_end().ends_with("</svg>"), "{}", p.file);
        assert!(p.svg.contains("class=\"fm-plot\""), "{}", p.file);
        assert!(p.svg.contains("<title>"), "{}", p.file);
        assert!(p.svg.contains("class=\"fm-data\""), "{}", p.file);
        assert!(!p.caption.is_empty());
        assert!(
            !p.svg.contains("http://")
                || p.svg.matches("http://").count() == p.svg.matches("xmlns").count()
        );
        assert!(!p.svg.contains("https://"), "{}", p.file);
    }
}

#[test]
fn names_with_markup_are_escaped_in_svg() {
    let report = sample(12);
    for p in render_all(&report).unwrap() {
        assert!(!p.svg.contains("<gap>"), "{}", p.file);
        assert!(!p.svg.contains("& \""), "{}", p.file);
    }
    let imp = render_all(&report)
        .unwrap()
        .into_iter()
        .find(|p| p.file.starts_with("importance"))
        .unwrap();
    assert!(imp.svg.contains("wage &lt;gap&gt; &amp; &quot;rent&quot;"));
}

#[test]
fn a_large_curve_is_binned_and_stays_small() {
    let report = sample(10_000);
    let plots = render_all(&report).unwrap();
    let c = &plots[0];
    assert_eq!(c.file, "curve.svg");
    assert!(
        c.caption.contains("binned into 200 columns"),
        "{}",
        c.caption
    );
    // 200 columns x (a few curve marks + 18 panel rows) at most; one element per spec
    // would be well past this.
    let rects = c.svg.matches("<rect").count();
    assert!(rects < 200 * 25, "{rects} rects");
    assert!(rects > 200, "{rects} rects");
}

#[test]
fn a_small_curve_has_one_column_per_spec() {
    let report = sample(30);
    let c = &render_all(&report).unwrap()[0];
    // One interval bar and one dot per spec.
    assert_eq!(c.svg.matches("<circle").count(), 30);
    assert!(c.caption.contains("pooled: model"), "{}", c.caption);
}

#[test]
fn a_kind_no_good_member_holds_has_no_importance_plot_and_says_why() {
    let mut report = sample(30);
    for i in report.importance.iter_mut() {
        i.importance = Spread {
            n: 0,
            min: f64::NAN,
            q1: f64::NAN,
            median: f64::NAN,
            q3: f64::NAN,
            max: f64::NAN,
        };
        i.median_rank = f64::NAN;
    }
    report.agreement.clear();
    let files: Vec<String> = render_all(&report)
        .unwrap()
        .into_iter()
        .map(|p| p.file)
        .collect();
    assert!(
        !files.iter().any(|f| f.starts_with("importance")),
        "{files:?}"
    );
    // The rank influence is over all ok specs, so it stays, ordered by share top k.
    assert!(files.iter().any(|f| f.starts_with("rank-influence")));
    assert_eq!(
        top_names(&report, "indicator", "permutation")[0],
        "wage <gap> & \"rent\""
    );
    let why = omitted(&report);
    assert_eq!(why.len(), 1, "{why:?}");
    assert!(why[0].contains("indicators (permutation)"), "{why:?}");
    assert!(omitted(&sample(30)).is_empty());
}

#[test]
fn a_curve_past_the_column_limit_has_bins_of_five_or_more() {
    let report = sample(544);
    let c = &render_all(&report).unwrap()[0];
    assert!(
        c.caption.contains("binned into 108 columns"),
        "{}",
        c.caption
    );
    let c = &render_all(&sample(300)).unwrap()[0];
    assert_eq!(c.svg.matches("<circle").count(), 300);
}

#[test]
fn indicators_and_permutation_come_first() {
    let mut report = sample(10);
    report.meta.kinds = vec![
        ("group".into(), "impurity".into()),
        ("group".into(), "permutation".into()),
        ("indicator".into(), "impurity".into()),
        ("indicator".into(), "permutation".into()),
    ];
    let k: Vec<String> = kinds(&report)
        .into_iter()
        .map(|(l, k)| format!("{l}/{k}"))
        .collect();
    assert_eq!(
        k,
        [
            "indicator/permutation",
            "indicator/impurity",
            "group/permutation",
            "group/impurity"
        ]
    );
}

#[test]
fn an_empty_report_draws_nothing() {
    assert!(render_all(&Report::default()).unwrap().is_empty());
}

#[test]
fn a_large_matrix_is_shown_in_blocks() {
    let mut report = sample(12);
    let m = 250;
    report.agreement[0].members = (0..m).map(|i| format!("{i}")).collect();
    report.agreement[0].matrix = vec![0.5; m * m];
    let p = render_all(&report)
        .unwrap()
        .into_iter()
        .find(|p| p.file.starts_with("agreement"))
        .unwrap();
    assert!(p.caption.contains("block of up to 3 x 3"), "{}", p.caption);
    // 84 x 84 cells plus the colour key, not 250 x 250.
    assert!(p.svg.matches("<rect").count() < 84 * 84 + 100);
}

#[test]
fn numbers_are_short() {
    assert_eq!(num(0.421337), "0.4213");
    assert_eq!(num(12.5), "12.5");
    assert_eq!(num(1234.0), "1234");
    assert_eq!(num(0.0), "0");
    assert_eq!(num(f64::NAN), "NA");
    assert_eq!(num(2.5e-6), "2.50e-6");
}

#[test]
fn wrap_keeps_words_whole() {
    assert_eq!(wrap("aa bb cc dd", 5), ["aa bb", "cc dd"]);
    assert_eq!(clip("abcdef", 4), "abc\u{2026}");
}
