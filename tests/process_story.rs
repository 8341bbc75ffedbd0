//! The sample scenario's non-normal feature, drifting lot and off-centre supplier, through the
//! binary; and the `--model` / `--rules` options.

mod common;
use assert_cmd::Command;
use capstack::stats::distribution::Distribution;
use capstack::stats::fit::anderson_darling_fitted;
use common::feature;
use serde_json::Value;

fn capability(dir: &std::path::Path, args: &[&str]) -> (i32, Value, String) {
    let out = Command::cargo_bin("capstack")
        .unwrap()
        .current_dir(dir)
        .arg("capability")
        .args(args)
        .args(["--format", "json"])
        .output()
        .unwrap();
    let v = serde_json::from_slice(&out.stdout).unwrap_or(Value::Null);
    (
        out.status.code().unwrap(),
        v,
        String::from_utf8_lossy(&out.stderr).into(),
    )
}

#[test]
fn the_skewed_runout_gets_a_non_normal_model_with_percentile_indices() {
    let (dir, _) = common::demo_stack_file();
    let (code, v, err) = capability(
        dir.path(),
        &["talvik_hubs.csv", "--specs", "talvik_specs.csv"],
    );
    assert_eq!(code, 0, "{err}");
    let f = feature(&v, "face_runout");
    let m = &f["model"];
    assert_ne!(m["name"], "normal");
    assert!(m["reason"].as_str().unwrap().contains("lowest AIC"), "{m}");
    // One-sided USL: Ppu is the index, Pp and Ppl are null.
    assert!(m["ppk"].as_f64().unwrap() > 0.0);
    assert_eq!(m["ppk"], m["ppu"]);
    assert!(m["pp"].is_null() && m["ppl"].is_null());
    assert!(m["p99865"].as_f64().unwrap() > m["median"].as_f64().unwrap());
    // Every family is carried, and they disagree about the tail by far more than 10×.
    let models = f["models"].as_array().unwrap();
    assert_eq!(models.len(), 8);
    let tails: Vec<f64> = models
        .iter()
        .map(|m| m["ppm"]["above"].as_f64().unwrap())
        .collect();
    let (lo, hi) = tails
        .iter()
        .fold((f64::INFINITY, 0.0f64), |(a, b), &t| (a.min(t), b.max(t)));
    assert!(hi > 100.0 * lo, "{tails:?}");
    for m in models {
        for key in ["name", "params", "loglik", "aic", "anderson_darling", "ppk"] {
            assert!(m.get(key).is_some(), "{key} in {m}");
        }
    }
    // The near-normal hub length keeps the normal model, and says why.
    let h = &feature(&v, "hub_length")["model"];
    assert_eq!(h["name"], "normal");
    assert!(h["reason"].as_str().unwrap().contains("not rejected"));
}

#[test]
fn the_drifting_lot_is_caught_by_the_stability_rules() {
    let (dir, _) = common::demo_stack_file();
    let (_, v, _) = capability(
        dir.path(),
        &["talvik_hubs.csv", "--specs", "talvik_specs.csv"],
    );
    let s = &feature(&v, "hub_length")["stability"];
    assert_eq!(s["kind"], "individuals");
    assert_eq!(s["stable"], false);
    assert!(s["chance_p"].as_f64().unwrap() < 0.05);
    // Lot T3 is parts 61–90 (long file: two lines per part, header on line 1).
    let in_t3 = s["signals"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|x| x["point"].as_u64().unwrap() >= 60)
        .count();
    assert!(in_t3 > 0, "{s}");
    let first = &s["signals"][0];
    for key in [
        "point",
        "rule",
        "value",
        "description",
        "file",
        "line",
        "part",
    ] {
        assert!(!first[key].is_null(), "{key}");
    }
    assert!(feature(&v, "hub_length")["flags"]
        .as_array()
        .unwrap()
        .contains(&Value::from("unstable")));
    // Nothing signals on the stable bore.
    let (_, v, _) = capability(
        dir.path(),
        &["northfield_housing.csv", "--specs", "northfield_specs.csv"],
    );
    assert_eq!(feature(&v, "bore_dia")["stability"]["signal_count"], 0);
    // The stack says so for the gear hub.
    let out = Command::cargo_bin("capstack")
        .unwrap()
        .current_dir(dir.path())
        .args(["stack", "end_play.toml", "--format", "json"])
        .output()
        .unwrap();
    let st: Value = serde_json::from_slice(&out.stdout).unwrap();
    let hub = st["contributors"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["name"] == "gear hub")
        .unwrap();
    assert_eq!(hub["stable"], false);
    assert!(hub["reasons"]
        .as_array()
        .unwrap()
        .iter()
        .any(|r| r.as_str().unwrap().starts_with("not stable")));
}

#[test]
fn the_supplier_comparison_shows_the_off_centre_supplier() {
    let (dir, _) = common::demo_stack_file();
    let (code, v, err) = capability(
        dir.path(),
        &[
            "orrin_spacers.tsv",
            "brask_spacers.csv",
            "--specs",
            "orrin_specs.csv",
            "--by",
            "source_file",
        ],
    );
    assert_eq!(code, 0, "{err}");
    let c = &v["comparisons"][0];
    assert_eq!(c["feature"], "length");
    assert_eq!(c["means_differ"], true);
    assert!(c["kruskal_wallis"]["p"].as_f64().unwrap() < 1e-6);
    for key in ["anova", "levene", "brown_forsythe"] {
        assert!(!c[key]["p"].is_null(), "{key}");
    }
    let groups = c["groups"].as_array().unwrap();
    let far = groups
        .iter()
        .max_by(|a, b| {
            let f = |g: &Value| g["offset_of_tolerance"].as_f64().unwrap().abs();
            f(a).total_cmp(&f(b))
        })
        .unwrap();
    assert!(far["group"]
        .as_str()
        .unwrap()
        .ends_with("orrin_spacers.tsv"));
    assert!(c["summary"]
        .as_str()
        .unwrap()
        .contains("orrin_spacers.tsv sits farthest"));
}

#[test]
fn model_and_rules_options_are_checked_and_obeyed() {
    let (dir, _) = common::demo_stack_file();
    let base = ["talvik_hubs.csv", "--specs", "talvik_specs.csv"];
    let (_, v, _) = capability(dir.path(), &[&base[..], &["--model", "lognormal"]].concat());
    let f = feature(&v, "face_runout");
    assert_eq!(f["model"]["name"], "lognormal");
    assert_eq!(
        f["models"].as_array().unwrap().len(),
        2,
        "lognormal and normal"
    );
    let (_, v, _) = capability(dir.path(), &[&base[..], &["--rules", "none"]].concat());
    assert_eq!(feature(&v, "hub_length")["stability"]["signal_count"], 0);
    let (_, v, _) = capability(dir.path(), &[&base[..], &["--rules", "1"]].concat());
    let rules: Vec<u64> = feature(&v, "hub_length")["stability"]["signals"]
        .as_array()
        .unwrap()
        .iter()
        .map(|s| s["rule"].as_u64().unwrap())
        .collect();
    assert!(rules.iter().all(|&r| r == 1) && !rules.is_empty());
    for (flag, value) in [
        ("--model", "cauchy"),
        ("--rules", "1,9"),
        ("--rules", "two"),
    ] {
        let (code, _, err) = capability(dir.path(), &[&base[..], &[flag, value]].concat());
        assert_eq!(code, 2, "{flag} {value}");
        assert!(err.contains(flag) && err.contains(value), "{err}");
    }
}

#[test]
fn interpolated_anderson_darling_agrees_with_the_exact_sum() {
    // 20,000 lognormal values at their quantiles, scored against a slightly different lognormal:
    // the interpolation used above 256 distinct values must match the exact sum to 1e-7.
    let n = 20_000;
    let mut x: Vec<f64> = (0..n)
        .map(|i| {
            let z = capstack::stats::normal::quantile((i as f64 + 0.5) / n as f64);
            (0.1 + 0.5 * z + 0.02 * z * z).exp()
        })
        .collect();
    x.sort_by(f64::total_cmp);
    let d = Distribution::Lognormal {
        threshold: 0.0,
        mu: 0.1,
        sigma: 0.5,
    };
    let tiny = f64::MIN_POSITIVE;
    let exact = -(n as f64)
        - (0..n)
            .map(|i| {
                (2 * i + 1) as f64
                    * (d.cdf(x[i]).max(tiny).ln() + d.sf(x[n - 1 - i]).max(tiny).ln())
            })
            .sum::<f64>()
            / n as f64;
    let got = anderson_darling_fitted(&x, &d);
    assert!(
        (got - exact).abs() < 1e-7 * exact.abs().max(1.0),
        "{got} vs {exact}"
    );
}
