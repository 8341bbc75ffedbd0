//! The stack as numbers: each contributor's sensitivity, tolerance zone and statistics, and the
//! covariance between contributors. Built by `measure` from files; pure from here on.

use super::file::{Assumptions, Distribution, Requirement, Sampling};
use crate::stats::normal;
use serde::Serialize;

/// One contributor, with what was measured (or stated) about it.
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct ContributorModel {
    pub name: String,
    pub sensitivity: f64,
    pub nominal: f64,
    /// The tolerance zone [lower_limit, upper_limit]; `middle` and `half_width` derive from it.
    pub lower_limit: f64,
    pub upper_limit: f64,
    pub mean: f64,
    pub sd: f64,
    /// Parts measured; `None` for stated statistics.
    pub n: Option<usize>,
    pub distribution: Option<Distribution>,
    /// How the simulation draws a measured contributor; `None` for stated statistics.
    pub sampling: Option<Sampling>,
    pub ppk: Option<f64>,
    pub ppk_lower: Option<f64>,
    pub skewness: Option<f64>,
    /// Anderson–Darling p of the normality test, where measured.
    pub normality_p: Option<f64>,
    /// The measured parts' model (chosen as `capability --model auto` does) and its Ppk.
    pub model_name: Option<&'static str>,
    pub model_ppk: Option<f64>,
    #[serde(skip)]
    pub fitted: Option<crate::stats::distribution::Distribution>,
    /// Whether the control chart of the measured parts (in file order, tests 1–4) is free of
    /// signals, and what it found when not.
    pub stable: Option<bool>,
    pub stability: Option<String>,
}

impl ContributorModel {
    pub fn middle(&self) -> f64 {
        (self.lower_limit + self.upper_limit) / 2.0
    }
    pub fn half_width(&self) -> f64 {
        (self.upper_limit - self.lower_limit) / 2.0
    }
    /// σᵢ under the design assumption: Tᵢ/(3·cp).
    pub fn assumed_sd(&self, cp: f64) -> f64 {
        self.half_width() / (3.0 * cp)
    }
}

/// The whole stack: requirement, assumption, contributors and their covariance matrix (the
/// variances on the diagonal). `samples` correlates the parts of contributors read from one file.
#[derive(Debug, Clone, PartialEq)]
pub struct StackModel {
    pub requirement: Requirement,
    pub assumptions: Assumptions,
    pub contributors: Vec<ContributorModel>,
    pub covariance: Vec<Vec<f64>>,
    /// Pairs measured on the same parts: (i, j, parts in common).
    pub paired: Vec<(usize, usize, usize)>,
    /// The measured parts, one group per data file, for resampling.
    pub part_groups: Vec<PartGroup>,
}

/// The parts of one data file: for each member contributor its values, aligned part by part
/// (NaN where that part lacks the feature).
#[derive(Debug, Clone, PartialEq)]
pub struct PartGroup {
    pub source: String,
    pub members: Vec<usize>,
    pub columns: Vec<Vec<f64>>,
}

impl PartGroup {
    pub fn parts(&self) -> usize {
        self.columns.first().map_or(0, Vec::len)
    }
    /// Parts with at least one member measured.
    pub fn measured_parts(&self) -> usize {
        (0..self.parts())
            .filter(|&r| self.columns.iter().any(|c| !c[r].is_nan()))
            .count()
    }
}

impl StackModel {
    /// Σ aᵢ·μᵢ and √(aᵀΣa) for given means and covariance.
    pub fn assembly(&self, means: &[f64], cov: &[Vec<f64>]) -> (f64, f64) {
        let a: Vec<f64> = self.contributors.iter().map(|c| c.sensitivity).collect();
        let mean = a.iter().zip(means).map(|(a, m)| a * m).sum();
        let mut var = 0.0;
        for i in 0..a.len() {
            for j in 0..a.len() {
                var += a[i] * a[j] * cov[i][j];
            }
        }
        (mean, var.max(0.0).sqrt())
    }

    pub fn means(&self) -> Vec<f64> {
        self.contributors.iter().map(|c| c.mean).collect()
    }

    /// The covariance matrix with contributor i's sd multiplied by `scale` (its correlations kept).
    pub fn with_sd_scaled(&self, i: usize, scale: f64) -> Vec<Vec<f64>> {
        let mut cov = self.covariance.clone();
        for row in cov.iter_mut() {
            row[i] *= scale;
        }
        for v in cov[i].iter_mut() {
            *v *= scale;
        }
        cov
    }

    /// The covariance matrix with contributor i uncorrelated with every other.
    pub fn with_uncorrelated(&self, i: usize) -> Vec<Vec<f64>> {
        let mut cov = self.covariance.clone();
        let own = cov[i][i];
        for row in cov.iter_mut() {
            row[i] = 0.0;
        }
        cov[i].iter_mut().for_each(|v| *v = 0.0);
        cov[i][i] = own;
        cov
    }

    /// Correlation of contributors i and j.
    pub fn correlation(&self, i: usize, j: usize) -> f64 {
        self.covariance[i][j] / (self.covariance[i][i] * self.covariance[j][j]).sqrt()
    }
}

/// Normal reject rates at the requirement, in ppm: (below, above, total).
pub fn normal_rejects(mean: f64, sd: f64, req: &Requirement) -> (Option<f64>, Option<f64>, f64) {
    if sd.is_nan() || sd <= 0.0 {
        let below = req.lsl.map(|l| if mean < l { 1e6 } else { 0.0 });
        let above = req.usl.map(|u| if mean > u { 1e6 } else { 0.0 });
        return (below, above, below.unwrap_or(0.0) + above.unwrap_or(0.0));
    }
    let below = req.lsl.map(|l| normal::cdf((l - mean) / sd) * 1e6);
    let above = req.usl.map(|u| normal::sf((u - mean) / sd) * 1e6);
    (below, above, below.unwrap_or(0.0) + above.unwrap_or(0.0))
}
