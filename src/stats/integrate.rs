//! Numerical integration: composite Gauss–Legendre on unit-width panels.

use std::sync::OnceLock;

const ORDER: usize = 20;

/// Nodes and weights of the 20-point Gauss–Legendre rule on [−1, 1], found by Newton's
/// method on the Legendre polynomial (Numerical Recipes `gauleg`).
fn rule() -> &'static ([f64; ORDER], [f64; ORDER]) {
    static RULE: OnceLock<([f64; ORDER], [f64; ORDER])> = OnceLock::new();
    RULE.get_or_init(|| {
        let mut x = [0.0; ORDER];
        let mut w = [0.0; ORDER];
        let n = ORDER as f64;
        for i in 0..ORDER.div_ceil(2) {
            let mut z = (std::f64::consts::PI * (i as f64 + 0.75) / (n + 0.5)).cos();
            let mut dp = 0.0;
            for _ in 0..100 {
                let (mut p1, mut p2) = (1.0, 0.0);
                for j in 0..ORDER {
                    let p3 = p2;
                    p2 = p1;
                    p1 = ((2.0 * j as f64 + 1.0) * z * p2 - j as f64 * p3) / (j as f64 + 1.0);
                }
                dp = n * (z * p1 - p2) / (z * z - 1.0);
                let dz = p1 / dp;
                z -= dz;
                if dz.abs() < 1e-15 {
                    break;
                }
            }
            x[i] = -z;
            x[ORDER - 1 - i] = z;
            w[i] = 2.0 / ((1.0 - z * z) * dp * dp);
            w[ORDER - 1 - i] = w[i];
        }
        (x, w)
    })
}

/// ∫ₐᵇ f, on panels of width at most `panel` (20 points each).
pub fn integrate(f: impl Fn(f64) -> f64, a: f64, b: f64, panel: f64) -> f64 {
    if b <= a {
        return 0.0;
    }
    let (x, w) = rule();
    let panels = ((b - a) / panel).ceil().max(1.0) as usize;
    let h = (b - a) / panels as f64;
    let mut total = 0.0;
    for p in 0..panels {
        let lo = a + p as f64 * h;
        let mid = lo + 0.5 * h;
        let s: f64 = x
            .iter()
            .zip(w)
            .map(|(xi, wi)| wi * f(mid + 0.5 * h * xi))
            .sum();
        total += 0.5 * h * s;
    }
    total
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn integrates_a_polynomial_and_a_gaussian_exactly_enough() {
        assert!((integrate(|x| x * x, 0.0, 3.0, 1.0) - 9.0).abs() < 1e-12);
        let g = integrate(|x| (-0.5 * x * x).exp(), -12.0, 12.0, 1.0);
        assert!((g - (2.0 * std::f64::consts::PI).sqrt()).abs() < 1e-12);
    }
}
