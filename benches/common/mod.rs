//! Benchmark input files, generated once into the temporary directory, and the values they
//! hold (the reference tests recompute the capability benchmark's values from here).
// Each benchmark and the tests use only part of this.
#![allow(dead_code)]

use std::io::Write;
use std::path::PathBuf;

/// A wide CSV of `rows` parts × `features` features (part id, lot, then the features).
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

/// `n` sums of four uniforms from a 64-bit LCG (seed 777), as 10 + (s − 2)·0.01: near-normal,
/// deterministic, and exact in binary, so the same values in Python. The capability
/// benchmark's file holds them written to 5 decimals.
pub fn four_uniform_sums(n: usize) -> Vec<f64> {
    let mut state = 777u64;
    (0..n)
        .map(|_| {
            let mut s = 0.0;
            for _ in 0..4 {
                state = state
                    .wrapping_mul(6364136223846793005)
                    .wrapping_add(1442695040888963407);
                s += (state >> 11) as f64 / (1u64 << 53) as f64;
            }
            10.0 + (s - 2.0) * 0.01
        })
        .collect()
}
