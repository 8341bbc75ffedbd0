//! Invariants of the statistics and the stack (proptest).

use capstack::intake::{read_files, ReadOptions, SpecSet};
use capstack::stack::analytic::{measured, rss, worst_case};
use capstack::stack::file::{Assumptions, Requirement};
use capstack::stack::model::{ContributorModel, StackModel};
use capstack::stats::capability::{capability, CapabilityOptions, Limits};
use capstack::stats::control::{individuals, signals, subgroups};
use capstack::stats::fit::fit_all;
use capstack::stats::groups::{anova, kruskal_wallis, levene};
use proptest::prelude::*;

fn sample() -> impl Strategy<Value = Vec<f64>> {
    prop::collection::vec(-1.0f64..1.0, 5..60)
}

proptest! {
    #[test]
    fn cpk_never_exceeds_cp(x in sample(), width in 0.5f64..5.0, offset in -1.0f64..1.0) {
        let lim = Limits { nominal: Some(offset), lsl: Some(offset - width), usl: Some(offset + width) };
        let c = capability(&x, None, &lim, &CapabilityOptions::default());
        if let (Some(cp), Some(cpk)) = (c.cp, c.cpk) { prop_assert!(cpk <= cp + 1e-12); }
        if let (Some(pp), Some(ppk)) = (c.pp, c.ppk) { prop_assert!(ppk <= pp + 1e-12); }
    }

    #[test]
    fn indices_do_not_change_with_units(x in sample(), a in 0.01f64..100.0, b in -1000.0f64..1000.0) {
        // mm → inch is x/25.4: any positive scale and shift applied to data and limits alike.
        let lim = Limits { nominal: Some(0.0), lsl: Some(-2.0), usl: Some(2.5) };
        let y: Vec<f64> = x.iter().map(|v| a * v + b).collect();
        let c1 = capability(&x, None, &lim, &CapabilityOptions::default());
        let c2 = capability(&y, None, &lim.transformed(a, b), &CapabilityOptions::default());
        for (p, q) in [(c1.cp, c2.cp), (c1.cpk, c2.cpk), (c1.pp, c2.pp), (c1.ppk, c2.ppk), (c1.cpm, c2.cpm)] {
            prop_assert!((p.unwrap() - q.unwrap()).abs() <= 1e-7 * p.unwrap().abs().max(1.0));
        }
        let (w1, w2) = (c1.shapiro_wilk.unwrap().w, c2.shapiro_wilk.unwrap().w);
        prop_assert!((w1 - w2).abs() < 1e-9);
    }

    #[test]
    fn row_order_changes_only_the_within_sigma(x in sample(), seed in any::<u64>()) {
        let lim = Limits { nominal: Some(0.0), lsl: Some(-2.0), usl: Some(2.0) };
        let mut y = x.clone();
        let mut s = seed | 1;
        for i in (1..y.len()).rev() {
            s ^= s << 13; s ^= s >> 7; s ^= s << 17;
            y.swap(i, (s % (i as u64 + 1)) as usize);
        }
        let c1 = capability(&x, None, &lim, &CapabilityOptions::default());
        let c2 = capability(&y, None, &lim, &CapabilityOptions::default());
        prop_assert!((c1.mean.unwrap() - c2.mean.unwrap()).abs() < 1e-12);
        prop_assert!((c1.sd_overall.unwrap() - c2.sd_overall.unwrap()).abs() < 1e-12);
        prop_assert!((c1.ppk.unwrap() - c2.ppk.unwrap()).abs() < 1e-9);
        prop_assert_eq!(c1.ppm_observed, c2.ppm_observed);
        prop_assert!((c1.anderson_darling.unwrap().a2 - c2.anderson_darling.unwrap().a2).abs() < 1e-9);
    }

    #[test]
    fn rss_half_width_never_exceeds_worst_case_and_mirroring_mirrors(parts in prop::collection::vec((-3.0f64..3.0, 0.01f64..1.0, 0.001f64..0.5), 1..8)) {
        let contributors: Vec<ContributorModel> = parts.iter().enumerate().map(|(i, &(a, t, sd))| ContributorModel {
            name: format!("c{i}"), sensitivity: if a.abs() < 0.1 { 1.0 } else { a }, nominal: 10.0, lower_limit: 10.0 - t, upper_limit: 10.0 + t,
            mean: 10.0 + t / 3.0, sd, n: Some(30), distribution: None, sampling: None, ppk: None, ppk_lower: None, skewness: None, normality_p: None, ..Default::default()
        }).collect();
        let n = contributors.len();
        let mut covariance = vec![vec![0.0; n]; n];
        for (i, c) in contributors.iter().enumerate() { covariance[i][i] = c.sd * c.sd; }
        let m = StackModel { requirement: Requirement { name: "g".into(), lsl: Some(-1.0), usl: Some(1.0), unit: None }, assumptions: Assumptions { cp: 1.0, safety_factor: 1.0 }, contributors, covariance, paired: vec![], part_groups: vec![] };
        let wc = worst_case(&m);
        let r = rss(&m);
        prop_assert!(r.max - r.mean <= (wc.max - wc.min) / 2.0 + 1e-12);
        let mut mirrored = m.clone();
        for c in &mut mirrored.contributors { c.sensitivity = -c.sensitivity; }
        let (f, g) = (measured(&m), measured(&mirrored));
        prop_assert!((f.mean + g.mean).abs() < 1e-9 && (f.sd - g.sd).abs() < 1e-12);
    }

    #[test]
    fn fits_and_charts_never_panic_and_stay_finite(
        x in prop::collection::vec(prop_oneof![-1e3f64..1e3, 0.0f64..1e-3, Just(0.0), Just(1.0)], 0..80),
        subgroup in 2usize..6,
    ) {
        let mut sorted = x.clone();
        sorted.sort_by(f64::total_cmp);
        let lim = Limits { nominal: Some(0.0), lsl: Some(-10.0), usl: Some(10.0) };
        for m in fit_all(&sorted, &lim) {
            prop_assert!(!m.loglik.is_nan(), "{} loglik", m.name);
            let c = m.capability;
            prop_assert!(!(c.median.is_nan()), "{} median", m.name);
        }
        if let Some(chart) = individuals(&x) {
            let _ = signals(&chart, &[1, 2, 3, 4, 5, 6, 7, 8]);
        }
        let groups: Vec<Vec<f64>> = x.chunks(subgroup).map(|c| c.to_vec()).collect();
        for use_sd in [false, true] {
            if let Some(chart) = subgroups(&groups, use_sd) {
                let _ = signals(&chart, &[1, 2, 3, 4, 5, 6, 7, 8]);
            }
        }
        let slices: Vec<&[f64]> = groups.iter().map(|g| g.as_slice()).collect();
        for t in [anova(&slices), kruskal_wallis(&slices), levene(&slices, true)].into_iter().flatten() {
            prop_assert!((0.0..=1.0).contains(&t.p), "p {}", t.p);
        }
    }

    #[test]
    fn any_layout_delimiter_and_decimal_style_reads_back_the_same_values_and_the_audit_adds_up(
        values in prop::collection::vec(prop::collection::vec(prop_oneof![9 => -1e4f64..1e4, 1 => Just(f64::NAN)], 3), 2..30),
        style in 0usize..4,
        long in any::<bool>(),
    ) {
        // style: 0 ',' with '.', 1 ';' with ',', 2 tab with '.', 3 tab with ','.
        let (delim, comma) = [(",", false), (";", true), ("\t", false), ("\t", true)][style];
        let cell = |v: f64| {
            if v.is_nan() { return String::new(); }
            let t = format!("{v:.4}");
            if comma { t.replace('.', ",") } else { t }
        };
        let mut text = String::new();
        if long {
            text.push_str(&["part", "feature", "value"].join(delim));
            text.push('\n');
            for (i, row) in values.iter().enumerate() {
                for (j, v) in row.iter().enumerate() {
                    text.push_str(&[format!("P{i}"), format!("f{j}"), cell(*v)].join(delim));
                    text.push('\n');
                }
            }
        } else {
            text.push_str(&["part", "f0", "f1", "f2"].join(delim));
            text.push('\n');
            for (i, row) in values.iter().enumerate() {
                let mut cells = vec![format!("P{i}")];
                cells.extend(row.iter().map(|v| cell(*v)));
                text.push_str(&cells.join(delim));
                text.push('\n');
            }
        }
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("t.csv");
        std::fs::write(&path, &text).unwrap();
        let read = read_files(&[path.display().to_string()], &ReadOptions::default(), &SpecSet::default());
        // A column left without any number is not a feature; skip those draws.
        let all_present = (0..3).all(|j| values.iter().any(|r| !r[j].is_nan()));
        prop_assume!(all_present);
        let data = read.unwrap();
        for j in 0..3 {
            let f = data.features.iter().find(|f| f.name == format!("f{j}")).unwrap();
            let got: Vec<f64> = f.values.iter().copied().filter(|v| !v.is_nan()).collect();
            let want: Vec<f64> = values.iter().map(|r| r[j]).filter(|v| !v.is_nan()).map(|v| (v * 1e4).round() / 1e4).collect();
            prop_assert_eq!(got.len(), want.len());
            for (g, w) in got.iter().zip(&want) {
                prop_assert!((g - w).abs() <= 1e-9 * w.abs().max(1.0), "{} vs {}", g, w);
            }
        }
        let a = &data.audit;
        prop_assert_eq!(a.rows_read, a.rows_used + a.rows_rejected);
        prop_assert_eq!(a.cells_read, a.values_used + a.unused.len() as u64);
    }
}

proptest! {
    /// The extremes are kept in four lanes and a remainder: wherever they fall, min and max
    /// are the sample's (checked against the iterator's own fold).
    #[test]
    fn moments_find_the_extremes_in_every_lane(x in prop::collection::vec(-1e6f64..1e6, 1..40)) {
        let m = capstack::stats::moments::moments(&x);
        prop_assert_eq!(m.min, x.iter().copied().fold(f64::INFINITY, f64::min));
        prop_assert_eq!(m.max, x.iter().copied().fold(f64::NEG_INFINITY, f64::max));
    }
}

/// Values on the decimal grid of `decimals` places around `centre` (rounded), `grid` steps
/// away, read from their text as a file holds them.
fn grid_values(grid: &[i64], decimals: usize, centre: f64) -> Vec<f64> {
    let step = 10f64.powi(-(decimals as i32));
    grid.iter()
        .map(|&k| {
            format!("{:.*}", decimals, centre.round() + k as f64 * step)
                .parse()
                .unwrap()
        })
        .collect()
}

proptest! {
    /// The moments and observed rejects taken over the distinct values (as `capability` takes
    /// them) are those of the values one by one: n, min, max and the counts exactly; mean and
    /// sd to 1e-12 of the values' magnitude (sums in another order round differently, at
    /// rounding error of the largest value), skewness and kurtosis to 1e-9.
    #[test]
    fn moments_and_rejects_from_runs_are_those_of_the_values(
        grid in prop::collection::vec(-3_000i64..3_000, 1..3000),
        decimals in 0usize..5,
        centre in -500.0f64..500.0,
        off_grid in any::<bool>(),
    ) {
        use capstack::stats::capability::{observed_ppm, Limits};
        use capstack::stats::moments::{moments, Runs};
        let x: Vec<f64> = grid_values(&grid, decimals, centre)
            .iter()
            .enumerate()
            .map(|(i, &v)| if off_grid { v + (i as f64).sin() * 1e-3 } else { v })
            .collect();
        let (a, b) = (moments(&x), Runs::of(&x).moments());
        prop_assert_eq!((a.n, a.min, a.max), (b.n, b.min, b.max));
        let scale = a.min.abs().max(a.max.abs());
        prop_assert!((a.mean - b.mean).abs() <= 1e-12 * scale, "mean {} {}", a.mean, b.mean);
        if a.n >= 2 {
            prop_assert!((a.sd - b.sd).abs() <= 1e-12 * scale, "sd {} {}", a.sd, b.sd);
        }
        if a.n >= 4 && a.sd > 1e-6 * a.mean.abs().max(1.0) {
            prop_assert!((a.skewness - b.skewness).abs() < 1e-9 * a.skewness.abs().max(1.0));
            prop_assert!((a.kurtosis - b.kurtosis).abs() < 1e-9 * a.kurtosis.abs().max(1.0));
        }
        // Limits on the grid, so that values fall on them (a value on a limit conforms).
        let on_grid = grid_values(&[-1000, 1000], decimals, centre);
        let limits = Limits { nominal: None, lsl: Some(on_grid[0]), usl: Some(on_grid[1]) };
        let n = x.len() as f64;
        let below = x.iter().filter(|&&v| v < limits.lsl.unwrap()).count() as f64 / n * 1e6;
        let above = x.iter().filter(|&&v| v > limits.usl.unwrap()).count() as f64 / n * 1e6;
        let ppm = observed_ppm(&Runs::of(&x), &limits);
        prop_assert_eq!((ppm.below, ppm.above), (Some(below), Some(above)));
    }
}

proptest! {
    /// Runs counted on the decimal grid are the runs of the sorted sample: on the grid (values
    /// parsed from text with 0–5 decimals, as a file holds them), one ulp off a grid value (two
    /// numbers on one grid point), and off the grid.
    #[test]
    fn runs_on_the_grid_are_the_runs_of_the_sorted_sample(
        grid in prop::collection::vec(-5_000i64..5_000, 1024..3000),
        decimals in 0usize..6,
        centre in -1000.0f64..1000.0,
        nudged in prop::collection::vec(0usize..1024, 0..2),
        off_grid in prop::collection::vec((0usize..1024, -1e-3f64..1e-3), 0..2),
    ) {
        use capstack::stats::moments::Runs;
        let mut x = grid_values(&grid, decimals, centre);
        for i in nudged {
            x[i] = f64::from_bits(x[i].to_bits() + 1);
        }
        for (i, d) in off_grid {
            x[i] += d;
        }
        let mut sorted = x.clone();
        sorted.sort_by(f64::total_cmp);
        prop_assert_eq!(Runs::of(&x), Runs::from_sorted(&sorted));
    }
}

proptest! {
    /// Sorting by the decimal grid or by comparison gives the values in `total_cmp` order,
    /// each exactly once, on and off the grid.
    #[test]
    fn sort_values_orders_every_sample_exactly(
        grid in prop::collection::vec(-50_000i64..50_000, 4096..6000),
        decimals in 0i32..5,
        off_grid in prop::collection::vec((0usize..4096, -1e-3f64..1e-3), 0..3),
    ) {
        let step = 10f64.powi(-decimals);
        let mut x: Vec<f64> = grid.iter().map(|&k| 25.0 + k as f64 * step).collect();
        for (i, d) in off_grid {
            x[i] += d;
        }
        let mut expected = x.clone();
        expected.sort_by(f64::total_cmp);
        capstack::stats::moments::sort_values(&mut x);
        prop_assert_eq!(x, expected);
    }
}
