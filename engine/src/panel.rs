//! The panel: units, waves, one outcome and many indicators with gaps.
//!
//! Reading (CSV or Parquet through arrow) and every intake check live here, so a sweep
//! only ever sees a validated [`Panel`]. A panel can also be built in memory
//! ([`Panel::new`]) or derived from another (permuted outcome, subset of units), which is
//! what later verbs (permutation null, nested estimates) need.

use crate::config::{Config, IndicatorSelection};
use crate::error::{suggest, Error, Result};
use arrow_array::{Array, RecordBatch};
use arrow_schema::{DataType, Field, Schema};
use ndarray::{Array1, Array2};
use std::collections::{BTreeMap, HashMap};
use std::path::Path;
use std::sync::Arc;

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

/// One column as read from a file, before typing.
enum RawColumn {
    Text(Vec<Option<String>>),
    Number(Vec<Option<f64>>),
}

struct RawTable {
    names: Vec<String>,
    columns: Vec<RawColumn>,
    /// How to name data row i (0-based) in a message.
    csv: bool,
}

impl RawTable {
    fn where_row(&self, i: usize) -> String {
        if self.csv {
            format!("row {} (line {})", i + 1, i + 2)
        } else {
            format!("row {}", i + 1)
        }
    }
    fn n_rows(&self) -> usize {
        match self.columns.first() {
            Some(RawColumn::Text(v)) => v.len(),
            Some(RawColumn::Number(v)) => v.len(),
            None => 0,
        }
    }
}

fn data_err(file: &Path, msg: impl Into<String>) -> Error {
    Error::Data {
        file: file.display().to_string(),
        msg: msg.into(),
    }
}

/// Check that CSV bytes are UTF-8 text and return them without a UTF-8 byte-order mark.
/// UTF-16 files, spreadsheets saved under a .csv name and other encodings are refused with
/// the line at fault.
fn utf8_text<'a>(path: &Path, bytes: &'a [u8]) -> Result<&'a [u8]> {
    if bytes.starts_with(&[0xFF, 0xFE]) || bytes.starts_with(&[0xFE, 0xFF]) {
        return Err(data_err(
            path,
            "the file is UTF-16 text (it starts with a UTF-16 byte-order mark): save it as UTF-8 CSV",
        ));
    }
    if bytes.starts_with(b"PK\x03\x04") || bytes.starts_with(&[0xD0, 0xCF, 0x11, 0xE0]) {
        return Err(data_err(
            path,
            "the file is a spreadsheet or archive, not CSV text: export the sheet as UTF-8 CSV",
        ));
    }
    let body = bytes.strip_prefix(&[0xEF, 0xBB, 0xBF]).unwrap_or(bytes);
    if let Err(e) = std::str::from_utf8(body) {
        let at = e.valid_up_to();
        let line = 1 + body[..at].iter().filter(|&&b| b == b'\n').count();
        let start = body[..at]
            .iter()
            .rposition(|&b| b == b'\n')
            .map_or(0, |i| i + 1);
        return Err(data_err(
            path,
            format!(
                "line {line} is not UTF-8 text (byte 0x{:02X} at character {} of the line; a Latin-1 or Windows-1252 file?): save the file as UTF-8",
                body[at],
                1 + String::from_utf8_lossy(&body[start..at]).chars().count()
            ),
        ));
    }
    if let Some(i) = body.iter().position(|&b| b == 0) {
        let line = 1 + body[..i].iter().filter(|&&b| b == b'\n').count();
        return Err(data_err(
            path,
            format!("line {line} holds a NUL byte: this is not a text file"),
        ));
    }
    Ok(body)
}

fn read_csv(path: &Path) -> Result<RawTable> {
    let bytes = std::fs::read(path).map_err(|e| data_err(path, format!("cannot open: {e}")))?;
    if bytes.is_empty() {
        return Err(data_err(
            path,
            "the file is empty (expected a header row and data rows)",
        ));
    }
    let text = utf8_text(path, &bytes)?;
    let open = || Ok::<_, Error>(std::io::Cursor::new(text));
    let format = arrow_csv::reader::Format::default().with_header(true);
    let (schema, _) = format
        .infer_schema(open()?, Some(0))
        .map_err(|e| data_err(path, format!("cannot read the header: {e}")))?;
    let names: Vec<String> = schema.fields().iter().map(|f| f.name().clone()).collect();
    check_names(path, &names)?;
    let fields: Vec<Field> = names
        .iter()
        .map(|n| Field::new(n, DataType::Utf8, true))
        .collect();
    let reader = arrow_csv::ReaderBuilder::new(Arc::new(Schema::new(fields)))
        .with_header(true)
        .with_batch_size(4096)
        .build(open()?)
        .map_err(|e| data_err(path, e.to_string()))?;
    let mut cols: Vec<Vec<Option<String>>> = vec![Vec::new(); names.len()];
    for batch in reader {
        let batch = batch.map_err(|e| data_err(path, e.to_string()))?;
        for (j, col) in cols.iter_mut().enumerate() {
            let a = batch
                .column(j)
                .as_any()
                .downcast_ref::<arrow_array::StringArray>()
                .ok_or_else(|| data_err(path, "internal: CSV column is not text"))?;
            col.extend(a.iter().map(|v| v.map(str::to_string)));
        }
    }
    Ok(RawTable {
        names,
        columns: cols.into_iter().map(RawColumn::Text).collect(),
        csv: true,
    })
}

fn read_parquet(path: &Path) -> Result<RawTable> {
    let file =
        std::fs::File::open(path).map_err(|e| data_err(path, format!("cannot open: {e}")))?;
    let builder = parquet::arrow::arrow_reader::ParquetRecordBatchReaderBuilder::try_new(file)
        .map_err(|e| data_err(path, format!("not a readable Parquet file: {e}")))?;
    let names: Vec<String> = builder
        .schema()
        .fields()
        .iter()
        .map(|f| f.name().clone())
        .collect();
    check_names(path, &names)?;
    let reader = builder.build().map_err(|e| data_err(path, e.to_string()))?;
    let mut batches: Vec<RecordBatch> = Vec::new();
    for b in reader {
        batches.push(b.map_err(|e| data_err(path, e.to_string()))?);
    }
    let mut columns = Vec::with_capacity(names.len());
    for (j, name) in names.iter().enumerate() {
        let dt = batches
            .first()
            .map(|b| b.column(j).data_type().clone())
            .unwrap_or(DataType::Utf8);
        if dt.is_numeric() {
            let mut v = Vec::new();
            for b in &batches {
                let c = arrow_cast::cast(b.column(j), &DataType::Float64)
                    .map_err(|e| data_err(path, format!("column `{name}`: {e}")))?;
                let c = c
                    .as_any()
                    .downcast_ref::<arrow_array::Float64Array>()
                    .ok_or_else(|| data_err(path, "internal: cast to f64 failed"))?;
                v.extend(c.iter());
            }
            columns.push(RawColumn::Number(v));
        } else {
            let mut v = Vec::new();
            for b in &batches {
                let c = arrow_cast::cast(b.column(j), &DataType::Utf8).map_err(|e| {
                    data_err(
                        path,
                        format!("column `{name}` of type {dt} cannot be read: {e}"),
                    )
                })?;
                let c = c
                    .as_any()
                    .downcast_ref::<arrow_array::StringArray>()
                    .ok_or_else(|| data_err(path, "internal: cast to text failed"))?;
                v.extend(c.iter().map(|s| s.map(str::to_string)));
            }
            columns.push(RawColumn::Text(v));
        }
    }
    Ok(RawTable {
        names,
        columns,
        csv: false,
    })
}

fn check_names(path: &Path, names: &[String]) -> Result<()> {
    let mut seen: HashMap<&str, usize> = HashMap::new();
    for (j, n) in names.iter().enumerate() {
        if n.trim().is_empty() {
            return Err(data_err(
                path,
                format!("column {} has an empty name", j + 1),
            ));
        }
        if let Some(first) = seen.insert(n.as_str(), j) {
            return Err(data_err(
                path,
                format!(
                    "column name `{n}` appears twice (columns {} and {})",
                    first + 1,
                    j + 1
                ),
            ));
        }
    }
    Ok(())
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
    let ext = path
        .extension()
        .and_then(|e| e.to_str())
        .unwrap_or("")
        .to_ascii_lowercase();
    let table = match ext.as_str() {
        "csv" => read_csv(&path)?,
        "parquet" | "pq" => read_parquet(&path)?,
        other => {
            return Err(data_err(
                &path,
                format!("unknown file type `.{other}`: use .csv, .parquet or .pq"),
            ))
        }
    };
    let mut panel = from_table(cfg, &path, &table)?;
    if let Some(cb) = &cfg.data.codebook {
        panel.codebook = read_codebook(&cfg.resolve(cb), &panel.indicators)?;
    }
    Ok(panel)
}

fn parse_cell(s: &str, missing: &[String]) -> std::result::Result<Option<f64>, ()> {
    let t = s.trim();
    if missing.iter().any(|m| m == t) {
        return Ok(None);
    }
    t.parse::<f64>().map(Some).map_err(|_| ())
}

fn from_table(cfg: &Config, path: &Path, t: &RawTable) -> Result<Panel> {
    let d = &cfg.data;
    let col_index = |name: &str, role: &str| -> Result<usize> {
        t.names.iter().position(|n| n == name).ok_or_else(|| {
            data_err(
                path,
                format!(
                    "{role} column `{name}` not found{}",
                    suggest(name, t.names.iter().map(String::as_str))
                ),
            )
        })
    };
    let unit_j = col_index(&d.unit, "unit")?;
    let outcome_j = col_index(&d.outcome, "outcome")?;
    let wave_j = d
        .wave
        .as_deref()
        .map(|w| col_index(w, "wave"))
        .transpose()?;
    let se_j = d
        .standard_error
        .as_deref()
        .map(|c| col_index(c, "standard error"))
        .transpose()?;
    for ig in &d.ignore {
        col_index(ig, "ignored")?;
    }
    let n = t.n_rows();
    if n == 0 {
        return Err(data_err(path, "the file has a header but no data rows"));
    }

    let text_of = |j: usize, i: usize| -> Option<String> {
        match &t.columns[j] {
            RawColumn::Text(v) => v[i].clone(),
            RawColumn::Number(v) => v[i].map(|x| x.to_string()),
        }
    };
    // Units and waves.
    let mut units = Vec::with_capacity(n);
    let mut waves = Vec::with_capacity(n);
    for i in 0..n {
        let u = text_of(unit_j, i)
            .map(|s| s.trim().to_string())
            .unwrap_or_default();
        if u.is_empty() {
            return Err(data_err(
                path,
                format!("{}: unit column `{}` is empty", t.where_row(i), d.unit),
            ));
        }
        units.push(u);
        let w = match wave_j {
            Some(j) => {
                let w = text_of(j, i)
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
    let mut seen: HashMap<(&str, Option<&str>), usize> = HashMap::new();
    for i in 0..n {
        if let Some(first) = seen.insert((units[i].as_str(), waves[i].as_deref()), i) {
            let what = match &waves[i] {
                Some(w) => format!("unit `{}` wave `{w}`", units[i]),
                None => format!("unit `{}` (no wave column is declared)", units[i]),
            };
            return Err(data_err(
                path,
                format!(
                    "{what} appears twice: {} and {}",
                    t.where_row(first),
                    t.where_row(i)
                ),
            ));
        }
    }

    // A numeric column, with precise messages.
    let numeric = |j: usize| -> std::result::Result<Vec<Option<f64>>, (usize, String)> {
        match &t.columns[j] {
            RawColumn::Number(v) => Ok(v.iter().map(|x| x.filter(|x| !x.is_nan())).collect()),
            RawColumn::Text(v) => v
                .iter()
                .enumerate()
                .map(|(i, c)| match c {
                    None => Ok(None),
                    Some(s) => parse_cell(s, &d.missing).map_err(|_| (i, s.clone())),
                })
                .collect(),
        }
    };
    let not_number = |j: usize, i: usize, s: &str| {
        let hint = if s.contains(',') {
            " (thousands separators and decimal commas are not read; write 1234.5)"
        } else if s.starts_with('"') || s.starts_with('\'') {
            " (quoted numbers are not read)"
        } else {
            ""
        };
        data_err(
            path,
            format!(
                "{}, column `{}`: `{s}` is not a number{hint}",
                t.where_row(i),
                t.names[j]
            ),
        )
    };

    let y_raw = numeric(outcome_j).map_err(|(i, s)| not_number(outcome_j, i, &s))?;
    let mut y = Array1::zeros(n);
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

    // Indicator columns.
    let named: Vec<usize> = [Some(unit_j), Some(outcome_j), wave_j, se_j]
        .into_iter()
        .flatten()
        .collect();
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
    let se = match se_j {
        None => None,
        Some(j) => {
            let v = numeric(j).map_err(|(i, s)| not_number(j, i, &s))?;
            let mut out = Array1::zeros(n);
            for (i, c) in v.iter().enumerate() {
                match c {
                    Some(s) if s.is_finite() && *s > 0.0 => out[i] = *s,
                    _ => {
                        return Err(data_err(
                            path,
                            format!(
                                "{}, standard error `{}` must be a positive number",
                                t.where_row(i),
                                t.names[j]
                            ),
                        ))
                    }
                }
            }
            Some(out)
        }
    };
    let mut chosen: Vec<(usize, Vec<Option<f64>>)> = Vec::new();
    let mut skipped: Vec<String> = Vec::new();
    match &d.indicators {
        IndicatorSelection::List(list) => {
            if list.is_empty() {
                return Err(data_err(path, "data.indicators is an empty list"));
            }
            for name in list {
                let j = col_index(name, "indicator")?;
                if named.contains(&j) {
                    return Err(data_err(path, format!("`{name}` is the unit, wave or outcome column and cannot be an indicator")));
                }
                let v = numeric(j).map_err(|(i, s)| not_number(j, i, &s))?;
                chosen.push((j, v));
            }
        }
        _ => {
            for j in 0..t.names.len() {
                if named.contains(&j) || d.ignore.contains(&t.names[j]) {
                    continue;
                }
                match numeric(j) {
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
                            return Err(not_number(j, i, &s));
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
    let p = chosen.len();
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
                format!("indicator `{name}` is missing in every row: list it under data.ignore"),
            ));
        }
        if constant {
            return Err(data_err(path, format!("indicator `{name}` has one value in every row: it cannot explain anything; list it under data.ignore")));
        }
        names.push(name.clone());
    }
    let mut panel = Panel::new(units, waves, y, x, names)?;
    panel.se = se;
    panel.outcome_scale = d.outcome_kind.scale();
    panel.skipped = skipped;
    Ok(panel)
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
