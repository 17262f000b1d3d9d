//! The columns other than unit, wave and outcome sorted into indicators and columns to
//! ignore (with the reason, and a warning for those a user should look at), the panel's
//! shape, and the codebook beside the data.

use super::*;

/// Every column not in `taken`, in file order: an indicator, or ignored with its reason.
/// A kept column that is nearly empty is warned about.
pub(super) fn sort_columns(
    cols: &[Col],
    n: usize,
    taken: &[usize],
    outcome: &str,
    warnings: &mut Vec<String>,
) -> (Vec<usize>, Vec<Ignored>) {
    let mut indicators: Vec<usize> = Vec::new();
    let mut ignored: Vec<Ignored> = Vec::new();
    for (j, c) in cols.iter().enumerate() {
        if taken.contains(&j) {
            continue;
        }
        if let Some((reason, warn)) = why_left_out(cols, c, &indicators, outcome) {
            if warn {
                warnings.push(format!("`{}`: {reason}", c.name));
            }
            ignored.push(Ignored {
                column: c.name.clone(),
                reason,
            });
            continue;
        }
        let gaps = n - c.present;
        if gaps as f64 > NEARLY_EMPTY * n as f64 {
            warnings.push(format!(
                "`{}`: nearly empty ({gaps} of {n} rows are gaps); kept, but its filled values rest on few rows",
                c.name
            ));
        }
        indicators.push(j);
    }
    (indicators, ignored)
}

/// Why a column is not an indicator (empty, text, numbers with stray text, named like the
/// outcome's standard error, constant, a duplicate of an earlier indicator), and whether
/// that deserves a warning; `None` keeps it.
fn why_left_out(
    cols: &[Col],
    c: &Col,
    indicators: &[usize],
    outcome: &str,
) -> Option<(String, bool)> {
    if c.present == 0 {
        return Some(("empty in every row".into(), true));
    }
    if c.n_stray > 0 {
        let numbers = c.present - c.n_stray;
        let (i, s) = c.stray.clone().unwrap_or((0, String::new()));
        if numbers * 2 > c.present {
            return Some((
                format!(
                    "numbers with {} text cell(s), first in row {}: `{s}`; fix or blank them to use it",
                    c.n_stray,
                    i + 1
                ),
                true,
            ));
        }
        return Some(("text".into(), false));
    }
    if looks_like_standard_error(&c.name, outcome) {
        return Some((
            format!(
                "named like a standard error of the outcome: as an indicator it would carry the outcome into every \
                 spec (a survey share's standard error is a function of the share); to weight rows by it, set \
                 `standard_error = \"{}\"` under [data] and add `invvar` to the weightings",
                c.name
            ),
            true,
        ));
    }
    if distinct_numbers(c) < 2 {
        return Some((
            "one value in every row: it cannot explain anything".into(),
            true,
        ));
    }
    if let Some(&k) = indicators.iter().find(|&&k| cols[k].num == c.num) {
        return Some((
            format!("the same values as `{}` in every row", cols[k].name),
            true,
        ));
    }
    None
}

/// Units and rows per unit (smallest, largest, median).
pub(super) struct Shape {
    pub(super) units: usize,
    pub(super) rmin: usize,
    pub(super) rmax: usize,
    pub(super) rmed: usize,
}

pub(super) fn panel_shape(unit: &Col) -> Shape {
    let mut rows_per_unit: HashMap<&str, usize> = HashMap::new();
    for t in unit.text.iter().flatten() {
        *rows_per_unit.entry(t.as_str()).or_default() += 1;
    }
    let mut counts: Vec<usize> = rows_per_unit.values().copied().collect();
    counts.sort_unstable();
    Shape {
        units: rows_per_unit.len(),
        rmin: counts[0],
        rmax: counts[counts.len() - 1],
        rmed: counts[counts.len() / 2],
    }
}

/// A `codebook.csv` beside the data is used when it reads cleanly against the indicators:
/// its path, and its groups when used (said in `guesses`; a codebook that does not read is
/// a warning).
pub(super) fn codebook_beside(
    data: &Path,
    kept: &[String],
    guesses: &mut Vec<String>,
    warnings: &mut Vec<String>,
) -> (PathBuf, Option<BTreeSet<String>>) {
    let codebook = data.with_file_name("codebook.csv");
    if !codebook.exists() {
        return (codebook, None);
    }
    let groups = match crate::panel::read_codebook(&codebook, kept) {
        Ok(cb) => {
            let g: BTreeSet<String> = cb.values().map(|e| e.group.clone()).collect();
            guesses.push(format!(
                "codebook: `{}` beside the data ({} groups: {})",
                codebook.display(),
                g.len(),
                g.iter().cloned().collect::<Vec<_>>().join(", ")
            ));
            Some(g)
        }
        Err(e) => {
            warnings.push(format!("codebook.csv beside the data is not used: {e}"));
            None
        }
    };
    (codebook, groups)
}
