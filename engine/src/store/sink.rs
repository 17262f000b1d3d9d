//! Result sink: buffered spec results written as Parquet parts, atomically.
//!
//! Every `batch_specs` results become `specs/part-NNNNN.parquet` and
//! `predictions/part-NNNNN.parquet`. Each part is written to a hidden temporary file in the
//! same folder, flushed, fsynced, renamed into place, and the folder fsynced: a part is
//! either complete or absent. The predictions part of a batch is renamed before its specs
//! part, so a spec listed in a specs part always has its predictions on disk.

use crate::error::{Error, Result};
use crate::panel::Panel;
use crate::schema as sc;
use crate::space::{ChoiceSpace, DIMENSIONS};
use crate::sweep::SpecResult;
use arrow_array::{
    ArrayRef, BooleanArray, Float64Array, Int32Array, Int64Array, RecordBatch, StringArray,
};
use arrow_schema::{DataType, Field, Schema};
use parquet::arrow::ArrowWriter;
use parquet::basic::Compression;
use parquet::file::properties::WriterProperties;
use std::fs::File;
use std::io::Write;
use std::path::{Path, PathBuf};
use std::sync::Arc;

/// Names of the output tables (one folder each under the run directory).
pub use crate::schema::TABLES;

pub struct ParquetSink<'a> {
    dir: PathBuf,
    space: &'a ChoiceSpace,
    panel: &'a Panel,
    batch: usize,
    buffer: Vec<SpecResult>,
    next_part: usize,
    pub written_specs: usize,
    pub failures: std::collections::BTreeMap<&'static str, usize>,
    /// Specs accepted with at least one note.
    pub noted: usize,
    /// Specs whose importances could not be computed.
    pub importance_failed: usize,
    /// (spec id, notes) of specs with notes in an importance-only pass (the `specs` table
    /// is not rewritten then, so the run's manifest carries them).
    pub pass_notes: Vec<(String, String)>,
    /// Second-pass mode: write only the importance table, parts named `part-iNNNNN`.
    importance_only: bool,
}

fn fsync_dir(dir: &Path) -> Result<()> {
    File::open(dir)
        .and_then(|f| f.sync_all())
        .map_err(|e| Error::io(dir, e))
}

/// Write `batch` to `dir/name` atomically (temp file, fsync, rename, fsync dir).
pub fn write_parquet_atomic(dir: &Path, name: &str, batch: &RecordBatch) -> Result<()> {
    let tmp = dir.join(format!(".{name}.tmp"));
    let dest = dir.join(name);
    let werr = |m: String| Error::Write {
        path: dest.clone(),
        msg: m,
    };
    let file = File::create(&tmp).map_err(|e| Error::io(&tmp, e))?;
    let props = WriterProperties::builder()
        .set_compression(Compression::SNAPPY)
        .build();
    let mut w =
        ArrowWriter::try_new(file, batch.schema(), Some(props)).map_err(|e| werr(e.to_string()))?;
    let res = w.write(batch).and_then(|_| w.flush());
    if let Err(e) = res {
        let _ = std::fs::remove_file(&tmp);
        return Err(werr(e.to_string()));
    }
    let file = match w.into_inner() {
        Ok(f) => f,
        Err(e) => {
            let _ = std::fs::remove_file(&tmp);
            return Err(werr(e.to_string()));
        }
    };
    if let Err(e) = file.sync_all() {
        let _ = std::fs::remove_file(&tmp);
        return Err(Error::io(&tmp, e));
    }
    drop(file);
    std::fs::rename(&tmp, &dest).map_err(|e| Error::io(&dest, e))?;
    fsync_dir(dir)
}

/// Write bytes atomically (for the manifest).
pub fn write_bytes_atomic(path: &Path, bytes: &[u8]) -> Result<()> {
    let dir = path.parent().unwrap_or(Path::new("."));
    let tmp = dir.join(format!(
        ".{}.tmp",
        path.file_name().and_then(|n| n.to_str()).unwrap_or("file")
    ));
    let mut f = File::create(&tmp).map_err(|e| Error::io(&tmp, e))?;
    f.write_all(bytes)
        .and_then(|_| f.sync_all())
        .map_err(|e| Error::io(&tmp, e))?;
    drop(f);
    std::fs::rename(&tmp, path).map_err(|e| Error::io(path, e))?;
    fsync_dir(dir)
}

impl<'a> ParquetSink<'a> {
    /// Create the table folders under `dir` (which must exist).
    pub fn new(dir: &Path, space: &'a ChoiceSpace, panel: &'a Panel, batch: usize) -> Result<Self> {
        for t in TABLES {
            let p = dir.join(t);
            std::fs::create_dir_all(&p).map_err(|e| Error::io(&p, e))?;
        }
        Ok(ParquetSink {
            dir: dir.to_path_buf(),
            space,
            panel,
            batch: batch.max(1),
            buffer: Vec::new(),
            next_part: 0,
            written_specs: 0,
            failures: Default::default(),
            noted: 0,
            importance_failed: 0,
            pass_notes: Vec::new(),
            importance_only: false,
        })
    }

    /// Continue numbering parts from `next` (resume).
    pub fn starting_at(mut self, next: usize) -> Self {
        self.next_part = next;
        self
    }

    /// A sink for a second importance pass over some specs: it writes importance parts
    /// only (`importance/part-iNNNNN.parquet`), never the other tables again.
    pub fn importance_pass(
        dir: &Path,
        space: &'a ChoiceSpace,
        panel: &'a Panel,
        batch: usize,
    ) -> Result<Self> {
        let mut s = ParquetSink::new(dir, space, panel, batch)?;
        s.importance_only = true;
        Ok(s)
    }

    pub fn accept(&mut self, r: SpecResult) -> Result<()> {
        if !r.status.is_ok() {
            *self.failures.entry(r.status.name()).or_default() += 1;
        }
        if !r.notes.is_empty() {
            self.noted += 1;
            if self.importance_only {
                self.pass_notes
                    .push((self.space.specs[r.spec].id.clone(), r.notes.join("; ")));
            }
        }
        if r.importance_failed {
            self.importance_failed += 1;
        }
        self.buffer.push(r);
        if self.buffer.len() >= self.batch {
            self.flush()?;
        }
        Ok(())
    }

    pub fn flush(&mut self) -> Result<()> {
        if self.buffer.is_empty() {
            return Ok(());
        }
        // Stable order inside a part: by spec id.
        self.buffer.sort_by(|a, b| {
            self.space.specs[a.spec]
                .id
                .cmp(&self.space.specs[b.spec].id)
        });
        if self.importance_only {
            let name = format!("part-i{:05}.parquet", self.next_part);
            let importance = self.importance_batch()?;
            write_parquet_atomic(&self.dir.join(sc::IMPORTANCE), &name, &importance)?;
            self.written_specs += self.buffer.len();
            self.buffer.clear();
            self.next_part += 1;
            return Ok(());
        }
        let name = format!("part-{:05}.parquet", self.next_part);
        let preds = self.predictions_batch()?;
        write_parquet_atomic(&self.dir.join(sc::PREDICTIONS), &name, &preds)?;
        let loadings = self.loadings_batch()?;
        write_parquet_atomic(&self.dir.join(sc::LOADINGS), &name, &loadings)?;
        let importance = self.importance_batch()?;
        write_parquet_atomic(&self.dir.join(sc::IMPORTANCE), &name, &importance)?;
        let specs = self.specs_batch()?;
        write_parquet_atomic(&self.dir.join(sc::SPECS), &name, &specs)?;
        self.written_specs += self.buffer.len();
        self.buffer.clear();
        self.next_part += 1;
        Ok(())
    }

    fn batch_err(&self, e: arrow_schema::ArrowError) -> Error {
        Error::Write {
            path: self.dir.clone(),
            msg: e.to_string(),
        }
    }

    fn specs_batch(&self) -> Result<RecordBatch> {
        let rs = &self.buffer;
        let specs = &self.space.specs;
        let mut fields = vec![
            Field::new(sc::specs::SPEC_ID, DataType::Utf8, false),
            Field::new(sc::specs::SPEC_LABEL, DataType::Utf8, false),
        ];
        let mut cols: Vec<ArrayRef> = vec![
            Arc::new(StringArray::from_iter_values(
                rs.iter().map(|r| specs[r.spec].id.as_str()),
            )),
            Arc::new(StringArray::from_iter_values(
                rs.iter().map(|r| specs[r.spec].label()),
            )),
        ];
        for (d, dim) in DIMENSIONS.iter().enumerate() {
            fields.push(Field::new(*dim, DataType::Utf8, false));
            cols.push(Arc::new(StringArray::from_iter_values(
                rs.iter().map(|r| specs[r.spec].choices[d].option.as_str()),
            )));
        }
        for (opt, param) in self.space.param_columns() {
            fields.push(Field::new(
                format!("{opt}_{param}"),
                DataType::Float64,
                true,
            ));
            cols.push(Arc::new(Float64Array::from_iter(rs.iter().map(|r| {
                specs[r.spec]
                    .choices
                    .iter()
                    .find(|c| c.option == opt)
                    .and_then(|c| c.param(param))
            }))));
        }
        fields.push(Field::new(sc::specs::STATUS, DataType::Utf8, false));
        cols.push(Arc::new(StringArray::from_iter_values(
            rs.iter().map(|r| r.status.name()),
        )));
        fields.push(Field::new(sc::specs::MESSAGE, DataType::Utf8, true));
        cols.push(Arc::new(StringArray::from_iter(
            rs.iter().map(|r| r.message.as_deref()),
        )));
        fields.push(Field::new(sc::specs::NOTES, DataType::Utf8, true));
        cols.push(Arc::new(StringArray::from_iter(
            rs.iter()
                .map(|r| (!r.notes.is_empty()).then(|| r.notes.join("; "))),
        )));
        // An undefined metric (NaN, or infinite skill over an exact baseline) is null, so
        // it never sorts as a value.
        for (k, name) in crate::metrics::METRIC_COLUMNS.iter().enumerate() {
            fields.push(Field::new(*name, DataType::Float64, true));
            cols.push(Arc::new(Float64Array::from_iter(rs.iter().map(|r| {
                r.scores
                    .as_ref()
                    .map(|s| s.columns()[k].1)
                    .filter(|v| v.is_finite())
            }))));
        }
        fields.push(Field::new(sc::specs::N_PREDICTIONS, DataType::Int64, false));
        cols.push(Arc::new(Int64Array::from_iter_values(
            rs.iter().map(|r| r.predictions.len() as i64),
        )));
        fields.push(Field::new(sc::specs::SECONDS, DataType::Float64, false));
        cols.push(Arc::new(Float64Array::from_iter_values(
            rs.iter().map(|r| r.seconds),
        )));
        fields.push(Field::new(
            sc::specs::IMPORTANCE_SECONDS,
            DataType::Float64,
            false,
        ));
        cols.push(Arc::new(Float64Array::from_iter_values(
            rs.iter().map(|r| r.importance_seconds),
        )));
        RecordBatch::try_new(Arc::new(Schema::new(fields)), cols).map_err(|e| self.batch_err(e))
    }

    fn importance_batch(&self) -> Result<RecordBatch> {
        let n: usize = self.buffer.iter().map(|r| r.importance.len()).sum();
        let mut id = Vec::with_capacity(n);
        let (mut name, mut level, mut kind) = (
            Vec::with_capacity(n),
            Vec::with_capacity(n),
            Vec::with_capacity(n),
        );
        let (mut imp, mut spread, mut rank, mut in_pool) = (
            Vec::with_capacity(n),
            Vec::with_capacity(n),
            Vec::with_capacity(n),
            Vec::with_capacity(n),
        );
        for r in &self.buffer {
            let sid = self.space.specs[r.spec].id.as_str();
            for row in &r.importance {
                id.push(sid);
                name.push(&*row.name);
                level.push(row.level);
                kind.push(row.kind);
                imp.push(row.importance);
                spread.push(row.spread);
                rank.push(row.rank as i32);
                in_pool.push(row.in_pool);
            }
        }
        let schema = Schema::new(vec![
            Field::new(sc::importance::SPEC_ID, DataType::Utf8, false),
            Field::new(sc::importance::INDICATOR, DataType::Utf8, false),
            Field::new(sc::importance::LEVEL, DataType::Utf8, false),
            Field::new(sc::importance::KIND, DataType::Utf8, false),
            Field::new(sc::importance::IMPORTANCE, DataType::Float64, false),
            Field::new(sc::importance::SPREAD, DataType::Float64, false),
            Field::new(sc::importance::RANK, DataType::Int32, false),
            Field::new(sc::importance::IN_POOL, DataType::Boolean, false),
        ]);
        let cols: Vec<ArrayRef> = vec![
            Arc::new(StringArray::from(id)),
            Arc::new(StringArray::from(name)),
            Arc::new(StringArray::from(level)),
            Arc::new(StringArray::from(kind)),
            Arc::new(Float64Array::from(imp)),
            Arc::new(Float64Array::from(spread)),
            Arc::new(Int32Array::from(rank)),
            Arc::new(arrow_array::BooleanArray::from(in_pool)),
        ];
        RecordBatch::try_new(Arc::new(schema), cols).map_err(|e| self.batch_err(e))
    }

    fn loadings_batch(&self) -> Result<RecordBatch> {
        let (mut id, mut comp, mut ind, mut val) = (Vec::new(), Vec::new(), Vec::new(), Vec::new());
        for r in &self.buffer {
            let Some(l) = &r.loadings else { continue };
            let sid = self.space.specs[r.spec].id.as_str();
            for (c, cname) in l.components.iter().enumerate() {
                for (j, iname) in l.indicators.iter().enumerate() {
                    id.push(sid);
                    comp.push(cname.as_str());
                    ind.push(iname.as_str());
                    val.push(l.values[[c, j]]);
                }
            }
        }
        let schema = Schema::new(vec![
            Field::new(sc::loadings::SPEC_ID, DataType::Utf8, false),
            Field::new(sc::loadings::COMPONENT, DataType::Utf8, false),
            Field::new(sc::loadings::INDICATOR, DataType::Utf8, false),
            Field::new(sc::loadings::LOADING, DataType::Float64, false),
        ]);
        let cols: Vec<ArrayRef> = vec![
            Arc::new(StringArray::from(id)),
            Arc::new(StringArray::from(comp)),
            Arc::new(StringArray::from(ind)),
            Arc::new(Float64Array::from(val)),
        ];
        RecordBatch::try_new(Arc::new(schema), cols).map_err(|e| self.batch_err(e))
    }

    fn predictions_batch(&self) -> Result<RecordBatch> {
        let rs = &self.buffer;
        let n: usize = rs.iter().map(|r| r.predictions.len()).sum();
        let mut id = Vec::with_capacity(n);
        let mut unit = Vec::with_capacity(n);
        let mut wave: Vec<Option<&str>> = Vec::with_capacity(n);
        let (mut obs, mut pred, mut fold, mut rep) = (
            Vec::with_capacity(n),
            Vec::with_capacity(n),
            Vec::with_capacity(n),
            Vec::with_capacity(n),
        );
        for r in rs {
            let sid = self.space.specs[r.spec].id.as_str();
            for p in &r.predictions {
                let row = p.row as usize;
                id.push(sid);
                unit.push(self.panel.units[self.panel.row_unit[row]].as_str());
                wave.push(self.panel.row_wave[row].as_deref());
                obs.push(self.panel.y[row]);
                pred.push(p.value);
                fold.push(p.fold as i32);
                rep.push(p.repeat as i32);
            }
        }
        let schema = Schema::new(vec![
            Field::new(sc::predictions::SPEC_ID, DataType::Utf8, false),
            Field::new(sc::predictions::UNIT, DataType::Utf8, false),
            Field::new(sc::predictions::WAVE, DataType::Utf8, true),
            Field::new(sc::predictions::OBSERVED, DataType::Float64, false),
            Field::new(sc::predictions::PREDICTED, DataType::Float64, false),
            Field::new(sc::predictions::FOLD, DataType::Int32, false),
            Field::new(sc::predictions::REPEAT, DataType::Int32, false),
        ]);
        let cols: Vec<ArrayRef> = vec![
            Arc::new(StringArray::from(id)),
            Arc::new(StringArray::from(unit)),
            Arc::new(StringArray::from(wave)),
            Arc::new(Float64Array::from(obs)),
            Arc::new(Float64Array::from(pred)),
            Arc::new(Int32Array::from(fold)),
            Arc::new(Int32Array::from(rep)),
        ];
        RecordBatch::try_new(Arc::new(schema), cols).map_err(|e| self.batch_err(e))
    }
}

/// Columns of one Parquet table, built by name and type, then written atomically as
/// `DIR/NAME.parquet` (the report's and the curves' tables).
#[derive(Default)]
pub struct Cols {
    fields: Vec<Field>,
    cols: Vec<ArrayRef>,
}

impl Cols {
    pub fn s<I: IntoIterator<Item = S>, S: AsRef<str>>(mut self, name: &str, v: I) -> Self {
        let a: Vec<String> = v.into_iter().map(|x| x.as_ref().to_string()).collect();
        self.fields.push(Field::new(name, DataType::Utf8, false));
        self.cols.push(Arc::new(StringArray::from(a)));
        self
    }
    /// A nullable text column.
    pub fn os<I: IntoIterator<Item = Option<String>>>(mut self, name: &str, v: I) -> Self {
        let a: Vec<Option<String>> = v.into_iter().collect();
        self.fields.push(Field::new(name, DataType::Utf8, true));
        self.cols.push(Arc::new(StringArray::from(a)));
        self
    }
    pub fn f<I: IntoIterator<Item = f64>>(mut self, name: &str, v: I) -> Self {
        self.fields.push(Field::new(name, DataType::Float64, false));
        self.cols.push(Arc::new(Float64Array::from_iter_values(v)));
        self
    }
    /// A nullable number column: NaN (undefined) is written as null.
    pub fn of<I: IntoIterator<Item = f64>>(mut self, name: &str, v: I) -> Self {
        let a: Vec<Option<f64>> = v.into_iter().map(|x| (!x.is_nan()).then_some(x)).collect();
        self.fields.push(Field::new(name, DataType::Float64, true));
        self.cols.push(Arc::new(Float64Array::from(a)));
        self
    }
    pub fn i<I: IntoIterator<Item = i64>>(mut self, name: &str, v: I) -> Self {
        self.fields.push(Field::new(name, DataType::Int64, false));
        self.cols.push(Arc::new(Int64Array::from_iter_values(v)));
        self
    }
    pub fn b<I: IntoIterator<Item = bool>>(mut self, name: &str, v: I) -> Self {
        let a: Vec<bool> = v.into_iter().collect();
        self.fields.push(Field::new(name, DataType::Boolean, false));
        self.cols.push(Arc::new(BooleanArray::from(a)));
        self
    }
    pub fn write(self, dir: &Path, name: &str) -> Result<PathBuf> {
        let file = format!("{name}.parquet");
        let batch =
            RecordBatch::try_new(Arc::new(Schema::new(self.fields)), self.cols).map_err(|e| {
                Error::Write {
                    path: dir.join(&file),
                    msg: e.to_string(),
                }
            })?;
        write_parquet_atomic(dir, &file, &batch)?;
        Ok(dir.join(file))
    }
}
