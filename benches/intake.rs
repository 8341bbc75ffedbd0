//! Intake of a wide CSV of 1,000,000 parts × 20 features, against a bare polars CSV read of
//! the same file. `cargo bench --bench intake`; set CAPSTACK_BENCH_ROWS for a smaller file.

use capstack::intake::{read_files, ReadOptions, SpecSet};
use criterion::{criterion_group, criterion_main, Criterion};
use polars::prelude::*;
use std::io::Write;
use std::path::PathBuf;

pub fn wide_csv(rows: usize, features: usize, name: &str) -> PathBuf {
    let path = std::env::temp_dir().join(name);
    if path.exists() {
        return path;
    }
    let mut f = std::io::BufWriter::new(std::fs::File::create(&path).unwrap());
    let header: Vec<String> = (0..features).map(|j| format!("f{j}")).collect();
    writeln!(f, "part,lot,{}", header.join(",")).unwrap();
    let mut state = 12345u64;
    for i in 0..rows {
        write!(f, "P{i:07},L{}", i / 10_000).unwrap();
        for j in 0..features {
            state = state
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            let u = (state >> 11) as f64 / (1u64 << 53) as f64;
            write!(f, ",{:.4}", 10.0 + j as f64 + (u - 0.5) * 0.1).unwrap();
        }
        writeln!(f).unwrap();
    }
    path
}

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
