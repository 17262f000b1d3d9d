//! The panel: units, waves, one outcome and many indicators with gaps.
//!
//! Reading (CSV or Parquet through arrow) and every intake check live here, so a sweep
//! only ever sees a validated [`Panel`]. A panel can also be built in memory
//! ([`Panel::new`]) or derived from another (permuted outcome, subset of units), which is
//! what later verbs (permutation null, nested estimates) need.

use crate::config::{Config, DataSection, IndicatorSelection};
use crate::error::{suggest, Error, Result};
use ndarray::{Array1, Array2};
use read::{read_csv, read_parquet};
pub(crate) use read::{RawColumn, RawTable};
use std::collections::{BTreeMap, HashMap};
use std::path::Path;

mod read;

/// Codebook entry of one indicator.
#[derive(Debug, Clone, PartialEq)]
pub struct CodebookEntry {
    pub group: String,
    pub label: String,
}

/// A validated panel.
#[derive(Debug, Clone)]
pub struct Panel {
    /// Distinct unit names; a unit's index is its position here.
    pub units: Vec<String>,
    /// Unit index of each row.
    pub row_unit: Vec<usize>,
    /// Wave label of each row (`None` when the panel has no wave column).
    pub row_wave: Vec<Option<String>>,
    /// Outcome per row (finite).
    pub y: Array1<f64>,
    /// Indicators, rows x indicators; NaN marks a gap.
    pub x: Array2<f64>,
    /// Indicator names, one per column of `x`.
    pub indicators: Vec<String>,
    /// Codebook entries by indicator name (may be empty).
    pub codebook: BTreeMap<String, CodebookEntry>,
    /// Standard error of each row's outcome, when the data declare a column for it.
    pub se: Option<Array1<f64>>,
    /// Full scale of a bounded outcome (1 for proportions, 100 for percents).
    pub outcome_scale: Option<f64>,
    /// Columns `data.indicators = "auto"` left out because most of their cells are text
    /// (plan warns and lists them; the manifest records them as `skipped_columns`).
    pub skipped: Vec<String>,
}

impl Panel {
    /// Build a panel in memory; checks shapes and that the outcome is finite.
    pub fn new(
        unit_of_row: Vec<String>,
        row_wave: Vec<Option<String>>,
        y: Array1<f64>,
        x: Array2<f64>,
        indicators: Vec<String>,
    ) -> Result<Panel> {
        let n = unit_of_row.len();
        let bad = |m: String| Error::Data {
            file: "<memory>".into(),
            msg: m,
        };
        if y.len() != n || x.nrows() != n || row_wave.len() != n {
            return Err(bad(format!(
                "shape mismatch: {n} units, {} waves, {} outcomes, {} indicator rows",
                row_wave.len(),
                y.len(),
                x.nrows()
            )));
        }
        if x.ncols() != indicators.len() {
            return Err(bad("indicator names do not match the columns".into()));
        }
        if let Some(i) = y.iter().position(|v| !v.is_finite()) {
            return Err(bad(format!("outcome of row {} is not finite", i + 1)));
        }
        let mut index: HashMap<String, usize> = HashMap::new();
        let mut units = Vec::new();
        let row_unit = unit_of_row
            .into_iter()
            .map(|u| {
                let next = units.len();
                *index.entry(u.clone()).or_insert_with(|| {
                    units.push(u);
                    next
                })
            })
            .collect();
        Ok(Panel {
            units,
            row_unit,
            row_wave,
            y,
            x,
            indicators,
            codebook: BTreeMap::new(),
            se: None,
            outcome_scale: None,
            skipped: Vec::new(),
        })
    }

    pub fn n_rows(&self) -> usize {
        self.y.len()
    }

    pub fn n_units(&self) -> usize {
        self.units.len()
    }

    /// Index of an indicator by name.
    pub fn indicator_index(&self, name: &str) -> Option<usize> {
        self.indicators.iter().position(|n| n == name)
    }

    /// Codebook groups with their indicator indices, in name order.
    pub fn groups(&self) -> BTreeMap<String, Vec<usize>> {
        let mut g: BTreeMap<String, Vec<usize>> = BTreeMap::new();
        for (j, name) in self.indicators.iter().enumerate() {
            if let Some(e) = self.codebook.get(name) {
                g.entry(e.group.clone()).or_default().push(j);
            }
        }
        g
    }

    /// The same panel with another outcome (e.g. a permuted one).
    pub fn with_outcome(&self, y: Array1<f64>) -> Result<Panel> {
        if y.len() != self.n_rows() || y.iter().any(|v| !v.is_finite()) {
            return Err(Error::Data {
                file: "<memory>".into(),
                msg: "replacement outcome must be finite and one per row".into(),
            });
        }
        Ok(Panel { y, ..self.clone() })
    }
}

fn data_err(file: &Path, msg: impl Into<String>) -> Error {
    Error::Data {
        file: file.display().to_string(),
        msg: msg.into(),
    }
}

/// Read the config's data file (and codebook) into a validated panel.
pub fn load(cfg: &Config) -> Result<Panel> {
    let path = cfg.resolve(&cfg.data.file);
    if !path.exists() {
        return Err(data_err(
            &path,
            "file not found (paths are relative to the config file)",
        ));
    }
    let table = read_table(&path)?;
    let mut panel = from_table(cfg, &path, &table)?;
    if let Some(cb) = &cfg.data.codebook {
        panel.codebook = read_codebook(&cfg.resolve(cb), &panel.indicators)?;
    }
    Ok(panel)
}

/// Read a `.csv`, `.parquet` or `.pq` file into untyped columns (every intake check on the
/// bytes and the header applies).
pub(crate) fn read_table(path: &Path) -> Result<RawTable> {
    let ext = path
        .extension()
        .and_then(|e| e.to_str())
        .unwrap_or("")
        .to_ascii_lowercase();
    match ext.as_str() {
        "csv" => read_csv(path),
        "parquet" | "pq" => read_parquet(path),
        other => Err(data_err(
            path,
            format!("unknown file type `.{other}`: use .csv, .parquet or .pq"),
        )),
    }
}

pub(crate) fn parse_cell(s: &str, missing: &[String]) -> std::result::Result<Option<f64>, ()> {
    let t = s.trim();
    if missing.iter().any(|m| m == t) {
        return Ok(None);
    }
    t.parse::<f64>().map(Some).map_err(|_| ())
}

/// Type a raw table into a validated panel, in the order a reader meets the faults: the
/// named columns, the units and waves, the outcome, the standard error, the indicators.
fn from_table(cfg: &Config, path: &Path, t: &RawTable) -> Result<Panel> {
    let d = &cfg.data;
    let intake = Intake { d, path, t };
    let roles = intake.roles()?;
    if t.n_rows() == 0 {
        return Err(data_err(path, "the file has a header but no data rows"));
    }
    let (units, waves) = intake.units_and_waves(&roles)?;
    intake.check_unique_keys(&units, &waves)?;
    let y = intake.outcome(roles.outcome)?;
    let se = roles
        .standard_error
        .map(|j| intake.standard_error(j))
        .transpose()?;
    let (chosen, skipped) = intake.chosen_indicators(&roles)?;
    let (x, names) = intake.indicator_matrix(&chosen)?;
    let mut panel = Panel::new(units, waves, y, x, names)?;
    panel.se = se;
    panel.outcome_scale = d.outcome_kind.scale();
    panel.skipped = skipped;
    Ok(panel)
}

/// The columns the data section names, by position.
struct Roles {
    unit: usize,
    outcome: usize,
    wave: Option<usize>,
    standard_error: Option<usize>,
}

impl Roles {
    /// The unit, wave, outcome and standard-error columns (never indicators).
    fn named(&self) -> Vec<usize> {
        [
            Some(self.unit),
            Some(self.outcome),
            self.wave,
            self.standard_error,
        ]
        .into_iter()
        .flatten()
        .collect()
    }
}

/// A raw table read against the config's data section; every message names the file and
/// the row, column or cell at fault.
struct Intake<'a> {
    d: &'a DataSection,
    path: &'a Path,
    t: &'a RawTable,
}

impl Intake<'_> {
    /// The column called `name`, or an error naming its `role` and the closest name.
    fn col_index(&self, name: &str, role: &str) -> Result<usize> {
        let t = self.t;
        t.names.iter().position(|n| n == name).ok_or_else(|| {
            data_err(
                self.path,
                format!(
                    "{role} column `{name}` not found{}",
                    suggest(name, t.names.iter().map(String::as_str))
                ),
            )
        })
    }

    /// Find the named columns; every ignored column must exist too.
    fn roles(&self) -> Result<Roles> {
        let d = self.d;
        let unit = self.col_index(&d.unit, "unit")?;
        let outcome = self.col_index(&d.outcome, "outcome")?;
        let wave = d
            .wave
            .as_deref()
            .map(|w| self.col_index(w, "wave"))
            .transpose()?;
        let standard_error = d
            .standard_error
            .as_deref()
            .map(|c| self.col_index(c, "standard error"))
            .transpose()?;
        for ig in &d.ignore {
            self.col_index(ig, "ignored")?;
        }
        Ok(Roles {
            unit,
            outcome,
            wave,
            standard_error,
        })
    }

    fn text_of(&self, j: usize, i: usize) -> Option<String> {
        match &self.t.columns[j] {
            RawColumn::Text(v) => v[i].clone(),
            RawColumn::Number(v) => v[i].map(|x| x.to_string()),
        }
    }

    /// Each row's unit and wave (trimmed; neither may be empty).
    fn units_and_waves(&self, roles: &Roles) -> Result<(Vec<String>, Vec<Option<String>>)> {
        let (d, path, t) = (self.d, self.path, self.t);
        let n = t.n_rows();
        let mut units = Vec::with_capacity(n);
        let mut waves = Vec::with_capacity(n);
        for i in 0..n {
            let u = self
                .text_of(roles.unit, i)
                .map(|s| s.trim().to_string())
                .unwrap_or_default();
            if u.is_empty() {
                return Err(data_err(
                    path,
                    format!("{}: unit column `{}` is empty", t.where_row(i), d.unit),
                ));
            }
            units.push(u);
            let w = match roles.wave {
                Some(j) => {
                    let w = self
                        .text_of(j, i)
                        .map(|s| s.trim().to_string())
                        .unwrap_or_default();
                    if w.is_empty() {
                        return Err(data_err(
                            path,
                            format!(
                                "{}: wave column `{}` is empty",
                                t.where_row(i),
                                d.wave.as_deref().unwrap_or("")
                            ),
                        ));
                    }
                    Some(w)
                }
                None => None,
            };
            waves.push(w);
        }
        Ok((units, waves))
    }

    /// Unit + wave identifies a row (a unit alone without a wave column).
    fn check_unique_keys(&self, units: &[String], waves: &[Option<String>]) -> Result<()> {
        let t = self.t;
        let mut seen: HashMap<(&str, Option<&str>), usize> = HashMap::new();
        for i in 0..units.len() {
            if let Some(first) = seen.insert((units[i].as_str(), waves[i].as_deref()), i) {
                let what = match &waves[i] {
                    Some(w) => format!("unit `{}` wave `{w}`", units[i]),
                    None => format!("unit `{}` (no wave column is declared)", units[i]),
                };
                return Err(data_err(
                    self.path,
                    format!(
                        "{what} appears twice: {} and {}",
                        t.where_row(first),
                        t.where_row(i)
                    ),
                ));
            }
        }
        Ok(())
    }

    /// A numeric column (gaps as `None`), or the first cell that is not a number.
    fn numeric(&self, j: usize) -> std::result::Result<Vec<Option<f64>>, (usize, String)> {
        match &self.t.columns[j] {
            RawColumn::Number(v) => Ok(v.iter().map(|x| x.filter(|x| !x.is_nan())).collect()),
            RawColumn::Text(v) => v
                .iter()
                .enumerate()
                .map(|(i, c)| match c {
                    None => Ok(None),
                    Some(s) => parse_cell(s, &self.d.missing).map_err(|_| (i, s.clone())),
                })
                .collect(),
        }
    }

    /// The error for cell `s` of row `i`, column `j`, which is not a number, with a hint.
    fn not_number(&self, j: usize, i: usize, s: &str) -> Error {
        let hint = if s.contains(',') {
            " (thousands separators and decimal commas are not read; write 1234.5)"
        } else if s.starts_with('"') || s.starts_with('\'') {
            " (quoted numbers are not read)"
        } else {
            ""
        };
        data_err(
            self.path,
            format!(
                "{}, column `{}`: `{s}` is not a number{hint}",
                self.t.where_row(i),
                self.t.names[j]
            ),
        )
    }

    /// A column that must be numeric.
    fn numeric_column(&self, j: usize) -> Result<Vec<Option<f64>>> {
        self.numeric(j).map_err(|(i, s)| self.not_number(j, i, &s))
    }

    /// The outcome: present and finite on every row, and inside the range
    /// `data.outcome_kind` declares.
    fn outcome(&self, j: usize) -> Result<Array1<f64>> {
        let (d, path, t) = (self.d, self.path, self.t);
        let y_raw = self.numeric_column(j)?;
        let mut y = Array1::zeros(t.n_rows());
        for (i, v) in y_raw.iter().enumerate() {
            match v {
                Some(v) if v.is_finite() => y[i] = *v,
                Some(v) => {
                    return Err(data_err(
                        path,
                        format!(
                            "{}, outcome `{}` is {v}: outcomes must be finite",
                            t.where_row(i),
                            d.outcome
                        ),
                    ))
                }
                None => {
                    return Err(data_err(
                        path,
                        format!(
                        "{}, outcome `{}` is missing: remove rows without an outcome before the sweep",
                        t.where_row(i),
                        d.outcome
                    ),
                    ))
                }
            }
        }
        if let Some(scale) = d.outcome_kind.scale() {
            if let Some(i) = y.iter().position(|v| *v < 0.0 || *v > scale) {
                return Err(data_err(
                    path,
                    format!(
                        "{}, outcome `{}` is {}: data.outcome_kind declares values in [0, {scale}]",
                        t.where_row(i),
                        d.outcome,
                        y[i]
                    ),
                ));
            }
        }
        Ok(y)
    }

    /// The outcome's standard error: a positive number on every row.
    fn standard_error(&self, j: usize) -> Result<Array1<f64>> {
        let t = self.t;
        let v = self.numeric_column(j)?;
        let mut out = Array1::zeros(t.n_rows());
        for (i, c) in v.iter().enumerate() {
            match c {
                Some(s) if s.is_finite() && *s > 0.0 => out[i] = *s,
                _ => {
                    return Err(data_err(
                        self.path,
                        format!(
                            "{}, standard error `{}` must be a positive number",
                            t.where_row(i),
                            t.names[j]
                        ),
                    ))
                }
            }
        }
        Ok(out)
    }

    /// The indicator columns with their cells: the listed ones, or with `"auto"` every
    /// numeric column not named elsewhere or ignored (a text column is skipped; a mostly
    /// numeric column with a stray cell is an error).
    /// Also returns the text columns skipped by `"auto"`.
    #[allow(clippy::type_complexity)]
    fn chosen_indicators(
        &self,
        roles: &Roles,
    ) -> Result<(Vec<(usize, Vec<Option<f64>>)>, Vec<String>)> {
        let (d, path, t) = (self.d, self.path, self.t);
        let n = t.n_rows();
        let named = roles.named();
        let mut chosen: Vec<(usize, Vec<Option<f64>>)> = Vec::new();
        let mut skipped: Vec<String> = Vec::new();
        match &d.indicators {
            IndicatorSelection::List(list) => {
                if list.is_empty() {
                    return Err(data_err(path, "data.indicators is an empty list"));
                }
                for name in list {
                    let j = self.col_index(name, "indicator")?;
                    if named.contains(&j) {
                        return Err(data_err(path, format!("`{name}` is the unit, wave or outcome column and cannot be an indicator")));
                    }
                    let v = self.numeric_column(j)?;
                    chosen.push((j, v));
                }
            }
            _ => {
                for j in 0..t.names.len() {
                    if named.contains(&j) || d.ignore.contains(&t.names[j]) {
                        continue;
                    }
                    match self.numeric(j) {
                        Ok(v) => chosen.push((j, v)),
                        Err((i, s)) => {
                            // A text column (labels, names) is skipped; a mostly numeric column
                            // with a stray cell is an error, not a silent drop.
                            let parsed = match &t.columns[j] {
                                RawColumn::Text(v) => v
                                    .iter()
                                    .flatten()
                                    .filter(|c| parse_cell(c, &d.missing).ok().flatten().is_some())
                                    .count(),
                                RawColumn::Number(_) => 0,
                            };
                            if parsed * 2 > n {
                                return Err(self.not_number(j, i, &s));
                            }
                            skipped.push(t.names[j].clone());
                        }
                    }
                }
                if chosen.is_empty() {
                    return Err(data_err(path, "no numeric indicator columns found"));
                }
            }
        }
        Ok((chosen, skipped))
    }

    /// The indicator matrix (NaN for a gap) and names; every value finite and at most
    /// 1e150 in magnitude, and no indicator missing everywhere or constant.
    fn indicator_matrix(
        &self,
        chosen: &[(usize, Vec<Option<f64>>)],
    ) -> Result<(Array2<f64>, Vec<String>)> {
        let (path, t) = (self.path, self.t);
        let (n, p) = (t.n_rows(), chosen.len());
        let mut x = Array2::from_elem((n, p), f64::NAN);
        let mut names = Vec::with_capacity(p);
        for (k, (j, v)) in chosen.iter().enumerate() {
            let name = &t.names[*j];
            let mut present = 0usize;
            let mut first: Option<f64> = None;
            let mut constant = true;
            for (i, c) in v.iter().enumerate() {
                if let Some(val) = c {
                    if !val.is_finite() {
                        return Err(data_err(
                            path,
                            format!(
                                "{}, column `{name}`: value {val} is not finite",
                                t.where_row(i)
                            ),
                        ));
                    }
                    if val.abs() > 1e150 {
                        return Err(data_err(path, format!("{}, column `{name}`: value {val:e} is too large to use safely (|x| > 1e150)", t.where_row(i))));
                    }
                    present += 1;
                    match first {
                        None => first = Some(*val),
                        Some(f) if f != *val => constant = false,
                        _ => {}
                    }
                    x[[i, k]] = *val;
                }
            }
            if present == 0 {
                return Err(data_err(
                    path,
                    format!(
                        "indicator `{name}` is missing in every row: list it under data.ignore"
                    ),
                ));
            }
            if constant {
                return Err(data_err(path, format!("indicator `{name}` has one value in every row: it cannot explain anything; list it under data.ignore")));
            }
            names.push(name.clone());
        }
        Ok((x, names))
    }
}

/// Read a codebook CSV with columns `indicator`, `group`, `label` (others ignored).
pub fn read_codebook(
    path: &Path,
    indicators: &[String],
) -> Result<BTreeMap<String, CodebookEntry>> {
    let err = |m: String| Error::Codebook {
        file: path.display().to_string(),
        msg: m,
    };
    if !path.exists() {
        return Err(err(
            "file not found (paths are relative to the config file)".into(),
        ));
    }
    let t = read_csv(path).map_err(|e| match e {
        Error::Data { msg, .. } => err(msg),
        other => other,
    })?;
    let col = |name: &str| {
        t.names.iter().position(|n| n == name).ok_or_else(|| {
            err(format!(
                "needs a column `{name}`{}; found: {}",
                suggest(name, t.names.iter().map(String::as_str)),
                t.names.join(", ")
            ))
        })
    };
    let (ji, jg) = (col("indicator")?, col("group")?);
    let jl = t.names.iter().position(|n| n == "label");
    let text = |j: usize, i: usize| match &t.columns[j] {
        RawColumn::Text(v) => v[i].clone().unwrap_or_default(),
        RawColumn::Number(v) => v[i].map(|x| x.to_string()).unwrap_or_default(),
    };
    let mut out = BTreeMap::new();
    for i in 0..t.n_rows() {
        let name = text(ji, i).trim().to_string();
        let group = text(jg, i).trim().to_string();
        if name.is_empty() || group.is_empty() {
            return Err(err(format!(
                "{}: indicator and group must not be empty",
                t.where_row(i)
            )));
        }
        if !indicators.contains(&name) {
            return Err(err(format!(
                "{}: indicator `{name}` is not a column of the data{}",
                t.where_row(i),
                suggest(&name, indicators.iter().map(String::as_str))
            )));
        }
        let label = jl.map(|j| text(j, i)).unwrap_or_default();
        if out
            .insert(name.clone(), CodebookEntry { group, label })
            .is_some()
        {
            return Err(err(format!(
                "{}: indicator `{name}` is listed twice",
                t.where_row(i)
            )));
        }
    }
    Ok(out)
}
