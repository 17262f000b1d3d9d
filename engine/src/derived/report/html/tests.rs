use super::*;
use crate::report::plots::tests::sample;

fn page(n: usize) -> String {
    let r = sample(n);
    render(&r, &plots::render_all(&r).unwrap())
}

#[test]
fn the_page_has_every_section() {
    let h = page(30);
    for id in [
        "id=\"headline\"",
        "id=\"cautions\"",
        "id=\"run\"",
        "id=\"plots\"",
        "id=\"tables\"",
        "id=\"table-curve\"",
        "id=\"table-error_shares\"",
        "id=\"table-importance\"",
        "id=\"table-conclusions\"",
        "id=\"table-stability\"",
        "id=\"plot-curve\"",
        "id=\"plot-error-influence\"",
        "id=\"plot-rank-influence-indicator-permutation\"",
        "id=\"plot-importance-indicator-permutation\"",
        "id=\"plot-agreement-indicator-permutation\"",
        "id=\"plot-null-best\"",
        "id=\"table-null_summary\"",
        "id=\"table-null_indicators\"",
        "id=\"table-null_claims\"",
    ] {
        assert!(h.contains(id), "missing {id}");
    }
    assert_eq!(h.matches("<svg ").count(), 6);
    assert!(h.contains("These are associations, not causes."));
}

#[test]
fn the_default_cautions_cover_causes_individuals_and_review() {
    let mut r = sample(10);
    r.cautions.clear();
    let h = render(&r, &[]);
    assert!(h.contains("not causes"));
    assert!(h.contains("individual"));
    assert!(h.contains("domain experts, an ethics review and local statistical practice"));
}

#[test]
fn data_strings_are_escaped() {
    let h = page(30);
    // The headline, the run name, the manifest and an indicator name carry markup.
    assert!(!h.contains("<good>"));
    assert!(!h.contains("<gap>"));
    assert!(!h.contains("<b>&amp;"));
    assert!(!h.contains("demo <1>"));
    assert!(h.contains("3 are &lt;good&gt; &amp; &quot;near&quot; the best."));
    assert!(h.contains("wage &lt;gap&gt; &amp; &quot;rent&quot;"));
    assert!(h.contains("&lt;b&gt;&amp;amp;"));
    assert!(h.contains("runs/demo &lt;1&gt;"));
    // Nothing but the tags we write: every '<' opens a known element.
    for part in h.split('<').skip(1) {
        let tag: String = part
            .trim_start_matches('/')
            .chars()
            .take_while(|c| c.is_ascii_alphanumeric() || *c == '!')
            .collect();
        assert!(
            [
                "!DOCTYPE",
                "html",
                "head",
                "meta",
                "title",
                "style",
                "body",
                "main",
                "header",
                "p",
                "h1",
                "h2",
                "h3",
                "nav",
                "ol",
                "li",
                "a",
                "section",
                "ul",
                "dl",
                "dt",
                "dd",
                "details",
                "summary",
                "pre",
                "figure",
                "figcaption",
                "code",
                "div",
                "table",
                "thead",
                "tbody",
                "tr",
                "th",
                "td",
                "footer",
                "svg",
                "desc",
                "rect",
                "text",
                "circle",
                "polyline",
                "line",
                "path",
                "g",
            ]
            .contains(&tag.as_str()),
            "unexpected tag <{tag}"
        );
    }
}

#[test]
fn the_page_loads_nothing() {
    let h = page(30);
    assert!(!h.contains("http://"));
    assert!(!h.contains("https://"));
    assert!(!h.contains("<script"));
    assert!(!h.contains("<link"));
    assert!(!h.contains("<img"));
    assert!(!h.contains("url("));
    assert!(!h.contains("@import"));
    assert!(h.contains("default-src 'none'"));
}

#[test]
fn long_tables_are_cut_with_a_pointer_to_their_file() {
    let h = page(500);
    assert!(h.contains(&format!(
        "Showing the first {TABLE_ROWS_MAX} of 500 rows. All rows: <code>report/curve.parquet</code>."
    )));
    let curve = h.split("id=\"table-curve\"").nth(1).unwrap();
    let curve = curve.split("</table>").next().unwrap();
    assert_eq!(curve.matches("<tr>").count(), TABLE_ROWS_MAX + 1);
}

#[test]
fn every_table_points_at_a_file_the_report_writes() {
    let r = sample(5);
    let ts = tables(&r);
    assert_eq!(ts.len(), 17);
    for t in &ts {
        let stem = t.file.trim_end_matches(".parquet");
        assert!(
            crate::report::tables::REPORT_TABLES.contains(&stem)
                || crate::report::tables::NULL_TABLES.contains(&stem),
            "{} is not a report table",
            t.file
        );
        assert_eq!(t.columns.len(), t.numeric.len(), "{}", t.id);
        for row in &t.rows {
            assert_eq!(row.len(), t.columns.len(), "{}", t.id);
        }
    }
}

/// The conclusions under the null: numbers when tested, the reason when not, and "not
/// available" for a null without goodranks.
#[test]
fn the_null_claims_table_shows_numbers_or_the_reason() {
    use crate::report::null_claims::{NullClaim, NullClaims};
    let mut r = sample(5);
    let n = r.null.as_mut().unwrap();
    n.claims = NullClaims {
        rule: "mae <= (1 + 0.05) x the best".into(),
        ranks_within: 0.1,
        kinds: vec!["native".into()],
        claims: vec![
            NullClaim {
                statement: "indicator a ranks above b (coefficient importance)".into(),
                support_good: 0.9,
                observed: 0.75,
                null_mean: 0.5,
                null_q95: 1.0,
                draws_at_least: 7,
                draws: 19,
                p: 0.4,
                p_adjusted: 0.6,
                family_max_q95: 1.0,
                ..Default::default()
            },
            NullClaim {
                statement: "indicator c is in the top 3 (permutation importance)".into(),
                observed: f64::NAN,
                p: f64::NAN,
                why: "not tested: the null's draws compute native importances".into(),
                ..Default::default()
            },
        ],
        report_good: 20,
        report_good_in_sample: 3,
        auto_not_chosen_on_sample: 0,
        unavailable: None,
    };
    let t = tables(&r)
        .into_iter()
        .find(|t| t.id == "null_claims")
        .unwrap();
    assert!(
        t.about.contains("is not evidence of anything"),
        "{}",
        t.about
    );
    assert!(t.about.contains("hold 3 of the report's 20 good specs"));
    assert!(t.about.contains("their unadjusted p is optimistic"));
    assert!(t.about.contains("single-step max-type adjustment"));
    assert!(t
        .about
        .contains("Good sets differ in size from draw to draw"));
    assert!(t.about.contains("the test keeps its level"));
    assert_eq!(t.rows[0][7], "7 of 19");
    assert_eq!(t.rows[1][7], "-");
    assert_eq!(t.rows[0][11], "0.6");
    assert!(t.rows[1][12].starts_with("not tested"));
    r.null.as_mut().unwrap().claims.unavailable = Some("old null".into());
    let t = tables(&r)
        .into_iter()
        .find(|t| t.id == "null_claims")
        .unwrap();
    assert!(t.about.starts_with("Not available for this run: old null"));
}

#[test]
fn importance_rows_no_good_member_holds_come_last() {
    let mut r = sample(10);
    r.importance[0].importance.n = 0;
    r.importance[0].median_rank = f64::NAN;
    let t = tables(&r)
        .into_iter()
        .find(|t| t.id == "importance")
        .unwrap();
    let names: Vec<&str> = t.rows.iter().map(|row| row[2].as_str()).collect();
    assert_eq!(
        names,
        [
            "school's_dropout",
            "clinic_visits",
            "rain",
            "wage <gap> & \"rent\""
        ]
    );
}

#[test]
fn an_empty_report_still_makes_a_page() {
    let h = render(&Report::default(), &[]);
    assert!(h.contains("No plots"));
    assert!(h.contains("No headline"));
    assert!(h.contains("not causes"));
    assert!(h.ends_with("</html>\n"));
}

#[test]
fn write_puts_the_page_and_each_plot_in_the_folder() {
    let dir = tempfile::tempdir().unwrap();
    let r = sample(20);
    let files = plots::write_all(&r, dir.path()).unwrap();
    write(&r, dir.path()).unwrap();
    assert_eq!(files.len(), 6);
    for f in &files {
        let s = std::fs::read_to_string(f).unwrap();
        assert!(s.starts_with("<?xml"));
        assert!(s.contains("xmlns=\"http://www.w3.org/2000/svg\""));
    }
    let h = std::fs::read_to_string(dir.path().join("index.html")).unwrap();
    assert!(h.starts_with("<!DOCTYPE html>"));
    let left: Vec<_> = std::fs::read_dir(dir.path())
        .unwrap()
        .map(|e| e.unwrap().file_name().into_string().unwrap())
        .filter(|n| n.starts_with('.'))
        .collect();
    assert!(left.is_empty(), "temporary files left: {left:?}");
}

#[test]
fn the_stability_table_names_the_rule_its_resamples_use() {
    let h = page(30);
    assert!(h.contains("good set uses the ratio rule."));
    let mut r = sample(30);
    r.meta.good = "paired".into();
    let h = render(&r, &plots::render_all(&r).unwrap());
    assert!(h.contains("uses the ratio rule (the paired rule would need"));
    assert!(h.contains("not over the paired good set"));
}
