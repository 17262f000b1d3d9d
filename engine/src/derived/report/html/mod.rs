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

mod nested;
mod null;
mod refit;
mod sections;
mod shape;
mod table;
#[cfg(test)]
mod tests;

use sections::tables;
use table::*;

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
    if report.shape.is_some() {
        h.push_str("<li><a href=\"#shape\">Shapes</a></li>\n");
    }
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

    shape::section(report, &mut h);

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
