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
/// Above this many values the fitted cdf in Anderson–Darling is interpolated between exact
/// evaluations (see [`anderson_darling_fitted`]).
pub const EXACT_AD_N: usize = 4096;

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
    if sorted.len() < MIN_FIT_N || sorted[sorted.len() - 1] <= sorted[0] {
        return Vec::new();
    }
    MODEL_NAMES
        .iter()
        .filter_map(|name| fit_named(name, sorted, limits))
        .collect()
}

/// One family by name.
pub fn fit_named(name: &str, sorted: &[f64], limits: &Limits) -> Option<FittedModel> {
    let name = canonical(name)?;
    if sorted.len() < MIN_FIT_N || sorted[sorted.len() - 1] <= sorted[0] {
        return None;
    }
    let positive = sorted[0] > 0.0;
    let (distribution, k, selectable, note) = match name {
        "normal" => (normal_ml(sorted), 2, true, None),
        "lognormal" if positive => (lognormal_ml(sorted, 0.0), 2, true, None),
        "weibull" if positive => (weibull_ml(sorted, 0.0)?, 2, true, None),
        "gamma" if positive => (gamma_ml(sorted, 0.0)?, 2, true, None),
        "lognormal_3p" | "weibull_3p" | "gamma_3p" => {
            let family = &name[..name.len() - 3];
            let (d, edge) = threshold_ml(sorted, family)?;
            let note = edge.then(|| {
                "threshold at the smallest value: the likelihood grows without bound there".into()
            });
            (d, 3, !edge, note)
        }
        "boxcox" => {
            let (d, shifted) = boxcox_ml(sorted)?;
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
        sorted,
        limits,
    ))
}

fn finish(
    name: &'static str,
    distribution: Distribution,
    k: usize,
    selectable: bool,
    note: Option<String>,
    sorted: &[f64],
    limits: &Limits,
) -> FittedModel {
    let loglik = distribution.loglik(sorted);
    FittedModel {
        name,
        params: params(&distribution),
        loglik,
        aic: 2.0 * k as f64 - 2.0 * loglik,
        anderson_darling: anderson_darling_fitted(sorted, &distribution),
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
/// Above [`EXACT_AD_N`] values, F is evaluated exactly at that many evenly spaced order
/// statistics and, in between, interpolated linearly in x on the normal-score scale Φ⁻¹(F),
/// which is smooth for every family here (the test checks the agreement).
pub fn anderson_darling_fitted(sorted: &[f64], d: &Distribution) -> f64 {
    let n = sorted.len();
    let tiny = f64::MIN_POSITIVE;
    // (ln F, ln(1 − F)) at each value, from normal scores.
    let logs: Vec<(f64, f64)> = if n <= EXACT_AD_N {
        sorted
            .iter()
            .map(|&x| (d.cdf(x).max(tiny).ln(), d.sf(x).max(tiny).ln()))
            .collect()
    } else {
        let knots: Vec<usize> = (0..EXACT_AD_N)
            .map(|i| i * (n - 1) / (EXACT_AD_N - 1))
            .collect();
        let score = |x: f64| {
            let (c, s) = (d.cdf(x), d.sf(x));
            if c < 0.5 {
                normal::quantile(c.max(tiny))
            } else {
                -normal::quantile(s.max(tiny))
            }
        };
        let z: Vec<f64> = knots.iter().map(|&k| score(sorted[k])).collect();
        let mut out = Vec::with_capacity(n);
        let mut j = 0;
        for (i, &x) in sorted.iter().enumerate() {
            while j + 1 < knots.len() - 1 && knots[j + 1] <= i {
                j += 1;
            }
            let (x0, x1) = (sorted[knots[j]], sorted[knots[j + 1]]);
            let zi = if x1 > x0 {
                z[j] + (z[j + 1] - z[j]) * (x - x0) / (x1 - x0)
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
    let s: f64 = (0..n)
        .map(|i| (2 * i + 1) as f64 * (logs[i].0 + logs[n - 1 - i].1))
        .sum();
    -(n as f64) - s / n as f64
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

fn mean(x: &[f64]) -> f64 {
    x.iter().sum::<f64>() / x.len() as f64
}

/// scipy `norm.fit`: the mean and the n-divisor sd.
fn normal_ml(x: &[f64]) -> Distribution {
    let m = mean(x);
    let var = x.iter().map(|v| (v - m).powi(2)).sum::<f64>() / x.len() as f64;
    Distribution::Normal {
        mean: m,
        sd: var.sqrt(),
    }
}

/// Closed form: the mean and n-divisor sd of ln(x − θ).
fn lognormal_ml(x: &[f64], threshold: f64) -> Distribution {
    let y: Vec<f64> = x.iter().map(|v| (v - threshold).ln()).collect();
    let mu = mean(&y);
    let var = y.iter().map(|v| (v - mu).powi(2)).sum::<f64>() / y.len() as f64;
    Distribution::Lognormal {
        threshold,
        mu,
        sigma: var.sqrt(),
    }
}

/// The shape k solves Σz^k·ln z / Σz^k − 1/k − mean(ln z) = 0 (increasing in k), then
/// scale = (mean z^k)^(1/k); z = (x − θ)/max so that the powers stay in range.
fn weibull_ml(x: &[f64], threshold: f64) -> Option<Distribution> {
    let top = x.iter().fold(0.0f64, |a, &v| a.max(v - threshold));
    let lz: Vec<f64> = x.iter().map(|v| ((v - threshold) / top).ln()).collect();
    if lz.iter().any(|v| !v.is_finite()) {
        return None;
    }
    let mean_lz = mean(&lz);
    let g = |k: f64| {
        let (mut s0, mut s1) = (0.0, 0.0);
        for &l in &lz {
            let p = (k * l).exp();
            s0 += p;
            s1 += p * l;
        }
        s1 / s0 - 1.0 / k - mean_lz
    };
    // Newton on g (increasing and concave in k), safeguarded by a bracket.
    let g_and_slope = |k: f64| {
        let (mut s0, mut s1, mut s2) = (0.0, 0.0, 0.0);
        for &l in &lz {
            let p = (k * l).exp();
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
    let mean_pow = lz.iter().map(|l| (k * l).exp()).sum::<f64>() / lz.len() as f64;
    Some(Distribution::Weibull {
        threshold,
        shape: k,
        scale: top * mean_pow.powf(1.0 / k),
    })
}

/// The shape k solves ln k − ψ(k) = ln(mean z) − mean(ln z) (Newton from Minka's start, in
/// ln k), then scale = mean z / k.
fn gamma_ml(x: &[f64], threshold: f64) -> Option<Distribution> {
    let z: Vec<f64> = x.iter().map(|v| v - threshold).collect();
    let mz = mean(&z);
    let s = mz.ln() - z.iter().map(|v| v.ln()).sum::<f64>() / z.len() as f64;
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
fn threshold_ml(sorted: &[f64], family: &str) -> Option<(Distribution, bool)> {
    let min = sorted[0];
    let range = sorted[sorted.len() - 1] - min;
    let fit = |x: &[f64], gap: f64| -> Option<Distribution> {
        let t = min - gap;
        match family {
            "lognormal" => Some(lognormal_ml(x, t)),
            "weibull" => weibull_ml(x, t),
            _ => gamma_ml(x, t),
        }
    };
    let sample = search_sample(sorted);
    let profile = |lg: f64| -> f64 {
        fit(&sample, lg.exp()).map_or(f64::NEG_INFINITY, |d| {
            sample.iter().map(|&x| d.ln_pdf(x)).sum::<f64>()
        })
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
    let d = fit(sorted, lg.exp())?;
    Some((d, edge))
}

/// Box–Cox: λ maximises the profile log-likelihood llf(λ) = (λ − 1)·Σ ln x − (n/2)·ln σ̂²(λ)
/// (scipy `boxcox_llf`), by golden section on [−5, 5] after a grid; the mean and n-divisor sd
/// of the transformed values complete the model. Non-positive data are shifted by
/// −min + range/100 first (reported).
fn boxcox_ml(sorted: &[f64]) -> Option<(Distribution, bool)> {
    let min = sorted[0];
    let range = sorted[sorted.len() - 1] - min;
    let shift = if min > 0.0 { 0.0 } else { -min + range / 100.0 };
    let sample = search_sample(sorted);
    let x: Vec<f64> = sample.iter().map(|v| v + shift).collect();
    let sum_ln: f64 = x.iter().map(|v| v.ln()).sum();
    let n = x.len() as f64;
    let llf = |lambda: f64| -> f64 {
        let y: Vec<f64> = x.iter().map(|&v| box_cox(v, lambda)).collect();
        let m = mean(&y);
        let var = y.iter().map(|v| (v - m).powi(2)).sum::<f64>() / n;
        (lambda - 1.0) * sum_ln - n / 2.0 * var.ln()
    };
    let grid: Vec<f64> = (0..=40).map(|i| -5.0 + 0.25 * i as f64).collect();
    let best = (0..grid.len()).max_by(|&i, &j| llf(grid[i]).total_cmp(&llf(grid[j])))?;
    let (lo, hi) = (grid[best.saturating_sub(1)], grid[(best + 1).min(40)]);
    let lambda = golden_max(llf, lo, hi, 1e-9);
    let x: Vec<f64> = sorted.iter().map(|v| v + shift).collect();
    let n = x.len() as f64;
    let y: Vec<f64> = x.iter().map(|&v| box_cox(v, lambda)).collect();
    let m = mean(&y);
    let sd = (y.iter().map(|v| (v - m).powi(2)).sum::<f64>() / n).sqrt();
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
fn search_sample(sorted: &[f64]) -> std::borrow::Cow<'_, [f64]> {
    let n = sorted.len();
    if n <= SEARCH_N {
        return sorted.into();
    }
    (0..SEARCH_N)
        .map(|i| sorted[(i * (n - 1)) / (SEARCH_N - 1)])
        .collect::<Vec<f64>>()
        .into()
}

/// The canonical name of a family, for matching `--model`.
pub fn canonical(name: &str) -> Option<&'static str> {
    let n = name_static(name);
    (n != "?").then_some(n)
}
