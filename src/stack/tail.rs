//! Assembly reject rates without sampling noise, for contributors with known densities.
//!
//! The normal contributors (measured ones under the normal model, with their covariances, and
//! stated normals) sum to one normal in closed form. The others (stated uniform and triangular,
//! independent by construction) are discretised on a common lattice and convolved directly; the
//! tail is then the lattice sum against the normal part's survival function. The lattice is run
//! at step h and h/2 and Richardson-extrapolated (the discretisation error is O(h²)); the
//! difference is the reported grid error. Beside it, the Lugannani–Rice saddlepoint
//! approximation from the cumulant generating functions.

use super::file::Distribution;
use super::model::StackModel;
use crate::stats::normal;
use serde::Serialize;

/// Most lattice points of the convolved non-normal part (at the finer step).
const MAX_POINTS: f64 = 8000.0;

/// Rates in ppm at the requirement.
#[derive(Debug, Clone, Copy, Serialize, PartialEq)]
pub struct Rates {
    pub ppm_below: Option<f64>,
    pub ppm_above: Option<f64>,
    pub ppm: f64,
}

/// The tail forecast block of the stack output.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct TailForecast {
    /// `normal_closed_form` when every contributor is normal, else `convolution`.
    pub method: &'static str,
    #[serde(flatten)]
    pub rates: Rates,
    /// Estimated error of the convolution from the lattice (ppm, total); 0 for the closed form.
    pub grid_error_ppm: f64,
    /// Lattice step of the finer convolution, in the assembly's unit.
    pub grid_step: Option<f64>,
    pub saddlepoint: Option<Rates>,
    /// The contributors whose stated shape is not normal.
    pub non_normal: Vec<String>,
}

/// One independent contributor a·X with X uniform or triangular: centre and half-width of a·X.
#[derive(Debug, Clone, Copy)]
struct Shape {
    centre: f64,
    half_width: f64,
    triangular: bool,
}

impl Shape {
    /// P(a·X ≤ x).
    fn cdf(&self, x: f64) -> f64 {
        let w = self.half_width;
        let t = ((x - self.centre) / w).clamp(-1.0, 1.0);
        if self.triangular {
            if t <= 0.0 {
                (1.0 + t).powi(2) / 2.0
            } else {
                1.0 - (1.0 - t).powi(2) / 2.0
            }
        } else {
            (t + 1.0) / 2.0
        }
    }
}

/// The normal part (mean, sd) and the non-normal shapes of the model.
fn split(model: &StackModel) -> ((f64, f64), Vec<Shape>, Vec<String>) {
    let k = model.contributors.len();
    let mut normal_idx = Vec::new();
    let mut shapes = Vec::new();
    let mut names = Vec::new();
    for (i, c) in model.contributors.iter().enumerate() {
        let a = c.sensitivity;
        match c.distribution {
            Some(Distribution::Uniform) => shapes.push(Shape {
                centre: a * c.mean,
                half_width: a.abs() * c.sd * 3f64.sqrt(),
                triangular: false,
            }),
            Some(Distribution::Triangular) => shapes.push(Shape {
                centre: a * c.mean,
                half_width: a.abs() * c.sd * 6f64.sqrt(),
                triangular: true,
            }),
            _ => {
                normal_idx.push(i);
                continue;
            }
        }
        names.push(c.name.clone());
    }
    let mut mean = 0.0;
    let mut var = 0.0;
    for &i in &normal_idx {
        let ai = model.contributors[i].sensitivity;
        mean += ai * model.contributors[i].mean;
        for &j in &normal_idx {
            var += ai * model.contributors[j].sensitivity * model.covariance[i][j];
        }
    }
    debug_assert!(normal_idx.len() + shapes.len() == k);
    ((mean, var.max(0.0).sqrt()), shapes, names)
}

/// Reject rates of the assembly from the model's shapes, without sampling.
pub fn tail_forecast(model: &StackModel) -> TailForecast {
    let ((mu, sigma), shapes, non_normal) = split(model);
    let (lsl, usl) = (model.requirement.lsl, model.requirement.usl);
    if shapes.is_empty() {
        let (b, a, t) = super::model::normal_rejects(mu, sigma, &model.requirement);
        let rates = Rates {
            ppm_below: b,
            ppm_above: a,
            ppm: t,
        };
        return TailForecast {
            method: "normal_closed_form",
            rates,
            grid_error_ppm: 0.0,
            grid_step: None,
            saddlepoint: Some(rates),
            non_normal,
        };
    }
    let total_width: f64 = shapes.iter().map(|s| 2.0 * s.half_width).sum();
    let narrowest = shapes
        .iter()
        .map(|s| s.half_width)
        .fold(f64::INFINITY, f64::min);
    let mut h = narrowest / 50.0;
    if sigma > 0.0 {
        h = h.min(sigma / 8.0);
    }
    h = h.max(total_width / MAX_POINTS * 2.0);
    let coarse = lattice_rates(&shapes, mu, sigma, lsl, usl, h);
    let fine = lattice_rates(&shapes, mu, sigma, lsl, usl, h / 2.0);
    let extrapolate = |c: Option<f64>, f: Option<f64>| match (c, f) {
        (Some(c), Some(f)) => Some(((4.0 * f - c) / 3.0).max(0.0)),
        _ => None,
    };
    let below = extrapolate(coarse.0, fine.0);
    let above = extrapolate(coarse.1, fine.1);
    let total = |b: Option<f64>, a: Option<f64>| b.unwrap_or(0.0) + a.unwrap_or(0.0);
    let error = (total(fine.0, fine.1) - total(coarse.0, coarse.1)).abs() / 3.0;
    TailForecast {
        method: "convolution",
        rates: Rates {
            ppm_below: below.map(|p| p * 1e6),
            ppm_above: above.map(|p| p * 1e6),
            ppm: total(below, above) * 1e6,
        },
        grid_error_ppm: error * 1e6,
        grid_step: Some(h / 2.0),
        saddlepoint: saddlepoint(&shapes, mu, sigma, lsl, usl),
        non_normal,
    }
}

/// (P below lsl, P above usl) with the non-normal part on a lattice of step h.
fn lattice_rates(
    shapes: &[Shape],
    mu: f64,
    sigma: f64,
    lsl: Option<f64>,
    usl: Option<f64>,
    h: f64,
) -> (Option<f64>, Option<f64>) {
    // Masses at points (offset + j)·h; each shape's mass on the cell around a point.
    let mut offset: i64 = 0;
    let mut mass = vec![1.0];
    for s in shapes {
        let first = ((s.centre - s.half_width) / h).round() as i64 - 1;
        let last = ((s.centre + s.half_width) / h).round() as i64 + 1;
        let own: Vec<f64> = (first..=last)
            .map(|j| {
                let x = j as f64 * h;
                s.cdf(x + h / 2.0) - s.cdf(x - h / 2.0)
            })
            .collect();
        mass = convolve(&mass, &own);
        offset += first;
    }
    let point = |j: usize| (offset + j as i64) as f64 * h;
    let below = lsl.map(|l| {
        mass.iter()
            .enumerate()
            .map(|(j, p)| p * cell_below(point(j), h, mu, sigma, l))
            .sum::<f64>()
    });
    let above = usl.map(|u| {
        mass.iter()
            .enumerate()
            .map(|(j, p)| p * (1.0 - cell_below(point(j), h, mu, sigma, u)))
            .sum::<f64>()
    });
    (below, above)
}

/// P(x + N(mu, σ) < limit) for a lattice point x; with no normal part, the point's mass is
/// spread over its cell so that the lattice tail is continuous in the limit.
fn cell_below(x: f64, h: f64, mu: f64, sigma: f64, limit: f64) -> f64 {
    if sigma > 0.0 {
        normal::cdf((limit - mu - x) / sigma)
    } else {
        ((limit - mu - (x - h / 2.0)) / h).clamp(0.0, 1.0)
    }
}

fn convolve(a: &[f64], b: &[f64]) -> Vec<f64> {
    let mut out = vec![0.0; a.len() + b.len() - 1];
    for (i, &x) in a.iter().enumerate() {
        if x == 0.0 {
            continue;
        }
        for (o, &y) in out[i..].iter_mut().zip(b) {
            *o += x * y;
        }
    }
    out
}

/// log(sinh z / z) and its first two derivatives in t for z = w·t: the cumulant generating
/// function of a uniform on [−w, w].
fn uniform_cgf(w: f64, t: f64) -> (f64, f64, f64) {
    let z = w * t;
    let az = z.abs();
    if az < 1e-4 {
        let z2 = z * z;
        return (
            z2 / 6.0,
            w * (z / 3.0 - z * z2 / 45.0),
            w * w * (1.0 / 3.0 - z2 / 15.0),
        );
    }
    let e = (-2.0 * az).exp();
    let k = az - std::f64::consts::LN_2 + (-e).ln_1p() - az.ln();
    let coth = (1.0 + e) / (1.0 - e) * z.signum();
    let inv_sinh2 = 4.0 * e / (1.0 - e).powi(2);
    (k, w * (coth - 1.0 / z), w * w * (1.0 / (z * z) - inv_sinh2))
}

/// K, K', K'' of the assembly at t.
fn cgf(shapes: &[Shape], mu: f64, sigma: f64, t: f64) -> (f64, f64, f64) {
    let mut k = (
        mu * t + sigma * sigma * t * t / 2.0,
        mu + sigma * sigma * t,
        sigma * sigma,
    );
    for s in shapes {
        // A triangular of half-width w is the sum of two uniforms of half-width w/2.
        let (copies, w) = if s.triangular {
            (2.0, s.half_width / 2.0)
        } else {
            (1.0, s.half_width)
        };
        let (a, b, c) = uniform_cgf(w, t);
        k.0 += s.centre * t + copies * a;
        k.1 += s.centre + copies * b;
        k.2 += copies * c;
    }
    k
}

/// P(S ≤ x) by Lugannani–Rice; `None` outside the support or where the root is not found.
fn lugannani_rice(shapes: &[Shape], mu: f64, sigma: f64, x: f64) -> Option<f64> {
    let (_, mean, var) = cgf(shapes, mu, sigma, 0.0);
    if sigma == 0.0 {
        // A bounded sum: nothing lies beyond its support.
        let reach: f64 = shapes.iter().map(|s| s.half_width).sum();
        if x >= mean + reach {
            return Some(1.0);
        }
        if x <= mean - reach {
            return Some(0.0);
        }
    }
    if ((x - mean) / var.sqrt()).abs() < 1e-3 {
        return Some(normal::cdf((x - mean) / var.sqrt()));
    }
    // Bracket the root of K'(t) = x (K' increases), then bisect with Newton steps.
    let (mut lo, mut hi) = if x > mean { (0.0, 1.0) } else { (-1.0, 0.0) };
    let scale = 1.0 / var.sqrt();
    lo *= scale;
    hi *= scale;
    for _ in 0..200 {
        if x > mean && cgf(shapes, mu, sigma, hi).1 < x {
            lo = hi;
            hi *= 2.0;
        } else if x < mean && cgf(shapes, mu, sigma, lo).1 > x {
            hi = lo;
            lo *= 2.0;
        } else {
            break;
        }
    }
    if !(cgf(shapes, mu, sigma, lo).1 <= x && cgf(shapes, mu, sigma, hi).1 >= x) {
        return None;
    }
    let mut t = (lo + hi) / 2.0;
    for _ in 0..200 {
        let (_, d1, d2) = cgf(shapes, mu, sigma, t);
        if d1 < x {
            lo = t;
        } else {
            hi = t;
        }
        let newton = t - (d1 - x) / d2;
        t = if newton > lo && newton < hi && d2 > 0.0 {
            newton
        } else {
            (lo + hi) / 2.0
        };
        if (hi - lo).abs() <= 1e-15 * t.abs().max(scale) || (d1 - x).abs() < 1e-14 * x.abs() {
            break;
        }
    }
    let (k, _, d2) = cgf(shapes, mu, sigma, t);
    let w = t.signum() * (2.0 * (t * x - k)).max(0.0).sqrt();
    let u = t * d2.sqrt();
    if w == 0.0 || u == 0.0 {
        return None;
    }
    Some(normal::cdf(w) + normal::pdf(w) * (1.0 / w - 1.0 / u))
}

fn saddlepoint(
    shapes: &[Shape],
    mu: f64,
    sigma: f64,
    lsl: Option<f64>,
    usl: Option<f64>,
) -> Option<Rates> {
    let below = match lsl {
        Some(l) => Some(lugannani_rice(shapes, mu, sigma, l)?.clamp(0.0, 1.0) * 1e6),
        None => None,
    };
    let above = match usl {
        Some(u) => Some((1.0 - lugannani_rice(shapes, mu, sigma, u)?).clamp(0.0, 1.0) * 1e6),
        None => None,
    };
    Some(Rates {
        ppm_below: below,
        ppm_above: above,
        ppm: below.unwrap_or(0.0) + above.unwrap_or(0.0),
    })
}
