//! Distribution models fitted by maximum likelihood, their goodness of fit, and capability by
//! the percentile method.
//!
//! Families: normal; lognormal, Weibull and gamma with the threshold at 0 (scipy's
//! `fit(x, floc=0)`) and with the threshold estimated (3-parameter, profile likelihood); Box–Cox
//! with λ by maximum likelihood (scipy's `boxcox`), shifted when the data are not all positive.
//! Capability from a model follows the percentile method of ISO 22514-2: the 0.135 %, 50 % and
//! 99.865 % quantiles take the place of μ − 3σ, μ and μ + 3σ.

use super::capability::{Limits, Ppm};
use super::distribution::{box_cox, Distribution};
use super::moments::Runs;
use super::normal;
use serde::Serialize;
use statrs::function::gamma::digamma;
use std::collections::BTreeMap;

/// Below this many values no model is fitted.
pub const MIN_FIT_N: usize = 5;
/// ΔAIC within which the normal model is kept over a better-scoring one: models within 2 have
/// substantial support (Burnham & Anderson 2002, Model Selection and Multimodel Inference §2.6).
pub const AIC_TIE: f64 = 2.0;
/// Above this many values the threshold and Box–Cox λ are searched on evenly spaced order
/// statistics (see [`search_sample`]): the search costs dozens of fits, the final fit one.
pub const SEARCH_N: usize = 2000;
/// Above this many distinct values the fitted cdf in Anderson–Darling is interpolated between
/// this many exact evaluations (see [`anderson_darling_fitted`]); the fitted A² ranks models
/// for the reader and feeds no p-value.
pub const EXACT_AD_N: usize = 256;

pub const MODEL_NAMES: [&str; 8] = [
    "normal",
    "lognormal",
    "weibull",
    "gamma",
    "lognormal_3p",
    "weibull_3p",
    "gamma_3p",
    "boxcox",
];

/// The percentile-method indices and the model's reject rates.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct PercentileCapability {
    pub p00135: f64,
    pub median: f64,
    pub p99865: f64,
    /// (USL − LSL)/(X₉₉.₈₆₅ − X₀.₁₃₅).
    pub pp: Option<f64>,
    /// (X₅₀ − LSL)/(X₅₀ − X₀.₁₃₅).
    pub ppl: Option<f64>,
    /// (USL − X₅₀)/(X₉₉.₈₆₅ − X₅₀).
    pub ppu: Option<f64>,
    pub ppk: Option<f64>,
    pub ppm: Ppm,
}

/// One fitted model.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FittedModel {
    pub name: &'static str,
    pub params: BTreeMap<&'static str, f64>,
    pub loglik: f64,
    pub aic: f64,
    /// Anderson–Darling A² of the data against the fitted model (parameters estimated, so no
    /// table p-value applies; smaller is closer).
    pub anderson_darling: f64,
    #[serde(flatten)]
    pub capability: PercentileCapability,
    /// False when the fit lies on the edge of its parameter space (e.g. the threshold at the
    /// smallest value, where the likelihood is unbounded): shown, but not chosen by `auto`.
    pub selectable: bool,
    pub note: Option<String>,
    #[serde(skip)]
    pub distribution: Distribution,
}

/// Every family that can be fitted to these values (sorted ascending); families that cannot
/// (non-positive values for a threshold-0 family, too few values) are left out.
pub fn fit_all(sorted: &[f64], limits: &Limits) -> Vec<FittedModel> {
    fit_all_runs(&Runs::from_sorted(sorted), limits)
}

/// [`fit_all`] on the sample's runs of equal values: every sum of the likelihoods and
/// estimating equations is Σ count·f(value), so gauge data with few distinct values fit fast.
pub fn fit_all_runs(runs: &Runs, limits: &Limits) -> Vec<FittedModel> {
    if !fittable(runs) {
        return Vec::new();
    }
    MODEL_NAMES
        .iter()
        .filter_map(|name| fit_named_runs(name, runs, limits))
        .collect()
}

/// One family by name.
pub fn fit_named(name: &str, sorted: &[f64], limits: &Limits) -> Option<FittedModel> {
    fit_named_runs(name, &Runs::from_sorted(sorted), limits)
}

/// Enough values, and more than one distinct value.
fn fittable(runs: &Runs) -> bool {
    runs.n() >= MIN_FIT_N && runs.values.len() >= 2
}

/// [`fit_named`] on runs of equal values.
pub fn fit_named_runs(name: &str, runs: &Runs, limits: &Limits) -> Option<FittedModel> {
    let name = canonical(name)?;
    if !fittable(runs) {
        return None;
    }
    let positive = runs.values[0] > 0.0;
    let (distribution, k, selectable, note) = match name {
        "normal" => (normal_ml(runs), 2, true, None),
        "lognormal" if positive => (lognormal_ml(runs, 0.0), 2, true, None),
        "weibull" if positive => (weibull_ml(runs, 0.0)?, 2, true, None),
        "gamma" if positive => (gamma_ml(runs, 0.0)?, 2, true, None),
        "lognormal_3p" | "weibull_3p" | "gamma_3p" => {
            let family = &name[..name.len() - 3];
            let (d, edge) = threshold_ml(runs, family)?;
            let note = edge.then(|| {
                "threshold at the smallest value: the likelihood grows without bound there".into()
            });
            (d, 3, !edge, note)
        }
        "boxcox" => {
            let (d, shifted) = boxcox_ml(runs)?;
            let note = shifted.then(|| {
                let Distribution::BoxCox { shift, .. } = d else {
                    unreachable!()
                };
                format!("values shifted by {shift} before the transform (not all positive)")
            });
            (d, 3, true, note)
        }
        _ => return None,
    };
    Some(finish(
        name,
        distribution,
        k,
        selectable,
        note,
        runs,
        limits,
    ))
}

/// Σ count·f(value) over the runs.
fn wsum(runs: &Runs, f: impl Fn(f64) -> f64) -> f64 {
    runs.values
        .iter()
        .zip(&runs.counts)
        .map(|(&v, &c)| c as f64 * f(v))
        .sum()
}

/// The mean and n-divisor variance of f(value) over the runs, f evaluated once per run.
fn weighted_mean_var(runs: &Runs, f: impl Fn(f64) -> f64) -> (f64, f64) {
    let y: Vec<f64> = runs.values.iter().map(|&v| f(v)).collect();
    let w = |i: usize| runs.counts[i] as f64;
    let n = runs.n() as f64;
    let m = (0..y.len()).map(|i| w(i) * y[i]).sum::<f64>() / n;
    let var = (0..y.len()).map(|i| w(i) * (y[i] - m).powi(2)).sum::<f64>() / n;
    (m, var)
}

/// Σ count·ln f(value): the log-likelihood of the sample.
fn loglik(d: &Distribution, runs: &Runs) -> f64 {
    d.loglik_weighted(&runs.values, &runs.counts)
}

fn finish(
    name: &'static str,
    distribution: Distribution,
    k: usize,
    selectable: bool,
    note: Option<String>,
    runs: &Runs,
    limits: &Limits,
) -> FittedModel {
    let loglik = loglik(&distribution, runs);
    FittedModel {
        name,
        params: params(&distribution),
        loglik,
        aic: 2.0 * k as f64 - 2.0 * loglik,
        anderson_darling: anderson_darling_fitted_runs(runs, &distribution),
        capability: percentile_capability(&distribution, limits),
        selectable: selectable && loglik.is_finite(),
        note,
        distribution,
    }
}

fn name_static(name: &str) -> &'static str {
    MODEL_NAMES
        .iter()
        .find(|n| **n == name)
        .copied()
        .unwrap_or("?")
}

fn params(d: &Distribution) -> BTreeMap<&'static str, f64> {
    let pairs: Vec<(&'static str, f64)> = match *d {
        Distribution::Normal { mean, sd } => vec![("mean", mean), ("sd", sd)],
        Distribution::Lognormal {
            threshold,
            mu,
            sigma,
        } => vec![("threshold", threshold), ("mu", mu), ("sigma", sigma)],
        Distribution::Weibull {
            threshold,
            shape,
            scale,
        }
        | Distribution::Gamma {
            threshold,
            shape,
            scale,
        } => vec![("threshold", threshold), ("shape", shape), ("scale", scale)],
        Distribution::BoxCox {
            lambda,
            shift,
            mean,
            sd,
        } => vec![
            ("lambda", lambda),
            ("shift", shift),
            ("mean", mean),
            ("sd", sd),
        ],
    };
    pairs.into_iter().collect()
}

/// Quantiles, percentile indices and model reject rates against the limits.
pub fn percentile_capability(d: &Distribution, limits: &Limits) -> PercentileCapability {
    let lo = d.quantile(0.00135);
    let med = d.quantile(0.5);
    let hi = d.quantile(0.99865);
    let ok = |v: f64| v.is_finite().then_some(v);
    let ppl = limits.lsl.and_then(|l| ok((med - l) / (med - lo)));
    let ppu = limits.usl.and_then(|u| ok((u - med) / (hi - med)));
    let pp = match (limits.lsl, limits.usl) {
        (Some(l), Some(u)) => ok((u - l) / (hi - lo)),
        _ => None,
    };
    let ppk = match (ppl, ppu) {
        (Some(a), Some(b)) => Some(a.min(b)),
        (a, b) => a.or(b),
    };
    let below = limits.lsl.map(|l| d.cdf(l) * 1e6);
    let above = limits.usl.map(|u| d.sf(u) * 1e6);
    let total = match (below, above) {
        (None, None) => None,
        (a, b) => Some(a.unwrap_or(0.0) + b.unwrap_or(0.0)),
    };
    PercentileCapability {
        p00135: lo,
        median: med,
        p99865: hi,
        pp,
        ppl,
        ppu,
        ppk,
        ppm: Ppm {
            below,
            above,
            total,
        },
    }
}

/// A² = −n − (1/n)·Σ(2i − 1)[ln F(x₍ᵢ₎) + ln(1 − F(x₍ₙ₊₁₋ᵢ₎))] with F the fitted model.
pub fn anderson_darling_fitted(sorted: &[f64], d: &Distribution) -> f64 {
    anderson_darling_fitted_runs(&Runs::from_sorted(sorted), d)
}

/// [`anderson_darling_fitted`] on runs of equal values: a run of c values v at ranks r..r+c
/// adds ln F(v)·c(2r + c) + ln(1 − F(v))·c(2n − 2r − c). Above [`EXACT_AD_N`] distinct values,
/// F is evaluated exactly at that many of them (Chebyshev-spaced in rank, so densest in the
/// tails) and, in between, interpolated on the normal-score scale Φ⁻¹(F) (smooth for every
/// family here) by the cubic through the knots' scores and slopes f/φ (the test checks the
/// agreement with the exact sum to 1e-7).
pub fn anderson_darling_fitted_runs(runs: &Runs, d: &Distribution) -> f64 {
    let n = runs.n();
    let m = runs.values.len();
    let v = &runs.values;
    let tiny = f64::MIN_POSITIVE;
    // (lower tail F, upper tail 1 − F) of ascending values, each from one evaluation: the cdf
    // while it is below ½, then the survival function (the cdf of some families, the gamma's
    // incomplete gamma function above all, is the costly part).
    let mut upper_half = false;
    let mut tails = |x: f64| -> (f64, f64) {
        if !upper_half {
            let c = d.cdf(x);
            if c < 0.5 {
                return (c, 1.0 - c);
            }
            upper_half = true;
        }
        let s = d.sf(x);
        (1.0 - s, s)
    };
    // (ln F, ln(1 − F)) at each distinct value, from normal scores.
    let logs: Vec<(f64, f64)> = if m <= EXACT_AD_N {
        v.iter()
            .map(|&x| {
                let (c, s) = tails(x);
                (c.max(tiny).ln(), s.max(tiny).ln())
            })
            .collect()
    } else {
        // Knots spaced as Chebyshev points in rank: dense in the tails, where A² weighs most
        // and the scores bend most.
        let mut knots: Vec<usize> = (0..EXACT_AD_N)
            .map(|i| {
                let u = std::f64::consts::PI * i as f64 / (EXACT_AD_N - 1) as f64;
                ((1.0 - u.cos()) / 2.0 * (m - 1) as f64).round() as usize
            })
            .collect();
        knots.dedup();
        let mut score = |x: f64| {
            let (c, s) = tails(x);
            if c < 0.5 {
                normal::quantile(c.max(tiny))
            } else {
                -normal::quantile(s.max(tiny))
            }
        };
        let z: Vec<f64> = knots.iter().map(|&k| score(v[k])).collect();
        // dz/dx = f(x)/φ(z): with the slopes the interpolation is a cubic (Hermite).
        let slope: Vec<f64> = knots
            .iter()
            .zip(&z)
            .map(|(&k, &zk)| d.pdf(v[k]) / normal::pdf(zk))
            .collect();
        let mut out = Vec::with_capacity(m);
        let mut j = 0;
        for (i, &x) in v.iter().enumerate() {
            while j + 1 < knots.len() - 1 && knots[j + 1] <= i {
                j += 1;
            }
            let (x0, x1) = (v[knots[j]], v[knots[j + 1]]);
            let zi = if x1 > x0 {
                let (h, t) = (x1 - x0, (x - x0) / (x1 - x0));
                let (s0, s1) = (slope[j], slope[j + 1]);
                if s0.is_finite() && s1.is_finite() {
                    let (t2, t3) = (t * t, t * t * t);
                    (2.0 * t3 - 3.0 * t2 + 1.0) * z[j]
                        + (t3 - 2.0 * t2 + t) * h * s0
                        + (-2.0 * t3 + 3.0 * t2) * z[j + 1]
                        + (t3 - t2) * h * s1
                } else {
                    z[j] + (z[j + 1] - z[j]) * t
                }
            } else {
                z[j]
            };
            // One tail by erfc, the other by complement: each side keeps its digits.
            let (lower, upper) = if zi < 0.0 {
                let c = normal::cdf(zi);
                (c, 1.0 - c)
            } else {
                let u = normal::sf(zi);
                (1.0 - u, u)
            };
            out.push((lower.max(tiny).ln(), upper.max(tiny).ln()));
        }
        out
    };
    let nf = n as f64;
    let mut s = 0.0;
    let mut rank = 0usize;
    for ((ln_f, ln_sf), &c) in logs.iter().zip(&runs.counts) {
        let (r, cf) = (rank as f64, c as f64);
        s += cf * (2.0 * r + cf) * ln_f + cf * (2.0 * nf - 2.0 * r - cf) * ln_sf;
        rank += c;
    }
    -nf - s / nf
}

/// The model `auto` chooses and why: the lowest AIC among the selectable fits, except that the
/// normal model is kept when it is within [`AIC_TIE`] of the best.
pub fn choose(models: &[FittedModel]) -> Option<(usize, String)> {
    let mut order: Vec<usize> = (0..models.len())
        .filter(|&i| models[i].selectable)
        .collect();
    order.sort_by(|&a, &b| models[a].aic.total_cmp(&models[b].aic));
    let best = *order.first()?;
    let normal = models.iter().position(|m| m.name == "normal");
    if let Some(ni) = normal {
        if ni != best && models[ni].aic - models[best].aic <= AIC_TIE {
            return Some((
                ni,
                format!(
                    "normal kept: its AIC {:.1} is within {AIC_TIE} of the lowest ({} {:.1})",
                    models[ni].aic, models[best].name, models[best].aic
                ),
            ));
        }
    }
    let next = order
        .get(1)
        .map(|&i| format!("; next {} {:.1}", models[i].name, models[i].aic))
        .unwrap_or_default();
    Some((
        best,
        format!(
            "lowest AIC: {} {:.1}{next}",
            models[best].name, models[best].aic
        ),
    ))
}

/// scipy `norm.fit`: the mean and the n-divisor sd.
fn normal_ml(runs: &Runs) -> Distribution {
    let n = runs.n() as f64;
    let m = wsum(runs, |v| v) / n;
    let var = wsum(runs, |v| (v - m).powi(2)) / n;
    Distribution::Normal {
        mean: m,
        sd: var.sqrt(),
    }
}

/// Closed form: the mean and n-divisor sd of ln(x − θ).
fn lognormal_ml(runs: &Runs, threshold: f64) -> Distribution {
    let (mu, var) = weighted_mean_var(runs, |v| (v - threshold).ln());
    Distribution::Lognormal {
        threshold,
        mu,
        sigma: var.sqrt(),
    }
}

/// The shape k solves Σz^k·ln z / Σz^k − 1/k − mean(ln z) = 0 (increasing in k), then
/// scale = (mean z^k)^(1/k); z = (x − θ)/max so that the powers stay in range.
fn weibull_ml(runs: &Runs, threshold: f64) -> Option<Distribution> {
    let top = runs
        .values
        .iter()
        .fold(0.0f64, |a, &v| a.max(v - threshold));
    let lz: Vec<f64> = runs
        .values
        .iter()
        .map(|v| ((v - threshold) / top).ln())
        .collect();
    if lz.iter().any(|v| !v.is_finite()) {
        return None;
    }
    let w: Vec<f64> = runs.counts.iter().map(|&c| c as f64).collect();
    let n: f64 = w.iter().sum();
    let mean_lz = lz.iter().zip(&w).map(|(l, c)| c * l).sum::<f64>() / n;
    let g = |k: f64| {
        let (mut s0, mut s1) = (0.0, 0.0);
        for (&l, &c) in lz.iter().zip(&w) {
            let p = c * (k * l).exp();
            s0 += p;
            s1 += p * l;
        }
        s1 / s0 - 1.0 / k - mean_lz
    };
    // Newton on g (increasing and concave in k), safeguarded by a bracket.
    let g_and_slope = |k: f64| {
        let (mut s0, mut s1, mut s2) = (0.0, 0.0, 0.0);
        for (&l, &c) in lz.iter().zip(&w) {
            let p = c * (k * l).exp();
            s0 += p;
            s1 += p * l;
            s2 += p * l * l;
        }
        let m1 = s1 / s0;
        (m1 - 1.0 / k - mean_lz, s2 / s0 - m1 * m1 + 1.0 / (k * k))
    };
    let (mut lo, mut hi) = (1e-3, 1.0);
    while g(hi) < 0.0 {
        lo = hi;
        hi *= 2.0;
        if hi > 1e6 {
            return None;
        }
    }
    let mut k = 0.5 * (lo + hi);
    for _ in 0..100 {
        let (v, slope) = g_and_slope(k);
        if v < 0.0 {
            lo = k;
        } else {
            hi = k;
        }
        let next = k - v / slope;
        let next = if next > lo && next < hi {
            next
        } else {
            0.5 * (lo + hi)
        };
        if (next - k).abs() <= 1e-13 * k {
            k = next;
            break;
        }
        k = next;
    }
    let mean_pow = lz
        .iter()
        .zip(&w)
        .map(|(l, c)| c * (k * l).exp())
        .sum::<f64>()
        / n;
    Some(Distribution::Weibull {
        threshold,
        shape: k,
        scale: top * mean_pow.powf(1.0 / k),
    })
}

/// The shape k solves ln k − ψ(k) = ln(mean z) − mean(ln z) (Newton from Minka's start, in
/// ln k), then scale = mean z / k.
fn gamma_ml(runs: &Runs, threshold: f64) -> Option<Distribution> {
    let n = runs.n() as f64;
    let mz = wsum(runs, |v| v - threshold) / n;
    let s = mz.ln() - wsum(runs, |v| (v - threshold).ln()) / n;
    if !(s > 0.0 && s.is_finite()) {
        return None;
    }
    let f = |k: f64| k.ln() - digamma(k) - s;
    // f decreases in k from +∞ to 0.
    let (mut lo, mut hi) = (1e-6, 1.0);
    while f(hi) > 0.0 {
        lo = hi;
        hi *= 2.0;
        if hi > 1e12 {
            return None;
        }
    }
    let k = bisect(|k| -f(k), lo, hi)?;
    Some(Distribution::Gamma {
        threshold,
        shape: k,
        scale: mz / k,
    })
}

/// Root of an increasing function on [lo, hi] by bisection in the log (all roots here are
/// positive scale-free parameters).
fn bisect(f: impl Fn(f64) -> f64, lo: f64, hi: f64) -> Option<f64> {
    let (mut a, mut b) = (lo.ln(), hi.ln());
    if f(lo) > 0.0 || f(hi) < 0.0 {
        return None;
    }
    for _ in 0..200 {
        let m = 0.5 * (a + b);
        if f(m.exp()) < 0.0 {
            a = m;
        } else {
            b = m;
        }
        if b - a < 1e-14 {
            break;
        }
    }
    Some((0.5 * (a + b)).exp())
}

/// The 3-parameter fit: the threshold θ < min(x) maximising the profile likelihood, searched on
/// a grid of gaps min − θ from 10⁻⁴ to 10² ranges (log-spaced), then refined by golden section.
/// Also says whether the best θ lies at the smallest gap (the likelihood's unbounded edge).
fn threshold_ml(runs: &Runs, family: &str) -> Option<(Distribution, bool)> {
    let min = runs.values[0];
    let range = runs.values[runs.values.len() - 1] - min;
    let fit = |x: &Runs, gap: f64| -> Option<Distribution> {
        let t = min - gap;
        match family {
            "lognormal" => Some(lognormal_ml(x, t)),
            "weibull" => weibull_ml(x, t),
            _ => gamma_ml(x, t),
        }
    };
    let sample = search_sample(runs);
    let profile = |lg: f64| -> f64 {
        fit(&sample, lg.exp()).map_or(f64::NEG_INFINITY, |d| loglik(&d, &sample))
    };
    let (a, b) = ((range * 1e-4).ln(), (range * 1e2).ln());
    let steps = 36;
    let grid: Vec<f64> = (0..=steps)
        .map(|i| a + (b - a) * i as f64 / steps as f64)
        .collect();
    let values: Vec<f64> = grid.iter().map(|&g| profile(g)).collect();
    let best = (0..values.len()).max_by(|&i, &j| values[i].total_cmp(&values[j]))?;
    if !values[best].is_finite() {
        return None;
    }
    let edge = best == 0;
    let (lo, hi) = (grid[best.saturating_sub(1)], grid[(best + 1).min(steps)]);
    let lg = golden_max(profile, lo, hi, 1e-6);
    let d = fit(runs, lg.exp())?;
    Some((d, edge))
}

/// Box–Cox: λ maximises the profile log-likelihood llf(λ) = (λ − 1)·Σ ln x − (n/2)·ln σ̂²(λ)
/// (scipy `boxcox_llf`), by golden section on [−5, 5] after a grid; the mean and n-divisor sd
/// of the transformed values complete the model. Non-positive data are shifted by
/// −min + range/100 first (reported).
fn boxcox_ml(runs: &Runs) -> Option<(Distribution, bool)> {
    let min = runs.values[0];
    let range = runs.values[runs.values.len() - 1] - min;
    let shift = if min > 0.0 { 0.0 } else { -min + range / 100.0 };
    let sample = search_sample(runs);
    let n = sample.n() as f64;
    let sum_ln = wsum(&sample, |v| (v + shift).ln());
    let llf = |lambda: f64| -> f64 {
        let (_, var) = weighted_mean_var(&sample, |v| box_cox(v + shift, lambda));
        (lambda - 1.0) * sum_ln - n / 2.0 * var.ln()
    };
    let grid: Vec<f64> = (0..=40).map(|i| -5.0 + 0.25 * i as f64).collect();
    let best = (0..grid.len()).max_by(|&i, &j| llf(grid[i]).total_cmp(&llf(grid[j])))?;
    let (lo, hi) = (grid[best.saturating_sub(1)], grid[(best + 1).min(40)]);
    let lambda = golden_max(llf, lo, hi, 1e-9);
    let (m, var) = weighted_mean_var(runs, |v| box_cox(v + shift, lambda));
    let sd = var.sqrt();
    if !(sd > 0.0 && sd.is_finite()) {
        return None;
    }
    Some((
        Distribution::BoxCox {
            lambda,
            shift,
            mean: m,
            sd,
        },
        shift != 0.0,
    ))
}

/// Maximises f on [lo, hi] by golden section, one evaluation per step, to a bracket of `tol`.
fn golden_max(f: impl Fn(f64) -> f64, mut lo: f64, mut hi: f64, tol: f64) -> f64 {
    let phi = (5f64.sqrt() - 1.0) / 2.0;
    let mut c = hi - phi * (hi - lo);
    let mut d = lo + phi * (hi - lo);
    let (mut fc, mut fd) = (f(c), f(d));
    while hi - lo > tol {
        if fc > fd {
            hi = d;
            d = c;
            fd = fc;
            c = hi - phi * (hi - lo);
            fc = f(c);
        } else {
            lo = c;
            c = d;
            fc = fd;
            d = lo + phi * (hi - lo);
            fd = f(d);
        }
    }
    0.5 * (lo + hi)
}

/// Values the parameter searches run on: all of them up to [`SEARCH_N`], else that many evenly
/// spaced order statistics (the final parameters are then fitted to all values).
fn search_sample(runs: &Runs) -> std::borrow::Cow<'_, Runs> {
    let n = runs.n();
    if n <= SEARCH_N {
        return std::borrow::Cow::Borrowed(runs);
    }
    // The order statistic of rank i·(n − 1)/(SEARCH_N − 1), walking the runs once.
    let mut picked = Vec::with_capacity(SEARCH_N);
    let (mut run, mut end) = (0, runs.counts[0]);
    for i in 0..SEARCH_N {
        let rank = i * (n - 1) / (SEARCH_N - 1);
        while rank >= end {
            run += 1;
            end += runs.counts[run];
        }
        picked.push(runs.values[run]);
    }
    std::borrow::Cow::Owned(Runs::from_sorted(&picked))
}

/// The canonical name of a family, for matching `--model`.
pub fn canonical(name: &str) -> Option<&'static str> {
    let n = name_static(name);
    (n != "?").then_some(n)
}
