//! Intake through the binary: layouts, delimiters, decimal styles, Parquet, several files,
//! spec forms, the audit, and every hard error (exit 2, a message naming file and line).

mod common;
use assert_cmd::Command;
use common::dir_with;
use common::feature;
use serde_json::Value;

fn capstack() -> Command {
    Command::cargo_bin("capstack").unwrap()
}

fn json_of(dir: &std::path::Path, args: &[&str]) -> Value {
    let out = capstack()
        .current_dir(dir)
        .args(["capability", "--format", "json"])
        .args(args)
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "stderr: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    serde_json::from_slice(&out.stdout).unwrap()
}

fn error_of(dir: &std::path::Path, args: &[&str]) -> String {
    let out = capstack().current_dir(dir).args(args).output().unwrap();
    assert_eq!(
        out.status.code(),
        Some(2),
        "stdout: {}",
        String::from_utf8_lossy(&out.stdout)
    );
    let err = String::from_utf8_lossy(&out.stderr).to_string();
    assert!(!err.contains("panicked"), "{err}");
    err
}

const WIDE: &str = "part,lot,depth,width\nP1,A,10.01,5.00\nP2,A,10.02,5.01\nP3,B,9.99,4.99\nP4,B,10.00,5.02\nP5,B,10.03,5.00\n";

#[test]
fn reads_a_wide_file_with_ids_attributes_and_features() {
    let d = dir_with(&[("w.csv", WIDE)]);
    let v = json_of(d.path(), &["w.csv"]);
    assert_eq!(v["features"].as_array().unwrap().len(), 2);
    assert_eq!(feature(&v, "depth")["n"], 5);
    assert!((feature(&v, "depth")["mean"].as_f64().unwrap() - 10.01).abs() < 1e-12);
    assert_eq!(v["audit"]["rows_read"], 5);
    assert_eq!(v["audit"]["values_used"], 10);
}

#[test]
fn reads_a_long_file_and_pivots_it_by_part() {
    let long = "part,feature,value,lot\nP1,depth,10.01,A\nP1,width,5.00,A\nP2,depth,10.02,A\nP2,width,5.01,A\nP3,depth,9.99,B\nP3,width,4.99,B\n";
    let d = dir_with(&[("l.csv", long)]);
    let v = json_of(d.path(), &["l.csv"]);
    assert_eq!(feature(&v, "depth")["n"], 3);
    assert_eq!(feature(&v, "width")["n"], 3);
    assert_eq!(v["audit"]["files"][0]["layout"], "long");
    // Renamed columns and an explicit layout.
    let renamed = "serial,char,reading\nP1,depth,10.01\nP2,depth,10.02\nP3,depth,10.00\n";
    let d = dir_with(&[("r.csv", renamed)]);
    let v = json_of(
        d.path(),
        &[
            "r.csv",
            "--layout",
            "long",
            "--part-col",
            "serial",
            "--feature-col",
            "char",
            "--value-col",
            "reading",
        ],
    );
    assert_eq!(feature(&v, "depth")["n"], 3);
}

#[test]
fn detects_semicolon_tab_decimal_comma_bom_crlf_quotes_and_trailing_columns() {
    let semi = "\u{feff}part;\"depth [mm]\";width;;\r\nP1;10,01;5,00;;\r\nP2;10,02;5,01;;\r\nP3;9,99;4,99;;\r\n";
    let tab = "part\tdepth [mm]\twidth\nP1\t10.01\t5.00\nP2\t10.02\t5.01\nP3\t9.99\t4.99\n";
    let comma = "part,\"depth [mm]\",width\nP1,10.01,5.00\nP2,10.02,5.01\nP3,9.99,4.99\n";
    for (name, text) in [("s.csv", semi), ("t.tsv", tab), ("c.csv", comma)] {
        let d = dir_with(&[(name, text)]);
        let v = json_of(d.path(), &[name]);
        let f = feature(&v, "depth [mm]");
        assert_eq!(f["n"], 3, "{name}");
        assert!(
            (f["mean"].as_f64().unwrap() - 10.006666666666666).abs() < 1e-12,
            "{name}"
        );
        assert_eq!(
            v["audit"]["unused"].as_array().unwrap().len(),
            0,
            "{name}: {}",
            v["audit"]["unused"]
        );
    }
}

#[test]
fn lists_every_unused_cell_with_file_line_column_text_and_reason() {
    let text = "part,depth\nP1,10.01\nP2,\nP3,abc\nP4,NaN\nP5,inf\nP6,1e999\nP7,\"1,234.5\"\nP8,10.02\nP9,10.00\n";
    let d = dir_with(&[("bad.csv", text)]);
    let v = json_of(d.path(), &["bad.csv"]);
    let unused = v["audit"]["unused"].as_array().unwrap();
    let got: Vec<(u64, &str, &str)> = unused
        .iter()
        .map(|u| {
            (
                u["line"].as_u64().unwrap(),
                u["text"].as_str().unwrap(),
                u["reason"].as_str().unwrap(),
            )
        })
        .collect();
    assert_eq!(
        got,
        vec![
            (3, "", "blank"),
            (4, "abc", "non-numeric"),
            (5, "NaN", "non-finite"),
            (6, "inf", "non-finite"),
            (7, "1e999", "non-finite"),
            (8, "1,234.5", "non-numeric")
        ]
    );
    assert!(unused
        .iter()
        .all(|u| u["file"] == "bad.csv" && u["column"] == "depth"));
    assert_eq!(feature(&v, "depth")["n"], 3);
    // Counts add up: rows read = used + rejected; cells read = values used + unused.
    let a = &v["audit"];
    assert_eq!(
        a["rows_read"].as_u64().unwrap(),
        a["rows_used"].as_u64().unwrap() + a["rows_rejected"].as_u64().unwrap()
    );
    assert_eq!(
        a["cells_read"].as_u64().unwrap(),
        a["values_used"].as_u64().unwrap() + unused.len() as u64
    );
}

#[test]
fn a_row_without_any_feature_value_is_rejected_and_only_such_a_row() {
    // Line 3 has no number in either feature; lines 4 and 5 miss one feature each.
    let text = "part,a,b\nP1,1.0,2.0\nP2,n/a,\nP3,,2.2\nP4,1.3,x\nP5,1.2,2.1\n";
    let d = dir_with(&[("r.csv", text)]);
    let a = &json_of(d.path(), &["r.csv"])["audit"];
    let rejected = a["rejected_rows"].as_array().unwrap();
    assert_eq!(rejected.len(), 1, "{rejected:?}");
    assert_eq!(rejected[0]["line"], 3);
    assert_eq!(rejected[0]["reason"], "no usable feature value");
    // With one clean feature column no row can be without a value.
    let clean = "part,a,b\nP1,1.0,2.0\nP2,1.1,\nP3,1.2,x\nP4,1.3,2.3\n";
    let d = dir_with(&[("c.csv", clean)]);
    let a = &json_of(d.path(), &["c.csv"])["audit"];
    assert_eq!(a["rows_rejected"], 0);
    assert_eq!(a["rows_used"], 4);
}

#[test]
fn a_feature_used_as_read_and_one_gathered_round_its_gaps_give_the_same_statistics() {
    // Without gaps the column is used as it stands; a part with no value for `a` at the end
    // makes the study gather the rows that have one. Everything but `missing` must agree,
    // the signals' parts and lines included.
    let mut rows = String::from("part,a,b\n");
    for i in 0..60 {
        let a = 10.0 + ((i * 37) % 11) as f64 * 0.01 + if i >= 45 { 0.2 } else { 0.0 };
        rows.push_str(&format!("P{i},{a:.2},{}\n", 5 + i % 3));
    }
    let gap = format!("{rows}P60,,5\n");
    let d = dir_with(&[("whole.csv", &rows), ("gap.csv", &gap)]);
    let mut whole = feature(&json_of(d.path(), &["whole.csv"]), "a").clone();
    let mut gathered = feature(&json_of(d.path(), &["gap.csv"]), "a").clone();
    assert_eq!(gathered["missing"], 1);
    assert!(!whole["stability"]["signals"].as_array().unwrap().is_empty());
    for f in [&mut whole, &mut gathered] {
        f.as_object_mut().unwrap().remove("missing");
        let signals = f["stability"]["signals"].as_array_mut().unwrap();
        for s in signals {
            s.as_object_mut().unwrap().remove("file");
        }
    }
    assert_eq!(whole, gathered);
}

#[test]
fn ragged_rows_list_missing_cells_as_blank_and_extra_cells_as_extra() {
    let text = "part,a,b\nP1,1.0,2.0\nP2,1.1\nP3,1.2,2.2,99\nP4,1.3,2.3\nP5,1.2,2.1\n";
    let d = dir_with(&[("r.csv", text)]);
    let v = json_of(d.path(), &["r.csv"]);
    let unused = v["audit"]["unused"].as_array().unwrap();
    assert!(unused
        .iter()
        .any(|u| u["line"] == 3 && u["column"] == "b" && u["reason"] == "blank"));
    assert!(unused
        .iter()
        .any(|u| u["line"] == 4 && u["text"] == "99" && u["reason"] == "extra cell"));
}

#[test]
fn flags_duplicate_parts_implausible_values_and_coarse_resolution() {
    let text = "part,depth\nP1,10.01\nP2,10.02\nP1,10.00\nP4,1002\nP5,9.99\nP6,10.01\n";
    let specs = "feature,nominal,lsl,usl\ndepth,10,9.99,10.03\n";
    let d = dir_with(&[("d.csv", text), ("s.csv", specs)]);
    let v = json_of(d.path(), &["d.csv", "--specs", "s.csv"]);
    let warnings = v["audit"]["warnings"].as_array().unwrap();
    assert!(
        warnings
            .iter()
            .any(|w| w["kind"] == "duplicate part" && w["line"] == 4),
        "{warnings:?}"
    );
    // 0.01 resolution over a 0.04 tolerance: 4 steps, fewer than the 10 of common practice.
    assert!(
        warnings.iter().any(|w| w["kind"] == "coarse resolution"),
        "{warnings:?}"
    );
    let unused = v["audit"]["unused"].as_array().unwrap();
    assert!(unused
        .iter()
        .any(|u| u["line"] == 5 && u["reason"] == "implausible"));
    assert_eq!(
        feature(&v, "depth")["n"],
        5,
        "duplicates are used, the implausible value is not"
    );
}

#[test]
fn flags_features_with_fewer_than_five_distinct_values() {
    let text = "part,depth\nP1,10.0\nP2,10.1\nP3,10.0\nP4,10.1\nP5,10.0\nP6,10.2\n";
    let d = dir_with(&[("d.csv", text)]);
    let v = json_of(d.path(), &["d.csv"]);
    assert!(v["audit"]["warnings"]
        .as_array()
        .unwrap()
        .iter()
        .any(|w| w["kind"] == "few distinct values"));
}

#[test]
fn stacks_several_files_matched_by_column_name_and_tags_the_source() {
    let a = "part,depth,width\nA1,10.01,5.0\nA2,10.02,5.1\nA3,10.00,5.2\n";
    let b = "part,depth\nB1,10.03\nB2,10.04\n";
    let d = dir_with(&[("a.csv", a), ("b.csv", b)]);
    let v = json_of(d.path(), &["a.csv", "b.csv"]);
    assert_eq!(feature(&v, "depth")["n"], 5);
    assert_eq!(feature(&v, "width")["n"], 3);
    assert_eq!(
        feature(&v, "width")["missing"],
        0,
        "a feature absent from a file contributes nothing from it"
    );
    let by = json_of(
        d.path(),
        &[
            "a.csv",
            "b.csv",
            "--by",
            "source_file",
            "--features",
            "depth",
        ],
    );
    assert_eq!(by["features"].as_array().unwrap().len(), 2);
}

#[test]
fn reads_parquet_files() {
    use polars::prelude::*;
    let d = tempfile::tempdir().unwrap();
    let mut df = df!("part" => ["P1", "P2", "P3", "P4"], "depth" => [Some(10.01), Some(10.02), None, Some(10.0)], "lot" => ["A", "A", "B", "B"]).unwrap();
    let path = d.path().join("p.parquet");
    ParquetWriter::new(std::fs::File::create(&path).unwrap())
        .finish(&mut df)
        .unwrap();
    let v = json_of(d.path(), &["p.parquet"]);
    assert_eq!(feature(&v, "depth")["n"], 3);
    let unused = v["audit"]["unused"].as_array().unwrap();
    assert_eq!(unused.len(), 1);
    assert_eq!(unused[0]["line"], 3, "the 1-based data row");
    assert_eq!(unused[0]["reason"], "blank");
}

#[test]
fn understands_every_spec_form() {
    let data = "part,a,b,c,d,e\nP1,10.01,5.0,2.0,1.0,0.1\nP2,10.02,5.1,2.1,1.1,0.2\nP3,10.0,5.2,2.2,1.2,0.3\n";
    let specs = "feature,nominal,lsl,usl,tol,lower_dev,upper_dev,unit\na,10,9.9,10.1,,,,mm\nb,5,,,0.5,,,mm\nc,2,,,,0.1,0.2,mm\nd,1,,1.5,,,,mm\ne,,0,,,,,mm\n";
    let d = dir_with(&[("d.csv", data), ("s.csv", specs)]);
    let v = json_of(d.path(), &["d.csv", "--specs", "s.csv"]);
    let lim = |f: &str| {
        (
            feature(&v, f)["lsl"].as_f64(),
            feature(&v, f)["usl"].as_f64(),
        )
    };
    assert_eq!(lim("a"), (Some(9.9), Some(10.1)));
    assert_eq!(lim("b"), (Some(4.5), Some(5.5)));
    // 2 +0.2/+0.1: lsl = nominal + lower_dev, usl = nominal + upper_dev.
    assert_eq!(lim("c"), (Some(2.1), Some(2.2)));
    assert_eq!(lim("d"), (None, Some(1.5)));
    assert_eq!(lim("e"), (Some(0.0), None));
    assert!(feature(&v, "d")["cp"].is_null() && feature(&v, "d")["cpk"].is_number());
}

#[test]
fn takes_specs_embedded_in_long_data() {
    let long = "part,feature,value,nominal,lsl,usl\nP1,depth,10.01,10,9.9,10.1\nP2,depth,10.02,10,9.9,10.1\nP3,depth,10.00,10,9.9,10.1\n";
    let d = dir_with(&[("l.csv", long)]);
    let v = json_of(d.path(), &["l.csv"]);
    assert_eq!(feature(&v, "depth")["usl"], 10.1);
    assert!(feature(&v, "depth")["cpk"].is_number());
}

#[test]
fn text_and_features_options_shape_the_columns() {
    let text = "part,lot,depth,width\nP1,101,10.01,5.0\nP2,101,10.02,5.1\nP3,102,10.00,5.2\n";
    let d = dir_with(&[("d.csv", text)]);
    let v = json_of(d.path(), &["d.csv", "--text", "lot"]);
    assert!(v["features"]
        .as_array()
        .unwrap()
        .iter()
        .all(|f| f["feature"] != "lot"));
    let v = json_of(
        d.path(),
        &[
            "d.csv",
            "--text",
            "lot",
            "--features",
            "width",
            "--by",
            "lot",
        ],
    );
    let fs = v["features"].as_array().unwrap();
    assert_eq!(fs.len(), 2);
    assert_eq!(fs[0]["group"]["lot"], "101");
}

// ---- Hard errors: exit 2, one line naming the file (and line / column) ----

#[test]
fn rejects_a_missing_file() {
    let d = dir_with(&[]);
    assert!(error_of(d.path(), &["capability", "nope.csv"]).contains("nope.csv: no such file"));
}

#[test]
fn rejects_an_empty_file_and_a_header_without_rows() {
    let d = dir_with(&[("e.csv", ""), ("h.csv", "part,depth\n")]);
    assert!(error_of(d.path(), &["capability", "e.csv"]).contains("e.csv: the file is empty"));
    assert!(error_of(d.path(), &["capability", "h.csv"])
        .contains("h.csv: the file has a header but no data rows"));
}

#[test]
fn rejects_a_file_that_is_not_utf8_naming_the_line() {
    let d = tempfile::tempdir().unwrap();
    std::fs::write(
        d.path().join("x.csv"),
        b"part,depth\nP1,10.0\nP2,10\xff.1\n",
    )
    .unwrap();
    let e = error_of(d.path(), &["capability", "x.csv"]);
    assert!(e.contains("x.csv:3") && e.contains("UTF-8"), "{e}");
}

/// The plain parse checks for bytes above 0x7F as it scans, 16 bytes at a time: a bad byte
/// in the middle of a long line deep in the file is still found and named by its line, and
/// valid UTF-8 text (a part id with an umlaut) reads.
#[test]
fn finds_bad_utf8_deep_in_a_long_file_and_reads_good_utf8() {
    let d = tempfile::tempdir().unwrap();
    let row = |i: usize, id: &str| format!("{id}{i:05},{}\n", ["10.0012"; 12].join(","));
    let header = format!(
        "part,{}\n",
        (0..12)
            .map(|j| format!("f{j}"))
            .collect::<Vec<_>>()
            .join(",")
    );
    let mut good = header.clone();
    let mut bad = header.into_bytes();
    for i in 0..5000 {
        good.push_str(&row(i, "Zürich-"));
        let mut line = row(i, "P").into_bytes();
        if i == 3000 {
            line[40] = 0xFF;
        }
        bad.extend(line);
    }
    std::fs::write(d.path().join("good.csv"), good).unwrap();
    std::fs::write(d.path().join("bad.csv"), bad).unwrap();
    let json = json_of(d.path(), &["good.csv", "--id", "part"]);
    assert_eq!(json["audit"]["rows_used"], 5000, "{json}");
    let e = error_of(d.path(), &["capability", "bad.csv"]);
    assert!(e.contains("bad.csv:3002") && e.contains("UTF-8"), "{e}");
}

#[test]
fn rejects_a_file_without_a_feature_column() {
    let d = dir_with(&[("t.csv", "part,lot\nP1,A\nP2,B\n")]);
    assert!(error_of(d.path(), &["capability", "t.csv"]).contains("t.csv: no feature column"));
}

#[test]
fn rejects_duplicate_column_names() {
    let d = dir_with(&[("t.csv", "part,depth,depth\nP1,1,2\n")]);
    let e = error_of(d.path(), &["capability", "t.csv"]);
    assert!(e.contains("t.csv:1") && e.contains("'depth'"), "{e}");
}

#[test]
fn rejects_spec_sheet_with_lsl_above_usl() {
    let d = dir_with(&[
        ("d.csv", WIDE),
        ("s.csv", "feature,nominal,lsl,usl\ndepth,10,10.1,9.9\n"),
    ]);
    let e = error_of(d.path(), &["capability", "d.csv", "--specs", "s.csv"]);
    assert!(e.contains("s.csv:2") && e.contains("not below"), "{e}");
}

#[test]
fn rejects_two_spec_forms_on_one_row() {
    let d = dir_with(&[
        ("d.csv", WIDE),
        (
            "s.csv",
            "feature,nominal,lsl,usl,tol\ndepth,10,9.9,10.1,0.1\n",
        ),
    ]);
    let e = error_of(d.path(), &["capability", "d.csv", "--specs", "s.csv"]);
    assert!(
        e.contains("s.csv:2") && e.contains("more than one form"),
        "{e}"
    );
}

#[test]
fn rejects_a_negative_tol_and_a_feature_given_twice() {
    let d = dir_with(&[
        ("d.csv", WIDE),
        ("s.csv", "feature,nominal,tol\ndepth,10,-0.1\n"),
        ("t.csv", "feature,nominal,tol\ndepth,10,0.1\ndepth,10,0.2\n"),
    ]);
    assert!(error_of(d.path(), &["capability", "d.csv", "--specs", "s.csv"]).contains("negative"));
    let e = error_of(d.path(), &["capability", "d.csv", "--specs", "t.csv"]);
    assert!(e.contains("t.csv:3") && e.contains("t.csv:2"), "{e}");
}

#[test]
fn rejects_conflicting_specs_from_two_sources_naming_both() {
    let long = "part,feature,value,lsl,usl\nP1,depth,10.01,9.9,10.1\nP2,depth,10.02,9.9,10.1\n";
    let d = dir_with(&[
        ("l.csv", long),
        ("s.csv", "feature,nominal,lsl,usl\ndepth,10,9.8,10.2\n"),
    ]);
    let e = error_of(d.path(), &["capability", "l.csv", "--specs", "s.csv"]);
    assert!(e.contains("s.csv:2") && e.contains("l.csv:2"), "{e}");
}

#[test]
fn rejects_a_non_numeric_limit_naming_line_and_column() {
    let d = dir_with(&[
        ("d.csv", WIDE),
        ("s.csv", "feature,nominal,lsl,usl\ndepth,10,low,10.1\n"),
    ]);
    let e = error_of(d.path(), &["capability", "d.csv", "--specs", "s.csv"]);
    assert!(e.contains("s.csv:2") && e.contains("column 'lsl'"), "{e}");
}

#[test]
fn warns_about_a_spec_without_data() {
    let d = dir_with(&[
        ("d.csv", WIDE),
        ("s.csv", "feature,nominal,lsl,usl\nheight,10,9.9,10.1\n"),
    ]);
    let v = json_of(d.path(), &["d.csv", "--specs", "s.csv"]);
    assert!(v["audit"]["warnings"]
        .as_array()
        .unwrap()
        .iter()
        .any(|w| w["kind"] == "spec without data"));
}

#[test]
fn an_implausible_value_in_long_data_is_listed_at_its_own_line() {
    let long = "part,feature,value\nP1,depth,10.01\nP1,width,5.0\nP2,depth,10.02\nP2,width,5000\nP3,depth,10.00\nP3,width,5.1\nP4,depth,10.01\nP4,width,5.05\n";
    let d = dir_with(&[
        ("l.csv", long),
        ("s.csv", "feature,nominal,tol\nwidth,5,0.2\n"),
    ]);
    let v = json_of(d.path(), &["l.csv", "--specs", "s.csv"]);
    let u = &v["audit"]["unused"][0];
    assert_eq!(
        (u["line"].as_u64(), u["reason"].as_str()),
        (Some(5), Some("implausible"))
    );
}

#[test]
fn subgroups_and_the_gate_work_through_the_binary() {
    // DS1 (reference sheet §3) as 5 subgroups of 4: R̄/d2(4) gives Cpk 0.9402948118786639.
    let x = common::column("ds1_shaft_od.csv");
    let mut text = String::from("part,od\n");
    for (i, v) in x.iter().enumerate() {
        text.push_str(&format!("P{i},{v}\n"));
    }
    let d = dir_with(&[
        ("d.csv", &text),
        ("s.csv", "feature,nominal,lsl,usl\nod,25,24.97,25.03\n"),
    ]);
    let v = json_of(
        d.path(),
        &[
            "d.csv",
            "--specs",
            "s.csv",
            "--subgroup-size",
            "4",
            "--within",
            "range",
        ],
    );
    let f = feature(&v, "od");
    assert_eq!(f["sigma_within_method"], "range");
    assert!((f["cpk"].as_f64().unwrap() - 0.9402948118786639).abs() < 1e-9);
    // Cpk 0.94 is below the default minimum of 1.33: the gate fails with exit code 1.
    let out = capstack()
        .current_dir(d.path())
        .args(["capability", "d.csv", "--specs", "s.csv", "--gate"])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(1));
    let out = capstack()
        .current_dir(d.path())
        .args([
            "capability",
            "d.csv",
            "--specs",
            "s.csv",
            "--gate",
            "--min-cpk",
            "0.5",
        ])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(0));
}

#[test]
fn lines_are_physical_in_crlf_files_with_empty_lines_and_quotes() {
    // Physical line numbers (CONTRACT.md, Definitions → Intake), header = line 1; an empty line
    // is skipped but still counted. The same bad cell in every kind of file.
    let plain = "part,x\r\nA,1\r\n\r\nB,2\r\nC,oops\r\nD,4\r\nE,5\r\nF,6\r\n";
    let quoted = "part,x\r\n\"A\",1\r\n\r\n\"B\",2\r\n\"C\",oops\r\nD,4\r\nE,5\r\nF,6\r\n";
    let lf = "part,x\nA,1\n\nB,2\nC,oops\nD,4\nE,5\nF,6\n";
    let dir = dir_with(&[("crlf.csv", plain), ("quoted.csv", quoted), ("lf.csv", lf)]);
    for file in ["crlf.csv", "quoted.csv", "lf.csv"] {
        let v = json_of(dir.path(), &[file]);
        let unused = &v["audit"]["unused"][0];
        assert_eq!(unused["line"], 5, "{file}: {unused}");
        assert_eq!(unused["text"], "oops", "{file}");
        assert_eq!(v["audit"]["rows_read"], 6, "{file}");
    }
}

/// `capability FILE` under a memory limit of 1000 bytes: exit 2, and the message (which names
/// the file).
fn refused_for_memory(dir: &std::path::Path, file: &str) -> String {
    let out = capstack()
        .current_dir(dir)
        .env("CAPSTACK_MEMORY_LIMIT", "1000")
        .args(["capability", file])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr).into_owned();
    assert!(err.contains(file), "{err}");
    err
}

#[test]
fn a_file_whose_values_cannot_be_held_is_refused_with_a_message() {
    // The memory check, driven by a limit below what 200 rows × 3 columns need.
    let mut csv = String::from("part,a,b\n");
    for i in 0..200 {
        csv.push_str(&format!("P{i},{}.5,{}.25\n", i % 7, i % 5));
    }
    let dir = dir_with(&[("big.csv", &csv)]);
    let err = refused_for_memory(dir.path(), "big.csv");
    assert!(err.contains("GiB of memory is available"), "{err}");
    // With room, the same file reads.
    let v = json_of(dir.path(), &["big.csv"]);
    assert_eq!(v["audit"]["rows_read"], 200);
}

#[test]
fn a_parquet_file_whose_values_cannot_be_held_is_refused_before_it_is_read() {
    use polars::prelude::*;
    let d = tempfile::tempdir().unwrap();
    let a: Vec<f64> = (0..200).map(|i| 10.0 + f64::from(i % 7) * 0.01).collect();
    let mut df =
        df!("part" => (0..200).map(|i| format!("P{i}")).collect::<Vec<_>>(), "a" => a).unwrap();
    ParquetWriter::new(std::fs::File::create(d.path().join("big.parquet")).unwrap())
        .finish(&mut df)
        .unwrap();
    let err = refused_for_memory(d.path(), "big.parquet");
    assert!(err.contains("200 rows × 2 columns"), "{err}");
    let v = json_of(d.path(), &["big.parquet"]);
    assert_eq!(feature(&v, "a")["n"], 200);
}

#[test]
fn a_large_file_reads_the_same_across_blocks_pieces_and_both_parsers() {
    // 9 MB, CRLF, more than one 8 MB block and many parallel pieces; quoted ids near the top
    // and the end (those pieces go through the csv reader, the rest through the plain splitter), empty
    // lines (skipped) and blank rows (rejected) scattered, a bad cell now and then. Every value,
    // row and line must come out where the file has it.
    let mut text = String::from("part,x,y\r\n");
    let mut line = 1u64;
    let mut expected: Vec<(u64, String, f64)> = Vec::new();
    let mut blank_lines = Vec::new();
    let mut bad_lines = Vec::new();
    for i in 0..450_000u64 {
        if i % 97 == 5 {
            text.push_str("\r\n");
            line += 1;
        }
        if i % 101 == 7 {
            text.push_str(" , ,\r\n");
            line += 1;
            blank_lines.push(line);
        }
        // Quotes in the first block and again in the last (which is read while the one
        // before it is parsed).
        let id = if !(2000..448_000).contains(&i) {
            format!("\"P{i:06}\"")
        } else {
            format!("P{i:06}")
        };
        let x = (i % 1000) as f64 / 8.0;
        let y = if i % 503 == 11 {
            bad_lines.push(line + 1);
            "n/a".to_string()
        } else {
            format!("{:.3}", i as f64 / 1000.0)
        };
        text.push_str(&format!("{id},{x},{y}\r\n"));
        line += 1;
        expected.push((line, format!("P{i:06}"), x));
    }
    assert!(text.len() > 9 << 20, "{} bytes", text.len());
    let dir = dir_with(&[("big.csv", &text)]);
    let path = dir.path().join("big.csv").display().to_string();
    let data = capstack::intake::read_files(
        &[path],
        &Default::default(),
        &capstack::intake::SpecSet::default(),
    )
    .unwrap();
    assert_eq!(data.rows(), expected.len());
    let x = &data.feature("x").unwrap().values;
    for (r, (line, id, value)) in expected.iter().enumerate() {
        assert_eq!(data.row_line[r], *line, "row {r}");
        assert_eq!(data.part_ids.get(r), Some(id.as_str()), "row {r}");
        assert_eq!(x[r], *value, "row {r}");
    }
    let a = &data.audit;
    assert_eq!(a.rows_read, (expected.len() + blank_lines.len()) as u64);
    let rejected: Vec<u64> = a.rejected_rows.iter().map(|r| r.line).collect();
    assert_eq!(rejected, blank_lines);
    let unused: Vec<u64> = a.unused.iter().map(|u| u.line).collect();
    assert_eq!(unused, bad_lines);
    assert!(a.unused.iter().all(|u| u.text == "n/a" && u.column == "y"));
}
