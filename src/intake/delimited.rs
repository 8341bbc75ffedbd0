//! Delimited text files (CSV, semicolon, tab), read in blocks and parsed in parallel.
//!
//! The file is read a block at a time; each block is cut at record boundaries (a newline
//! outside quotes) into pieces that are parsed on all cores and appended in order, so memory
//! stays near the parsed values and line numbers stay exact.

use super::audit::{FileAudit, RejectedRow, Unused};
use super::cells::{self, parse_cell};
use super::{RawColumn, RawTable};
use crate::error::{InputError, Result};
use rayon::prelude::*;
use std::fs::File;
use std::io::Read;

const BLOCK: usize = 32 << 20;
const BOM: &[u8] = b"\xEF\xBB\xBF";

/// Reads a delimited file. `keep_text` names the columns whose cell text must be kept as
/// written (part ids, forced text columns), not just parsed.
pub(crate) fn read_delimited(path: &str, keep_text: &dyn Fn(&str) -> bool) -> Result<RawTable> {
    let mut file =
        File::open(path).map_err(|e| InputError::new(format!("{path}: cannot open: {e}")))?;
    let mut buf = Vec::with_capacity(BLOCK);
    let mut eof = fill(&mut file, &mut buf, BLOCK, path)?;
    if buf.starts_with(BOM) {
        buf.drain(..BOM.len());
    }
    if buf.iter().all(|b| b.is_ascii_whitespace()) && eof {
        return Err(InputError::new(format!(
            "{path}: the file is empty (a header line is needed)"
        )));
    }
    // The header is the first record; it must be complete in the buffer.
    let header_end = loop {
        if let Some(end) = first_record_end(&buf) {
            break end;
        }
        if eof {
            break buf.len();
        }
        let target = buf.len() + BLOCK;
        eof = fill(&mut file, &mut buf, target, path)?;
    };
    check_utf8(&buf[..header_end], path, 0)?;
    let delimiter = detect_delimiter(&buf[..header_end]);
    let names = parse_header(&buf[..header_end], delimiter, path)?;
    let decimal_comma = delimiter != b',';
    let keep: Vec<bool> = names.iter().map(|n| keep_text(n)).collect();

    let mut table = RawTable {
        columns: names
            .iter()
            .zip(&keep)
            .map(|(n, &k)| RawColumn {
                name: n.clone(),
                numbers: Vec::new(),
                bad: Vec::new(),
                text: k.then(Vec::new),
            })
            .collect(),
        lines: Vec::new(),
        file_audit: FileAudit::new(path, delimiter, decimal_comma),
        rejected: Vec::new(),
        extra_cells: Vec::new(),
    };
    let mut lines_before = count_newlines(&buf[..header_end]) as u64;
    if header_end == buf.len() && !buf.ends_with(b"\n") {
        lines_before = 1;
    }
    buf.drain(..header_end);

    let ctx = ParseContext {
        path,
        delimiter,
        decimal_comma,
        names: &names,
        keep: &keep,
    };
    loop {
        let cut = if eof {
            Some(buf.len())
        } else {
            last_record_end(&buf)
        };
        let Some(cut) = cut else {
            // One record longer than the buffer: read on until it ends.
            let target = buf.len() + BLOCK;
            eof = fill(&mut file, &mut buf, target, path)?;
            continue;
        };
        parse_block(&buf[..cut], lines_before, &ctx, &mut table)?;
        lines_before += count_newlines(&buf[..cut]) as u64;
        buf.drain(..cut);
        if eof {
            break;
        }
        let target = BLOCK.max(buf.len() + BLOCK / 2);
        eof = fill(&mut file, &mut buf, target, path)?;
    }
    if table.lines.is_empty() {
        return Err(InputError::new(format!(
            "{path}: the file has a header but no data rows"
        )));
    }
    Ok(table)
}

struct ParseContext<'a> {
    path: &'a str,
    delimiter: u8,
    decimal_comma: bool,
    names: &'a [String],
    keep: &'a [bool],
}

/// Reads until `buf` holds `target` bytes or the file ends; true at end of file.
fn fill(file: &mut File, buf: &mut Vec<u8>, target: usize, path: &str) -> Result<bool> {
    while buf.len() < target {
        let start = buf.len();
        buf.resize(target, 0);
        let n = file
            .read(&mut buf[start..])
            .map_err(|e| InputError::new(format!("{path}: read error: {e}")))?;
        buf.truncate(start + n);
        if n == 0 {
            return Ok(true);
        }
    }
    Ok(false)
}

fn count_newlines(s: &[u8]) -> usize {
    memchr::memchr_iter(b'\n', s).count()
}

/// End (one past the newline) of the first record, if a newline outside quotes exists.
fn first_record_end(s: &[u8]) -> Option<usize> {
    let mut in_quotes = false;
    for i in memchr::memchr2_iter(b'"', b'\n', s) {
        if s[i] == b'"' {
            in_quotes = !in_quotes;
        } else if !in_quotes {
            return Some(i + 1);
        }
    }
    None
}

/// End of the last complete record in `s` (which starts at a record boundary).
fn last_record_end(s: &[u8]) -> Option<usize> {
    if memchr::memchr(b'"', s).is_none() {
        return memchr::memrchr(b'\n', s).map(|i| i + 1);
    }
    let mut in_quotes = false;
    let mut last = None;
    for i in memchr::memchr2_iter(b'"', b'\n', s) {
        if s[i] == b'"' {
            in_quotes = !in_quotes;
        } else if !in_quotes {
            last = Some(i + 1);
        }
    }
    last
}

/// Cuts `s` into about `pieces` parts at record boundaries.
fn split_records(s: &[u8], pieces: usize) -> Vec<&[u8]> {
    if pieces <= 1 || s.len() < 1 << 16 {
        return vec![s];
    }
    let target = s.len() / pieces;
    let mut cuts = Vec::with_capacity(pieces + 1);
    cuts.push(0);
    if memchr::memchr(b'"', s).is_none() {
        let mut next = target;
        while next < s.len() {
            match memchr::memchr(b'\n', &s[next..]) {
                Some(i) => {
                    cuts.push(next + i + 1);
                    next = next + i + 1 + target;
                }
                None => break,
            }
        }
    } else {
        let mut in_quotes = false;
        let mut next = target;
        for i in memchr::memchr2_iter(b'"', b'\n', s) {
            if s[i] == b'"' {
                in_quotes = !in_quotes;
            } else if !in_quotes && i >= next {
                cuts.push(i + 1);
                next = i + 1 + target;
            }
        }
    }
    if *cuts.last().unwrap() != s.len() {
        cuts.push(s.len());
    }
    cuts.windows(2)
        .map(|w| &s[w[0]..w[1]])
        .filter(|c| !c.is_empty())
        .collect()
}

/// The delimiter that occurs most often in the header outside quotes; `,` on a tie.
fn detect_delimiter(header: &[u8]) -> u8 {
    let (mut comma, mut semi, mut tab) = (0, 0, 0);
    let mut in_quotes = false;
    for &b in header {
        match b {
            b'"' => in_quotes = !in_quotes,
            b',' if !in_quotes => comma += 1,
            b';' if !in_quotes => semi += 1,
            b'\t' if !in_quotes => tab += 1,
            _ => {}
        }
    }
    if semi > comma && semi >= tab {
        b';'
    } else if tab > comma && tab > semi {
        b'\t'
    } else {
        b','
    }
}

fn reader(s: &[u8], delimiter: u8) -> csv::Reader<&[u8]> {
    csv::ReaderBuilder::new()
        .has_headers(false)
        .flexible(true)
        .delimiter(delimiter)
        .from_reader(s)
}

fn parse_header(s: &[u8], delimiter: u8, path: &str) -> Result<Vec<String>> {
    let mut rdr = reader(s, delimiter);
    let mut rec = csv::StringRecord::new();
    let got = rdr
        .read_record(&mut rec)
        .map_err(|e| InputError::at(path, Some(1), None, format!("cannot read the header: {e}")))?;
    if !got {
        return Err(InputError::at(path, Some(1), None, "no header line"));
    }
    let mut names: Vec<String> = rec.iter().map(|n| n.trim().to_string()).collect();
    // Spreadsheet exports often end every line with delimiters: drop empty trailing names.
    while names.last().is_some_and(|n| n.is_empty()) {
        names.pop();
    }
    if names.is_empty() {
        return Err(InputError::at(
            path,
            Some(1),
            None,
            "the header line is empty",
        ));
    }
    for (i, n) in names.iter_mut().enumerate() {
        if n.is_empty() {
            *n = format!("column {}", i + 1);
        }
    }
    for (i, n) in names.iter().enumerate() {
        if let Some(j) = names[..i].iter().position(|m| m == n) {
            return Err(InputError::at(
                path,
                Some(1),
                Some(n),
                format!(
                    "the header names this column twice (columns {} and {}); rename one",
                    j + 1,
                    i + 1
                ),
            ));
        }
    }
    Ok(names)
}

fn check_utf8(s: &[u8], path: &str, lines_before: u64) -> Result<()> {
    if let Err(e) = std::str::from_utf8(s) {
        let pos = e.valid_up_to();
        let line = lines_before + count_newlines(&s[..pos]) as u64 + 1;
        return Err(InputError::at(
            path,
            Some(line),
            None,
            format!(
                "not valid UTF-8 (byte offset {} of that line); save the file as UTF-8",
                pos - s[..pos]
                    .iter()
                    .rposition(|&b| b == b'\n')
                    .map_or(0, |p| p + 1)
            ),
        ));
    }
    Ok(())
}

/// What one piece of a block yields, rows numbered from 0 within the piece.
#[derive(Default)]
struct Piece {
    lines: Vec<u64>,
    numbers: Vec<Vec<f64>>,
    bad: Vec<Vec<(usize, String, &'static str)>>,
    text: Vec<Vec<String>>,
    blank_rows: Vec<u64>,
    extra: Vec<Unused>,
    decimal_comma_used: bool,
}

fn parse_block(
    block: &[u8],
    lines_before: u64,
    ctx: &ParseContext,
    table: &mut RawTable,
) -> Result<()> {
    let pieces = split_records(block, rayon::current_num_threads() * 2);
    let mut offsets = Vec::with_capacity(pieces.len());
    let mut acc = lines_before;
    for p in &pieces {
        offsets.push(acc);
        acc += count_newlines(p) as u64;
    }
    let results: Vec<Result<Piece>> = pieces
        .par_iter()
        .zip(offsets.par_iter())
        .map(|(p, &before)| parse_piece(p, before, ctx))
        .collect();
    for r in results {
        let mut piece = r?;
        let base = table.lines.len();
        table.lines.extend_from_slice(&piece.lines);
        // Moved, not copied: a text column holds a string per row.
        let bads = std::mem::take(&mut piece.bad);
        let texts = std::mem::take(&mut piece.text);
        for (((col, numbers), bad), text) in table
            .columns
            .iter_mut()
            .zip(&piece.numbers)
            .zip(bads)
            .zip(texts)
        {
            col.numbers.extend_from_slice(numbers);
            col.bad
                .extend(bad.into_iter().map(|(r, t, why)| (r + base, t, why)));
            if let Some(t) = &mut col.text {
                t.extend(text);
            }
        }
        for line in piece.blank_rows {
            table.rejected.push(RejectedRow {
                file: ctx.path.to_string(),
                line,
                reason: "blank row".into(),
            });
            table.file_audit.blank_rows += 1;
        }
        table.extra_cells.extend(piece.extra);
        table.file_audit.decimal_comma_used |= piece.decimal_comma_used;
    }
    Ok(())
}

fn parse_piece(s: &[u8], lines_before: u64, ctx: &ParseContext) -> Result<Piece> {
    check_utf8(s, ctx.path, lines_before)?;
    let ncol = ctx.names.len();
    let mut piece = Piece {
        numbers: vec![Vec::new(); ncol],
        bad: vec![Vec::new(); ncol],
        text: vec![Vec::new(); ncol],
        ..Default::default()
    };
    let mut rdr = reader(s, ctx.delimiter);
    let mut rec = csv::ByteRecord::new();
    loop {
        let more = rdr.read_byte_record(&mut rec).map_err(|e| {
            let line = e.position().map(|p| lines_before + p.line());
            InputError::at(ctx.path, line, None, format!("cannot read the row: {e}"))
        })?;
        if !more {
            break;
        }
        let line = lines_before + rec.position().map_or(1, |p| p.line());
        if rec.iter().all(|c| cells::trim(c).is_empty()) {
            piece.blank_rows.push(line);
            continue;
        }
        let row = piece.lines.len();
        piece.lines.push(line);
        for c in 0..ncol {
            let cell = rec.get(c).unwrap_or(b"");
            if ctx.keep[c] {
                piece.text[c].push(String::from_utf8_lossy(cells::trim(cell)).into_owned());
            }
            match parse_cell(cell, ctx.decimal_comma) {
                Ok(v) => {
                    if ctx.decimal_comma && cell.contains(&b',') {
                        piece.decimal_comma_used = true;
                    }
                    piece.numbers[c].push(v);
                }
                Err(reason) => {
                    piece.numbers[c].push(f64::NAN);
                    let text = if rec.get(c).is_none() {
                        String::new()
                    } else {
                        String::from_utf8_lossy(cells::trim(cell)).into_owned()
                    };
                    piece.bad[c].push((row, text, reason));
                }
            }
        }
        for c in ncol..rec.len() {
            let cell = cells::trim(&rec[c]);
            if !cell.is_empty() {
                piece.extra.push(Unused {
                    file: ctx.path.to_string(),
                    line,
                    column: format!("column {} (beyond the header)", c + 1),
                    text: String::from_utf8_lossy(cell).into_owned(),
                    reason: "extra cell".into(),
                });
            }
        }
    }
    Ok(piece)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn detects_the_delimiter_outside_quotes() {
        assert_eq!(detect_delimiter(b"a;b;c\n"), b';');
        assert_eq!(detect_delimiter(b"\"x,y\";b;c\n"), b';');
        assert_eq!(detect_delimiter(b"a\tb\n"), b'\t');
        assert_eq!(detect_delimiter(b"a,b\n"), b',');
        assert_eq!(detect_delimiter(b"single\n"), b',');
    }

    #[test]
    fn splits_only_at_newlines_outside_quotes() {
        let mut s = Vec::new();
        for i in 0..20000 {
            s.extend_from_slice(format!("{i},\"a\nb\",3\n").as_bytes());
        }
        let pieces = split_records(&s, 4);
        assert!(pieces.len() > 1);
        for p in &pieces {
            assert_eq!(memchr::memchr_iter(b'"', p).count() % 2, 0);
        }
        assert_eq!(pieces.iter().map(|p| p.len()).sum::<usize>(), s.len());
    }
}
