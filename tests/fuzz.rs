//! Fuzzing without a nightly toolchain: proptest drives byte-level mutations (flips, inserts,
//! deletions, truncations, splices of structural bytes) of seed inputs, and random tables from a
//! grammar of cells, into the data reader (both layouts, the whole study after it), the
//! spec-sheet reader and the stack-file parser. Every input must give Ok or an error, never a
//! panic. Seeds: every file in tests/bad_inputs/ and the shipped sample data.
//!
//! CI runs the default 64 cases per target; a long local run:
//!     FUZZ_CASES=20000 cargo test --release --test fuzz

use capstack::intake::{merge_specs, read_files, read_spec_sheets, ReadOptions, SpecSet};
use capstack::stack::file::parse_stack;
use capstack::study::{study, StudySettings};
use proptest::prelude::*;
use std::path::{Path, PathBuf};

fn seeds() -> Vec<Vec<u8>> {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let mut out = Vec::new();
    for dir in ["tests/bad_inputs", "sample_data"] {
        let mut paths: Vec<PathBuf> = std::fs::read_dir(root.join(dir))
            .unwrap()
            .map(|e| e.unwrap().path())
            .filter(|p| p.extension().is_some_and(|e| e != "rs"))
            .collect();
        paths.sort();
        for p in paths {
            let bytes = std::fs::read(&p).unwrap();
            if bytes.len() < 200_000 {
                out.push(bytes);
            }
        }
    }
    out
}

fn cases() -> u32 {
    std::env::var("FUZZ_CASES")
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(64)
}

#[derive(Debug, Clone)]
enum Mutation {
    Flip(usize, u8),
    Insert(usize, u8),
    Delete(usize, usize),
    Truncate(usize),
    Duplicate(usize, usize),
}

const STRUCTURAL: &[u8] = b",;\t\n\r\"'.-+eE0123456789=[]#\\ \xef\xbb\xbf\xff\x00";

fn mutation() -> impl Strategy<Value = Mutation> {
    prop_oneof![
        (any::<usize>(), any::<u8>()).prop_map(|(i, b)| Mutation::Flip(i, b)),
        (any::<usize>(), prop::sample::select(STRUCTURAL))
            .prop_map(|(i, b)| Mutation::Insert(i, b)),
        (any::<usize>(), 1usize..64).prop_map(|(i, n)| Mutation::Delete(i, n)),
        any::<usize>().prop_map(Mutation::Truncate),
        (any::<usize>(), 1usize..200).prop_map(|(i, n)| Mutation::Duplicate(i, n)),
    ]
}

fn mutate(mut bytes: Vec<u8>, ms: &[Mutation]) -> Vec<u8> {
    for m in ms {
        let len = bytes.len().max(1);
        match *m {
            Mutation::Flip(i, b) if !bytes.is_empty() => bytes[i % len] = b,
            Mutation::Insert(i, b) => bytes.insert(i % (bytes.len() + 1), b),
            Mutation::Delete(i, n) if !bytes.is_empty() => {
                let a = i % len;
                let b = (a + n).min(bytes.len());
                bytes.drain(a..b);
            }
            Mutation::Truncate(i) => bytes.truncate(i % len),
            Mutation::Duplicate(i, n) if !bytes.is_empty() => {
                let a = i % len;
                let b = (a + n).min(bytes.len());
                let piece = bytes[a..b].to_vec();
                bytes.splice(a..a, piece);
            }
            _ => {}
        }
    }
    bytes
}

fn seeded_input() -> impl Strategy<Value = Vec<u8>> {
    let seeds = seeds();
    (0..seeds.len(), prop::collection::vec(mutation(), 0..12))
        .prop_map(move |(s, ms)| mutate(seeds[s].clone(), &ms))
}

/// A random table from a grammar of cells: numbers in both decimal styles, blanks, text,
/// quotes, non-finite words, with a random delimiter and header.
fn grammar_table() -> impl Strategy<Value = Vec<u8>> {
    let cell = prop_oneof![
        (-1e6f64..1e6).prop_map(|v| format!("{v}")),
        (-100.0f64..100.0).prop_map(|v| format!("{v:.3}").replace('.', ",")),
        Just(String::new()),
        Just("n/a".to_string()),
        Just("\"1,5\"".to_string()),
        Just("inf".to_string()),
        Just("\"".to_string()),
        "[a-z]{1,6}".prop_map(|s| s),
    ];
    let delim = prop::sample::select(vec![",", ";", "\t"]);
    (
        delim,
        prop::collection::vec(prop::collection::vec(cell, 1..8), 1..40),
    )
        .prop_map(|(d, rows)| {
            let mut out = String::new();
            for r in rows {
                out.push_str(&r.join(d));
                out.push('\n');
            }
            out.into_bytes()
        })
}

fn read_and_study(bytes: &[u8], name: &str) {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join(name);
    std::fs::write(&path, bytes).unwrap();
    let p = vec![path.display().to_string()];
    if let Ok(data) = read_files(&p, &ReadOptions::default(), &SpecSet::default()) {
        if let Ok(specs) = merge_specs(&SpecSet::default(), &data.embedded_specs) {
            let _ = study(&data, &specs, &StudySettings::default());
        }
    }
    let _ = read_spec_sheets(&p);
}

proptest! {
    #![proptest_config(ProptestConfig { cases: cases(), failure_persistence: None, ..ProptestConfig::default() })]

    #[test]
    fn mutated_files_never_panic_the_reader_or_the_study(bytes in seeded_input()) {
        read_and_study(&bytes, "input.csv");
    }

    #[test]
    fn grammar_tables_never_panic_the_reader_or_the_study(bytes in grammar_table()) {
        read_and_study(&bytes, "table.csv");
    }

    #[test]
    fn mutated_stack_files_never_panic_the_parser(bytes in seeded_input()) {
        let text = String::from_utf8_lossy(&bytes);
        let _ = parse_stack(&text, Path::new("fuzz.toml"));
    }
}
