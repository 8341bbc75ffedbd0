//! Helpers shared by the integration tests.
#![allow(dead_code)]

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
