//! Control-chart constants d2, d3 and c4, computed rather than copied from a table.

use super::integrate::integrate;
use super::normal::cdf;
use std::collections::BTreeMap;
use std::sync::Mutex;

type Cache = Mutex<BTreeMap<usize, f64>>;
static D2: Cache = Mutex::new(BTreeMap::new());
static D3: Cache = Mutex::new(BTreeMap::new());

/// The integrals cost milliseconds (d3 is a double integral) and charts ask for the same m
/// once per subgroup: each m is computed once per run.
fn cached(cache: &Cache, m: usize, compute: fn(usize) -> f64) -> f64 {
    if let Some(v) = cache.lock().ok().and_then(|c| c.get(&m).copied()) {
        return v;
    }
    let v = compute(m);
    if let Ok(mut c) = cache.lock() {
        c.insert(m, v);
    }
    v
}

/// Half-width of the integration range in σ: the integrands are below 1e-30 beyond it.
const RANGE: f64 = 12.0;

/// d2(m): the mean range of m standard normal values.
///
/// # Formula
/// d2(m) = ∫ [1 − (1 − Φ(x))ᵐ − Φ(x)ᵐ] dx (Tippett 1925). Checked against the published table
/// (ASTM MNL-7, "Factors for constructing control charts"), d2(2) = 2/√π exactly.
pub fn d2(m: usize) -> f64 {
    // Individuals charts (m = 2) are the common case: their constants in closed form.
    if m == 2 {
        return 2.0 / std::f64::consts::PI.sqrt();
    }
    cached(&D2, m, d2_integral)
}

fn d2_integral(m: usize) -> f64 {
    if m < 2 {
        return f64::NAN;
    }
    let m = m as i32;
    integrate(
        |x| {
            let p = cdf(x);
            1.0 - (1.0 - p).powi(m) - p.powi(m)
        },
        -RANGE,
        RANGE,
        0.5,
    )
}

/// d3(m): the standard deviation of the range of m standard normal values.
///
/// # Formula
/// d3² = E[R²] − d2², E[R²] = 2∬_{x<y} [1 − Φ(y)ᵐ − (1 − Φ(x))ᵐ + (Φ(y) − Φ(x))ᵐ] dx dy.
/// d3(2) = √(2 − 4/π) exactly.
pub fn d3(m: usize) -> f64 {
    if m == 2 {
        return (2.0 - 4.0 / std::f64::consts::PI).sqrt();
    }
    cached(&D3, m, d3_integral)
}

fn d3_integral(m: usize) -> f64 {
    if m < 2 {
        return f64::NAN;
    }
    let k = m as i32;
    let inner = |y: f64| {
        let py = cdf(y);
        integrate(
            |x| {
                let px = cdf(x);
                1.0 - py.powi(k) - (1.0 - px).powi(k) + (py - px).powi(k)
            },
            -RANGE,
            y,
            1.0,
        )
    };
    let er2 = 2.0 * integrate(inner, -RANGE, RANGE, 1.0);
    let d2 = d2(m);
    (er2 - d2 * d2).max(0.0).sqrt()
}

/// c4(m) = √(2/(m − 1)) · Γ(m/2)/Γ((m − 1)/2): E[s] = c4·σ for normal samples of size m.
pub fn c4(m: usize) -> f64 {
    if m < 2 {
        return f64::NAN;
    }
    let n = m as f64;
    use statrs::function::gamma::ln_gamma;
    (2.0 / (n - 1.0)).sqrt() * (ln_gamma(n / 2.0) - ln_gamma((n - 1.0) / 2.0)).exp()
}

/// The factors of the X̄-R, X̄-S and I-MR charts for subgroup size m.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct ChartFactors {
    pub a2: f64,
    pub a3: f64,
    pub d3_lower: f64,
    pub d4_upper: f64,
    pub b3: f64,
    pub b4: f64,
}

/// A2 = 3/(d2√m), D3 = max(0, 1 − 3d3/d2), D4 = 1 + 3d3/d2, A3 = 3/(c4√m),
/// B3 = max(0, 1 − 3√(1 − c4²)/c4), B4 = 1 + 3√(1 − c4²)/c4 (ASTM MNL-7 definitions).
pub fn chart_factors(m: usize) -> ChartFactors {
    let (d2, d3, c4) = (d2(m), d3(m), c4(m));
    let rm = (m as f64).sqrt();
    let s = 3.0 * (1.0 - c4 * c4).sqrt() / c4;
    ChartFactors {
        a2: 3.0 / (d2 * rm),
        a3: 3.0 / (c4 * rm),
        d3_lower: (1.0 - 3.0 * d3 / d2).max(0.0),
        d4_upper: 1.0 + 3.0 * d3 / d2,
        b3: (1.0 - s).max(0.0),
        b4: 1.0 + s,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The closed forms for m = 2 that `d2` and `d3` return (the range of two normals is
    /// |N(0, 2)|: mean 2/√π, variance 2 − 4/π) against the integrals used for other m.
    #[test]
    fn the_integrals_give_the_closed_forms_at_two() {
        assert!((d2_integral(2) - d2(2)).abs() < 1e-12, "{}", d2_integral(2));
        assert!((d3_integral(2) - d3(2)).abs() < 1e-9, "{}", d3_integral(2));
    }
}
