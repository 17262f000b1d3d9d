//! Reading a data file (CSV or Parquet, through arrow) into untyped columns: the encoding
//! and the header are checked here, every cell's meaning in the panel's intake.

use super::data_err;
use crate::error::{Error, Result};
use arrow_array::{Array, RecordBatch};
use arrow_schema::{DataType, Field, Schema};
use std::collections::HashMap;
use std::path::Path;
use std::sync::Arc;

/// One column as read from a file, before typing.
pub(crate) enum RawColumn {
    Text(Vec<Option<String>>),
    Number(Vec<Option<f64>>),
}

pub(crate) struct RawTable {
    pub(crate) names: Vec<String>,
    pub(crate) columns: Vec<RawColumn>,
    /// How to name data row i (0-based) in a message.
    csv: bool,
}

impl RawTable {
    pub(super) fn where_row(&self, i: usize) -> String {
        if self.csv {
            format!("row {} (line {})", i + 1, i + 2)
        } else {
            format!("row {}", i + 1)
        }
    }
    pub(crate) fn n_rows(&self) -> usize {
        match self.columns.first() {
            Some(RawColumn::Text(v)) => v.len(),
            Some(RawColumn::Number(v)) => v.len(),
            None => 0,
        }
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

pub(super) fn read_csv(path: &Path) -> Result<RawTable> {
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

pub(super) fn read_parquet(path: &Path) -> Result<RawTable> {
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
