//! Long layout: one row per measurement (part, feature, value), pivoted into parts by
//! features. Specs may ride along in `nominal`, `lsl`, `usl` columns.

use super::audit::{RejectedRow, Unused};
use super::{Dataset, Layout, RawTable, ReadOptions, Spec, SOURCE_FILE};
use crate::error::{InputError, Result};
use std::collections::HashMap;

pub(super) fn add_long(
    path: &str,
    file_index: u32,
    table: RawTable,
    options: &ReadOptions,
    data: &mut Dataset,
) -> Result<()> {
    let RawTable {
        columns,
        lines,
        mut file_audit,
        mut rejected,
        extra_cells,
    } = table;
    let find = |name: &str, flag: &str| {
        columns.iter().position(|c| c.name == name).ok_or_else(|| {
            InputError::new(format!("{path}: long layout needs a '{name}' column ({flag} renames it); the header has: {}",
                columns.iter().map(|c| c.name.as_str()).collect::<Vec<_>>().join(", ")))
        })
    };
    let part_c = find(&options.part_col, "--part-col")?;
    let feat_c = find(&options.feature_col, "--feature-col")?;
    let val_c = find(&options.value_col, "--value-col")?;
    let spec_c: Vec<Option<usize>> = ["nominal", "lsl", "usl"]
        .iter()
        .map(|n| columns.iter().position(|c| c.name.eq_ignore_ascii_case(n)))
        .collect();
    let attr_cols: Vec<usize> = (0..columns.len())
        .filter(|i| ![part_c, feat_c, val_c].contains(i) && !spec_c.contains(&Some(*i)))
        .collect();

    // Bad cells of the value column, by row.
    let bad_value: HashMap<usize, (&str, &'static str)> = columns[val_c]
        .bad
        .iter()
        .map(|b| (b.row(), (columns[val_c].bad_text(b), b.reason())))
        .collect();
    let spec_bad: Vec<HashMap<usize, &str>> = spec_c
        .iter()
        .map(|c| {
            c.map_or_else(HashMap::new, |c| {
                columns[c]
                    .bad
                    .iter()
                    .filter(|b| b.reason() != super::cells::BLANK)
                    .map(|b| (b.row(), columns[c].bad_text(b)))
                    .collect()
            })
        })
        .collect();

    let mut part_rows: HashMap<(String, usize), Vec<usize>> = HashMap::new();
    let mut occurrences: HashMap<(String, usize, usize), usize> = HashMap::new();
    let mut feature_specs: HashMap<usize, Spec> = HashMap::new();
    let src = data.attribute_index(SOURCE_FILE);
    let attr_idx: Vec<usize> = attr_cols
        .iter()
        .map(|&c| data.attribute_index(&columns[c].name))
        .collect();
    let value_name = columns[val_c].name.clone();
    let mut unused = Vec::new();
    let mut used_rows = 0u64;

    for (r, &line) in lines.iter().enumerate() {
        let part = columns[part_c].cell_text(r);
        let feature = columns[feat_c].cell_text(r);
        file_audit.cells_read += 1;
        let reject = |reason: &str, unused: &mut Vec<Unused>, rejected: &mut Vec<RejectedRow>| {
            let text = bad_value.get(&r).map_or_else(
                || super::cells::format_number(columns[val_c].numbers[r]),
                |b| b.0.to_string(),
            );
            unused.push(Unused {
                file: path.to_string(),
                line,
                column: value_name.clone(),
                text,
                reason: reason.to_string(),
            });
            rejected.push(RejectedRow {
                file: path.to_string(),
                line,
                reason: reason.to_string(),
            });
        };
        let (Some(part), Some(feature)) = (part, feature) else {
            let why = if columns[part_c].cell_text(r).is_none() {
                "no part id"
            } else {
                "no feature name"
            };
            reject(why, &mut unused, &mut rejected);
            continue;
        };
        if options
            .features
            .as_ref()
            .is_some_and(|f| !f.contains(&feature))
        {
            rejected.push(RejectedRow {
                file: path.to_string(),
                line,
                reason: "feature not selected (--features)".into(),
            });
            file_audit.cells_read -= 1;
            continue;
        }
        if let Some((_, why)) = bad_value.get(&r) {
            reject(why, &mut unused, &mut rejected);
            continue;
        }
        for (k, c) in spec_c.iter().enumerate() {
            if let (Some(c), Some(text)) = (c, spec_bad[k].get(&r)) {
                return Err(InputError::at(
                    path,
                    Some(line),
                    Some(&columns[*c].name),
                    format!("'{text}' is not a number"),
                ));
            }
        }
        let fi = data.feature_index(&feature);
        let spec_vals: Vec<Option<f64>> = spec_c
            .iter()
            .map(|c| c.map(|c| columns[c].numbers[r]).filter(|v| !v.is_nan()))
            .collect();
        if spec_vals.iter().any(Option::is_some) {
            let spec = Spec {
                nominal: spec_vals[0],
                lsl: spec_vals[1],
                usl: spec_vals[2],
                unit: None,
                source: format!("{path}:{line}"),
                source_file: path.to_string(),
                source_line: Some(line),
            };
            if let (Some(l), Some(u)) = (spec.lsl, spec.usl) {
                if l >= u {
                    return Err(InputError::at(path, Some(line), None, format!("feature '{feature}': the lower limit {l} is not below the upper limit {u}")));
                }
            }
            match feature_specs.get(&fi) {
                Some(prev) if !prev.same_limits(&spec) => {
                    return Err(InputError::new(format!(
                        "conflicting specs for feature '{feature}': {} gives {} but {} gives {}",
                        prev.source,
                        prev.describe(),
                        spec.source,
                        spec.describe()
                    )));
                }
                Some(_) => {}
                None => {
                    feature_specs.insert(fi, spec);
                }
            }
        }
        // The k-th measurement of this feature on this part goes to the part's k-th row.
        let occ = occurrences
            .entry((part.clone(), fi, file_index as usize))
            .or_insert(0);
        let k = *occ;
        *occ += 1;
        let rows_of_part = part_rows
            .entry((part.clone(), file_index as usize))
            .or_default();
        if rows_of_part.len() <= k {
            let row = data.row_line.len();
            data.row_line.push(line);
            data.row_file.push(file_index);
            data.part_ids.pad_to(row);
            data.part_ids.push(&part);
            data.attributes[src].push(Some(path));
            for (&c, &ai) in attr_cols.iter().zip(&attr_idx) {
                let t = columns[c].cell_text(r);
                data.attributes[ai].pad_to(row);
                data.attributes[ai].push(t.as_deref());
            }
            rows_of_part.push(row);
        }
        let row = rows_of_part[k];
        let values = &mut data.features[fi].values;
        if values.len() <= row {
            values.resize(row + 1, f64::NAN);
        }
        values[row] = columns[val_c].numbers[r];
        data.cell_lines.insert((fi, row), line);
        file_audit.values_used += 1;
        used_rows += 1;
        if !file_audit.features.contains(&feature) {
            file_audit.features.push(feature);
        }
    }
    let rows = data.row_line.len();
    for a in &mut data.attributes {
        a.pad_to(rows);
    }
    for (fi, spec) in feature_specs {
        let name = data.features[fi].name.clone();
        match data.embedded_specs.get(&name) {
            Some(prev) if !prev.same_limits(&spec) => {
                return Err(InputError::new(format!(
                    "conflicting specs for feature '{name}': {} gives {} but {} gives {}",
                    prev.source,
                    prev.describe(),
                    spec.source,
                    spec.describe()
                )));
            }
            Some(_) => {}
            None => data.embedded_specs.insert(name, spec),
        }
    }
    file_audit.attributes = attr_cols.iter().map(|&c| columns[c].name.clone()).collect();
    file_audit.layout = Layout::Long;
    file_audit.rows_read = lines.len() as u64 + file_audit.blank_rows;
    file_audit.rows_used = used_rows;
    file_audit.rows_rejected = rejected.len() as u64;
    data.audit.unused.extend(unused);
    data.audit.unused.extend(extra_cells);
    data.audit.rejected_rows.extend(rejected);
    data.audit.files.push(file_audit);
    Ok(())
}
