//! The shipped sample data are exactly what the seeded generator writes.

use std::path::Path;

#[test]
fn committed_sample_data_equal_the_generator_output() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("sample_data");
    for (name, text) in capstack::sample::scenario() {
        let committed =
            std::fs::read_to_string(dir.join(name)).unwrap_or_else(|e| panic!("{name}: {e}"));
        assert_eq!(
            committed, text,
            "{name} differs: run `cargo run --release --example generate_sample_data`"
        );
    }
}

#[test]
fn the_demo_writes_every_output_and_exits_zero() {
    let out = tempfile::tempdir().unwrap();
    let status = assert_cmd::Command::cargo_bin("capstack")
        .unwrap()
        .args(["demo", "--out"])
        .arg(out.path())
        .output()
        .unwrap();
    assert!(
        status.status.success(),
        "{}",
        String::from_utf8_lossy(&status.stderr)
    );
    for f in [
        "capability.json",
        "capability.txt",
        "capability.csv",
        "capability_by_lot.txt",
        "stack.json",
        "stack.txt",
        "plan.txt",
        "plan.json",
    ] {
        let p = out.path().join(f);
        assert!(
            p.metadata().map(|m| m.len() > 100).unwrap_or(false),
            "{f} written and not empty"
        );
    }
    let cap: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.path().join("capability.json")).unwrap())
            .unwrap();
    // The bad cells of the scenario are all listed: a blank, an "n/a", a thousands-separated
    // number and a value typed without its decimal point.
    let reasons: Vec<&str> = cap["audit"]["unused"]
        .as_array()
        .unwrap()
        .iter()
        .map(|u| u["reason"].as_str().unwrap())
        .collect();
    for r in ["blank", "non-numeric", "implausible"] {
        assert!(reasons.contains(&r), "{r} in {reasons:?}");
    }
    assert!(cap["audit"]["warnings"]
        .as_array()
        .unwrap()
        .iter()
        .any(|w| w["kind"] == "duplicate part"));
}
