//! What the report's charts show, checked on the pure figure builders: bin counts against
//! numpy, plotting positions against their published formula, density scaling, thinning.

mod common;

use capstack::output::chart::{self, Layer};
use capstack::output::figures::{
    bin, bin_count, blom, feature_plots, freedman_diaconis_bins, series_points, slug,
    MAX_CHART_POINTS,
};
use capstack::study::{study, StudySettings};

fn sorted(name: &str) -> Vec<f64> {
    let mut x = common::column(name);
    x.sort_by(f64::total_cmp);
    x
}

#[test]
fn freedman_diaconis_bins_match_numpy() {
    // numpy 2.x: len(np.histogram_bin_edges(x, "fd")) - 1 on the fixture columns.
    for (file, expected) in [
        ("ds1_shaft_od.csv", 4),
        ("ds2_runout.csv", 5),
        ("strd_michelso.csv", 13),
        ("strd_lew.csv", 5),
        ("strd_pidigits.csv", 16),
        ("strd_lottery.csv", 6),
    ] {
        assert_eq!(
            freedman_diaconis_bins(&sorted(file)),
            Some(expected),
            "{file}"
        );
    }
    // And 1, 2, …, 100: numpy gives 5.
    let x: Vec<f64> = (1..=100).map(f64::from).collect();
    assert_eq!(freedman_diaconis_bins(&x), Some(5));
    // capstack keeps at least 5 bins (DS1's 4 becomes 5) and uses Sturges without an IQR.
    assert_eq!(bin_count(&sorted("ds1_shaft_od.csv")), 5);
    let mut flat = vec![1.0; 60];
    flat.push(2.0);
    assert_eq!(bin_count(&flat), 7); // ⌈log₂ 61⌉ + 1
}

#[test]
fn binning_counts_every_value_once_and_closes_the_last_bin() {
    let x = sorted("strd_michelso.csv");
    let counts = bin(&x, x[0], x[x.len() - 1], 13);
    assert_eq!(counts.iter().sum::<u64>(), x.len() as u64);
    assert!(counts[12] >= 1, "the maximum falls in the last bin");
}

#[test]
fn blom_positions_are_those_of_r_ppoints_for_small_n() {
    // R's ppoints(5) uses a = 3/8 for n ≤ 10, i.e. Blom's (i − 3/8)/(n + 1/4):
    // 0.1190476 0.3095238 0.5000000 0.6904762 0.8809524 (values from the formula, as R prints them).
    let expected = [0.1190476, 0.3095238, 0.5, 0.6904762, 0.8809524];
    for (i, e) in expected.iter().enumerate() {
        assert!((blom(i + 1, 5) - e).abs() < 5e-8, "i = {}", i + 1);
    }
}

#[test]
fn long_series_are_thinned_but_keep_every_extreme() {
    let n = 100_000;
    let mut x: Vec<f64> = (0..n).map(|i| ((i * 37) % 101) as f64).collect();
    x[54_321] = 1e6;
    x[77_777] = -1e6;
    let pts = series_points(&x, 1.0);
    assert!(pts.len() <= 2 * 1000 && pts.len() > MAX_CHART_POINTS / 2);
    assert!(pts.contains(&(54_322.0, 1e6)));
    assert!(pts.contains(&(77_778.0, -1e6)));
    // Short series are drawn point by point.
    assert_eq!(series_points(&x[..50], 1.0).len(), 50);
}

#[test]
fn slugs_are_safe_file_names() {
    assert_eq!(slug("depth [mm]"), "depth-mm");
    assert_eq!(slug("../../etc/passwd"), "etc-passwd");
    assert_eq!(slug("<script>"), "script");
    assert_eq!(slug("σ"), "feature");
}

#[test]
fn the_histogram_curve_encloses_the_sample_and_the_charts_draw() {
    let (dir, _) = common::demo_stack_file();
    let files = vec![dir.path().join("talvik_hubs.csv").display().to_string()];
    let sheets = vec![dir.path().join("talvik_specs.csv").display().to_string()];
    let sheet = capstack::intake::read_spec_sheets(&sheets).unwrap();
    let data = capstack::intake::read_files(&files, &Default::default(), &sheet).unwrap();
    let specs = capstack::intake::merge_specs(&sheet, &data.embedded_specs).unwrap();
    let features = study(&data, &specs, &StudySettings::default()).unwrap();
    for (i, f) in features.iter().enumerate() {
        let plots = feature_plots(f, i);
        assert_eq!(plots.len(), 4, "{}", f.feature);
        let hist = &plots[0];
        let (bars, curve) = (&hist.layers[0], &hist.layers[1]);
        let (Layer::Rects { rects, .. }, Layer::Line { points, .. }) = (bars, curve) else {
            panic!("bars then the normal curve");
        };
        // Bars count the values; the normal curve, in counts per bin, integrates to n over
        // the chart when the chart spans the sample (±4σ lies inside it here): trapezoids.
        let w = rects[0][2] - rects[0][0];
        let n: f64 = rects.iter().map(|r| r[3]).sum();
        assert_eq!(n as usize, f.values.len());
        let area: f64 = points
            .windows(2)
            .map(|p| (p[1].0 - p[0].0) * (p[0].1 + p[1].1) / 2.0)
            .sum::<f64>()
            / w;
        assert!((area - n).abs() / n < 0.03, "{}: {area} vs {n}", f.feature);
        for p in &plots {
            let svg = chart::svg(p).unwrap();
            assert!(svg.starts_with("<svg") && svg.trim_end().ends_with("</svg>"));
        }
    }
    // The skewed runout gets its fitted model's curve beside the normal one.
    let runout = features
        .iter()
        .find(|f| f.feature == "face_runout")
        .unwrap();
    let hist = &feature_plots(runout, 0)[0];
    let labels: Vec<&str> = hist
        .layers
        .iter()
        .filter_map(|l| match l {
            Layer::Line { label: Some(l), .. } => Some(l.as_str()),
            _ => None,
        })
        .collect();
    assert!(
        labels
            .iter()
            .any(|l| l.ends_with("model") && !l.starts_with("normal")),
        "{labels:?}"
    );
}
