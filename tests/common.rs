//! Helpers shared by the integration tests.
#![allow(dead_code)]

use capstack::stack::file::{Assumptions, Requirement, Sampling};
use capstack::stack::model::{ContributorModel, StackModel};
use std::path::{Path, PathBuf};

pub fn fixture(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/fixtures")
        .join(name)
}

/// The `x` column of a reference fixture (`i,x` files).
pub fn column(name: &str) -> Vec<f64> {
    let text = std::fs::read_to_string(fixture(&format!("reference/{name}"))).unwrap();
    text.lines()
        .skip(1)
        .filter(|l| !l.trim().is_empty())
        .map(|l| l.split(',').nth(1).unwrap().trim().parse().unwrap())
        .collect()
}

/// `key,value` rows of a reference fixture.
pub fn table(name: &str) -> Vec<Vec<String>> {
    let text = std::fs::read_to_string(fixture(&format!("reference/{name}"))).unwrap();
    text.lines()
        .map(|l| l.split(',').map(str::to_string).collect())
        .collect()
}

pub fn value(rows: &[Vec<String>], key: &str) -> f64 {
    rows.iter()
        .find(|r| r[0] == key)
        .unwrap_or_else(|| panic!("no {key}"))[1]
        .parse()
        .unwrap()
}

/// Relative difference, for checks "to N significant digits".
pub fn rel(a: f64, b: f64) -> f64 {
    if b == 0.0 {
        a.abs()
    } else {
        ((a - b) / b).abs()
    }
}

#[track_caller]
pub fn close(actual: f64, expected: f64, tol: f64, what: &str) {
    assert!(
        rel(actual, expected) <= tol,
        "{what}: got {actual}, expected {expected} (relative tolerance {tol})"
    );
}

/// Writes `files` into a fresh temporary directory.
pub fn dir_with(files: &[(&str, &str)]) -> tempfile::TempDir {
    let dir = tempfile::tempdir().unwrap();
    for (name, text) in files {
        std::fs::write(dir.path().join(name), text).unwrap();
    }
    dir
}

/// A measured contributor with the given statistics (n = 50), its zone nominal ± t.
pub fn contributor(
    name: &str,
    a: f64,
    nominal: f64,
    t: f64,
    mean: f64,
    sd: f64,
) -> ContributorModel {
    ContributorModel {
        name: name.into(),
        sensitivity: a,
        nominal,
        lower_limit: nominal - t,
        upper_limit: nominal + t,
        mean,
        sd,
        n: Some(50),
        distribution: None,
        sampling: Some(Sampling::Parts),
        ppk: None,
        ppk_lower: None,
        skewness: None,
        normality_p: None,
        ..Default::default()
    }
}

/// A stack of independent contributors with requirement [lsl, usl].
pub fn model(
    contributors: Vec<ContributorModel>,
    lsl: f64,
    usl: f64,
    cp: f64,
    k: f64,
) -> StackModel {
    let n = contributors.len();
    let mut covariance = vec![vec![0.0; n]; n];
    for (i, c) in contributors.iter().enumerate() {
        covariance[i][i] = c.sd * c.sd;
    }
    StackModel {
        requirement: Requirement {
            name: "gap".into(),
            lsl: Some(lsl),
            usl: Some(usl),
            unit: None,
        },
        assumptions: Assumptions {
            cp,
            safety_factor: k,
        },
        contributors,
        covariance,
        paired: Vec::new(),
        part_groups: Vec::new(),
    }
}

/// The sample scenario written to a temporary directory, and its stack file.
pub fn demo_stack_file() -> (tempfile::TempDir, PathBuf) {
    let d = tempfile::tempdir().unwrap();
    capstack::sample::write_scenario(d.path()).unwrap();
    let toml = d.path().join("end_play.toml");
    (d, toml)
}

/// The entry of `feature` in a capability JSON report.
pub fn feature<'a>(v: &'a serde_json::Value, name: &str) -> &'a serde_json::Value {
    v["features"]
        .as_array()
        .unwrap()
        .iter()
        .find(|f| f["feature"] == name)
        .unwrap_or_else(|| panic!("no feature {name}"))
}

// The capability benchmark's values, from the generator that writes its file.
#[path = "../benches/common/mod.rs"]
pub mod bench_data;
