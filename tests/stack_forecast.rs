//! The stack forecast: closed forms, common-practice checks, the sample scenario's story, and
//! stack-file errors through the binary.

mod common;
use assert_cmd::Command;
use capstack::stack::analytic::{measured, rss, safety_factor_table, worst_case};
use capstack::stack::plan::{parts_to_demonstrate, plan};
use capstack::stats::normal;
use common::*;
use serde_json::Value;

#[test]
fn worst_case_and_rss_match_a_hand_calculation() {
    // gap = 10 (±0.3) − 4 (±0.2) − 5 (±0.1): by hand, middle 1, worst case ±0.6,
    // RSS sd = √(0.1² + (0.2/3)² + (0.1/3)²) = √(0.01 + 0.004444 + 0.001111) = 0.124722.
    let m = model(
        vec![
            contributor("a", 1.0, 10.0, 0.3, 10.0, 0.1),
            contributor("b", -1.0, 4.0, 0.2, 4.0, 0.05),
            contributor("c", -1.0, 5.0, 0.1, 5.0, 0.03),
        ],
        0.5,
        1.5,
        1.0,
        1.0,
    );
    let wc = worst_case(&m);
    assert!((wc.min - 0.4).abs() < 1e-12 && (wc.max - 1.6).abs() < 1e-12);
    let r = rss(&m);
    close(r.mean, 1.0, 1e-12, "rss mean");
    close(
        r.sd,
        (0.01f64 + 0.04 / 9.0 + 0.01 / 9.0).sqrt(),
        1e-12,
        "rss sd",
    );
    close(r.ppm, 2.0 * normal::sf(0.5 / r.sd) * 1e6, 1e-12, "rss ppm");
}

#[test]
fn rss_limits_at_3_sigma_leave_2700_ppm_and_at_4_5_sigma_6_8_ppm() {
    // Common practice (no single source): ±3σ ≈ 2700 ppm; safety factor 1.5 → ±4.5σ ≈ 6.8 ppm.
    let m = model(
        vec![contributor("a", 1.0, 0.0, 3.0, 0.0, 1.0)],
        -3.0,
        3.0,
        1.0,
        1.0,
    );
    let r = rss(&m);
    assert!((r.ppm - 2700.0).abs() < 1.0, "{}", r.ppm);
    let m15 = model(
        vec![contributor("a", 1.0, 0.0, 3.0, 0.0, 1.0)],
        -4.5,
        4.5,
        1.0,
        1.5,
    );
    let r15 = rss(&m15);
    assert!((r15.max - 4.5).abs() < 1e-12, "limits at ±4.5σ");
    assert!((r15.ppm - 6.8).abs() < 0.01, "{}", r15.ppm);
    let table = safety_factor_table();
    let row = table.iter().find(|r| r.factor == 1.5).unwrap();
    // Reference sheet §6: 2·norm.sf(4.5)·1e6 = 6.795346249460107 (scipy 1.17.1).
    close(row.ppm_outside, 6.795346249460107, 1e-10, "k = 1.5");
}

#[test]
fn the_measured_forecast_of_normal_contributors_is_the_exact_normal_result() {
    let m = model(
        vec![
            contributor("a", 1.0, 10.0, 0.3, 10.05, 0.08),
            contributor("b", -2.0, 4.5, 0.2, 4.49, 0.04),
        ],
        0.7,
        1.3,
        1.0,
        1.0,
    );
    let f = measured(&m);
    let mean = 10.05 - 2.0 * 4.49;
    let sd = (0.08f64.powi(2) + 4.0 * 0.04f64.powi(2)).sqrt();
    close(f.mean, mean, 1e-12, "mean");
    close(f.sd, sd, 1e-12, "sd");
    close(
        f.ppm_below.unwrap(),
        normal::cdf((0.7 - mean) / sd) * 1e6,
        1e-12,
        "below",
    );
    close(
        f.ppm_above.unwrap(),
        normal::sf((1.3 - mean) / sd) * 1e6,
        1e-12,
        "above",
    );
}

#[test]
fn covariances_enter_the_assembly_variance_as_a_direct_computation_says() {
    let mut m = model(
        vec![
            contributor("a", 1.0, 10.0, 0.3, 10.0, 0.1),
            contributor("b", 1.0, 5.0, 0.2, 5.0, 0.05),
        ],
        14.7,
        15.3,
        1.0,
        1.0,
    );
    let r = 0.8;
    m.covariance[0][1] = r * 0.1 * 0.05;
    m.covariance[1][0] = r * 0.1 * 0.05;
    // Var(a + b) = σa² + σb² + 2ρσaσb.
    let direct = (0.01f64 + 0.0025 + 2.0 * 0.8 * 0.005).sqrt();
    close(measured(&m).sd, direct, 1e-12, "sd with covariance");
}

#[test]
fn the_plan_finds_the_sd_that_meets_the_target_and_the_parts_to_demonstrate_a_cpk() {
    let m = model(
        vec![
            contributor("a", 1.0, 10.0, 0.3, 10.0, 0.1),
            contributor("b", -1.0, 5.0, 0.2, 5.0, 0.05),
        ],
        4.7,
        5.3,
        1.0,
        1.0,
    );
    let p = plan(&m, 100.0, 1.33, 0.95);
    let need = p.per_contributor[0].required_sd.unwrap();
    // Check: with that sd the forecast sits at the target.
    let sd = (need * need + 0.0025f64).sqrt();
    close(2.0 * normal::sf(0.3 / sd) * 1e6, 100.0, 1e-6, "target met");
    // Bissell: n = 100 at Ĉpk 1.67 gives a lower bound 1.4672 ≥ 1.33 (ci_examples.csv); n is the smallest.
    let n = parts_to_demonstrate(1.67, 1.33, 0.95).unwrap();
    let z = normal::quantile(0.95);
    let bound = |n: usize| capstack::stats::capability::bissell_bound(1.67, n, z).unwrap();
    assert!(bound(n) >= 1.33 && bound(n - 1) < 1.33 && n < 100);
    assert!(parts_to_demonstrate(1.3, 1.33, 0.95).is_none());
}

fn demo_stack() -> (tempfile::TempDir, Value) {
    let d = tempfile::tempdir().unwrap();
    capstack::sample::write_scenario(d.path()).unwrap();
    let out = Command::cargo_bin("capstack")
        .unwrap()
        .current_dir(d.path())
        .args(["stack", "end_play.toml", "--format", "json"])
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let v = serde_json::from_slice(&out.stdout).unwrap();
    (d, v)
}

#[test]
fn the_sample_scenario_tells_its_story() {
    let (_d, v) = demo_stack();
    for key in [
        "requirement",
        "nominal",
        "worst_case",
        "rss",
        "measured",
        "contributors",
        "verdict",
    ] {
        assert!(!v[key].is_null(), "{key}");
    }
    let c = |name: &str| {
        v["contributors"]
            .as_array()
            .unwrap()
            .iter()
            .find(|c| c["name"] == name)
            .unwrap()
            .clone()
    };
    // The assumption is optimistic: the forecast is several times the assumed rate.
    assert_eq!(v["verdict"]["supports_assumption"], false);
    assert!(v["verdict"]["ppm_ratio"].as_f64().unwrap() > 3.0);
    // The spacer's mean shift is the biggest cause, and it is named in the summary.
    assert_eq!(c("spacer")["supports_assumption"], false);
    assert!(c("spacer")["reasons"]
        .as_array()
        .unwrap()
        .iter()
        .any(|r| r.as_str().unwrap().starts_with("mean")));
    assert_eq!(v["verdict"]["causes"][0]["contributor"], "spacer");
    assert!(v["verdict"]["summary"]
        .as_str()
        .unwrap()
        .contains("spacer's mean shift"));
    // Housing depth and groove position are measured on one part and correlated.
    assert!(c("housing depth")["reasons"]
        .as_array()
        .unwrap()
        .iter()
        .any(|r| r
            .as_str()
            .unwrap()
            .contains("correlated with groove position")));
    // The centred, capable bearing supports it; the stated one is marked stated.
    assert_eq!(c("bearing A")["supports_assumption"], true);
    assert!(c("bearing B")["n"].is_null());
    let shares: f64 = v["contributors"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| c["variance_share"].as_f64().unwrap())
        .sum();
    close(shares, 1.0, 1e-9, "variance shares sum to 1");
}

#[test]
fn the_stack_table_shows_assumption_measured_and_worst_case_side_by_side() {
    let d = tempfile::tempdir().unwrap();
    capstack::sample::write_scenario(d.path()).unwrap();
    let out = Command::cargo_bin("capstack")
        .unwrap()
        .current_dir(d.path())
        .args(["stack", "end_play.toml"])
        .output()
        .unwrap();
    let text = String::from_utf8(out.stdout).unwrap();
    for needle in [
        "worst case",
        "RSS (assumed)",
        "measured",
        "verdict:",
        "spacer",
        "statistical estimates",
    ] {
        assert!(text.contains(needle), "{needle} in\n{text}");
    }
}

fn stack_error(files: &[(&str, &str)]) -> String {
    let d = dir_with(files);
    let out = Command::cargo_bin("capstack")
        .unwrap()
        .current_dir(d.path())
        .args(["stack", "s.toml"])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    let e = String::from_utf8_lossy(&out.stderr).to_string();
    assert!(!e.contains("panicked"));
    e
}

const REQ: &str = "[requirement]\nlsl = 0.1\nusl = 0.3\n";

#[test]
fn stack_file_errors_name_the_file_the_contributor_and_the_key() {
    let e = stack_error(&[("s.toml", &format!("{REQ}[[contributor]]\nname = \"x\"\nsensitivity = \"one\"\nnominal = 1.0\ntolerance = 0.1\nmean = 1.0\nsd = 0.01\n"))]);
    assert!(e.contains("s.toml") && e.contains("sensitivity"), "{e}");
    let e = stack_error(&[("s.toml", &format!("{REQ}[[contributor]]\nname = \"x\"\nsensitivity = 1.0\nnominal = 1.0\ntolerance = 0.1\nmean = 1.0\nsd = 0\n"))]);
    assert!(e.contains("contributor 'x', key 'sd'"), "{e}");
    let e = stack_error(&[("s.toml", &format!("{REQ}[[contributor]]\nname = \"x\"\nsensitivity = 1.0\nnominal = 1.0\ntolerance = 0.1\nmean = 1.0\nsd = 0.1\ndistribution = \"cauchy\"\n"))]);
    assert!(
        e.contains("key 'distribution'") && e.contains("cauchy"),
        "{e}"
    );
    let e = stack_error(&[("s.toml", &format!("{REQ}[[contributor]]\nname = \"x\"\nsensitivity = 1.0\nnominal = 1.0\ntolerance = 0.1\ndata = \"missing.csv\"\nfeature = \"d\"\n"))]);
    assert!(e.contains("key 'data'") && e.contains("missing.csv"), "{e}");
    let e = stack_error(&[
        ("s.toml", &format!("{REQ}[[contributor]]\nname = \"x\"\nsensitivity = 1.0\nnominal = 1.0\ntolerance = 0.1\ndata = \"d.csv\"\nfeature = \"height\"\n")),
        ("d.csv", "part,depth\nP1,1.0\nP2,1.1\n"),
    ]);
    assert!(e.contains("key 'feature'") && e.contains("height"), "{e}");
    let e = stack_error(&[
        ("s.toml", &format!("{REQ}[[contributor]]\nname = \"x\"\nsensitivity = 1.0\nnominal = 1.0\ntolerance = 0.1\ndata = \"d.csv\"\nfeature = \"depth\"\nsimulate = \"bootstrap\"\n")),
        ("d.csv", "part,depth\nP1,1.0\nP2,1.1\n"),
    ]);
    assert!(
        e.contains("key 'simulate'")
            && e.contains("'bootstrap' is not one of parts, normal, fitted"),
        "{e}"
    );
    let e = stack_error(&[("s.toml", &format!("{REQ}[[contributor]]\nname = \"x\"\nsensitivity = 1.0\nnominal = 1.0\ntolerance = 0.1\nmean = 1.0\nsd = 0.1\nsimulate = \"parts\"\n"))]);
    assert!(e.contains("key 'simulate'") && e.contains("stated"), "{e}");
    let e = stack_error(&[("s.toml", "[requirement]\nlsl = 0.3\nusl = 0.1\n[[contributor]]\nname = \"x\"\nsensitivity = 1.0\nnominal = 1.0\ntolerance = 0.1\nmean = 1.0\nsd = 0.1\n")]);
    assert!(e.contains("lsl 0.3 must be below usl 0.1"), "{e}");
}

#[test]
fn contributions_are_sorted_by_variance_share() {
    let (_d, v) = demo_stack();
    let shares: Vec<f64> = v["contributions"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| c["variance_share"].as_f64().unwrap())
        .collect();
    assert_eq!(shares.len(), 6);
    assert!(shares.windows(2).all(|w| w[0] >= w[1]), "{shares:?}");
}

#[test]
fn plan_through_the_binary_gives_needs_mean_correction_sample_sizes_and_the_safety_table() {
    let d = tempfile::tempdir().unwrap();
    capstack::sample::write_scenario(d.path()).unwrap();
    let out = Command::cargo_bin("capstack")
        .unwrap()
        .current_dir(d.path())
        .args([
            "plan",
            "end_play.toml",
            "--target-ppm",
            "100",
            "--format",
            "json",
        ])
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let v: Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["per_contributor"].as_array().unwrap().len(), 6);
    assert!(
        v["allocation"]["sd_factor"].as_f64().unwrap() < 1.0,
        "the forecast is above target: every sd must shrink"
    );
    assert_eq!(v["mean_correction"]["reachable"], true);
    let sizes = v["sample_sizes"].as_array().unwrap();
    assert!(sizes.iter().any(|s| s["parts"].is_u64()));
    // Four reference values, then one row per contributor with a Ppk, named.
    assert!(sizes[..4].iter().all(|s| s["contributor"].is_null()));
    let named: Vec<&str> = sizes[4..]
        .iter()
        .map(|s| s["contributor"].as_str().unwrap())
        .collect();
    let contributors: Vec<&str> = v["per_contributor"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| c["name"].as_str().unwrap())
        .collect();
    assert!(
        !named.is_empty() && named.iter().all(|n| contributors.contains(n)),
        "{named:?}"
    );
    assert_eq!(v["safety_factors"].as_array().unwrap().len(), 10);
    let bad = Command::cargo_bin("capstack")
        .unwrap()
        .current_dir(d.path())
        .args(["plan", "end_play.toml", "--target-ppm", "-1"])
        .output()
        .unwrap();
    assert_eq!(bad.status.code(), Some(2));
}
