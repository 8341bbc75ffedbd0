//! Capability of one feature: indices from within and overall sigma, their confidence bounds,
//! reject rates, and normality.

use super::moments::Runs;
use super::normal;
use super::normality::{anderson_darling_runs, shapiro_wilk_runs, AndersonDarling, ShapiroWilk};
use super::within::{moving_range_sigma, subgroup_sigma, WithinMethod};
use serde::Serialize;
use statrs::distribution::{ChiSquared, ContinuousCDF};

/// Specification limits (inclusive) and nominal of a feature.
#[derive(Debug, Clone, Copy, Default, PartialEq, Serialize)]
pub struct Limits {
    pub nominal: Option<f64>,
    pub lsl: Option<f64>,
    pub usl: Option<f64>,
}

impl Limits {
    /// Target for Cpm: nominal when it lies within the limits, else the middle of the limits.
    pub fn target(&self) -> Option<f64> {
        let (l, u) = (self.lsl?, self.usl?);
        match self.nominal {
            Some(t) if t >= l && t <= u => Some(t),
            _ => Some((l + u) / 2.0),
        }
    }

    /// Scales and shifts the limits like the data (x → a·x + b, a > 0).
    pub fn transformed(&self, a: f64, b: f64) -> Self {
        let f = |v: Option<f64>| v.map(|x| a * x + b);
        Self {
            nominal: f(self.nominal),
            lsl: f(self.lsl),
            usl: f(self.usl),
        }
    }
}

/// How the within sigma is found and how confident the bounds are.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CapabilityOptions {
    pub within: WithinMethod,
    /// Confidence of the one-sided lower bounds (and of the two-sided intervals).
    pub confidence: f64,
}

impl Default for CapabilityOptions {
    fn default() -> Self {
        Self {
            within: WithinMethod::MovingRange,
            confidence: DEFAULT_CONFIDENCE,
        }
    }
}

pub const DEFAULT_CONFIDENCE: f64 = 0.95;

/// A two-sided confidence interval.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Interval {
    pub low: f64,
    pub high: f64,
}

/// Reject rates in parts per million, split at each limit.
#[derive(Debug, Clone, Copy, Default, PartialEq, Serialize)]
pub struct Ppm {
    pub below: Option<f64>,
    pub above: Option<f64>,
    pub total: Option<f64>,
}

/// The three reject rates, each split at the two limits.
#[derive(Debug, Clone, Copy, Default, PartialEq, Serialize)]
pub struct PpmSplit {
    pub observed: Ppm,
    pub expected_within: Ppm,
    pub expected_overall: Ppm,
}

/// Everything the capability engine says about one feature. `None` is undefined, and the
/// reason is in `notes`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Capability {
    pub n: usize,
    pub mean: Option<f64>,
    pub sd_overall: Option<f64>,
    pub sd_within: Option<f64>,
    pub sigma_within_method: WithinMethod,
    pub min: Option<f64>,
    pub max: Option<f64>,
    pub skewness: Option<f64>,
    pub kurtosis: Option<f64>,
    pub cp: Option<f64>,
    pub cpl: Option<f64>,
    pub cpu: Option<f64>,
    pub cpk: Option<f64>,
    pub pp: Option<f64>,
    pub ppl: Option<f64>,
    pub ppu: Option<f64>,
    pub ppk: Option<f64>,
    pub cpm: Option<f64>,
    pub cp_lower: Option<f64>,
    pub cpk_lower: Option<f64>,
    pub pp_lower: Option<f64>,
    pub ppk_lower: Option<f64>,
    pub cp_interval: Option<Interval>,
    pub cpk_interval: Option<Interval>,
    pub pp_interval: Option<Interval>,
    pub ppk_interval: Option<Interval>,
    /// Reject rates in ppm, totals; `ppm_split` has them below and above.
    pub ppm_observed: Option<f64>,
    pub ppm_expected_within: Option<f64>,
    pub ppm_expected_overall: Option<f64>,
    pub ppm_split: PpmSplit,
    pub anderson_darling: Option<AndersonDarling>,
    pub shapiro_wilk: Option<ShapiroWilk>,
    pub notes: Vec<String>,
}

/// Values that are finite become `Some`; NaN and ±∞ become `None`.
pub fn finite(v: f64) -> Option<f64> {
    v.is_finite().then_some(v)
}

/// Capability of values given in process order. `subgroups`, when given, are the values
/// grouped into rational subgroups for the within sigma; otherwise the moving range is used.
pub fn capability(
    ordered: &[f64],
    subgroups: Option<&[Vec<f64>]>,
    limits: &Limits,
    options: &CapabilityOptions,
) -> Capability {
    let mut notes = Vec::new();
    // The distinct values with their counts: the moments, the observed rejects and both
    // normality tests are sums over them (a gauge's thousands, not the sample's millions).
    let runs = Runs::of(ordered);
    let m = runs.moments();
    let n = m.n;
    let method = if subgroups.is_some() {
        options.within
    } else {
        WithinMethod::MovingRange
    };
    let sd_within = match subgroups {
        Some(g) => subgroup_sigma(g, method),
        None => moving_range_sigma(ordered),
    };
    if n == 0 {
        notes.push("no values".to_string());
    } else if n < 2 {
        notes.push("fewer than 2 values: no standard deviation".to_string());
    } else if m.sd == 0.0 {
        notes.push("all values are identical: zero spread, indices undefined".to_string());
    }
    let within = indices(m.mean, sd_within, limits);
    let overall = indices(m.mean, m.sd, limits);
    if limits.lsl.is_none() && limits.usl.is_none() {
        notes.push("no specification limits: indices undefined".to_string());
    } else if limits.lsl.is_none() || limits.usl.is_none() {
        notes.push("one-sided specification: Cp, Pp and Cpm undefined".to_string());
    }
    let cpm = match (limits.lsl, limits.usl, limits.target()) {
        (Some(l), Some(u), Some(t)) if n >= 2 => {
            finite((u - l) / (6.0 * (m.sd * m.sd + (m.mean - t).powi(2)).sqrt()))
        }
        _ => None,
    };
    let c = options.confidence;
    let shapiro = shapiro_wilk_runs(&runs);
    if shapiro.is_some_and(|s| s.p_approximate) {
        notes.push(format!(
            "n > {}: Shapiro–Wilk p is approximate",
            super::normality::SHAPIRO_WILK_MAX_N
        ));
    }
    if n == 2 {
        notes.push("fewer than 3 values: no normality test".to_string());
    }
    let split = PpmSplit {
        observed: observed_ppm(&runs, limits),
        expected_within: normal_ppm(m.mean, sd_within, limits),
        expected_overall: normal_ppm(m.mean, m.sd, limits),
    };
    let ad = if n >= 3 {
        anderson_darling_runs(&runs, m.mean, m.sd)
    } else {
        None
    };
    Capability {
        n,
        mean: finite(m.mean),
        sd_overall: finite(m.sd),
        sd_within: finite(sd_within),
        sigma_within_method: method,
        min: finite(m.min),
        max: finite(m.max),
        skewness: finite(m.skewness),
        kurtosis: finite(m.kurtosis),
        cp: within.p,
        cpl: within.pl,
        cpu: within.pu,
        cpk: within.pk,
        pp: overall.p,
        ppl: overall.pl,
        ppu: overall.pu,
        ppk: overall.pk,
        cpm,
        cp_lower: within.p.and_then(|v| chi2_bound(v, n, 1.0 - c)),
        cpk_lower: within
            .pk
            .and_then(|v| bissell_bound(v, n, -normal::quantile(1.0 - c))),
        pp_lower: overall.p.and_then(|v| chi2_bound(v, n, 1.0 - c)),
        ppk_lower: overall
            .pk
            .and_then(|v| bissell_bound(v, n, -normal::quantile(1.0 - c))),
        cp_interval: within.p.and_then(|v| chi2_interval(v, n, c)),
        cpk_interval: within.pk.and_then(|v| bissell_interval(v, n, c)),
        pp_interval: overall.p.and_then(|v| chi2_interval(v, n, c)),
        ppk_interval: overall.pk.and_then(|v| bissell_interval(v, n, c)),
        ppm_observed: split.observed.total,
        ppm_expected_within: split.expected_within.total,
        ppm_expected_overall: split.expected_overall.total,
        ppm_split: split,
        anderson_darling: ad,
        shapiro_wilk: shapiro,
        notes,
    }
}

/// The four indices of one sigma: Cp/Pp, Cpl/Ppl, Cpu/Ppu, Cpk/Ppk.
struct Indices {
    p: Option<f64>,
    pl: Option<f64>,
    pu: Option<f64>,
    pk: Option<f64>,
}

/// Cp = (USL − LSL)/6σ, Cpl = (μ − LSL)/3σ, Cpu = (USL − μ)/3σ, Cpk = min(Cpl, Cpu); for a
/// one-sided spec Cpk is the defined side and Cp is undefined (ISO 22514-2 definitions).
fn indices(mean: f64, sigma: f64, limits: &Limits) -> Indices {
    let ok = sigma.is_finite() && sigma > 0.0 && mean.is_finite();
    let pl = limits
        .lsl
        .filter(|_| ok)
        .and_then(|l| finite((mean - l) / (3.0 * sigma)));
    let pu = limits
        .usl
        .filter(|_| ok)
        .and_then(|u| finite((u - mean) / (3.0 * sigma)));
    let p = match (limits.lsl, limits.usl) {
        (Some(l), Some(u)) if ok => finite((u - l) / (6.0 * sigma)),
        _ => None,
    };
    let pk = match (pl, pu) {
        (Some(a), Some(b)) => Some(a.min(b)),
        (a, b) => a.or(b),
    };
    Indices { p, pl, pu, pk }
}

/// χ² quantile of ν degrees of freedom. Each is a root search over the incomplete gamma
/// function, and the features of a wide file share n, so the last few are remembered (per
/// thread): the same value, found once.
fn chi2_quantile(p: f64, nu: f64) -> Option<f64> {
    type Seen = Vec<((u64, u64), Option<f64>)>;
    thread_local! {
        static SEEN: std::cell::RefCell<Seen> = const { std::cell::RefCell::new(Vec::new()) };
    }
    let key = (p.to_bits(), nu.to_bits());
    if let Some(q) = SEEN.with_borrow(|s| s.iter().find(|(k, _)| *k == key).map(|e| e.1)) {
        return q;
    }
    let q = ChiSquared::new(nu)
        .ok()
        .and_then(|d| finite(d.inverse_cdf(p)));
    SEEN.with_borrow_mut(|s| {
        if s.len() == 8 {
            s.remove(0);
        }
        s.push((key, q));
    });
    q
}

/// Lower bound Ĉp·√(χ²_{q, n−1}/(n − 1)) (Montgomery, ch. 8; scipy `chi2.ppf(q, n − 1)`).
pub fn chi2_bound(index: f64, n: usize, q: f64) -> Option<f64> {
    if n < 2 {
        return None;
    }
    let nu = (n - 1) as f64;
    Some(index * (chi2_quantile(q, nu)? / nu).sqrt())
}

/// Two-sided chi-square interval at confidence c.
pub fn chi2_interval(index: f64, n: usize, c: f64) -> Option<Interval> {
    let a = 1.0 - c;
    Some(Interval {
        low: chi2_bound(index, n, a / 2.0)?,
        high: chi2_bound(index, n, 1.0 - a / 2.0)?,
    })
}

/// Bissell (1990) approximation: Ĉpk − z·√(1/(9n) + Ĉpk²/(2(n − 1))).
pub fn bissell_bound(index: f64, n: usize, z: f64) -> Option<f64> {
    if n < 2 {
        return None;
    }
    let nf = n as f64;
    finite(index - z * (1.0 / (9.0 * nf) + index * index / (2.0 * (nf - 1.0))).sqrt())
}

/// Two-sided Bissell interval at confidence c.
pub fn bissell_interval(index: f64, n: usize, c: f64) -> Option<Interval> {
    let z = normal::quantile(1.0 - (1.0 - c) / 2.0);
    Some(Interval {
        low: bissell_bound(index, n, z)?,
        high: bissell_bound(index, n, -z)?,
    })
}

/// The share of values outside the limits (a value on a limit conforms), in ppm.
pub fn observed_ppm(runs: &Runs, limits: &Limits) -> Ppm {
    let n = runs.n();
    if n == 0 {
        return Ppm::default();
    }
    let count = |outside: &dyn Fn(f64) -> bool| {
        let k: usize = runs
            .values
            .iter()
            .zip(&runs.counts)
            .filter(|(&v, _)| outside(v))
            .map(|(_, &c)| c)
            .sum();
        k as f64 / n as f64 * 1e6
    };
    let below = limits.lsl.map(|l| count(&|v| v < l));
    let above = limits.usl.map(|u| count(&|v| v > u));
    total(below, above)
}

/// The normal model's reject rate: Φ((LSL − μ)/σ) and 1 − Φ((USL − μ)/σ), in ppm.
pub fn normal_ppm(mean: f64, sigma: f64, limits: &Limits) -> Ppm {
    if sigma.is_nan() || sigma <= 0.0 || !mean.is_finite() || !sigma.is_finite() {
        return Ppm::default();
    }
    let below = limits.lsl.map(|l| normal::cdf((l - mean) / sigma) * 1e6);
    let above = limits.usl.map(|u| normal::sf((u - mean) / sigma) * 1e6);
    total(below, above)
}

fn total(below: Option<f64>, above: Option<f64>) -> Ppm {
    let total = match (below, above) {
        (None, None) => None,
        (a, b) => Some(a.unwrap_or(0.0) + b.unwrap_or(0.0)),
    };
    Ppm {
        below,
        above,
        total,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Remembered quantiles are the computed ones, in any order of asking and past the
    /// memory's eight places.
    #[test]
    fn remembered_chi2_quantiles_are_the_computed_ones() {
        let direct = |p: f64, nu: f64| ChiSquared::new(nu).unwrap().inverse_cdf(p);
        for round in 0..3 {
            for nu in [
                4.0, 29.0, 99.0, 199_999.0, 7.0, 12.0, 50.0, 3.0, 1000.0, 2.0,
            ] {
                for p in [0.025, 0.05, 0.975] {
                    let want = direct(p, nu);
                    assert_eq!(
                        chi2_quantile(p, nu),
                        Some(want),
                        "round {round}, ν {nu}, p {p}"
                    );
                }
            }
        }
        assert_eq!(chi2_quantile(0.05, 0.0), None);
    }
}
