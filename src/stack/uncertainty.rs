//! How uncertain the forecast is because only n parts were measured.
//!
//! Nonparametric bootstrap: each replicate resamples every data file's parts with replacement
//! (a part keeps all its features, so correlations are re-estimated too), re-measures each
//! contributor's mean, sd and covariances, and recomputes the measured normal forecast. The
//! 5 % and 95 % percentiles of the replicates form the 90 % interval. Resampling one file's
//! parts at a time, the others fixed, shows whose sample size the uncertainty comes from.

use super::model::{normal_rejects, StackModel};
use crate::stats::moments::pairwise_covariance;
use rand::{RngCore, SeedableRng};
use rand_xoshiro::Xoshiro256PlusPlus;
use rayon::prelude::*;
use serde::Serialize;

pub const DEFAULT_REPLICATES: usize = 1000;
const LEVEL: f64 = 0.90;

#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct SourceUncertainty {
    pub source: String,
    pub contributors: Vec<String>,
    pub parts: usize,
    /// The 90 % interval when only this file's parts are resampled.
    pub ppm_low: f64,
    pub ppm_high: f64,
}

#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct ForecastUncertainty {
    /// Of the measured (normal) forecast.
    pub forecast: &'static str,
    pub level: f64,
    pub replicates: usize,
    pub seed: u64,
    pub ppm: f64,
    pub ppm_low: f64,
    pub ppm_high: f64,
    pub sources: Vec<SourceUncertainty>,
    /// The data file whose parts contribute the widest interval on their own.
    pub dominant: Option<String>,
    pub statement: String,
}

/// The bootstrap interval of the measured forecast; `None` when nothing was measured.
pub fn forecast_uncertainty(
    model: &StackModel,
    replicates: usize,
    seed: u64,
) -> Option<ForecastUncertainty> {
    if model.part_groups.is_empty() || replicates < 2 {
        return None;
    }
    let all: Vec<usize> = (0..model.part_groups.len()).collect();
    let (ppm_low, ppm_high) = interval(model, &all, replicates, seed);
    let sources: Vec<SourceUncertainty> = model
        .part_groups
        .iter()
        .enumerate()
        .map(|(g, group)| {
            let (lo, hi) = interval(model, &[g], replicates, seed ^ (g as u64 + 1));
            SourceUncertainty {
                source: group.source.clone(),
                contributors: group
                    .members
                    .iter()
                    .map(|&i| model.contributors[i].name.clone())
                    .collect(),
                parts: group.measured_parts(),
                ppm_low: lo,
                ppm_high: hi,
            }
        })
        .collect();
    let dominant = sources
        .iter()
        .max_by(|a, b| (a.ppm_high - a.ppm_low).total_cmp(&(b.ppm_high - b.ppm_low)))
        .filter(|_| sources.len() > 1)
        .map(|s| s.source.clone());
    let (mean, sd) = model.assembly(&model.means(), &model.covariance);
    let ppm = normal_rejects(mean, sd, &model.requirement).2;
    let parts: Vec<String> = sources
        .iter()
        .map(|s| format!("{} measured parts of {}", s.parts, file_name(&s.source)))
        .collect();
    let mut statement = format!(
        "forecast {} ppm, 90 % interval {}-{} ppm, from {}",
        short(ppm),
        short(ppm_low),
        short(ppm_high),
        parts.join(", ")
    );
    if let Some(d) = &dominant {
        statement.push_str(&format!(
            "; most of that uncertainty comes from the parts of {}: measuring more of them narrows it most",
            file_name(d)
        ));
    }
    Some(ForecastUncertainty {
        forecast: "measured",
        level: LEVEL,
        replicates,
        seed,
        ppm,
        ppm_low,
        ppm_high,
        sources,
        dominant,
        statement,
    })
}

fn file_name(path: &str) -> &str {
    path.rsplit(['/', '\\']).next().unwrap_or(path)
}

/// Two significant digits at least, as an engineer would quote a ppm.
fn short(ppm: f64) -> String {
    if ppm == 0.0 {
        "0".into()
    } else if ppm < 0.001 {
        "<0.001".into()
    } else {
        let decimals = (1 - ppm.log10().floor() as i32).max(0) as usize;
        format!("{ppm:.decimals$}")
    }
}

/// The 90 % percentile interval of the forecast with the parts of `groups` resampled.
fn interval(model: &StackModel, groups: &[usize], replicates: usize, seed: u64) -> (f64, f64) {
    let mut ppms: Vec<f64> = (0..replicates as u64)
        .into_par_iter()
        .map(|r| {
            let mut rng = Xoshiro256PlusPlus::seed_from_u64(seed.wrapping_mul(0x9E37_79B9) ^ r);
            replicate_ppm(model, groups, &mut rng)
        })
        .collect();
    ppms.sort_by(f64::total_cmp);
    let tail = (1.0 - LEVEL) / 2.0;
    (percentile(&ppms, tail), percentile(&ppms, 1.0 - tail))
}

/// Linear interpolation between order statistics (the common "type 7" definition).
fn percentile(sorted: &[f64], q: f64) -> f64 {
    let h = (sorted.len() - 1) as f64 * q;
    let lo = h.floor() as usize;
    let hi = (lo + 1).min(sorted.len() - 1);
    sorted[lo] + (h - lo as f64) * (sorted[hi] - sorted[lo])
}

fn replicate_ppm(model: &StackModel, groups: &[usize], rng: &mut Xoshiro256PlusPlus) -> f64 {
    let mut means = model.means();
    let mut cov = model.covariance.clone();
    for &g in groups {
        let group = &model.part_groups[g];
        let n = group.parts() as u64;
        let rows: Vec<usize> = (0..n)
            .map(|_| ((rng.next_u64() as u128 * n as u128) >> 64) as usize)
            .collect();
        let drawn: Vec<Vec<f64>> = group
            .columns
            .iter()
            .map(|c| rows.iter().map(|&r| c[r]).collect())
            .collect();
        for (m, &i) in group.members.iter().enumerate() {
            let v: Vec<f64> = drawn[m].iter().copied().filter(|x| !x.is_nan()).collect();
            if v.len() < 2 {
                continue;
            }
            let mean = v.iter().sum::<f64>() / v.len() as f64;
            means[i] = mean;
            cov[i][i] = v.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (v.len() - 1) as f64;
            for (m2, &j) in group.members.iter().enumerate().take(m) {
                if model.covariance[i][j] == 0.0 {
                    continue;
                }
                if let Some((c, _)) = pairwise_covariance(&drawn[m], &drawn[m2]) {
                    cov[i][j] = c;
                    cov[j][i] = c;
                }
            }
        }
    }
    let (mean, sd) = model.assembly(&means, &cov);
    normal_rejects(mean, sd, &model.requirement).2
}
