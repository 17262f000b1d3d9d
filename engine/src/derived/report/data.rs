//! The run's tables as the report reads them: the `specs`, `predictions` and `importance`
//! Parquet parts of a [`RunSet`] (complete batches only), exactly as a meta-analyst would
//! read them. Per-unit errors are kept in flat arrays (spec-major), so a resample of units
//! costs one weighted sum per spec.

use crate::error::{Error, Result};
use crate::results::RunSet;
use crate::schema::{importance, predictions, specs};
use crate::space::DIMENSIONS;
use arrow_array::{Array, BooleanArray, Float64Array, Int32Array, RecordBatch, StringArray};
use parquet::arrow::arrow_reader::ParquetRecordBatchReaderBuilder;
use std::collections::{BTreeMap, HashMap};
use std::path::{Path, PathBuf};

/// The ok specs of a run and what the report needs of them.
#[derive(Debug, Clone, Default)]
pub struct RunTables {
    /// Ok specs, sorted by id.
    pub spec_ids: Vec<String>,
    /// `options[s][d]`: option of spec s in dimension `DIMENSIONS[d]`.
    pub options: Vec<Vec<String>>,
    /// `choices[s][d]`: the option with its parameters, e.g. `ridge(alpha=1)`.
    pub choices: Vec<Vec<String>>,
    /// Parameter columns: (option, parameter, value per spec).
    pub params: Vec<(String, String, Vec<Option<f64>>)>,
    /// Metrics as stored in the specs table (`mae`, `rmse`, `unit_mae`), per spec.
    pub stored: BTreeMap<String, Vec<f64>>,
    /// Units in first-seen order of the predictions.
    pub units: Vec<String>,
    /// Per spec and unit (spec-major): sum of absolute errors, of squared errors, and the
    /// number of predictions (rows x repeats).
    pub unit_abs: Vec<f64>,
    pub unit_sq: Vec<f64>,
    pub unit_n: Vec<f64>,
    /// Panel rows (distinct unit and wave) with a prediction.
    pub rows: usize,
    /// Importances by (level, kind).
    pub importance: Vec<KindTable>,
    /// Specs read but left out (failed, or without predictions), with the reason.
    pub left_out: BTreeMap<String, usize>,
}

/// One (level, kind) of the importance table as a dense matrix over the specs that hold it.
#[derive(Debug, Clone, Default)]
pub struct KindTable {
    pub level: String,
    pub kind: String,
    /// Names (indicators or groups), sorted.
    pub names: Vec<String>,
    /// Indices into `RunTables::spec_ids` of the specs holding this kind, ascending.
    pub specs: Vec<usize>,
    /// `values[i * names.len() + j]`: importance of name j in the i-th holding spec.
    pub values: Vec<f64>,
    /// Same layout: rank (1 = most important).
    pub ranks: Vec<u32>,
    /// Same layout: whether the spec's fitted pool held the name (`in_pool`).
    pub in_pool: Vec<bool>,
}

impl KindTable {
    pub fn n_names(&self) -> usize {
        self.names.len()
    }
    pub fn rank(&self, i: usize, j: usize) -> u32 {
        self.ranks[i * self.names.len() + j]
    }
    pub fn in_pool(&self, i: usize, j: usize) -> bool {
        self.in_pool[i * self.names.len() + j]
    }
    /// Whether name j is "top k" in the i-th holding spec: rank at most k, importance above
    /// 0 and in the spec's pool. Ranks share ties, so without the value test the exact zeros
    /// of a sparse model (or every name of an all-zero spec, all ranked 1) would count as
    /// top; the null's tops use the same rule. Every section that counts "top k" calls this.
    pub fn is_top(&self, i: usize, j: usize, k: usize) -> bool {
        let at = i * self.names.len() + j;
        self.ranks[at] as usize <= k && self.values[at] > 0.0 && self.in_pool[at]
    }
    pub fn row_values(&self, i: usize) -> &[f64] {
        let m = self.names.len();
        &self.values[i * m..(i + 1) * m]
    }
    pub fn name_index(&self, name: &str) -> Option<usize> {
        self.names.binary_search_by(|n| n.as_str().cmp(name)).ok()
    }
}

pub(crate) fn read_batches(path: &Path) -> Result<Vec<RecordBatch>> {
    let bad = |m: String| Error::Output {
        path: path.to_path_buf(),
        msg: m,
    };
    let f = std::fs::File::open(path).map_err(|e| Error::io(path, e))?;
    let reader = ParquetRecordBatchReaderBuilder::try_new(f)
        .and_then(|b| b.build())
        .map_err(|e| bad(format!("unreadable Parquet part: {e}")))?;
    reader
        .collect::<std::result::Result<Vec<_>, _>>()
        .map_err(|e| bad(format!("unreadable Parquet part: {e}")))
}

pub(crate) fn col<'a, T: 'static>(b: &'a RecordBatch, name: &str, path: &Path) -> Result<&'a T> {
    b.column_by_name(name)
        .and_then(|c| c.as_any().downcast_ref::<T>())
        .ok_or_else(|| Error::Output {
            path: path.to_path_buf(),
            msg: format!("column `{name}` is missing or of the wrong type"),
        })
}

/// Render a parameter value compactly (1, 0.5, 1e-4).
pub fn fmt_param(v: f64) -> String {
    if v == v.trunc() && v.abs() < 1e9 {
        format!("{}", v as i64)
    } else {
        format!("{v}")
    }
}

/// Read the ok specs, their per-unit errors and importances.
pub fn read(set: &RunSet) -> Result<RunTables> {
    let mut t = RunTables::default();
    let mut dirs = Dirs::default();
    let (rows, param_cols) = read_spec_rows(set, &mut dirs, &mut t.left_out)?;
    let index: HashMap<String, usize> = rows
        .iter()
        .enumerate()
        .map(|(i, r)| (r.id.clone(), i))
        .collect();
    let source: Vec<usize> = rows.iter().map(|r| r.dir).collect();
    let kept_in: HashMap<String, usize> = rows.iter().map(|r| (r.id.clone(), r.dir)).collect();
    set_specs(&mut t, rows, &param_cols);
    read_unit_errors(set, &mut dirs, &mut t, &index, &source)?;
    let mut t = drop_specs_without_predictions(t);
    t.importance = read_importance(set, &mut dirs, &t.spec_ids, &kept_in)?;
    Ok(t)
}

/// Run directories, numbered as met: a spec's predictions and importances are read only
/// from the directory whose spec row was kept (with `--allow-incomplete`, two runs may
/// both hold a spec; mixing them would count its rows twice).
#[derive(Default)]
struct Dirs(Vec<PathBuf>);

impl Dirs {
    /// The number of the run directory holding the table part `path` (RUN/TABLE/part).
    fn number(&mut self, path: &Path) -> usize {
        let d = path
            .parent()
            .and_then(Path::parent)
            .unwrap_or(Path::new(""))
            .to_path_buf();
        match self.0.iter().position(|x| *x == d) {
            Some(i) => i,
            None => {
                self.0.push(d);
                self.0.len() - 1
            }
        }
    }
}

/// An ok spec's row of the specs table.
struct SpecRow {
    id: String,
    dir: usize,
    options: Vec<String>,
    /// Values of the parameter columns (in the order of the columns met so far).
    params: Vec<Option<f64>>,
    /// The stored metrics, in `settings::METRICS` order.
    stored: Vec<f64>,
}

/// The ok specs' rows, sorted by id, each id once (the first directory holding it wins,
/// as `check` counts; failed specs are counted in `left_out`), and the parameter columns
/// in the order met.
fn read_spec_rows(
    set: &RunSet,
    dirs: &mut Dirs,
    left_out: &mut BTreeMap<String, usize>,
) -> Result<(Vec<SpecRow>, Vec<String>)> {
    let mut seen: HashMap<String, ()> = HashMap::new();
    let mut rows: Vec<SpecRow> = Vec::new();
    let mut param_cols: Vec<String> = Vec::new();
    for path in set.table_files(crate::schema::SPECS) {
        let here = dirs.number(&path);
        for b in read_batches(&path)? {
            let ids = col::<StringArray>(&b, specs::SPEC_ID, &path)?;
            let status = col::<StringArray>(&b, specs::STATUS, &path)?;
            let dims: Vec<&StringArray> = DIMENSIONS
                .iter()
                .map(|d| col::<StringArray>(&b, d, &path))
                .collect::<Result<_>>()?;
            for n in param_columns(&b) {
                if !param_cols.contains(&n) {
                    param_cols.push(n);
                }
            }
            let metrics: Vec<&Float64Array> = super::settings::METRICS
                .iter()
                .map(|m| col::<Float64Array>(&b, m, &path))
                .collect::<Result<_>>()?;
            for i in 0..b.num_rows() {
                let id = ids.value(i).to_string();
                if seen.insert(id.clone(), ()).is_some() {
                    continue;
                }
                if status.value(i) != crate::error::Status::Ok.name() {
                    *left_out
                        .entry(format!("failed ({})", status.value(i)))
                        .or_default() += 1;
                    continue;
                }
                let params = param_cols
                    .iter()
                    .map(|n| {
                        b.column_by_name(n)
                            .and_then(|c| c.as_any().downcast_ref::<Float64Array>())
                            .and_then(|c| (!c.is_null(i)).then(|| c.value(i)))
                    })
                    .collect();
                rows.push(SpecRow {
                    id,
                    dir: here,
                    options: dims.iter().map(|c| c.value(i).to_string()).collect(),
                    params,
                    stored: metrics.iter().map(|c| c.value(i)).collect(),
                });
            }
        }
    }
    rows.sort_by(|a, b| a.id.cmp(&b.id));
    Ok((rows, param_cols))
}

/// Parameter columns: the Float64 columns between the dimensions and `status`.
fn param_columns(b: &RecordBatch) -> Vec<String> {
    let schema = b.schema();
    let names: Vec<String> = schema.fields().iter().map(|f| f.name().clone()).collect();
    let start = names
        .iter()
        .position(|n| n == DIMENSIONS[DIMENSIONS.len() - 1])
        .map(|p| p + 1)
        .unwrap_or(0);
    let end = names
        .iter()
        .position(|n| n == specs::STATUS)
        .unwrap_or(start);
    names[start..end.max(start)].to_vec()
}

/// Parameter column -> (option, parameter): the longest option name that prefixes it.
fn param_owners(rows: &[SpecRow], param_cols: &[String]) -> Vec<Option<(String, String)>> {
    let all_options: Vec<&str> = {
        let mut v: Vec<&str> = rows
            .iter()
            .flat_map(|r| r.options.iter().map(|s| s.as_str()))
            .collect();
        v.sort_unstable();
        v.dedup();
        v
    };
    param_cols
        .iter()
        .map(|c| {
            let best = all_options
                .iter()
                .filter(|o| {
                    c.len() > o.len() + 1 && c.starts_with(*o) && c.as_bytes()[o.len()] == b'_'
                })
                .max_by_key(|o| o.len());
            best.map(|o| (o.to_string(), c[o.len() + 1..].to_string()))
        })
        .collect()
}

/// A spec's choices with their parameters, e.g. `ridge(alpha=1)`, one per dimension.
fn choice_labels(r: &SpecRow, param_of: &[Option<(String, String)>]) -> Vec<String> {
    let mut ch = Vec::with_capacity(DIMENSIONS.len());
    for o in &r.options {
        let ps: Vec<String> = param_of
            .iter()
            .enumerate()
            .filter_map(|(k, p)| match (p, r.params.get(k).copied().flatten()) {
                (Some((po, pn)), Some(v)) if po == o => Some(format!("{pn}={}", fmt_param(v))),
                _ => None,
            })
            .collect();
        ch.push(if ps.is_empty() {
            o.clone()
        } else {
            format!("{o}({})", ps.join(","))
        });
    }
    ch
}

/// The specs' ids, options, choices, parameters and stored metrics into `t`.
fn set_specs(t: &mut RunTables, rows: Vec<SpecRow>, param_cols: &[String]) {
    let param_of = param_owners(&rows, param_cols);
    for (k, p) in param_of.iter().enumerate() {
        if let Some((o, name)) = p {
            let vals = rows
                .iter()
                .map(|r| r.params.get(k).copied().flatten())
                .collect();
            t.params.push((o.clone(), name.clone(), vals));
        }
    }
    for r in &rows {
        t.choices.push(choice_labels(r, &param_of));
    }
    for (m, name) in super::settings::METRICS.iter().enumerate() {
        t.stored
            .insert(name.to_string(), rows.iter().map(|r| r.stored[m]).collect());
    }
    t.options = rows.iter().map(|r| r.options.clone()).collect();
    t.spec_ids = rows.into_iter().map(|r| r.id).collect();
}

/// Predictions -> per-unit sums of absolute and squared errors and counts (spec-major),
/// the units in first-seen order and the number of panel rows (unit, wave) predicted.
/// `index` maps a spec id to its row; `source[s]` is the directory its row was kept from.
fn read_unit_errors(
    set: &RunSet,
    dirs: &mut Dirs,
    t: &mut RunTables,
    index: &HashMap<String, usize>,
    source: &[usize],
) -> Result<()> {
    let mut unit_index: HashMap<String, usize> = HashMap::new();
    let mut acc: HashMap<(usize, usize), (f64, f64, f64)> = HashMap::new();
    // The panel's rows (unit, wave) that have predictions, each counted once.
    let mut wave_index: HashMap<String, usize> = HashMap::new();
    let mut panel_rows: std::collections::HashSet<(usize, usize)> = Default::default();
    for path in set.table_files(crate::schema::PREDICTIONS) {
        let here = dirs.number(&path);
        for b in read_batches(&path)? {
            let ids = col::<StringArray>(&b, predictions::SPEC_ID, &path)?;
            let unit = col::<StringArray>(&b, predictions::UNIT, &path)?;
            let wave = col::<StringArray>(&b, predictions::WAVE, &path)?;
            let obs = col::<Float64Array>(&b, predictions::OBSERVED, &path)?;
            let pred = col::<Float64Array>(&b, predictions::PREDICTED, &path)?;
            for i in 0..b.num_rows() {
                let Some(&s) = index.get(ids.value(i)) else {
                    continue;
                };
                if source[s] != here {
                    continue;
                }
                let nu = unit_index.len();
                let u = *unit_index
                    .entry(unit.value(i).to_string())
                    .or_insert_with(|| {
                        t.units.push(unit.value(i).to_string());
                        nu
                    });
                let e = obs.value(i) - pred.value(i);
                let a = acc.entry((s, u)).or_default();
                a.0 += e.abs();
                a.1 += e * e;
                a.2 += 1.0;
                let w = if wave.is_valid(i) {
                    let v = wave.value(i);
                    match wave_index.get(v) {
                        Some(&w) => w,
                        None => {
                            let nw = wave_index.len();
                            wave_index.insert(v.to_string(), nw);
                            nw
                        }
                    }
                } else {
                    usize::MAX
                };
                panel_rows.insert((u, w));
            }
        }
    }
    t.rows = panel_rows.len();
    let (ns, nu) = (source.len(), t.units.len());
    t.unit_abs = vec![0.0; ns * nu];
    t.unit_sq = vec![0.0; ns * nu];
    t.unit_n = vec![0.0; ns * nu];
    for ((s, u), (a, q, n)) in acc {
        t.unit_abs[s * nu + u] = a;
        t.unit_sq[s * nu + u] = q;
        t.unit_n[s * nu + u] = n;
    }
    Ok(())
}

/// A spec whose predictions are missing (a part lost) cannot be resampled: left out.
fn drop_specs_without_predictions(t: RunTables) -> RunTables {
    let (ns, nu) = (t.n_specs(), t.n_units());
    let keep: Vec<bool> = (0..ns)
        .map(|s| t.unit_n[s * nu..(s + 1) * nu].iter().any(|&n| n > 0.0))
        .collect();
    if !keep.iter().any(|k| !k) {
        return t;
    }
    let n_drop = keep.iter().filter(|k| !**k).count();
    let mut t = t;
    t.left_out.insert("no predictions found".into(), n_drop);
    t.retain(&keep)
}

/// An importance row: (spec index, name, importance, rank, in pool).
type Cell = (usize, String, f64, u32, bool);

/// Importance: dense per (level, kind), over the specs of `spec_ids`, each read from the
/// directory its spec row was kept from (`kept_in`).
fn read_importance(
    set: &RunSet,
    dirs: &mut Dirs,
    spec_ids: &[String],
    kept_in: &HashMap<String, usize>,
) -> Result<Vec<KindTable>> {
    let index: HashMap<&str, usize> = spec_ids
        .iter()
        .enumerate()
        .map(|(i, s)| (s.as_str(), i))
        .collect();
    let mut by_kind: BTreeMap<(String, String), Vec<Cell>> = BTreeMap::new();
    for path in set.table_files(crate::schema::IMPORTANCE) {
        let here = dirs.number(&path);
        for b in read_batches(&path)? {
            let ids = col::<StringArray>(&b, importance::SPEC_ID, &path)?;
            let name = col::<StringArray>(&b, importance::INDICATOR, &path)?;
            let level = col::<StringArray>(&b, importance::LEVEL, &path)?;
            let kind = col::<StringArray>(&b, importance::KIND, &path)?;
            let imp = col::<Float64Array>(&b, importance::IMPORTANCE, &path)?;
            let rank = col::<Int32Array>(&b, importance::RANK, &path)?;
            let in_pool = col::<BooleanArray>(&b, importance::IN_POOL, &path)?;
            for i in 0..b.num_rows() {
                let Some(&s) = index.get(ids.value(i)) else {
                    continue;
                };
                if kept_in.get(ids.value(i)) != Some(&here) {
                    continue;
                }
                by_kind
                    .entry((level.value(i).to_string(), kind.value(i).to_string()))
                    .or_default()
                    .push((
                        s,
                        name.value(i).to_string(),
                        imp.value(i),
                        rank.value(i).max(0) as u32,
                        in_pool.value(i),
                    ));
            }
        }
    }
    Ok(by_kind
        .into_iter()
        .map(|((level, kind), cells)| dense_kind(level, kind, &cells))
        .collect())
}

/// One (level, kind)'s cells as a dense matrix over the specs holding it.
fn dense_kind(level: String, kind: String, cells: &[Cell]) -> KindTable {
    let mut names: Vec<String> = cells.iter().map(|c| c.1.clone()).collect();
    names.sort();
    names.dedup();
    let mut specs: Vec<usize> = cells.iter().map(|c| c.0).collect();
    specs.sort_unstable();
    specs.dedup();
    let m = names.len();
    let row_of: HashMap<usize, usize> = specs.iter().enumerate().map(|(i, &s)| (s, i)).collect();
    let name_of: HashMap<&str, usize> = names
        .iter()
        .enumerate()
        .map(|(j, n)| (n.as_str(), j))
        .collect();
    let mut values = vec![f64::NAN; specs.len() * m];
    let mut ranks = vec![u32::MAX; specs.len() * m];
    let mut pooled = vec![false; specs.len() * m];
    for (s, n, v, r, p) in cells {
        let (i, j) = (row_of[s], name_of[n.as_str()]);
        values[i * m + j] = *v;
        ranks[i * m + j] = *r;
        pooled[i * m + j] = *p;
    }
    // A spec lacking a name (should not happen: every spec lists every name) is
    // ranked last for it.
    for r in ranks.iter_mut() {
        if *r == u32::MAX {
            *r = m as u32;
        }
    }
    KindTable {
        level,
        kind,
        names,
        specs,
        values,
        ranks,
        in_pool: pooled,
    }
}

impl RunTables {
    pub fn n_specs(&self) -> usize {
        self.spec_ids.len()
    }
    pub fn n_units(&self) -> usize {
        self.units.len()
    }

    /// Each spec's fit class: the index of the first spec whose per-unit errors (sums of
    /// absolute and squared errors, and counts) are bit for bit its own. Specs of one class
    /// are, for the report's purposes, one fit counted several times (a scaling before a
    /// tree family changes nothing); the good sets report how many distinct fits they hold.
    pub fn fit_classes(&self) -> Vec<usize> {
        let nu = self.n_units();
        let mut first: HashMap<Vec<u64>, usize> = HashMap::new();
        (0..self.n_specs())
            .map(|s| {
                let r = s * nu..(s + 1) * nu;
                let key: Vec<u64> = self.unit_abs[r.clone()]
                    .iter()
                    .chain(&self.unit_sq[r.clone()])
                    .chain(&self.unit_n[r])
                    .map(|v| v.to_bits())
                    .collect();
                *first.entry(key).or_insert(s)
            })
            .collect()
    }

    /// Keep the specs where `keep` is true (importances are read after this).
    fn retain(self, keep: &[bool]) -> RunTables {
        let nu = self.units.len();
        let pick = |v: &Vec<f64>| -> Vec<f64> {
            v.chunks(nu.max(1))
                .zip(keep)
                .filter(|(_, k)| **k)
                .flat_map(|(c, _)| c.iter().copied())
                .collect()
        };
        let sel = |i: usize| keep[i];
        RunTables {
            spec_ids: filter_idx(self.spec_ids, sel),
            options: filter_idx(self.options, sel),
            choices: filter_idx(self.choices, sel),
            params: self
                .params
                .into_iter()
                .map(|(o, p, v)| (o, p, filter_idx(v, sel)))
                .collect(),
            stored: self
                .stored
                .into_iter()
                .map(|(k, v)| (k, filter_idx(v, sel)))
                .collect(),
            unit_abs: pick(&self.unit_abs),
            unit_sq: pick(&self.unit_sq),
            unit_n: pick(&self.unit_n),
            units: self.units,
            rows: self.rows,
            importance: Vec::new(),
            left_out: self.left_out,
        }
    }

    /// Build from in-memory pieces (tests, benches): `unit_errors[s][u]` lists the
    /// signed errors (observed - predicted) of spec s on unit u's rows.
    pub fn from_errors(
        spec_ids: Vec<String>,
        options: Vec<Vec<String>>,
        unit_errors: &[Vec<Vec<f64>>],
    ) -> RunTables {
        let nu = unit_errors.first().map(|s| s.len()).unwrap_or(0);
        let mut t = RunTables {
            choices: options.clone(),
            options,
            units: (0..nu).map(|u| format!("u{u}")).collect(),
            ..Default::default()
        };
        for s in unit_errors {
            for u in s {
                t.unit_abs.push(u.iter().map(|e| e.abs()).sum());
                t.unit_sq.push(u.iter().map(|e| e * e).sum());
                t.unit_n.push(u.len() as f64);
                t.rows += u.len();
            }
        }
        t.spec_ids = spec_ids;
        t
    }
}

fn filter_idx<T>(v: Vec<T>, keep: impl Fn(usize) -> bool) -> Vec<T> {
    v.into_iter()
        .enumerate()
        .filter(|(i, _)| keep(*i))
        .map(|(_, x)| x)
        .collect()
}
