//! Standard normal draws a block at a time, for the simulation's inner loop.
//!
//! The ziggurat of Marsaglia & Tsang (2000, "The ziggurat method for generating random
//! variables", J. Statistical Software 5(8)), with 2048 layers instead of their 256 so that only
//! about 0.2 % of draws leave the fast path (the sum over layers of 1 − x[i+1]/x[i], over
//! 2048; more layers than that crowd the L1 cache). Eight xoshiro256++ streams advance in lock
//! step so the fast path (a point inside a layer's rectangle) compiles to vector code; the rest (a wedge
//! test or the tail) is finished one draw at a time from the caller's stream. Every integer and
//! floating-point operation is the same whatever the vector width, so a seed gives the same
//! draws on any machine.

use super::simulate::{splitmix, SPLITMIX_STEP};
use crate::stats::normal;
use rand::{Rng, RngCore};
use std::sync::OnceLock;

/// Streams advanced in lock step: two AVX2 registers of u64.
const LANES: usize = 8;
/// Draws made before the rare cases are finished: small enough to stay in L1.
const BLOCK: usize = 256;
/// Layers: the low 11 bits of a draw's word pick one; its top 52 bits place the point.
const LAYERS: usize = 2048;

/// A ziggurat of `n` layers of equal area `v` under exp(−x²/2): edges `x[0..=n]` (x[0] = v/f(r),
/// the base layer's equivalent width; x[1] = r; x[n] = 0) and the density at each edge.
struct Tables {
    r: f64,
    x: Vec<f64>,
    f: Vec<f64>,
}

fn density(x: f64) -> f64 {
    (-0.5 * x * x).exp()
}

impl Tables {
    /// Solves for the base edge r at which n layers of equal area exactly fill the curve
    /// (bisection on r: a larger r makes thinner layers, which reach the top later).
    fn new(n: usize) -> Self {
        let area = |r: f64| r * density(r) + (2.0 * std::f64::consts::PI).sqrt() * normal::sf(r);
        // The height the top layer reaches with base edge r (1 when the layers fit exactly),
        // or how many layers short of n the curve's top was passed.
        let top = |r: f64| -> (usize, f64) {
            let v = area(r);
            let mut x = r;
            for i in 1..n - 1 {
                let h = density(x) + v / x;
                if h >= 1.0 {
                    return (n - 1 - i, h);
                }
                x = (-2.0 * h.ln()).sqrt();
            }
            (0, density(x) + v / x)
        };
        let (mut lo, mut hi) = (1.0, 8.0);
        for _ in 0..60 {
            let mid = 0.5 * (lo + hi);
            let (short, h) = top(mid);
            if short > 0 || h > 1.0 {
                lo = mid;
            } else {
                hi = mid;
            }
        }
        let r = 0.5 * (lo + hi);
        let v = area(r);
        let mut x = vec![0.0; n + 1];
        x[0] = v / density(r);
        x[1] = r;
        // Layer i spans x[i+1]..x[i] with area x[i]·(f(x[i+1]) − f(x[i])) = v.
        for i in 1..n - 1 {
            x[i + 1] = (-2.0 * (density(x[i]) + v / x[i]).min(1.0).ln()).sqrt();
        }
        x[n] = 0.0;
        let f = x.iter().map(|&e| density(e)).collect();
        Self { r, x, f }
    }
}

fn tables() -> &'static Tables {
    static TABLES: OnceLock<Tables> = OnceLock::new();
    TABLES.get_or_init(|| Tables::new(LAYERS))
}

/// The layer edges in use, x[0..=LAYERS]: x[1] is the base edge r (beyond it, the tail
/// method), x[LAYERS − 1] the top layer's half-width (inside it, always the wedge test).
pub fn layer_edges() -> &'static [f64] {
    &tables().x
}

/// The lock-step streams, seeded from the caller's stream.
pub struct NormalDraws {
    /// `s[w][l]`: state word w of lane l.
    s: [[u64; LANES]; 4],
}

/// One block's raw bits and which first points need the rare path (bit k of `outside[k / 64]`).
struct Block {
    bits: [u64; BLOCK],
    outside: [u64; BLOCK / 64],
}

/// Makes a block's first points into `x`, as mean + sd·z.
type FirstPoints = fn(&mut [[u64; LANES]; 4], &mut Block, &mut [f64; BLOCK], f64, f64);

impl NormalDraws {
    pub fn new(rng: &mut impl RngCore) -> Self {
        let mut s = [[0u64; LANES]; 4];
        for lane in 0..LANES {
            // SplitMix64 from one word of the caller's stream: never an all-zero state.
            let mut z = rng.next_u64();
            for word in &mut s {
                word[lane] = splitmix(z);
                z = z.wrapping_add(SPLITMIX_STEP);
            }
        }
        Self { s }
    }

    /// Fills `out` with draws of a normal of this mean and sd; `rng` finishes the rare cases.
    pub fn fill(&mut self, out: &mut [f64], mean: f64, sd: f64, rng: &mut impl RngCore) {
        #[cfg(target_arch = "x86_64")]
        {
            use std::is_x86_feature_detected as has;
            if has!("avx2") && has!("avx512f") && has!("avx512vl") {
                return self.fill_by(out, mean, sd, rng, |s, b, x, mean, sd| {
                    // SAFETY: the CPU has these features, checked above.
                    unsafe { avx2::block_vl(s, b, x, mean, sd) }
                });
            }
            if has!("avx2") {
                return self.fill_by(out, mean, sd, rng, |s, b, x, mean, sd| {
                    // SAFETY: the CPU has AVX2, checked above.
                    unsafe { avx2::block(s, b, x, mean, sd) }
                });
            }
        }
        self.fill_by(out, mean, sd, rng, portable_block);
    }

    fn fill_by(
        &mut self,
        out: &mut [f64],
        mean: f64,
        sd: f64,
        rng: &mut impl RngCore,
        first_points: FirstPoints,
    ) {
        let mut b = Block {
            bits: [0; BLOCK],
            outside: [0; BLOCK / 64],
        };
        for chunk in out.chunks_mut(BLOCK) {
            // Whole blocks are written in place, the short one at the end through a copy.
            if let Ok(x) = <&mut [f64; BLOCK]>::try_from(&mut *chunk) {
                self.block(&mut b, x, mean, sd, rng, first_points);
            } else {
                let mut x = [0.0; BLOCK];
                self.block(&mut b, &mut x, mean, sd, rng, first_points);
                chunk.copy_from_slice(&x[..chunk.len()]);
            }
        }
    }

    fn block(
        &mut self,
        b: &mut Block,
        x: &mut [f64; BLOCK],
        mean: f64,
        sd: f64,
        rng: &mut impl RngCore,
        first_points: FirstPoints,
    ) {
        let t = tables();
        first_points(&mut self.s, b, x, mean, sd);
        for (w, &word) in b.outside.iter().enumerate() {
            let mut m = word;
            while m != 0 {
                let k = 64 * w + m.trailing_zeros() as usize;
                m &= m - 1;
                x[k] = mean + sd * finish(b.bits[k], t, rng);
            }
        }
    }
}

/// A block of first points, one lane at a time. Draw k comes from lane k % LANES.
fn portable_block(
    s: &mut [[u64; LANES]; 4],
    b: &mut Block,
    xs: &mut [f64; BLOCK],
    mean: f64,
    sd: f64,
) {
    let t = tables();
    b.outside = [0; BLOCK / 64];
    for (k, bits) in b.bits.iter_mut().enumerate() {
        let l = k % LANES;
        // xoshiro256++ (Blackman & Vigna, 2019).
        *bits = s[0][l]
            .wrapping_add(s[3][l])
            .rotate_left(23)
            .wrapping_add(s[0][l]);
        let shifted = s[1][l] << 17;
        s[2][l] ^= s[0][l];
        s[3][l] ^= s[1][l];
        s[1][l] ^= s[2][l];
        s[0][l] ^= s[3][l];
        s[2][l] ^= shifted;
        s[3][l] = s[3][l].rotate_left(45);
        let (i, x) = candidate(*bits, t);
        xs[k] = mean + sd * x;
        if x.abs() >= t.x[i + 1] {
            b.outside[k / 64] |= 1 << (k % 64);
        }
    }
}

/// The same block in AVX2: two registers of four lanes per state word; the same integer and
/// floating-point operations in the same order, so the same draws.
#[cfg(target_arch = "x86_64")]
mod avx2 {
    use super::{tables, Block, BLOCK, LANES, LAYERS};
    use std::arch::x86_64::*;

    #[target_feature(enable = "avx2")]
    fn rotl<const L: i32, const R: i32>(v: __m256i) -> __m256i {
        _mm256_or_si256(_mm256_slli_epi64::<L>(v), _mm256_srli_epi64::<R>(v))
    }

    /// The block for one set of target features: AVX2 alone, or with AVX-512F and VL, where
    /// the compiler rotates in one instruction and has 32 vector registers, so the eight
    /// streams' state is not spilled. The same operations either way.
    macro_rules! block_with {
        ($name:ident, $features:literal) => {
            /// # Safety
            /// The CPU must have the target features named.
            #[target_feature(enable = $features)]
            pub(super) unsafe fn $name(
                s: &mut [[u64; LANES]; 4],
                b: &mut Block,
                xs: &mut [f64; BLOCK],
                mean: f64,
                sd: f64,
            ) {
                const GROUPS: usize = LANES / 4;
                let t = tables();
                let load = |w: &[u64; LANES], g: usize| {
                    // SAFETY: 4 words from 4g, inside the LANES-word array.
                    unsafe { _mm256_loadu_si256(w.as_ptr().add(4 * g).cast()) }
                };
                // st[g][w]: state word w of lanes 4g..4g + 4.
                let mut st: [[__m256i; 4]; GROUPS] =
                    std::array::from_fn(|g| std::array::from_fn(|w| load(&s[w], g)));
                let one = _mm256_set1_epi64x(0x3FF0_0000_0000_0000);
                let layer_mask = _mm256_set1_epi64x(LAYERS as i64 - 1);
                let two = _mm256_set1_pd(2.0);
                let three = _mm256_set1_pd(3.0);
                let magnitude = _mm256_castsi256_pd(_mm256_set1_epi64x(i64::MAX));
                let (mean, sd) = (_mm256_set1_pd(mean), _mm256_set1_pd(sd));
                b.outside = [0; BLOCK / 64];
                for step in 0..BLOCK / LANES {
                    for (g, state) in st.iter_mut().enumerate() {
                        let [s0, s1, s2, s3] = *state;
                        let bits = _mm256_add_epi64(rotl::<23, 41>(_mm256_add_epi64(s0, s3)), s0);
                        let shifted = _mm256_slli_epi64::<17>(s1);
                        let s2 = _mm256_xor_si256(s2, s0);
                        let s3 = _mm256_xor_si256(s3, s1);
                        let s1 = _mm256_xor_si256(s1, s2);
                        let s0 = _mm256_xor_si256(s0, s3);
                        let s2 = _mm256_xor_si256(s2, shifted);
                        let s3 = rotl::<45, 19>(s3);
                        *state = [s0, s1, s2, s3];

                        let k = step * LANES + 4 * g;
                        // SAFETY: k + 4 ≤ BLOCK.
                        unsafe { _mm256_storeu_si256(b.bits.as_mut_ptr().add(k).cast(), bits) };
                        let f = _mm256_castsi256_pd(_mm256_or_si256(
                            _mm256_srli_epi64::<12>(bits),
                            one,
                        ));
                        let u = _mm256_sub_pd(_mm256_mul_pd(two, f), three);
                        // x[i] and x[i + 1] sit side by side: one 16-byte load per draw, not two
                        // gathers (slow on some processors), the layers taken from the register.
                        let i = _mm256_and_si256(bits, layer_mask);
                        // SAFETY: 0 ≤ i < LAYERS, so x[i], x[i + 1] lie inside the LAYERS + 1 edges.
                        let pair = |i: i64| unsafe { _mm_loadu_pd(t.x.as_ptr().add(i as usize)) };
                        let (p0, p1, p2, p3) = (
                            pair(_mm256_extract_epi64::<0>(i)),
                            pair(_mm256_extract_epi64::<1>(i)),
                            pair(_mm256_extract_epi64::<2>(i)),
                            pair(_mm256_extract_epi64::<3>(i)),
                        );
                        let even = _mm256_set_m128d(p2, p0);
                        let odd = _mm256_set_m128d(p3, p1);
                        let edge = _mm256_unpacklo_pd(even, odd);
                        let inner = _mm256_unpackhi_pd(even, odd);
                        let x = _mm256_mul_pd(u, edge);
                        let out = _mm256_cmp_pd::<_CMP_GE_OQ>(_mm256_and_pd(x, magnitude), inner);
                        let scaled = _mm256_add_pd(mean, _mm256_mul_pd(sd, x));
                        // SAFETY: k + 4 ≤ BLOCK.
                        unsafe { _mm256_storeu_pd(xs.as_mut_ptr().add(k), scaled) };
                        b.outside[k / 64] |= (_mm256_movemask_pd(out) as u64) << (k % 64);
                    }
                }
                for (g, words) in st.iter().enumerate() {
                    for (w, &v) in words.iter().enumerate() {
                        // SAFETY: 4 words from 4g, inside the LANES-word array.
                        unsafe { _mm256_storeu_si256(s[w].as_mut_ptr().add(4 * g).cast(), v) };
                    }
                }
            }
        };
    }

    block_with!(block, "avx2");
    block_with!(block_vl, "avx2,avx512f,avx512vl");
}

/// The layer (low 11 bits) and a point uniform across it, sign included (top 52 bits).
#[inline(always)]
fn candidate(bits: u64, t: &Tables) -> (usize, f64) {
    let i = bits as usize % LAYERS;
    let u = 2.0 * f64::from_bits(0x3FF0_0000_0000_0000 | (bits >> 12)) - 3.0;
    (i, u * t.x[i])
}

/// Finishes a draw whose first point fell outside its layer's rectangle: the tail for the base
/// layer, the wedge test otherwise; a rejected point starts a whole new draw.
fn finish(mut bits: u64, t: &Tables, rng: &mut impl RngCore) -> f64 {
    loop {
        let (i, x) = candidate(bits, t);
        if x.abs() < t.x[i + 1] {
            return x;
        }
        if i == 0 {
            // Marsaglia's tail beyond r.
            let r = t.r;
            loop {
                let a = -open01(rng).ln() / r;
                let b = -open01(rng).ln();
                if 2.0 * b >= a * a {
                    return if x < 0.0 { -(r + a) } else { r + a };
                }
            }
        }
        if t.f[i + 1] + (t.f[i] - t.f[i + 1]) * rng.random::<f64>() < density(x) {
            return x;
        }
        bits = rng.next_u64();
    }
}

/// Uniform on (0, 1], so its logarithm is finite.
fn open01(rng: &mut impl RngCore) -> f64 {
    1.0 - rng.random::<f64>()
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;
    use rand_xoshiro::Xoshiro256PlusPlus;

    #[test]
    fn the_solved_ziggurat_of_256_layers_is_marsaglia_and_tsangs() {
        // Marsaglia & Tsang (2000), section 4 and their table for 256 layers:
        // r = 3.6541528853610088, v = 4.92867323399e-3, x[0] = v/f(r) = 3.9107579595.
        let t = Tables::new(256);
        assert!((t.r - 3.654_152_885_361_009).abs() < 1e-12, "r {}", t.r);
        let v = t.x[0] * t.f[1];
        assert!((v - 4.928_673_233_99e-3).abs() < 1e-13, "v {v}");
        assert!(
            (t.x[0] - 3.910_757_959_537_09).abs() < 1e-9,
            "x0 {}",
            t.x[0]
        );
    }

    #[test]
    fn the_layers_have_equal_areas_and_close_at_the_top() {
        let t = tables();
        let v = t.x[0] * t.f[1];
        assert_eq!(t.x.len(), LAYERS + 1);
        for i in 1..LAYERS - 1 {
            let area = t.x[i] * (t.f[i + 1] - t.f[i]);
            assert!((area - v).abs() < 1e-9 * v, "layer {i}: {area}");
        }
        // The top layer, x[LAYERS-1] wide up to height 1, has the same area.
        let top = t.x[LAYERS - 1] * (1.0 - t.f[LAYERS - 1]);
        assert!((top - v).abs() < 1e-6 * v, "top {top} against {v}");
        assert!(t.x.windows(2).skip(1).all(|w| w[0] > w[1]));
    }

    #[test]
    fn the_vector_and_portable_paths_give_the_same_draws() {
        // 1000 draws, with a mean and sd: three whole blocks and a part, so the split at the
        // end is covered too.
        let draws = |first_points: FirstPoints| {
            let mut x = vec![0.0; 1000];
            let mut rng = Xoshiro256PlusPlus::seed_from_u64(7);
            NormalDraws::new(&mut rng).fill_by(&mut x, 0.25, 0.01, &mut rng, first_points);
            x
        };
        let portable = draws(portable_block);
        assert!(portable.iter().all(|x| x.is_finite()));
        assert!(portable.windows(2).all(|w| w[0] != w[1]));
        #[cfg(target_arch = "x86_64")]
        {
            if std::is_x86_feature_detected!("avx2") {
                // SAFETY: the CPU has AVX2, checked above.
                let avx2 = draws(|s, b, x, m, sd| unsafe { avx2::block(s, b, x, m, sd) });
                assert_eq!(avx2, portable, "AVX2");
            }
            use std::is_x86_feature_detected as has;
            if has!("avx2") && has!("avx512f") && has!("avx512vl") {
                // SAFETY: the CPU has these features, checked above.
                let vl = draws(|s, b, x, m, sd| unsafe { avx2::block_vl(s, b, x, m, sd) });
                assert_eq!(vl, portable, "AVX2 with AVX-512VL");
            }
        }
    }
}
