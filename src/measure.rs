//! From a stack file to a [`StackModel`]: reads each contributor's measured parts (each data
//! file once), matches contributors read from one file part by part, and measures their
//! covariance. The I/O edge of the stack forecast.

use crate::error::InputError;
use crate::intake::{self, Dataset, ReadOptions, SpecSet};
use crate::stack::file::{Source, StackFile};
use crate::stack::model::{ContributorModel, PartGroup, StackModel};
use crate::stats::capability::{capability, CapabilityOptions, Limits};
use crate::stats::moments::pairwise_covariance;
use crate::stats::within::WithinMethod;
use crate::study::{model_for, stability_for, StudySettings};
use std::collections::BTreeMap;
use std::path::PathBuf;

/// The data behind a stack: each file read once, with the specs its contributors named.
pub struct StackData {
    pub files: BTreeMap<PathBuf, (Dataset, SpecSet)>,
}

pub fn load_stack_data(stack: &StackFile) -> Result<StackData, InputError> {
    let mut wanted: BTreeMap<PathBuf, Vec<String>> = BTreeMap::new();
    for c in &stack.contributors {
        if let Source::Measured { data, specs, .. } = &c.source {
            let e = wanted.entry(data.clone()).or_default();
            if let Some(s) = specs {
                let s = s.display().to_string();
                if !e.contains(&s) {
                    e.push(s);
                }
            }
        }
    }
    let mut files = BTreeMap::new();
    for (path, spec_paths) in wanted {
        let sheet = intake::read_spec_sheets(&spec_paths)?;
        let data = intake::read_files(
            &[path.display().to_string()],
            &ReadOptions::default(),
            &sheet,
        )?;
        let specs = intake::merge_specs(&sheet, &data.embedded_specs)?;
        files.insert(path, (data, specs));
    }
    Ok(StackData { files })
}

/// Measures every contributor and builds the model.
pub fn build_model(stack: &StackFile, data: &StackData) -> Result<StackModel, InputError> {
    let k = stack.contributors.len();
    let mut contributors = Vec::with_capacity(k);
    // (file, feature) per measured contributor, for the covariances.
    let mut columns: Vec<Option<(&PathBuf, usize)>> = Vec::with_capacity(k);
    for c in &stack.contributors {
        match &c.source {
            Source::Measured {
                data: path,
                feature,
                sampling,
                ..
            } => {
                let (ds, specs) = &data.files[path];
                let fi = ds.features.iter().position(|f| &f.name == feature).ok_or_else(|| {
                    InputError::new(format!(
                        "{}: contributor '{}', key 'feature': '{feature}' is not a feature of {} (features: {})",
                        stack.path.display(),
                        c.name,
                        path.display(),
                        ds.features.iter().map(|f| f.name.as_str()).collect::<Vec<_>>().join(", ")
                    ))
                })?;
                let values: Vec<f64> = ds.features[fi]
                    .values
                    .iter()
                    .copied()
                    .filter(|v| !v.is_nan())
                    .collect();
                if values.len() < 2 {
                    return Err(InputError::new(format!(
                        "{}: contributor '{}': {} has {} usable value(s) of '{feature}'; at least 2 are needed",
                        stack.path.display(),
                        c.name,
                        path.display(),
                        values.len()
                    )));
                }
                // Ppk against the spec sheet when given, else the contributor's own zone.
                let limits = match specs.get(feature) {
                    Some(s) => Limits {
                        nominal: s.nominal,
                        lsl: s.lsl,
                        usl: s.usl,
                    },
                    None => Limits {
                        nominal: Some(c.nominal),
                        lsl: Some(c.lower_limit()),
                        usl: Some(c.upper_limit()),
                    },
                };
                let cap = capability(&values, None, &limits, &CapabilityOptions::default());
                let settings = StudySettings::default();
                let (choice, models) = model_for(&values, &limits, &cap, &settings);
                let chosen = choice
                    .as_ref()
                    .and_then(|m| models.iter().find(|f| f.name == m.name));
                let rows: Vec<usize> = (0..ds.rows())
                    .filter(|&r| !ds.features[fi].values[r].is_nan())
                    .collect();
                let file_names: Vec<std::sync::Arc<str>> =
                    ds.files.iter().map(|f| f.as_str().into()).collect();
                let locate = |point: usize| {
                    let r = rows[point];
                    (
                        Some(file_names[ds.row_file[r] as usize].clone()),
                        Some(ds.value_line(fi, r)),
                        ds.part_ids.get(r).map(str::to_string),
                    )
                };
                let stability = stability_for(
                    &values,
                    None,
                    WithinMethod::MovingRange,
                    chosen,
                    &settings,
                    &locate,
                );
                contributors.push(ContributorModel {
                    name: c.name.clone(),
                    sensitivity: c.sensitivity,
                    nominal: c.nominal,
                    lower_limit: c.lower_limit(),
                    upper_limit: c.upper_limit(),
                    mean: cap.mean.unwrap_or(f64::NAN),
                    sd: cap.sd_overall.unwrap_or(0.0),
                    n: Some(cap.n),
                    distribution: None,
                    sampling: Some(*sampling),
                    ppk: cap.ppk,
                    ppk_lower: cap.ppk_lower,
                    skewness: cap.skewness,
                    normality_p: cap.anderson_darling.map(|a| a.p),
                    model_name: choice.as_ref().map(|m| m.name),
                    model_ppk: choice.as_ref().and_then(|m| m.capability.ppk),
                    fitted: chosen.map(|m| m.distribution),
                    stable: stability.as_ref().map(|s| s.stable),
                    stability: stability
                        .as_ref()
                        .filter(|s| !s.stable)
                        .map(|s| s.summary()),
                });
                columns.push(Some((path, fi)));
            }
            Source::Stated {
                mean,
                sd,
                distribution,
            } => {
                let lo = c.lower_limit();
                let hi = c.upper_limit();
                contributors.push(ContributorModel {
                    name: c.name.clone(),
                    sensitivity: c.sensitivity,
                    nominal: c.nominal,
                    lower_limit: lo,
                    upper_limit: hi,
                    mean: *mean,
                    sd: *sd,
                    n: None,
                    distribution: Some(*distribution),
                    sampling: None,
                    ppk: Some(((hi - mean).min(mean - lo)) / (3.0 * sd)),
                    ppk_lower: None,
                    skewness: None,
                    normality_p: None,
                    ..Default::default()
                });
                columns.push(None);
            }
        }
    }
    let mut cov = vec![vec![0.0; k]; k];
    let mut paired = Vec::new();
    for i in 0..k {
        cov[i][i] = contributors[i].sd.powi(2);
        for j in 0..i {
            if let (Some((pi, fi)), Some((pj, fj))) = (columns[i], columns[j]) {
                if pi == pj {
                    let ds = &data.files[pi].0;
                    let (x, y) = (&ds.features[fi].values, &ds.features[fj].values);
                    if let Some((c, pairs)) = pairwise_covariance(x, y) {
                        cov[i][j] = c;
                        cov[j][i] = c;
                        paired.push((i, j, pairs));
                    }
                }
            }
        }
    }
    let mut part_groups: Vec<PartGroup> = Vec::new();
    for (i, col) in columns.iter().enumerate() {
        let Some((path, fi)) = col else { continue };
        let values = data.files[*path].0.features[*fi].values.clone();
        let source = path.display().to_string();
        match part_groups.iter_mut().find(|g| g.source == source) {
            Some(g) => {
                g.members.push(i);
                g.columns.push(values);
            }
            None => part_groups.push(PartGroup {
                source,
                members: vec![i],
                columns: vec![values],
            }),
        }
    }
    Ok(StackModel {
        requirement: stack.requirement.clone(),
        assumptions: stack.assumptions,
        contributors,
        covariance: cov,
        paired,
        part_groups,
    })
}
