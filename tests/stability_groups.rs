//! Control charts, the Nelson tests and the between-group tests against published values,
//! scipy 1.17.1 and sequences built to trip exactly one test.

mod common;
use capstack::stats::control::{individuals, nelson, signals, subgroups, DEFAULT_RULES};
use capstack::stats::groups::{anova, kruskal_wallis, levene};
use common::*;

#[test]
fn ds1_individuals_chart_matches_the_worked_example() {
    // capability_ds1_expected.csv: x̄ ± 2.66·MR̄ and 3.267·MR̄ (the table's rounded factors,
    // hence 1e-4); exact: 3/d2(2) with d2(2) = 2/√π.
    let x = column("ds1_shaft_od.csv");
    let exp = table("capability_ds1_expected.csv");
    let c = individuals(&x).unwrap();
    close(c.location.centre, value(&exp, "mean"), 1e-12, "CL");
    let mr = value(&exp, "MRbar");
    close(
        c.location.ucl,
        value(&exp, "mean") + 3.0 / std::f64::consts::FRAC_2_SQRT_PI * mr,
        1e-9,
        "UCL exact",
    );
    close(
        c.location.ucl,
        value(&exp, "I_chart_UCL[mean+2.66*MRbar]"),
        1e-5,
        "UCL table",
    );
    close(
        c.dispersion.ucl,
        value(&exp, "MR_chart_UCL[3.267*MRbar]"),
        1e-3,
        "MR UCL",
    );
    assert_eq!(c.dispersion.lcl, 0.0);
    // DS1 is in control.
    assert!(signals(&c, &DEFAULT_RULES).is_empty());
}

#[test]
fn subgroup_charts_use_the_published_factors() {
    // DS1 as 5 subgroups of 4: UCL − CL = A2(4)·R̄ = 0.7286·R̄ and A3(4)·S̄ = 1.6281·S̄;
    // D4(4) = 2.2821, B4(4) = 2.2660 (control_constants.csv, 4-digit table values).
    let x = column("ds1_shaft_od.csv");
    let exp = table("capability_ds1_expected.csv");
    let groups: Vec<Vec<f64>> = x.chunks(4).map(|c| c.to_vec()).collect();
    let r = subgroups(&groups, false).unwrap();
    let rbar = value(&exp, "Rbar_5x4");
    close(
        r.location.ucl - r.location.centre,
        0.7286 * rbar,
        2e-4,
        "A2",
    );
    close(r.dispersion.centre, rbar, 1e-12, "R̄");
    close(r.dispersion.ucl, 2.2821 * rbar, 2e-4, "D4");
    assert_eq!(r.dispersion.lcl, 0.0, "D3(4) = 0");
    let s = subgroups(&groups, true).unwrap();
    let sbar = value(&exp, "Sbar_5x4");
    close(
        s.location.ucl - s.location.centre,
        1.6281 * sbar,
        2e-4,
        "A3",
    );
    close(s.dispersion.ucl, 2.2660 * sbar, 2e-4, "B4");
}

/// Rules that signal on a standardised sequence, each once per rule.
fn rules_hit(z: &[f64]) -> Vec<u8> {
    let mut r: Vec<u8> = nelson(z, &[1, 2, 3, 4, 5, 6, 7, 8])
        .into_iter()
        .map(|(_, r)| r)
        .collect();
    r.sort();
    r.dedup();
    r
}

#[test]
fn each_nelson_test_trips_on_its_own_pattern_and_counts_as_documented() {
    // A quiet base: ±0.5 alternating in pairs (no run of 9, no trend, no alternation of 14,
    // within 1σ for at most 14 points before a 1.5 breaks it).
    let base = |n: usize| -> Vec<f64> {
        (0..n)
            .map(|i| match i % 14 {
                13 => 1.5,
                k if (k / 2) % 2 == 0 => 0.5,
                _ => -0.5,
            })
            .collect()
    };
    assert_eq!(rules_hit(&base(60)), Vec::<u8>::new());
    // 1: a point beyond 3σ.
    let mut z = base(30);
    z[10] = 3.2;
    assert_eq!(nelson(&z, &[1]), vec![(10, 1)]);
    // 2: nine on one side signal at the 9th and every later point of the run.
    let mut z = base(30);
    for v in &mut z[5..15] {
        *v = -0.3;
    }
    assert_eq!(nelson(&z, &[2]), vec![(13, 2), (14, 2)]);
    // 3: six points (five rises) signal at the sixth; five points do not.
    let mut z = base(30);
    for (k, v) in z[4..10].iter_mut().enumerate() {
        *v = -0.9 + 0.3 * k as f64;
    }
    assert_eq!(nelson(&z, &[3]), vec![(9, 3)]);
    z[9] = -0.9;
    assert!(nelson(&z, &[3]).is_empty());
    // 4: fourteen alternating points signal at the fourteenth.
    let z: Vec<f64> = (0..14)
        .map(|i| if i % 2 == 0 { 0.2 } else { -0.2 })
        .collect();
    assert_eq!(nelson(&z, &[4]), vec![(13, 4)]);
    assert!(nelson(&z[..13], &[4]).is_empty());
    // 5: two of three beyond 2σ on one side, signalled at the second.
    let mut z = base(20);
    z[6] = 2.3;
    z[8] = 2.4;
    assert_eq!(nelson(&z, &[5]), vec![(8, 5)]);
    // 6: four of five beyond 1σ on one side.
    let mut z = base(20);
    for i in [3, 4, 6, 7] {
        z[i] = -1.4;
    }
    assert_eq!(nelson(&z, &[6]), vec![(7, 6)]);
    // 7: fifteen within 1σ.
    let z: Vec<f64> = (0..15).map(|i| [0.5, 0.4, -0.5, -0.4][i % 4]).collect();
    assert_eq!(nelson(&z, &[7]), vec![(14, 7)]);
    // 8: eight beyond 1σ on either side.
    let z: Vec<f64> = (0..8).map(|i| if i % 4 < 2 { 1.5 } else { -1.5 }).collect();
    assert_eq!(nelson(&z, &[8]), vec![(7, 8)]);
    // Switched off, a test says nothing.
    assert!(nelson(&z, &[1, 2, 3, 4, 5, 6, 7]).is_empty());
}

#[test]
fn a_drift_is_caught_and_a_stable_series_is_not() {
    // A linear drift of 0.1σ per point added to the quiet base trips tests 1 and 2.
    let x: Vec<f64> = (0..60)
        .map(|i| 10.0 + 0.001 * [0.5, 0.5, -0.5, -0.5][i % 4] + 0.0004 * i as f64)
        .collect();
    let c = individuals(&x).unwrap();
    let rules: Vec<u8> = signals(&c, &DEFAULT_RULES).iter().map(|s| s.rule).collect();
    assert!(rules.contains(&2), "{rules:?}");
}

#[test]
fn between_group_tests_match_scipy() {
    // groups_data.csv / groups_expected.csv from groups_reference.py (scipy 1.17.1 f_oneway,
    // kruskal, levene center='mean' and 'median').
    let rows = table("groups_data.csv");
    let mut lots: Vec<(String, Vec<f64>)> = Vec::new();
    for r in rows.iter().skip(1).filter(|r| r.len() == 2) {
        let v: f64 = r[1].parse().unwrap();
        match lots.iter_mut().find(|(k, _)| *k == r[0]) {
            Some((_, xs)) => xs.push(v),
            None => lots.push((r[0].clone(), vec![v])),
        }
    }
    let groups: Vec<&[f64]> = lots.iter().map(|(_, v)| v.as_slice()).collect();
    let exp = table("groups_expected.csv");
    let get = |name: &str| -> (f64, f64) {
        let r = exp.iter().find(|r| r[0] == name).unwrap();
        (r[1].parse().unwrap(), r[2].parse().unwrap())
    };
    let cases = [
        ("anova", anova(&groups).unwrap()),
        ("kruskal", kruskal_wallis(&groups).unwrap()),
        ("levene", levene(&groups, false).unwrap()),
        ("brown_forsythe", levene(&groups, true).unwrap()),
    ];
    for (name, t) in cases {
        let (stat, p) = get(name);
        close(t.statistic, stat, 1e-9, &format!("{name} statistic"));
        close(t.p, p, 1e-7, &format!("{name} p"));
    }
    assert_eq!(cases[0].1.df1, 2.0);
    assert_eq!(cases[0].1.df2, Some(72.0));
    // Degenerate: one group, or no spread.
    assert!(anova(&groups[..1]).is_none());
    assert!(anova(&[&[1.0, 1.0][..], &[1.0, 1.0][..]]).is_none());
}

#[test]
fn a_moving_range_signal_is_placed_at_its_later_value_on_a_normal_scores_chart_too() {
    // A jump between values 20 and 21 (0-based 19 and 20): moving range 19 belongs to value 20.
    let mut x: Vec<f64> = (0..40).map(|i| ((i * 7) % 5) as f64 * 0.1).collect();
    x[20] = 9.0;
    for kind in ["individuals", "individuals_normal_scores"] {
        let mut chart = individuals(&x).unwrap();
        chart.kind = kind;
        let first = signals(&chart, &[1])
            .into_iter()
            .find(|s| s.chart == "dispersion")
            .unwrap();
        assert_eq!(first.point, 20, "{kind}");
    }
}

/// `keep_points: false` (how `capstack capability` studies) frees each feature's values and
/// chart points and changes no statistic: the serialised results are the same text. On the
/// sample scenario's drifting supplier, whose charts signal.
#[test]
fn freeing_the_points_changes_no_statistic() {
    use capstack::intake::{read_files, read_spec_sheets, ReadOptions};
    use capstack::study::{study, StudySettings};
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("sample_data");
    let path = |f: &str| root.join(f).display().to_string();
    let data = read_files(
        &[path("talvik_hubs.csv")],
        &ReadOptions::default(),
        &Default::default(),
    )
    .unwrap();
    let specs = read_spec_sheets(&[path("talvik_specs.csv")]).unwrap();
    let kept = study(&data, &specs, &StudySettings::default()).unwrap();
    let freed = study(
        &data,
        &specs,
        &StudySettings {
            keep_points: false,
            ..StudySettings::default()
        },
    )
    .unwrap();
    assert!(kept.iter().all(|f| !f.values.is_empty()));
    assert!(freed.iter().all(|f| f.values.is_empty()));
    assert!(freed.iter().filter_map(|f| f.stability.as_ref()).all(|s| s
        .chart
        .location_points
        .is_empty()
        && s.chart.dispersion_points.is_empty()));
    assert!(kept
        .iter()
        .filter_map(|f| f.stability.as_ref())
        .any(|s| s.signal_count > 0));
    assert_eq!(
        serde_json::to_string(&kept).unwrap(),
        serde_json::to_string(&freed).unwrap()
    );
}
