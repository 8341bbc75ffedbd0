//! The catalogue of malformed inputs in tests/bad_inputs/cases.txt: each gives its exit code
//! and names the file and, where it applies, the line, column or key (on the first line of
//! stderr for exit 2; listed in the JSON audit for usable data, exit 0); none panics.

use assert_cmd::Command;
use std::path::Path;

#[test]
fn every_bad_input_gets_its_message_and_none_panics() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/bad_inputs");
    let cases = std::fs::read_to_string(dir.join("cases.txt")).unwrap();
    let mut failures = Vec::new();
    let mut count = 0;
    for line in cases
        .lines()
        .filter(|l| !l.starts_with('#') && !l.trim().is_empty())
    {
        let parts: Vec<&str> = line.split(" | ").collect();
        assert_eq!(parts.len(), 4, "malformed case line: {line}");
        let (name, args, code, texts) = (parts[0], parts[1], parts[2], parts[3]);
        count += 1;
        let out = Command::cargo_bin("capstack")
            .unwrap()
            .current_dir(&dir)
            .args(args.split_whitespace())
            .output()
            .unwrap();
        let stderr = String::from_utf8_lossy(&out.stderr);
        let stdout = String::from_utf8_lossy(&out.stdout);
        let compact: String = stdout.split_whitespace().collect();
        let want: i32 = code.trim().parse().unwrap();
        if stderr.contains("panicked") {
            failures.push(format!("{name}: panicked: {stderr}"));
            continue;
        }
        if out.status.code() != Some(want) {
            failures.push(format!(
                "{name}: exit {:?}, wanted {want}: {stderr}",
                out.status.code()
            ));
            continue;
        }
        // A bad input is said on the first line of stderr (usage errors add the usage after it).
        let first = stderr.lines().next().unwrap_or("").to_string();
        let haystack = if want == 2 { first } else { compact };
        for t in texts.split(";;") {
            let t = t.trim();
            let t = if want == 2 {
                t.to_string()
            } else {
                t.split_whitespace().collect()
            };
            if !haystack.contains(&t) {
                failures.push(format!(
                    "{name}: output lacks {t:?}: {}",
                    &haystack[..haystack.len().min(400)]
                ));
            }
        }
    }
    assert!(count >= 40, "{count} cases");
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}
