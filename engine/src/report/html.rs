//! The report's one self-contained page, `report/index.html`: inline CSS and inline SVG,
//! no script, no font or anything else fetched (a Content-Security-Policy of
//! `default-src 'none'` makes the browser refuse any load, should one ever creep in).
//!
//! Sections in order: the headline sentences, the cautions, the run (key facts, notes,
//! the whole manifest folded), the plots, then every table of the report. Every string that
//! comes from data (unit, indicator, group, choice names, notes, the manifest) is escaped.
//! Tables longer than [`TABLE_ROWS_MAX`] show their first rows and name the Parquet file
//! that holds them all.

use super::model::{Report, GOOD_DEFINITIONS};
use super::plots::{self, escape, num, Plot};
use crate::error::Result;
use std::fmt::Write as _;
use std::path::Path;

/// Rows shown per table; the rest are in the table's Parquet file.
pub const TABLE_ROWS_MAX: usize = 50;

/// The cautions shown when the report carries none of its own.
pub const DEFAULT_CAUTIONS: [&str; 3] = [
    "These results describe associations in observational, unit-level data. They are not causes: a choice or an \
     indicator that moves the error or ranks high does not show that changing it would change the outcome.",
    "They say nothing about any individual person or household within a unit.",
    "Before any use that affects people, defer to domain experts, an ethics review and local statistical practice.",
];

/// Write `dir/index.html` (atomically).
pub fn write(report: &Report, dir: &Path) -> Result<()> {
    let plots = plots::render_all(report)?;
    let page = render(report, &plots);
    crate::sink::write_bytes_atomic(&dir.join("index.html"), page.as_bytes())
}

/// The page as a string, with the given plots inlined.
pub fn render(report: &Report, plots: &[Plot]) -> String {
    let m = &report.meta;
    let mut h = String::with_capacity(64 * 1024 + plots.iter().map(|p| p.svg.len()).sum::<usize>());
    let run = m.runs.first().map(String::as_str).unwrap_or("(no run)");
    h.push_str("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n");
    h.push_str("<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n");
    h.push_str(
        "<meta http-equiv=\"Content-Security-Policy\" content=\"default-src 'none'; style-src 'unsafe-inline'\">\n",
    );
    let _ = writeln!(h, "<title>forkmap report: {}</title>", escape(run));
    h.push_str("<style>\n");
    h.push_str(CSS);
    h.push_str("</style>\n</head>\n<body>\n<main>\n");

    // Header.
    h.push_str("<header>\n<p class=\"kicker\">forkmap report</p>\n");
    h.push_str(
        "<h1>Which conclusions hold across the good models, and which hinge on a choice</h1>\n",
    );
    let _ = writeln!(
        h,
        "<p class=\"sub\">{} &middot; {} of {} specs ok &middot; metric {} &middot; good set: {}</p>",
        m.runs.iter().map(|r| escape(r)).collect::<Vec<_>>().join(", "),
        m.specs_ok,
        m.specs_total,
        escape(&m.metric),
        escape(&m.good)
    );
    h.push_str("</header>\n");

    // Contents.
    let tables = tables(report);
    h.push_str("<nav aria-label=\"contents\"><ol>\n");
    h.push_str("<li><a href=\"#headline\">In brief</a></li>\n<li><a href=\"#cautions\">Cautions</a></li>\n");
    h.push_str("<li><a href=\"#run\">The run</a></li>\n<li><a href=\"#plots\">Plots</a></li>\n");
    h.push_str("<li><a href=\"#tables\">Tables</a></li>\n</ol></nav>\n");

    // Headline.
    h.push_str("<section id=\"headline\">\n<h2>In brief</h2>\n");
    if report.headline.is_empty() {
        h.push_str("<p>No headline: the run has no ok specs to summarise.</p>\n");
    } else {
        h.push_str("<ul class=\"headline\">\n");
        for s in &report.headline {
            let _ = writeln!(h, "<li>{}</li>", escape(s));
        }
        h.push_str("</ul>\n");
    }
    if !m.notes.is_empty() {
        h.push_str("<div class=\"notes\"><h3>Notes on the runs read</h3>\n<ul>\n");
        for n in &m.notes {
            let _ = writeln!(h, "<li>{}</li>", escape(n));
        }
        h.push_str("</ul></div>\n");
    }
    h.push_str("</section>\n");

    // Cautions.
    h.push_str("<section id=\"cautions\" class=\"cautions\">\n<h2>Read this before using the results</h2>\n");
    if report.cautions.is_empty() {
        for c in DEFAULT_CAUTIONS {
            let _ = writeln!(h, "<p>{}</p>", escape(c));
        }
    } else {
        for c in &report.cautions {
            let _ = writeln!(h, "<p>{}</p>", escape(c));
        }
    }
    h.push_str("</section>\n");

    // The run.
    h.push_str("<section id=\"run\">\n<h2>The run</h2>\n<dl class=\"facts\">\n");
    let good_rules: Vec<String> = report
        .good_sets
        .iter()
        .map(|g| format!("{}: {} ({} specs)", g.definition, g.rule, g.size))
        .collect();
    let mut facts: Vec<(&str, String)> = vec![
        ("runs read", m.runs.join(", ")),
        (
            "specs",
            format!("{} read from the runs, {} ok", m.specs_total, m.specs_ok),
        ),
        ("units / rows", format!("{} / {}", m.units, m.rows)),
        ("metric", m.metric.clone()),
        (
            "best spec",
            format!("{} ({} {})", m.best_spec, m.metric, num(m.best_error)),
        ),
        ("median error of ok specs", num(m.median_error)),
        ("good set used", m.good.clone()),
        (
            "ratio rule",
            format!("within (1 + {}) x the best error", num(m.ratio_eps)),
        ),
        (
            "margin rule",
            format!(
                "within {} of the best error{}",
                num(m.margin),
                if m.margin_default {
                    " (default: the bootstrap standard error of the best spec's error)"
                } else {
                    ""
                }
            ),
        ),
        (
            "bootstrap",
            format!(
                "{} resamples of units, level {}%, seed {}",
                m.resamples,
                num(100.0 * m.level),
                m.seed
            ),
        ),
        ("top k", m.top_k.to_string()),
        (
            "importance kinds",
            m.kinds
                .iter()
                .map(|(l, k)| format!("{l} / {k}"))
                .collect::<Vec<_>>()
                .join(", "),
        ),
        ("report built in", format!("{} s", num(m.seconds))),
    ];
    if !good_rules.is_empty() {
        facts.push(("good-set rules", good_rules.join("; ")));
    }
    // Top-level scalar fields of the manifest, as they are.
    let manifest: Option<serde_json::Value> = serde_json::from_str(&m.manifest_json).ok();
    let mut mfacts = Vec::new();
    if let Some(serde_json::Value::Object(map)) = &manifest {
        for (k, v) in map {
            let s = match v {
                serde_json::Value::String(s) => s.clone(),
                serde_json::Value::Number(n) => n.to_string(),
                serde_json::Value::Bool(b) => b.to_string(),
                _ => continue,
            };
            mfacts.push((format!("manifest: {k}"), s));
        }
    }
    for (k, v) in facts {
        let _ = writeln!(h, "<dt>{}</dt><dd>{}</dd>", escape(k), escape(&v));
    }
    for (k, v) in mfacts {
        let _ = writeln!(h, "<dt>{}</dt><dd>{}</dd>", escape(&k), escape(&v));
    }
    h.push_str("</dl>\n");
    if !m.manifest_json.is_empty() {
        h.push_str("<details><summary>The whole manifest (manifest.json)</summary>\n<pre>");
        h.push_str(&escape(&m.manifest_json));
        h.push_str("</pre></details>\n");
    }
    h.push_str("</section>\n");

    // Plots.
    h.push_str("<section id=\"plots\">\n<h2>Plots</h2>\n");
    if plots.is_empty() {
        h.push_str("<p>No plots: the report has no ok specs to draw.</p>\n");
    }
    let why = plots::omitted(report);
    if !why.is_empty() {
        h.push_str("<ul class=\"omitted\">\n");
        for w in &why {
            let _ = writeln!(h, "<li>{}</li>", escape(w));
        }
        h.push_str("</ul>\n");
    }
    for p in plots {
        let _ = writeln!(h, "<figure id=\"{}\">", escape(&anchor(&p.file)));
        // Inline SVG needs no namespace declaration; dropping it keeps the page free of
        // anything that looks like an address.
        h.push_str(
            &p.svg
                .replacen(" xmlns=\"http://www.w3.org/2000/svg\"", "", 1),
        );
        let _ = writeln!(
            h,
            "<figcaption>{} &middot; also saved as <code>report/{}</code></figcaption>\n</figure>",
            escape(&p.title),
            escape(&p.file)
        );
    }
    h.push_str("</section>\n");

    // Tables.
    h.push_str("<section id=\"tables\">\n<h2>Tables</h2>\n");
    h.push_str(
        "<p>Every table below is also written as a Parquet file in <code>report/</code>, with full precision \
         and every row; the unit bootstrap's draws are in <code>report/resamples.parquet</code>.</p>\n",
    );
    for t in &tables {
        t.render(&mut h);
    }
    h.push_str("</section>\n");
    h.push_str("<footer>Written by forkmap ");
    h.push_str(env!("CARGO_PKG_VERSION"));
    h.push_str(". This page loads nothing from anywhere: it is complete as it is.</footer>\n");
    h.push_str("</main>\n</body>\n</html>\n");
    h
}

fn anchor(file: &str) -> String {
    format!("plot-{}", file.trim_end_matches(".svg"))
}

/// One table of the page.
struct Table {
    id: &'static str,
    title: &'static str,
    /// What the rows are.
    about: String,
    /// Parquet file name under report/.
    file: &'static str,
    columns: Vec<String>,
    /// Columns holding numbers (right-aligned).
    numeric: Vec<bool>,
    rows: Vec<Vec<String>>,
    /// Total row count (rows holds at most TABLE_ROWS_MAX).
    total: usize,
}

impl Table {
    fn new(id: &'static str, title: &'static str, file: &'static str, about: String) -> Table {
        Table {
            id,
            title,
            about,
            file,
            columns: Vec::new(),
            numeric: Vec::new(),
            rows: Vec::new(),
            total: 0,
        }
    }

    fn cols(mut self, cols: &[(&str, bool)]) -> Table {
        self.columns = cols.iter().map(|(c, _)| c.to_string()).collect();
        self.numeric = cols.iter().map(|(_, n)| *n).collect();
        self
    }

    fn push(&mut self, row: Vec<String>) {
        self.total += 1;
        if self.rows.len() < TABLE_ROWS_MAX {
            self.rows.push(row);
        }
    }

    fn render(&self, h: &mut String) {
        let _ = writeln!(h, "<section class=\"table\" id=\"table-{}\">", self.id);
        let _ = writeln!(h, "<h3>{}</h3>", escape(self.title));
        let _ = writeln!(h, "<p class=\"about\">{}</p>", escape(&self.about));
        if self.total == 0 {
            h.push_str("<p class=\"empty\">No rows.</p>\n</section>\n");
            return;
        }
        h.push_str("<div class=\"scroll\"><table>\n<thead><tr>");
        for (c, n) in self.columns.iter().zip(&self.numeric) {
            let _ = write!(
                h,
                "<th{}>{}</th>",
                if *n { " class=\"n\"" } else { "" },
                escape(c)
            );
        }
        h.push_str("</tr></thead>\n<tbody>\n");
        for row in &self.rows {
            h.push_str("<tr>");
            for (i, v) in row.iter().enumerate() {
                let n = self.numeric.get(i).copied().unwrap_or(false);
                let _ = write!(
                    h,
                    "<td{}>{}</td>",
                    if n { " class=\"n\"" } else { "" },
                    escape(v)
                );
            }
            h.push_str("</tr>\n");
        }
        h.push_str("</tbody></table></div>\n");
        if self.total > self.rows.len() {
            let _ = writeln!(
                h,
                "<p class=\"more\">Showing the first {} of {} rows. All rows: <code>report/{}</code>.</p>",
                self.rows.len(),
                self.total,
                escape(self.file)
            );
        } else {
            let _ = writeln!(
                h,
                "<p class=\"more\">{} rows; also in <code>report/{}</code>.</p>",
                self.total,
                escape(self.file)
            );
        }
        h.push_str("</section>\n");
    }
}

fn share(v: f64) -> String {
    if v.is_finite() {
        format!("{:.1}%", 100.0 * v)
    } else {
        "NA".into()
    }
}

fn yes(b: bool) -> String {
    if b { "yes" } else { "no" }.into()
}

/// Every table of the report, in page order.
fn tables(r: &Report) -> Vec<Table> {
    let metric = if r.meta.metric.is_empty() {
        "error".to_string()
    } else {
        r.meta.metric.clone()
    };
    let k = r.meta.top_k;
    let mut out = Vec::new();

    let mut t = Table::new(
        "good_sets",
        "Good sets",
        "good_sets.parquet",
        "The three definitions of the good set side by side: the rule, its threshold, and how many ok specs meet it."
            .into(),
    )
    .cols(&[
        ("definition", false),
        ("rule", false),
        ("threshold", true),
        ("size", true),
        ("share of ok specs", true),
    ]);
    for g in &r.good_sets {
        t.push(vec![
            g.definition.clone(),
            g.rule.clone(),
            num(g.threshold),
            g.size.to_string(),
            share(g.share_of_ok),
        ]);
    }
    out.push(t);

    let mut t = Table::new(
        "conclusions",
        "Conclusions and their support",
        "conclusions.parquet",
        format!(
            "Plain statements with the share of specs supporting them over all ok specs and over the good set ({}); \
             the pivot is the choice whose removal would change the support over all ok specs most.",
            r.meta.good
        ),
    )
    .cols(&[
        ("source", false),
        ("statement", false),
        ("level", false),
        ("kind", false),
        ("support, all ok", true),
        ("n all", true),
        ("support, good set", true),
        ("n good", true),
        ("pivot dimension", false),
        ("pivot choice", false),
        ("support without it", true),
    ]);
    for c in &r.conclusions {
        t.push(vec![
            c.source.clone(),
            c.statement.clone(),
            c.level.clone(),
            c.kind.clone(),
            share(c.support_all),
            c.n_all.to_string(),
            share(c.support_good),
            c.n_good.to_string(),
            c.pivot_dimension.clone(),
            c.pivot_choice.clone(),
            share(c.support_without),
        ]);
    }
    out.push(t);

    let mut cols: Vec<(String, bool)> = vec![
        ("rank".into(), true),
        ("spec id".into(), false),
        (metric.clone(), true),
        ("lower".into(), true),
        ("upper".into(), true),
    ];
    for d in GOOD_DEFINITIONS {
        cols.push((format!("good ({d})"), false));
    }
    for d in &r.dimensions {
        cols.push((d.dimension.clone(), false));
    }
    let mut t = Table::new(
        "curve",
        "Specification curve",
        "curve.parquet",
        format!(
            "Every ok spec ranked by {metric}, lowest first, with its {}% bootstrap interval over units (B = {}).",
            num(100.0 * r.meta.level),
            r.meta.resamples
        ),
    );
    t.columns = cols.iter().map(|(c, _)| c.clone()).collect();
    t.numeric = cols.iter().map(|(_, n)| *n).collect();
    for p in &r.curve {
        let mut row = vec![
            p.position.to_string(),
            p.spec_id.clone(),
            num(p.error),
            num(p.lower),
            num(p.upper),
        ];
        row.extend(p.good.iter().map(|g| yes(*g)));
        for (d, dim) in r.dimensions.iter().enumerate() {
            row.push(
                p.choices
                    .get(d)
                    .and_then(|&c| dim.choices.get(c))
                    .cloned()
                    .unwrap_or_default(),
            );
        }
        t.push(row);
    }
    out.push(t);

    let spread_cols = |first: &[(&'static str, bool)]| {
        let mut c: Vec<(&str, bool)> = first.to_vec();
        c.extend([
            ("n", true),
            ("min", true),
            ("q1", true),
            ("median", true),
            ("q3", true),
            ("max", true),
        ]);
        c
    };
    let spread_vals = |s: &super::model::Spread| {
        vec![
            s.n.to_string(),
            num(s.min),
            num(s.q1),
            num(s.median),
            num(s.q3),
            num(s.max),
        ]
    };

    let mut t = Table::new(
        "error_shares",
        "Each dimension's share of the error's variance",
        "error_shares.parquet",
        "LMG (Shapley) decomposition of the R\u{b2} of the error on all varying dimensions: each dimension's part \
         averaged over every order of entry, so it holds for unbalanced and sampled designs."
            .into(),
    )
    .cols(&[
        ("dimension", false),
        ("LMG part of R\u{b2}", true),
        ("share", true),
        ("R\u{b2} alone", true),
        ("R\u{b2} all", true),
    ]);
    for s in &r.error_shares {
        t.push(vec![
            s.dimension.clone(),
            num(s.lmg),
            share(s.share),
            num(s.r2_alone),
            num(s.r2_total),
        ]);
    }
    out.push(t);

    let mut t = Table::new(
        "error_by_choice",
        "Error by choice",
        "error_by_choice.parquet",
        format!("The {metric} of the ok specs taking each choice, every other dimension varying."),
    )
    .cols(&spread_cols(&[("dimension", false), ("choice", false)]));
    for c in &r.error_by_choice {
        let mut row = vec![c.dimension.clone(), c.choice.clone()];
        row.extend(spread_vals(&c.error));
        t.push(row);
    }
    out.push(t);

    let mut t = Table::new(
        "error_by_param",
        "Error by parameter value",
        "error_by_param.parquet",
        format!("The {metric} of the ok specs taking each value of an option's parameter."),
    )
    .cols(&spread_cols(&[
        ("option", false),
        ("parameter", false),
        ("value", true),
    ]));
    for c in &r.error_by_param {
        let mut row = vec![c.option.clone(), c.param.clone(), num(c.value)];
        row.extend(spread_vals(&c.error));
        t.push(row);
    }
    out.push(t);

    let mut t = Table::new(
        "rank_shares",
        "Which dimensions move each rank",
        "rank_shares.parquet",
        "LMG (Shapley) parts of the R\u{b2} of each indicator's or group's importance rank on the varying dimensions, over all ok specs."
            .into(),
    )
    .cols(&[
        ("level", false),
        ("kind", false),
        ("name", false),
        ("dimension", false),
        ("LMG part of R\u{b2}", true),
        ("share", true),
        ("R\u{b2} all", true),
    ]);
    for s in &r.rank_shares {
        t.push(vec![
            s.level.clone(),
            s.kind.clone(),
            s.name.clone(),
            s.dimension.clone(),
            num(s.lmg),
            share(s.share),
            num(s.r2_total),
        ]);
    }
    out.push(t);

    let mut t = Table::new(
        "rank_by_choice",
        "Ranks by choice",
        "rank_by_choice.parquet",
        format!("Each name's median rank and share in the top {k} among the specs taking each choice (1 = most important)."),
    )
    .cols(&[
        ("level", false),
        ("kind", false),
        ("name", false),
        ("dimension", false),
        ("choice", false),
        ("n", true),
        ("median rank", true),
        ("share top k", true),
    ]);
    for c in &r.rank_by_choice {
        t.push(vec![
            c.level.clone(),
            c.kind.clone(),
            c.name.clone(),
            c.dimension.clone(),
            c.choice.clone(),
            c.n.to_string(),
            num(c.median_rank),
            share(c.share_top_k),
        ]);
    }
    out.push(t);

    let mut t = Table::new(
        "good_makeup",
        "Make-up of the good sets",
        "good_makeup.parquet",
        "How many members of each good set take each choice, against the ok specs taking it."
            .into(),
    )
    .cols(&[
        ("definition", false),
        ("dimension", false),
        ("choice", false),
        ("in good set", true),
        ("in ok specs", true),
        ("share of good set", true),
    ]);
    for g in &r.good_makeup {
        t.push(vec![
            g.definition.clone(),
            g.dimension.clone(),
            g.choice.clone(),
            g.in_good.to_string(),
            g.in_ok.to_string(),
            share(g.share_of_good),
        ]);
    }
    out.push(t);

    let mut t = Table::new(
        "importance",
        "Importance over the good set",
        "importance_spread.parquet",
        format!(
            "Per name and kind over the good set ({}): importance spread (min and max are the empirical range), \
             ranks, and the share of members (and of all ok specs) ranking it in the top {k}. Shown here by \
             level, kind and median rank; names no good member holds (n = 0) come last.",
            r.meta.good
        ),
    )
    .cols(&spread_cols(&[("level", false), ("kind", false), ("name", false)]));
    t.columns.extend(
        [
            "median rank",
            "best rank",
            "worst rank",
            "share top k (good)",
            "share top k (all ok)",
        ]
        .map(String::from),
    );
    t.numeric.extend([true; 5]);
    // Names some good member holds first (by level, kind, median rank), then the rest.
    let mut order: Vec<&super::model::ImportanceSummary> = r.importance.iter().collect();
    order.sort_by(|a, b| {
        (a.importance.n == 0)
            .cmp(&(b.importance.n == 0))
            .then_with(|| a.level.cmp(&b.level))
            .then_with(|| a.kind.cmp(&b.kind))
            .then_with(|| a.median_rank.total_cmp(&b.median_rank))
            .then_with(|| a.name.cmp(&b.name))
    });
    for i in order {
        let mut row = vec![i.level.clone(), i.kind.clone(), i.name.clone()];
        row.extend(spread_vals(&i.importance));
        row.extend([
            num(i.median_rank),
            i.best_rank.to_string(),
            i.worst_rank.to_string(),
            share(i.share_top_k),
            share(i.share_top_k_all),
        ]);
        t.push(row);
    }
    out.push(t);

    let mut t = Table::new(
        "rank_counts",
        "Rank distribution over the good set",
        "rank_counts.parquet",
        "How many good-set members give each name each rank.".into(),
    )
    .cols(&[
        ("level", false),
        ("kind", false),
        ("name", false),
        ("rank", true),
        ("members", true),
    ]);
    for c in &r.rank_counts {
        t.push(vec![
            c.level.clone(),
            c.kind.clone(),
            c.name.clone(),
            c.rank.to_string(),
            c.count.to_string(),
        ]);
    }
    out.push(t);

    let mut t = Table::new(
        "agreement",
        "Rank agreement between good-set members",
        "agreement.parquet",
        "Kendall's tau-b between the members' importance orderings: mean and minimum over pairs (the matrix is in the Parquet file and the plot)."
            .into(),
    )
    .cols(&[
        ("level", false),
        ("kind", false),
        ("members", true),
        ("capped", false),
        ("mean tau-b", true),
        ("min tau-b", true),
    ]);
    for a in &r.agreement {
        t.push(vec![
            a.level.clone(),
            a.kind.clone(),
            a.members.len().to_string(),
            yes(a.capped),
            num(a.mean),
            num(a.min),
        ]);
    }
    out.push(t);

    let mut t = Table::new(
        "stability",
        "Stability under resampling units",
        "stability.parquet",
        format!(
            "Over {} resamples of units, the best spec and the good set recomputed from the stored per-unit errors: \
             how often each name stays in the top {k}.",
            r.meta.resamples
        ),
    )
    .cols(&[
        ("level", false),
        ("kind", false),
        ("name", false),
        ("mean share top k", true),
        ("top k in most of the good set", true),
        ("top k in the best spec", true),
    ]);
    for s in &r.stability {
        t.push(vec![
            s.level.clone(),
            s.kind.clone(),
            s.name.clone(),
            share(s.mean_share_top_k),
            share(s.share_majority),
            share(s.share_in_best),
        ]);
    }
    out.push(t);

    let mut t = Table::new(
        "best_frequency",
        "How often each spec is the best",
        "best_frequency.parquet",
        "Share of unit resamples in which each spec has the lowest error (specs best at least once).".into(),
    )
    .cols(&[("spec id", false), ("share of resamples", true)]);
    for b in &r.best_frequency {
        t.push(vec![b.spec_id.clone(), share(b.share)]);
    }
    out.push(t);

    out
}

const CSS: &str = r#"
:root { --ink:#22262e; --muted:#696e78; --rule:#e2e0d9; --paper:#fcfbf8; --band:#f3f1eb;
        --accent:#166268; --warm:#d27c20; }
* { box-sizing: border-box; }
body { margin:0; background:var(--paper); color:var(--ink);
       font: 15px/1.5 system-ui, "DejaVu Sans", "Liberation Sans", sans-serif; }
main { max-width: 1040px; margin: 0 auto; padding: 24px 28px 60px; }
header { border-bottom: 3px solid var(--accent); padding-bottom: 10px; margin-bottom: 14px; }
.kicker { margin:0; text-transform: lowercase; letter-spacing: .12em; color: var(--accent);
          font-weight: 600; font-size: 13px; }
h1 { font-size: 26px; line-height: 1.25; margin: 4px 0 6px; }
.sub { margin: 0; color: var(--muted); font-size: 14px; }
nav ol { list-style: none; padding: 0; margin: 0 0 18px; display: flex; flex-wrap: wrap; gap: 6px 18px; }
nav a { color: var(--accent); text-decoration: none; border-bottom: 1px dotted var(--accent); }
h2 { font-size: 20px; margin: 30px 0 8px; padding-left: 10px; border-left: 5px solid var(--accent); }
h3 { font-size: 16px; margin: 22px 0 4px; }
ul.headline { padding-left: 0; list-style: none; }
ul.headline li { padding: 6px 10px; margin: 4px 0; background: var(--band); border-radius: 3px; }
.cautions { background: #fbf1e3; border: 1px solid #e8c58f; border-radius: 4px; padding: 2px 16px 8px; }
.cautions h2 { border-left-color: var(--warm); }
dl.facts { display: grid; grid-template-columns: max-content 1fr; gap: 2px 16px; margin: 0; }
dl.facts dt { color: var(--muted); }
dl.facts dd { margin: 0; overflow-wrap: anywhere; }
details { margin-top: 10px; }
pre { background: var(--band); padding: 10px; overflow: auto; max-height: 420px; font-size: 12px; }
figure { margin: 18px 0 26px; }
figure svg { display: block; max-width: 100%; height: auto; border: 1px solid var(--rule); }
figcaption { color: var(--muted); font-size: 13px; margin-top: 4px; }
.scroll { overflow-x: auto; max-width: 100%; }
table { border-collapse: collapse; font-size: 13px; }
th, td { padding: 3px 8px; border-bottom: 1px solid var(--rule); text-align: left; vertical-align: top; }
th { background: var(--band); font-weight: 600; position: sticky; top: 0; }
td.n, th.n { text-align: right; font-variant-numeric: tabular-nums; }
tbody tr:nth-child(even) td { background: #f8f7f2; }
.about { color: var(--muted); margin: 0 0 6px; font-size: 14px; }
.more, .empty, .omitted { color: var(--muted); font-size: 13px; }
.notes { border-left: 4px solid var(--warm); padding: 2px 12px; margin: 10px 0; background: var(--band); }
.notes h3 { margin: 6px 0 2px; font-size: 14px; }
code { font-size: 13px; background: var(--band); padding: 0 3px; border-radius: 2px; }
footer { margin-top: 40px; color: var(--muted); font-size: 13px; border-top: 1px solid var(--rule); padding-top: 8px; }
"#;

#[cfg(test)]
mod tests {
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
        ] {
            assert!(h.contains(id), "missing {id}");
        }
        assert_eq!(h.matches("<svg ").count(), 5);
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
        assert_eq!(ts.len(), 14);
        for t in &ts {
            let stem = t.file.trim_end_matches(".parquet");
            assert!(
                crate::report::tables::REPORT_TABLES.contains(&stem),
                "{} is not a report table",
                t.file
            );
            assert_eq!(t.columns.len(), t.numeric.len(), "{}", t.id);
            for row in &t.rows {
                assert_eq!(row.len(), t.columns.len(), "{}", t.id);
            }
        }
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
        assert_eq!(files.len(), 5);
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
}
