//! Intake of a wide CSV of 1,000,000 parts × 20 features, against a bare polars CSV read of
//! the same file. `cargo bench --bench intake`; set CAPSTACK_BENCH_ROWS for a smaller file.

use capstack::intake::{read_files, ReadOptions, SpecSet};
use criterion::{criterion_group, criterion_main, Criterion};
use polars::prelude::*;

mod common;
use common::wide_csv;

fn rows() -> usize {
    std::env::var("CAPSTACK_BENCH_ROWS")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(1_000_000)
}

fn intake(c: &mut Criterion) {
    let path = wide_csv(
        rows(),
        20,
        &format!("capstack_bench_wide_{}x20.csv", rows()),
    );
    let p = path.display().to_string();
    let mut g = c.benchmark_group("intake_wide_20_features");
    g.sample_size(10);
    g.bench_function("capstack", |b| {
        b.iter(|| {
            read_files(
                std::slice::from_ref(&p),
                &ReadOptions::default(),
                &SpecSet::default(),
            )
            .unwrap()
        })
    });
    g.bench_function("polars_csv_read", |b| {
        b.iter(|| {
            CsvReadOptions::default()
                .with_has_header(true)
                .try_into_reader_with_file_path(Some(path.clone()))
                .unwrap()
                .finish()
                .unwrap()
        })
    });
    g.finish();
}

criterion_group!(benches, intake);
criterion_main!(benches);
