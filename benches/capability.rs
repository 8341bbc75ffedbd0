//! The whole `capability` computation on 200,000 parts × 50 features (10⁷ values), both
//! normality tests included, split into the read and the statistics after it.
//! Compare with `benches/capability_reference.py` (pandas + scipy + statsmodels) on the same file.

use capstack::intake::{read_files, ReadOptions, SpecSet};
use capstack::study::{study, ModelRequest, StudySettings};
use criterion::{criterion_group, criterion_main, Criterion};
use std::io::Write;

mod common;

fn file() -> std::path::PathBuf {
    let path = std::env::temp_dir().join("capstack_bench_200000x50.csv");
    if !path.exists() {
        let mut f = std::io::BufWriter::new(std::fs::File::create(&path).unwrap());
        let header: Vec<String> = (0..50).map(|j| format!("f{j}")).collect();
        writeln!(f, "part,{}", header.join(",")).unwrap();
        let values = common::four_uniform_sums(200_000 * 50);
        for (i, row) in values.chunks(50).enumerate() {
            write!(f, "P{i:07}").unwrap();
            for v in row {
                write!(f, ",{v:.5}").unwrap();
            }
            writeln!(f).unwrap();
        }
    }
    path
}

fn capability(c: &mut Criterion) {
    let path = file().display().to_string();
    let specs = {
        let mut s = SpecSet::default();
        for j in 0..50 {
            s.insert(
                format!("f{j}"),
                capstack::intake::Spec {
                    nominal: Some(10.0),
                    lsl: Some(9.97),
                    usl: Some(10.03),
                    unit: None,
                    source: String::new(),
                    source_file: String::new(),
                    source_line: None,
                },
            );
        }
        s
    };
    let data = read_files(std::slice::from_ref(&path), &ReadOptions::default(), &specs).unwrap();
    // The normal model only: the computation the pandas + scipy reference script does (the
    // default `auto` also fits eight families to every feature whose normality is rejected).
    // As `capstack capability` runs it: nothing kept for drawing.
    let settings = StudySettings {
        model: ModelRequest::Named("normal"),
        keep_points: false,
        ..StudySettings::default()
    };
    let mut g = c.benchmark_group("capability_200000x50");
    g.sample_size(10);
    g.bench_function("read", |b| {
        b.iter(|| read_files(std::slice::from_ref(&path), &ReadOptions::default(), &specs).unwrap())
    });
    g.bench_function("statistics", |b| {
        b.iter(|| study(&data, &specs, &settings).unwrap())
    });
    g.bench_function("read_and_statistics", |b| {
        b.iter(|| {
            let d =
                read_files(std::slice::from_ref(&path), &ReadOptions::default(), &specs).unwrap();
            study(&d, &specs, &settings).unwrap()
        })
    });
    let auto = StudySettings::default();
    g.bench_function("statistics_auto_models", |b| {
        b.iter(|| study(&data, &specs, &auto).unwrap())
    });
    g.finish();
}

criterion_group!(benches, capability);
criterion_main!(benches);
