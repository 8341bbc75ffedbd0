//! Peak memory of the intake of 1,000,000 parts × 20 features, against the values held as f64
//! (goal: within 2×). `cargo bench --bench intake_memory` (Linux: reads VmHWM from /proc).
//! CAPSTACK_BENCH_ROWS makes the file smaller.

use capstack::intake::{read_files, ReadOptions, SpecSet};

mod common;

fn peak_kib() -> Option<u64> {
    let status = std::fs::read_to_string("/proc/self/status").ok()?;
    let line = status.lines().find(|l| l.starts_with("VmHWM:"))?;
    line.split_whitespace().nth(1)?.parse().ok()
}

fn main() {
    let rows = std::env::var("CAPSTACK_BENCH_ROWS")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(1_000_000);
    let path = common::wide_csv(rows, 20, &format!("capstack_bench_wide_{rows}x20.csv"));
    let before = peak_kib().unwrap_or(0);
    let start = std::time::Instant::now();
    let data = read_files(
        &[path.display().to_string()],
        &ReadOptions::default(),
        &SpecSet::default(),
    )
    .unwrap();
    let elapsed = start.elapsed();
    let values: usize = data.features.iter().map(|f| f.values.len()).sum();
    let values_mib = (values * 8) as f64 / (1 << 20) as f64;
    let peak_mib = peak_kib().unwrap_or(0).saturating_sub(before) as f64 / 1024.0;
    println!(
        "intake of {rows} × 20: {:.0} ms, peak memory {peak_mib:.0} MiB above the start for {values_mib:.0} MiB of values ({:.2}×)",
        elapsed.as_secs_f64() * 1e3,
        peak_mib / values_mib
    );
}
