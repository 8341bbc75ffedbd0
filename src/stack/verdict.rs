//! Does the measured capability support the design assumption? Per contributor with plain
//! reasons, and overall with the cause that matters most.

use super::analytic::{measured, Measured, Rss};
use super::model::{normal_rejects, StackModel};
use serde::Serialize;
use statrs::distribution::{ContinuousCDF, StudentsT};

/// A correlation this strong (and significant) breaks the independence RSS assumes
/// (common practice, no source).
pub const CORRELATION_THRESHOLD: f64 = 0.3;
/// Significance level of the normality and correlation checks.
pub const ALPHA: f64 = 0.05;
/// Skewness beyond this is called out as the shape of the departure (common practice).
pub const SKEW_NOTE: f64 = 0.5;

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Correlation {
    pub with: String,
    pub r: f64,
    pub parts: usize,
}

/// One contributor against the design assumption.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ContributorVerdict {
    pub name: String,
    pub sensitivity: f64,
    pub nominal: f64,
    pub lower_limit: f64,
    pub upper_limit: f64,
    pub n: Option<usize>,
    pub source: &'static str,
    pub assumed_sd: f64,
    pub measured_mean: f64,
    pub measured_sd: f64,
    /// measured σ / assumed σ.
    pub sd_ratio: f64,
    /// μᵢ − mᵢ, in the contributor's unit, as a fraction of Tᵢ, and in assumed σ.
    pub mean_shift: f64,
    pub mean_shift_of_tolerance: f64,
    pub mean_shift_sigmas: f64,
    pub ppk: Option<f64>,
    pub ppk_lower: Option<f64>,
    pub normality_p: Option<f64>,
    /// The measured parts' distribution model and its percentile Ppk.
    pub model: Option<&'static str>,
    pub model_ppk: Option<f64>,
    pub stable: Option<bool>,
    /// aᵢ Σⱼ aⱼ Σᵢⱼ / σ²: the contributor's share of the assembly variance (shares sum to 1).
    pub variance_share: f64,
    /// aᵢ(μᵢ − mᵢ) / Σ aⱼ(μⱼ − mⱼ): its share of the assembly mean shift.
    pub mean_shift_share: f64,
    pub correlations: Vec<Correlation>,
    pub supports_assumption: bool,
    pub reasons: Vec<String>,
}

/// One cause of the excess over the assumed reject rate.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Cause {
    pub contributor: String,
    /// `mean shift`, `spread`, or `correlation`.
    pub kind: String,
    /// How many ppm the forecast drops when this cause alone is put back to the assumption.
    pub ppm_effect: f64,
    /// That drop as a share of the sum of all drops.
    pub share: f64,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Verdict {
    pub supports_assumption: bool,
    /// Forecast ppm / assumed ppm.
    pub ppm_ratio: Option<f64>,
    pub summary: String,
    /// The summary's first part: the forecast against the assumption and the main cause.
    pub headline: String,
    pub causes: Vec<Cause>,
}

pub fn contributor_verdicts(model: &StackModel) -> Vec<ContributorVerdict> {
    let cp = model.assumptions.cp;
    let (_, sd) = model.assembly(&model.means(), &model.covariance);
    let var = sd * sd;
    let shift_total: f64 = model
        .contributors
        .iter()
        .map(|c| c.sensitivity * (c.mean - c.middle()))
        .sum();
    let k = model.contributors.len();
    model
        .contributors
        .iter()
        .enumerate()
        .map(|(i, c)| {
            let assumed = c.assumed_sd(cp);
            let shift = c.mean - c.middle();
            let share: f64 = (0..k)
                .map(|j| c.sensitivity * model.contributors[j].sensitivity * model.covariance[i][j])
                .sum::<f64>()
                / var;
            let correlations: Vec<Correlation> = model
                .paired
                .iter()
                .filter_map(|&(a, b, parts)| {
                    let other = if a == i {
                        b
                    } else if b == i {
                        a
                    } else {
                        return None;
                    };
                    Some(Correlation {
                        with: model.contributors[other].name.clone(),
                        r: model.correlation(i, other),
                        parts,
                    })
                })
                .collect();
            let mut reasons = Vec::new();
            let ratio = c.sd / assumed;
            let shift_sigmas = shift / assumed;
            let meets = c.ppk.is_none_or(|p| p >= cp);
            if !meets {
                if ratio > 1.0 {
                    reasons.push(format!("spread {ratio:.2}× the assumed σ"));
                }
                if shift_sigmas.abs() >= 0.1 {
                    let side = if shift > 0.0 { "above" } else { "below" };
                    reasons.push(format!(
                        "mean {:.2}σ {side} the middle of its tolerance ({:.0} % of the tolerance)",
                        shift_sigmas.abs(),
                        100.0 * (shift / c.half_width()).abs()
                    ));
                }
                if reasons.is_empty() {
                    reasons.push(format!(
                        "Ppk {:.2} below the assumed capability {cp}",
                        c.ppk.unwrap_or(f64::NAN)
                    ));
                }
            }
            if let Some(p) = c.normality_p.filter(|&p| p < ALPHA) {
                let shape = match c.skewness {
                    Some(s) if s > SKEW_NOTE => "skewed right",
                    Some(s) if s < -SKEW_NOTE => "skewed left",
                    _ => "not normal",
                };
                reasons.push(format!(
                    "{shape}: normal model rejected (Anderson–Darling p = {p:.3})"
                ));
            }
            if c.stable == Some(false) {
                reasons.push(format!(
                    "not stable: {}; its capability describes no stable process",
                    c.stability
                        .as_deref()
                        .unwrap_or("the control chart signals")
                ));
            }
            for corr in &correlations {
                if corr.r.abs() >= CORRELATION_THRESHOLD
                    && correlation_p(corr.r, corr.parts) < ALPHA
                {
                    reasons.push(format!("correlated with {}, r = {:.2}", corr.with, corr.r));
                }
            }
            ContributorVerdict {
                name: c.name.clone(),
                sensitivity: c.sensitivity,
                nominal: c.nominal,
                lower_limit: c.lower_limit,
                upper_limit: c.upper_limit,
                n: c.n,
                source: if c.n.is_some() { "measured" } else { "stated" },
                assumed_sd: assumed,
                measured_mean: c.mean,
                measured_sd: c.sd,
                sd_ratio: ratio,
                mean_shift: shift,
                mean_shift_of_tolerance: shift / c.half_width(),
                mean_shift_sigmas: shift_sigmas,
                ppk: c.ppk,
                ppk_lower: c.ppk_lower,
                normality_p: c.normality_p,
                model: c.model_name,
                model_ppk: c.model_ppk,
                stable: c.stable,
                variance_share: share,
                mean_shift_share: if shift_total.abs() > 0.0 {
                    c.sensitivity * shift / shift_total
                } else {
                    0.0
                },
                correlations,
                supports_assumption: reasons.is_empty(),
                reasons,
            }
        })
        .collect()
}

/// Two-sided p of a correlation r from n pairs: t = r√((n − 2)/(1 − r²)), n − 2 degrees of freedom.
pub fn correlation_p(r: f64, n: usize) -> f64 {
    if n < 3 || r.abs() >= 1.0 {
        return if r.abs() >= 1.0 { 0.0 } else { 1.0 };
    }
    let nu = (n - 2) as f64;
    let t = r * (nu / (1.0 - r * r)).sqrt();
    StudentsT::new(0.0, 1.0, nu).map_or(1.0, |d| 2.0 * d.sf(t.abs()))
}

/// One at a time, each cause is put back to the assumption (a contributor's mean to the middle
/// of its zone, its σ to the assumed σ, its correlations to zero); the drop in forecast ppm
/// is that cause's effect.
pub fn causes(model: &StackModel) -> Vec<Cause> {
    let base = measured(model).ppm;
    let cp = model.assumptions.cp;
    let mut out = Vec::new();
    for (i, c) in model.contributors.iter().enumerate() {
        let mut means = model.means();
        means[i] = c.middle();
        out.push((
            c.name.clone(),
            "mean shift",
            base - ppm_with(model, &means, &model.covariance),
        ));
        let cov = model.with_sd_scaled(i, c.assumed_sd(cp) / c.sd);
        out.push((
            c.name.clone(),
            "spread",
            base - ppm_with(model, &model.means(), &cov),
        ));
        if model.paired.iter().any(|&(a, b, _)| a == i || b == i) {
            let cov = model.with_uncorrelated(i);
            out.push((
                c.name.clone(),
                "correlation",
                base - ppm_with(model, &model.means(), &cov),
            ));
        }
    }
    let positive: f64 = out.iter().map(|o| o.2.max(0.0)).sum();
    let mut causes: Vec<Cause> = out
        .into_iter()
        .filter(|o| o.2 > 0.0)
        .map(|(contributor, kind, effect)| Cause {
            contributor,
            kind: kind.to_string(),
            ppm_effect: effect,
            share: effect / positive,
        })
        .collect();
    causes.sort_by(|a, b| b.ppm_effect.total_cmp(&a.ppm_effect));
    causes
}

fn ppm_with(model: &StackModel, means: &[f64], cov: &[Vec<f64>]) -> f64 {
    let (mean, sd) = model.assembly(means, cov);
    normal_rejects(mean, sd, &model.requirement).2
}

pub fn verdict(
    model: &StackModel,
    rss: &Rss,
    measured: &Measured,
    contributors: &[ContributorVerdict],
) -> Verdict {
    let ratio = (rss.ppm > 0.0).then(|| measured.ppm / rss.ppm);
    let all_support = contributors.iter().all(|c| c.supports_assumption);
    let supports = all_support && measured.ppm <= rss.ppm;
    let causes = if measured.ppm > rss.ppm {
        causes(model)
    } else {
        Vec::new()
    };
    let req = &model.requirement.name;
    let mut summary = match ratio {
        Some(r) if measured.ppm > rss.ppm => format!(
            "The design assumption is optimistic by {}: the parts being made forecast {} ppm outside the {req} limits, against {} ppm assumed.",
            times(r), fmt_ppm(measured.ppm), fmt_ppm(rss.ppm)
        ),
        Some(r) if r < 0.999 => format!(
            "The parts being made forecast {} ppm outside the {req} limits, {} fewer than the {} ppm the design assumed.",
            fmt_ppm(measured.ppm),
            times(1.0 / r),
            fmt_ppm(rss.ppm)
        ),
        Some(_) => format!(
            "The parts being made forecast {} ppm outside the {req} limits, about the {} ppm the design assumed.",
            fmt_ppm(measured.ppm),
            fmt_ppm(rss.ppm)
        ),
        None => format!("The parts being made forecast {} ppm outside the {req} limits; the design assumed none.", fmt_ppm(measured.ppm)),
    };
    if let Some(top) = causes.first() {
        summary.push_str(&format!(
            " {:.0} % of the excess comes from the {}'s {}.",
            100.0 * top.share,
            top.contributor,
            top.kind
        ));
    }
    let headline = summary.clone();
    let failing: Vec<&ContributorVerdict> = contributors
        .iter()
        .filter(|c| !c.supports_assumption)
        .collect();
    if failing.is_empty() {
        summary.push_str(" Every contributor supports the assumption.");
    } else {
        let names: Vec<String> = failing
            .iter()
            .map(|c| format!("{} ({})", c.name, c.reasons.join("; ")))
            .collect();
        summary.push_str(&format!(" Not supported by: {}.", names.join(", ")));
    }
    Verdict {
        supports_assumption: supports,
        ppm_ratio: ratio,
        summary,
        headline,
        causes,
    }
}

fn times(r: f64) -> String {
    if r >= 10.0 {
        format!("{r:.0}×")
    } else {
        format!("{r:.1}×")
    }
}

pub fn fmt_ppm(p: f64) -> String {
    crate::output::ppm(Some(p))
}
