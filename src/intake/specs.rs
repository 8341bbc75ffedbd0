//! Spec sheets: per feature a nominal and limits, given as limits, as a symmetric `tol`, or
//! as signed deviations from nominal.

use crate::error::{InputError, Result};
use std::collections::BTreeMap;

/// The specification of one feature. Limits are inclusive; either may be absent (one-sided).
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Spec {
    pub nominal: Option<f64>,
    pub lsl: Option<f64>,
    pub usl: Option<f64>,
    pub unit: Option<String>,
    /// `file:line` where the spec was given, for messages.
    #[serde(skip)]
    pub source: String,
    #[serde(skip)]
    pub source_file: String,
    #[serde(skip)]
    pub source_line: Option<u64>,
}

impl Spec {
    pub fn same_limits(&self, other: &Spec) -> bool {
        let eq = |a: Option<f64>, b: Option<f64>| match (a, b) {
            (Some(x), Some(y)) => (x - y).abs() <= 1e-12 * x.abs().max(y.abs()).max(1.0),
            (None, None) => true,
            _ => false,
        };
        eq(self.lsl, other.lsl) && eq(self.usl, other.usl) && eq(self.nominal, other.nominal)
    }

    pub fn describe(&self) -> String {
        let f = |v: Option<f64>| v.map_or("none".to_string(), |x| format!("{x}"));
        format!(
            "nominal {}, lsl {}, usl {}",
            f(self.nominal),
            f(self.lsl),
            f(self.usl)
        )
    }

    /// USL − LSL for two-sided specs.
    pub fn tolerance_width(&self) -> Option<f64> {
        match (self.lsl, self.usl) {
            (Some(l), Some(u)) => Some(u - l),
            _ => None,
        }
    }

    /// Centre and width of the zone for the plausibility check: the middle of two-sided
    /// limits, or nominal/the one limit with the distance between them for one-sided specs.
    pub fn centre_and_width(&self) -> Option<(f64, f64)> {
        match (self.lsl, self.usl, self.nominal) {
            (Some(l), Some(u), _) => Some(((l + u) / 2.0, u - l)),
            (Some(l), None, Some(n)) | (None, Some(l), Some(n)) if (n - l).abs() > 0.0 => {
                Some((n, (n - l).abs()))
            }
            (Some(l), None, _) | (None, Some(l), _) if l != 0.0 => Some((l, l.abs())),
            _ => None,
        }
    }
}

/// Specs by feature name.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct SpecSet {
    specs: BTreeMap<String, Spec>,
}

impl SpecSet {
    pub fn get(&self, feature: &str) -> Option<&Spec> {
        self.specs.get(feature)
    }
    pub fn insert(&mut self, feature: String, spec: Spec) {
        self.specs.insert(feature, spec);
    }
    pub fn iter(&self) -> impl Iterator<Item = (&String, &Spec)> {
        self.specs.iter()
    }
    pub fn is_empty(&self) -> bool {
        self.specs.is_empty()
    }
    pub fn len(&self) -> usize {
        self.specs.len()
    }
}

const COLUMNS: [&str; 8] = [
    "feature",
    "nominal",
    "lsl",
    "usl",
    "unit",
    "tol",
    "lower_dev",
    "upper_dev",
];

/// Reads spec sheets; a feature given twice (in one sheet or in two) is an error naming both.
pub fn read_spec_sheets(paths: &[String]) -> Result<SpecSet> {
    let mut all = SpecSet::default();
    for p in paths {
        let one = read_spec_sheet(p)?;
        for (name, spec) in one.specs {
            if let Some(existing) = all.get(&name) {
                return Err(InputError::new(format!(
                    "feature '{name}' has a spec in {} and again in {}: keep one",
                    existing.source, spec.source
                )));
            }
            all.insert(name, spec);
        }
    }
    Ok(all)
}

/// Reads one spec sheet (CSV, `,` `;` or tab, decimal comma with `;`/tab).
pub fn read_spec_sheet(path: &str) -> Result<SpecSet> {
    let bytes = std::fs::read(path)
        .map_err(|e| InputError::new(format!("{path}: cannot read the spec sheet: {e}")))?;
    let bytes = bytes
        .strip_prefix(b"\xEF\xBB\xBF".as_slice())
        .unwrap_or(&bytes);
    let text = std::str::from_utf8(bytes).map_err(|e| {
        let line = bytes[..e.valid_up_to()]
            .iter()
            .filter(|&&b| b == b'\n')
            .count()
            + 1;
        InputError::at(
            path,
            Some(line as u64),
            None,
            "not valid UTF-8; save the spec sheet as UTF-8",
        )
    })?;
    let first = text.lines().next().unwrap_or("");
    let delimiter = [b';', b'\t', b',']
        .into_iter()
        .max_by_key(|d| first.bytes().filter(|b| b == d).count())
        .unwrap_or(b',');
    let delimiter = if first.bytes().filter(|&b| b == delimiter).count() == 0 {
        b','
    } else {
        delimiter
    };
    let decimal_comma = delimiter != b',';
    let mut rdr = csv::ReaderBuilder::new()
        .delimiter(delimiter)
        .flexible(true)
        .from_reader(text.as_bytes());
    let header: Vec<String> = rdr
        .headers()
        .map_err(|e| InputError::at(path, Some(1), None, format!("cannot read the header: {e}")))?
        .iter()
        .map(|h| h.trim().to_ascii_lowercase())
        .collect();
    if header.iter().all(|h| h.is_empty()) {
        return Err(InputError::at(
            path,
            Some(1),
            None,
            "the spec sheet is empty (a header line is needed)",
        ));
    }
    let col = |name: &str| header.iter().position(|h| h == name);
    let Some(feature_col) = col("feature") else {
        return Err(InputError::at(
            path,
            Some(1),
            None,
            format!(
                "the spec sheet needs a 'feature' column (columns understood: {})",
                COLUMNS.join(", ")
            ),
        ));
    };
    let cols: Vec<Option<usize>> = COLUMNS.iter().map(|c| col(c)).collect();
    let mut set = SpecSet::default();
    for rec in rdr.records() {
        let rec = rec.map_err(|e| {
            let line = e.position().map(|p| p.line());
            InputError::at(path, line, None, format!("cannot read the row: {e}"))
        })?;
        let line = rec.position().map_or(0, |p| p.line());
        let cell = |i: usize| {
            cols[i]
                .and_then(|c| rec.get(c))
                .map(str::trim)
                .filter(|s| !s.is_empty())
        };
        let num = |i: usize| -> Result<Option<f64>> {
            match cell(i) {
                None => Ok(None),
                Some(s) => parse_number(s, decimal_comma).map(Some).ok_or_else(|| {
                    InputError::at(
                        path,
                        Some(line),
                        Some(COLUMNS[i]),
                        format!("'{s}' is not a number"),
                    )
                }),
            }
        };
        let name = rec.get(feature_col).map(str::trim).unwrap_or("");
        if name.is_empty() {
            if rec.iter().all(|c| c.trim().is_empty()) {
                continue;
            }
            return Err(InputError::at(
                path,
                Some(line),
                Some("feature"),
                "the feature name is blank",
            ));
        }
        let nominal = num(1)?;
        let (lsl, usl, tol, lower_dev, upper_dev) = (num(2)?, num(3)?, num(5)?, num(6)?, num(7)?);
        let forms = [
            lsl.is_some() || usl.is_some(),
            tol.is_some(),
            lower_dev.is_some() || upper_dev.is_some(),
        ];
        if forms.iter().filter(|&&f| f).count() > 1 {
            return Err(InputError::at(
                path,
                Some(line),
                None,
                format!("feature '{name}' gives its limits in more than one form (lsl/usl, tol, lower_dev/upper_dev): use one"),
            ));
        }
        let need_nominal = |what: &str| {
            nominal.ok_or_else(|| {
                InputError::at(
                    path,
                    Some(line),
                    Some("nominal"),
                    format!("feature '{name}' gives {what} but no nominal"),
                )
            })
        };
        let (lsl, usl) = if let Some(t) = tol {
            if t < 0.0 {
                return Err(InputError::at(
                    path,
                    Some(line),
                    Some("tol"),
                    format!("feature '{name}': tol {t} is negative"),
                ));
            }
            let n = need_nominal("tol")?;
            (Some(n - t), Some(n + t))
        } else if forms[2] {
            let n = need_nominal("deviations")?;
            (lower_dev.map(|d| n + d), upper_dev.map(|d| n + d))
        } else {
            (lsl, usl)
        };
        if let (Some(l), Some(u)) = (lsl, usl) {
            if l >= u {
                return Err(InputError::at(
                    path,
                    Some(line),
                    None,
                    format!(
                        "feature '{name}': the lower limit {l} is not below the upper limit {u}"
                    ),
                ));
            }
        }
        let source = format!("{path}:{line}");
        if let Some(prev) = set.get(name) {
            return Err(InputError::at(
                path,
                Some(line),
                Some("feature"),
                format!(
                    "feature '{name}' has a second spec row (the first is {}): keep one",
                    prev.source
                ),
            ));
        }
        let unit = cell(4).map(str::to_string);
        set.insert(
            name.to_string(),
            Spec {
                nominal,
                lsl,
                usl,
                unit,
                source,
                source_file: path.to_string(),
                source_line: Some(line),
            },
        );
    }
    Ok(set)
}

/// A spec-sheet number: plain, or with a decimal comma in `;`/tab sheets.
pub(crate) fn parse_number(s: &str, decimal_comma: bool) -> Option<f64> {
    let v = super::cells::parse_cell(s.as_bytes(), decimal_comma).ok()?;
    Some(v)
}
