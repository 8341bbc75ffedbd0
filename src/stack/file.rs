//! The stack file (TOML): the requirement, the design assumption, and the contributors.

use crate::error::InputError;
use serde::Deserialize;
use std::path::{Path, PathBuf};

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawStack {
    requirement: RawRequirement,
    #[serde(default)]
    assumptions: RawAssumptions,
    #[serde(default)]
    contributor: Vec<RawContributor>,
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawRequirement {
    name: Option<String>,
    lsl: Option<f64>,
    usl: Option<f64>,
    unit: Option<String>,
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawAssumptions {
    #[serde(default = "one")]
    cp: f64,
    #[serde(default = "one")]
    safety_factor: f64,
}

impl Default for RawAssumptions {
    fn default() -> Self {
        Self {
            cp: 1.0,
            safety_factor: 1.0,
        }
    }
}

fn one() -> f64 {
    1.0
}

#[derive(Debug, Clone, Deserialize)]
#[serde(deny_unknown_fields)]
struct RawContributor {
    name: Option<String>,
    sensitivity: Option<f64>,
    nominal: Option<f64>,
    tolerance: Option<f64>,
    lower_dev: Option<f64>,
    upper_dev: Option<f64>,
    data: Option<String>,
    feature: Option<String>,
    specs: Option<String>,
    mean: Option<f64>,
    sd: Option<f64>,
    distribution: Option<String>,
    simulate: Option<String>,
}

/// The assembly characteristic and its limits.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Requirement {
    pub name: String,
    pub lsl: Option<f64>,
    pub usl: Option<f64>,
    pub unit: Option<String>,
}

/// The design assumption the stack was toleranced under.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Assumptions {
    pub cp: f64,
    pub safety_factor: f64,
}

/// A stated distribution for a contributor that was not measured.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Distribution {
    Normal,
    Uniform,
    Triangular,
}

/// How the simulation draws a measured contributor.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Sampling {
    /// Resample the measured parts (bootstrap); contributors from one file are drawn as one row.
    Parts,
    /// A normal distribution with the measured mean and sd, independent of the others.
    Normal,
    /// The distribution model fitted to the measured parts (as `capability --model auto`
    /// chooses it), independent of the others.
    Fitted,
}

/// Where a contributor's statistics come from.
#[derive(Debug, Clone, PartialEq)]
pub enum Source {
    Measured {
        data: PathBuf,
        feature: String,
        specs: Option<PathBuf>,
        sampling: Sampling,
    },
    Stated {
        mean: f64,
        sd: f64,
        distribution: Distribution,
    },
}

#[derive(Debug, Clone, PartialEq)]
pub struct Contributor {
    pub name: String,
    pub sensitivity: f64,
    pub nominal: f64,
    /// Signed deviations from nominal: the zone is [nominal + lower, nominal + upper].
    pub lower_dev: f64,
    pub upper_dev: f64,
    pub source: Source,
}

impl Contributor {
    /// Tᵢ: the half-width of the tolerance zone.
    pub fn half_width(&self) -> f64 {
        (self.upper_dev - self.lower_dev) / 2.0
    }
    /// mᵢ: the middle of the tolerance zone.
    pub fn middle(&self) -> f64 {
        self.nominal + (self.lower_dev + self.upper_dev) / 2.0
    }
    pub fn lower_limit(&self) -> f64 {
        self.nominal + self.lower_dev
    }
    pub fn upper_limit(&self) -> f64 {
        self.nominal + self.upper_dev
    }
}

#[derive(Debug, Clone, PartialEq)]
pub struct StackFile {
    pub path: PathBuf,
    pub requirement: Requirement,
    pub assumptions: Assumptions,
    pub contributors: Vec<Contributor>,
}

/// Reads and validates a stack file; every error names the file, the contributor and the key.
pub fn read_stack(path: &Path) -> Result<StackFile, InputError> {
    let shown = path.display().to_string();
    let text = std::fs::read(path)
        .map_err(|e| InputError::new(format!("{shown}: cannot read the stack file: {e}")))?;
    let text = String::from_utf8(text)
        .map_err(|_| InputError::new(format!("{shown}: not valid UTF-8")))?;
    parse_stack(&text, path)
}

pub fn parse_stack(text: &str, path: &Path) -> Result<StackFile, InputError> {
    let shown = path.display().to_string();
    let raw: RawStack = toml::from_str(text).map_err(|e| {
        // Name the line and show it, so the key is in the message.
        let line = e
            .span()
            .map(|s| text[..s.start.min(text.len())].matches('\n').count() + 1);
        let shown_line = line
            .and_then(|l| text.lines().nth(l - 1))
            .map(|t| format!("`{}`: ", t.trim()))
            .unwrap_or_default();
        InputError::at(
            &shown,
            line.map(|l| l as u64),
            None,
            format!("{shown_line}{}", e.message()),
        )
    })?;
    let base = path.parent().unwrap_or(Path::new("."));
    let err = |what: String| InputError::new(format!("{shown}: {what}"));
    let r = &raw.requirement;
    if r.lsl.is_none() && r.usl.is_none() {
        return Err(err("[requirement] needs lsl, usl or both".into()));
    }
    for (k, v) in [("lsl", r.lsl), ("usl", r.usl)] {
        if v.is_some_and(|x| !x.is_finite()) {
            return Err(err(format!("[requirement] {k} must be a finite number")));
        }
    }
    if let (Some(l), Some(u)) = (r.lsl, r.usl) {
        if l >= u {
            return Err(err(format!("[requirement] lsl {l} must be below usl {u}")));
        }
    }
    let a = &raw.assumptions;
    if !(a.cp > 0.0 && a.cp.is_finite()) {
        return Err(err(format!(
            "[assumptions] cp {} must be a positive number (1.0: tolerance = ±3σ)",
            a.cp
        )));
    }
    if !(a.safety_factor > 0.0 && a.safety_factor.is_finite()) {
        return Err(err(format!(
            "[assumptions] safety_factor {} must be a positive number",
            a.safety_factor
        )));
    }
    if raw.contributor.is_empty() {
        return Err(err("no [[contributor]] entries".into()));
    }
    let mut contributors = Vec::new();
    for (i, c) in raw.contributor.iter().enumerate() {
        let label = c.name.clone().unwrap_or_else(|| format!("#{}", i + 1));
        let cerr = |key: &str, what: String| {
            InputError::new(format!(
                "{shown}: contributor '{label}', key '{key}': {what}"
            ))
        };
        let name = c
            .name
            .clone()
            .filter(|n| !n.trim().is_empty())
            .ok_or_else(|| cerr("name", "every contributor needs a name".into()))?;
        if contributors.iter().any(|x: &Contributor| x.name == name) {
            return Err(cerr("name", "two contributors have this name".into()));
        }
        let sensitivity = c.sensitivity.ok_or_else(|| {
            cerr(
                "sensitivity",
                "missing (+1 opens the gap, -1 closes it)".into(),
            )
        })?;
        if !sensitivity.is_finite() || sensitivity == 0.0 {
            return Err(cerr(
                "sensitivity",
                format!("{sensitivity} must be a non-zero number"),
            ));
        }
        let nominal = c.nominal.ok_or_else(|| cerr("nominal", "missing".into()))?;
        if !nominal.is_finite() {
            return Err(cerr("nominal", "must be a finite number".into()));
        }
        let (lower_dev, upper_dev) = match (c.tolerance, c.lower_dev, c.upper_dev) {
            (Some(t), None, None) => {
                if !(t > 0.0 && t.is_finite()) {
                    return Err(cerr(
                        "tolerance",
                        format!("{t} must be a positive number (the symmetric ±)"),
                    ));
                }
                (-t, t)
            }
            (None, Some(l), Some(u)) => {
                if l >= u || !l.is_finite() || !u.is_finite() {
                    return Err(cerr(
                        "lower_dev",
                        format!("lower_dev {l} must be below upper_dev {u}"),
                    ));
                }
                (l, u)
            }
            (Some(_), _, _) => {
                return Err(cerr(
                    "tolerance",
                    "give either tolerance or lower_dev/upper_dev, not both".into(),
                ))
            }
            (None, None, None) => {
                return Err(cerr(
                    "tolerance",
                    "missing (tolerance, or lower_dev and upper_dev)".into(),
                ))
            }
            (None, _, _) => {
                return Err(cerr(
                    "lower_dev",
                    "lower_dev and upper_dev go together".into(),
                ))
            }
        };
        let source = match (&c.data, c.mean, c.sd) {
            (Some(d), None, None) => {
                let feature = c.feature.clone().ok_or_else(|| {
                    cerr(
                        "feature",
                        "a measured contributor names its feature in the data".into(),
                    )
                })?;
                if c.distribution.is_some() {
                    return Err(cerr(
                        "distribution",
                        "a measured contributor takes its shape from the data; remove distribution"
                            .into(),
                    ));
                }
                let data = base.join(d);
                if !data.is_file() {
                    return Err(cerr("data", format!("no such file: {}", data.display())));
                }
                let specs = c.specs.as_ref().map(|s| base.join(s));
                if let Some(s) = &specs {
                    if !s.is_file() {
                        return Err(cerr("specs", format!("no such file: {}", s.display())));
                    }
                }
                let sampling = match c.simulate.as_deref().unwrap_or("parts") {
                    "parts" => Sampling::Parts,
                    "normal" => Sampling::Normal,
                    "fitted" => Sampling::Fitted,
                    other => {
                        return Err(cerr(
                            "simulate",
                            format!("'{other}' is not one of parts, normal, fitted"),
                        ))
                    }
                };
                Source::Measured {
                    data,
                    feature,
                    specs,
                    sampling,
                }
            }
            (None, Some(mean), Some(sd)) => {
                if !mean.is_finite() {
                    return Err(cerr("mean", "must be a finite number".into()));
                }
                if !(sd > 0.0 && sd.is_finite()) {
                    return Err(cerr("sd", format!("{sd} must be a positive number")));
                }
                if c.simulate.is_some() {
                    return Err(cerr(
                        "simulate",
                        "a stated contributor is drawn from its stated distribution; remove simulate"
                            .into(),
                    ));
                }
                let distribution = match c.distribution.as_deref().unwrap_or("normal") {
                    "normal" => Distribution::Normal,
                    "uniform" => Distribution::Uniform,
                    "triangular" => Distribution::Triangular,
                    other => {
                        return Err(cerr(
                            "distribution",
                            format!("'{other}' is not one of normal, uniform, triangular"),
                        ))
                    }
                };
                Source::Stated {
                    mean,
                    sd,
                    distribution,
                }
            }
            (Some(_), _, _) => {
                return Err(cerr(
                    "data",
                    "give either data (measured) or mean and sd (stated), not both".into(),
                ))
            }
            (None, None, None) => {
                return Err(cerr(
                    "data",
                    "missing: give data and feature, or mean and sd".into(),
                ))
            }
            (None, _, _) => {
                return Err(cerr(
                    "sd",
                    "a stated contributor needs both mean and sd".into(),
                ))
            }
        };
        contributors.push(Contributor {
            name,
            sensitivity,
            nominal,
            lower_dev,
            upper_dev,
            source,
        });
    }
    Ok(StackFile {
        path: path.to_path_buf(),
        requirement: Requirement {
            name: r.name.clone().unwrap_or_else(|| "assembly".into()),
            lsl: r.lsl,
            usl: r.usl,
            unit: r.unit.clone(),
        },
        assumptions: Assumptions {
            cp: a.cp,
            safety_factor: a.safety_factor,
        },
        contributors,
    })
}
