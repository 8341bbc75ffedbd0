//! Do groups (lots, cavities, suppliers) differ? One-way ANOVA and Kruskal–Wallis for the
//! location, Levene (mean-centred) and Brown–Forsythe (median-centred) for the spread: the
//! definitions of scipy's `f_oneway`, `kruskal` and `levene(center='mean'|'median')`.

use serde::Serialize;
use statrs::distribution::{ChiSquared, ContinuousCDF, FisherSnedecor};

#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Test {
    pub statistic: f64,
    pub df1: f64,
    /// Denominator degrees of freedom (F tests); null for chi-square.
    pub df2: Option<f64>,
    pub p: f64,
}

/// F = [Σnᵢ(x̄ᵢ − x̄)²/(k − 1)] / [ΣΣ(x − x̄ᵢ)²/(N − k)].
pub fn anova(groups: &[&[f64]]) -> Option<Test> {
    let k = groups.len();
    let n: usize = groups.iter().map(|g| g.len()).sum();
    if k < 2 || n <= k || groups.iter().any(|g| g.is_empty()) {
        return None;
    }
    let grand = groups.iter().flat_map(|g| g.iter()).sum::<f64>() / n as f64;
    let mut between = 0.0;
    let mut within = 0.0;
    for g in groups {
        let m = g.iter().sum::<f64>() / g.len() as f64;
        between += g.len() as f64 * (m - grand).powi(2);
        within += g.iter().map(|v| (v - m).powi(2)).sum::<f64>();
    }
    let (df1, df2) = ((k - 1) as f64, (n - k) as f64);
    if within <= 0.0 {
        return None;
    }
    let f = (between / df1) / (within / df2);
    Some(Test {
        statistic: f,
        df1,
        df2: Some(df2),
        p: FisherSnedecor::new(df1, df2).ok()?.sf(f),
    })
}

/// H = [12/(N(N+1))·Σ Rᵢ²/nᵢ − 3(N+1)] / [1 − Σ(t³ − t)/(N³ − N)], average ranks for ties,
/// chi-square with k − 1 degrees of freedom.
pub fn kruskal_wallis(groups: &[&[f64]]) -> Option<Test> {
    let k = groups.len();
    let mut all: Vec<(f64, usize)> = groups
        .iter()
        .enumerate()
        .flat_map(|(i, g)| g.iter().map(move |&v| (v, i)))
        .collect();
    let n = all.len();
    if k < 2 || n < 3 || groups.iter().any(|g| g.is_empty()) {
        return None;
    }
    all.sort_by(|a, b| a.0.total_cmp(&b.0));
    let mut rank_sum = vec![0.0; k];
    let mut ties = 0.0;
    let mut i = 0;
    while i < n {
        let mut j = i;
        while j + 1 < n && all[j + 1].0 == all[i].0 {
            j += 1;
        }
        let t = (j - i + 1) as f64;
        let rank = (i + j) as f64 / 2.0 + 1.0;
        for item in &all[i..=j] {
            rank_sum[item.1] += rank;
        }
        ties += t * t * t - t;
        i = j + 1;
    }
    let nf = n as f64;
    let h: f64 = 12.0 / (nf * (nf + 1.0))
        * groups
            .iter()
            .zip(&rank_sum)
            .map(|(g, r)| r * r / g.len() as f64)
            .sum::<f64>()
        - 3.0 * (nf + 1.0);
    let correction = 1.0 - ties / (nf * nf * nf - nf);
    if correction <= 0.0 {
        return None;
    }
    let h = h / correction;
    let df = (k - 1) as f64;
    Some(Test {
        statistic: h,
        df1: df,
        df2: None,
        p: ChiSquared::new(df).ok()?.sf(h),
    })
}

/// The ANOVA F of the absolute deviations from each group's mean (Levene 1960) or median
/// (Brown & Forsythe 1974).
pub fn levene(groups: &[&[f64]], median_centred: bool) -> Option<Test> {
    let deviations: Vec<Vec<f64>> = groups
        .iter()
        .map(|g| {
            let c = if median_centred {
                median(g)
            } else {
                g.iter().sum::<f64>() / g.len() as f64
            };
            g.iter().map(|v| (v - c).abs()).collect()
        })
        .collect();
    let refs: Vec<&[f64]> = deviations.iter().map(|d| d.as_slice()).collect();
    anova(&refs)
}

fn median(x: &[f64]) -> f64 {
    let mut s = x.to_vec();
    s.sort_by(f64::total_cmp);
    let n = s.len();
    if n % 2 == 1 {
        s[n / 2]
    } else {
        (s[n / 2 - 1] + s[n / 2]) / 2.0
    }
}
