//! `capstack report` through the binary: the sections in reading order, every chart inline and
//! as files, escaping of everything that comes from an input file, and the errors.

mod common;

use assert_cmd::Command;
use std::path::Path;

fn capstack() -> Command {
    Command::cargo_bin("capstack").unwrap()
}

/// The scenario's four supplier files and spec sheets, as report arguments.
const SUPPLIERS: [(&str, &str); 4] = [
    ("northfield_housing.csv", "northfield_specs.csv"),
    ("kestrel_bearings.csv", "kestrel_specs.csv"),
    ("orrin_spacers.tsv", "orrin_specs.csv"),
    ("talvik_hubs.csv", "talvik_specs.csv"),
];

/// Runs `capstack report` on the sample scenario with the stack; returns the HTML.
fn sample_report(dir: &Path, extra: &[&str]) -> String {
    let out = dir.join("report.html");
    let mut cmd = capstack();
    cmd.arg("report");
    for (data, specs) in SUPPLIERS {
        cmd.arg(dir.join(data)).arg("--specs").arg(dir.join(specs));
    }
    cmd.arg("--stack")
        .arg(dir.join("end_play.toml"))
        .arg("-o")
        .arg(&out)
        .args(["--samples", "200000"])
        .args(extra);
    let run = cmd.output().unwrap();
    assert!(
        run.status.success(),
        "{}",
        String::from_utf8_lossy(&run.stderr)
    );
    std::fs::read_to_string(out).unwrap()
}

fn count(haystack: &str, needle: &str) -> usize {
    haystack.matches(needle).count()
}

#[test]
fn the_report_reads_in_order_answer_assembly_features_audit_methods() {
    let (dir, _) = common::demo_stack_file();
    let html = sample_report(dir.path(), &[]);
    let at = |id: &str| {
        html.find(&format!("<section id=\"{id}\">"))
            .unwrap_or_else(|| panic!("no section {id}"))
    };
    assert!(at("summary") < at("assembly"));
    assert!(at("assembly") < at("features"));
    assert!(at("features") < at("audit"));
    assert!(at("audit") < at("methods"));
    // The answer: the verdict on the assumption, forecast against assumed, the cautions.
    assert!(html.contains("The design assumption is optimistic by"));
    assert!(html.contains("assumed by the design (RSS)"));
    assert!(html.contains("forecast from the measured parts"));
    assert!(html.contains("qualified engineering review come first"));
    // The stack: the per-contributor table and the plan.
    for column in [
        "assumed σ",
        "measured σ",
        "shift / T",
        "Ppk lower",
        "stable",
        "supports",
    ] {
        assert!(html.contains(&format!("<th>{column}</th>")), "{column}");
    }
    assert!(html.contains("What it would take"));
    // One article per feature, each with its capability table and bounds.
    assert_eq!(count(&html, "<article class=\"feature\""), 7);
    assert_eq!(count(&html, "95 % lower bound"), 7);
    // The audit names the bad cells of the scenario.
    assert!(html.contains("non-numeric"));
    assert!(html.contains("n/a"));
    // Self-contained: no script, no external resource.
    assert!(!html.contains("<script"));
    assert!(!html.contains("src=\"http"));
    assert!(!html.contains("href=\"http"));
    assert!(!html.contains("<link"));
}

#[test]
fn every_chart_is_inline_and_written_as_svg_and_png() {
    let (dir, _) = common::demo_stack_file();
    let charts = dir.path().join("charts");
    let html = sample_report(dir.path(), &["--charts", charts.to_str().unwrap()]);
    let mut svgs: Vec<String> = std::fs::read_dir(&charts)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n.ends_with(".svg"))
        .collect();
    svgs.sort();
    // Two stack charts and four per feature (histogram, probability, location, dispersion).
    assert_eq!(svgs.len(), 2 + 7 * 4, "{svgs:?}");
    assert_eq!(count(&html, "<figure class=\"chart\""), svgs.len());
    for name in &svgs {
        let slug = name.trim_end_matches(".svg");
        assert!(
            html.contains(&format!("data-chart=\"{slug}\"")),
            "{slug} not in the page"
        );
        let svg = std::fs::read_to_string(charts.join(name)).unwrap();
        assert!(svg.starts_with("<svg"), "{name}");
        assert!(count(&svg, "<path") + count(&svg, "<rect") + count(&svg, "<polyline") > 5);
        let png = std::fs::read(charts.join(format!("{slug}.png"))).unwrap();
        // PNG signature (ISO/IEC 15948 §5.2), then IHDR with the width and height.
        assert_eq!(&png[..8], b"\x89PNG\r\n\x1a\n", "{slug}.png");
        let width = u32::from_be_bytes(png[16..20].try_into().unwrap());
        let height = u32::from_be_bytes(png[20..24].try_into().unwrap());
        assert!(
            width >= 1000 && height >= 400,
            "{slug}.png is {width}×{height}"
        );
    }
    // The charts carry the requirement and the spec limits.
    let assembly = std::fs::read_to_string(charts.join("stack-assembly.svg")).unwrap();
    assert!(assembly.contains("LSL") && assembly.contains("USL"));
    assert!(assembly.contains("design assumption (RSS)"));
    assert!(assembly.contains("simulated assemblies"));
}

#[test]
fn markup_in_headers_cells_and_names_is_escaped() {
    let hostile = "<script>alert(1)</script>";
    let lot = "\"><img src=x onerror=alert(2)>";
    let mut csv = format!("part,lot,{hostile}\n");
    for i in 0..30 {
        csv.push_str(&format!(
            "P{i},{lot},{}\n",
            10.0 + 0.01 * ((i * 7) % 11) as f64
        ));
    }
    csv.push_str("P99,<b>bold</b>,<i>x</i>\n");
    let specs = format!("feature,nominal,lsl,usl\n\"{hostile}\",10.05,9.9,10.2\n");
    let dir = common::dir_with(&[("parts <u>.csv", &csv), ("specs.csv", &specs)]);
    let out = dir.path().join("r.html");
    capstack()
        .arg("report")
        .arg(dir.path().join("parts <u>.csv"))
        .arg("--specs")
        .arg(dir.path().join("specs.csv"))
        .args(["--by", "lot", "--title", "<h1>title</h1>"])
        .arg("-o")
        .arg(&out)
        .assert()
        .success();
    let html = std::fs::read_to_string(&out).unwrap();
    for raw in [
        hostile,
        "<img src=x",
        "<b>bold</b>",
        "<i>x</i>",
        "<u>.csv",
        "<h1>title</h1>",
    ] {
        assert!(!html.contains(raw), "unescaped: {raw}");
    }
    assert!(html.contains("&lt;script&gt;alert(1)&lt;/script&gt;"));
    assert!(html.contains("&lt;i&gt;x&lt;/i&gt;"));
    assert!(html.contains("parts &lt;u&gt;.csv"));
    assert!(!html.contains("<script"));
}

#[test]
fn a_report_without_a_stack_has_no_assembly_section() {
    let (dir, _) = common::demo_stack_file();
    let out = dir.path().join("hubs.html");
    capstack()
        .arg("report")
        .arg(dir.path().join("talvik_hubs.csv"))
        .arg("--specs")
        .arg(dir.path().join("talvik_specs.csv"))
        .args(["--by", "lot", "--format", "json"])
        .arg("-o")
        .arg(&out)
        .assert()
        .success()
        .stdout(predicates::str::contains("\"features\": 6"))
        .stdout(predicates::str::contains("\"inline_charts\": 24"));
    let html = std::fs::read_to_string(&out).unwrap();
    assert!(!html.contains("<section id=\"assembly\">"));
    assert!(html.contains("<section id=\"features\">"));
    // Lot T3 of the hub length drifts: its section is marked and lists the signals.
    assert!(html.contains("hub_length [lot=T3]"));
    assert_eq!(count(&html, "<article class=\"feature\""), 6);
}

#[test]
fn an_unwritable_report_or_a_missing_stack_exits_2_naming_the_path() {
    let (dir, _) = common::demo_stack_file();
    let data = dir.path().join("talvik_hubs.csv");
    capstack()
        .arg("report")
        .arg(&data)
        .args(["-o", "/nonexistent-dir/r.html"])
        .assert()
        .code(2)
        .stderr(predicates::str::contains("/nonexistent-dir/r.html"));
    capstack()
        .arg("report")
        .arg(&data)
        .args(["--stack", "missing.toml", "-o"])
        .arg(dir.path().join("r.html"))
        .assert()
        .code(2)
        .stderr(predicates::str::contains("missing.toml"));
    capstack()
        .arg("report")
        .arg(&data)
        .args(["--target-ppm=-3", "-o"])
        .arg(dir.path().join("r.html"))
        .assert()
        .code(2)
        .stderr(predicates::str::contains("--target-ppm"));
}

#[test]
fn the_demo_writes_the_report_and_its_charts() {
    let out = tempfile::tempdir().unwrap();
    capstack()
        .args(["demo", "--out"])
        .arg(out.path())
        .assert()
        .success()
        .stdout(predicates::str::contains("report.html"));
    let html = std::fs::read_to_string(out.path().join("report.html")).unwrap();
    assert!(html.contains("Gearbox end play"));
    assert_eq!(
        std::fs::read_dir(out.path().join("charts"))
            .unwrap()
            .count(),
        2 * (2 + 7 * 4)
    );
}

#[test]
fn degenerate_features_get_the_charts_their_values_allow() {
    // One value, two values, all values equal, one-sided specs, subgroups, a forced model: the
    // report is still written, each feature with the charts its values allow.
    let mut csv = String::from("part,same,one,two,skewed,lot\n");
    for i in 0..40 {
        let one = if i == 0 { "1.5" } else { "" };
        let two = match i {
            0 => "2.0",
            1 => "2.1",
            _ => "",
        };
        let skewed = ((i % 13) as f64 / 3.0).exp();
        let lot = if i < 20 { "A" } else { "B" };
        csv.push_str(&format!("P{i},7.000,{one},{two},{skewed:.4},{lot}\n"));
    }
    let specs = "feature,nominal,lsl,usl\nsame,7,6.9,7.1\nskewed,,,20\n";
    let dir = common::dir_with(&[("deg.csv", &csv), ("specs.csv", specs)]);
    for extra in [
        &[][..],
        &["--by", "lot"][..],
        &["--subgroup-size", "5", "--within", "sd"][..],
        &["--model", "weibull"][..],
    ] {
        let out = dir.path().join("deg.html");
        let charts = dir.path().join("charts");
        let _ = std::fs::remove_dir_all(&charts);
        capstack()
            .arg("report")
            .arg(dir.path().join("deg.csv"))
            .arg("--specs")
            .arg(dir.path().join("specs.csv"))
            .args(extra)
            .arg("-o")
            .arg(&out)
            .arg("--charts")
            .arg(&charts)
            .assert()
            .success();
        let html = std::fs::read_to_string(&out).unwrap();
        assert!(html.contains("all values are identical"), "{extra:?}");
        let names: Vec<String> = std::fs::read_dir(&charts)
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
            .collect();
        let of = |feature: &str| names.iter().filter(|n| n.contains(feature)).count();
        // A single value: its histogram only (SVG and PNG); two: no probability plot or chart.
        assert_eq!(of("-one-"), 2, "{extra:?}: {names:?}");
        assert!(of("-two-") <= 2, "{extra:?}");
        assert!(of("-skewed-") >= 6, "{extra:?}");
    }
}
