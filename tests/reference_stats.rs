//! The statistics against published and library references. Each check names its source.

mod common;
use capstack::stats::capability::{
    bissell_bound, bissell_interval, capability, chi2_bound, chi2_interval, normal_ppm,
    CapabilityOptions, Limits,
};
use capstack::stats::constants::{c4, chart_factors, d2, d3};
use capstack::stats::moments::{lag1_autocorrelation, moments, Runs};
use capstack::stats::normal;
use capstack::stats::normality::{anderson_darling, shapiro_wilk};
use capstack::stats::within::{
    mean_moving_range, moving_range_sigma, subgroup_sigma, WithinMethod,
};
use common::*;

// ---- NIST StRD univariate summary statistics (certified values, 15 digits) ----

#[test]
fn strd_means_sds_and_autocorrelations_reach_their_certified_values() {
    let certified = table("strd_certified.csv");
    for row in &certified[1..] {
        let name = &row[0];
        let x = column(&format!("strd_{}.csv", name.to_lowercase()));
        assert_eq!(x.len(), row[1].parse::<usize>().unwrap(), "{name} n");
        let (mean, sd, r1): (f64, f64, f64) = (
            row[2].parse().unwrap(),
            row[3].parse().unwrap(),
            row[4].parse().unwrap(),
        );
        let m = moments(&x);
        // Tolerances from the reference sheet: mean 1e-12 relative (12+ digits); sd 1e-10 on
        // the lower-difficulty sets, 1e-7 on NumAcc3/4 (float64 representation limits).
        let sd_tol = if name == "NumAcc3" || name == "NumAcc4" {
            1e-7
        } else {
            1e-10
        };
        close(m.mean, mean, 1e-12, &format!("{name} mean"));
        close(m.sd, sd, sd_tol, &format!("{name} sd"));
        // Over the distinct values, as `capability` takes them: the same certified figures.
        let by_runs = Runs::of(&x).moments();
        close(by_runs.mean, mean, 1e-12, &format!("{name} mean by runs"));
        close(by_runs.sd, sd, sd_tol, &format!("{name} sd by runs"));
        let r_tol = if name.starts_with("NumAcc") {
            1e-9
        } else {
            1e-10
        };
        close(
            lag1_autocorrelation(&x, m.mean),
            r1,
            r_tol,
            &format!("{name} r1"),
        );
    }
}

#[test]
fn numacc4_repeated_keeps_its_certified_mean_and_spread() {
    // NIST StRD NumAcc4 (certified mean 10000000.2, sd 0.1, n = 1001) repeated 1000 times:
    // the hardest set at the size of a production file (the lanes' sums run a thousand
    // times longer). Same mean; the sum of squares grows 1000-fold, so
    // sd = 0.1·√(1000·1000 / (1001000 − 1)). Tolerances as for NumAcc4 itself.
    let x = column("strd_numacc4.csv");
    let repeated: Vec<f64> = (0..1000).flat_map(|_| x.iter().copied()).collect();
    let m = moments(&repeated);
    close(m.mean, 10000000.2, 1e-12, "mean");
    close(m.sd, 0.1 * (1e6f64 / 1_000_999.0).sqrt(), 1e-7, "sd");
}

// ---- Skewness and kurtosis: scipy 1.17.1 stats.skew / stats.kurtosis with bias=False ----

#[test]
fn skewness_and_kurtosis_match_scipy_unbiased_estimators() {
    let ds1 = moments(&column("ds1_shaft_od.csv"));
    close(
        ds1.skewness,
        -0.21000793929198233,
        1e-9,
        "DS1 skew (scipy 1.17.1)",
    );
    close(
        ds1.kurtosis,
        -0.7697501796218615,
        1e-9,
        "DS1 kurtosis (scipy 1.17.1)",
    );
    let ds2 = moments(&column("ds2_runout.csv"));
    close(
        ds2.skewness,
        1.0391544074917758,
        1e-9,
        "DS2 skew (scipy 1.17.1)",
    );
    close(
        ds2.kurtosis,
        0.7506188636957507,
        1e-9,
        "DS2 kurtosis (scipy 1.17.1)",
    );
}

// ---- The normal distribution: scipy 1.17.1 norm.ppf / norm.sf ----

#[test]
fn normal_quantile_and_tails_match_scipy() {
    let cases = [
        (1e-10, -6.361340902404056),
        (1e-5, -4.264890793922825),
        (0.00135, -2.9999769927033935),
        (0.025, -1.9599639845400545),
        (0.3, -0.5244005127080409),
        (0.8, 0.8416212335729143),
        (0.975, 1.959963984540054),
        (0.99865, 2.9999769927034015),
        (1.0 - 1e-9, 5.997807019601637),
    ];
    for (p, z) in cases {
        close(normal::quantile(p), z, 1e-13, &format!("norm.ppf({p})"));
    }
    assert_eq!(normal::quantile(0.5), 0.0);
    // scipy 1.17.1 special.erfc, across the switch from series to continued fraction.
    for (x, e) in [
        (-3.0, 1.9999779095030015),
        (-1.0, 1.8427007929497148),
        (0.1, 0.8875370839817152),
        (1.0, 0.15729920705028516),
        (2.4, 0.0006885138966450789),
        (2.6, 0.000236034416529349),
        (4.0, 1.541725790028002e-08),
        (6.0, 2.1519736712498913e-17),
        (10.0, 2.0884875837625446e-45),
        (20.0, 5.395865611607901e-176),
    ] {
        close(normal::erfc(x), e, 2e-14, &format!("erfc({x})"));
    }
    for (k, sf) in [
        (3.0, 0.0013498980316300933),
        (4.5, 3.3976731247300535e-06),
        (6.0, 9.865876450376946e-10),
        (8.0, 6.22096057427174e-16),
    ] {
        close(normal::sf(k), sf, 1e-12, &format!("norm.sf({k})"));
        close(normal::cdf(-k), sf, 1e-12, &format!("norm.cdf(-{k})"));
    }
}

#[test]
fn normal_tail_ppm_table_matches_the_reference_sheet() {
    // normal_tails_ppm.csv: 2·norm.sf(k)·1e6 (scipy 1.17.1).
    for row in &table("normal_tails_ppm.csv")[1..] {
        let k: f64 = row[0].parse().unwrap();
        let two: f64 = row[1].parse().unwrap();
        let lim = Limits {
            nominal: Some(0.0),
            lsl: Some(-k),
            usl: Some(k),
        };
        close(
            normal_ppm(0.0, 1.0, &lim).total.unwrap(),
            two,
            1e-10,
            &format!("±{k}σ ppm"),
        );
    }
    // cpk_ppm.csv: a centred process at Cpk c rejects 2Φ(−3c)·1e6; with a 1.5σ shift,
    // Φ(−3c − 1.5) + Φ(−3c + 1.5).
    for row in &table("cpk_ppm.csv")[1..] {
        // The rows 1.33333 and 1.66667 stand for 4/3 and 5/3 (their ppm are the exact fractions').
        let c = match row[0].as_str() {
            "1.33333" => 4.0 / 3.0,
            "1.66667" => 5.0 / 3.0,
            v => v.parse().unwrap(),
        };
        let lim = Limits {
            nominal: Some(0.0),
            lsl: Some(-3.0 * c),
            usl: Some(3.0 * c),
        };
        close(
            normal_ppm(0.0, 1.0, &lim).total.unwrap(),
            row[1].parse().unwrap(),
            1e-10,
            &format!("Cpk {c} centred"),
        );
        close(
            normal_ppm(1.5, 1.0, &lim).total.unwrap(),
            row[3].parse().unwrap(),
            1e-10,
            &format!("Cpk {c} shifted 1.5σ"),
        );
    }
}

#[test]
fn trade_facts_hold_as_common_practice_checks() {
    // Common practice, no single source: Cpk = 1 centred rejects about 2700 ppm; ±4.5σ about 6.8 ppm.
    let at = |k: f64| {
        normal_ppm(
            0.0,
            1.0,
            &Limits {
                nominal: None,
                lsl: Some(-k),
                usl: Some(k),
            },
        )
        .total
        .unwrap()
    };
    assert!((at(3.0) - 2700.0).abs() < 1.0);
    assert!((at(4.5) - 6.8).abs() < 0.01);
}

// ---- Control-chart constants: numerical values and the published table ----

#[test]
fn control_chart_constants_match_numerical_and_published_values() {
    for row in &table("control_constants.csv")[1..] {
        let m: usize = row[0].parse().unwrap();
        let f = |i: usize| row[i].parse::<f64>().unwrap();
        // Numerical values (scipy quad/dblquad, 10 and 8 decimals as given).
        assert!((d2(m) - f(1)).abs() < 1e-9, "d2({m}) = {}", d2(m));
        assert!((d3(m) - f(2)).abs() < 1e-7, "d3({m}) = {}", d3(m));
        assert!((c4(m) - f(3)).abs() < 1e-9, "c4({m}) = {}", c4(m));
        // Published table values (3 decimals for d2/d3, 4 for c4) are the rounded figures.
        assert!(
            (d2(m) - f(4)).abs() <= 0.0005 + 1e-12,
            "d2({m}) rounds to the table"
        );
        assert!(
            (d3(m) - f(5)).abs() <= 0.0005 + 1e-12,
            "d3({m}) rounds to the table"
        );
        assert!(
            (c4(m) - f(6)).abs() <= 0.00005 + 1e-12,
            "c4({m}) rounds to the table"
        );
        let cf = chart_factors(m);
        for (got, i, what) in [
            (cf.a2, 7, "A2"),
            (cf.d3_lower, 8, "D3"),
            (cf.d4_upper, 9, "D4"),
            (cf.a3, 10, "A3"),
            (cf.b3, 11, "B3"),
            (cf.b4, 12, "B4"),
        ] {
            assert!(
                (got - f(i)).abs() <= 0.00005 + 1e-9,
                "{what}({m}) = {got}, table {}",
                f(i)
            );
        }
    }
    // Closed forms: d2(2) = 2/√π, d3(2) = √(2 − 4/π).
    close(d2(2), 2.0 / std::f64::consts::PI.sqrt(), 1e-12, "d2(2)");
    close(
        d3(2),
        (2.0 - 4.0 / std::f64::consts::PI).sqrt(),
        1e-9,
        "d3(2)",
    );
}

// ---- DS1 worked example: indices under each sigma estimator (reference sheet §3) ----

#[test]
fn ds1_indices_match_the_worked_example_under_every_sigma_estimator() {
    let x = column("ds1_shaft_od.csv");
    let exp = table("capability_ds1_expected.csv");
    let v = |k: &str| value(&exp, k);
    let lim = Limits {
        nominal: Some(25.0),
        lsl: Some(24.97),
        usl: Some(25.03),
    };
    let tol = 1e-9;
    close(mean_moving_range(&x), v("MRbar"), tol, "MRbar");
    close(
        moving_range_sigma(&x),
        v("sigma[MRbar/d2(2)]"),
        tol,
        "sigma MR",
    );
    let cap = capability(&x, None, &lim, &CapabilityOptions::default());
    close(cap.mean.unwrap(), v("mean"), 1e-12, "mean");
    close(cap.sd_overall.unwrap(), v("s_overall"), tol, "s");
    close(cap.cp.unwrap(), v("Cp[MRbar/d2(2)]"), tol, "Cp MR");
    close(cap.cpu.unwrap(), v("Cpu[MRbar/d2(2)]"), tol, "Cpu MR");
    close(cap.cpl.unwrap(), v("Cpl[MRbar/d2(2)]"), tol, "Cpl MR");
    close(cap.cpk.unwrap(), v("Cpk[MRbar/d2(2)]"), tol, "Cpk MR");
    close(cap.pp.unwrap(), v("Cp[overall s]"), tol, "Pp");
    close(cap.ppk.unwrap(), v("Cpk[overall s]"), tol, "Ppk");
    close(cap.ppu.unwrap(), v("Cpu[overall s]"), tol, "Ppu");
    close(cap.ppl.unwrap(), v("Cpl[overall s]"), tol, "Ppl");
    close(cap.cpm.unwrap(), v("Cpm[sqrt(s^2+(mean-T)^2)]"), tol, "Cpm");
    let groups: Vec<Vec<f64>> = x.chunks(4).map(|c| c.to_vec()).collect();
    for (method, key) in [
        (WithinMethod::Range, "Rbar/d2(4)"),
        (WithinMethod::Sd, "Sbar/c4(4)"),
        (WithinMethod::Pooled, "pooled sp/c4(16)"),
    ] {
        close(
            subgroup_sigma(&groups, method),
            v(&format!("sigma[{key}]")),
            tol,
            key,
        );
        let c = capability(
            &x,
            Some(&groups),
            &lim,
            &CapabilityOptions {
                within: method,
                confidence: 0.95,
            },
        );
        close(
            c.cp.unwrap(),
            v(&format!("Cp[{key}]")),
            tol,
            &format!("Cp {key}"),
        );
        close(
            c.cpk.unwrap(),
            v(&format!("Cpk[{key}]")),
            tol,
            &format!("Cpk {key}"),
        );
        close(
            c.cpu.unwrap(),
            v(&format!("Cpu[{key}]")),
            tol,
            &format!("Cpu {key}"),
        );
        close(
            c.cpl.unwrap(),
            v(&format!("Cpl[{key}]")),
            tol,
            &format!("Cpl {key}"),
        );
    }
}

// ---- Confidence bounds: chi-square (Cp) and Bissell (Cpk), scipy 1.17.1 ----

#[test]
fn confidence_bounds_match_the_reference_examples() {
    for row in &table("ci_examples.csv")[1..] {
        let f = |i: usize| row[i].parse::<f64>().unwrap();
        let (n, idx) = (f(0) as usize, f(1));
        let tol = 1e-9;
        let cpi = chi2_interval(idx, n, 0.95).unwrap();
        close(cpi.low, f(2), tol, "Cp chi2 low");
        close(cpi.high, f(3), tol, "Cp chi2 high");
        close(
            chi2_bound(idx, n, 0.05).unwrap(),
            f(4),
            tol,
            "Cp chi2 lower one-sided",
        );
        let bi = bissell_interval(idx, n, 0.95).unwrap();
        close(bi.low, f(5), tol, "Cpk Bissell low");
        close(bi.high, f(6), tol, "Cpk Bissell high");
        close(
            bissell_bound(idx, n, normal::quantile(0.95)).unwrap(),
            f(7),
            tol,
            "Cpk Bissell lower one-sided",
        );
    }
}

#[test]
fn capability_reports_the_bounds_at_the_chosen_confidence() {
    // A sample whose Pp is known lets the bound be checked against scipy's chi2.ppf(0.05, 49) = 33.93030561852784.
    let x: Vec<f64> = (0..50).map(|i| ((i * 37) % 50) as f64).collect();
    let m = moments(&x);
    let lim = Limits {
        nominal: None,
        lsl: Some(m.mean - 3.0 * m.sd),
        usl: Some(m.mean + 3.0 * m.sd),
    };
    let cap = capability(&x, None, &lim, &CapabilityOptions::default());
    close(cap.pp.unwrap(), 1.0, 1e-12, "Pp = 1 by construction");
    close(
        cap.pp_lower.unwrap(),
        (33.93030561852784f64 / 49.0).sqrt(),
        1e-9,
        "pp_lower",
    );
    close(
        cap.ppk_lower.unwrap(),
        1.0 - 1.6448536269514722 * (1.0 / 450.0 + 1.0 / 98.0f64).sqrt(),
        1e-9,
        "ppk_lower (Bissell)",
    );
}

// ---- Normality: scipy 1.17.1 shapiro, statsmodels 0.15.0 normal_ad ----

fn normality_case(name: &str) -> Vec<f64> {
    let rows = table("normality_expected.csv");
    let row = rows.iter().find(|r| r[0] == name).unwrap();
    let data = &row[1];
    if let Some(inline) = data.strip_prefix("inline: ") {
        inline.split(' ').map(|v| v.parse().unwrap()).collect()
    } else {
        column(data)
    }
}

#[test]
fn shapiro_wilk_matches_scipy_on_every_reference_case() {
    let rows = table("normality_expected.csv");
    for row in &rows[1..] {
        let mut x = normality_case(&row[0]);
        x.sort_by(f64::total_cmp);
        let sw = shapiro_wilk(&x).unwrap();
        // The reference sheet: an exact AS R94 port agrees with scipy to |ΔW| < 4e-10, |Δp| < 2e-9.
        assert!(
            (sw.w - row[5].parse::<f64>().unwrap()).abs() < 1e-9,
            "{} W = {}",
            row[0],
            sw.w
        );
        assert!(
            (sw.p - row[6].parse::<f64>().unwrap()).abs() < 1e-8,
            "{} p = {}",
            row[0],
            sw.p
        );
    }
}

#[test]
fn anderson_darling_matches_statsmodels_on_every_reference_case() {
    let rows = table("normality_expected.csv");
    for row in rows[1..].iter().filter(|r| !r[7].is_empty()) {
        let mut x = normality_case(&row[0]);
        let m = moments(&x);
        x.sort_by(f64::total_cmp);
        let ad = anderson_darling(&x, m.mean, m.sd).unwrap();
        close(
            ad.a2,
            row[7].parse().unwrap(),
            1e-9,
            &format!("{} A2", row[0]),
        );
        close(
            ad.a2_adjusted,
            row[8].parse().unwrap(),
            1e-9,
            &format!("{} A*2", row[0]),
        );
        close(
            ad.p,
            row[9].parse().unwrap(),
            1e-8,
            &format!("{} p", row[0]),
        );
    }
}

#[test]
fn degenerate_samples_give_nulls_with_reasons_and_never_panic() {
    let lim = Limits {
        nominal: Some(1.0),
        lsl: Some(0.0),
        usl: Some(2.0),
    };
    for x in [vec![], vec![1.0], vec![1.0, 1.0], vec![1.0, 1.0, 1.0, 1.0]] {
        let c = capability(&x, None, &lim, &CapabilityOptions::default());
        assert!(c.cp.is_none() && c.cpk.is_none() && c.pp.is_none(), "{x:?}");
        assert!(c.shapiro_wilk.is_none() && c.anderson_darling.is_none());
        assert!(!c.notes.is_empty(), "a reason is given for {x:?}");
        let json = serde_json::to_string(&c).unwrap();
        assert!(!json.contains("NaN") && !json.contains("inf"), "{json}");
    }
    // Two values: sd exists, Shapiro–Wilk does not (n < 3).
    let c = capability(&[1.0, 1.2], None, &lim, &CapabilityOptions::default());
    assert!(c.pp.is_some() && c.shapiro_wilk.is_none());
}

#[test]
fn one_sided_specs_give_only_the_defined_side() {
    let x = column("ds2_runout.csv");
    let lim = Limits {
        nominal: None,
        lsl: None,
        usl: Some(0.10),
    };
    let c = capability(&x, None, &lim, &CapabilityOptions::default());
    assert!(c.cp.is_none() && c.pp.is_none() && c.cpm.is_none() && c.cpl.is_none());
    assert_eq!(c.ppk, c.ppu);
    assert_eq!(c.cpk, c.cpu);
    // Reference sheet §5: under normal theory Ppu ≈ 1.74 for DS2.
    assert!((c.ppu.unwrap() - 1.74).abs() < 0.01, "Ppu = {:?}", c.ppu);
    assert!(c.ppm_split.observed.below.is_none());
}

#[test]
fn ln_cdf_matches_scipy_log_ndtr_and_its_interpolation_matches_it() {
    // scipy 1.17.1 scipy.special.log_ndtr.
    for (z, expected) in [
        (-35.0, -616.9751012619225),
        (-30.0, -454.32124395634327),
        (-10.0, -53.23128515051248),
        (-3.0, -6.60772622151035),
        (-1.0, -1.8410216450092634),
        (0.0, -std::f64::consts::LN_2), // scipy: -0.6931471805599453
        (0.5, -0.36894641528865635),
        (1.0, -0.1727537790234499),
        (3.0, -0.0013508099647481925),
        (8.0, -6.220960574271742e-16),
        (12.0, -1.776482112077653e-33),
    ] {
        close(normal::ln_cdf(z), expected, 1e-13, &format!("ln Φ({z})"));
    }
    // The interpolated ln Φ within 1e-11 (absolute) of the exact one on a dense grid,
    // including points between the nodes and both ends of the table.
    let mut worst: f64 = 0.0;
    for i in 0..=460_000 {
        let z = -37.5 + i as f64 * 1e-4;
        worst = worst.max((normal::ln_cdf_fast(z) - normal::ln_cdf(z)).abs());
    }
    assert!(worst < 1e-11, "largest interpolation error {worst:e}");
}

#[test]
fn anderson_darling_of_a_large_gauge_sample_matches_statsmodels() {
    // The benchmark's 200,000 values, written to 5 decimals as its file holds them: 3408
    // distinct values, so capstack counts them on the grid and interpolates ln Φ. statsmodels
    // 0.15.0 normal_ad on the same values (generated in Python, rounded by '%.5f') gives
    // A² = 35.054218670062255 (its p underflows to 0).
    let x: Vec<f64> = bench_data::four_uniform_sums(200_000)
        .iter()
        .map(|v| format!("{v:.5}").parse().unwrap())
        .collect();
    let c = capability(&x, None, &Limits::default(), &CapabilityOptions::default());
    close(
        c.anderson_darling.unwrap().a2,
        35.054218670062255,
        1e-8,
        "A² of 200,000 gauge values",
    );
}

#[test]
fn anderson_darling_of_a_large_sample_matches_statsmodels() {
    // 20,000 sums of four uniforms from the benchmark's LCG (exact in binary, so the same in
    // Python): statsmodels 0.15.0 normal_ad gives A² = 2.2079034069683985, p = 1.3389837589053984e-05.
    // Above 1024 distinct values capstack interpolates ln Φ.
    let mut x = bench_data::four_uniform_sums(20_000);
    let m = moments(&x);
    x.sort_by(f64::total_cmp);
    let ad = anderson_darling(&x, m.mean, m.sd).unwrap();
    close(ad.a2, 2.2079034069683985, 1e-8, "A² of 20000 values");
    close(ad.p, 1.3389837589053984e-05, 1e-6, "p of 20000 values");
}
