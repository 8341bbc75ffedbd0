//! Monte Carlo simulation of the assembly from the parts actually made.
//!
//! Measured contributors are drawn by resampling their parts (contributors read from one file
//! are drawn as one row, so their correlation is kept) or from a normal with the measured mean
//! and sd; stated contributors from their stated distribution. The draws are made in fixed
//! chunks, each with its own random stream seeded from (seed, chunk index), so a seed gives the
//! same result on any number of threads.

use super::file::{Distribution, Requirement, Sampling};
use super::model::StackModel;
use super::normal_draws::NormalDraws;
use rand::{Rng, RngCore, SeedableRng};
use rand_distr::StandardNormal;
use rand_xoshiro::Xoshiro256PlusPlus;
use rayon::prelude::*;
use serde::Serialize;

/// Used when no seed is given, and reported.
pub const DEFAULT_SEED: u64 = 20_261_201;
/// Draws per chunk: one random stream each, and the unit of parallel work.
pub const CHUNK: usize = 8192;
/// Bins of the assembly histogram kept for the report.
pub const HISTOGRAM_BINS: usize = 80;
/// z for the two-sided 95 % interval.
const Z95: f64 = 1.959_963_984_540_054;

/// How one source of draws is made: a group of contributors resampled together, or one
/// contributor from a distribution.
#[derive(Debug, Clone)]
enum Sampler {
    /// Rows of measured parts; `columns[m]` holds member `members[m]`'s values on those rows.
    Parts {
        members: Vec<usize>,
        columns: Vec<Vec<f64>>,
    },
    Normal {
        i: usize,
        mean: f64,
        sd: f64,
    },
    Uniform {
        i: usize,
        mean: f64,
        half_width: f64,
    },
    Triangular {
        i: usize,
        mean: f64,
        half_width: f64,
    },
    /// A fitted model of the measured parts.
    Fitted {
        i: usize,
        model: Fitted,
    },
}

/// How each contributor was drawn, for the output.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct DrawnAs {
    pub name: String,
    /// `parts`, `normal`, `uniform`, `triangular`, or `fitted <family>`.
    pub draw: String,
    /// Parts resampled (those on which every contributor of that file was measured).
    pub parts: Option<usize>,
}

/// The simulation set up from a model: what to draw and how to count.
#[derive(Debug, Clone)]
pub struct SimulationPlan {
    samplers: Vec<Sampler>,
    sensitivities: Vec<f64>,
    lsl: Option<f64>,
    usl: Option<f64>,
    /// The histogram range [lo, hi].
    range: (f64, f64),
    pub drawn_as: Vec<DrawnAs>,
}

impl SimulationPlan {
    pub fn new(model: &StackModel) -> Self {
        let k = model.contributors.len();
        let mut samplers = Vec::new();
        let mut drawn_as: Vec<Option<DrawnAs>> = vec![None; k];
        for g in &model.part_groups {
            let by_parts: Vec<usize> = (0..g.members.len())
                .filter(|&m| model.contributors[g.members[m]].sampling == Some(Sampling::Parts))
                .collect();
            // Rows where every resampled member was measured, so a drawn row is a whole part.
            let rows: Vec<usize> = (0..g.parts())
                .filter(|&r| by_parts.iter().all(|&m| !g.columns[m][r].is_nan()))
                .collect();
            if by_parts.is_empty() || rows.is_empty() {
                continue;
            }
            for &m in &by_parts {
                drawn_as[g.members[m]] = Some(DrawnAs {
                    name: model.contributors[g.members[m]].name.clone(),
                    draw: "parts".into(),
                    parts: Some(rows.len()),
                });
            }
            samplers.push(Sampler::Parts {
                members: by_parts.iter().map(|&m| g.members[m]).collect(),
                columns: by_parts
                    .iter()
                    .map(|&m| rows.iter().map(|&r| g.columns[m][r]).collect())
                    .collect(),
            });
        }
        for (i, c) in model.contributors.iter().enumerate() {
            if drawn_as[i].is_some() {
                continue;
            }
            if let (Some(Sampling::Fitted), Some(fitted)) = (c.sampling, c.fitted) {
                samplers.push(Sampler::Fitted {
                    i,
                    model: Fitted::new(fitted),
                });
                drawn_as[i] = Some(DrawnAs {
                    name: c.name.clone(),
                    draw: format!("fitted {}", c.model_name.unwrap_or("model")),
                    parts: None,
                });
                continue;
            }
            let (sampler, draw) = match c.distribution.unwrap_or(Distribution::Normal) {
                Distribution::Normal => (
                    Sampler::Normal {
                        i,
                        mean: c.mean,
                        sd: c.sd,
                    },
                    "normal",
                ),
                Distribution::Uniform => (
                    Sampler::Uniform {
                        i,
                        mean: c.mean,
                        half_width: c.sd * 3f64.sqrt(),
                    },
                    "uniform",
                ),
                Distribution::Triangular => (
                    Sampler::Triangular {
                        i,
                        mean: c.mean,
                        half_width: c.sd * 6f64.sqrt(),
                    },
                    "triangular",
                ),
            };
            samplers.push(sampler);
            drawn_as[i] = Some(DrawnAs {
                name: c.name.clone(),
                draw: draw.into(),
                parts: None,
            });
        }
        let (mean, sd) = model.assembly(&model.means(), &model.covariance);
        let Requirement { lsl, usl, .. } = model.requirement;
        let spread = if sd > 0.0 { 6.0 * sd } else { 1.0 };
        let lo = lsl.unwrap_or(f64::INFINITY).min(mean - spread);
        let hi = usl.unwrap_or(f64::NEG_INFINITY).max(mean + spread);
        Self {
            samplers,
            sensitivities: model.contributors.iter().map(|c| c.sensitivity).collect(),
            lsl,
            usl,
            range: (lo, hi),
            drawn_as: drawn_as
                .into_iter()
                .map(|d| d.expect("every contributor drawn"))
                .collect(),
        }
    }

    /// Draws `len` values of every contributor for chunk `chunk`: `columns[i]` gets contributor
    /// i's draws. The single place where draws are made.
    pub fn draw_chunk(&self, seed: u64, chunk: u64, len: usize, columns: &mut [Vec<f64>]) {
        let mut rng = chunk_rng(seed, chunk);
        let mut rows: Vec<usize> = Vec::new();
        for c in columns.iter_mut() {
            // Every element is overwritten below; resizing only sets the length.
            c.resize(len, 0.0);
        }
        for s in &self.samplers {
            match s {
                Sampler::Parts {
                    members,
                    columns: values,
                } => {
                    let n = values[0].len() as u64;
                    rows.clear();
                    // Lemire's multiply-shift: an unbiased-enough index for n ≪ 2^64.
                    rows.extend(
                        (0..len).map(|_| ((rng.next_u64() as u128 * n as u128) >> 64) as usize),
                    );
                    for (m, &i) in members.iter().enumerate() {
                        let v = &values[m];
                        for (out, &r) in columns[i].iter_mut().zip(&rows) {
                            *out = v[r];
                        }
                    }
                }
                Sampler::Normal { i, mean, sd } => {
                    NormalDraws::new(&mut rng).fill(&mut columns[*i], *mean, *sd, &mut rng);
                }
                Sampler::Uniform {
                    i,
                    mean,
                    half_width,
                } => {
                    for out in columns[*i].iter_mut() {
                        let u: f64 = rng.random();
                        *out = mean + half_width * (2.0 * u - 1.0);
                    }
                }
                Sampler::Fitted { i, model } => {
                    for out in columns[*i].iter_mut() {
                        *out = model.draw(&mut rng);
                    }
                }
                Sampler::Triangular {
                    i,
                    mean,
                    half_width,
                } => {
                    // The sum of two uniforms of half the width.
                    for out in columns[*i].iter_mut() {
                        let u: f64 = rng.random();
                        let v: f64 = rng.random();
                        *out = mean + half_width * (u + v - 1.0);
                    }
                }
            }
        }
    }

    /// Simulates chunk `chunk` of `len` draws and counts it; `columns` is scratch space kept
    /// between chunks (one column per contributor, then the assembly).
    fn run_chunk(&self, seed: u64, chunk: u64, len: usize, columns: &mut Vec<Vec<f64>>) -> Tally {
        let k = self.sensitivities.len();
        columns.resize_with(k + 1, Vec::new);
        let (draws, assembly) = columns.split_at_mut(k);
        self.draw_chunk(seed, chunk, len, draws);
        let assembly = &mut assembly[0];
        assembly.resize(len, 0.0);
        let (lo, hi) = self.range;
        let counting = Counting {
            sensitivities: &self.sensitivities,
            lsl: self.lsl.unwrap_or(f64::NEG_INFINITY),
            usl: self.usl.unwrap_or(f64::INFINITY),
            lo,
            per_bin: HISTOGRAM_BINS as f64 / (hi - lo),
        };
        let mut counts = StripCounts::default();
        for (s, ys) in assembly.chunks_mut(STRIP).enumerate() {
            counting.strip(ys, draws, s * STRIP, &mut counts);
        }
        let mut t = Tally::new();
        let slot = |b: usize| counts.slots.iter().map(|h| h[b]).sum::<u64>();
        t.below = counts.below;
        t.above = counts.above;
        t.under = slot(0);
        t.over = slot(HISTOGRAM_BINS + 1);
        for (b, n) in t.bins.iter_mut().enumerate() {
            *n = slot(b + 1);
        }
        t.samples = len as u64;
        t
    }
}

/// Assembly values made and counted at a time: a strip that stays in the L1 cache while every
/// contributor's column is added in.
const STRIP: usize = 512;

/// How each assembly value is made (Σ a·x) and what is counted of it: outside each limit, and
/// its histogram bin.
struct Counting<'a> {
    sensitivities: &'a [f64],
    lsl: f64,
    usl: f64,
    lo: f64,
    per_bin: f64,
}

/// Counts over strips. Slot 0 is below the histogram's range, slot BINS + 1 above it; four
/// histograms taken in turn, so that equal bins in a row do not wait on each other.
struct StripCounts {
    below: u64,
    above: u64,
    slots: [[u64; HISTOGRAM_BINS + 2]; 4],
}

impl Default for StripCounts {
    fn default() -> Self {
        Self {
            below: 0,
            above: 0,
            slots: [[0; HISTOGRAM_BINS + 2]; 4],
        }
    }
}

impl Counting<'_> {
    /// ys = Σ a·column[start..] (in contributor order whatever the vector width), counted.
    fn strip(&self, ys: &mut [f64], columns: &[Vec<f64>], start: usize, counts: &mut StripCounts) {
        #[cfg(target_arch = "x86_64")]
        if std::is_x86_feature_detected!("avx2") {
            // SAFETY: the CPU has AVX2, checked above.
            return unsafe { self.strip_avx2(ys, columns, start, counts) };
        }
        self.add_and_count(ys, columns, start, counts);
    }

    #[cfg(target_arch = "x86_64")]
    #[target_feature(enable = "avx2")]
    fn strip_avx2(&self, ys: &mut [f64], columns: &[Vec<f64>], start: usize, c: &mut StripCounts) {
        self.add_and_count(ys, columns, start, c);
    }

    #[inline(always)]
    fn add_and_count(
        &self,
        ys: &mut [f64],
        columns: &[Vec<f64>],
        start: usize,
        counts: &mut StripCounts,
    ) {
        ys.fill(0.0);
        for (a, col) in self.sensitivities.iter().zip(columns) {
            for (y, x) in ys.iter_mut().zip(&col[start..]) {
                *y += a * x;
            }
        }
        counts.below += ys.iter().map(|&y| u64::from(y < self.lsl)).sum::<u64>();
        counts.above += ys.iter().map(|&y| u64::from(y > self.usl)).sum::<u64>();
        let last = (HISTOGRAM_BINS + 1) as f64;
        let mut bins = [0u32; STRIP];
        for (b, &y) in bins.iter_mut().zip(ys.iter()) {
            *b = ((y - self.lo) * self.per_bin + 1.0).clamp(0.0, last) as u32;
        }
        for (k, &b) in bins[..ys.len()].iter().enumerate() {
            counts.slots[k % 4][(b as usize).min(HISTOGRAM_BINS + 1)] += 1;
        }
    }
}

/// A fitted model ready to draw from: by transforming standard draws, never by a numerical
/// inverse cdf (gamma by Marsaglia–Tsang in rand_distr, prepared once).
#[derive(Debug, Clone)]
struct Fitted {
    model: crate::stats::distribution::Distribution,
    gamma: Option<rand_distr::Gamma<f64>>,
}

impl Fitted {
    fn new(model: crate::stats::distribution::Distribution) -> Self {
        let gamma = match model {
            crate::stats::distribution::Distribution::Gamma { shape, scale, .. } => {
                rand_distr::Gamma::new(shape, scale).ok()
            }
            _ => None,
        };
        Self { model, gamma }
    }

    fn draw(&self, rng: &mut Xoshiro256PlusPlus) -> f64 {
        use crate::stats::distribution::Distribution as D;
        let mut z = || rng.sample::<f64, _>(StandardNormal);
        match self.model {
            D::Normal { mean, sd } => mean + sd * z(),
            D::Lognormal {
                threshold,
                mu,
                sigma,
            } => threshold + (mu + sigma * z()).exp(),
            D::Weibull {
                threshold,
                shape,
                scale,
            } => {
                // Inversion: scale·(−ln U)^(1/shape), U in (0, 1].
                let u: f64 = 1.0 - rng.random::<f64>();
                threshold + scale * (-u.ln()).powf(1.0 / shape)
            }
            D::Gamma {
                threshold,
                shape,
                scale,
            } => match &self.gamma {
                Some(g) => threshold + rng.sample(g),
                // Parameters rand_distr refuses: the normal of the same mean and sd.
                None => threshold + shape * scale + shape.sqrt() * scale * z(),
            },
            D::BoxCox {
                lambda,
                shift,
                mean,
                sd,
            } => {
                let y = mean + sd * z();
                let s = if lambda.abs() < 1e-12 {
                    y.exp()
                } else {
                    // Below the transform's range the draw sits at the domain's edge, as the
                    // model's cdf counts it.
                    (lambda * y + 1.0).max(0.0).powf(1.0 / lambda)
                };
                s - shift
            }
        }
    }
}

thread_local! {
    /// Each thread's columns for `run_chunk`, allocated once instead of per chunk.
    static SCRATCH: std::cell::RefCell<Vec<Vec<f64>>> = const { std::cell::RefCell::new(Vec::new()) };
}

/// A random stream per chunk, from the seed and the chunk index only.
fn chunk_rng(seed: u64, chunk: u64) -> Xoshiro256PlusPlus {
    Xoshiro256PlusPlus::seed_from_u64(splitmix(splitmix(seed) ^ chunk))
}

/// SplitMix64 (Steele, Lea & Flood, 2014): one step from state x, the output.
pub(super) fn splitmix(x: u64) -> u64 {
    let mut z = x.wrapping_add(SPLITMIX_STEP);
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}

/// SplitMix64's state increment (the golden ratio in 64 bits).
pub(super) const SPLITMIX_STEP: u64 = 0x9E37_79B9_7F4A_7C15;

#[derive(Debug, Clone, PartialEq)]
struct Tally {
    samples: u64,
    below: u64,
    above: u64,
    bins: Vec<u64>,
    under: u64,
    over: u64,
}

impl Tally {
    fn new() -> Self {
        Self {
            samples: 0,
            below: 0,
            above: 0,
            bins: vec![0; HISTOGRAM_BINS],
            under: 0,
            over: 0,
        }
    }
    fn add(mut self, o: Tally) -> Self {
        self.samples += o.samples;
        self.below += o.below;
        self.above += o.above;
        self.under += o.under;
        self.over += o.over;
        for (a, b) in self.bins.iter_mut().zip(o.bins) {
            *a += b;
        }
        self
    }
}

/// The assembly histogram: `counts[b]` over [lo + b·w, lo + (b+1)·w).
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct Histogram {
    pub lo: f64,
    pub hi: f64,
    pub counts: Vec<u64>,
    pub below_range: u64,
    pub above_range: u64,
}

/// `--precision`: the target and whether it was reached.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct Precision {
    /// Wanted half-width of the 95 % interval relative to the estimate.
    pub target: f64,
    pub achieved: Option<f64>,
    pub reached: bool,
    pub max_samples: u64,
}

/// The simulation block of the stack output.
#[derive(Debug, Clone, Serialize, PartialEq)]
pub struct Simulation {
    pub method: &'static str,
    pub samples: u64,
    pub seed: u64,
    pub ppm: f64,
    pub ppm_low: f64,
    pub ppm_high: f64,
    pub interval: &'static str,
    pub ppm_below: Option<f64>,
    pub ppm_above: Option<f64>,
    pub rejects: u64,
    pub precision: Option<Precision>,
    pub draws: Vec<DrawnAs>,
    pub histogram: Histogram,
}

/// What to run.
#[derive(Debug, Clone, Copy)]
pub struct SimulationSettings {
    pub samples: u64,
    pub seed: u64,
    /// Keep sampling until the 95 % interval's half-width is within this fraction of the estimate.
    pub precision: Option<f64>,
    pub max_samples: u64,
}

/// Runs the simulation; `progress(done, planned)` is called between batches of chunks.
pub fn simulate(
    model: &StackModel,
    settings: &SimulationSettings,
    progress: &mut dyn FnMut(u64, u64),
) -> Simulation {
    let plan = SimulationPlan::new(model);
    let seed = settings.seed;
    let mut tally = Tally::new();
    let mut next_chunk = 0u64;
    // With a precision goal the counts grow in whole chunks, so a longer run extends a shorter
    // one with the same seed instead of redrawing it.
    let mut planned = match settings.precision {
        Some(_) => round_to_chunks(settings.samples.min(settings.max_samples)),
        None => settings.samples,
    };
    // Chunks between progress reports: enough that waiting for the slowest chunk costs little.
    let batch = (rayon::current_num_threads() as u64 * 64).max(1);
    loop {
        while tally.samples < planned {
            let first = next_chunk;
            let remaining_chunks = (planned - tally.samples).div_ceil(CHUNK as u64);
            let last = first + remaining_chunks.min(batch);
            let got = (first..last)
                .into_par_iter()
                .map(|c| {
                    let start = c * CHUNK as u64;
                    let len = (planned.saturating_sub(start)).min(CHUNK as u64) as usize;
                    SCRATCH.with_borrow_mut(|columns| plan.run_chunk(seed, c, len, columns))
                })
                .reduce(Tally::new, Tally::add);
            tally = tally.add(got);
            next_chunk = last;
            progress(tally.samples, planned);
        }
        let Some(target) = settings.precision else {
            break;
        };
        let (p, lo, hi) = wilson(tally.below + tally.above, tally.samples);
        let achieved = if p > 0.0 {
            (hi - lo) / 2.0 / p
        } else {
            f64::INFINITY
        };
        if achieved <= target || planned >= settings.max_samples {
            break;
        }
        // The half-width shrinks as 1/√n; aim a little past the estimate, at least doubling.
        let need = (tally.samples as f64 * (achieved / target).powi(2) * 1.1).min(1e18) as u64;
        planned = round_to_chunks(need.max(2 * planned).min(settings.max_samples));
    }
    let n = tally.samples;
    let (p, lo, hi) = wilson(tally.below + tally.above, n);
    let precision = settings.precision.map(|target| {
        let achieved = (p > 0.0).then(|| (hi - lo) / 2.0 / p);
        Precision {
            target,
            achieved,
            reached: achieved.is_some_and(|a| a <= target),
            max_samples: settings.max_samples,
        }
    });
    let rate = |count: u64| count as f64 / n as f64 * 1e6;
    Simulation {
        method: "monte_carlo",
        samples: n,
        seed,
        ppm: p * 1e6,
        ppm_low: lo * 1e6,
        ppm_high: hi * 1e6,
        interval: "wilson",
        ppm_below: plan.lsl.map(|_| rate(tally.below)),
        ppm_above: plan.usl.map(|_| rate(tally.above)),
        rejects: tally.below + tally.above,
        precision,
        draws: plan.drawn_as.clone(),
        histogram: Histogram {
            lo: plan.range.0,
            hi: plan.range.1,
            counts: tally.bins,
            below_range: tally.under,
            above_range: tally.over,
        },
    }
}

fn round_to_chunks(n: u64) -> u64 {
    n.max(1).div_ceil(CHUNK as u64) * CHUNK as u64
}

/// The Wilson score interval (95 %) for `x` successes in `n` trials: (estimate, low, high).
pub fn wilson(x: u64, n: u64) -> (f64, f64, f64) {
    if n == 0 {
        return (f64::NAN, 0.0, 1.0);
    }
    let n = n as f64;
    let p = x as f64 / n;
    let z2 = Z95 * Z95;
    let denom = 1.0 + z2 / n;
    let centre = (p + z2 / (2.0 * n)) / denom;
    let half = Z95 * (p * (1.0 - p) / n + z2 / (4.0 * n * n)).sqrt() / denom;
    (p, (centre - half).max(0.0), (centre + half).min(1.0))
}
