//! Control charts (individuals and moving range; X̄-R; X̄-S) and the eight Nelson tests for
//! special causes.
//!
//! Limits use the constants of [`super::constants`]. The tests run on the location chart's
//! points standardised by that chart's own sigma, z = (point − CL)/σ, so charts with unequal
//! subgroup sizes are judged point by point. Counting convention (documented in the README):
//! a run test signals at every point that completes or extends the run, so a run of 11 points
//! on one side gives signals at points 9, 10 and 11; "6 in a row increasing" counts points (5
//! consecutive strict increases), and a tie breaks a trend or an alternation; the "k of m" tests
//! (5, 6) signal at the last point of the window, and only when that point is itself beyond the
//! zone, so one cluster is not reported twice for the same point.

use super::constants::{c4, chart_factors, d2};
use serde::Serialize;

/// The eight tests of Nelson (1984), J. Quality Technology 16(4):237–239.
pub const RULES: [(u8, &str); 8] = [
    (1, "1 point beyond 3 sigma"),
    (2, "9 points in a row on one side of the centre line"),
    (3, "6 points in a row steadily increasing or decreasing"),
    (4, "14 points in a row alternating up and down"),
    (5, "2 of 3 points in a row beyond 2 sigma on one side"),
    (6, "4 of 5 points in a row beyond 1 sigma on one side"),
    (7, "15 points in a row within 1 sigma"),
    (8, "8 points in a row beyond 1 sigma, either side"),
];

/// The chance that a given point signals on each test when the points are independent and
/// normal (computed from the definitions above: e.g. test 2 is 2·(1/2)⁹, test 3 is 2/6!, test
/// 4 is 2·E₁₄/14! with E the Euler zigzag number, test 7 is 0.6827¹⁵). Tests 1–4 together come
/// to 0.0099, matching Nelson's "below 1/100".
pub const CHANCE_PER_POINT: [f64; 8] = [
    0.0027, 0.003906, 0.002778, 0.000513, 0.002046, 0.004466, 0.003264, 0.000103,
];
/// The chance that a moving range exceeds D4(2)·MR̄ for independent normal values:
/// P(|Z| > 3.2665·d2(2)/√2) = P(|Z| > 2.606).
pub const CHANCE_MOVING_RANGE: f64 = 0.00916;

/// Signalling points to expect from chance alone on a stable chart of `points` points.
pub fn expected_by_chance(points: usize, rules: &[u8], individuals: bool) -> f64 {
    let per_point: f64 = rules
        .iter()
        .map(|&r| CHANCE_PER_POINT[r as usize - 1])
        .sum();
    let dispersion = if individuals && rules.contains(&1) {
        CHANCE_MOVING_RANGE
    } else {
        0.0
    };
    points as f64 * (per_point + dispersion)
}

/// Tests 1–4: Nelson's set for routine use (tests 1–4 together have a false-signal chance
/// below 1/100 per point, Nelson 1985 as quoted in the project's reference sheet).
pub const DEFAULT_RULES: [u8; 4] = [1, 2, 3, 4];

#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Limits {
    pub centre: f64,
    pub lcl: f64,
    pub ucl: f64,
}

/// A chart: what is plotted and its limits.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Chart {
    /// `individuals`, `individuals_normal_scores`, `xbar_r` or `xbar_s`.
    pub kind: &'static str,
    /// Limits of the location chart (at the most common subgroup size).
    pub location: Limits,
    /// `moving_range` (`moving_range_of_scores` on a normal-scores chart), `range` or `sd`,
    /// and its limits.
    pub dispersion_name: &'static str,
    pub dispersion: Limits,
    /// The plotted points: one per value (individuals) or per subgroup.
    #[serde(skip)]
    pub location_points: Vec<f64>,
    /// σ of each location point (its limits are CL ± 3σ): one per point, or a single value for
    /// all (individuals); read with [`Chart::sigma_at`].
    #[serde(skip)]
    pub location_sigma: Vec<f64>,
    /// Moving ranges (from the second value on), or subgroup ranges / sds.
    #[serde(skip)]
    pub dispersion_points: Vec<f64>,
    /// Upper limit of each dispersion point: one per point, or a single value for all; read
    /// with [`Chart::ucl_at`].
    #[serde(skip)]
    pub dispersion_ucl: Vec<f64>,
    /// When the chart is drawn on normal scores: the scores the tests run on (the location
    /// points are then the measured values and the limits are mapped back to them).
    #[serde(skip)]
    pub scores: Option<Vec<f64>>,
}

impl Chart {
    /// Frees the per-point vectors once the tests have run and nothing will draw the chart.
    pub fn free_points(&mut self) {
        self.location_points = Vec::new();
        self.location_sigma = Vec::new();
        self.dispersion_points = Vec::new();
        self.dispersion_ucl = Vec::new();
        self.scores = None;
    }

    /// σ of location point `i`.
    pub fn sigma_at(&self, i: usize) -> f64 {
        match self.location_sigma.as_slice() {
            [one] => *one,
            all => all[i],
        }
    }

    /// Upper limit of dispersion point `i`.
    pub fn ucl_at(&self, i: usize) -> f64 {
        match self.dispersion_ucl.as_slice() {
            [one] => *one,
            all => all[i],
        }
    }
}

/// A point that signals.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Signal {
    /// Index of the point on its chart (0-based; a moving range has the index of its later value).
    pub point: usize,
    pub rule: u8,
    /// `location` or `dispersion`.
    pub chart: &'static str,
    pub value: f64,
}

/// I-MR chart: CL = x̄, σ = MR̄/d2(2), limits CL ± 3σ; MR chart UCL = D4(2)·MR̄, LCL = 0.
pub fn individuals(x: &[f64]) -> Option<Chart> {
    if x.len() < 3 {
        return None;
    }
    let centre = super::moments::sum_of(x, |v| v) / x.len() as f64;
    let mr: Vec<f64> = x.windows(2).map(|w| (w[1] - w[0]).abs()).collect();
    let mr_bar = super::moments::sum_of(&mr, |v| v) / mr.len() as f64;
    let sigma = mr_bar / d2(2);
    let f = chart_factors(2);
    Some(Chart {
        kind: "individuals",
        location: Limits {
            centre,
            lcl: centre - 3.0 * sigma,
            ucl: centre + 3.0 * sigma,
        },
        dispersion_name: "moving_range",
        dispersion: Limits {
            centre: mr_bar,
            lcl: 0.0,
            ucl: f.d4_upper * mr_bar,
        },
        location_points: x.to_vec(),
        location_sigma: vec![sigma],
        dispersion_ucl: vec![f.d4_upper * mr_bar],
        dispersion_points: mr,
        scores: None,
    })
}

/// X̄-R (`use_sd` false) or X̄-S chart of subgroups (of 2 or more values; smaller ones are
/// skipped). CL = mean of the subgroup means; σ(X̄ᵢ) = R̄/(d2(mᵢ)√mᵢ) or S̄/(c4(mᵢ)√mᵢ), with R̄
/// (S̄) the mean of Rⱼ/d2(mⱼ) (Sⱼ/c4(mⱼ)) scaled back, so unequal sizes are handled point by point.
pub fn subgroups(groups: &[Vec<f64>], use_sd: bool) -> Option<Chart> {
    let groups: Vec<&Vec<f64>> = groups.iter().filter(|g| g.len() >= 2).collect();
    if groups.len() < 3 {
        return None;
    }
    let means: Vec<f64> = groups
        .iter()
        .map(|g| g.iter().sum::<f64>() / g.len() as f64)
        .collect();
    let spread: Vec<f64> = groups
        .iter()
        .zip(&means)
        .map(|(g, m)| {
            if use_sd {
                (g.iter().map(|v| (v - m).powi(2)).sum::<f64>() / (g.len() - 1) as f64).sqrt()
            } else {
                let (lo, hi) = g
                    .iter()
                    .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &v| {
                        (a.min(v), b.max(v))
                    });
                hi - lo
            }
        })
        .collect();
    let unbias = |m: usize| if use_sd { c4(m) } else { d2(m) };
    // σ of individual values, pooled from each subgroup's unbiased estimate.
    let sigma: f64 = groups
        .iter()
        .zip(&spread)
        .map(|(g, s)| s / unbias(g.len()))
        .sum::<f64>()
        / groups.len() as f64;
    let centre = means.iter().sum::<f64>() / means.len() as f64;
    let typical = most_common_size(&groups);
    let f = chart_factors(typical);
    let loc_sigma = sigma / (typical as f64).sqrt();
    let (lower, upper) = if use_sd {
        (f.b3, f.b4)
    } else {
        (f.d3_lower, f.d4_upper)
    };
    let spread_centre = sigma * unbias(typical);
    let ucl_for = |m: usize| {
        let f = chart_factors(m);
        sigma * unbias(m) * if use_sd { f.b4 } else { f.d4_upper }
    };
    Some(Chart {
        kind: if use_sd { "xbar_s" } else { "xbar_r" },
        location: Limits {
            centre,
            lcl: centre - 3.0 * loc_sigma,
            ucl: centre + 3.0 * loc_sigma,
        },
        dispersion_name: if use_sd { "sd" } else { "range" },
        dispersion: Limits {
            centre: spread_centre,
            lcl: lower * spread_centre,
            ucl: upper * spread_centre,
        },
        location_sigma: groups
            .iter()
            .map(|g| sigma / (g.len() as f64).sqrt())
            .collect(),
        location_points: means,
        dispersion_ucl: groups.iter().map(|g| ucl_for(g.len())).collect(),
        dispersion_points: spread,
        scores: None,
    })
}

fn most_common_size(groups: &[&Vec<f64>]) -> usize {
    let mut counts = std::collections::BTreeMap::new();
    for g in groups {
        *counts.entry(g.len()).or_insert(0usize) += 1;
    }
    counts
        .into_iter()
        .max_by_key(|&(m, c)| (c, std::cmp::Reverse(m)))
        .map_or(2, |(m, _)| m)
}

/// Every signal of the chosen tests on a chart: the Nelson tests on the location chart, and
/// points above the upper limit of the dispersion chart (reported as test 1 there).
pub fn signals(chart: &Chart, rules: &[u8]) -> Vec<Signal> {
    let z: Vec<f64> = chart
        .location_points
        .iter()
        .enumerate()
        .map(|(i, x)| {
            let s = chart.sigma_at(i);
            if s > 0.0 {
                (x - chart.location.centre) / s
            } else {
                0.0
            }
        })
        .collect();
    if chart.location_sigma.iter().all(|s| *s <= 0.0) {
        return Vec::new();
    }
    let mut out: Vec<Signal> = nelson(&z, rules)
        .into_iter()
        .map(|(point, rule)| Signal {
            point,
            rule,
            chart: "location",
            value: chart.location_points[point],
        })
        .collect();
    if rules.contains(&1) {
        // Moving range k belongs to value k + 1.
        let offset = usize::from(chart.kind.starts_with("individuals"));
        for (i, v) in chart.dispersion_points.iter().enumerate() {
            if *v > chart.ucl_at(i) {
                out.push(Signal {
                    point: i + offset,
                    rule: 1,
                    chart: "dispersion",
                    value: *v,
                });
            }
        }
    }
    out
}

/// −1, 0 or 1 without branches (the signs of a stable process's points are a coin toss,
/// which a branch predictor cannot learn).
fn sign(v: f64) -> i8 {
    i8::from(v > 0.0) - i8::from(v < 0.0)
}

/// A run's length after one more point: extended, or restarted at 1 (0 when the point cannot
/// start one, e.g. on the centre line).
fn run_after(run: usize, extends: bool, starts: bool) -> usize {
    // Arithmetic rather than a branch, for the same reason as `sign`.
    let extends = usize::from(extends);
    extends * (run + 1) + (1 - extends) * usize::from(starts)
}

/// The Nelson tests on standardised points: (point, rule) for every signal, by point then rule.
pub fn nelson(z: &[f64], rules: &[u8]) -> Vec<(usize, u8)> {
    let mut on = [false; 9];
    for &r in rules {
        if let Some(slot) = on.get_mut(r as usize) {
            *slot = true;
        }
    }
    let mut out = Vec::new();
    let (mut side_run, mut side) = (0usize, 0i8);
    let (mut trend_run, mut trend) = (0usize, 0i8);
    let (mut alt_run, mut last_step) = (0usize, 0i8);
    let (mut within_run, mut beyond_run) = (0usize, 0usize);
    for i in 0..z.len() {
        let v = z[i];
        let s = sign(v);
        side_run = run_after(side_run, s != 0 && s == side, s != 0);
        side = s;
        if i > 0 {
            let step = sign(z[i] - z[i - 1]);
            trend_run = run_after(trend_run, step != 0 && step == trend, step != 0);
            trend = step;
            alt_run = run_after(alt_run, step != 0 && step == -last_step, step != 0);
            last_step = step;
        }
        if on[7] || on[8] {
            within_run = usize::from(v.abs() < 1.0) * (within_run + 1);
            beyond_run = usize::from(v.abs() > 1.0) * (beyond_run + 1);
        }
        // The current point is beyond `limit` on its side, with enough company in the window.
        let beyond_on_side = |k: usize, limit: f64| -> bool {
            let sign = v.signum();
            if v.abs() <= limit || i + 1 < k {
                return false;
            }
            z[i + 1 - k..=i]
                .iter()
                .filter(|&&w| w.signum() == sign && w.abs() > limit)
                .count()
                >= k - 1
        };
        if on[1] && v.abs() > 3.0 {
            out.push((i, 1));
        }
        if on[2] && side_run >= 9 {
            out.push((i, 2));
        }
        if on[3] && trend_run >= 5 {
            out.push((i, 3));
        }
        if on[4] && alt_run >= 13 {
            out.push((i, 4));
        }
        if on[5] && beyond_on_side(3, 2.0) {
            out.push((i, 5));
        }
        if on[6] && beyond_on_side(5, 1.0) {
            out.push((i, 6));
        }
        if on[7] && within_run >= 15 {
            out.push((i, 7));
        }
        if on[8] && beyond_run >= 8 {
            out.push((i, 8));
        }
    }
    out
}
