//! The audit: every row and cell read is accounted for, and every value not used is listed
//! with its file, line, column, text and reason.

use super::{Dataset, Layout, SpecSet};
use rustc_hash::FxHashMap;
use serde::Serialize;

/// A value that was read but not used.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct Unused {
    pub file: String,
    pub line: u64,
    pub column: String,
    pub text: String,
    pub reason: String,
}

/// A row that gave no value at all.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct RejectedRow {
    pub file: String,
    pub line: u64,
    pub reason: String,
}

/// Something the engineer should know that did not stop a value being used.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct Issue {
    pub kind: String,
    pub feature: Option<String>,
    pub file: Option<String>,
    pub line: Option<u64>,
    pub message: String,
}

impl Issue {
    /// For people: `feature: message (file:line)`, leaving out what is not known.
    pub fn describe(&self) -> String {
        let place = match (&self.file, self.line) {
            (Some(f), Some(l)) => format!(" ({f}:{l})"),
            (Some(f), None) => format!(" ({f})"),
            _ => String::new(),
        };
        let feature = self
            .feature
            .as_ref()
            .map(|f| format!("{f}: "))
            .unwrap_or_default();
        format!("{feature}{}{place}", self.message)
    }
}

#[derive(Debug, Clone, Serialize)]
pub struct FileAudit {
    pub file: String,
    pub layout: Layout,
    pub delimiter: Option<String>,
    pub decimal_comma_used: bool,
    #[serde(skip)]
    pub decimal_comma: bool,
    pub rows_read: u64,
    pub rows_used: u64,
    pub rows_rejected: u64,
    pub blank_rows: u64,
    pub cells_read: u64,
    pub values_used: u64,
    pub features: Vec<String>,
    pub attributes: Vec<String>,
}

impl FileAudit {
    pub fn new(path: &str, delimiter: u8, decimal_comma: bool) -> Self {
        let name = match delimiter {
            b'\t' => "tab".to_string(),
            d => (d as char).to_string(),
        };
        Self {
            file: path.to_string(),
            layout: Layout::Wide,
            delimiter: Some(name),
            decimal_comma_used: false,
            decimal_comma,
            rows_read: 0,
            rows_used: 0,
            rows_rejected: 0,
            blank_rows: 0,
            cells_read: 0,
            values_used: 0,
            features: Vec::new(),
            attributes: Vec::new(),
        }
    }
}

/// Per-feature counts after intake.
#[derive(Debug, Clone, Serialize)]
pub struct FeatureAudit {
    pub feature: String,
    pub values_used: u64,
    pub unused: u64,
    /// Distinct values, counted up to 5 (all that the coarse-data check needs).
    pub distinct_values_at_least: u64,
    /// The finest decimal step the values were written with: the gauge resolution as seen.
    pub resolution: Option<f64>,
}

#[derive(Debug, Clone, Default, Serialize)]
pub struct Audit {
    pub files: Vec<FileAudit>,
    pub rows_read: u64,
    pub rows_used: u64,
    pub rows_rejected: u64,
    pub cells_read: u64,
    pub values_used: u64,
    pub unused: Vec<Unused>,
    pub rejected_rows: Vec<RejectedRow>,
    pub warnings: Vec<Issue>,
    pub by_feature: Vec<FeatureAudit>,
}

/// A value this many spec widths (or robust spreads) from the centre is a typing or export
/// error, not a part: common practice, no source.
pub const IMPLAUSIBLE_WIDTHS: f64 = 1000.0;
/// Fewer resolution steps than this across the tolerance: the gauge cannot discriminate
/// (the "ten to one" rule of gauge discrimination, common practice).
pub const MIN_RESOLUTION_STEPS: f64 = 10.0;
/// Fewer distinct values than this: the data are too coarse for the statistics (common practice).
pub const MIN_DISTINCT_VALUES: u64 = 5;

/// Checks that need the whole table: implausible values (taken out and listed), duplicate
/// parts, resolution and distinct values; then the totals.
pub(super) fn check_dataset(data: &mut Dataset, specs: &SpecSet) {
    use rayon::prelude::*;
    // Per feature, in parallel: which rows are implausible, the resolution, distinct values.
    let embedded = &data.embedded_specs;
    // The duplicate-part search runs beside them.
    let (checks, duplicates): (Vec<FeatureCheck>, _) = rayon::join(
        || {
            data.features
                .par_iter()
                .map(|f| {
                    let spec = specs.get(&f.name).or_else(|| embedded.get(&f.name));
                    check_feature(&f.values, spec)
                })
                .collect()
        },
        || duplicate_parts(&data.part_ids),
    );
    for (fi, check) in checks.into_iter().enumerate() {
        let name = data.features[fi].name.clone();
        for &r in &check.implausible {
            let v = data.features[fi].values[r];
            data.features[fi].values[r] = f64::NAN;
            let file = data.files[data.row_file[r] as usize].clone();
            if let Some(fa) = data.audit.files.iter_mut().find(|f| f.file == file) {
                fa.values_used -= 1;
            }
            data.audit.unused.push(Unused {
                file,
                line: data.value_line(fi, r),
                column: name.clone(),
                text: format!("{v}"),
                reason: "implausible".into(),
            });
        }
        if check.distinct > 0 && check.distinct < MIN_DISTINCT_VALUES {
            data.audit.warnings.push(Issue {
                kind: "few distinct values".into(),
                feature: Some(name.clone()),
                file: None,
                line: None,
                message: format!(
                    "only {} distinct values: the gauge or the rounding is too coarse for capability statistics",
                    check.distinct
                ),
            });
        }
        let tol = specs
            .get(&name)
            .or_else(|| data.embedded_specs.get(&name))
            .and_then(|s| s.tolerance_width());
        if let (Some(step), Some(tol)) = (check.resolution, tol) {
            if tol / step < MIN_RESOLUTION_STEPS {
                data.audit.warnings.push(Issue {
                    kind: "coarse resolution".into(),
                    feature: Some(name.clone()),
                    file: None,
                    line: None,
                    message: format!(
                        "resolution {} gives only {:.1} steps across the tolerance {}; at least {} are common practice",
                        trim_float(step),
                        tol / step,
                        trim_float(tol),
                        MIN_RESOLUTION_STEPS
                    ),
                });
            }
        }
        let used = check.used;
        let unused = data
            .audit
            .unused
            .iter()
            .filter(|u| u.column == name)
            .count() as u64;
        data.audit.by_feature.push(FeatureAudit {
            feature: name,
            values_used: used,
            unused,
            distinct_values_at_least: check.distinct,
            resolution: check.resolution,
        });
    }
    for (name, spec) in specs.iter() {
        if data.feature(name).is_none() {
            data.audit.warnings.push(Issue {
                kind: "spec without data".into(),
                feature: Some(name.clone()),
                file: Some(spec.source_file.clone()),
                line: spec.source_line,
                message: format!("the spec sheet names '{name}', which no data file has"),
            });
        }
    }
    flag_duplicate_parts(data, duplicates);
    let a = &mut data.audit;
    a.rows_read = a.files.iter().map(|f| f.rows_read).sum();
    a.rows_used = a.files.iter().map(|f| f.rows_used).sum();
    a.rows_rejected = a.files.iter().map(|f| f.rows_rejected).sum();
    a.cells_read = a.files.iter().map(|f| f.cells_read).sum();
    a.values_used = a.files.iter().map(|f| f.values_used).sum();
}

struct FeatureCheck {
    implausible: Vec<usize>,
    /// Distinct values, counted up to `MIN_DISTINCT_VALUES` (enough for the check).
    distinct: u64,
    resolution: Option<f64>,
    /// Values left once the implausible ones are out.
    used: u64,
}

fn check_feature(values: &[f64], spec: Option<&super::Spec>) -> FeatureCheck {
    #[cfg(target_arch = "x86_64")]
    if std::is_x86_feature_detected!("avx2") {
        // SAFETY: the processor has AVX2, checked above.
        return unsafe { check_feature_avx2(values, spec) };
    }
    check_feature_with(values, spec)
}

/// [`check_feature`] compiled for AVX2 processors: the chunk tests four values an
/// instruction instead of two; the same operations, the same results.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
fn check_feature_avx2(values: &[f64], spec: Option<&super::Spec>) -> FeatureCheck {
    check_feature_with(values, spec)
}

#[inline(always)]
fn check_feature_with(values: &[f64], spec: Option<&super::Spec>) -> FeatureCheck {
    let (centre, width) = match spec.and_then(|s| s.centre_and_width()) {
        Some(cw) => cw,
        None => robust_centre_and_spread(values),
    };
    // One pass for the count of numbers, the implausible rows and the finest decimal place
    // of the others, a chunk at a time: the chunk is tested whole (no early exit, so the tests
    // vectorise) and gone through value by value only when it holds an implausible value or
    // one with more decimals than seen so far, which is rare.
    let limit = IMPLAUSIBLE_WIDTHS * width;
    let far = |v: f64| width > 0.0 && (v - centre).abs() > limit;
    // `&` not `&&`: no branch in the chunk's test.
    let finer = |v: f64, k: u32| !v.is_nan() & !has_at_most(v, k);
    let mut implausible = Vec::new();
    let mut numbers = 0usize;
    let mut decimals = 0u32;
    for (c, chunk) in values.chunks(CHUNK).enumerate() {
        numbers += chunk.iter().filter(|v| !v.is_nan()).count();
        let any_far = chunk.iter().fold(false, |any, &v| any | far(v));
        if any_far || chunk.iter().fold(false, |any, &v| any | finer(v, decimals)) {
            for (i, &v) in chunk.iter().enumerate() {
                if far(v) {
                    implausible.push(c * CHUNK + i);
                } else if finer(v, decimals) {
                    decimals = decimal_places(v);
                }
            }
        }
    }
    let out = |r: usize| !implausible.is_empty() && implausible.binary_search(&r).is_ok();
    // Implausible values are numbers, so they come off the count of numbers.
    let used = (numbers - implausible.len()) as u64;
    let mut seen: Vec<f64> = Vec::new();
    for (r, &v) in values.iter().enumerate() {
        if seen.len() as u64 >= MIN_DISTINCT_VALUES {
            break;
        }
        if !v.is_nan() && !out(r) && !seen.contains(&v) {
            seen.push(v);
        }
    }
    let resolution = (!seen.is_empty()).then(|| 10f64.powi(-(decimals as i32)));
    FeatureCheck {
        implausible,
        distinct: seen.len() as u64,
        resolution,
        used,
    }
}

/// Values tested at a time by the audit's scan.
const CHUNK: usize = 16;

/// Whether `v` has at most `k` decimal places (the test of [`decimal_places`] at k).
#[inline(always)]
fn has_at_most(v: f64, k: u32) -> bool {
    let scaled = v.abs() * POW10[k.min(9) as usize];
    // max(scaled, 1) by comparison: the NaN-propagating f64::max would keep the scan from
    // vectorising (and a NaN value takes 1 either way).
    let unit = if scaled > 1.0 { scaled } else { 1.0 };
    (scaled - round_half_even(scaled)).abs() <= 1e-9 * unit
}

/// x rounded to the nearest integer (ties to even) by adding and removing 1.5·2⁵², which
/// leaves no fraction bits (no library call in the hot loop); x ≥ 2⁵¹ is already an integer.
#[inline(always)]
fn round_half_even(x: f64) -> f64 {
    const SHIFT: f64 = 6_755_399_441_055_744.0;
    if x.abs() >= 2_251_799_813_685_248.0 {
        x
    } else {
        (x + SHIFT) - SHIFT
    }
}

const POW10: [f64; 10] = [1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9];

/// Decimal places a value was written with (up to 9): the resolution of the gauge as seen.
fn decimal_places(v: f64) -> u32 {
    (0..9).find(|&k| has_at_most(v, k)).unwrap_or(9)
}

/// Rows whose part id was seen before: (row, first row with that id).
fn duplicate_parts(ids: &super::Strings) -> Vec<(usize, usize)> {
    // Serial numbers in file order (each above the one before) repeat none: one comparison a
    // row instead of a hash table of every id, which misses the cache at each insert.
    let mut last: Option<&str> = None;
    let ascending = ids.iter().filter(|id| !id.is_empty()).all(|id| {
        let above = last.is_none_or(|l| id > l);
        last = Some(id);
        above
    });
    if ascending {
        return Vec::new();
    }
    let mut first_seen: FxHashMap<&str, usize> =
        FxHashMap::with_capacity_and_hasher(ids.len(), Default::default());
    let mut dups = Vec::new();
    for (r, id) in ids.iter().enumerate() {
        if id.is_empty() {
            continue;
        }
        if let Some(&first) = first_seen.get(id) {
            dups.push((r, first));
        } else {
            first_seen.insert(id, r);
        }
    }
    dups
}

fn flag_duplicate_parts(data: &mut Dataset, dups: Vec<(usize, usize)>) {
    for (r, first) in dups {
        let file = data.files[data.row_file[r] as usize].clone();
        let first_file = &data.files[data.row_file[first] as usize];
        data.audit.warnings.push(Issue {
            kind: "duplicate part".into(),
            feature: None,
            file: Some(file),
            line: Some(data.row_line[r]),
            message: format!(
                "part '{}' was already seen at {}:{}; both rows are used",
                data.part_ids.get(r).unwrap_or_default(),
                first_file,
                data.row_line[first]
            ),
        });
    }
}

/// Values a feature without a spec needs before its quartiles judge plausibility: with fewer,
/// two close values make a tiny interquartile range and a real part looks like a typing error
/// (capstack's choice; found by the intake property test).
const MIN_VALUES_FOR_SPREAD: usize = 10;

/// Median and a robust spread (the interquartile range) for features without a spec; a zero
/// spread (no check) below [`MIN_VALUES_FOR_SPREAD`] values.
fn robust_centre_and_spread(values: &[f64]) -> (f64, f64) {
    // A strided sample is plenty for a check at a thousand spreads.
    let stride = (values.len() / 20_000).max(1);
    let mut v: Vec<f64> = values
        .iter()
        .step_by(stride)
        .copied()
        .filter(|x| !x.is_nan())
        .collect();
    if v.len() < MIN_VALUES_FOR_SPREAD {
        return (0.0, 0.0);
    }
    v.sort_unstable_by(f64::total_cmp);
    let q = |p: f64| v[((v.len() - 1) as f64 * p).round() as usize];
    (q(0.5), q(0.75) - q(0.25))
}

fn trim_float(v: f64) -> String {
    let s = format!("{v:.6}");
    s.trim_end_matches('0').trim_end_matches('.').to_string()
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    /// The scans as first written, a value at a time: the oracle for the chunked ones.
    fn check_by_one(values: &[f64], centre: f64, width: f64) -> (Vec<usize>, u64, u32) {
        let limit = IMPLAUSIBLE_WIDTHS * width;
        let implausible: Vec<usize> = (0..values.len())
            .filter(|&r| width > 0.0 && (values[r] - centre).abs() > limit)
            .collect();
        let numbers = values.iter().filter(|v| !v.is_nan()).count();
        let decimals = (0..values.len())
            .filter(|&r| !values[r].is_nan() && implausible.binary_search(&r).is_err())
            .map(|r| decimal_places(values[r]))
            .max()
            .unwrap_or(0);
        let used = (numbers - implausible.len()) as u64;
        (implausible, used, decimals)
    }

    fn value() -> impl Strategy<Value = f64> {
        prop_oneof![
            8 => (-10_000i64..10_000, 0u32..6).prop_map(|(m, d)| m as f64 / 10f64.powi(d as i32)),
            1 => Just(f64::NAN),
            1 => prop_oneof![Just(1e7), Just(-3e6), Just(2.5e9)],
        ]
    }

    proptest! {
        /// Repeated part ids are found with and without the shortcut for ids in ascending
        /// order: every row whose id came before, paired with the first row of that id.
        #[test]
        fn duplicates_are_every_repeat_of_an_earlier_id(
            ids in prop::collection::vec(prop_oneof![Just(String::new()), "P[0-9]{1,2}"], 0..60),
            sort in any::<bool>(),
        ) {
            let mut ids = ids;
            if sort {
                ids.sort();
            }
            let mut strings = crate::intake::Strings::default();
            for id in &ids {
                strings.push(id);
            }
            let expected: Vec<(usize, usize)> = (0..ids.len())
                .filter(|&r| !ids[r].is_empty())
                .filter_map(|r| ids[..r].iter().position(|i| *i == ids[r]).map(|first| (r, first)))
                .collect();
            prop_assert_eq!(duplicate_parts(&strings), expected);
        }

        #[test]
        fn chunked_scans_find_what_a_value_at_a_time_finds(
            values in prop::collection::vec(value(), 0..200),
        ) {
            let spec = crate::intake::Spec {
                nominal: Some(0.0),
                lsl: Some(-1.0),
                usl: Some(1.0),
                unit: None,
                source: String::new(),
                source_file: String::new(),
                source_line: None,
            };
            let (implausible, used, decimals) = check_by_one(&values, 0.0, 2.0);
            // The build `check_feature` picks on this processor, and the baseline one.
            for check in [check_feature(&values, Some(&spec)), check_feature_with(&values, Some(&spec))] {
                prop_assert_eq!(&check.implausible, &implausible);
                prop_assert_eq!(check.used, used);
                if check.distinct > 0 {
                    prop_assert_eq!(check.resolution, Some(10f64.powi(-(decimals as i32))));
                }
            }
        }
    }

    #[test]
    fn resolution_is_the_finest_decimal_place_written() {
        let mut values = vec![10.0; 40];
        values[3] = 10.5;
        values[17] = f64::NAN;
        values[33] = 10.125;
        values[36] = 10.25;
        let check = check_feature(&values, None);
        assert_eq!(check.resolution, Some(1e-3));
        assert_eq!(check.used, 39);
    }
}
