//! Writes the sample scenario into `sample_data/` (deterministic; see `src/sample.rs`).
//! `cargo run --release --example generate_sample_data`

fn main() -> std::io::Result<()> {
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("sample_data");
    for p in capstack::sample::write_scenario(&dir)? {
        println!("wrote {}", p.display());
    }
    Ok(())
}
