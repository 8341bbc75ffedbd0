//! Location, spread and shape of a sample, numerically robust.

/// Summary of a sample of finite values.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Moments {
    pub n: usize,
    pub mean: f64,
    /// Sample standard deviation, n − 1 divisor. NaN for n < 2.
    pub sd: f64,
    pub min: f64,
    pub max: f64,
    /// Adjusted Fisher–Pearson skewness G1 (scipy `skew(x, bias=False)`). NaN for n < 3.
    pub skewness: f64,
    /// Adjusted excess kurtosis G2 (scipy `kurtosis(x, bias=False)`). NaN for n < 4.
    pub kurtosis: f64,
}

impl Moments {
    /// The moments of no values.
    const NONE: Self = Self {
        n: 0,
        mean: f64::NAN,
        sd: f64::NAN,
        min: f64::NAN,
        max: f64::NAN,
        skewness: f64::NAN,
        kurtosis: f64::NAN,
    };
}

/// # Formula
/// Two passes: x̄ = Σx/n, refined by the mean of the residuals (which recovers the digits a
/// plain sum loses when values share many leading digits); then the central sums
/// Σ(x − x̄)^k, k = 2, 3, 4, with the correction term of the corrected two-pass algorithm
/// (Chan, Golub & LeVeque 1983) on the second.
///
/// Reaches the NIST StRD certified mean and sd on all nine univariate sets (see tests).
pub fn moments(x: &[f64]) -> Moments {
    let n = x.len();
    if n == 0 {
        return Moments::NONE;
    }
    let nf = n as f64;
    let rough = sum_of(x, |v| v) / nf;
    let mean = rough + sum_of(x, |v| v - rough) / nf;
    // Four interleaved accumulators of each sum (lanes j = i mod 4): independent additions
    // keep the FPU busy, and shorter chains lose fewer digits.
    let (mut s1, mut m2, mut m3, mut m4) = ([0.0; 4], [0.0; 4], [0.0; 4], [0.0; 4]);
    let mut chunks = x.chunks_exact(4);
    for chunk in &mut chunks {
        for j in 0..4 {
            let v = chunk[j];
            let d = v - mean;
            let d2 = d * d;
            s1[j] += d;
            m2[j] += d2;
            m3[j] += d2 * d;
            m4[j] += d2 * d2;
        }
    }
    for &v in chunks.remainder() {
        let d = v - mean;
        let d2 = d * d;
        s1[0] += d;
        m2[0] += d2;
        m3[0] += d2 * d;
        m4[0] += d2 * d2;
    }
    let (min, max) = extremes(x);
    let lanes = |a: [f64; 4]| (a[0] + a[1]) + (a[2] + a[3]);
    let sums = CentralSums {
        n,
        mean,
        s1: lanes(s1),
        m2: lanes(m2),
        m3: lanes(m3),
        m4: lanes(m4),
    };
    sums.moments(min, max)
}

/// Σ(x − x̄)^k, k = 1 … 4, about the refined mean x̄ of n values.
struct CentralSums {
    n: usize,
    mean: f64,
    s1: f64,
    m2: f64,
    m3: f64,
    m4: f64,
}

impl CentralSums {
    fn moments(&self, min: f64, max: f64) -> Moments {
        let Self {
            n,
            mean,
            s1,
            m2,
            m3,
            m4,
        } = *self;
        let nf = n as f64;
        let ss = (m2 - s1 * s1 / nf).max(0.0);
        let sd = if n >= 2 {
            (ss / (nf - 1.0)).sqrt()
        } else {
            f64::NAN
        };
        // Biased moments g1, g2, then the small-sample adjustments (Joanes & Gill 1998, "G1",
        // "G2").
        let (b2, b3, b4) = (ss / nf, m3 / nf, m4 / nf);
        let skewness = if n >= 3 && b2 > 0.0 {
            let g1 = b3 / b2.powf(1.5);
            g1 * (nf * (nf - 1.0)).sqrt() / (nf - 2.0)
        } else {
            f64::NAN
        };
        let kurtosis = if n >= 4 && b2 > 0.0 {
            let g2 = b4 / (b2 * b2) - 3.0;
            ((nf + 1.0) * g2 + 6.0) * (nf - 1.0) / ((nf - 2.0) * (nf - 3.0))
        } else {
            f64::NAN
        };
        Moments {
            n,
            mean,
            sd,
            min,
            max,
            skewness,
            kurtosis,
        }
    }
}

/// The smallest and largest value (±∞ for none), NaNs passed over: four lanes compared
/// without a branch, so the loop vectorises.
pub fn extremes(x: &[f64]) -> (f64, f64) {
    let (mut lo, mut hi) = ([f64::INFINITY; 4], [f64::NEG_INFINITY; 4]);
    let mut chunks = x.chunks_exact(4);
    for chunk in &mut chunks {
        for j in 0..4 {
            let v = chunk[j];
            lo[j] = if v < lo[j] { v } else { lo[j] };
            hi[j] = if v > hi[j] { v } else { hi[j] };
        }
    }
    for &v in chunks.remainder() {
        lo[0] = if v < lo[0] { v } else { lo[0] };
        hi[0] = if v > hi[0] { v } else { hi[0] };
    }
    (
        lo.into_iter().fold(f64::INFINITY, f64::min),
        hi.into_iter().fold(f64::NEG_INFINITY, f64::max),
    )
}

/// Σ f(xᵢ₋₁, xᵢ) over consecutive values, in the lanes of [`sum_of`] (lane j takes the pairs
/// whose index is j mod 4): the same number as [`sum_of`] over a vector of the f values.
pub fn sum_of_steps(x: &[f64], f: impl Fn(f64, f64) -> f64) -> f64 {
    if x.len() < 2 {
        return 0.0;
    }
    let (before, after) = (&x[..x.len() - 1], &x[1..]);
    let mut lanes = [0.0; 4];
    let (mut b4, mut a4) = (before.chunks_exact(4), after.chunks_exact(4));
    for (b, a) in (&mut b4).zip(&mut a4) {
        for j in 0..4 {
            lanes[j] += f(b[j], a[j]);
        }
    }
    for (&b, &a) in b4.remainder().iter().zip(a4.remainder()) {
        lanes[0] += f(b, a);
    }
    (lanes[0] + lanes[1]) + (lanes[2] + lanes[3])
}

/// Σ f(xᵢ) in four interleaved lanes (independent additions; see [`moments`]).
pub fn sum_of(x: &[f64], f: impl Fn(f64) -> f64) -> f64 {
    let mut lanes = [0.0; 4];
    let mut chunks = x.chunks_exact(4);
    for c in &mut chunks {
        lanes[0] += f(c[0]);
        lanes[1] += f(c[1]);
        lanes[2] += f(c[2]);
        lanes[3] += f(c[3]);
    }
    for &v in chunks.remainder() {
        lanes[0] += f(v);
    }
    (lanes[0] + lanes[1]) + (lanes[2] + lanes[3])
}

/// Lag-1 autocorrelation r₁ = Σ(xᵢ − x̄)(xᵢ₋₁ − x̄) / Σ(xᵢ − x̄)², as NIST StRD certifies it.
pub fn lag1_autocorrelation(x: &[f64], mean: f64) -> f64 {
    let den: f64 = x.iter().map(|v| (v - mean).powi(2)).sum();
    let num: f64 = x.windows(2).map(|w| (w[1] - mean) * (w[0] - mean)).sum();
    num / den
}

/// Sample covariance of paired values (n − 1 divisor), two-pass.
pub fn covariance(x: &[f64], y: &[f64]) -> f64 {
    let n = x.len().min(y.len());
    if n < 2 {
        return f64::NAN;
    }
    let mx = x[..n].iter().sum::<f64>() / n as f64;
    let my = y[..n].iter().sum::<f64>() / n as f64;
    x[..n]
        .iter()
        .zip(&y[..n])
        .map(|(a, b)| (a - mx) * (b - my))
        .sum::<f64>()
        / (n as f64 - 1.0)
}

/// Covariance over the pairs where both values are present (not NaN), with the pair count;
/// `None` below 3 pairs.
pub fn pairwise_covariance(x: &[f64], y: &[f64]) -> Option<(f64, usize)> {
    let (a, b): (Vec<f64>, Vec<f64>) = x
        .iter()
        .zip(y)
        .filter(|(a, b)| !a.is_nan() && !b.is_nan())
        .map(|(a, b)| (*a, *b))
        .unzip();
    (a.len() >= 3).then(|| (covariance(&a, &b), a.len()))
}

/// A sample as its distinct values, ascending, each with how many times it occurs: all that
/// the order-statistic tests need, and far shorter than the sample for gauge data (a million
/// values written to 0.001 mm over a 0.1 mm spread are a hundred runs).
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Runs {
    pub values: Vec<f64>,
    pub counts: Vec<usize>,
}

impl Runs {
    /// Runs of a sample sorted ascending.
    pub fn from_sorted(sorted: &[f64]) -> Self {
        let mut runs = Runs::default();
        for &v in sorted {
            match runs.values.last() {
                Some(&last) if last == v => *runs.counts.last_mut().expect("paired") += 1,
                _ => {
                    runs.values.push(v);
                    runs.counts.push(1);
                }
            }
        }
        runs
    }

    /// Runs of any finite sample: counted on its decimal grid when it has one (values written
    /// with a fixed number of decimals), else sorted.
    pub fn of(x: &[f64]) -> Self {
        let (min, max) = extremes(x);
        Self::of_range(x, min, max)
    }

    /// [`Runs::of`] when the smallest and largest values are known.
    pub fn of_range(x: &[f64], min: f64, max: f64) -> Self {
        runs_on_grid(x, min, max).unwrap_or_else(|| {
            let mut sorted = x.to_vec();
            sort_values(&mut sorted);
            Self::from_sorted(&sorted)
        })
    }

    /// Number of values.
    pub fn n(&self) -> usize {
        self.counts.iter().sum()
    }

    /// The sample's [`moments`] from its distinct values: the same sums, each value's term
    /// taken once and multiplied by its count (exact in the count), so the work follows the
    /// distinct values, not the sample size.
    pub fn moments(&self) -> Moments {
        let n = self.n();
        let (Some(&min), Some(&max)) = (self.values.first(), self.values.last()) else {
            return Moments::NONE;
        };
        let nf = n as f64;
        let weighted = |f: &dyn Fn(f64) -> f64| {
            self.values
                .iter()
                .zip(&self.counts)
                .map(|(&v, &c)| c as f64 * f(v))
                .sum::<f64>()
        };
        let rough = weighted(&|v| v) / nf;
        let mean = rough + weighted(&|v| v - rough) / nf;
        let (mut s1, mut m2, mut m3, mut m4) = (0.0, 0.0, 0.0, 0.0);
        for (&v, &c) in self.values.iter().zip(&self.counts) {
            let (c, d) = (c as f64, v - mean);
            let d2 = d * d;
            s1 += c * d;
            m2 += c * d2;
            m3 += c * d2 * d;
            m4 += c * d2 * d2;
        }
        CentralSums {
            n,
            mean,
            s1,
            m2,
            m3,
            m4,
        }
        .moments(min, max)
    }

    /// The sample again, sorted.
    pub fn sorted(&self) -> Vec<f64> {
        self.values
            .iter()
            .zip(&self.counts)
            .flat_map(|(&v, &c)| std::iter::repeat_n(v, c))
            .collect()
    }
}

/// Sorts finite values ascending (the order of `f64::total_cmp`), by comparing the values'
/// order-preserving integer keys (cheaper than `total_cmp` per comparison).
pub fn sort_values(x: &mut [f64]) {
    // The sign bit flips positives above negatives; negatives have their other bits flipped too.
    let key = |v: f64| {
        let b = v.to_bits();
        if b >> 63 == 1 {
            !b
        } else {
            b | (1 << 63)
        }
    };
    let unkey = |k: u64| {
        if k >> 63 == 1 {
            f64::from_bits(k & !(1 << 63))
        } else {
            f64::from_bits(!k)
        }
    };
    let mut keys: Vec<u64> = x.iter().map(|&v| key(v)).collect();
    keys.sort_unstable();
    for (v, k) in x.iter_mut().zip(keys) {
        *v = unkey(k);
    }
}

/// Counting on the decimal grid pays from this many values on.
const GRID_MIN: usize = 1024;

/// Runs by counting on the values' decimal grid of step 10⁻ᵈ (d guessed from a sample): each
/// value goes to the grid point nearest it, and every value of a grid point must be the same
/// number, else `None` (off the grid, or too fine a grid for the spread).
fn runs_on_grid(x: &[f64], min: f64, max: f64) -> Option<Runs> {
    let n = x.len();
    if n < GRID_MIN {
        return None;
    }
    if !(min.is_finite() && max.is_finite()) || max <= min {
        return None;
    }
    let sample: Vec<f64> = x.iter().step_by((n / 64).max(1)).copied().collect();
    let decimals = (0..=9).find(|&d| {
        let scale = 10f64.powi(d);
        sample.iter().all(|&v| {
            let k = v * scale;
            (k - k.round()).abs() <= 1e-6
        })
    })?;
    let per_step = 10f64.powi(decimals);
    let points = ((max - min) * per_step).round() as usize + 1;
    if points > 4 * n {
        return None;
    }
    // u32 counts keep the two tables within the first-level cache for thousands of points.
    if u32::try_from(n).is_err() {
        return None;
    }
    let mut counts = vec![0u32; points];
    let mut values = vec![f64::NAN; points];
    let last = points - 1;
    // Adding 2⁵² rounds a t in [0, 2⁵¹) to the nearest integer, which is then the low bits of
    // the sum: no saturating float-to-integer conversion (several instructions) per value. A
    // value below `min` wraps to the last point, where the checks below reject it.
    const ROUNDER: f64 = (1u64 << 52) as f64;
    for &v in x {
        let t = (v - min) * per_step;
        let b = (t + ROUNDER)
            .to_bits()
            .wrapping_sub(ROUNDER.to_bits())
            .min(last as u64) as usize;
        if counts[b] == 0 {
            values[b] = v;
        } else if values[b] != v {
            return None;
        }
        counts[b] += 1;
    }
    let mut runs = Runs::default();
    for (v, c) in values.into_iter().zip(counts) {
        if c > 0 {
            runs.values.push(v);
            runs.counts.push(c as usize);
        }
    }
    // Grid points are in order; so must the values be.
    runs.values.windows(2).all(|w| w[0] < w[1]).then_some(runs)
}
