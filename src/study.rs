//! The capability study: a dataset and its specs in, one capability result per feature (and
//! group) out. This is where rows become ordered slices for the pure numerics in `stats`.

use crate::intake::{Dataset, SpecSet, NO_LEVEL};
use crate::stats::capability::{capability, Capability, CapabilityOptions, Limits};
use crate::stats::within::WithinMethod;
use rayon::prelude::*;
use serde::Serialize;
use std::collections::BTreeMap;

/// How the study orders, groups and judges the values.
#[derive(Debug, Clone)]
pub struct StudySettings {
    pub by: Option<String>,
    pub order: Option<String>,
    pub subgroups: Subgrouping,
    pub options: CapabilityOptions,
    pub min_cpk: f64,
    pub alpha: f64,
}

impl Default for StudySettings {
    fn default() -> Self {
        Self {
            by: None,
            order: None,
            subgroups: Subgrouping::Individuals,
            options: CapabilityOptions::default(),
            min_cpk: DEFAULT_MIN_CPK,
            alpha: DEFAULT_ALPHA,
        }
    }
}

/// Cpk 1.33 is the common-practice minimum for an existing process (no single source).
pub const DEFAULT_MIN_CPK: f64 = 1.33;
/// Significance level of the normality tests.
pub const DEFAULT_ALPHA: f64 = 0.05;

#[derive(Debug, Clone, PartialEq)]
pub enum Subgrouping {
    Individuals,
    Size(usize),
    Column(String),
}

/// A group: the `--by` column and its value, or `None` for all rows.
pub type Group = Option<BTreeMap<String, String>>;

/// One feature (in one group): its spec, its capability, and what the engineer must act on.
#[derive(Debug, Clone, Serialize)]
pub struct FeatureResult {
    pub feature: String,
    pub group: Option<BTreeMap<String, String>>,
    pub missing: u64,
    pub unit: Option<String>,
    pub nominal: Option<f64>,
    pub lsl: Option<f64>,
    pub usl: Option<f64>,
    #[serde(flatten)]
    pub capability: Capability,
    /// `cpk` (below the minimum), `normality` (rejected), `resolution` (gauge too coarse).
    pub flags: Vec<String>,
    /// The values in process order, for charts; not serialised.
    #[serde(skip)]
    pub values: Vec<f64>,
}

/// Rows of the dataset in process order: file order, or sorted by the `--order` column
/// (numerically when every value is a number).
pub fn row_order(
    data: &Dataset,
    order: Option<&str>,
) -> Result<Vec<usize>, crate::error::InputError> {
    let mut rows: Vec<usize> = (0..data.rows()).collect();
    if let Some(col) = order {
        let attr = data
            .attribute(col)
            .ok_or_else(|| missing_column("--order", col, data))?;
        let numeric: Option<Vec<f64>> = attr.levels.iter().map(|l| l.parse::<f64>().ok()).collect();
        match numeric {
            Some(nums) => rows.sort_by(|&a, &b| {
                let key = |r: usize| {
                    let c = attr.codes[r];
                    (c != NO_LEVEL).then(|| nums[c as usize])
                };
                key(a)
                    .partial_cmp(&key(b))
                    .unwrap_or(std::cmp::Ordering::Equal)
            }),
            None => rows.sort_by(|&a, &b| attr.get(a).cmp(&attr.get(b))),
        }
    }
    Ok(rows)
}

fn missing_column(flag: &str, col: &str, data: &Dataset) -> crate::error::InputError {
    let names: Vec<&str> = data.attributes.iter().map(|a| a.name.as_str()).collect();
    crate::error::InputError::new(format!(
        "{flag} names '{col}', which is not a text column of the data (text columns: {})",
        names.join(", ")
    ))
}

/// Runs the study on every feature (and group), in parallel.
pub fn study(
    data: &Dataset,
    specs: &SpecSet,
    settings: &StudySettings,
) -> Result<Vec<FeatureResult>, crate::error::InputError> {
    let order = row_order(data, settings.order.as_deref())?;
    let groups: Vec<(Group, Vec<usize>)> = match &settings.by {
        None => vec![(None, order.clone())],
        Some(col) => {
            let attr = data
                .attribute(col)
                .ok_or_else(|| missing_column("--by", col, data))?;
            let mut by_level: Vec<Vec<usize>> = vec![Vec::new(); attr.levels.len()];
            let mut first_seen = Vec::new();
            for &r in &order {
                let c = attr.codes[r];
                if c != NO_LEVEL {
                    if by_level[c as usize].is_empty() {
                        first_seen.push(c);
                    }
                    by_level[c as usize].push(r);
                }
            }
            let mut levels: Vec<u32> = first_seen;
            levels.sort_by(|a, b| attr.levels[*a as usize].cmp(&attr.levels[*b as usize]));
            levels
                .into_iter()
                .map(|c| {
                    (
                        Some(BTreeMap::from([(
                            col.clone(),
                            attr.levels[c as usize].clone(),
                        )])),
                        std::mem::take(&mut by_level[c as usize]),
                    )
                })
                .collect()
        }
    };
    let subgroup_attr = match &settings.subgroups {
        Subgrouping::Column(col) => Some(
            data.attribute(col)
                .ok_or_else(|| missing_column("--subgroup", col, data))?,
        ),
        _ => None,
    };
    let mut jobs = Vec::new();
    for f in 0..data.features.len() {
        for (g, rows) in &groups {
            jobs.push((f, g, rows));
        }
    }
    let results = jobs
        .par_iter()
        .map(|&(f, group, rows)| {
            let feature = &data.features[f];
            let spec = specs
                .get(&feature.name)
                .or_else(|| data.embedded_specs.get(&feature.name));
            let limits = spec
                .map(|s| Limits {
                    nominal: s.nominal,
                    lsl: s.lsl,
                    usl: s.usl,
                })
                .unwrap_or_default();
            let used_rows: Vec<usize> = rows
                .iter()
                .copied()
                .filter(|&r| !feature.values[r].is_nan())
                .collect();
            let values: Vec<f64> = used_rows.iter().map(|&r| feature.values[r]).collect();
            let files_with: Vec<bool> = data
                .audit
                .files
                .iter()
                .map(|fa| fa.features.contains(&feature.name))
                .collect();
            let missing = rows
                .iter()
                .filter(|&&r| {
                    feature.values[r].is_nan()
                        && files_with
                            .get(data.row_file[r] as usize)
                            .copied()
                            .unwrap_or(false)
                })
                .count() as u64;
            let subgroups = match &settings.subgroups {
                Subgrouping::Individuals => None,
                Subgrouping::Size(m) => {
                    Some(values.chunks(*m).map(|c| c.to_vec()).collect::<Vec<_>>())
                }
                Subgrouping::Column(_) => {
                    let attr = subgroup_attr.expect("checked above");
                    let mut by: BTreeMap<u32, Vec<f64>> = BTreeMap::new();
                    for &r in &used_rows {
                        by.entry(attr.codes[r]).or_default().push(feature.values[r]);
                    }
                    Some(by.into_values().collect())
                }
            };
            let mut options = settings.options;
            if subgroups.is_none() {
                options.within = WithinMethod::MovingRange;
            }
            let cap = capability(&values, subgroups.as_deref(), &limits, &options);
            let flags = flags_for(&cap, &feature.name, data, settings);
            FeatureResult {
                feature: feature.name.clone(),
                group: group.clone(),
                missing,
                unit: spec.and_then(|s| s.unit.clone()),
                nominal: limits.nominal,
                lsl: limits.lsl,
                usl: limits.usl,
                capability: cap,
                flags,
                values,
            }
        })
        .collect();
    Ok(results)
}

fn flags_for(
    cap: &Capability,
    feature: &str,
    data: &Dataset,
    settings: &StudySettings,
) -> Vec<String> {
    let mut flags = Vec::new();
    if cap.cpk.is_some_and(|c| c < settings.min_cpk) {
        flags.push("cpk".to_string());
    }
    let ad_rejects = cap.anderson_darling.is_some_and(|a| a.p < settings.alpha);
    let sw_rejects = cap.shapiro_wilk.is_some_and(|s| s.p < settings.alpha);
    if ad_rejects || sw_rejects {
        flags.push("normality".to_string());
    }
    if data
        .audit
        .warnings
        .iter()
        .any(|w| w.kind == "coarse resolution" && w.feature.as_deref() == Some(feature))
    {
        flags.push("resolution".to_string());
    }
    flags
}
