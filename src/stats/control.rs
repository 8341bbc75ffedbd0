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
/// normal, from the definitions above and the counting convention of the module note:
/// test 1: 2·Φ(−3); 2: 2·(1/2)⁹; 3: 2/6!; 4: 2·E₁₄/14! (E₁₄ = 199,360,981, the Euler zigzag
/// number: the alternating orderings of 14 points, either way up); 5: 2·p₂·(1 − (1 − p₂)²),
/// p₂ = Φ(−2); 6: 2·p₁·(4p₁³(1 − p₁) + p₁⁴), p₁ = Φ(−1); 7: (1 − 2p₁)¹⁵; 8: (2p₁)⁸. Each is
/// below Nelson's quoted 5/1000 a test; summed, tests 1–4 come to 0.0140 a point, above his
/// "below 1/100" for the four together, because here a run test signals again at every point
/// that extends the run. Checked against the formulas and a simulation (unit tests).
pub const CHANCE_PER_POINT: [f64; 8] = [
    0.0026998, 0.0039062, 0.0027778, 0.0045736, 0.0020467, 0.0044657, 0.0032610, 0.00010277,
];
/// The chance that a moving range exceeds D4(2)·MR̄ for independent normal values:
/// P(|Z| > 3.2665·d2(2)/√2) = P(|Z| > 2.606).
pub const CHANCE_MOVING_RANGE: f64 = 0.009152;

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
/// below 1/100, Nelson 1985 as quoted in the project's reference sheet).
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
    let mut chart = individuals_limits(x)?;
    chart.location_points = x.to_vec();
    chart.dispersion_points = x.windows(2).map(|w| (w[1] - w[0]).abs()).collect();
    Some(chart)
}

/// [`individuals`] without its points, for a chart nobody draws: [`individuals_signals`] tests
/// the values against its limits, and no copy of them is made.
pub fn individuals_limits(x: &[f64]) -> Option<Chart> {
    if x.len() < 3 {
        return None;
    }
    let centre = super::moments::sum_of(x, |v| v) / x.len() as f64;
    let mr_bar = super::within::mean_moving_range(x);
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
        location_points: Vec::new(),
        location_sigma: vec![sigma],
        dispersion_ucl: vec![f.d4_upper * mr_bar],
        dispersion_points: Vec::new(),
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
    if chart.kind == "individuals" {
        return individuals_signals(&chart.location_points, chart, rules);
    }
    signals_point_by_point_sigma(chart, rules)
}

/// [`signals`] for any chart, each point standardised by its own sigma.
fn signals_point_by_point_sigma(chart: &Chart, rules: &[u8]) -> Vec<Signal> {
    if chart.location_sigma.iter().all(|s| *s <= 0.0) {
        return Vec::new();
    }
    let (x, centre) = (&chart.location_points, chart.location.centre);
    let z = |i: usize| {
        let s = chart.sigma_at(i);
        if s > 0.0 {
            (x[i] - centre) / s
        } else {
            0.0
        }
    };
    let fill = |first: usize, word: &mut [f64]| {
        for (j, slot) in word.iter_mut().enumerate() {
            *slot = z(first + j);
        }
    };
    let mut out = location_signals(x, fill, rules);
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

/// The signals of values `x` on an individuals chart with the limits of `chart` (one sigma
/// for all points; moving ranges of `x` on the dispersion chart): [`signals`] without the
/// chart's copies of the values and their moving ranges.
pub fn individuals_signals(x: &[f64], chart: &Chart, rules: &[u8]) -> Vec<Signal> {
    let sigma = chart.sigma_at(0);
    // As in the general path: no spread, no signal (NaN included).
    if sigma.is_nan() || sigma <= 0.0 {
        return Vec::new();
    }
    let centre = chart.location.centre;
    let fill = |first: usize, word: &mut [f64]| {
        for (z, &v) in word.iter_mut().zip(&x[first..]) {
            *z = (v - centre) / sigma;
        }
    };
    let mut out = location_signals(x, fill, rules);
    if rules.contains(&1) {
        let ucl = chart.ucl_at(0);
        let range = |i: usize| (x[i] - x[i - 1]).abs();
        // Chunks are tested whole (the test vectorises), point by point only when one holds
        // a signal.
        const CHUNK: usize = 16;
        for start in (1..x.len()).step_by(CHUNK) {
            let end = (start + CHUNK).min(x.len());
            let (before, after) = (&x[start - 1..end - 1], &x[start..end]);
            let any = before
                .iter()
                .zip(after)
                .fold(false, |any, (p, v)| any | ((v - p).abs() > ucl));
            if any {
                for i in (start..end).filter(|&i| range(i) > ucl) {
                    out.push(Signal {
                        point: i,
                        rule: 1,
                        chart: "dispersion",
                        value: range(i),
                    });
                }
            }
        }
    }
    out
}

/// The Nelson tests' signals on the location points `x`, `fill(first, word)` writing the
/// standardised points `first..first + word.len()`.
fn location_signals(x: &[f64], fill: impl Fn(usize, &mut [f64]), rules: &[u8]) -> Vec<Signal> {
    nelson_by(x.len(), fill, rules)
        .into_iter()
        .map(|(point, rule)| Signal {
            point,
            rule,
            chart: "location",
            value: x[point],
        })
        .collect()
}

/// The Nelson tests on standardised points: (point, rule) for every signal, by point then rule.
///
/// The points are read 64 at a time into bit masks (above, below, rising, falling, beyond a
/// zone), and each test is a few shifts and ANDs of them: "k in a row" is a mask ANDed with
/// itself shifted by 1 … k − 1, the previous word supplying the bits shifted in. No branch
/// depends on the data, which a stable process makes a coin toss.
pub fn nelson(z: &[f64], rules: &[u8]) -> Vec<(usize, u8)> {
    nelson_by(
        z.len(),
        |first, word| word.copy_from_slice(&z[first..first + word.len()]),
        rules,
    )
}

/// [`nelson`] on `n` points standardised a word at a time by `fill(first, word)`, which
/// writes points `first..first + word.len()` (a chart of a million points needs no vector of
/// its standardised values).
fn nelson_by(n: usize, fill: impl Fn(usize, &mut [f64]), rules: &[u8]) -> Vec<(usize, u8)> {
    let mut on = [false; 9];
    for &r in rules {
        if let Some(slot) = on.get_mut(r as usize) {
            *slot = true;
        }
    }
    let zones = on[5] || on[6] || on[7] || on[8];
    let mut out = Vec::new();
    let mut prev = Masks::default();
    let mut word = [0.0; 64];
    let mut before = None;
    for w in 0..n.div_ceil(64) {
        let first = w * 64;
        let chunk = &mut word[..(n - first).min(64)];
        fill(first, chunk);
        let m = Masks::of(chunk, before, zones);
        before = chunk.last().copied();
        // Bits of points too early for a window of k points (the first word only).
        let early = |k: u32| if w == 0 { (1u64 << (k - 1)) - 1 } else { 0 };
        let mut found = [0u64; 9];
        found[1] = m.beyond[2];
        found[2] = in_a_row(m.above, prev.above, 9) | in_a_row(m.below, prev.below, 9);
        found[3] = in_a_row(m.rising, prev.rising, 5) | in_a_row(m.falling, prev.falling, 5);
        let alternates = (m.rising & shifted_in(m.falling, prev.falling, 1))
            | (m.falling & shifted_in(m.rising, prev.rising, 1));
        let prev_alternates = (prev.rising & prev.falling << 1) | (prev.falling & prev.rising << 1);
        found[4] = in_a_row(alternates, prev_alternates, 12);
        found[5] = (two_of_three(m.beyond_up[1], prev.beyond_up[1])
            | two_of_three(m.beyond_down[1], prev.beyond_down[1]))
            & !early(3);
        found[6] = (four_of_five(m.beyond_up[0], prev.beyond_up[0])
            | four_of_five(m.beyond_down[0], prev.beyond_down[0]))
            & !early(5);
        found[7] = in_a_row(m.within1, prev.within1, 15);
        found[8] = in_a_row(m.beyond[0], prev.beyond[0], 8);
        let mut any = 0;
        for rule in 1..=8 {
            found[rule] &= if on[rule] { u64::MAX } else { 0 };
            any |= found[rule];
        }
        while any != 0 {
            let bit = any.trailing_zeros();
            any &= any - 1;
            for (rule, mask) in found.iter().enumerate().skip(1) {
                if mask >> bit & 1 == 1 {
                    out.push((first + bit as usize, rule as u8));
                }
            }
        }
        prev = m;
    }
    out
}

/// One word of points as bit masks, bit j for point j of the word.
#[derive(Default, Clone, Copy)]
struct Masks {
    above: u64,
    below: u64,
    /// Higher (lower) than the point before; the very first point is neither.
    rising: u64,
    falling: u64,
    /// |z| beyond 1, 2, 3.
    beyond: [u64; 3],
    /// z beyond +1, +2 (below −1, −2).
    beyond_up: [u64; 2],
    beyond_down: [u64; 2],
    within1: u64,
}

impl Masks {
    /// The masks of up to 64 points, `before` being the point before them; the zone masks
    /// (tests 5–8) only when `zones`.
    fn of(chunk: &[f64], before: Option<f64>, zones: bool) -> Self {
        #[cfg(target_arch = "x86_64")]
        if let Ok(word) = <&[f64; 64]>::try_from(chunk) {
            // The zone test outside the loop (it was not hoisted out of it).
            if std::is_x86_feature_detected!("avx2") {
                // SAFETY: the processor has AVX2, checked above.
                return unsafe {
                    if zones {
                        Self::of_word_avx2::<true>(word, before)
                    } else {
                        Self::of_word_avx2::<false>(word, before)
                    }
                };
            }
            return if zones {
                Self::of_word_sse2::<true>(word, before)
            } else {
                Self::of_word_sse2::<false>(word, before)
            };
        }
        Self::of_points(chunk, before, zones)
    }

    /// Point by point: any length, any processor.
    fn of_points(chunk: &[f64], before: Option<f64>, zones: bool) -> Self {
        let mut m = Masks::default();
        let mut last = before;
        for (j, &v) in chunk.iter().enumerate() {
            let bit = |c: bool| u64::from(c) << j;
            m.above |= bit(v > 0.0);
            m.below |= bit(v < 0.0);
            if let Some(p) = last {
                let step = v - p;
                m.rising |= bit(step > 0.0);
                m.falling |= bit(step < 0.0);
            }
            last = Some(v);
            let a = v.abs();
            m.beyond[2] |= bit(a > 3.0);
            if zones {
                m.beyond[0] |= bit(a > 1.0);
                m.beyond[1] |= bit(a > 2.0);
                m.beyond_up[0] |= bit(v > 1.0);
                m.beyond_up[1] |= bit(v > 2.0);
                m.beyond_down[0] |= bit(v < -1.0);
                m.beyond_down[1] |= bit(v < -2.0);
                m.within1 |= bit(a < 1.0);
            }
        }
        m
    }

    /// [`Masks::of_word_sse2`] four points per comparison (AVX2): the same masks.
    #[cfg(target_arch = "x86_64")]
    #[target_feature(enable = "avx2")]
    fn of_word_avx2<const ZONES: bool>(word: &[f64; 64], before: Option<f64>) -> Self {
        use std::arch::x86_64::*;
        let mut m = Masks::default();
        let splat = _mm256_set1_pd;
        let zero = _mm256_setzero_pd();
        let abs_bits = _mm256_castsi256_pd(_mm256_set1_epi64x(i64::MAX));
        // No point before the first: NaN makes its step neither rising nor falling.
        let first_before = before.unwrap_or(f64::NAN);
        for quad in 0..16 {
            let j = 4 * quad;
            // SAFETY: the loads read word[j..j + 4] and word[j - 1..j + 3], inside the word.
            let (v, p) = unsafe {
                let v = _mm256_loadu_pd(word.as_ptr().add(j));
                let p = if j == 0 {
                    _mm256_set_pd(word[2], word[1], word[0], first_before)
                } else {
                    _mm256_loadu_pd(word.as_ptr().add(j - 1))
                };
                (v, p)
            };
            let step = _mm256_sub_pd(v, p);
            let a = _mm256_and_pd(v, abs_bits);
            // Ordered, quiet comparisons: false with a NaN, as SSE2's cmpgt/cmplt.
            macro_rules! bits {
                ($op:ident, $x:expr, $y:expr) => {
                    (_mm256_movemask_pd(_mm256_cmp_pd::<$op>($x, $y)) as u64) << j
                };
            }
            m.above |= bits!(_CMP_GT_OQ, v, zero);
            m.below |= bits!(_CMP_LT_OQ, v, zero);
            m.rising |= bits!(_CMP_GT_OQ, step, zero);
            m.falling |= bits!(_CMP_LT_OQ, step, zero);
            m.beyond[2] |= bits!(_CMP_GT_OQ, a, splat(3.0));
            if ZONES {
                m.beyond[0] |= bits!(_CMP_GT_OQ, a, splat(1.0));
                m.beyond[1] |= bits!(_CMP_GT_OQ, a, splat(2.0));
                m.beyond_up[0] |= bits!(_CMP_GT_OQ, v, splat(1.0));
                m.beyond_up[1] |= bits!(_CMP_GT_OQ, v, splat(2.0));
                m.beyond_down[0] |= bits!(_CMP_LT_OQ, v, splat(-1.0));
                m.beyond_down[1] |= bits!(_CMP_LT_OQ, v, splat(-2.0));
                m.within1 |= bits!(_CMP_LT_OQ, a, splat(1.0));
            }
        }
        m
    }

    /// A whole word, two points per comparison: each comparison's sign bits are its mask
    /// bits (SSE2, which every x86-64 processor has).
    #[cfg(target_arch = "x86_64")]
    fn of_word_sse2<const ZONES: bool>(word: &[f64; 64], before: Option<f64>) -> Self {
        use std::arch::x86_64::*;
        let mut m = Masks::default();
        // SAFETY: SSE2 is part of the x86-64 baseline, so its instructions always exist; the
        // intrinsics touch no memory.
        unsafe {
            let splat = _mm_set1_pd;
            let abs_bits = _mm_castsi128_pd(_mm_set1_epi64x(i64::MAX));
            // No point before the first: NaN makes its step neither rising nor falling.
            let first_before = before.unwrap_or(f64::NAN);
            for pair in 0..32 {
                let j = 2 * pair;
                let v = _mm_set_pd(word[j + 1], word[j]);
                let p = _mm_set_pd(word[j], if j == 0 { first_before } else { word[j - 1] });
                let step = _mm_sub_pd(v, p);
                let a = _mm_and_pd(v, abs_bits);
                let bits = |mask: __m128d| (_mm_movemask_pd(mask) as u64) << j;
                m.above |= bits(_mm_cmpgt_pd(v, _mm_setzero_pd()));
                m.below |= bits(_mm_cmplt_pd(v, _mm_setzero_pd()));
                m.rising |= bits(_mm_cmpgt_pd(step, _mm_setzero_pd()));
                m.falling |= bits(_mm_cmplt_pd(step, _mm_setzero_pd()));
                m.beyond[2] |= bits(_mm_cmpgt_pd(a, splat(3.0)));
                if ZONES {
                    m.beyond[0] |= bits(_mm_cmpgt_pd(a, splat(1.0)));
                    m.beyond[1] |= bits(_mm_cmpgt_pd(a, splat(2.0)));
                    m.beyond_up[0] |= bits(_mm_cmpgt_pd(v, splat(1.0)));
                    m.beyond_up[1] |= bits(_mm_cmpgt_pd(v, splat(2.0)));
                    m.beyond_down[0] |= bits(_mm_cmplt_pd(v, splat(-1.0)));
                    m.beyond_down[1] |= bits(_mm_cmplt_pd(v, splat(-2.0)));
                    m.within1 |= bits(_mm_cmplt_pd(a, splat(1.0)));
                }
            }
        }
        m
    }
}

/// `mask` shifted up by `k`, its low bits filled from the top of the previous word's.
fn shifted_in(mask: u64, prev: u64, k: u32) -> u64 {
    ((u128::from(mask) << 64 | u128::from(prev)) << k >> 64) as u64
}

/// Bits whose point and the k − 1 points before it are all set.
fn in_a_row(mask: u64, prev: u64, k: u32) -> u64 {
    (1..k).fold(mask, |acc, s| acc & shifted_in(mask, prev, s))
}

/// Set points with at least one more set among the two before.
fn two_of_three(mask: u64, prev: u64) -> u64 {
    mask & (shifted_in(mask, prev, 1) | shifted_in(mask, prev, 2))
}

/// Set points with at least three more set among the four before.
fn four_of_five(mask: u64, prev: u64) -> u64 {
    let [a, b, c, d] = [1, 2, 3, 4].map(|k| shifted_in(mask, prev, k));
    mask & ((a & b & (c | d)) | (c & d & (a | b)))
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    /// −1, 0 or 1.
    fn sign(v: f64) -> i8 {
        i8::from(v > 0.0) - i8::from(v < 0.0)
    }

    /// A run's length after one more point: extended, or restarted at 1 (0 when the point
    /// cannot start one, e.g. on the centre line).
    fn run_after(run: usize, extends: bool, starts: bool) -> usize {
        if extends {
            run + 1
        } else {
            usize::from(starts)
        }
    }

    /// The tests point by point, as their definitions read: the oracle for [`nelson`].
    fn nelson_point_by_point(z: &[f64], rules: &[u8]) -> Vec<(usize, u8)> {
        let on = |r: u8| rules.contains(&r);
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
            within_run = usize::from(v.abs() < 1.0) * (within_run + 1);
            beyond_run = usize::from(v.abs() > 1.0) * (beyond_run + 1);
            // The current point is beyond `limit` on its side, with enough company.
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
            let hits = [
                v.abs() > 3.0,
                side_run >= 9,
                trend_run >= 5,
                alt_run >= 13,
                beyond_on_side(3, 2.0),
                beyond_on_side(5, 1.0),
                within_run >= 15,
                beyond_run >= 8,
            ];
            for (r, hit) in (1u8..).zip(hits) {
                if hit && on(r) {
                    out.push((i, r));
                }
            }
        }
        out
    }

    /// Points that trip every test often: runs, trends, alternations, ties and zeros, values
    /// on and around the zone edges.
    fn points() -> impl Strategy<Value = Vec<f64>> {
        let value = prop_oneof![
            (-4.0f64..4.0),
            prop::sample::select(vec![0.0, 1.0, -1.0, 2.0, -2.0, 3.0, -3.0, 0.5, -0.5]),
        ];
        prop::collection::vec(value, 0..400)
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(300))]
        /// The word-at-a-time tests find exactly the signals of the point-by-point reading.
        #[test]
        fn word_masks_agree_with_the_point_by_point_tests(
            z in points(),
            trend in -0.2f64..0.2,
            rules in prop::sample::subsequence(vec![1u8, 2, 3, 4, 5, 6, 7, 8], 0..=8),
        ) {
            // A drift makes long trends and one-sided runs common.
            let z: Vec<f64> = z.iter().enumerate().map(|(i, v)| v * 0.3 + trend * (i % 90) as f64 - 1.0).collect();
            prop_assert_eq!(nelson(&z, &rules), nelson_point_by_point(&z, &rules));
        }

        #[test]
        fn word_masks_agree_on_raw_points(z in points()) {
            let all = [1u8, 2, 3, 4, 5, 6, 7, 8];
            prop_assert_eq!(nelson(&z, &all), nelson_point_by_point(&z, &all));
        }
    }

    proptest! {
        /// The word-at-a-time masks (two or four points a comparison) are the point-by-point ones.
        #[test]
        fn word_masks_are_the_point_masks(
            word in prop::collection::vec(prop_oneof![-4.0f64..4.0, Just(0.0), Just(1.0), Just(-2.0), Just(3.0)], 64),
            before in prop::option::of(-4.0f64..4.0),
            zones in any::<bool>(),
        ) {
            let all = |m: Masks| (m.above, m.below, m.rising, m.falling, m.beyond, m.beyond_up, m.beyond_down, m.within1);
            let b = all(Masks::of_points(&word, before, zones));
            prop_assert_eq!(all(Masks::of(&word, before, zones)), b);
            // Both word builds, whichever one `of` picked on this processor.
            #[cfg(target_arch = "x86_64")]
            {
                let word: &[f64; 64] = word.as_slice().try_into().unwrap();
                let sse2 = if zones { Masks::of_word_sse2::<true>(word, before) } else { Masks::of_word_sse2::<false>(word, before) };
                prop_assert_eq!(all(sse2), b);
                if std::is_x86_feature_detected!("avx2") {
                    // SAFETY: the processor has AVX2, checked above.
                    let avx2 = unsafe { if zones { Masks::of_word_avx2::<true>(word, before) } else { Masks::of_word_avx2::<false>(word, before) } };
                    prop_assert_eq!(all(avx2), b);
                }
            }
        }
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(200))]
        /// The individuals chart's own path (one sigma, moving ranges from the values, no copies)
        /// finds exactly the signals of the general point-by-point-sigma path, in the same order,
        /// and its limits are those of the chart with points.
        #[test]
        fn individuals_path_agrees_with_the_general_path(
            z in points(),
            spikes in prop::collection::vec((0usize..400, -30.0f64..30.0), 0..20),
            all_rules in any::<bool>(),
        ) {
            let mut x: Vec<f64> = z.iter().map(|v| 10.0 + 0.01 * v).collect();
            for (i, jump) in spikes {
                if let Some(v) = x.get_mut(i) {
                    *v += 0.01 * jump;
                }
            }
            let rules: &[u8] = if all_rules { &[1, 2, 3, 4, 5, 6, 7, 8] } else { &DEFAULT_RULES };
            let (Some(with_points), Some(limits)) = (individuals(&x), individuals_limits(&x)) else {
                prop_assert!(x.len() < 3);
                return Ok(());
            };
            prop_assert_eq!(
                (with_points.location, with_points.dispersion, &with_points.location_sigma, &with_points.dispersion_ucl),
                (limits.location, limits.dispersion, &limits.location_sigma, &limits.dispersion_ucl)
            );
            let general = signals_point_by_point_sigma(&with_points, rules);
            prop_assert_eq!(&individuals_signals(&x, &limits, rules), &general);
            prop_assert_eq!(&signals(&with_points, rules), &general);
        }
    }

    /// Each chance from its formula (see [`CHANCE_PER_POINT`]), Φ from `stats::normal`.
    #[test]
    fn chances_per_point_are_their_formulas() {
        use crate::stats::normal::cdf;
        let (p1, p2) = (cdf(-1.0), cdf(-2.0));
        let zigzag_14 = 199_360_981.0;
        let factorial = |n: u32| (1..=n).map(f64::from).product::<f64>();
        let formulas = [
            2.0 * cdf(-3.0),
            2.0 * 0.5f64.powi(9),
            2.0 / factorial(6),
            2.0 * zigzag_14 / factorial(14),
            2.0 * p2 * (1.0 - (1.0 - p2).powi(2)),
            2.0 * p1 * (4.0 * p1.powi(3) * (1.0 - p1) + p1.powi(4)),
            (1.0 - 2.0 * p1).powi(15),
            (2.0 * p1).powi(8),
        ];
        for (r, (got, want)) in CHANCE_PER_POINT.iter().zip(formulas).enumerate() {
            assert!(
                (got - want).abs() < 1e-4 * want,
                "test {}: {got} against {want}",
                r + 1
            );
        }
        let mr = 2.0 * cdf(-3.2665 * (2.0 / std::f64::consts::PI.sqrt()) / 2f64.sqrt());
        assert!((CHANCE_MOVING_RANGE - mr).abs() < 1e-3 * mr, "{mr}");
    }

    /// On 4·10⁶ independent normal points each test signals at its chance per point, to within
    /// five standard errors, the variance taken as six times Poisson's: a run's signals come in
    /// clusters (a run of 15 within 1σ goes on with chance 0.68, inflating the variance about
    /// (1 + 0.68)/(1 − 0.68) ≈ 5.3 times; the other tests less).
    #[test]
    fn chances_per_point_match_a_simulation() {
        use rand::SeedableRng;
        use rand_distr::{Distribution, StandardNormal};
        let mut rng = rand_xoshiro::Xoshiro256PlusPlus::seed_from_u64(7);
        let n = 4_000_000;
        let z: Vec<f64> = (0..n).map(|_| StandardNormal.sample(&mut rng)).collect();
        let mut count = [0usize; 9];
        for (_, rule) in nelson(&z, &[1, 2, 3, 4, 5, 6, 7, 8]) {
            count[rule as usize] += 1;
        }
        for (r, &p) in CHANCE_PER_POINT.iter().enumerate() {
            let expected = p * n as f64;
            let seen = count[r + 1] as f64;
            assert!(
                (seen - expected).abs() < 5.0 * (6.0 * expected).sqrt(),
                "test {}: {seen} signals, {expected:.0} expected",
                r + 1
            );
        }
    }

    #[test]
    fn runs_cross_word_boundaries() {
        // 9 points above the centre from point 60 to 68 straddle the first and second words.
        let mut z: Vec<f64> = (0..130)
            .map(|i| if i % 2 == 0 { 0.5 } else { -0.5 })
            .collect();
        for v in &mut z[60..69] {
            *v = 0.5;
        }
        assert_eq!(nelson(&z, &[2]), vec![(68, 2)]);
        assert_eq!(nelson(&z, &[2]), nelson_point_by_point(&z, &[2]));
    }
}
