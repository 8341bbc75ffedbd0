//! Normality tests: Shapiro–Wilk (Royston's AS R94) and Anderson–Darling with estimated mean
//! and sd (D'Agostino & Stephens 1986).

use super::moments::Runs;
use super::normal;
use std::collections::HashMap;
use std::sync::{Arc, Mutex, OnceLock};

/// Shapiro–Wilk W and its p-value.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct ShapiroWilk {
    pub w: f64,
    pub p: f64,
    /// True above n = 5000, where Royston's p approximation is not validated.
    pub p_approximate: bool,
}

/// Anderson–Darling A², A*² and p.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct AndersonDarling {
    pub a2: f64,
    pub a2_adjusted: f64,
    pub p: f64,
}

/// Above this many distinct values the Anderson–Darling sum uses the interpolated ln Φ
/// ([`normal::ln_cdf_fast`]); up to it every term is computed from erfc (about 40 ns each).
/// The interpolation moves A² by at most about n·4·10⁻¹² (its error on ln Φ is below 2·10⁻¹²,
/// and A² sums it with weights adding up to 2n): below 10⁻⁶ up to a million values.
pub const EXACT_AD_N: usize = 1024;

/// Largest n for which Royston's approximation of the null distribution was fitted.
pub const SHAPIRO_WILK_MAX_N: usize = 5000;

/// Shapiro–Wilk test on values sorted ascending, by Royston (1995), Remark AS R94, Applied
/// Statistics 44(4):547–551: the same steps as scipy's `shapiro` and R's `shapiro.test`.
/// `None` for n < 3 or zero range.
pub fn shapiro_wilk(sorted: &[f64]) -> Option<ShapiroWilk> {
    shapiro_wilk_runs(&Runs::from_sorted(sorted))
}

/// [`shapiro_wilk`] on the sample's runs of equal values.
///
/// # Formula
/// W = (Σ aᵢ x₍ᵢ₎)² / Σ(xᵢ − x̄)². Since Σ aᵢ = 0, Σ aᵢ x₍ᵢ₎ = Σ aᵢ (x₍ᵢ₎ − x̄) (no cancellation
/// of the leading digits), and a run of c equal values v at ranks r..r+c contributes
/// (v − x̄)·(Aᵣ₊꜀ − Aᵣ) with A the prefix sums of the coefficients.
pub fn shapiro_wilk_runs(runs: &Runs) -> Option<ShapiroWilk> {
    let n = runs.n();
    if n < 3 || runs.values.len() < 2 {
        return None;
    }
    let nf = n as f64;
    let (sum, _) = weighted_sums(runs);
    let mean = sum / nf;
    let ss: f64 = runs
        .values
        .iter()
        .zip(&runs.counts)
        .map(|(v, &c)| c as f64 * (v - mean) * (v - mean))
        .sum();
    let prefix = prefix_weights(n);
    let mut num = 0.0;
    let mut rank = 0;
    for (&v, &c) in runs.values.iter().zip(&runs.counts) {
        num += (v - mean) * (prefix[rank + c] - prefix[rank]);
        rank += c;
    }
    let w = (num * num / ss).min(1.0);
    let p = shapiro_wilk_p(w, n);
    Some(ShapiroWilk {
        w,
        p,
        p_approximate: n > SHAPIRO_WILK_MAX_N,
    })
}

/// Σ c·v and Σ c over the runs.
fn weighted_sums(runs: &Runs) -> (f64, usize) {
    let sum = runs
        .values
        .iter()
        .zip(&runs.counts)
        .map(|(v, &c)| c as f64 * v)
        .sum();
    (sum, runs.n())
}

/// Prefix sums A₀ = 0, Aₖ = a₀ + … + aₖ₋₁ of the Shapiro–Wilk coefficients for n.
fn prefix_weights(n: usize) -> Arc<Vec<f64>> {
    static CACHE: OnceLock<Mutex<HashMap<usize, Arc<Vec<f64>>>>> = OnceLock::new();
    let cache = CACHE.get_or_init(|| Mutex::new(HashMap::new()));
    if let Some(a) = cache.lock().map(|c| c.get(&n).cloned()).ok().flatten() {
        return a;
    }
    let mut prefix = Vec::with_capacity(n + 1);
    prefix.push(0.0);
    let mut acc = 0.0;
    for a in weights(n).iter() {
        acc += a;
        prefix.push(acc);
    }
    let prefix = Arc::new(prefix);
    if let Ok(mut c) = cache.lock() {
        if c.len() > 64 {
            c.clear();
        }
        c.insert(n, prefix.clone());
    }
    prefix
}

fn shapiro_wilk_p(w: f64, n: usize) -> f64 {
    use std::f64::consts::PI;
    if n == 3 {
        let p = 6.0 / PI * (w.sqrt().asin() - 0.75f64.sqrt().asin());
        return p.clamp(0.0, 1.0);
    }
    let nf = n as f64;
    let (y, mu, sigma) = if n <= 11 {
        let gamma = -2.273 + 0.459 * nf;
        let y = -(gamma - (1.0 - w).ln()).ln();
        let mu = 0.5440 - 0.39978 * nf + 0.025054 * nf * nf - 0.0006714 * nf.powi(3);
        let sigma = (1.3822 - 0.77857 * nf + 0.062767 * nf * nf - 0.0020322 * nf.powi(3)).exp();
        (y, mu, sigma)
    } else {
        let l = nf.ln();
        let y = (1.0 - w).ln();
        let mu = -1.5861 - 0.31082 * l - 0.083751 * l * l + 0.0038915 * l.powi(3);
        let sigma = (-0.4803 - 0.082676 * l + 0.0030302 * l * l).exp();
        (y, mu, sigma)
    };
    if y.is_nan() {
        return 0.0;
    }
    normal::sf((y - mu) / sigma)
}

/// The Shapiro–Wilk coefficients for sample size n (AS R94 steps 1–3); their prefix sums are
/// cached by n because a run usually tests many features of the same size.
fn weights(n: usize) -> Vec<f64> {
    compute_weights(n)
}

fn compute_weights(n: usize) -> Vec<f64> {
    if n == 3 {
        let s = 0.5f64.sqrt();
        return vec![-s, 0.0, s];
    }
    let nf = n as f64;
    let m: Vec<f64> = (1..=n)
        .map(|i| normal::quantile((i as f64 - 0.375) / (nf + 0.25)))
        .collect();
    let mm: f64 = m.iter().map(|v| v * v).sum();
    let u = 1.0 / nf.sqrt();
    let poly = |c: [f64; 6]| c[0] + u * (c[1] + u * (c[2] + u * (c[3] + u * (c[4] + u * c[5]))));
    let rsm = mm.sqrt();
    let an = poly([
        m[n - 1] / rsm,
        0.221157,
        -0.147981,
        -2.071190,
        4.434685,
        -2.706056,
    ]);
    let mut a = vec![0.0; n];
    if n > 5 {
        let an1 = poly([
            m[n - 2] / rsm,
            0.042981,
            -0.293762,
            -1.752461,
            5.682633,
            -3.582633,
        ]);
        let phi = (mm - 2.0 * m[n - 1].powi(2) - 2.0 * m[n - 2].powi(2))
            / (1.0 - 2.0 * an * an - 2.0 * an1 * an1);
        let rphi = phi.sqrt();
        for i in 2..n - 2 {
            a[i] = m[i] / rphi;
        }
        a[n - 2] = an1;
        a[1] = -an1;
    } else {
        let phi = (mm - 2.0 * m[n - 1].powi(2)) / (1.0 - 2.0 * an * an);
        let rphi = phi.sqrt();
        for i in 1..n - 1 {
            a[i] = m[i] / rphi;
        }
    }
    a[n - 1] = an;
    a[0] = -an;
    a
}

/// Anderson–Darling test for normality with mean and sd (n − 1) estimated from the sorted
/// sample, as statsmodels `normal_ad` and scipy `anderson` compute it. `None` for n < 3 or
/// zero spread.
///
/// # Formula
/// A² = −n − (1/n) Σ (2i − 1)[ln Φ(zᵢ) + ln(1 − Φ(zₙ₊₁₋ᵢ))]; A*² = A²(1 + 0.75/n + 2.25/n²);
/// p from D'Agostino & Stephens (1986), Goodness-of-Fit Techniques, Table 4.9, 0 above 13.
pub fn anderson_darling(sorted: &[f64], mean: f64, sd: f64) -> Option<AndersonDarling> {
    anderson_darling_runs(&Runs::from_sorted(sorted), mean, sd)
}

/// [`anderson_darling`] on the sample's runs of equal values: a run of c values z at ranks
/// r..r+c adds ln Φ(z)·Σ(2k + 1) = ln Φ(z)·c(2r + c) and ln(1 − Φ(z))·Σ(2(n − k) − 1) =
/// ln(1 − Φ(z))·c(2n − 2r − c), so ln Φ is evaluated once per distinct value.
pub fn anderson_darling_runs(runs: &Runs, mean: f64, sd: f64) -> Option<AndersonDarling> {
    let n = runs.n();
    if n < 3 || sd.is_nan() || sd <= 0.0 {
        return None;
    }
    let nf = n as f64;
    // Up to EXACT_AD_N distinct values every ln Φ comes from erfc; above, it is interpolated
    // (its error is far below what the p-value table resolves).
    let exact = runs.values.len() <= EXACT_AD_N;
    let mut s = 0.0;
    let mut rank = 0usize;
    for (&x, &c) in runs.values.iter().zip(&runs.counts) {
        let z = (x - mean) / sd;
        let (ln_cdf, ln_sf) = if exact {
            ln_cdf_and_sf(z)
        } else {
            (normal::ln_cdf_fast(z), normal::ln_cdf_fast(-z))
        };
        let (r, c) = (rank as f64, c as f64);
        s += c * (2.0 * r + c) * ln_cdf + c * (2.0 * nf - 2.0 * r - c) * ln_sf;
        rank += c as usize;
    }
    let a2 = -nf - s / nf;
    let a2_adjusted = a2 * (1.0 + 0.75 / nf + 2.25 / (nf * nf));
    Some(AndersonDarling {
        a2,
        a2_adjusted,
        p: anderson_darling_p(a2_adjusted),
    })
}

/// (ln Φ(z), ln(1 − Φ(z))) from one erfc: the smaller tail t with full relative accuracy,
/// the larger as ln(1 − t); both kept above ln(10⁻³⁰⁰).
fn ln_cdf_and_sf(z: f64) -> (f64, f64) {
    const TINY: f64 = 1e-300;
    let tail = (0.5 * normal::erfc(z.abs() * std::f64::consts::FRAC_1_SQRT_2)).max(TINY);
    let (small, large) = (tail.ln(), (-tail).ln_1p());
    if z < 0.0 {
        (small, large)
    } else {
        (large, small)
    }
}

/// p-value of A*² for the normal case with both parameters estimated (Table 4.9 as
/// statsmodels 0.15 `normal_ad` implements it).
pub fn anderson_darling_p(a: f64) -> f64 {
    let p = if a < 0.2 {
        1.0 - (-13.436 + 101.14 * a - 223.73 * a * a).exp()
    } else if a < 0.34 {
        1.0 - (-8.318 + 42.796 * a - 59.938 * a * a).exp()
    } else if a < 0.6 {
        (0.9177 - 4.279 * a - 1.38 * a * a).exp()
    } else if a <= 13.0 {
        (1.2937 - 5.709 * a + 0.0186 * a * a).exp()
    } else {
        0.0
    };
    p.clamp(0.0, 1.0)
}
