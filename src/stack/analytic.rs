//! Worst case, RSS under the design assumption, and the measured normal forecast.

use super::model::{normal_rejects, StackModel};
use crate::stats::normal;
use serde::Serialize;

#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Range {
    pub min: f64,
    pub max: f64,
}

/// The design assumption: each contributor centred in its zone with σᵢ = Tᵢ/(3·cp), normal and
/// independent.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Rss {
    pub mean: f64,
    pub sd: f64,
    /// mean ∓ safety_factor·3·sd.
    pub min: f64,
    pub max: f64,
    pub ppm_below: Option<f64>,
    pub ppm_above: Option<f64>,
    pub ppm: f64,
}

/// The measured counterpart of RSS: measured means, sds and covariances, normal model.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Measured {
    pub mean: f64,
    pub sd: f64,
    pub ppm_below: Option<f64>,
    pub ppm_above: Option<f64>,
    pub ppm: f64,
    /// 1 − ppm/10⁶.
    pub yield_fraction: f64,
}

/// Σ aᵢ·mᵢ ∓ Σ|aᵢ|·Tᵢ.
pub fn worst_case(model: &StackModel) -> Range {
    let mid: f64 = model
        .contributors
        .iter()
        .map(|c| c.sensitivity * c.middle())
        .sum();
    let half: f64 = model
        .contributors
        .iter()
        .map(|c| c.sensitivity.abs() * c.half_width())
        .sum();
    Range {
        min: mid - half,
        max: mid + half,
    }
}

/// mean = Σ aᵢmᵢ, sd = √Σ(aᵢTᵢ/(3cp))², limits mean ∓ k·3·sd, ppm at the requirement.
pub fn rss(model: &StackModel) -> Rss {
    let cp = model.assumptions.cp;
    let mean: f64 = model
        .contributors
        .iter()
        .map(|c| c.sensitivity * c.middle())
        .sum();
    let sd = model
        .contributors
        .iter()
        .map(|c| (c.sensitivity * c.assumed_sd(cp)).powi(2))
        .sum::<f64>()
        .sqrt();
    let k = model.assumptions.safety_factor;
    let (ppm_below, ppm_above, ppm) = normal_rejects(mean, sd, &model.requirement);
    Rss {
        mean,
        sd,
        min: mean - k * 3.0 * sd,
        max: mean + k * 3.0 * sd,
        ppm_below,
        ppm_above,
        ppm,
    }
}

/// mean = Σ aᵢμᵢ, sd = √(aᵀΣa), ppm at the requirement.
pub fn measured(model: &StackModel) -> Measured {
    let (mean, sd) = model.assembly(&model.means(), &model.covariance);
    let (ppm_below, ppm_above, ppm) = normal_rejects(mean, sd, &model.requirement);
    Measured {
        mean,
        sd,
        ppm_below,
        ppm_above,
        ppm,
        yield_fraction: 1.0 - ppm / 1e6,
    }
}

/// A row of the safety-factor table: RSS limits at ±3kσ leave this much outside.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct SafetyRow {
    pub factor: f64,
    pub sigmas: f64,
    pub ppm_outside: f64,
}

/// The factors engineers usually weigh (1.5 is the common-practice "inflated RSS").
pub const SAFETY_FACTORS: [f64; 10] = [
    1.0,
    1.1,
    1.2,
    1.25,
    1.3,
    4.0 / 3.0,
    1.4,
    1.5,
    5.0 / 3.0,
    2.0,
];

/// Fraction outside ±3kσ for each k: 2·(1 − Φ(3k))·10⁶, exact normal tails.
pub fn safety_factor_table() -> Vec<SafetyRow> {
    SAFETY_FACTORS
        .iter()
        .map(|&k| SafetyRow {
            factor: k,
            sigmas: 3.0 * k,
            ppm_outside: 2.0 * normal::sf(3.0 * k) * 1e6,
        })
        .collect()
}
