//! The distribution families a feature can be modelled by: cdf, survival function, quantile
//! and log-density, in the parameterisation of scipy.stats (`norm`, `lognorm`, `weibull_min`,
//! `gamma` with `loc` as the threshold) so that fitted values compare one to one.

use super::normal;
use statrs::function::gamma::{gamma_lr, gamma_ur, ln_gamma};
use std::f64::consts::PI;

#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Distribution {
    Normal {
        mean: f64,
        sd: f64,
    },
    /// ln(x − threshold) ~ N(mu, sigma).
    Lognormal {
        threshold: f64,
        mu: f64,
        sigma: f64,
    },
    /// F(x) = 1 − exp(−((x − threshold)/scale)^shape).
    Weibull {
        threshold: f64,
        shape: f64,
        scale: f64,
    },
    /// Density ∝ (x − threshold)^(shape−1)·exp(−(x − threshold)/scale).
    Gamma {
        threshold: f64,
        shape: f64,
        scale: f64,
    },
    /// y = ((x + shift)^λ − 1)/λ (ln(x + shift) at λ = 0) ~ N(mean, sd).
    BoxCox {
        lambda: f64,
        shift: f64,
        mean: f64,
        sd: f64,
    },
}

/// The Box–Cox transform of x (already shifted), defined for x > 0.
pub fn box_cox(x: f64, lambda: f64) -> f64 {
    if lambda.abs() < 1e-12 {
        x.ln()
    } else {
        (x.powf(lambda) - 1.0) / lambda
    }
}

impl Distribution {
    /// P(X ≤ x).
    pub fn cdf(&self, x: f64) -> f64 {
        match *self {
            Self::Normal { mean, sd } => normal::cdf((x - mean) / sd),
            Self::Lognormal {
                threshold,
                mu,
                sigma,
            } => {
                if x <= threshold {
                    0.0
                } else {
                    normal::cdf(((x - threshold).ln() - mu) / sigma)
                }
            }
            Self::Weibull {
                threshold,
                shape,
                scale,
            } => {
                if x <= threshold {
                    0.0
                } else {
                    -(-((x - threshold) / scale).powf(shape)).exp_m1()
                }
            }
            Self::Gamma {
                threshold,
                shape,
                scale,
            } => {
                if x <= threshold {
                    0.0
                } else {
                    gamma_lr(shape, (x - threshold) / scale)
                }
            }
            Self::BoxCox {
                lambda,
                shift,
                mean,
                sd,
            } => {
                let s = x + shift;
                if s <= 0.0 {
                    // The transformed normal's part below −1/λ has no preimage (λ > 0) and is
                    // counted at the domain's edge, as in `sf`.
                    return if lambda > 0.0 {
                        normal::cdf((-1.0 / lambda - mean) / sd)
                    } else {
                        0.0
                    };
                }
                normal::cdf((box_cox(s, lambda) - mean) / sd)
            }
        }
    }

    /// P(X > x), computed directly so that upper tails keep their digits.
    pub fn sf(&self, x: f64) -> f64 {
        match *self {
            Self::Normal { mean, sd } => normal::sf((x - mean) / sd),
            Self::Lognormal {
                threshold,
                mu,
                sigma,
            } => {
                if x <= threshold {
                    1.0
                } else {
                    normal::sf(((x - threshold).ln() - mu) / sigma)
                }
            }
            Self::Weibull {
                threshold,
                shape,
                scale,
            } => {
                if x <= threshold {
                    1.0
                } else {
                    (-((x - threshold) / scale).powf(shape)).exp()
                }
            }
            Self::Gamma {
                threshold,
                shape,
                scale,
            } => {
                if x <= threshold {
                    1.0
                } else {
                    gamma_ur(shape, (x - threshold) / scale)
                }
            }
            Self::BoxCox {
                lambda,
                shift,
                mean,
                sd,
            } => {
                let s = x + shift;
                // Below the transform's domain (s ≤ 0) all mass lies above; for λ > 0 the
                // transformed normal's part below −1/λ has no preimage and is counted at s = 0.
                let y = if s <= 0.0 {
                    if lambda > 0.0 {
                        -1.0 / lambda
                    } else {
                        return 1.0;
                    }
                } else {
                    box_cox(s, lambda)
                };
                normal::sf((y - mean) / sd)
            }
        }
    }

    /// The p-quantile.
    pub fn quantile(&self, p: f64) -> f64 {
        match *self {
            Self::Normal { mean, sd } => mean + sd * normal::quantile(p),
            Self::Lognormal {
                threshold,
                mu,
                sigma,
            } => threshold + (mu + sigma * normal::quantile(p)).exp(),
            Self::Weibull {
                threshold,
                shape,
                scale,
            } => threshold + scale * (-(-p).ln_1p()).powf(1.0 / shape),
            Self::Gamma { .. } => self.quantile_by_bisection(p),
            Self::BoxCox {
                lambda,
                shift,
                mean,
                sd,
            } => {
                let y = mean + sd * normal::quantile(p);
                let s = if lambda.abs() < 1e-12 {
                    y.exp()
                } else {
                    let base = lambda * y + 1.0;
                    if base <= 0.0 {
                        // Beyond the transform's range: the quantile sits at the domain's edge
                        // (λ > 0) or is unbounded (λ < 0).
                        return if lambda > 0.0 { -shift } else { f64::INFINITY };
                    }
                    base.powf(1.0 / lambda)
                };
                s - shift
            }
        }
    }

    /// ln f(x); −∞ outside the support.
    pub fn ln_pdf(&self, x: f64) -> f64 {
        let ln_sqrt_2pi = 0.5 * (2.0 * PI).ln();
        match *self {
            Self::Normal { mean, sd } => {
                let z = (x - mean) / sd;
                -0.5 * z * z - sd.ln() - ln_sqrt_2pi
            }
            Self::Lognormal {
                threshold,
                mu,
                sigma,
            } => {
                if x <= threshold {
                    return f64::NEG_INFINITY;
                }
                let y = (x - threshold).ln();
                let z = (y - mu) / sigma;
                -0.5 * z * z - sigma.ln() - ln_sqrt_2pi - y
            }
            Self::Weibull {
                threshold,
                shape,
                scale,
            } => {
                if x <= threshold {
                    return f64::NEG_INFINITY;
                }
                let z = (x - threshold) / scale;
                (shape / scale).ln() + (shape - 1.0) * z.ln() - z.powf(shape)
            }
            Self::Gamma {
                threshold,
                shape,
                scale,
            } => {
                if x <= threshold {
                    return f64::NEG_INFINITY;
                }
                let z = (x - threshold) / scale;
                (shape - 1.0) * z.ln() - z - ln_gamma(shape) - scale.ln()
            }
            Self::BoxCox {
                lambda,
                shift,
                mean,
                sd,
            } => {
                let s = x + shift;
                if s <= 0.0 {
                    return f64::NEG_INFINITY;
                }
                let z = (box_cox(s, lambda) - mean) / sd;
                -0.5 * z * z - sd.ln() - ln_sqrt_2pi + (lambda - 1.0) * s.ln()
            }
        }
    }

    /// Σ ln f(x), with the gamma family's constant term computed once.
    pub fn loglik(&self, x: &[f64]) -> f64 {
        let ones = vec![1; x.len()];
        self.loglik_weighted(x, &ones)
    }

    /// Σ cᵢ·ln f(xᵢ): the log-likelihood of a sample given as distinct values with counts.
    pub fn loglik_weighted(&self, x: &[f64], counts: &[usize]) -> f64 {
        let n: f64 = counts.iter().map(|&c| c as f64).sum();
        match *self {
            Self::Gamma {
                threshold,
                shape,
                scale,
            } => {
                if x.iter().any(|&v| v <= threshold) {
                    return f64::NEG_INFINITY;
                }
                let body: f64 = x
                    .iter()
                    .zip(counts)
                    .map(|(&v, &c)| {
                        let z = (v - threshold) / scale;
                        c as f64 * ((shape - 1.0) * z.ln() - z)
                    })
                    .sum();
                body - n * (ln_gamma(shape) + scale.ln())
            }
            _ => x
                .iter()
                .zip(counts)
                .map(|(&v, &c)| c as f64 * self.ln_pdf(v))
                .sum(),
        }
    }

    /// The density, for charts.
    pub fn pdf(&self, x: f64) -> f64 {
        self.ln_pdf(x).exp()
    }

    /// Quantile by bracketing and bisection on the cdf (or the sf in the upper half, where it
    /// keeps the digits): for families without a closed-form inverse.
    fn quantile_by_bisection(&self, p: f64) -> f64 {
        let Self::Gamma {
            threshold,
            shape,
            scale,
        } = *self
        else {
            return f64::NAN;
        };
        if p <= 0.0 {
            return threshold;
        }
        if p >= 1.0 {
            return f64::INFINITY;
        }
        // Start at the Wilson–Hilferty approximation a(1 − 1/(9a) + z/√(9a))³ (Johnson, Kotz &
        // Balakrishnan, Continuous Univariate Distributions 1, §17.5), then Newton on the tail
        // that keeps its digits, kept inside a shrinking bracket (bisection when a step leaves
        // it): a few evaluations of the incomplete gamma function instead of fifty.
        let upper = p > 0.5;
        let z = normal::quantile(p);
        let c = 1.0 / (9.0 * shape);
        let wh = shape * (1.0 - c + z * c.sqrt()).powi(3);
        let sd = shape.sqrt() * scale;
        let mut x = if wh > 0.0 {
            threshold + scale * wh
        } else {
            threshold + 0.5 * scale * shape.min(1.0)
        };
        let (mut lo, mut hi) = (threshold, f64::INFINITY);
        for _ in 0..200 {
            // F(x) − p, from the lower or the upper tail.
            let err = if upper {
                (1.0 - p) - self.sf(x)
            } else {
                self.cdf(x) - p
            };
            if err < 0.0 {
                lo = x;
            } else {
                hi = x;
            }
            let mut next = x - err / self.pdf(x);
            if !(next > lo && next < hi) {
                next = if hi.is_finite() {
                    0.5 * (lo + hi)
                } else {
                    x + sd.max(x - threshold)
                };
            }
            if (next - x).abs() <= 1e-15 * x.abs().max(1e-300) || hi - lo <= 1e-15 * x.abs() {
                return next;
            }
            x = next;
        }
        x
    }
}
