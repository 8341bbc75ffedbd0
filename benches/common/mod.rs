//! Benchmark input files, generated once into the temporary directory.

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
