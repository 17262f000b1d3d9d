//! One table of the page, cut at [`TABLE_ROWS_MAX`] rows, and cell formatting.

use super::*;

/// One table of the page.
pub(super) struct Table {
    pub(super) id: &'static str,
    pub(super) title: &'static str,
    /// What the rows are.
    pub(super) about: String,
    /// Parquet file name under report/.
    pub(super) file: &'static str,
    pub(super) columns: Vec<String>,
    /// Columns holding numbers (right-aligned).
    pub(super) numeric: Vec<bool>,
    pub(super) rows: Vec<Vec<String>>,
    /// Total row count (rows holds at most TABLE_ROWS_MAX).
    pub(super) total: usize,
}

impl Table {
    pub(super) fn new(
        id: &'static str,
        title: &'static str,
        file: &'static str,
        about: String,
    ) -> Table {
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

    pub(super) fn cols(mut self, cols: &[(&str, bool)]) -> Table {
        self.columns = cols.iter().map(|(c, _)| c.to_string()).collect();
        self.numeric = cols.iter().map(|(_, n)| *n).collect();
        self
    }

    pub(super) fn push(&mut self, row: Vec<String>) {
        self.total += 1;
        if self.rows.len() < TABLE_ROWS_MAX {
            self.rows.push(row);
        }
    }

    pub(super) fn render(&self, h: &mut String) {
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

pub(super) fn share(v: f64) -> String {
    if v.is_finite() {
        format!("{:.1}%", 100.0 * v)
    } else {
        "NA".into()
    }
}

pub(super) fn yes(b: bool) -> String {
    if b { "yes" } else { "no" }.into()
}
