//! What the report's charts show, built from the result structs: the assembly against its
//! requirement, the contributions, and per feature a histogram, a normal probability plot and
//! the control charts. Pure: each function returns a [`Plot`] that [`super::chart`] draws.

use super::chart::{palette, Corner, Layer, Plot, HALF_SIZE, SIZE};
use super::stack::StackReport;
use crate::stats::normal;
use crate::study::FeatureResult;

/// Points drawn on a control chart before it is thinned to each bucket's min and max (a chart
/// of 10⁵ points would be megabytes of SVG and shows no more).
pub const MAX_CHART_POINTS: usize = 2000;
/// Buckets of a thinned control chart.
const CHART_BUCKETS: usize = 1000;
/// Order statistics shown on a probability plot of many values (evenly spaced, extremes kept).
pub const MAX_PROBABILITY_POINTS: usize = 1000;
/// Points at which a density curve is evaluated.
const CURVE_POINTS: usize = 240;
/// Dots are drawn on a control chart up to this many points; beyond, the line alone.
const DOTS_UP_TO: usize = 400;

/// A file-name-safe stem: lower-case ASCII letters and digits, other runs become `-`.
pub fn slug(text: &str) -> String {
    let mut out = String::new();
    for c in text.chars() {
        if c.is_ascii_alphanumeric() {
            out.push(c.to_ascii_lowercase());
        } else if !out.ends_with('-') {
            out.push('-');
        }
    }
    let out = out.trim_matches('-');
    let out: String = out.chars().take(40).collect();
    if out.is_empty() {
        "feature".into()
    } else {
        out
    }
}

/// The feature's label: its name, and its group under `--by`.
pub fn feature_label(f: &FeatureResult) -> String {
    match &f.group {
        Some(g) => {
            let g: Vec<String> = g.iter().map(|(k, v)| format!("{k}={v}")).collect();
            format!("{} [{}]", f.feature, g.join(", "))
        }
        None => f.feature.clone(),
    }
}

/// `(lo, hi)` widened by `pad` of its span on each side, never empty.
fn padded(lo: f64, hi: f64, pad: f64) -> (f64, f64) {
    let span = hi - lo;
    if span.is_nan() || span <= 0.0 || !span.is_finite() {
        let w = (lo.abs() * 0.01).max(1e-9);
        return (lo - w, lo + w);
    }
    (lo - pad * span, hi + pad * span)
}

fn extent(values: impl IntoIterator<Item = f64>) -> Option<(f64, f64)> {
    values
        .into_iter()
        .filter(|v| v.is_finite())
        .fold(None, |acc, v| match acc {
            None => Some((v, v)),
            Some((lo, hi)) => Some((lo.min(v), hi.max(v))),
        })
}

fn rule(
    vertical: bool,
    at: f64,
    colour: super::chart::Colour,
    dashed: bool,
    label: String,
) -> Layer {
    Layer::Rule {
        vertical,
        at,
        colour,
        dashed,
        label,
    }
}

/// The spec limits and nominal as vertical (`vertical`) or horizontal rules.
fn spec_rules(f: &FeatureResult, vertical: bool) -> Vec<Layer> {
    let mut out = Vec::new();
    if let Some(l) = f.lsl {
        out.push(rule(vertical, l, palette::LIMIT, false, "LSL".into()));
    }
    if let Some(u) = f.usl {
        out.push(rule(vertical, u, palette::LIMIT, false, "USL".into()));
    }
    if let Some(n) = f.nominal {
        out.push(rule(vertical, n, palette::NOMINAL, true, "nominal".into()));
    }
    out
}

/// The upper corner on the side of `range` that holds less of the weighted points `mass`.
fn sparse_corner(mass: impl Iterator<Item = (f64, f64)>, range: (f64, f64)) -> Corner {
    let middle = 0.5 * (range.0 + range.1);
    let (left, right) = mass.fold(
        (0.0, 0.0),
        |(l, r), (x, w)| {
            if x < middle {
                (l + w, r)
            } else {
                (l, r + w)
            }
        },
    );
    if left <= right {
        Corner::UpperLeft
    } else {
        Corner::UpperRight
    }
}

/// Bins by the rule of Freedman & Diaconis (1981): width h = 2·IQR·n^(−1/3), bins ⌈range/h⌉,
/// with the quartiles linearly interpolated (as numpy's `histogram_bin_edges(x, "fd")`).
/// `None` when the IQR or the range is zero.
pub fn freedman_diaconis_bins(sorted: &[f64]) -> Option<usize> {
    let n = sorted.len();
    if n < 2 {
        return None;
    }
    let q = |p: f64| {
        let at = p * (n - 1) as f64;
        let (i, frac) = (at.floor() as usize, at - at.floor());
        let next = sorted[(i + 1).min(n - 1)];
        sorted[i] + frac * (next - sorted[i])
    };
    let width = 2.0 * (q(0.75) - q(0.25)) * (n as f64).powf(-1.0 / 3.0);
    let range = sorted[n - 1] - sorted[0];
    (width > 0.0 && range > 0.0).then(|| (range / width).ceil() as usize)
}

/// Histogram bins: Freedman–Diaconis, or Sturges' ⌈log₂n⌉ + 1 when the IQR is zero, kept
/// between 5 and 60 so that small samples still show a shape and large ones stay readable
/// (capstack's bounds, common practice).
pub fn bin_count(sorted: &[f64]) -> usize {
    let n = sorted.len();
    if n < 2 {
        return 1;
    }
    freedman_diaconis_bins(sorted)
        .unwrap_or((n as f64).log2().ceil() as usize + 1)
        .clamp(5, 60)
}

/// Counts of `sorted` in `bins` equal bins over [lo, hi] (the last bin closed).
pub fn bin(sorted: &[f64], lo: f64, hi: f64, bins: usize) -> Vec<u64> {
    let mut counts = vec![0u64; bins];
    let w = (hi - lo) / bins as f64;
    for &v in sorted {
        let b = if w > 0.0 {
            (((v - lo) / w).floor().max(0.0) as usize).min(bins - 1)
        } else {
            0
        };
        counts[b] += 1;
    }
    counts
}

/// A density curve over `range`, scaled by `scale`, cut at `cap` (a threshold model's density
/// can be unbounded at its threshold).
fn curve(pdf: impl Fn(f64) -> f64, range: (f64, f64), scale: f64, cap: f64) -> Vec<(f64, f64)> {
    (0..=CURVE_POINTS)
        .map(|i| {
            let x = range.0 + (range.1 - range.0) * i as f64 / CURVE_POINTS as f64;
            let y = pdf(x) * scale;
            (x, if y.is_finite() { y.min(cap) } else { 0.0 })
        })
        .collect()
}

/// Histogram of the values with the spec limits, nominal, the normal density and the chosen
/// model's density (when it is not normal), all as counts per bin.
pub fn histogram(f: &FeatureResult, slug: &str) -> Option<Plot> {
    let mut sorted = f.values.clone();
    sorted.sort_by(f64::total_cmp);
    let (lo, hi) = extent(sorted.iter().copied())?;
    let bins = bin_count(&sorted);
    let (blo, bhi) = if hi > lo {
        (lo, hi)
    } else {
        padded(lo, hi, 0.0)
    };
    let counts = bin(&sorted, blo, bhi, bins);
    let w = (bhi - blo) / bins as f64;
    let marks = [f.lsl, f.usl, f.nominal].into_iter().flatten();
    let (xlo, xhi) = extent(marks.chain([blo, bhi]))?;
    let x_range = padded(xlo, xhi, 0.06);
    let top = counts.iter().copied().max().unwrap_or(1).max(1) as f64;
    let cap = 2.0 * top;
    let scale = sorted.len() as f64 * w;
    let mut layers = vec![Layer::Rects {
        rects: counts
            .iter()
            .enumerate()
            .map(|(i, &c)| {
                let x0 = blo + i as f64 * w;
                [x0, 0.0, x0 + w, c as f64]
            })
            .collect(),
        colour: palette::DATA_LIGHT,
        label: Some(format!("{} values", sorted.len())),
    }];
    let mut curve_top: f64 = 0.0;
    if let (Some(mean), Some(sd)) = (f.capability.mean, f.capability.sd_overall) {
        if sd > 0.0 {
            let pts = curve(|x| normal::pdf((x - mean) / sd) / sd, x_range, scale, cap);
            curve_top = pts.iter().fold(curve_top, |m, p| m.max(p.1));
            layers.push(Layer::Line {
                points: pts,
                colour: palette::DATA,
                width: 2,
                dashed: false,
                label: Some("normal (mean, sd overall)".into()),
            });
        }
    }
    if let Some(model) = chosen_model(f) {
        let d = model.distribution;
        let pts = curve(|x| d.pdf(x), x_range, scale, cap);
        curve_top = pts.iter().fold(curve_top, |m, p| m.max(p.1));
        layers.push(Layer::Line {
            points: pts,
            colour: palette::MODEL,
            width: 2,
            dashed: false,
            label: Some(format!("{} model", model.name)),
        });
    }
    layers.extend(spec_rules(f, true));
    let mass = counts
        .iter()
        .enumerate()
        .map(|(i, &c)| (blo + (i as f64 + 0.5) * w, c as f64));
    let legend = sparse_corner(mass, x_range);
    Some(Plot {
        slug: format!("{slug}-histogram"),
        title: format!("{}: distribution", feature_label(f)),
        x_label: unit_label(&f.feature, f.unit.as_deref()),
        y_label: "parts per bin".into(),
        x_range,
        y_range: (0.0, top.max(curve_top) * 1.15),
        y_ticks: true,
        legend,
        layers,
        size: HALF_SIZE,
    })
}

fn unit_label(name: &str, unit: Option<&str>) -> String {
    match unit {
        Some(u) if !u.is_empty() => format!("{name} ({u})"),
        _ => name.to_string(),
    }
}

/// The chosen model when it is not the normal one (the normal curve is always drawn).
fn chosen_model(f: &FeatureResult) -> Option<&crate::stats::fit::FittedModel> {
    let name = f.model.as_ref()?.name;
    (name != "normal")
        .then(|| f.models.iter().find(|m| m.name == name))
        .flatten()
}

/// Blom's (1958) plotting position of the i-th (1-based) of n order statistics:
/// (i − 3/8)/(n + 1/4).
pub fn blom(i: usize, n: usize) -> f64 {
    (i as f64 - 0.375) / (n as f64 + 0.25)
}

/// Normal probability plot: the ordered values against their normal scores, with the line of
/// the normal model (mean, sd overall) and the chosen model's quantile curve.
pub fn probability(f: &FeatureResult, slug: &str) -> Option<Plot> {
    let n = f.values.len();
    if n < 3 {
        return None;
    }
    let mut sorted = f.values.clone();
    sorted.sort_by(f64::total_cmp);
    let shown: Vec<usize> = if n <= MAX_PROBABILITY_POINTS {
        (0..n).collect()
    } else {
        let k = MAX_PROBABILITY_POINTS;
        (0..k).map(|j| j * (n - 1) / (k - 1)).collect()
    };
    let points: Vec<(f64, f64)> = shown
        .iter()
        .map(|&i| (normal::quantile(blom(i + 1, n)), sorted[i]))
        .collect();
    let z_max = points.iter().fold(0.0f64, |m, p| m.max(p.0.abs())) * 1.08;
    let x_range = (-z_max, z_max);
    let mut layers = vec![Layer::Dots {
        points,
        colour: palette::DATA,
        radius: 2,
        label: Some("ordered values".into()),
    }];
    let (mut lo, mut hi) = (sorted[0], sorted[n - 1]);
    if let (Some(mean), Some(sd)) = (f.capability.mean, f.capability.sd_overall) {
        layers.push(Layer::Line {
            points: vec![(-z_max, mean - sd * z_max), (z_max, mean + sd * z_max)],
            colour: palette::DATA,
            width: 1,
            dashed: true,
            label: Some("normal model".into()),
        });
    }
    if let Some(model) = chosen_model(f) {
        let d = model.distribution;
        let pts: Vec<(f64, f64)> = (0..=CURVE_POINTS)
            .map(|i| -z_max + 2.0 * z_max * i as f64 / CURVE_POINTS as f64)
            .map(|z| (z, d.quantile(normal::cdf(z))))
            .filter(|p| p.1.is_finite())
            .collect();
        layers.push(Layer::Line {
            points: pts,
            colour: palette::MODEL,
            width: 2,
            dashed: false,
            label: Some(format!("{} model", model.name)),
        });
    }
    for l in [f.lsl, f.usl].into_iter().flatten() {
        lo = lo.min(l);
        hi = hi.max(l);
    }
    layers.extend(
        spec_rules(f, false)
            .into_iter()
            .filter(|l| !matches!(l, Layer::Rule { label, .. } if label == "nominal")),
    );
    Some(Plot {
        slug: format!("{slug}-probability"),
        title: format!("{}: normal probability plot", feature_label(f)),
        x_label: "normal score (Blom positions)".into(),
        y_label: unit_label(&f.feature, f.unit.as_deref()),
        x_range,
        y_range: padded(lo, hi, 0.06),
        y_ticks: true,
        legend: Corner::UpperLeft,
        layers,
        size: HALF_SIZE,
    })
}

/// A series as line points at x = first, first + 1, …; beyond [`MAX_CHART_POINTS`] thinned to
/// each bucket's minimum and maximum, so every excursion still shows.
pub fn series_points(values: &[f64], first: f64) -> Vec<(f64, f64)> {
    let n = values.len();
    if n <= MAX_CHART_POINTS {
        return values
            .iter()
            .enumerate()
            .map(|(i, &v)| (first + i as f64, v))
            .collect();
    }
    let mut out = Vec::with_capacity(2 * CHART_BUCKETS);
    for b in 0..CHART_BUCKETS {
        let (s, e) = (b * n / CHART_BUCKETS, (b + 1) * n / CHART_BUCKETS);
        let slice = &values[s..e];
        let (imin, imax) = slice.iter().enumerate().fold((0, 0), |(a, z), (i, v)| {
            (
                if *v < slice[a] { i } else { a },
                if *v > slice[z] { i } else { z },
            )
        });
        let (i1, i2) = (imin.min(imax), imin.max(imax));
        out.push((first + (s + i1) as f64, slice[i1]));
        out.push((first + (s + i2) as f64, slice[i2]));
    }
    out
}

/// A limit that may differ point by point (subgroups of unequal size) as a rule when constant,
/// else as a stepped line.
fn limit_layer(values: &[f64], first: f64, label: &str, colour: super::chart::Colour) -> Layer {
    let constant = values
        .windows(2)
        .all(|w| (w[0] - w[1]).abs() <= 1e-12 * w[0].abs());
    if constant {
        return rule(false, values[0], colour, true, label.into());
    }
    Layer::Line {
        points: series_points(values, first),
        colour,
        width: 1,
        dashed: true,
        label: Some(label.into()),
    }
}

/// The location chart (individuals or subgroup means) with its limits and signalling points.
pub fn location_chart(f: &FeatureResult, slug: &str) -> Option<Plot> {
    let s = f.stability.as_ref()?;
    let chart = &s.chart;
    let pts = &chart.location_points;
    if pts.is_empty() {
        return None;
    }
    let n = pts.len();
    // On a normal-scores chart the limits are mapped back from the scores: constant.
    let (ucl, lcl): (Vec<f64>, Vec<f64>) = if chart.scores.is_some() {
        (vec![chart.location.ucl], vec![chart.location.lcl])
    } else {
        chart
            .location_sigma
            .iter()
            .map(|sig| {
                (
                    chart.location.centre + 3.0 * sig,
                    chart.location.centre - 3.0 * sig,
                )
            })
            .unzip()
    };
    let signals: Vec<(f64, f64)> = s
        .signals
        .iter()
        .filter(|x| x.signal.chart == "location")
        .map(|x| ((x.signal.point + 1) as f64, pts[x.signal.point]))
        .collect();
    let (lo, hi) = extent(pts.iter().chain(&ucl).chain(&lcl).copied())?;
    let mut layers = vec![Layer::Line {
        points: series_points(pts, 1.0),
        colour: palette::DATA,
        width: 1,
        dashed: false,
        label: None,
    }];
    if n <= DOTS_UP_TO {
        layers.push(Layer::Dots {
            points: series_points(pts, 1.0),
            colour: palette::DATA,
            radius: 2,
            label: None,
        });
    }
    layers.push(rule(
        false,
        chart.location.centre,
        palette::CONTROL,
        false,
        "CL".into(),
    ));
    layers.push(limit_layer(&ucl, 1.0, "UCL", palette::LIMIT));
    layers.push(limit_layer(&lcl, 1.0, "LCL", palette::LIMIT));
    if !signals.is_empty() {
        layers.push(Layer::Dots {
            points: signals,
            colour: palette::SIGNAL,
            radius: 4,
            label: None,
        });
    }
    let (title, y) = match chart.kind {
        "individuals" => (
            "individuals chart",
            unit_label(&f.feature, f.unit.as_deref()),
        ),
        "individuals_normal_scores" => (
            "individuals chart (limits from the fitted model)",
            unit_label(&f.feature, f.unit.as_deref()),
        ),
        _ => ("subgroup means", "subgroup mean".to_string()),
    };
    Some(Plot {
        slug: format!("{slug}-location"),
        title: format!("{}: {title}", feature_label(f)),
        x_label: if chart.kind.starts_with("individuals") {
            "value number in process order".into()
        } else {
            "subgroup".into()
        },
        y_label: y,
        x_range: (0.0, n as f64 + 1.0),
        y_range: padded(lo, hi, 0.08),
        y_ticks: true,
        legend: Corner::UpperRight,
        layers,
        size: HALF_SIZE,
    })
}

/// The dispersion chart (moving ranges, subgroup ranges or sds) with its upper limit and the
/// points above it.
pub fn dispersion_chart(f: &FeatureResult, slug: &str) -> Option<Plot> {
    let s = f.stability.as_ref()?;
    let chart = &s.chart;
    let pts = &chart.dispersion_points;
    if pts.is_empty() {
        return None;
    }
    // A moving range belongs to the later of its two values.
    let first = if chart.kind.starts_with("individuals") {
        2.0
    } else {
        1.0
    };
    let signals: Vec<(f64, f64)> = s
        .signals
        .iter()
        .filter(|x| x.signal.chart == "dispersion")
        .map(|x| ((x.signal.point + 1) as f64, x.signal.value))
        .collect();
    let (_, hi) = extent(pts.iter().chain(&chart.dispersion_ucl).copied())?;
    let mut layers = vec![Layer::Line {
        points: series_points(pts, first),
        colour: palette::DATA,
        width: 1,
        dashed: false,
        label: None,
    }];
    if pts.len() <= DOTS_UP_TO {
        layers.push(Layer::Dots {
            points: series_points(pts, first),
            colour: palette::DATA,
            radius: 2,
            label: None,
        });
    }
    layers.push(rule(
        false,
        chart.dispersion.centre,
        palette::CONTROL,
        false,
        "CL".into(),
    ));
    layers.push(limit_layer(
        &chart.dispersion_ucl,
        first,
        "UCL",
        palette::LIMIT,
    ));
    if chart.dispersion.lcl > 0.0 {
        layers.push(rule(
            false,
            chart.dispersion.lcl,
            palette::LIMIT,
            true,
            "LCL".into(),
        ));
    }
    if !signals.is_empty() {
        layers.push(Layer::Dots {
            points: signals,
            colour: palette::SIGNAL,
            radius: 4,
            label: None,
        });
    }
    let name = chart.dispersion_name.replace('_', " ");
    Some(Plot {
        slug: format!("{slug}-dispersion"),
        title: format!("{}: {name} chart", feature_label(f)),
        x_label: if first == 2.0 {
            "value number in process order".into()
        } else {
            "subgroup".into()
        },
        y_label: name,
        x_range: (0.0, pts.len() as f64 + first),
        y_range: (0.0, hi * 1.12),
        y_ticks: true,
        legend: Corner::UpperRight,
        layers,
        size: HALF_SIZE,
    })
}

/// Every chart of one feature section, in reading order.
pub fn feature_plots(f: &FeatureResult, index: usize) -> Vec<Plot> {
    let slug = format!("f{:02}-{}", index + 1, slug(&feature_label(f)));
    [
        histogram(f, &slug),
        probability(f, &slug),
        location_chart(f, &slug),
        dispersion_chart(f, &slug),
    ]
    .into_iter()
    .flatten()
    .collect()
}

/// The assembly: requirement limits, the design assumption's normal curve, the measured normal
/// curve and the simulated assemblies' histogram, all as densities.
pub fn assembly(r: &StackReport) -> Plot {
    let req = &r.requirement;
    let mut marks: Vec<f64> = [req.lsl, req.usl].into_iter().flatten().collect();
    for (m, s) in [(r.rss.mean, r.rss.sd), (r.measured.mean, r.measured.sd)] {
        marks.extend([m - 4.5 * s, m + 4.5 * s]);
    }
    let (lo, hi) = extent(marks).unwrap_or((0.0, 1.0));
    let x_range = padded(lo, hi, 0.04);
    let mut layers = Vec::new();
    let mut top: f64 = 0.0;
    let legend = sparse_corner(
        [(r.measured.mean, 1.0), (r.rss.mean, 1.0)].into_iter(),
        x_range,
    );
    if let Some(sim) = &r.simulation {
        let h = &sim.histogram;
        let bins = h.counts.len().max(1);
        let w = (h.hi - h.lo) / bins as f64;
        let total = sim.samples.max(1) as f64;
        let rects: Vec<[f64; 4]> = h
            .counts
            .iter()
            .enumerate()
            .map(|(i, &c)| {
                let x0 = h.lo + i as f64 * w;
                [x0, 0.0, x0 + w, c as f64 / (total * w)]
            })
            .collect();
        top = rects.iter().fold(top, |m, b| m.max(b[3]));
        layers.push(Layer::Rects {
            rects,
            colour: palette::DATA_LIGHT,
            label: Some(format!("simulated assemblies ({})", sim.samples)),
        });
    }
    let mut normal_curve = |mean: f64, sd: f64, colour, dashed, label: &str| {
        if sd > 0.0 {
            let pts = curve(
                |x| normal::pdf((x - mean) / sd) / sd,
                x_range,
                1.0,
                f64::MAX,
            );
            top = pts.iter().fold(top, |m, p| m.max(p.1));
            layers.push(Layer::Line {
                points: pts,
                colour,
                width: 2,
                dashed,
                label: Some(label.to_string()),
            });
        }
    };
    normal_curve(
        r.rss.mean,
        r.rss.sd,
        palette::ASSUMED,
        true,
        "design assumption (RSS)",
    );
    normal_curve(
        r.measured.mean,
        r.measured.sd,
        palette::DATA,
        false,
        "measured parts (normal)",
    );
    if let Some(l) = req.lsl {
        layers.push(rule(true, l, palette::LIMIT, false, "LSL".into()));
    }
    if let Some(u) = req.usl {
        layers.push(rule(true, u, palette::LIMIT, false, "USL".into()));
    }
    layers.push(rule(
        true,
        r.nominal,
        palette::NOMINAL,
        true,
        "nominal".into(),
    ));
    Plot {
        slug: "stack-assembly".into(),
        title: format!("{}: assembly distribution", req.name),
        x_label: unit_label(&req.name, req.unit.as_deref()),
        y_label: "density".into(),
        x_range,
        y_range: (0.0, top.max(f64::MIN_POSITIVE) * 1.18),
        y_ticks: true,
        legend,
        layers,
        size: SIZE,
    }
}

/// The contributors' shares of the assembly variance, largest on top, marked where the
/// contributor does not support the design assumption.
pub fn contributions(r: &StackReport) -> Plot {
    let n = r.contributions.len();
    let supports = |name: &str| {
        r.contributors
            .iter()
            .find(|c| c.name == name)
            .is_none_or(|c| c.supports_assumption)
    };
    let bar = |i: usize, share: f64| {
        let y = (n - 1 - i) as f64;
        [0.0, y - 0.32, 100.0 * share.max(0.0), y + 0.32]
    };
    let (good, bad): (Vec<_>, Vec<_>) = r
        .contributions
        .iter()
        .enumerate()
        .partition(|(_, c)| supports(&c.name));
    let max = r
        .contributions
        .iter()
        .fold(0.0f64, |m, c| m.max(100.0 * c.variance_share));
    let mut layers = Vec::new();
    for (items, colour, label) in [
        (good, palette::GOOD, "supports the assumption"),
        (bad, palette::LIMIT, "does not support it"),
    ] {
        if !items.is_empty() {
            layers.push(Layer::Rects {
                rects: items
                    .iter()
                    .map(|(i, c)| bar(*i, c.variance_share))
                    .collect(),
                colour,
                label: Some(label.into()),
            });
        }
    }
    for (i, c) in r.contributions.iter().enumerate() {
        layers.push(Layer::Text {
            at: (
                100.0 * c.variance_share.max(0.0) + max * 0.02,
                (n - 1 - i) as f64,
            ),
            text: format!("{}  {:.0} %", c.name, 100.0 * c.variance_share),
            colour: palette::INK,
        });
    }
    Plot {
        slug: "stack-contributions".into(),
        title: "share of the assembly variance".into(),
        x_label: "% of the measured assembly variance".into(),
        y_label: String::new(),
        x_range: (0.0, max.max(1.0) * 1.6),
        y_range: (-0.7, n as f64 - 0.3),
        y_ticks: false,
        legend: Corner::LowerRight,
        layers,
        size: (SIZE.0, (90 + 38 * n as u32).max(220)),
    }
}
