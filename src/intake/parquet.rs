//! Parquet files, read with polars. Numeric columns are taken as numbers, text columns cell by
//! cell as in a delimited file; `line` is the 1-based data row.

use super::audit::FileAudit;
use super::cells::{self, parse_cell};
use super::text::{Dictionary, Strings};
use super::{BadCell, RawColumn, RawTable};
use crate::error::{InputError, Result};
use polars::prelude::*;

/// Bytes held per cell while a Parquet file is read: polars' frame and capstack's columns exist
/// at once, so a cell costs 8 bytes more than in a delimited file (an estimate, not measured).
const BYTES_PER_CELL: f64 = super::delimited::BYTES_PER_CELL + 8.0;

pub(crate) fn read_parquet(path: &str, keep_text: &dyn Fn(&str) -> bool) -> Result<RawTable> {
    let file = std::fs::File::open(path)
        .map_err(|e| InputError::new(format!("{path}: cannot open: {e}")))?;
    let unreadable =
        |e: PolarsError| InputError::new(format!("{path}: not a readable Parquet file: {e}"));
    // The size is in the file's footer: refuse before decompressing what cannot be held.
    let mut reader = ParquetReader::new(file);
    let rows = reader.num_rows().map_err(unreadable)?;
    let columns = reader.schema().map_err(unreadable)?.len();
    super::memory::check(path, rows, columns, BYTES_PER_CELL)?;
    let df = reader.finish().map_err(unreadable)?;
    let height = df.height();
    if height == 0 {
        return Err(InputError::new(format!(
            "{path}: the Parquet file has no data rows"
        )));
    }
    let mut columns = Vec::with_capacity(df.width());
    for col in df.columns() {
        let name = col.name().to_string();
        let keep = keep_text(&name);
        let mut out = RawColumn {
            name: name.clone(),
            numbers: Vec::with_capacity(height),
            bad: Vec::new(),
            bad_texts: Dictionary::default(),
            text: keep.then(Strings::default),
        };
        let bad = |out: &mut RawColumn, row: usize, text: &str, reason: &'static str| {
            let text = out.bad_texts.code(text);
            out.bad.push(BadCell::new(row, text, reason));
        };
        let err = |e: PolarsError| {
            InputError::at(
                path,
                None,
                Some(&name),
                format!("cannot read the column: {e}"),
            )
        };
        if col.dtype().is_primitive_numeric() && !keep {
            let as_f64 = col.cast(&DataType::Float64).map_err(err)?;
            for (r, v) in as_f64.f64().map_err(err)?.iter().enumerate() {
                match v {
                    Some(x) if x.is_finite() => out.numbers.push(x),
                    Some(x) => {
                        out.numbers.push(f64::NAN);
                        bad(&mut out, r, &format!("{x}"), cells::NON_FINITE);
                    }
                    None => {
                        out.numbers.push(f64::NAN);
                        bad(&mut out, r, "", cells::BLANK);
                    }
                }
            }
        } else {
            let as_text = col.cast(&DataType::String).map_err(err)?;
            for (r, v) in as_text.str().map_err(err)?.iter().enumerate() {
                let t = v.unwrap_or("");
                if let Some(text) = &mut out.text {
                    text.push(t.trim());
                }
                match parse_cell(t.as_bytes(), false) {
                    Ok(x) => out.numbers.push(x),
                    Err(reason) => {
                        out.numbers.push(f64::NAN);
                        bad(&mut out, r, t.trim(), reason);
                    }
                }
            }
        }
        columns.push(out);
    }
    let mut file_audit = FileAudit::new(path, b',', false);
    file_audit.delimiter = None;
    Ok(RawTable {
        columns,
        lines: (1..=height as u64).collect(),
        file_audit,
        rejected: Vec::new(),
        extra_cells: Vec::new(),
    })
}
