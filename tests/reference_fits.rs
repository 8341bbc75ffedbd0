//! Distribution fits against scipy 1.17.1 (tests/fixtures/reference/fits_reference.py writes
//! the datasets and fits_expected.csv; DS2 is the reference sheet's runout set).

mod common;
use capstack::stats::capability::Limits;
use capstack::stats::fit::{choose, fit_all, fit_named, FittedModel};
use common::*;
use std::collections::HashMap;

/// dataset -> (values sorted, limits)
fn dataset(name: &str) -> (Vec<f64>, Limits) {
    let (file, lsl, usl) = match name {
        "ds2" => ("ds2_runout.csv", None, Some(0.10)),
        "weibull" => ("fits_weibull.csv", None, Some(0.06)),
        "gamma" => ("fits_gamma.csv", Some(0.052), Some(0.09)),
        "shifted" => ("fits_shifted.csv", Some(-1.1), Some(3.0)),
        _ => unreachable!(),
    };
    let mut x = column(file);
    x.sort_by(f64::total_cmp);
    (
        x,
        Limits {
            nominal: None,
            lsl,
            usl,
        },
    )
}

fn expected() -> HashMap<(String, String), Vec<(String, f64)>> {
    let mut out: HashMap<(String, String), Vec<(String, f64)>> = HashMap::new();
    for row in table("fits_expected.csv").into_iter().skip(1) {
        if row.len() < 4 {
            continue;
        }
        out.entry((row[0].clone(), row[1].clone()))
            .or_default()
            .push((row[2].clone(), row[3].parse().unwrap()));
    }
    out
}

fn value_of(m: &FittedModel, key: &str) -> Option<f64> {
    let c = &m.capability;
    Some(match key {
        "loglik" => m.loglik,
        "ad" => m.anderson_darling,
        "p00135" => c.p00135,
        "median" => c.median,
        "p99865" => c.p99865,
        "ppu" => c.ppu?,
        "ppl" => c.ppl?,
        "ppm_above" => c.ppm.above?,
        "ppm_below" => c.ppm.below?,
        k => *m.params.get(k)?,
    })
}

#[test]
fn fits_match_scipy() {
    let exp = expected();
    let mut checked = 0;
    for ((ds, model), keys) in &exp {
        let (x, limits) = dataset(ds);
        let m = fit_named(model, &x, &limits).unwrap_or_else(|| panic!("{ds} {model} not fitted"));
        for (key, want) in keys {
            if want.is_nan() {
                continue;
            }
            if key == "scipy_loglik" {
                // scipy's free-location fit is a local optimiser: the profile search must reach
                // at least its likelihood.
                assert!(
                    m.loglik >= want - 1e-6,
                    "{ds} {model}: {} < scipy {want}",
                    m.loglik
                );
                checked += 1;
                continue;
            }
            let got = value_of(&m, key).unwrap_or_else(|| panic!("{ds} {model} {key}"));
            // Closed forms (normal, lognormal) agree to rounding; scipy's numerical optimisers
            // (Weibull, gamma, Box–Cox λ) stop at about 1e-5 relative.
            let tol = match model.as_str() {
                "normal" | "lognormal" => 1e-9,
                _ => 2e-4,
            };
            let tol = if key.starts_with("ppm") {
                tol * 20.0
            } else {
                tol
            };
            close(got, *want, tol, &format!("{ds} {model} {key}"));
            checked += 1;
        }
    }
    assert!(checked > 120, "{checked}");
}

#[test]
fn ds2_is_not_normal_and_the_models_disagree_about_the_tail() {
    let (x, limits) = dataset("ds2");
    let models = fit_all(&x, &limits);
    assert_eq!(models.len(), 8, "every family fits positive data");
    let (chosen, why) = choose(&models).unwrap();
    assert_ne!(models[chosen].name, "normal", "{why}");
    assert!(why.contains("AIC"), "{why}");
    let tails: Vec<f64> = models
        .iter()
        .filter(|m| m.selectable && m.name != "normal")
        .map(|m| m.capability.ppm.above.unwrap())
        .collect();
    let (lo, hi) = tails
        .iter()
        .fold((f64::INFINITY, 0.0f64), |(a, b), &t| (a.min(t), b.max(t)));
    assert!(hi > 3.0 * lo, "tail estimates {tails:?}");
}

#[test]
fn a_normal_sample_keeps_the_normal_model() {
    let mut x: Vec<f64> = column("ds1_shaft_od.csv");
    x.sort_by(f64::total_cmp);
    let limits = Limits {
        nominal: Some(25.0),
        lsl: Some(24.95),
        usl: Some(25.05),
    };
    let models = fit_all(&x, &limits);
    let (chosen, why) = choose(&models).unwrap();
    assert_eq!(models[chosen].name, "normal", "{why}");
    // The normal model's percentile Ppk is the classical Ppk with the ML (n-divisor) sd.
    let n = x.len() as f64;
    let mean = x.iter().sum::<f64>() / n;
    let sd = (x.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / n).sqrt();
    let ppk = ((25.05 - mean).min(mean - 24.95)) / (3.0 * sd);
    close(
        models[chosen].capability.ppk.unwrap(),
        ppk,
        1e-3,
        "normal percentile Ppk",
    );
}

#[test]
fn degenerate_data_fit_nothing() {
    let limits = Limits::default();
    assert!(fit_all(&[1.0, 1.0, 1.0, 1.0, 1.0, 1.0], &limits).is_empty());
    assert!(fit_all(&[1.0, 2.0], &limits).is_empty());
    // Non-positive values: only normal, 3-parameter forms and shifted Box–Cox.
    let x: Vec<f64> = (0..20)
        .map(|i| -1.0 + 0.1 * i as f64 + 0.01 * (i * i) as f64)
        .collect();
    let names: Vec<&str> = fit_all(&x, &limits).iter().map(|m| m.name).collect();
    assert!(
        !names.contains(&"lognormal") && names.contains(&"boxcox"),
        "{names:?}"
    );
}
