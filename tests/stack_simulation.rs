//! The simulation, the noise-free tail methods and the forecast's bootstrap interval, against
//! closed forms, scipy and repeated seeded runs.

mod common;
use assert_cmd::Command;
use capstack::stack::file::{Distribution, Sampling};
use capstack::stack::model::{ContributorModel, PartGroup, StackModel};
use capstack::stack::simulate::{simulate, SimulationPlan, SimulationSettings};
use capstack::stack::tail::tail_forecast;
use capstack::stack::uncertainty::forecast_uncertainty;
use capstack::stats::moments::covariance;
use capstack::stats::normal;
use common::*;
use serde_json::Value;

fn stated(name: &str, mean: f64, sd: f64, d: Distribution) -> ContributorModel {
    let mut c = contributor(name, 1.0, 0.0, 0.05, mean, sd);
    c.n = None;
    c.sampling = None;
    c.distribution = Some(d);
    c
}

fn settings(samples: u64, seed: u64) -> SimulationSettings {
    SimulationSettings {
        samples,
        seed,
        precision: None,
        max_samples: 1_000_000_000,
    }
}

fn quiet(_: u64, _: u64) {}

/// Two normals (sd 0.006 and 0.008, together 0.01) and a uniform of half-width 0.03, all
/// centred on 0, with limits ±0.065.
fn uniform_stack() -> StackModel {
    model(
        vec![
            stated("n1", 0.0, 0.006, Distribution::Normal),
            stated("n2", 0.0, 0.008, Distribution::Normal),
            stated("u", 0.0, 0.03 / 3f64.sqrt(), Distribution::Uniform),
        ],
        -0.065,
        0.065,
        1.0,
        1.0,
    )
}

/// P(N(0, σ) + U(−w, w) > u) in closed form: (σ/2w)·[G(t₂) − G(t₁)], G(t) = t·Φ̄(t) − φ(t),
/// t₁ = (u − w)/σ, t₂ = (u + w)/σ (the integral of the normal tail over the uniform).
fn uniform_plus_normal_above(sigma: f64, w: f64, u: f64) -> f64 {
    let g = |t: f64| t * normal::sf(t) - normal::pdf(t);
    sigma / (2.0 * w) * (g((u + w) / sigma) - g((u - w) / sigma))
}

#[test]
fn a_uniform_contributor_by_convolution_matches_the_exact_tail_within_one_percent() {
    // Exact: the closed form above; scipy 1.17.1 `integrate.quad` of `norm.sf((u - x)/σ)/(2w)`
    // over [−w, w] gives 9.74681973690371e-06 per side at u = 0.065.
    let exact_side = uniform_plus_normal_above(0.01, 0.03, 0.065);
    close(
        exact_side,
        9.746_819_736_903_71e-6,
        1e-9,
        "closed form vs scipy quad",
    );
    let m = uniform_stack();
    let started = std::time::Instant::now();
    let t = tail_forecast(&m);
    let took = started.elapsed();
    assert_eq!(t.method, "convolution");
    assert_eq!(t.non_normal, vec!["u".to_string()]);
    let exact_ppm = 2.0 * exact_side * 1e6;
    close(t.rates.ppm, exact_ppm, 0.01, "convolution, 19.5 ppm");
    close(t.rates.ppm_above.unwrap(), exact_side * 1e6, 0.01, "above");
    assert!(t.grid_error_ppm < 0.01 * exact_ppm, "{}", t.grid_error_ppm);
    let sp = t.saddlepoint.unwrap();
    close(sp.ppm, exact_ppm, 0.05, "saddlepoint");
    assert!(took.as_secs_f64() < 0.5, "{took:?}");
    // The normal model with the same sd (0.02) is wrong by more than an order of magnitude.
    let normal_ppm = 2.0 * normal::sf(0.065 / 0.02) * 1e6;
    assert!(normal_ppm > 10.0 * exact_ppm, "{normal_ppm} vs {exact_ppm}");
}

#[test]
fn two_equal_uniforms_convolve_to_the_triangular_tail() {
    // U(−w, w) + U(−w, w) is triangular on [−2w, 2w]: P(S > x) = (1 − x/2w)²/2.
    let w = 0.02;
    let sd = w / 3f64.sqrt();
    let m = model(
        vec![
            stated("u1", 0.0, sd, Distribution::Uniform),
            stated("u2", 0.0, sd, Distribution::Uniform),
        ],
        -0.035,
        0.035,
        1.0,
        1.0,
    );
    let exact = (1.0 - 0.035 / (2.0 * w)).powi(2) / 2.0 * 1e6;
    let t = tail_forecast(&m);
    close(t.rates.ppm_above.unwrap(), exact, 0.01, "lattice");
    // A stated triangular of the same sd is the same distribution.
    let tri = model(
        vec![stated("t", 0.0, sd * 2f64.sqrt(), Distribution::Triangular)],
        -0.035,
        0.035,
        1.0,
        1.0,
    );
    let t = tail_forecast(&tri);
    close(t.rates.ppm_above.unwrap(), exact, 0.01, "triangular");
    let sim = simulate(&tri, &settings(2_000_000, 3), &mut quiet);
    let (lo, hi) = (sim.ppm_low, sim.ppm_high);
    assert!(
        lo < 2.0 * exact && 2.0 * exact < hi,
        "{lo}..{hi} vs {}",
        2.0 * exact
    );
}

#[test]
fn simulated_normal_contributors_converge_to_the_exact_normal_result() {
    let m = model(
        vec![
            stated("a", 0.001, 0.006, Distribution::Normal),
            stated("b", -0.002, 0.008, Distribution::Normal),
            stated("c", 0.0, 0.005, Distribution::Normal),
        ],
        -0.03,
        0.03,
        1.0,
        1.0,
    );
    let (mean, sd) = m.assembly(&m.means(), &m.covariance);
    let exact = (normal::cdf((-0.03 - mean) / sd) + normal::sf((0.03 - mean) / sd)) * 1e6;
    let t = tail_forecast(&m);
    assert_eq!(t.method, "normal_closed_form");
    close(t.rates.ppm, exact, 1e-12, "closed form");
    let sim = simulate(&m, &settings(4_000_000, 11), &mut quiet);
    assert_eq!(sim.samples, 4_000_000);
    assert!(
        sim.ppm_low <= exact && exact <= sim.ppm_high,
        "{sim:?} vs {exact}"
    );
    close(sim.ppm, exact, 0.03, "4e6 draws");
}

#[test]
fn the_95_percent_interval_covers_the_true_rate_about_95_percent_of_the_time() {
    // True rate: 2·Φ̄(2.5) = 12419 ppm; 400 seeded runs of 20,000 draws. The binomial sd of the
    // coverage is 1.1 %, so [92 %, 98 %] is a ±2.7σ band.
    let m = model(
        vec![
            stated("a", 0.0, 0.006, Distribution::Normal),
            stated("b", 0.0, 0.008, Distribution::Normal),
        ],
        -0.025,
        0.025,
        1.0,
        1.0,
    );
    let truth = 2.0 * normal::sf(2.5) * 1e6;
    let covered = (0..400u64)
        .filter(|&seed| {
            let s = simulate(&m, &settings(20_000, seed), &mut quiet);
            s.ppm_low <= truth && truth <= s.ppm_high
        })
        .count();
    let coverage = covered as f64 / 400.0;
    assert!((0.92..=0.98).contains(&coverage), "coverage {coverage}");
}

#[test]
fn a_seed_gives_identical_results_on_one_and_two_threads() {
    let m = uniform_stack();
    let run = |threads: usize| {
        rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap()
            .install(|| simulate(&m, &settings(1_000_003, 5), &mut quiet))
    };
    let (one, two) = (run(1), run(2));
    assert_eq!(one, two);
    assert_ne!(one, simulate(&m, &settings(1_000_003, 6), &mut quiet));
}

/// Two contributors measured on the same 40 parts with correlation about 0.8.
fn correlated_parts() -> StackModel {
    let mut state = 7u64;
    let mut z = || {
        // Box–Muller on a small LCG: test data only.
        state = state
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        let u1 = ((state >> 11) as f64 + 0.5) / (1u64 << 53) as f64;
        state = state
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        let u2 = ((state >> 11) as f64 + 0.5) / (1u64 << 53) as f64;
        (-2.0 * u1.ln()).sqrt() * (2.0 * std::f64::consts::PI * u2).cos()
    };
    let (mut x, mut y) = (Vec::new(), Vec::new());
    for _ in 0..40 {
        let (a, b) = (z(), z());
        x.push(10.0 + 0.01 * a);
        y.push(5.0 + 0.01 * (0.8 * a + 0.6 * b));
    }
    let mx = x.iter().sum::<f64>() / 40.0;
    let my = y.iter().sum::<f64>() / 40.0;
    let (sx, sy) = (covariance(&x, &x).sqrt(), covariance(&y, &y).sqrt());
    let mut m = model(
        vec![
            contributor("x", 1.0, 10.0, 0.03, mx, sx),
            contributor("y", -1.0, 5.0, 0.03, my, sy),
        ],
        4.96,
        5.04,
        1.0,
        1.0,
    );
    m.covariance[0][1] = covariance(&x, &y);
    m.covariance[1][0] = m.covariance[0][1];
    m.part_groups = vec![PartGroup {
        source: "parts.csv".into(),
        members: vec![0, 1],
        columns: vec![x, y],
    }];
    m
}

#[test]
fn resampling_parts_keeps_the_correlation_of_features_measured_on_one_part() {
    let m = correlated_parts();
    let measured_r = m.correlation(0, 1);
    assert!(measured_r > 0.6, "{measured_r}");
    let plan = SimulationPlan::new(&m);
    assert_eq!(plan.drawn_as[0].draw, "parts");
    assert_eq!(plan.drawn_as[0].parts, Some(40));
    let mut columns = vec![Vec::new(), Vec::new()];
    plan.draw_chunk(1, 0, 8192, &mut columns);
    let r = covariance(&columns[0], &columns[1])
        / (covariance(&columns[0], &columns[0]) * covariance(&columns[1], &columns[1])).sqrt();
    // The draws' correlation estimates the parts' own; its sampling sd is about 0.005 here.
    assert!((r - measured_r).abs() < 0.03, "{r} vs {measured_r}");
    // Drawn as independent normals instead, the correlation is gone.
    let mut independent = m.clone();
    independent.contributors[0].sampling = Some(Sampling::Normal);
    let plan = SimulationPlan::new(&independent);
    plan.draw_chunk(1, 0, 8192, &mut columns);
    let r = covariance(&columns[0], &columns[1])
        / (covariance(&columns[0], &columns[0]) * covariance(&columns[1], &columns[1])).sqrt();
    assert!(r.abs() < 0.05, "{r}");
}

#[test]
fn precision_keeps_sampling_until_the_interval_is_tight_or_says_it_stopped() {
    let m = uniform_stack();
    let mut wide = model(
        vec![stated("a", 0.0, 0.01, Distribution::Normal)],
        -0.03,
        0.03,
        1.0,
        1.0,
    );
    let s = simulate(
        &wide,
        &SimulationSettings {
            samples: 100_000,
            seed: 1,
            precision: Some(0.1),
            max_samples: 100_000_000,
        },
        &mut quiet,
    );
    let p = s.precision.clone().unwrap();
    assert!(p.reached, "{p:?}");
    assert!((s.ppm_high - s.ppm_low) / 2.0 <= 0.1 * s.ppm);
    close(s.ppm, 2.0 * normal::sf(3.0) * 1e6, 0.15, "2700 ppm");
    // 19.5 ppm to 10 % needs about 2·10⁷ draws; a cap of 10⁶ stops short and says so.
    let capped = simulate(
        &m,
        &SimulationSettings {
            samples: 100_000,
            seed: 1,
            precision: Some(0.1),
            max_samples: 1_000_000,
        },
        &mut quiet,
    );
    let p = capped.precision.unwrap();
    assert!(!p.reached && capped.samples <= 1_000_000 + 8192, "{p:?}");
    wide.requirement.lsl = None;
    let s = simulate(&wide, &settings(10_000, 1), &mut quiet);
    assert_eq!(s.ppm_below, None);
}

/// One contributor measured on n parts laid out at the normal quantiles (i − ½)/n of
/// N(10, 0.01), with limits ±0.033 (about 900 ppm).
fn quantile_parts(n: usize, source: &str) -> StackModel {
    let x: Vec<f64> = (0..n)
        .map(|i| 10.0 + 0.01 * normal::quantile((i as f64 + 0.5) / n as f64))
        .collect();
    let sd = covariance(&x, &x).sqrt();
    let mut m = model(
        vec![contributor("x", 1.0, 10.0, 0.03, 10.0, sd)],
        9.967,
        10.033,
        1.0,
        1.0,
    );
    m.contributors[0].n = Some(n);
    m.part_groups = vec![PartGroup {
        source: source.into(),
        members: vec![0],
        columns: vec![x],
    }];
    m
}

#[test]
fn the_forecast_interval_follows_the_chi_square_interval_of_sigma_and_names_the_file_with_fewest() {
    // Normal theory: σ lies in s·√((n−1)/χ²₀.₉₅) .. s·√((n−1)/χ²₀.₀₅) with 90 % confidence
    // (chi-square quantiles from statrs); mapped through the normal tail that is the reference
    // interval of the ppm. The bootstrap of a normal sample should agree (log ppm within 0.15;
    // the mean's own uncertainty adds a little at the top).
    use statrs::distribution::{ChiSquared, ContinuousCDF};
    let n = 400;
    let m = quantile_parts(n, "shafts.csv");
    let u = forecast_uncertainty(&m, 2000, 1).unwrap();
    let s = m.contributors[0].sd;
    let chi = ChiSquared::new((n - 1) as f64).unwrap();
    let ppm_at = |sd: f64| 2.0 * normal::sf(0.033 / sd) * 1e6;
    let lo = ppm_at(s * ((n - 1) as f64 / chi.inverse_cdf(0.95)).sqrt());
    let hi = ppm_at(s * ((n - 1) as f64 / chi.inverse_cdf(0.05)).sqrt());
    assert!(
        (u.ppm_low.ln() - lo.ln()).abs() < 0.15,
        "{} vs {lo}",
        u.ppm_low
    );
    assert!(
        (u.ppm_high.ln() - hi.ln()).abs() < 0.15,
        "{} vs {hi}",
        u.ppm_high
    );
    assert!(u.ppm_low <= u.ppm && u.ppm <= u.ppm_high);
    assert!(
        u.statement.contains("400 measured parts of shafts.csv"),
        "{}",
        u.statement
    );
    assert_eq!(u, forecast_uncertainty(&m, 2000, 1).unwrap(), "seeded");
    // Fewer parts, wider interval.
    let few = forecast_uncertainty(&quantile_parts(40, "shafts.csv"), 2000, 1).unwrap();
    assert!(few.ppm_high - few.ppm_low > 2.0 * (u.ppm_high - u.ppm_low));
    // Two files: the one with 30 parts dominates the one with 400.
    let mut two = m.clone();
    let other = quantile_parts(30, "pins.csv");
    two.contributors.push(other.contributors[0].clone());
    two.contributors[1].name = "pin".into();
    two.contributors[1].mean = 0.0;
    two.covariance = vec![vec![s * s, 0.0], vec![0.0, other.covariance[0][0]]];
    let mut pins = other.part_groups[0].clone();
    pins.members = vec![1];
    pins.columns[0].iter_mut().for_each(|v| *v -= 10.0);
    two.part_groups.push(pins);
    two.requirement.lsl = Some(9.95);
    two.requirement.usl = Some(10.05);
    let u2 = forecast_uncertainty(&two, 1000, 1).unwrap();
    assert_eq!(u2.dominant.as_deref(), Some("pins.csv"), "{u2:?}");
}

#[test]
fn the_binary_reports_the_simulation_with_its_seed_and_interval() {
    let (_dir, toml) = demo_stack_file();
    let run = |extra: &[&str], threads: &str| -> Value {
        let out = Command::cargo_bin("capstack")
            .unwrap()
            .env("RAYON_NUM_THREADS", threads)
            .args(["stack", toml.to_str().unwrap(), "--format", "json"])
            .args(extra)
            .output()
            .unwrap();
        assert!(
            out.status.code() == Some(0) || out.status.code() == Some(1),
            "{out:?}"
        );
        serde_json::from_slice(&out.stdout).unwrap()
    };
    let a = run(&["--samples", "300000"], "1");
    let b = run(&["--samples", "300000", "--seed", "20261201"], "2");
    let sim = &a["simulation"];
    for key in [
        "method", "samples", "ppm", "ppm_low", "ppm_high", "interval", "seed",
    ] {
        assert!(!sim[key].is_null(), "simulation.{key}");
    }
    assert_eq!(sim["seed"], 20261201, "the default seed is reported");
    assert_eq!(sim["interval"], "wilson");
    assert_eq!(sim["samples"], 300000);
    assert_eq!(
        a["simulation"], b["simulation"],
        "default seed, 1 vs 2 threads"
    );
    assert!(sim["ppm_low"].as_f64() <= sim["ppm"].as_f64());
    assert_eq!(sim["histogram"]["counts"].as_array().unwrap().len(), 80);
    let total: u64 = sim["histogram"]["counts"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| c.as_u64().unwrap())
        .sum::<u64>()
        + sim["histogram"]["below_range"].as_u64().unwrap()
        + sim["histogram"]["above_range"].as_u64().unwrap();
    assert_eq!(total, 300000);
    let u = &a["forecast_uncertainty"];
    assert!(u["ppm_low"].as_f64() < u["ppm_high"].as_f64());
    assert!(u["statement"].as_str().unwrap().contains("90 % interval"));
    assert!(!a["exact_tail"]["ppm"].is_null());
    let c = run(&["--samples", "300000", "--seed", "9"], "2");
    assert_ne!(a["simulation"]["ppm"], c["simulation"]["ppm"]);
    let none = run(&[], "2");
    assert!(none.get("simulation").is_none());
}

#[test]
fn bad_simulation_options_are_usage_errors() {
    let (_dir, toml) = demo_stack_file();
    let out = Command::cargo_bin("capstack")
        .unwrap()
        .args(["stack", toml.to_str().unwrap(), "--precision", "150%"])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("150%"));
}

#[test]
fn fitted_models_are_drawn_with_their_own_tails() {
    // One contributor drawn from each family: the simulated rate above the USL must cover the
    // model's own sf(USL) (closed forms; gamma's from statrs' incomplete gamma).
    use capstack::stats::distribution::Distribution as Model;
    let models = [
        Model::Lognormal {
            threshold: 0.0,
            mu: (0.008f64).ln(),
            sigma: 0.45,
        },
        Model::Weibull {
            threshold: 0.001,
            shape: 1.6,
            scale: 0.008,
        },
        Model::Gamma {
            threshold: 0.0,
            shape: 3.0,
            scale: 0.003,
        },
        Model::BoxCox {
            lambda: 0.3,
            shift: 0.0,
            mean: -2.5,
            sd: 0.2,
        },
    ];
    for (k, fitted) in models.into_iter().enumerate() {
        let usl = fitted.quantile(0.999);
        let mut c = contributor("runout", 1.0, 0.0, 0.03, 0.0, 0.01);
        c.sampling = Some(Sampling::Fitted);
        c.fitted = Some(fitted);
        c.model_name = Some("model");
        let mut m = model(vec![c], -1.0, usl, 1.0, 1.0);
        m.requirement.lsl = None;
        let sim = simulate(&m, &settings(2_000_000, k as u64), &mut quiet);
        assert!(sim.draws[0].draw.starts_with("fitted"), "{:?}", sim.draws);
        let want = fitted.sf(usl) * 1e6;
        close(want, 1000.0, 1e-6, "the 0.999 quantile leaves 1000 ppm");
        assert!(
            sim.ppm_low <= want && want <= sim.ppm_high,
            "{fitted:?}: {}..{} vs {want}",
            sim.ppm_low,
            sim.ppm_high
        );
    }
}

proptest::proptest! {
    #![proptest_config(proptest::prelude::ProptestConfig::with_cases(16))]

    /// For independent normal contributors the measured forecast is the closed form
    /// Φ((LSL − μ)/σ) + Φ((μ − USL)/σ) with μ = Σaᵢμᵢ, σ² = Σaᵢ²σᵢ², and the simulation
    /// converges to it: within 4.5 binomial standard errors at 400,000 draws (a false alarm
    /// about once in 150,000 cases).
    #[test]
    fn normal_contributors_simulate_to_the_closed_form(
        parts in proptest::collection::vec((-2.0f64..2.0, 0.002f64..0.02, -0.01f64..0.01), 2..6),
        width in 2.4f64..3.4,
        offset in -0.5f64..0.5,
        seed in proptest::prelude::any::<u64>(),
    ) {
        let contributors: Vec<ContributorModel> = parts
            .iter()
            .enumerate()
            .map(|(i, &(a, sd, shift))| {
                let a = if a.abs() < 0.2 { 1.0 } else { a };
                let mut c = stated(&format!("c{i}"), shift, sd, Distribution::Normal);
                c.sensitivity = a;
                c
            })
            .collect();
        let mu: f64 = contributors.iter().map(|c| c.sensitivity * c.mean).sum();
        let sigma = contributors
            .iter()
            .map(|c| (c.sensitivity * c.sd).powi(2))
            .sum::<f64>()
            .sqrt();
        let (lsl, usl) = (mu - (width + offset) * sigma, mu + (width - offset) * sigma);
        let m = model(contributors, lsl, usl, 1.0, 1.0);
        let exact = (normal::cdf((lsl - mu) / sigma) + normal::sf((usl - mu) / sigma)) * 1e6;
        let forecast = capstack::stack::analytic::measured(&m);
        proptest::prop_assert!((forecast.ppm - exact).abs() <= 1e-9 * exact);
        let n = 400_000u64;
        let sim = simulate(
            &m,
            &SimulationSettings { samples: n, seed, precision: None, max_samples: n },
            &mut |_, _| {},
        );
        let p = exact / 1e6;
        let se = (p * (1.0 - p) / n as f64).sqrt() * 1e6;
        proptest::prop_assert!(
            (sim.ppm - exact).abs() <= 4.5 * se,
            "simulated {} ppm, exact {} ppm (se {})", sim.ppm, exact, se
        );
    }
}

/// The block ziggurat's draws against the standard normal cdf (capstack's Φ, itself checked
/// against scipy's erfc in tests/reference_stats.rs): 4·10⁶ draws in 200 bins of
/// equal probability by Pearson's chi-square (199 degrees of freedom: mean 199, sd 20), and the
/// counts where the rare paths decide: beyond the base layer's edge r (the tail method) and
/// inside the top layer (always the wedge test), both read from the ziggurat's own table. The
/// bounds are ±4 standard errors (common practice, no source).
#[test]
fn block_ziggurat_draws_are_standard_normal() {
    use capstack::stack::normal_draws::NormalDraws;
    use rand::SeedableRng;
    let n = 4_000_000;
    let mut z = vec![0.0; n];
    let mut rng = rand_xoshiro::Xoshiro256PlusPlus::seed_from_u64(20_261_202);
    let mut draws = NormalDraws::new(&mut rng);
    for block in z.chunks_mut(8192) {
        draws.fill(block, 0.0, 1.0, &mut rng);
    }
    let bins = 200;
    let edges: Vec<f64> = (1..bins)
        .map(|b| normal::quantile(b as f64 / bins as f64))
        .collect();
    let mut counts = vec![0u64; bins];
    for &x in &z {
        counts[edges.partition_point(|&e| e <= x)] += 1;
    }
    let expected = n as f64 / bins as f64;
    let chi2: f64 = counts
        .iter()
        .map(|&c| (c as f64 - expected).powi(2) / expected)
        .sum();
    assert!(chi2 < 199.0 + 4.0 * 20.0, "chi-square {chi2}");

    let mean = z.iter().sum::<f64>() / n as f64;
    let var = z.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / n as f64;
    assert!(mean.abs() < 4.0 / (n as f64).sqrt(), "mean {mean}");
    // sd of the sample variance of normals: sqrt(2/n).
    assert!(
        (var - 1.0).abs() < 4.0 * (2.0 / n as f64).sqrt(),
        "variance {var}"
    );

    let check = |count: usize, p: f64, what: &str| {
        let e = n as f64 * p;
        assert!(
            (count as f64 - e).abs() < 4.0 * e.sqrt(),
            "{what}: {count} against {e:.0}"
        );
    };
    let edges = capstack::stack::normal_draws::layer_edges();
    let (r, top) = (edges[1], edges[edges.len() - 2]);
    check(
        z.iter().filter(|x| x.abs() > r).count(),
        2.0 * normal::sf(r),
        "tail",
    );
    check(
        z.iter().filter(|x| x.abs() > 4.5).count(),
        2.0 * normal::sf(4.5),
        "beyond 4.5",
    );
    check(
        z.iter().filter(|x| x.abs() < top).count(),
        normal::cdf(top) - normal::cdf(-top),
        "top layer",
    );
}

/// Through the binary: `simulate = "fitted"` and `simulate = "normal"` in the stack file change
/// how those contributors are drawn (and say so), and `--precision` keeps sampling until the
/// Wilson interval's half-width is within the target of the estimate, reporting it.
#[test]
fn the_stack_file_sets_the_draw_and_precision_sets_the_sample_count() {
    let (dir, toml) = demo_stack_file();
    let text = std::fs::read_to_string(&toml).unwrap();
    let set = |text: String, name: &str, how: &str| {
        let at = text.find(&format!("name = \"{name}\"")).unwrap();
        let mut t = text.clone();
        t.insert_str(at, &format!("simulate = \"{how}\"\n"));
        t
    };
    let text = set(set(text, "spacer", "fitted"), "gear hub", "normal");
    let edited = dir.path().join("edited.toml");
    std::fs::write(&edited, text).unwrap();
    let out = Command::cargo_bin("capstack")
        .unwrap()
        .args(["stack", edited.to_str().unwrap(), "--format", "json"])
        .args([
            "--samples",
            "100000",
            "--precision",
            "20%",
            "--replicates",
            "0",
        ])
        .output()
        .unwrap();
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let v: Value = serde_json::from_slice(&out.stdout).unwrap();
    let sim = &v["simulation"];
    let draw = |name: &str| {
        sim["draws"]
            .as_array()
            .unwrap()
            .iter()
            .find(|d| d["name"] == name)
            .unwrap()["draw"]
            .as_str()
            .unwrap()
            .to_string()
    };
    assert!(draw("spacer").starts_with("fitted"), "{}", draw("spacer"));
    assert_eq!(draw("gear hub"), "normal");
    assert_eq!(draw("housing depth"), "parts");
    let p = &sim["precision"];
    assert_eq!(p["target"], 0.2);
    assert_eq!(p["reached"], true);
    // Reached: the half-width of the interval is within 20 % of the estimate.
    let (ppm, lo, hi) = (
        sim["ppm"].as_f64().unwrap(),
        sim["ppm_low"].as_f64().unwrap(),
        sim["ppm_high"].as_f64().unwrap(),
    );
    assert!((hi - lo) / 2.0 <= 0.2 * ppm, "{lo}-{hi} around {ppm}");
    assert!(sim["samples"].as_u64().unwrap() >= 100_000);
}
