//! Within-subgroup sigma: the short-term spread that Cp and Cpk are built on.

use super::constants::{c4, d2};
use super::moments::moments;

/// How the within-subgroup sigma is estimated.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum WithinMethod {
    /// Individuals: average moving range of span 2 over d2(2).
    MovingRange,
    /// Subgroups: average of Rⱼ/d2(nⱼ) (R̄/d2(m) for equal sizes).
    Range,
    /// Subgroups: average of sⱼ/c4(nⱼ) (S̄/c4(m) for equal sizes).
    Sd,
    /// Subgroups: pooled sd over c4(Σ(nⱼ − 1) + 1).
    Pooled,
}

impl WithinMethod {
    pub fn name(self) -> &'static str {
        match self {
            Self::MovingRange => "moving_range",
            Self::Range => "range",
            Self::Sd => "sd",
            Self::Pooled => "pooled",
        }
    }
}

/// σ̂ = MR̄/d2(2), MR̄ the mean of |xᵢ − xᵢ₋₁| over consecutive values (ASTM MNL-7; the I-MR
/// chart's estimate). NaN with fewer than two values.
pub fn moving_range_sigma(x: &[f64]) -> f64 {
    if x.len() < 2 {
        return f64::NAN;
    }
    mean_moving_range(x) / d2(2)
}

/// MR̄, the mean moving range of span 2 (summed in lanes: the I-MR chart's MR̄ is this number);
/// NaN with fewer than two values.
pub fn mean_moving_range(x: &[f64]) -> f64 {
    if x.len() < 2 {
        return f64::NAN;
    }
    super::moments::sum_of_steps(x, |before, v| (v - before).abs()) / (x.len() - 1) as f64
}

/// Within sigma from subgroups (each a slice of values); subgroups of one value carry no
/// within information and are left out.
///
/// # Formula
/// Range: mean of Rⱼ/d2(nⱼ); Sd: mean of sⱼ/c4(nⱼ); Pooled: s_p/c4(ν + 1) with
/// s_p² = ΣΣ(x − x̄ⱼ)²/ν, ν = Σ(nⱼ − 1). For equal sizes m these are R̄/d2(m), S̄/c4(m)
/// and s_p/c4(k(m − 1) + 1) (Montgomery, Introduction to Statistical Quality Control, ch. 6).
pub fn subgroup_sigma(groups: &[Vec<f64>], method: WithinMethod) -> f64 {
    let groups: Vec<&Vec<f64>> = groups.iter().filter(|g| g.len() >= 2).collect();
    if groups.is_empty() {
        return f64::NAN;
    }
    let k = groups.len() as f64;
    match method {
        WithinMethod::Range => {
            groups
                .iter()
                .map(|g| {
                    let (lo, hi) = g
                        .iter()
                        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &v| {
                            (a.min(v), b.max(v))
                        });
                    (hi - lo) / d2(g.len())
                })
                .sum::<f64>()
                / k
        }
        WithinMethod::Sd => {
            groups
                .iter()
                .map(|g| moments(g).sd / c4(g.len()))
                .sum::<f64>()
                / k
        }
        WithinMethod::Pooled | WithinMethod::MovingRange => {
            let mut ss = 0.0;
            let mut nu = 0usize;
            for g in &groups {
                let s = moments(g).sd;
                ss += s * s * (g.len() - 1) as f64;
                nu += g.len() - 1;
            }
            (ss / nu as f64).sqrt() / c4(nu + 1)
        }
    }
}
