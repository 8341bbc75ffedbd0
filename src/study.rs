//! The capability study: a dataset and its specs in, one capability result per feature (and
//! group) out. This is where rows become ordered slices for the pure numerics in `stats`.

use crate::intake::{Dataset, SpecSet, NO_LEVEL};
use crate::stats::capability::{capability, Capability, CapabilityOptions, Limits};
use crate::stats::control::{self, Chart, Signal, RULES};
use crate::stats::fit::{self, FittedModel, PercentileCapability};
use crate::stats::groups::{self, Test};
use crate::stats::within::WithinMethod;
use rayon::prelude::*;
use serde::Serialize;
use std::borrow::Cow;
use std::collections::BTreeMap;
use std::sync::Arc;

/// How the study orders, groups and judges the values.
#[derive(Debug, Clone)]
pub struct StudySettings {
    pub by: Option<String>,
    pub order: Option<String>,
    pub subgroups: Subgrouping,
    pub options: CapabilityOptions,
    pub min_cpk: f64,
    pub alpha: f64,
    pub model: ModelRequest,
    /// The Nelson tests to apply (1–8).
    pub rules: Vec<u8>,
    /// Keep each result's values and chart points for drawing (the report). Without it they
    /// are freed as soon as the statistics are done (the values stay under `--by`, whose
    /// comparisons use them), so a large file's study holds little beyond its results.
    pub keep_points: bool,
}

/// Which distribution model gives the percentile indices.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ModelRequest {
    /// Normal while the normality tests accept it; else every family is fitted and the lowest
    /// AIC chosen ([`fit::choose`]).
    Auto,
    /// This family for every feature (fitted beside the normal model).
    Named(&'static str),
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
            model: ModelRequest::Auto,
            rules: control::DEFAULT_RULES.to_vec(),
            keep_points: true,
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
    /// The distribution model behind the percentile indices.
    pub model: Option<ModelChoice>,
    /// Every model fitted (all families when normality is rejected or `--model` names one).
    pub models: Vec<FittedModel>,
    pub stability: Option<Stability>,
    /// `cpk` (below the minimum), `normality` (rejected), `resolution` (gauge too coarse),
    /// `unstable` (the control chart signals).
    pub flags: Vec<String>,
    /// The values in process order, for charts; not serialised.
    #[serde(skip)]
    pub values: Vec<f64>,
}

/// The chosen model, why, and its percentile-method indices and reject rates.
#[derive(Debug, Clone, Serialize)]
pub struct ModelChoice {
    pub name: &'static str,
    pub reason: String,
    #[serde(flatten)]
    pub capability: PercentileCapability,
}

/// The control chart of a feature and what its tests found.
#[derive(Debug, Clone, Serialize)]
pub struct Stability {
    #[serde(flatten)]
    pub chart: Chart,
    pub rules: Vec<u8>,
    /// False when more points signal than chance explains: P(N ≥ signals) < [`CHANCE_ALPHA`]
    /// for N Poisson with mean `expected_by_chance` (capstack's rule, no published source; a
    /// long series of a stable process signals now and then, and every signal is listed).
    pub stable: bool,
    /// That Poisson tail probability (1 without signals).
    pub chance_p: f64,
    /// Every signalling point counted; the first [`MAX_LISTED_SIGNALS`] are listed.
    pub signal_count: usize,
    pub signals: Vec<SignalAt>,
    /// How many points the chart has (values, or subgroups).
    pub points: usize,
    /// Signalling points a stable process would give by chance with these tests (about):
    /// a long series signals now and then even when nothing changed.
    pub expected_by_chance: f64,
}

/// A signalling point, with where it came from.
#[derive(Debug, Clone, Serialize)]
pub struct SignalAt {
    #[serde(flatten)]
    pub signal: Signal,
    pub description: &'static str,
    /// File, physical line and part of the value (individuals charts). The file's name is
    /// shared by all its signals.
    pub file: Option<Arc<str>>,
    pub line: Option<u64>,
    pub part: Option<String>,
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
    // Groups that are every row in file order: a feature with a value in each of them is
    // used as it stands, without gathering it.
    let whole: Vec<bool> = groups
        .iter()
        .map(|(_, rows)| rows.len() == data.rows() && rows.iter().enumerate().all(|(i, &r)| i == r))
        .collect();
    let mut jobs = Vec::new();
    for f in 0..data.features.len() {
        for ((g, rows), &whole) in groups.iter().zip(&whole) {
            jobs.push((f, g, rows, whole));
        }
    }
    let results = jobs
        .par_iter()
        .map(|&(f, group, rows, whole)| {
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
            let files_with: Vec<bool> = data
                .audit
                .files
                .iter()
                .map(|fa| fa.features.contains(&feature.name))
                .collect();
            // The rows with a value (None: all of them, in file order), their values, and the
            // rows of files that have this feature but no value for it (missing).
            let (values, used_rows, missing) = if whole && !has_nan(&feature.values) {
                (Cow::Borrowed(feature.values.as_slice()), None, 0)
            } else {
                let mut used_rows = Vec::with_capacity(rows.len());
                let mut values = Vec::with_capacity(rows.len());
                let mut missing = 0u64;
                for &r in rows.iter() {
                    let v = feature.values[r];
                    if v.is_nan() {
                        let file = data.row_file[r] as usize;
                        missing += u64::from(files_with.get(file).copied().unwrap_or(false));
                    } else {
                        used_rows.push(r);
                        values.push(v);
                    }
                }
                (Cow::Owned(values), Some(used_rows), missing)
            };
            let row_of = |point: usize| used_rows.as_ref().map_or(point, |rows| rows[point]);
            let subgroups = match &settings.subgroups {
                Subgrouping::Individuals => None,
                Subgrouping::Size(m) => {
                    Some(values.chunks(*m).map(|c| c.to_vec()).collect::<Vec<_>>())
                }
                Subgrouping::Column(_) => {
                    let attr = subgroup_attr.expect("checked above");
                    let mut by: BTreeMap<u32, Vec<f64>> = BTreeMap::new();
                    for r in (0..values.len()).map(row_of) {
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
            let mut flags = flags_for(&cap, &feature.name, data, settings);
            let (model, models) = model_for(&values, &limits, &cap, settings);
            let chosen = model
                .as_ref()
                .and_then(|m| models.iter().find(|f| f.name == m.name));
            // The file names of this feature's listed signals, shared by them alone: one
            // count per feature, not one that both threads update at every signal.
            let file_names: Vec<Arc<str>> =
                data.files.iter().map(|f| Arc::from(f.as_str())).collect();
            let locate = |point: usize| {
                let r = row_of(point);
                (
                    Some(file_names[data.row_file[r] as usize].clone()),
                    Some(data.value_line(f, r)),
                    data.part_ids.get(r).map(str::to_string),
                )
            };
            let stability = stability_for(
                &values,
                subgroups.as_deref(),
                options.within,
                chosen,
                settings,
                &locate,
            );
            let values = if settings.keep_points || settings.by.is_some() {
                values.into_owned()
            } else {
                Vec::new()
            };
            if stability.as_ref().is_some_and(|s| !s.stable) {
                flags.push("unstable".to_string());
            }
            FeatureResult {
                feature: feature.name.clone(),
                group: group.clone(),
                missing,
                unit: spec.and_then(|s| s.unit.clone()),
                nominal: limits.nominal,
                lsl: limits.lsl,
                usl: limits.usl,
                capability: cap,
                model,
                models,
                stability,
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

/// Whether any value is NaN, a chunk at a time (each chunk tested whole, so the test
/// vectorises).
fn has_nan(values: &[f64]) -> bool {
    values
        .chunks(64)
        .any(|c| c.iter().fold(false, |any, v| any | v.is_nan()))
}

/// The model for one feature: under `auto`, normal while neither normality test rejects (only
/// the normal model is fitted), else every family with the lowest-AIC choice; a named model is
/// used when it can be fitted to these values, else the lowest-AIC choice with the reason.
pub fn model_for(
    values: &[f64],
    limits: &Limits,
    cap: &Capability,
    settings: &StudySettings,
) -> (Option<ModelChoice>, Vec<FittedModel>) {
    let rejected = cap.anderson_darling.is_some_and(|a| a.p < settings.alpha)
        || cap.shapiro_wilk.is_some_and(|s| s.p < settings.alpha);
    let pick = |models: &[FittedModel], i: usize, reason: String| ModelChoice {
        name: models[i].name,
        reason,
        capability: models[i].capability,
    };
    let runs = || crate::stats::moments::Runs::of(values);
    match settings.model {
        ModelRequest::Auto if !rejected => {
            // Nothing to choose between: the normal model with its ML parameters, no fits.
            let reason = match cap.anderson_darling {
                Some(a) => format!("normality not rejected (Anderson–Darling p = {:.3})", a.p),
                None => "too few values to test normality".to_string(),
            };
            let choice = normal_choice(cap, limits, reason);
            (choice, Vec::new())
        }
        ModelRequest::Auto => {
            let models = fit::fit_all_runs(&runs(), limits);
            let choice = fit::choose(&models)
                .map(|(i, why)| pick(&models, i, format!("normality rejected; {why}")));
            (choice, models)
        }
        ModelRequest::Named("normal") => (
            normal_choice(cap, limits, "normal requested (--model)".into()),
            Vec::new(),
        ),
        ModelRequest::Named(name) => {
            // The named family, with the normal model beside it for comparison.
            let runs = runs();
            let models: Vec<FittedModel> = ["normal", name]
                .iter()
                .filter_map(|n| fit::fit_named_runs(n, &runs, limits))
                .collect();
            let choice = match models.iter().position(|m| m.name == name) {
                Some(i) => Some(pick(&models, i, format!("{name} requested (--model)"))),
                None => fit::choose(&models).map(|(i, why)| {
                    pick(
                        &models,
                        i,
                        format!("{name} cannot be fitted to these values; {why}"),
                    )
                }),
            };
            (choice, models)
        }
    }
}

/// The normal model with the ML parameters (mean, n-divisor sd): a closed form, no fit.
fn normal_choice(cap: &Capability, limits: &Limits, reason: String) -> Option<ModelChoice> {
    match (cap.mean, cap.sd_overall) {
        (Some(mean), Some(sd)) if sd > 0.0 && cap.n >= fit::MIN_FIT_N => {
            let n = cap.n as f64;
            let d = crate::stats::distribution::Distribution::Normal {
                mean,
                sd: sd * ((n - 1.0) / n).sqrt(),
            };
            Some(ModelChoice {
                name: "normal",
                reason,
                capability: fit::percentile_capability(&d, limits),
            })
        }
        _ => None,
    }
}

/// The between-group comparison of one feature under `--by`.
#[derive(Debug, Clone, Serialize)]
pub struct Comparison {
    pub feature: String,
    pub by: String,
    pub groups: Vec<GroupSummary>,
    pub anova: Option<Test>,
    pub kruskal_wallis: Option<Test>,
    pub levene: Option<Test>,
    pub brown_forsythe: Option<Test>,
    /// By ANOVA, or by Kruskal–Wallis when a group's normality is rejected.
    pub means_differ: bool,
    /// By Brown–Forsythe (robust to non-normal groups).
    pub spreads_differ: bool,
    pub summary: String,
}

#[derive(Debug, Clone, Serialize)]
pub struct GroupSummary {
    pub group: String,
    pub n: usize,
    pub mean: Option<f64>,
    pub sd: Option<f64>,
    /// (mean − target)/(half the tolerance), where both limits exist.
    pub offset_of_tolerance: Option<f64>,
}

/// For every feature studied by groups: do the groups differ in mean or in spread, and which
/// group sits farthest from the target.
pub fn compare_groups(results: &[FeatureResult], alpha: f64) -> Vec<Comparison> {
    let mut features: Vec<&str> = Vec::new();
    for r in results.iter().filter(|r| r.group.is_some()) {
        if !features.contains(&r.feature.as_str()) {
            features.push(&r.feature);
        }
    }
    features
        .into_iter()
        .filter_map(|name| {
            let rs: Vec<&FeatureResult> = results
                .iter()
                .filter(|r| r.feature == name && r.group.is_some() && !r.values.is_empty())
                .collect();
            if rs.len() < 2 {
                return None;
            }
            let (by, _) = rs[0].group.as_ref()?.iter().next()?;
            let label = |r: &FeatureResult| {
                r.group
                    .as_ref()
                    .and_then(|g| g.values().next().cloned())
                    .unwrap_or_default()
            };
            let target = Limits {
                nominal: rs[0].nominal,
                lsl: rs[0].lsl,
                usl: rs[0].usl,
            };
            let half = match (target.lsl, target.usl) {
                (Some(l), Some(u)) => Some((u - l) / 2.0),
                _ => None,
            };
            let centre = target.target();
            let groups_summary: Vec<GroupSummary> = rs
                .iter()
                .map(|r| GroupSummary {
                    group: label(r),
                    n: r.capability.n,
                    mean: r.capability.mean,
                    sd: r.capability.sd_overall,
                    offset_of_tolerance: match (r.capability.mean, centre, half) {
                        (Some(m), Some(t), Some(h)) => Some((m - t) / h),
                        _ => None,
                    },
                })
                .collect();
            let slices: Vec<&[f64]> = rs.iter().map(|r| r.values.as_slice()).collect();
            let anova = groups::anova(&slices);
            let kruskal_wallis = groups::kruskal_wallis(&slices);
            let any_non_normal = rs.iter().any(|r| r.flags.iter().any(|f| f == "normality"));
            let location = if any_non_normal {
                kruskal_wallis
            } else {
                anova
            };
            let means_differ = location.is_some_and(|t| t.p < alpha);
            let brown_forsythe = groups::levene(&slices, true);
            let spreads_differ = brown_forsythe.is_some_and(|t| t.p < alpha);
            let test_name = if any_non_normal {
                "Kruskal–Wallis"
            } else {
                "ANOVA"
            };
            let mut summary = match location {
                Some(t) if means_differ => format!("means differ ({test_name} p = {:.2e})", t.p),
                Some(t) => format!("no difference in mean shown ({test_name} p = {:.3})", t.p),
                None => "too few values to compare means".to_string(),
            };
            if let Some(far) = groups_summary
                .iter()
                .filter(|g| g.offset_of_tolerance.is_some())
                .max_by(|a, b| {
                    a.offset_of_tolerance
                        .unwrap()
                        .abs()
                        .total_cmp(&b.offset_of_tolerance.unwrap().abs())
                })
            {
                if means_differ {
                    summary.push_str(&format!(
                        "; {} sits farthest from the target, {:+.0} % of the half-tolerance",
                        far.group,
                        100.0 * far.offset_of_tolerance.unwrap()
                    ));
                }
            }
            match brown_forsythe {
                Some(t) if spreads_differ => summary.push_str(&format!(
                    "; spreads differ (Brown–Forsythe p = {:.2e})",
                    t.p
                )),
                Some(t) => summary.push_str(&format!(
                    "; no difference in spread shown (Brown–Forsythe p = {:.3})",
                    t.p
                )),
                None => {}
            }
            Some(Comparison {
                feature: name.to_string(),
                by: by.clone(),
                groups: groups_summary,
                anova,
                kruskal_wallis,
                levene: groups::levene(&slices, false),
                brown_forsythe,
                means_differ,
                spreads_differ,
                summary,
            })
        })
        .collect()
}

/// The control chart of a feature: X̄-S or X̄-R for subgroups; for individuals an I-MR chart,
/// drawn on the normal scores Φ⁻¹(F(x)) of the chosen model when that model is not normal, so
/// that a skewed but stable feature does not signal for its shape alone (the limits are mapped
/// back to the feature's unit; the tests run on the scores).
pub fn chart_for(
    values: &[f64],
    subgroups: Option<&[Vec<f64>]>,
    within: WithinMethod,
    model: Option<&FittedModel>,
) -> Option<Chart> {
    match (subgroups, within) {
        (Some(g), WithinMethod::Sd) => return control::subgroups(g, true),
        (Some(g), _) => return control::subgroups(g, false),
        (None, _) => {}
    }
    let Some(m) = model.filter(|m| m.name != "normal") else {
        return control::individuals(values);
    };
    let d = m.distribution;
    let score = |x: f64| {
        let c = d.cdf(x);
        let z = if c < 0.5 {
            crate::stats::normal::quantile(c.max(1e-300))
        } else {
            -crate::stats::normal::quantile(d.sf(x).max(1e-300))
        };
        z.clamp(-40.0, 40.0)
    };
    // Each distinct value is scored once (a cdf such as the gamma's is costly), then looked up.
    let runs = crate::stats::moments::Runs::of(values);
    let distinct: Vec<f64> = runs.values.iter().map(|&x| score(x)).collect();
    let scores: Vec<f64> = values
        .iter()
        .map(|x| match runs.values.binary_search_by(|v| v.total_cmp(x)) {
            Ok(i) => distinct[i],
            Err(_) => score(*x),
        })
        .collect();
    let mut chart = control::individuals(&scores)?;
    let back = |z: f64| d.quantile(crate::stats::normal::cdf(z));
    chart.kind = "individuals_normal_scores";
    chart.dispersion_name = "moving_range_of_scores";
    chart.location = control::Limits {
        centre: back(chart.location.centre),
        lcl: back(chart.location.lcl),
        ucl: back(chart.location.ucl),
    };
    chart.scores = Some(scores);
    chart.location_points = values.to_vec();
    Some(chart)
}

/// Signals listed per feature (all are counted): a chart of 10⁵ points signals by chance
/// about 10³ times, a list nobody reads.
pub const MAX_LISTED_SIGNALS: usize = 1000;

/// Level below which signals are more than chance (see [`Stability::stable`]).
pub const CHANCE_ALPHA: f64 = 0.05;

/// P(N ≥ k) for N Poisson with mean λ.
fn poisson_at_least(k: usize, lambda: f64) -> f64 {
    if k == 0 {
        return 1.0;
    }
    if lambda <= 0.0 {
        return 0.0;
    }
    let (mut term, mut below) = ((-lambda).exp(), 0.0);
    for i in 0..k {
        below += term;
        term *= lambda / (i + 1) as f64;
    }
    (1.0 - below).max(0.0)
}

/// Where a point of an individuals chart came from: file, physical line, part.
pub type Locate<'a> = dyn Fn(usize) -> (Option<Arc<str>>, Option<u64>, Option<String>) + 'a;

/// The control chart of a feature (see [`chart_for`]) and its signals under `settings.rules`,
/// each placed in its file for individuals charts. The chart keeps its points only under
/// `settings.keep_points`; without them an individuals chart of the normal model is tested on
/// the values themselves, not on copies.
pub fn stability_for(
    values: &[f64],
    subgroups: Option<&[Vec<f64>]>,
    within: WithinMethod,
    model: Option<&FittedModel>,
    settings: &StudySettings,
    locate: &Locate,
) -> Option<Stability> {
    let rules = &settings.rules;
    let individual = subgroups.is_none();
    let on_values = individual && model.is_none_or(|m| m.name == "normal");
    if on_values && !settings.keep_points {
        let chart = control::individuals_limits(values)?;
        let found = control::individuals_signals(values, &chart, rules);
        return Some(build_stability(
            chart,
            found,
            values.len(),
            rules,
            individual,
            locate,
        ));
    }
    let mut chart = chart_for(values, subgroups, within, model)?;
    let found = chart_signals(&chart, rules);
    let points = chart.location_points.len();
    if !settings.keep_points {
        chart.free_points();
    }
    Some(build_stability(
        chart, found, points, rules, individual, locate,
    ))
}

/// The stability verdict of a chart of `points` points on which `found` signalled.
fn build_stability(
    chart: Chart,
    found: Vec<Signal>,
    points: usize,
    rules: &[u8],
    individual: bool,
    locate: &Locate,
) -> Stability {
    let signal_count = found.len();
    // Only the listed signals are placed in their files (a long chart has thousands).
    let signals: Vec<SignalAt> = found
        .into_iter()
        .take(MAX_LISTED_SIGNALS)
        .map(|signal| {
            let (file, line, part) = if individual {
                locate(signal.point)
            } else {
                (None, None, None)
            };
            SignalAt {
                signal,
                description: if signal.chart == "dispersion" {
                    "above the upper limit of the dispersion chart"
                } else {
                    RULES[signal.rule as usize - 1].1
                },
                file,
                line,
                part,
            }
        })
        .collect();
    let expected = control::expected_by_chance(points, rules, individual);
    let chance_p = poisson_at_least(signal_count, expected);
    Stability {
        points,
        expected_by_chance: expected,
        rules: rules.to_vec(),
        stable: chance_p >= CHANCE_ALPHA,
        chance_p,
        signal_count,
        signals,
        chart,
    }
}

/// The chart's signals; on a normal-scores chart they are found on the scores and reported
/// with the measured values.
pub fn chart_signals(chart: &Chart, rules: &[u8]) -> Vec<Signal> {
    let Some(scores) = &chart.scores else {
        return control::signals(chart, rules);
    };
    let mut on_scores = chart.clone();
    on_scores.location_points = scores.clone();
    let c = scores.iter().sum::<f64>() / scores.len() as f64;
    on_scores.location.centre = c;
    control::signals(&on_scores, rules)
        .into_iter()
        .map(|mut s| {
            if s.chart == "location" {
                s.value = chart.location_points[s.point];
            }
            s
        })
        .collect()
}

impl Stability {
    /// One line for a person: how many points signal, on which tests, against chance, and the
    /// first place.
    pub fn summary(&self) -> String {
        if self.signals.is_empty() {
            return format!(
                "no signals on tests {:?} ({} points)",
                self.rules, self.points
            );
        }
        let mut by_rule: BTreeMap<(u8, &str), usize> = BTreeMap::new();
        for s in &self.signals {
            *by_rule.entry((s.signal.rule, s.signal.chart)).or_default() += 1;
        }
        let tests: Vec<String> = by_rule
            .iter()
            .map(|((r, chart), n)| {
                let what = if *chart == "dispersion" {
                    format!(
                        "{} above its limit",
                        self.chart.dispersion_name.replace('_', " ")
                    )
                } else {
                    format!("test {r}")
                };
                format!("{what} ×{n}")
            })
            .collect();
        let first = self.signals.iter().min_by_key(|s| s.signal.point).map(|s| {
            match (&s.file, s.line, &s.part) {
                (Some(f), Some(l), Some(p)) => format!("; first at {f}:{l} (part {p})"),
                (Some(f), Some(l), None) => format!("; first at {f}:{l}"),
                _ => format!("; first at point {}", s.signal.point + 1),
            }
        });
        let judged = if self.stable {
            "within chance"
        } else {
            "more than chance"
        };
        let p = if self.chance_p < 0.01 {
            "p < 0.01".to_string()
        } else {
            format!("p = {:.2}", self.chance_p)
        };
        format!(
            "chart signals at {} point(s): {} (about {:.1} expected by chance: {judged}, {p}){}",
            self.signal_count,
            tests.join(", "),
            self.expected_by_chance,
            first.unwrap_or_default()
        )
    }
}
