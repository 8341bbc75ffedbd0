//! Reading inspection data: wide and long layouts, delimiters, decimal commas, Parquet,
//! spec sheets, and the audit that accounts for every row and cell read.
//!
//! Everything is read into one [`Dataset`]: a table of parts (rows) by features (columns of
//! `f64`, `NaN` where a part has no usable value), text attributes for grouping and ordering,
//! and an [`Audit`] listing every value that was not used and why.

mod audit;
mod cells;
mod delimited;
mod long;
mod memory;
mod parquet;
mod specs;
mod text;

pub use audit::{Audit, FileAudit, Issue, RejectedRow, Unused};
pub use specs::{read_spec_sheet, read_spec_sheets, Spec, SpecSet};
pub use text::{Dictionary, Strings, TextColumn, NO_LEVEL};

use crate::error::{InputError, Result};
use rayon::prelude::*;
use std::collections::HashMap;
use std::path::Path;

/// How the rows of a file are laid out.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Layout {
    Auto,
    /// One row per part, one column per feature.
    Wide,
    /// One row per measurement: part, feature, value.
    Long,
}

/// What the user told us about the files; validated once before reading.
#[derive(Debug, Clone)]
pub struct ReadOptions {
    pub layout: Layout,
    pub id_col: Option<String>,
    pub part_col: String,
    pub feature_col: String,
    pub value_col: String,
    /// Columns forced to be text attributes even when they look numeric.
    pub text_cols: Vec<String>,
    /// Restrict the features to these (all numeric columns when `None`).
    pub features: Option<Vec<String>>,
}

impl Default for ReadOptions {
    fn default() -> Self {
        Self {
            layout: Layout::Auto,
            id_col: None,
            part_col: "part".into(),
            feature_col: "feature".into(),
            value_col: "value".into(),
            text_cols: Vec::new(),
            features: None,
        }
    }
}

/// One feature: a value per part row, `NaN` where the part has none.
#[derive(Debug, Clone)]
pub struct FeatureColumn {
    pub name: String,
    pub values: Vec<f64>,
}

/// All inspection data of one run, as parts by features.
#[derive(Debug, Clone, Default)]
pub struct Dataset {
    pub files: Vec<String>,
    pub features: Vec<FeatureColumn>,
    /// Text attributes (lot, cavity, supplier, date, …), plus `source_file`.
    pub attributes: Vec<TextColumn>,
    /// Part ids per row; empty when no file had an id column (the row number is the id).
    pub part_ids: Strings,
    /// The file index and physical line of each part row (the first line, for long data).
    pub row_file: Vec<u32>,
    pub row_line: Vec<u64>,
    /// The physical line of each long-layout value, by (feature, row); wide rows use `row_line`.
    pub cell_lines: HashMap<(usize, usize), u64>,
    /// Specs found inside long data (`nominal`, `lsl`, `usl` columns).
    pub embedded_specs: SpecSet,
    pub audit: Audit,
}

/// The attribute that tags each row with the file it came from.
pub const SOURCE_FILE: &str = "source_file";

impl Dataset {
    pub fn rows(&self) -> usize {
        self.row_line.len()
    }

    pub fn feature(&self, name: &str) -> Option<&FeatureColumn> {
        self.features.iter().find(|f| f.name == name)
    }

    pub fn attribute(&self, name: &str) -> Option<&TextColumn> {
        self.attributes.iter().find(|a| a.name == name)
    }

    /// The part id of a row: the id column where there is one, else the 1-based row number.
    pub fn part_id(&self, row: usize) -> String {
        match self.part_ids.get(row) {
            Some(id) if !id.is_empty() => id.to_string(),
            _ => (row + 1).to_string(),
        }
    }

    /// The line a value was read from.
    pub fn value_line(&self, feature: usize, row: usize) -> u64 {
        self.cell_lines
            .get(&(feature, row))
            .copied()
            .unwrap_or(self.row_line[row])
    }

    fn feature_index(&mut self, name: &str) -> usize {
        if let Some(i) = self.features.iter().position(|f| f.name == name) {
            return i;
        }
        // Empty: the reader fills it to the rows it has, `pad_columns` pads the rest.
        self.features.push(FeatureColumn {
            name: name.to_string(),
            values: Vec::new(),
        });
        self.features.len() - 1
    }

    fn attribute_index(&mut self, name: &str) -> usize {
        if let Some(i) = self.attributes.iter().position(|a| a.name == name) {
            return i;
        }
        self.attributes.push(TextColumn::new(name));
        self.attributes.len() - 1
    }

    /// Pads every column to the current row count (a file lacking a column contributes nothing).
    fn pad_columns(&mut self) {
        let rows = self.rows();
        for f in &mut self.features {
            f.values.resize(rows, f64::NAN);
        }
        for a in &mut self.attributes {
            a.pad_to(rows);
        }
        if !self.part_ids.is_empty() {
            self.part_ids.pad_to(rows);
        }
    }
}

/// Reads every data file into one dataset, then runs the audit checks that need the whole
/// table and the specs (plausible range, resolution, distinct values, duplicate parts).
pub fn read_files(paths: &[String], options: &ReadOptions, specs: &SpecSet) -> Result<Dataset> {
    if paths.is_empty() {
        return Err(InputError::new("no data file given"));
    }
    let mut data = Dataset::default();
    for path in paths {
        read_one(path, options, specs, &mut data)?;
    }
    if data.features.is_empty() {
        return Err(InputError::new(format!(
            "{}: no feature column found (a feature column holds mostly numbers; name features with --features or a spec sheet)",
            paths.join(", ")
        )));
    }
    if let Some(wanted) = &options.features {
        for w in wanted {
            if data.feature(w).is_none() {
                return Err(InputError::new(format!(
                    "--features names '{w}', which no data file has as a numeric column (features: {})",
                    data.features.iter().map(|f| f.name.as_str()).collect::<Vec<_>>().join(", ")
                )));
            }
        }
    }
    audit::check_dataset(&mut data, specs);
    Ok(data)
}

fn read_one(path: &str, options: &ReadOptions, specs: &SpecSet, data: &mut Dataset) -> Result<()> {
    let p = Path::new(path);
    if !p.exists() {
        return Err(InputError::new(format!("{path}: no such file")));
    }
    if p.is_dir() {
        return Err(InputError::new(format!(
            "{path}: is a directory, not a data file"
        )));
    }
    let file_index = data.files.len() as u32;
    data.files.push(path.to_string());
    let is_parquet = p
        .extension()
        .is_some_and(|e| e.eq_ignore_ascii_case("parquet"));
    // Cells whose text matters as written (ids, forced text, the long layout's keys).
    let keep_text = |name: &str| {
        options.id_col.as_deref() == Some(name)
            || (options.id_col.is_none() && is_default_id(name))
            || options.text_cols.iter().any(|t| t == name)
            || name == options.part_col
            || name == options.feature_col
    };
    let table = if is_parquet {
        parquet::read_parquet(path, &keep_text)?
    } else {
        delimited::read_delimited(path, &keep_text)?
    };
    let layout = match options.layout {
        Layout::Auto => {
            let has = |c: &str| table.columns.iter().any(|h| h.name == c);
            if has(&options.part_col) && has(&options.feature_col) && has(&options.value_col) {
                Layout::Long
            } else {
                Layout::Wide
            }
        }
        l => l,
    };
    match layout {
        Layout::Long => long::add_long(path, file_index, table, options, data)?,
        _ => add_wide(path, file_index, table, options, specs, data)?,
    }
    data.pad_columns();
    Ok(())
}

/// A file's cells as read, before the columns are given roles.
pub(crate) struct RawTable {
    pub columns: Vec<RawColumn>,
    /// Physical line of each data row.
    pub lines: Vec<u64>,
    pub file_audit: FileAudit,
    pub rejected: Vec<RejectedRow>,
    pub extra_cells: Vec<Unused>,
}

/// One column of a file: numbers where the cell parsed, and the cells that did not.
pub(crate) struct RawColumn {
    pub name: String,
    /// Per row: the number, or NaN (see `bad`).
    pub numbers: Vec<f64>,
    /// Cells that were not a finite number (blank ones too), in row order.
    pub bad: Vec<BadCell>,
    /// The texts of the bad cells, by their code.
    pub bad_texts: Dictionary,
    /// The text of each cell as written (trimmed), kept only for columns that may be ids or
    /// keys (see `read_one`).
    pub text: Option<Strings>,
}

/// A cell that was not a finite number, in 12 bytes (a column of a million lot codes is a
/// million of them).
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct BadCell {
    row: u32,
    /// Code of its text in the column's `bad_texts`, or [`KEPT_TEXT`].
    pub text: u32,
    reason: u8,
}

/// The reasons a cell is not used, as stored in a [`BadCell`].
const REASONS: [&str; 3] = [cells::BLANK, cells::NON_NUMERIC, cells::NON_FINITE];

impl BadCell {
    /// A bad cell at `row` of its file (rows beyond 2³² − 1, which no machine could hold as
    /// numbers anyway, are recorded at the last row).
    pub fn new(row: usize, text: u32, reason: &'static str) -> Self {
        Self {
            row: u32::try_from(row).unwrap_or(u32::MAX),
            text,
            reason: REASONS.iter().position(|r| *r == reason).unwrap_or(1) as u8,
        }
    }

    pub fn row(&self) -> usize {
        self.row as usize
    }

    pub fn reason(&self) -> &'static str {
        REASONS[self.reason as usize]
    }

    /// The same cell `by` rows further down.
    pub fn shifted(self, by: usize, text: u32) -> Self {
        Self::new(self.row() + by, text, self.reason())
    }
}

/// The text of the bad cell is the column's kept text of that row.
pub(crate) const KEPT_TEXT: u32 = u32::MAX;

impl RawColumn {
    /// Non-blank cells that are not numbers count against "most cells are numbers".
    pub fn is_mostly_numeric(&self) -> bool {
        let non_numeric = self
            .bad
            .iter()
            .filter(|b| b.reason() == cells::NON_NUMERIC)
            .count();
        let numeric = self.numbers.len() - self.bad.len();
        numeric > non_numeric
    }

    /// The text of a bad cell as found.
    pub fn bad_text(&self, b: &BadCell) -> &str {
        match (b.text, &self.text) {
            (KEPT_TEXT, Some(t)) => t.get(b.row()).unwrap_or_default(),
            (KEPT_TEXT, None) => "",
            (code, _) => self.bad_texts.get(code),
        }
    }

    /// The text of a cell, `None` when blank.
    pub fn cell_text(&self, row: usize) -> Option<String> {
        if let Some(t) = &self.text {
            return t.get(row).filter(|s| !s.is_empty()).map(str::to_string);
        }
        let v = self.numbers[row];
        if v.is_nan() {
            // `bad` is in row order.
            let i = self.bad.binary_search_by_key(&row, |b| b.row()).ok()?;
            Some(self.bad_text(&self.bad[i]).to_string()).filter(|s| !s.trim().is_empty())
        } else {
            Some(cells::format_number(v))
        }
    }

    /// The column as codes of `into` (one per row, [`NO_LEVEL`] for blank cells): each distinct
    /// text is looked up once, not once per row.
    fn codes_into(&self, into: &mut TextColumn) -> Vec<u32> {
        if let Some(t) = &self.text {
            return t
                .iter()
                .map(|s| {
                    if s.is_empty() {
                        NO_LEVEL
                    } else {
                        into.intern(s)
                    }
                })
                .collect();
        }
        let remap: Vec<u32> = self
            .bad_texts
            .levels
            .iter()
            .map(|s| {
                let s = s.trim();
                if s.is_empty() {
                    NO_LEVEL
                } else {
                    into.intern(s)
                }
            })
            .collect();
        let mut bad = self.bad.iter().peekable();
        (0..self.numbers.len())
            .map(|r| match bad.peek() {
                Some(b) if b.row() == r => {
                    let b = bad.next().expect("peeked");
                    if b.text == KEPT_TEXT {
                        NO_LEVEL
                    } else {
                        remap[b.text as usize]
                    }
                }
                _ => into.intern(&cells::format_number(self.numbers[r])),
            })
            .collect()
    }
}

fn is_default_id(name: &str) -> bool {
    ["part", "part_id", "serial", "id"]
        .iter()
        .any(|c| c.eq_ignore_ascii_case(name))
}

/// The rows in which every feature column is empty (NaN).
fn rows_without_value(columns: &[RawColumn], roles: &[Role]) -> Vec<usize> {
    let features: Vec<&RawColumn> = columns
        .iter()
        .zip(roles)
        .filter(|(_, r)| **r == Role::Feature)
        .map(|(c, _)| c)
        .collect();
    // Every NaN a reader writes is one of its column's bad cells: one clean feature column
    // gives every row a value, and spares the pass over the whole table.
    if features.iter().any(|c| c.bad.is_empty()) {
        return Vec::new();
    }
    let rows = features.first().map_or(0, |c| c.numbers.len());
    let mut row_has_value = vec![false; rows];
    const CHUNK: usize = 1 << 16;
    row_has_value
        .par_chunks_mut(CHUNK)
        .enumerate()
        .for_each(|(k, has)| {
            for col in &features {
                let part = &col.numbers[k * CHUNK..(k * CHUNK + has.len())];
                for (h, v) in has.iter_mut().zip(part) {
                    *h |= !v.is_nan();
                }
            }
        });
    (0..rows).filter(|&r| !row_has_value[r]).collect()
}

/// Wide layout: each row a part, each numeric column a feature, other columns text attributes.
fn add_wide(
    path: &str,
    file_index: u32,
    table: RawTable,
    options: &ReadOptions,
    specs: &SpecSet,
    data: &mut Dataset,
) -> Result<()> {
    let RawTable {
        columns,
        lines,
        mut file_audit,
        rejected,
        extra_cells,
    } = table;
    let id_col = match &options.id_col {
        Some(name) => Some(
            columns
                .iter()
                .position(|c| &c.name == name)
                .ok_or_else(|| {
                    InputError::new(format!(
                        "{path}: --id names column '{name}', which is not in the header"
                    ))
                })?,
        ),
        None => columns.iter().position(|c| is_default_id(&c.name)),
    };
    let mut roles = Vec::with_capacity(columns.len());
    for (i, col) in columns.iter().enumerate() {
        let forced_text = options.text_cols.iter().any(|t| t == &col.name);
        let named = specs.get(&col.name).is_some()
            || options
                .features
                .as_ref()
                .is_some_and(|f| f.contains(&col.name));
        let role = if Some(i) == id_col {
            Role::Id
        } else if forced_text {
            Role::Text
        } else if named || col.is_mostly_numeric() {
            match &options.features {
                Some(f) if !f.contains(&col.name) => Role::Skipped,
                _ => Role::Feature,
            }
        } else {
            Role::Text
        };
        roles.push(role);
    }
    if !roles.contains(&Role::Feature) {
        let any_numeric = columns
            .iter()
            .zip(&roles)
            .any(|(c, r)| *r != Role::Id && c.is_mostly_numeric());
        let hint = if any_numeric {
            " (--features or --text left none)"
        } else {
            ""
        };
        return Err(InputError::new(format!(
            "{path}: no feature column: no column holds mostly numbers{hint}"
        )));
    }

    let first_row = data.rows();
    let rows = lines.len();
    // Rows with no usable feature value are rejected (they still count as read).
    let mut rejected = rejected;
    for r in rows_without_value(&columns, &roles) {
        rejected.push(RejectedRow {
            file: path.to_string(),
            line: lines[r],
            reason: "no usable feature value".into(),
        });
    }
    let mut unused = Vec::new();

    if data.row_line.is_empty() {
        data.row_line = lines;
    } else {
        data.row_line.extend_from_slice(&lines);
    }
    data.row_file.extend(std::iter::repeat_n(file_index, rows));
    let src = data.attribute_index(SOURCE_FILE);
    let source = &mut data.attributes[src];
    source.pad_to(first_row);
    let code = source.intern(path);
    source.codes.resize(first_row + rows, code);
    for (col, role) in columns.into_iter().zip(roles) {
        match role {
            Role::Feature => {
                let fi = data.feature_index(&col.name);
                let values = &mut data.features[fi].values;
                values.resize(first_row, f64::NAN);
                file_audit.cells_read += rows as u64;
                file_audit.values_used += (rows - col.bad.len()) as u64;
                for b in &col.bad {
                    unused.push(Unused {
                        file: path.to_string(),
                        line: data.row_line[first_row + b.row()],
                        column: col.name.clone(),
                        text: col.bad_text(b).to_string(),
                        reason: b.reason().to_string(),
                    });
                }
                if values.is_empty() {
                    *values = col.numbers;
                } else {
                    values.extend_from_slice(&col.numbers);
                }
                file_audit.features.push(col.name);
            }
            Role::Text | Role::Id => {
                let is_id = role == Role::Id;
                if is_id {
                    data.part_ids.pad_to(first_row);
                    match col.text {
                        Some(text) => data.part_ids.append(text),
                        None => (0..rows).for_each(|r| {
                            data.part_ids.push(&col.cell_text(r).unwrap_or_default())
                        }),
                    }
                } else {
                    let ai = data.attribute_index(&col.name);
                    let attr = &mut data.attributes[ai];
                    attr.pad_to(first_row);
                    let codes = col.codes_into(attr);
                    attr.codes.extend(codes);
                    file_audit.attributes.push(col.name);
                }
            }
            Role::Skipped => {}
        }
    }
    file_audit.layout = Layout::Wide;
    file_audit.rows_read = rows as u64 + file_audit.blank_rows;
    file_audit.rows_rejected = rejected.len() as u64;
    file_audit.rows_used = file_audit.rows_read - file_audit.rows_rejected;
    data.audit.unused.extend(unused);
    data.audit.unused.extend(extra_cells);
    data.audit.rejected_rows.extend(rejected);
    data.audit.files.push(file_audit);
    Ok(())
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Role {
    Id,
    Feature,
    Text,
    Skipped,
}

/// Specs for each feature: the spec sheet first, then specs embedded in long data. The two
/// must agree where both speak of one feature.
pub fn merge_specs(sheet: &SpecSet, embedded: &SpecSet) -> Result<SpecSet> {
    let mut out = sheet.clone();
    for (name, spec) in embedded.iter() {
        match out.get(name) {
            Some(existing) if !existing.same_limits(spec) => {
                return Err(InputError::new(format!(
                    "conflicting specs for feature '{name}': {} gives {} but {} gives {}",
                    existing.source,
                    existing.describe(),
                    spec.source,
                    spec.describe()
                )));
            }
            Some(_) => {}
            None => out.insert(name.clone(), spec.clone()),
        }
    }
    Ok(out)
}
