//! What the starter reads off each column, and its guesses of the unit, wave and outcome columns.

use super::*;

/// A column as the starter sees it.
#[derive(Debug, Clone)]
pub(super) struct Col {
    pub(super) name: String,
    /// Trimmed cell text, `None` for a gap (empty or a missing-value token).
    pub(super) text: Vec<Option<String>>,
    /// Parsed number of each cell, `None` for a gap or text.
    pub(super) num: Vec<Option<f64>>,
    /// Cells holding text that is not a number: (row, text) of the first, and the count.
    pub(super) stray: Option<(usize, String)>,
    pub(super) n_stray: usize,
    pub(super) present: usize,
}

impl Col {
    pub(super) fn is_numeric(&self) -> bool {
        self.n_stray == 0 && self.present > 0
    }
    pub(super) fn distinct(&self) -> usize {
        self.text.iter().flatten().collect::<HashSet<_>>().len()
    }
}

pub(super) const WAVE_HINTS: &[&str] = &[
    "wave", "year", "round", "period", "survey", "cycle", "time", "date",
];
pub(super) const UNIT_HINTS: &[&str] = &[
    "unit",
    "id",
    "code",
    "iso",
    "country",
    "district",
    "county",
    "region",
    "state",
    "province",
    "municipality",
    "area",
    "name",
    "geo",
    "place",
];
pub(super) const PERCENT_HINTS: &[&str] = &["pct", "percent", "share", "rate"];
/// A column with more than this share of gaps is named as nearly empty.
pub(super) const NEARLY_EMPTY: f64 = 0.8;

/// Lower-case words of a column name (split at anything not a letter or digit).
pub(super) fn words(name: &str) -> Vec<String> {
    name.to_lowercase()
        .split(|c: char| !c.is_alphanumeric())
        .filter(|w| !w.is_empty())
        .map(str::to_string)
        .collect()
}

pub(super) fn named_like(name: &str, hints: &[&str]) -> bool {
    let ws = words(name);
    ws.iter().any(|w| hints.contains(&w.as_str()))
}

pub(super) fn data_err(path: &Path, msg: impl Into<String>) -> Error {
    Error::Data {
        file: path.display().to_string(),
        msg: msg.into(),
    }
}

pub(super) fn columns(path: &Path, missing: &[String]) -> Result<(Vec<Col>, usize)> {
    let t = read_table(path)?;
    let n = t.n_rows();
    if n == 0 {
        return Err(data_err(path, "the file has a header but no data rows"));
    }
    let mut out = Vec::with_capacity(t.names.len());
    for (name, c) in t.names.iter().zip(&t.columns) {
        let mut col = Col {
            name: name.clone(),
            text: Vec::with_capacity(n),
            num: Vec::with_capacity(n),
            stray: None,
            n_stray: 0,
            present: 0,
        };
        match c {
            RawColumn::Number(v) => {
                for x in v {
                    let x = x.filter(|x| !x.is_nan());
                    col.text.push(x.map(|x| x.to_string()));
                    col.num.push(x);
                    col.present += usize::from(x.is_some());
                }
            }
            RawColumn::Text(v) => {
                for (i, cell) in v.iter().enumerate() {
                    let parsed = match cell {
                        None => Ok(None),
                        Some(s) => parse_cell(s, missing),
                    };
                    match parsed {
                        Ok(None) => {
                            col.text.push(None);
                            col.num.push(None);
                        }
                        Ok(Some(x)) => {
                            col.text.push(cell.as_ref().map(|s| s.trim().to_string()));
                            col.num.push(Some(x));
                            col.present += 1;
                        }
                        Err(()) => {
                            let s = cell.as_deref().unwrap_or("").trim().to_string();
                            if col.stray.is_none() {
                                col.stray = Some((i, s.clone()));
                            }
                            col.n_stray += 1;
                            col.text.push(Some(s));
                            col.num.push(None);
                            col.present += 1;
                        }
                    }
                }
            }
        }
        out.push(col);
    }
    Ok((out, n))
}

pub(super) fn find<'a>(cols: &'a [Col], name: &str, role: &str, path: &Path) -> Result<&'a Col> {
    cols.iter().find(|c| c.name == name).ok_or_else(|| {
        data_err(
            path,
            format!(
                "{role} column `{name}` not found{}",
                crate::error::suggest(name, cols.iter().map(|c| c.name.as_str()))
            ),
        )
    })
}

/// True when the (unit, wave) keys are unique and present in every row.
pub(super) fn identifies(unit: &Col, wave: Option<&Col>, n: usize) -> bool {
    let mut seen = HashSet::with_capacity(n);
    for i in 0..n {
        let Some(u) = &unit.text[i] else { return false };
        let w = match wave {
            Some(w) => match &w.text[i] {
                Some(w) => Some(w.as_str()),
                None => return false,
            },
            None => None,
        };
        if !seen.insert((u.as_str(), w)) {
            return false;
        }
    }
    true
}

pub(super) fn guess_wave(cols: &[Col], n: usize) -> Option<usize> {
    cols.iter().position(|c| {
        if !named_like(&c.name, WAVE_HINTS) || c.present < n {
            return false;
        }
        let mut counts: HashMap<&str, usize> = HashMap::new();
        for t in c.text.iter().flatten() {
            *counts.entry(t.as_str()).or_default() += 1;
        }
        (2..=50).contains(&counts.len()) && counts.values().all(|&k| k >= 2)
    })
}

pub(super) fn guess_unit(
    cols: &[Col],
    wave: Option<usize>,
    skip: &[usize],
    n: usize,
) -> Option<usize> {
    let wave_col = wave.map(|w| &cols[w]);
    // Best key: (score, distinct values, leftmost), and the column.
    type Key = (i64, usize, std::cmp::Reverse<usize>);
    let mut best: Option<(Key, usize)> = None;
    for (j, c) in cols.iter().enumerate() {
        if Some(j) == wave || skip.contains(&j) || c.present < n {
            continue;
        }
        if !identifies(c, wave_col, n) {
            continue;
        }
        // A real-valued numeric column that identifies rows is a measurement, not a key.
        let integral = c.num.iter().flatten().all(|x| x.fract() == 0.0);
        if c.is_numeric() && !integral {
            continue;
        }
        let score = 2 * i64::from(named_like(&c.name, UNIT_HINTS)) + i64::from(!c.is_numeric());
        if score == 0 {
            // Numbers not named like a key: more likely a measurement.
            continue;
        }
        let key = (score, c.distinct(), std::cmp::Reverse(j));
        if best.as_ref().is_none_or(|(b, _)| key > *b) {
            best = Some((key, j));
        }
    }
    best.map(|b| b.1)
}

/// Numeric columns present in every row, not constant: what could be an outcome.
pub(super) fn outcome_candidates(cols: &[Col], taken: &[usize], n: usize) -> Vec<String> {
    cols.iter()
        .enumerate()
        .filter(|(j, c)| {
            !taken.contains(j) && c.is_numeric() && c.present == n && distinct_numbers(c) > 1
        })
        .map(|(_, c)| c.name.clone())
        .collect()
}

pub(super) fn distinct_numbers(c: &Col) -> usize {
    c.num
        .iter()
        .flatten()
        .map(|x| x.to_bits())
        .collect::<BTreeSet<_>>()
        .len()
}
