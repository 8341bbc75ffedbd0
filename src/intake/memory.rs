//! Whether a file's values can be held, checked early (a delimited file after its first
//! block, a Parquet file from its footer), so a file too large for the machine is refused
//! with a message instead of exhausting it.

use crate::error::{InputError, Result};

/// Refuses a file whose values cannot be held: `rows` × `columns` cells of `bytes_per_cell`
/// against the memory available (`CAPSTACK_MEMORY_LIMIT` in bytes, else the system's
/// available memory).
pub(super) fn check(path: &str, rows: usize, columns: usize, bytes_per_cell: f64) -> Result<()> {
    let Some(have) = available() else {
        return Ok(());
    };
    let need = rows as f64 * columns as f64 * bytes_per_cell;
    if need > have as f64 {
        let gib = |b: f64| b / (1u64 << 30) as f64;
        return Err(InputError::new(format!(
            "{path}: about {rows} rows × {columns} columns need about {:.1} GiB to hold, but {:.1} GiB of memory is available; split the file, or read only the needed columns into a smaller file",
            gib(need),
            gib(have as f64)
        )));
    }
    Ok(())
}

/// `CAPSTACK_MEMORY_LIMIT` (bytes) when set, else `MemAvailable` of /proc/meminfo (Linux).
fn available() -> Option<u64> {
    if let Some(limit) = std::env::var("CAPSTACK_MEMORY_LIMIT")
        .ok()
        .and_then(|v| v.trim().parse::<u64>().ok())
    {
        return Some(limit);
    }
    let info = std::fs::read_to_string("/proc/meminfo").ok()?;
    let line = info.lines().find(|l| l.starts_with("MemAvailable:"))?;
    let kib: u64 = line.split_whitespace().nth(1)?.parse().ok()?;
    Some(kib * 1024)
}
