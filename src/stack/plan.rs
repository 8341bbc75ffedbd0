//! What-if for the engineer who must act: the spread or centring each contributor would need
//! for a target reject rate, and how many parts show a Cpk with confidence.

use super::model::{normal_rejects, StackModel};
use crate::stats::capability::bissell_bound;
use crate::stats::normal;
use serde::Serialize;

/// What one contributor would need, the others held at their measured values.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ContributorNeed {
    pub name: String,
    pub measured_sd: f64,
    /// The largest sd that meets the target; `None` when no sd of this contributor alone does.
    pub required_sd: Option<f64>,
    /// Ppk at its tolerance zone with the required sd and its measured mean.
    pub required_ppk: Option<f64>,
    /// The same if it were centred in its zone.
    pub required_cpk_centred: Option<f64>,
    pub reachable: bool,
}

/// Every contributor's sd scaled by one factor.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Allocation {
    /// The factor on every measured sd that meets the target (< 1: all must improve).
    pub sd_factor: Option<f64>,
    pub contributors: Vec<AllocatedSd>,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct AllocatedSd {
    pub name: String,
    pub required_sd: f64,
    pub required_ppk: Option<f64>,
}

/// Moving the assembly mean alone.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MeanCorrection {
    pub current_mean: f64,
    /// The assembly mean that meets the target with the measured sd, nearest the current one.
    pub target_mean: Option<f64>,
    pub shift: Option<f64>,
    /// The best reachable rate by centring alone.
    pub best_ppm: f64,
    pub reachable: bool,
}

/// Parts to measure so that an observed Cpk demonstrates the wanted one at the confidence.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SampleSize {
    /// The contributor whose measured Ppk this is; `None` for the reference values.
    pub contributor: Option<String>,
    pub observed_cpk: f64,
    /// Smallest n with Bissell's lower bound ≥ the wanted Cpk; `None` if the observed Cpk is too low.
    pub parts: Option<usize>,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Plan {
    pub target_ppm: f64,
    pub current_ppm: f64,
    pub per_contributor: Vec<ContributorNeed>,
    pub allocation: Allocation,
    pub mean_correction: MeanCorrection,
    pub demonstrate_cpk: f64,
    pub confidence: f64,
    pub sample_sizes: Vec<SampleSize>,
}

fn ppm_with_sd(model: &StackModel, i: usize, sd: f64) -> f64 {
    let cov = model.with_sd_scaled(i, sd / model.contributors[i].sd);
    let (mean, s) = model.assembly(&model.means(), &cov);
    normal_rejects(mean, s, &model.requirement).2
}

fn ppm_with_factor(model: &StackModel, f: f64) -> f64 {
    let cov: Vec<Vec<f64>> = model
        .covariance
        .iter()
        .map(|r| r.iter().map(|v| v * f * f).collect())
        .collect();
    let (mean, s) = model.assembly(&model.means(), &cov);
    normal_rejects(mean, s, &model.requirement).2
}

/// Largest x in [0, hi] with f(x) ≤ target, for f increasing in x (bisection).
fn largest_meeting(f: impl Fn(f64) -> f64, target: f64, hi: f64) -> Option<f64> {
    if f(0.0) > target {
        return None;
    }
    let (mut lo, mut hi) = (0.0, hi);
    if f(hi) <= target {
        return Some(hi);
    }
    for _ in 0..200 {
        let mid = 0.5 * (lo + hi);
        if f(mid) <= target {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    Some(lo)
}

fn ppk_at(lower: f64, upper: f64, mean: f64, sd: f64) -> Option<f64> {
    (sd > 0.0).then(|| ((upper - mean).min(mean - lower)) / (3.0 * sd))
}

pub fn plan(model: &StackModel, target_ppm: f64, demonstrate_cpk: f64, confidence: f64) -> Plan {
    let (mean, sd) = model.assembly(&model.means(), &model.covariance);
    let current_ppm = normal_rejects(mean, sd, &model.requirement).2;
    let per_contributor = model
        .contributors
        .iter()
        .enumerate()
        .map(|(i, c)| {
            let need = largest_meeting(
                |s| ppm_with_sd(model, i, s.max(1e-300)),
                target_ppm,
                c.sd * 1e3,
            );
            ContributorNeed {
                name: c.name.clone(),
                measured_sd: c.sd,
                required_sd: need,
                required_ppk: need.and_then(|s| ppk_at(c.lower_limit, c.upper_limit, c.mean, s)),
                required_cpk_centred: need
                    .and_then(|s| ppk_at(c.lower_limit, c.upper_limit, c.middle(), s)),
                reachable: need.is_some(),
            }
        })
        .collect();
    let factor = largest_meeting(|f| ppm_with_factor(model, f.max(1e-300)), target_ppm, 1e3);
    let allocation = Allocation {
        sd_factor: factor,
        contributors: factor
            .map(|f| {
                model
                    .contributors
                    .iter()
                    .map(|c| AllocatedSd {
                        name: c.name.clone(),
                        required_sd: c.sd * f,
                        required_ppk: ppk_at(c.lower_limit, c.upper_limit, c.mean, c.sd * f),
                    })
                    .collect()
            })
            .unwrap_or_default(),
    };
    let mean_correction = mean_correction(model, mean, sd, target_ppm);
    // Reference values first (Cpk levels commonly asked of suppliers: common practice, no
    // published source), then what each contributor's parts show.
    let sample_sizes = [1.4, 1.5, 1.67, 2.0]
        .into_iter()
        .map(|cpk| (None, cpk))
        .chain(
            model
                .contributors
                .iter()
                .filter_map(|c| c.ppk.map(|ppk| (Some(c.name.clone()), ppk))),
        )
        .map(|(contributor, observed)| SampleSize {
            contributor,
            observed_cpk: observed,
            parts: parts_to_demonstrate(observed, demonstrate_cpk, confidence),
        })
        .collect();
    Plan {
        target_ppm,
        current_ppm,
        per_contributor,
        allocation,
        mean_correction,
        demonstrate_cpk,
        confidence,
        sample_sizes,
    }
}

fn mean_correction(model: &StackModel, mean: f64, sd: f64, target: f64) -> MeanCorrection {
    let req = &model.requirement;
    let rate = |m: f64| normal_rejects(m, sd, req).2;
    let best_mean = match (req.lsl, req.usl) {
        (Some(l), Some(u)) => (l + u) / 2.0,
        (Some(l), None) => l + 40.0 * sd,
        (None, Some(u)) => u - 40.0 * sd,
        (None, None) => mean,
    };
    let best_ppm = rate(best_mean);
    if best_ppm > target {
        return MeanCorrection {
            current_mean: mean,
            target_mean: None,
            shift: None,
            best_ppm,
            reachable: false,
        };
    }
    if rate(mean) <= target {
        return MeanCorrection {
            current_mean: mean,
            target_mean: Some(mean),
            shift: Some(0.0),
            best_ppm,
            reachable: true,
        };
    }
    // The rate falls monotonically from the current mean to the best one: bisect between them.
    let (mut bad, mut good) = (mean, best_mean);
    for _ in 0..200 {
        let mid = 0.5 * (bad + good);
        if rate(mid) <= target {
            good = mid;
        } else {
            bad = mid;
        }
    }
    MeanCorrection {
        current_mean: mean,
        target_mean: Some(good),
        shift: Some(good - mean),
        best_ppm,
        reachable: true,
    }
}

/// Smallest n with Bissell's bound Ĉpk − z√(1/(9n) + Ĉpk²/(2(n − 1))) ≥ wanted, z = Φ⁻¹(c).
pub fn parts_to_demonstrate(observed: f64, wanted: f64, confidence: f64) -> Option<usize> {
    let z = normal::quantile(confidence);
    // The bound tends to Ĉpk as n grows; no n helps when Ĉpk ≤ wanted.
    if observed <= wanted {
        return None;
    }
    // The bound grows with n, so the smallest n is found by doubling, then bisection.
    let meets = |n: usize| bissell_bound(observed, n, z).is_some_and(|b| b >= wanted);
    let mut hi = 2usize;
    while !meets(hi) {
        if hi > 1 << 40 {
            return None;
        }
        hi *= 2;
    }
    let mut lo = hi / 2;
    while lo + 1 < hi {
        let mid = lo + (hi - lo) / 2;
        if meets(mid) {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    Some(hi)
}
