//! Delimited text files (CSV, semicolon, tab), read in blocks and parsed in parallel.
//!
//! The file is read a block at a time; each block is cut at record boundaries (a newline
//! outside quotes) into pieces that are parsed on all cores and appended in order, so memory
//! stays near the parsed values and line numbers stay exact.

use super::audit::{FileAudit, RejectedRow, Unused};
use super::cells::{self, parse_cell};
use super::text::{Dictionary, Strings};
use super::{BadCell, RawColumn, RawTable, KEPT_TEXT};
use crate::error::{InputError, Result};
use rayon::prelude::*;
use std::fs::File;
use std::io::Read;

/// Bytes read at a time (two such buffers are alive: one parsed while the next is read).
const BLOCK: usize = 8 << 20;
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
                bad_texts: Dictionary::default(),
                text: k.then(Strings::default),
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
    let file_len = file.metadata().map_or(0, |m| m.len());
    let mut reserved = false;
    // The next block is read while this one is parsed.
    let mut next: Vec<u8> = Vec::with_capacity(BLOCK);
    let mut quoted = has_quote(&buf);
    loop {
        let cut = if eof {
            Some(buf.len())
        } else {
            last_record_end(&buf, quoted)
        };
        let Some(cut) = cut else {
            // One record longer than the buffer: read on until it ends.
            let target = buf.len() + BLOCK;
            eof = fill(&mut file, &mut buf, target, path)?;
            quoted = has_quote(&buf);
            continue;
        };
        let (block, tail) = buf.split_at(cut);
        next.clear();
        next.extend_from_slice(tail);
        let target = BLOCK.max(next.len() + BLOCK / 2);
        let (parsed, read) = if eof {
            (
                parse_block(block, quoted, lines_before, &ctx, &mut table),
                Ok((true, false)),
            )
        } else {
            // The reading side also looks for quotes in the next block, off the main path.
            rayon::join(
                || parse_block(block, quoted, lines_before, &ctx, &mut table),
                || fill(&mut file, &mut next, target, path).map(|eof| (eof, has_quote(&next))),
            )
        };
        lines_before += parsed?;
        if !reserved {
            // Room for the whole file's rows, estimated from this first block, so the
            // columns are not copied as they grow; or a clear refusal when they cannot fit.
            reserved = true;
            let per_byte = table.lines.len() as f64 / cut.max(1) as f64;
            let rows = (per_byte * file_len as f64 * 1.02) as usize;
            super::memory::check(path, rows, names.len(), BYTES_PER_CELL)?;
            let more = rows.saturating_sub(table.lines.len());
            table.lines.reserve(more);
            for col in &mut table.columns {
                col.numbers.reserve(more);
            }
        }
        if eof {
            break;
        }
        (eof, quoted) = read?;
        std::mem::swap(&mut buf, &mut next);
    }
    if table.lines.is_empty() {
        return Err(InputError::new(format!(
            "{path}: the file has a header but no data rows"
        )));
    }
    Ok(table)
}

/// Bytes held per row and column while a file is read: the number, plus room for the line
/// numbers, ids and text codes (measured on the intake benchmark: 1.6× the values).
pub(super) const BYTES_PER_CELL: f64 = 8.0 * 1.7;

struct ParseContext<'a> {
    path: &'a str,
    delimiter: u8,
    decimal_comma: bool,
    names: &'a [String],
    keep: &'a [bool],
}

/// Reads until `buf` holds `target` bytes or the file ends; true at end of file. The spare
/// room is filled as read, without zeroing it first.
fn fill(file: &mut File, buf: &mut Vec<u8>, target: usize, path: &str) -> Result<bool> {
    let want = target.saturating_sub(buf.len());
    buf.reserve(want);
    let got = file
        .take(want as u64)
        .read_to_end(buf)
        .map_err(|e| InputError::new(format!("{path}: read error: {e}")))?;
    Ok(got < want)
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

/// End of the last complete record in `s` (which starts at a record boundary); `quoted`
/// when `s` holds a quote character.
fn last_record_end(s: &[u8], quoted: bool) -> Option<usize> {
    if !quoted {
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

/// Cuts `s` into about `pieces` parts at record boundaries; `quoted` when `s` holds a quote.
fn split_records(s: &[u8], pieces: usize, quoted: bool) -> Vec<&[u8]> {
    if pieces <= 1 || s.len() < 1 << 16 {
        return vec![s];
    }
    let target = s.len() / pieces;
    let mut cuts = Vec::with_capacity(pieces + 1);
    cuts.push(0);
    if !quoted {
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

/// What one piece of a block yields. Numbers and lines are written straight into the piece's
/// share of the table's columns (no copy afterwards); rows are numbered from 0 in the piece.
struct Piece<'a> {
    /// Rows written so far.
    rows: usize,
    lines: &'a mut [u64],
    numbers: Vec<&'a mut [f64]>,
    columns: Vec<PieceText>,
    blank_rows: Vec<u64>,
    extra: Vec<Unused>,
    decimal_comma_used: bool,
}

/// The cells of one column of a piece that were not numbers, and kept texts.
#[derive(Default, Clone)]
struct PieceText {
    bad: Vec<BadCell>,
    /// Texts of the bad cells, by the codes in `bad`.
    bad_texts: Dictionary,
    text: Strings,
}

impl<'a> Piece<'a> {
    /// A piece writing its rows into `lines` and `numbers` (one slice per column, each as long
    /// as the most records the piece can hold).
    fn new(lines: &'a mut [u64], numbers: Vec<&'a mut [f64]>) -> Self {
        let ncol = numbers.len();
        Self {
            rows: 0,
            lines,
            numbers,
            columns: vec![PieceText::default(); ncol],
            blank_rows: Vec::new(),
            extra: Vec::new(),
            decimal_comma_used: false,
        }
    }

    /// Starts a data row at physical line `line`; its index in the piece.
    fn start_row(&mut self, line: u64) -> usize {
        let row = self.rows;
        self.lines[row] = line;
        self.rows += 1;
        row
    }

    /// One record's cells, read from physical line `line`.
    fn record(&mut self, cells: &[&[u8]], line: u64, ctx: &ParseContext) {
        if cells.iter().all(|c| cells::trim(c).is_empty()) {
            self.blank_rows.push(line);
            return;
        }
        let row = self.start_row(line);
        for c in 0..ctx.names.len() {
            self.cell(c, row, cells.get(c).copied().unwrap_or(b""), ctx);
        }
        for (c, raw) in cells.iter().enumerate().skip(ctx.names.len()) {
            self.extra_cell(c, raw, line, ctx);
        }
    }

    /// One cell of column `c` in piece row `row`, as written.
    fn cell(&mut self, c: usize, row: usize, raw: &[u8], ctx: &ParseContext) {
        let cell = cells::trim(raw);
        let col = &mut self.columns[c];
        if ctx.keep[c] {
            col.text.push(std::str::from_utf8(cell).unwrap_or_default());
        }
        match parse_cell(cell, ctx.decimal_comma) {
            Ok(v) => {
                self.note_decimal_comma(cell, ctx);
                self.numbers[c][row] = v;
            }
            Err(reason) => {
                self.numbers[c][row] = f64::NAN;
                // A kept column has the text already; others share one copy per text.
                let text = if ctx.keep[c] {
                    KEPT_TEXT
                } else {
                    col.bad_texts.code_bytes(cell)
                };
                col.bad.push(BadCell::new(row, text, reason));
            }
        }
    }

    /// Notes a decimal comma in `cell`, a number just read (once one is seen, no more looking).
    #[inline(always)]
    fn note_decimal_comma(&mut self, cell: &[u8], ctx: &ParseContext) {
        if ctx.decimal_comma && !self.decimal_comma_used && cell.contains(&b',') {
            self.decimal_comma_used = true;
        }
    }

    /// A non-blank cell beyond the header's columns: listed, not used.
    fn extra_cell(&mut self, c: usize, raw: &[u8], line: u64, ctx: &ParseContext) {
        let cell = cells::trim(raw);
        if !cell.is_empty() {
            self.extra.push(Unused {
                file: ctx.path.to_string(),
                line,
                column: format!("column {} (beyond the header)", c + 1),
                text: String::from_utf8_lossy(cell).into_owned(),
                reason: "extra cell".into(),
            });
        }
    }
}

/// What is left of a piece once its numbers are in the table.
struct PieceRest {
    rows: usize,
    columns: Vec<PieceText>,
    blank_rows: Vec<u64>,
    extra: Vec<Unused>,
    decimal_comma_used: bool,
}

/// Whether `s` holds a quote character (then records are cut and parsed by the csv rules).
fn has_quote(s: &[u8]) -> bool {
    memchr::memchr(b'"', s).is_some()
}

/// What a piece holds before it is parsed.
struct PieceCount {
    newlines: u64,
    /// The most records it can hold: one per newline, per carriage return not followed by a
    /// newline (the csv reader ends a record there too), and one for an unterminated last line.
    capacity: usize,
    /// No quote characters, and every carriage return ends a line (CRLF): records are lines.
    plain: bool,
}

/// Counts a piece; `quoted` when its block holds a quote character somewhere.
fn count_piece(s: &[u8], quoted: bool) -> PieceCount {
    let newlines = count_newlines(s);
    let lone_cr = memchr::memchr_iter(b'\r', s)
        .filter(|&i| s.get(i + 1) != Some(&b'\n'))
        .count();
    let last = usize::from(!s.is_empty() && !s.ends_with(b"\n"));
    PieceCount {
        newlines: newlines as u64,
        capacity: newlines + lone_cr + last,
        plain: lone_cr == 0 && !(quoted && has_quote(s)),
    }
}

/// Parses a block of whole records on all cores and appends it to the table; returns the
/// block's newlines. Each piece writes into its own stretch of every column; stretches left
/// short (blank rows, multi-line records) are closed up afterwards.
fn parse_block(
    block: &[u8],
    quoted: bool,
    lines_before: u64,
    ctx: &ParseContext,
    table: &mut RawTable,
) -> Result<u64> {
    let pieces = split_records(block, rayon::current_num_threads() * 2, quoted);
    let counts: Vec<PieceCount> = pieces.par_iter().map(|p| count_piece(p, quoted)).collect();
    let mut offsets = Vec::with_capacity(pieces.len());
    let mut acc = lines_before;
    for c in &counts {
        offsets.push(acc);
        acc += c.newlines;
    }
    let base = table.lines.len();
    let capacity: usize = counts.iter().map(|c| c.capacity).sum();
    // Columns grow in parallel: the first touch of fresh memory costs as much as the writes.
    table.lines.resize(base + capacity, 0);
    table
        .columns
        .par_iter_mut()
        .for_each(|col| col.numbers.resize(base + capacity, f64::NAN));
    // Every piece's stretch of the lines and of each column.
    let mut line_parts = Vec::with_capacity(pieces.len());
    let mut rest = &mut table.lines[base..];
    for c in &counts {
        let (part, tail) = rest.split_at_mut(c.capacity);
        line_parts.push(part);
        rest = tail;
    }
    let mut number_parts: Vec<Vec<&mut [f64]>> = (0..pieces.len()).map(|_| Vec::new()).collect();
    for col in &mut table.columns {
        let mut rest = &mut col.numbers[base..];
        for (i, c) in counts.iter().enumerate() {
            let (part, tail) = rest.split_at_mut(c.capacity);
            number_parts[i].push(part);
            rest = tail;
        }
    }
    let results: Vec<Result<PieceRest>> = pieces
        .par_iter()
        .zip(&counts)
        .zip(offsets)
        .zip(line_parts.into_par_iter().zip(number_parts))
        .map(|(((p, count), before), (lines, numbers))| {
            parse_piece(p, count.plain, before, Piece::new(lines, numbers), ctx)
        })
        .collect();
    let mut rests = Vec::with_capacity(results.len());
    for r in results {
        rests.push(r?);
    }
    // Close up the stretches the pieces did not fill, keeping each piece's first row.
    let mut firsts = Vec::with_capacity(rests.len());
    let (mut from, mut to) = (base, base);
    for (rest, count) in rests.iter().zip(&counts) {
        if from != to {
            table.lines.copy_within(from..from + rest.rows, to);
            for col in &mut table.columns {
                col.numbers.copy_within(from..from + rest.rows, to);
            }
        }
        firsts.push(to);
        to += rest.rows;
        from += count.capacity;
    }
    table.lines.truncate(to);
    for col in &mut table.columns {
        col.numbers.truncate(to);
    }
    // Each column gathers its bad cells and texts from every piece, columns in parallel.
    let mut per_column: Vec<Vec<PieceText>> = vec![Vec::new(); ctx.names.len()];
    for rest in &mut rests {
        for (c, col) in std::mem::take(&mut rest.columns).into_iter().enumerate() {
            per_column[c].push(col);
        }
    }
    table
        .columns
        .par_iter_mut()
        .zip(per_column)
        .for_each(|(col, parts)| {
            for (part, &first) in parts.into_iter().zip(&firsts) {
                append_part(col, part, first);
            }
        });
    for rest in rests {
        for line in rest.blank_rows {
            table.rejected.push(RejectedRow {
                file: ctx.path.to_string(),
                line,
                reason: "blank row".into(),
            });
            table.file_audit.blank_rows += 1;
        }
        table.extra_cells.extend(rest.extra);
        table.file_audit.decimal_comma_used |= rest.decimal_comma_used;
    }
    Ok(acc - lines_before)
}

/// Appends a piece's bad cells and texts, its first row being the table's row `first`.
fn append_part(col: &mut RawColumn, part: PieceText, first: usize) {
    // The piece's text codes into the column's.
    let codes: Vec<u32> = part
        .bad_texts
        .levels
        .iter()
        .map(|t| col.bad_texts.code(t))
        .collect();
    col.bad.extend(part.bad.into_iter().map(|b| {
        let text = if b.text == KEPT_TEXT {
            KEPT_TEXT
        } else {
            codes[b.text as usize]
        };
        b.shifted(first, text)
    }));
    if let Some(t) = &mut col.text {
        t.append(part.text);
    }
}

/// Parses one piece (whole records): by plain splitting when it is `plain` (see
/// [`PieceCount`]), else with the csv reader. Both give the physical line of each record and
/// skip empty lines, as the csv reader does.
fn parse_piece(
    s: &[u8],
    plain: bool,
    lines_before: u64,
    mut piece: Piece,
    ctx: &ParseContext,
) -> Result<PieceRest> {
    if plain {
        // The plain parse sees every byte: the text needs checking only when one is not ASCII.
        if parse_plain(s, lines_before, ctx, &mut piece) {
            check_utf8(s, ctx.path, lines_before)?;
        }
    } else {
        check_utf8(s, ctx.path, lines_before)?;
        parse_quoted(s, lines_before, ctx, &mut piece)?;
    }
    Ok(PieceRest {
        rows: piece.rows,
        columns: piece.columns,
        blank_rows: piece.blank_rows,
        extra: piece.extra,
        decimal_comma_used: piece.decimal_comma_used,
    })
}

/// Records are lines, cells are split at the delimiter: the common export, parsed without
/// the csv state machine. Each line's cell ends are found 16 bytes at a time, then a plain
/// decimal is read from its cell ([`plain_decimal`]); any other cell (text, blanks, spaces,
/// decimal commas, exponents) goes through [`Piece::cell`].
/// Returns whether a byte above 0x7F was seen.
fn parse_plain(s: &[u8], lines_before: u64, ctx: &ParseContext, piece: &mut Piece) -> bool {
    #[cfg(target_arch = "x86_64")]
    if std::is_x86_feature_detected!("avx2")
        && std::is_x86_feature_detected!("bmi1")
        && std::is_x86_feature_detected!("popcnt")
    {
        // SAFETY: the CPU has the features the function is compiled for, checked above.
        return unsafe { parse_plain_avx2(s, lines_before, ctx, piece) };
    }
    parse_plain_with::<false>(s, lines_before, ctx, piece)
}

/// [`parse_plain_with`] compiled for AVX2 processors (wider compares, single-instruction bit
/// counts, four cells read at once by [`four_short_decimals`]): the same values.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2,bmi1,popcnt")]
fn parse_plain_avx2(s: &[u8], lines_before: u64, ctx: &ParseContext, piece: &mut Piece) -> bool {
    parse_plain_with::<true>(s, lines_before, ctx, piece)
}

/// `WIDE`: the build for AVX2 processors.
#[inline(always)]
fn parse_plain_with<const WIDE: bool>(
    s: &[u8],
    lines_before: u64,
    ctx: &ParseContext,
    piece: &mut Piece,
) -> bool {
    let ncol = ctx.names.len();
    let delimiter = ctx.delimiter;
    // Columns that start four numeric ones (not the first: its start is not after an end).
    let four_numeric: Vec<bool> = (0..ncol)
        .map(|c| c >= 1 && c + 4 <= ncol && !ctx.keep[c..c + 4].contains(&true))
        .collect();
    let mut line = lines_before;
    let mut ends = Vec::new();
    let mut non_ascii = false;
    let mut start = 0;
    while start < s.len() {
        line += 1;
        let rec_start = start;
        let (cells, end) = record_cells(s, start, delimiter, &mut ends, &mut non_ascii);
        start = end + 1;
        let mut rec = &s[rec_start..end];
        if let Some(r) = rec.strip_suffix(b"\r") {
            rec = r;
            ends[cells - 1] -= 1;
        }
        if rec.is_empty() {
            continue;
        }
        // A blank row (only delimiters and spaces) starts with one of them; check only then.
        if (rec[0] == delimiter || rec[0].is_ascii_whitespace())
            && rec
                .iter()
                .all(|&b| b == delimiter || b.is_ascii_whitespace())
        {
            piece.blank_rows.push(line);
            continue;
        }
        let row = piece.start_row(line);
        let cell_at = |c: usize| (if c == 0 { 0 } else { ends[c - 1] + 1 }, ends[c]);
        let mut c = 0;
        while c < cells {
            #[cfg(target_arch = "x86_64")]
            if WIDE && c + 4 <= cells && four_numeric.get(c) == Some(&true) {
                let window: &[usize; 5] = ends[c - 1..c + 4].try_into().expect("five ends");
                // SAFETY: `WIDE` only in the AVX2 build, run once the processor has AVX2.
                let (read, values) =
                    unsafe { four_short_decimals(s, rec_start, window, ctx.decimal_comma) };
                for (k, v) in values.into_iter().enumerate() {
                    if read & (1 << k) != 0 {
                        piece.numbers[c + k][row] = v;
                        if ctx.decimal_comma && !piece.decimal_comma_used {
                            let (from, to) = cell_at(c + k);
                            piece.note_decimal_comma(&s[rec_start + from..rec_start + to], ctx);
                        }
                    } else {
                        let (from, to) = cell_at(c + k);
                        plain_cell(piece, ctx, s, rec_start, c + k, from, to, line, row);
                    }
                }
                c += 4;
                continue;
            }
            let (from, to) = cell_at(c);
            plain_cell(piece, ctx, s, rec_start, c, from, to, line, row);
            c += 1;
        }
        for missing in cells..ncol {
            piece.cell(missing, row, b"", ctx);
        }
    }
    non_ascii
}

/// Cell `c` of the record at `rec_start` (bytes `from..to` of it) in piece row `row`: a plain
/// decimal read at once, any other cell by [`Piece::cell`], a cell beyond the header listed.
#[inline(always)]
#[allow(clippy::too_many_arguments)]
fn plain_cell(
    piece: &mut Piece,
    ctx: &ParseContext,
    s: &[u8],
    rec_start: usize,
    c: usize,
    from: usize,
    to: usize,
    line: u64,
    row: usize,
) {
    let cell = &s[rec_start + from..rec_start + to];
    if c >= ctx.names.len() {
        piece.extra_cell(c, cell, line, ctx);
    } else if ctx.keep[c] {
        piece.cell(c, row, cell, ctx);
    } else {
        match plain_decimal(s, rec_start + from, rec_start + to, ctx.decimal_comma) {
            Some(v) => {
                piece.numbers[c][row] = v;
                piece.note_decimal_comma(cell, ctx);
            }
            None => piece.cell(c, row, cell, ctx),
        }
    }
}

/// [`short_decimal`] of four neighbouring cells at once, in the four lanes of AVX2 registers:
/// cell k is `from..to` with `from = rec_start + ends[k] + 1`, `to = rec_start + ends[k + 1]`
/// (as [`record_cells`] gives them); with `comma` the point may be a comma. Returns which of
/// the four read (bit k) and their values. The same steps as [`short_decimal`]; the division
/// is a vector one, also correctly rounded.
#[cfg(target_arch = "x86_64")]
#[target_feature(enable = "avx2")]
fn four_short_decimals(
    s: &[u8],
    rec_start: usize,
    ends: &[usize; 5],
    comma: bool,
) -> (u32, [f64; 4]) {
    use std::arch::x86_64::*;
    const ONES: i64 = 0x0101_0101_0101_0101;
    let ones = |b: i64| _mm256_set1_epi64x(b.wrapping_mul(ONES));
    let at = |k: usize| (rec_start + ends[k]) as i64;
    let from = _mm256_setr_epi64x(at(0) + 1, at(1) + 1, at(2) + 1, at(3) + 1);
    let to = _mm256_setr_epi64x(at(1), at(2), at(3), at(4));
    let len = _mm256_sub_epi64(to, from);
    let all = _mm256_set1_epi64x(-1);
    let zero = _mm256_setzero_si256();
    let gt = |a, b: i64| _mm256_cmpgt_epi64(a, _mm256_set1_epi64x(b));
    // 1 ≤ len ≤ 8, and eight bytes of `s` end at `to` (cells end within `s`).
    let len_ok = _mm256_andnot_si256(gt(len, 8), gt(len, 0));
    let room = gt(to, 7);
    // SAFETY: only lanes with to ≥ 8 are loaded: the eight bytes before `to` ≤ s.len().
    let word = unsafe {
        _mm256_mask_i64gather_epi64::<1>(
            zero,
            s.as_ptr().cast(),
            _mm256_sub_epi64(to, _mm256_set1_epi64x(8)),
            room,
        )
    };
    let bytes_from_top = |n| _mm256_slli_epi64::<3>(_mm256_sub_epi64(_mm256_set1_epi64x(8), n));
    // The cell's first byte, for its sign.
    let first = _mm256_and_si256(
        _mm256_srlv_epi64(word, bytes_from_top(len)),
        _mm256_set1_epi64x(0xff),
    );
    let neg = _mm256_cmpeq_epi64(first, _mm256_set1_epi64x(b'-' as i64));
    let sign = _mm256_or_si256(
        neg,
        _mm256_cmpeq_epi64(first, _mm256_set1_epi64x(b'+' as i64)),
    );
    // A sign lane is all ones (−1): the body is the bytes after it.
    let body = _mm256_add_epi64(len, sign);
    let body_bytes = _mm256_sllv_epi64(all, bytes_from_top(body));
    let digits = _mm256_xor_si256(word, ones(0x30));
    let high = ones(0x80);
    let non_digit = _mm256_and_si256(
        _mm256_and_si256(
            _mm256_or_si256(
                _mm256_add_epi64(_mm256_and_si256(digits, ones(0x7f)), ones(0x76)),
                digits,
            ),
            high,
        ),
        body_bytes,
    );
    // At most one non-digit, and that a point; a point needs a digit beside it.
    let lowest = _mm256_and_si256(non_digit, _mm256_sub_epi64(zero, non_digit));
    let single = _mm256_cmpeq_epi64(
        _mm256_and_si256(
            non_digit,
            _mm256_sub_epi64(non_digit, _mm256_set1_epi64x(1)),
        ),
        zero,
    );
    let mark = if comma { b',' } else { b'.' };
    let marks = _mm256_or_si256(
        _mm256_cmpeq_epi8(word, ones(b'.' as i64)),
        _mm256_cmpeq_epi8(word, ones(mark as i64)),
    );
    let points = _mm256_and_si256(_mm256_and_si256(marks, high), body_bytes);
    let point_ok = _mm256_cmpeq_epi64(points, non_digit);
    let no_point = _mm256_cmpeq_epi64(non_digit, zero);
    let body_ok = _mm256_or_si256(gt(body, 1), _mm256_and_si256(no_point, gt(body, 0)));
    let read = _mm256_and_si256(
        _mm256_and_si256(
            _mm256_and_si256(len_ok, room),
            _mm256_and_si256(single, point_ok),
        ),
        body_ok,
    );
    // Take the point out: the bytes below it move up one, leaving `body − 1` digits.
    let below = _mm256_and_si256(
        digits,
        _mm256_sub_epi64(_mm256_srli_epi64::<7>(lowest), _mm256_set1_epi64x(1)),
    );
    let above_mask = _mm256_andnot_si256(
        _mm256_sub_epi64(_mm256_slli_epi64::<1>(lowest), _mm256_set1_epi64x(1)),
        all,
    );
    let kept = _mm256_sllv_epi64(
        all,
        bytes_from_top(_mm256_sub_epi64(body, _mm256_set1_epi64x(1))),
    );
    let with_point = _mm256_and_si256(
        _mm256_or_si256(
            _mm256_slli_epi64::<8>(below),
            _mm256_and_si256(digits, above_mask),
        ),
        kept,
    );
    let aligned = _mm256_blendv_epi8(with_point, _mm256_and_si256(digits, body_bytes), no_point);
    // Digits after the point: the bytes above it.
    let frac = _mm256_sad_epu8(_mm256_and_si256(above_mask, ones(1)), zero);
    // Eight digits, the first the most significant, to their number: pairs, fours, eight.
    let pairs = _mm256_maddubs_epi16(aligned, _mm256_set1_epi16(0x010A));
    let fours = _mm256_madd_epi16(pairs, _mm256_set1_epi32(0x0001_0064));
    let mantissa = _mm256_add_epi64(
        _mm256_mul_epu32(fours, _mm256_set1_epi64x(10_000)),
        _mm256_srli_epi64::<32>(fours),
    );
    // Below 2⁵², a whole number is exact as the low bits of 2⁵² + m.
    let two52 = _mm256_set1_pd((1u64 << 52) as f64);
    let m = _mm256_sub_pd(
        _mm256_castsi256_pd(_mm256_or_si256(mantissa, _mm256_castpd_si256(two52))),
        two52,
    );
    // SAFETY: frac ≤ 8 (bytes of a word), within the table.
    let scale = unsafe { _mm256_i64gather_pd::<8>(cells::POW10.as_ptr(), frac) };
    let value = _mm256_xor_pd(
        _mm256_div_pd(m, scale),
        _mm256_and_pd(_mm256_castsi256_pd(neg), _mm256_set1_pd(-0.0)),
    );
    let mut values = [0.0; 4];
    // SAFETY: four f64 into an array of four.
    unsafe { _mm256_storeu_pd(values.as_mut_ptr(), value) };
    (_mm256_movemask_pd(_mm256_castsi256_pd(read)) as u32, values)
}

/// The record that starts at `start` and ends at the next newline (or the end of `s`): where
/// each of its cells ends, counted from `start` (the delimiters' positions, then the record's
/// length), written to the front of `ends` (grown as needed); returns how many, and the
/// record's end. Sets `non_ascii` when a byte of the record is above 0x7F (then the text must
/// be checked for UTF-8). One scan finds the delimiters, the newline and such bytes.
#[inline(always)]
fn record_cells(
    s: &[u8],
    start: usize,
    delimiter: u8,
    ends: &mut Vec<usize>,
    non_ascii: &mut bool,
) -> (usize, usize) {
    let mut n = 0;
    let mut i = start;
    #[cfg(target_arch = "x86_64")]
    {
        use std::arch::x86_64::*;
        // SAFETY: SSE2 is part of the x86-64 baseline; each load reads the 16 bytes of `s` at
        // i, and i + 16 <= s.len(). A chunk may run past the record's end (into the next
        // line): its bits from the newline on are masked off.
        let (d, nl) = unsafe { (_mm_set1_epi8(delimiter as i8), _mm_set1_epi8(b'\n' as i8)) };
        while i + 16 <= s.len() {
            // Room for a delimiter at every byte of the chunk and the unconditional writes.
            if ends.len() < n + 20 {
                ends.resize(2 * (n + 20), 0);
            }
            let (mut m, newline, high) = unsafe {
                let bytes = _mm_loadu_si128(s.as_ptr().add(i).cast());
                (
                    _mm_movemask_epi8(_mm_cmpeq_epi8(bytes, d)) as u32,
                    _mm_movemask_epi8(_mm_cmpeq_epi8(bytes, nl)) as u32,
                    _mm_movemask_epi8(bytes) as u32,
                )
            };
            let before_newline = newline.wrapping_sub(1) & !newline;
            m &= before_newline;
            *non_ascii |= high & before_newline != 0;
            let count = m.count_ones() as usize;
            let at = i - start;
            // Cells are rarely under four bytes: four writes without a branch per bit (the
            // ones past `count` are overwritten later), then any more one by one.
            for j in 0..4 {
                ends[n + j] = at + m.trailing_zeros() as usize;
                m &= m.wrapping_sub(1);
            }
            let mut j = 4;
            while m != 0 {
                ends[n + j] = at + m.trailing_zeros() as usize;
                m &= m - 1;
                j += 1;
            }
            n += count;
            if newline != 0 {
                let end = i + newline.trailing_zeros() as usize;
                ends[n] = end - start;
                return (n + 1, end);
            }
            i += 16;
        }
    }
    // The bytes the chunks left (all of them elsewhere than on x86-64).
    let rest = &s[i..];
    let end = i + memchr::memchr(b'\n', rest).unwrap_or(rest.len());
    for (k, &b) in s[i..end].iter().enumerate() {
        if ends.len() < n + 2 {
            ends.resize(2 * (n + 2), 0);
        }
        if b == delimiter {
            ends[n] = i - start + k;
            n += 1;
        }
        *non_ascii |= b > 0x7F;
    }
    if ends.len() < n + 1 {
        ends.resize(n + 1, 0);
    }
    ends[n] = end - start;
    (n + 1, end)
}

/// A plain decimal (`-12.345`, `3`, at most 15 digits; with `comma`, `-12,345` too) filling
/// `s[from..to]` exactly; `None` for anything else. Same value as [`parse_cell`]: both divide
/// an exact mantissa by an exact power of ten.
#[inline(always)]
fn plain_decimal(s: &[u8], from: usize, to: usize, comma: bool) -> Option<f64> {
    // Not `or_else`: a call the AVX2 build would not inline.
    match short_decimal(s, from, to, comma) {
        Some(v) => Some(v),
        None => scan_decimal(&s[from..to], comma),
    }
}

/// [`plain_decimal`] for cells of at most eight bytes, all at once: the eight bytes ending at
/// `to` as one word, checked for digits and one point, the point taken out, the digits added
/// up by multiplying in pairs. `None` when the cell is longer, starts within the first eight
/// bytes of `s`, or is anything else. With `comma` the point may be a comma.
#[inline(always)]
fn short_decimal(s: &[u8], from: usize, to: usize, comma: bool) -> Option<f64> {
    const ONES: u64 = 0x0101_0101_0101_0101;
    let len = to.checked_sub(from)?;
    if len == 0 || len > 8 || to < 8 {
        return None;
    }
    let neg = s[from] == b'-';
    let body = len - usize::from(neg || s[from] == b'+');
    if body == 0 {
        return None;
    }
    let word = u64::from_le_bytes(s[to - 8..to].try_into().ok()?);
    let digits = word ^ (0x30 * ONES);
    // The cell's body is the top `body` bytes (little-endian: the last byte is the highest).
    let body_bytes = u64::MAX << ((8 - body) * 8);
    // High bit of each byte that is not 0-9 (exact per byte: no carry crosses a byte).
    let non_digit =
        ((((digits & (0x7f * ONES)) + 0x76 * ONES) | digits) & (0x80 * ONES)) & body_bytes;
    let (aligned, frac) = if non_digit == 0 {
        (digits & body_bytes, 0)
    } else {
        let at = (non_digit.trailing_zeros() / 8) as usize;
        let mark = (word >> (at * 8)) as u8;
        if non_digit & (non_digit - 1) != 0 || !(mark == b'.' || comma && mark == b',') || body == 1
        {
            return None;
        }
        // Take the point out: the bytes below it move up one, leaving `body - 1` digits.
        let below = digits & ((1u64 << (at * 8)) - 1);
        let above = digits & !((2u64 << (at * 8 + 7)).wrapping_sub(1));
        let kept = u64::MAX << ((9 - body) * 8);
        (((below << 8) | above) & kept, 7 - at)
    };
    // Eight digits, the first the most significant, to their number (zeros lead).
    let pairs = aligned.wrapping_mul(10).wrapping_add(aligned >> 8);
    let mantissa = ((pairs & 0x0000_00FF_0000_00FF).wrapping_mul(100 + (1_000_000 << 32)))
        .wrapping_add(((pairs >> 16) & 0x0000_00FF_0000_00FF).wrapping_mul(1 + (10_000 << 32)))
        >> 32;
    let v = mantissa as f64 / cells::POW10[frac];
    Some(if neg { -v } else { v })
}

/// [`plain_decimal`] a byte at a time: the whole of `cell` must be the number; `None` for
/// anything else.
#[inline]
fn scan_decimal(cell: &[u8], comma: bool) -> Option<f64> {
    let (neg, start) = match cell.first() {
        Some(b'-') => (true, 1),
        Some(b'+') => (false, 1),
        _ => (false, 0),
    };
    let (mantissa, frac, end) = digits_by_one(cell, start, comma)?;
    if end != cell.len() {
        return None;
    }
    let v = mantissa as f64 / cells::POW10[frac];
    Some(if neg { -v } else { v })
}

/// The mantissa, the digits after the point and the end of `digits[.digits]` from `i` (with
/// `comma`, `digits[,digits]` too), a byte at a time; `None` without digits or with more
/// than 15.
fn digits_by_one(s: &[u8], mut i: usize, comma: bool) -> Option<(u64, usize, usize)> {
    let mut mantissa = 0u64;
    let from = i;
    while i < s.len() && s[i].is_ascii_digit() {
        mantissa = mantissa
            .wrapping_mul(10)
            .wrapping_add(u64::from(s[i] - b'0'));
        i += 1;
    }
    let int_digits = i - from;
    let mut frac = 0;
    if i < s.len() && (s[i] == b'.' || comma && s[i] == b',') {
        i += 1;
        let frac_from = i;
        while i < s.len() && s[i].is_ascii_digit() {
            mantissa = mantissa
                .wrapping_mul(10)
                .wrapping_add(u64::from(s[i] - b'0'));
            i += 1;
        }
        frac = i - frac_from;
    }
    let digits = int_digits + frac;
    (digits > 0 && digits <= 15).then_some((mantissa, frac, i))
}

/// Quoted fields (which may hold delimiters and newlines): the csv reader, with each record's
/// physical line found from its byte offset.
fn parse_quoted(s: &[u8], lines_before: u64, ctx: &ParseContext, piece: &mut Piece) -> Result<()> {
    let mut rdr = reader(s, ctx.delimiter);
    let mut rec = csv::ByteRecord::new();
    let (mut counted_to, mut newlines) = (0usize, 0u64);
    let mut line_at = |mut byte: usize| {
        // The reader reports a record's start before the empty lines it skipped.
        while matches!(s.get(byte), Some(b'\r' | b'\n')) {
            byte += 1;
        }
        let byte = byte.min(s.len());
        if byte > counted_to {
            newlines += count_newlines(&s[counted_to..byte]) as u64;
            counted_to = byte;
        }
        lines_before + newlines + 1
    };
    loop {
        let more = rdr.read_byte_record(&mut rec).map_err(|e| {
            let line = e.position().map(|p| lines_before + p.line());
            InputError::at(ctx.path, line, None, format!("cannot read the row: {e}"))
        })?;
        if !more {
            break;
        }
        let line = line_at(rec.position().map_or(0, |p| p.byte() as usize));
        let cells: Vec<&[u8]> = rec.iter().collect();
        piece.record(&cells, line, ctx);
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn names(n: usize) -> Vec<String> {
        (0..n).map(|i| format!("c{i}")).collect()
    }

    /// Everything a piece holds, comparable.
    fn summary(p: &Piece) -> String {
        let numbers: Vec<Vec<u64>> = p
            .numbers
            .iter()
            .map(|c| c[..p.rows].iter().map(|v| v.to_bits()).collect())
            .collect();
        let bad: Vec<Vec<(usize, &str, &str)>> = p
            .columns
            .iter()
            .map(|c| {
                c.bad
                    .iter()
                    .map(|x| {
                        let t = if x.text == KEPT_TEXT {
                            "<kept>"
                        } else {
                            c.bad_texts.get(x.text)
                        };
                        (x.row(), t, x.reason())
                    })
                    .collect()
            })
            .collect();
        let text: Vec<Vec<&str>> = p.columns.iter().map(|c| c.text.iter().collect()).collect();
        let extra: Vec<(u64, &str, &str)> = p
            .extra
            .iter()
            .map(|u| (u.line, u.column.as_str(), u.text.as_str()))
            .collect();
        format!(
            "{:?}\n{numbers:?}\n{bad:?}\n{text:?}\n{:?}\n{extra:?}\n{}",
            &p.lines[..p.rows],
            p.blank_rows,
            p.decimal_comma_used
        )
    }

    fn cell() -> impl Strategy<Value = String> {
        prop_oneof![
            (-1e6f64..1e6).prop_map(|v| format!("{v:.4}")),
            (0u32..100_000).prop_map(|v| v.to_string()),
            Just(String::new()),
            Just("  ".to_string()),
            Just(" 12.5 ".to_string()),
            Just("n/a".to_string()),
            Just("1,5".to_string()),
            Just("1.234,5".to_string()),
            Just("-".to_string()),
            Just("+.5".to_string()),
            Just("5.".to_string()),
            Just("1e-3".to_string()),
            Just("NaN".to_string()),
            Just("1234567890123456".to_string()),
            Just("L07".to_string()),
            Just("12345678".to_string()),
            Just("-1234567".to_string()),
            Just("123456789".to_string()),
            Just("1.2.3".to_string()),
            Just("--1".to_string()),
            Just("+-1".to_string()),
            Just(".".to_string()),
            Just("1 ".to_string()),
            Just("µ1.5".to_string()),
            (-1e4f64..1e4, 0usize..7).prop_map(|(v, d)| format!("{v:.d$}")),
            (-1e4f64..1e4, 0usize..7).prop_map(|(v, d)| format!("{v:.d$}").replace('.', ",")),
        ]
    }

    /// A cell as the plain-decimal rule reads it: sign, digits with at most one point, at
    /// least one and at most 15 digits, nothing else; the value as the std parser gives it.
    fn plain_by_rule(cell: &str) -> Option<f64> {
        let body = cell.strip_prefix(['-', '+']).unwrap_or(cell);
        let digits = body.bytes().filter(u8::is_ascii_digit).count();
        let points = body.bytes().filter(|&b| b == b'.').count();
        let only = body.bytes().all(|b| b.is_ascii_digit() || b == b'.');
        (only && points <= 1 && (1..=15).contains(&digits)).then(|| cell.parse().unwrap())
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(200))]
        /// The plain splitter reads quote-free text exactly as the csv reader does.
        #[test]
        fn plain_and_csv_readers_agree(
            rows in prop::collection::vec(prop::collection::vec(cell(), 0..12), 1..30),
            ncol in 1usize..9,
            keep_first in any::<bool>(),
            semicolon in any::<bool>(),
            crlf in any::<bool>(),
            final_newline in any::<bool>(),
        ) {
            let d = if semicolon { ";" } else { "," };
            let eol = if crlf { "\r\n" } else { "\n" };
            let body: Vec<String> = rows.iter().map(|r| r.join(d)).collect();
            let mut text = body.join(eol);
            if final_newline {
                text.push_str(eol);
            }
            let names = names(ncol);
            let mut keep = vec![false; ncol];
            keep[0] = keep_first;
            let ctx = ParseContext {
                path: "t.csv",
                delimiter: d.as_bytes()[0],
                decimal_comma: semicolon,
                names: &names,
                keep: &keep,
            };
            let s = text.as_bytes();
            let count = count_piece(s, true);
            prop_assume!(count.plain);
            let cap = count.capacity;
            let (mut lines_a, mut lines_b) = (vec![0; cap], vec![0; cap]);
            let mut numbers_a = vec![vec![f64::NAN; cap]; ncol];
            let mut numbers_b = numbers_a.clone();
            let mut plain = Piece::new(&mut lines_a, numbers_a.iter_mut().map(|v| v.as_mut_slice()).collect());
            parse_plain(s, 3, &ctx, &mut plain);
            let mut quoted = Piece::new(&mut lines_b, numbers_b.iter_mut().map(|v| v.as_mut_slice()).collect());
            parse_quoted(s, 3, &ctx, &mut quoted).unwrap();
            prop_assert_eq!(summary(&plain), summary(&quoted));
            // The build for any x86-64 (or other) processor, whichever one ran above.
            let (mut lines_c, mut numbers_c) = (vec![0; cap], vec![vec![f64::NAN; cap]; ncol]);
            let mut baseline = Piece::new(&mut lines_c, numbers_c.iter_mut().map(|v| v.as_mut_slice()).collect());
            parse_plain_with::<false>(s, 3, &ctx, &mut baseline);
            prop_assert_eq!(summary(&baseline), summary(&quoted));
        }
    }

    proptest! {
        /// A cell anywhere in a line reads as the rule says, whether it takes the eight-byte
        /// path (short, with eight bytes before its end) or the byte-by-byte one.
        #[test]
        fn plain_decimals_read_by_the_rule(
            before in "[0-9.,x-]{0,12}",
            cell in "[-+]?[0-9]{0,9}[.]?[0-9]{0,9}|[-+.0-9ex ]{0,10}",
            after in "[0-9.,x-]{0,12}",
        ) {
            let text = format!("{before},{cell},{after}");
            let from = before.len() + 1;
            let got = plain_decimal(text.as_bytes(), from, from + cell.len(), false);
            prop_assert_eq!(got.map(f64::to_bits), plain_by_rule(&cell).map(f64::to_bits), "{:?}", text);
            // In decimal-comma files the point may be a comma or a point.
            for mark in [",", "."] {
                let text = format!("{before};{};{after}", cell.replace('.', mark));
                let got = plain_decimal(text.as_bytes(), from, from + cell.len(), true);
                prop_assert_eq!(got.map(f64::to_bits), plain_by_rule(&cell).map(f64::to_bits), "{:?}", text);
            }
        }
    }

    proptest! {
        /// Four cells read at once are read as [`short_decimal`] reads each: the same cells
        /// read, to the same bits, whatever the cells hold and wherever the line starts.
        #[test]
        fn four_cells_at_once_read_as_one_at_a_time(
            before in "[0-9.,x-]{0,10}",
            cells in prop::collection::vec(
                "[-+]?[0-9]{0,5}[.,]?[0-9]{0,4}|[-+.,0-9e ]{0,9}|[0-9]{8,9}|[.,][0-9]{1,7}",
                4,
            ),
            comma in any::<bool>(),
        ) {
            #[cfg(target_arch = "x86_64")]
            if std::is_x86_feature_detected!("avx2") {
                let text = format!("{before};{}", cells.join(";"));
                let s = text.as_bytes();
                // Cell ends as record_cells gives them, from the line's start at 0.
                let mut ends = [before.len(); 5];
                for k in 0..4 {
                    ends[k + 1] = ends[k] + 1 + cells[k].len();
                }
                // SAFETY: the processor has AVX2, checked above.
                let (read, values) = unsafe { four_short_decimals(s, 0, &ends, comma) };
                for k in 0..4 {
                    let one = short_decimal(s, ends[k] + 1, ends[k + 1], comma);
                    let four = (read & (1 << k) != 0).then_some(values[k]);
                    prop_assert_eq!(four.map(f64::to_bits), one.map(f64::to_bits), "{:?} cell {}", text, k);
                }
            }
        }
    }

    proptest! {
        /// A plain decimal reads as the std parser reads it, and only when it fills the cell.
        #[test]
        fn decimals_scan_as_std_parses_them(
            int in 0u64..100_000_000,
            frac in prop::option::of((0u32..8).prop_flat_map(|d| (Just(d), 0u64..10u64.pow(d)))),
            neg in any::<bool>(),
            tail in prop::sample::select(vec!["", ",", ",1,2,3,4,5,6,7,8", ";x", "x"]),
        ) {
            let mut text = format!("{}{int}", if neg { "-" } else { "" });
            if let Some((d, f)) = frac {
                text.push_str(&format!(".{f:0width$}", width = d as usize));
            }
            let cell = text.clone();
            text.push_str(tail);
            let digits = cell.bytes().filter(u8::is_ascii_digit).count();
            if digits <= 15 {
                prop_assert_eq!(scan_decimal(cell.as_bytes(), false), Some(cell.parse::<f64>().unwrap()), "{}", cell);
            }
            // Anything after the number, a delimiter included, is not a plain decimal.
            if !tail.is_empty() {
                prop_assert_eq!(scan_decimal(text.as_bytes(), false), None, "{}", text);
            }
        }
    }

    #[test]
    fn lines_are_physical_with_crlf_and_empty_lines() {
        let names = names(2);
        let keep = [false, false];
        let ctx = ParseContext {
            path: "t.csv",
            delimiter: b',',
            decimal_comma: false,
            names: &names,
            keep: &keep,
        };
        for text in ["1,2\r\n\r\n3,x\r\n", "\"1\",2\r\n\r\n3,x\r\n"] {
            let s = text.as_bytes();
            let count = count_piece(s, true);
            let mut lines = vec![0; count.capacity];
            let mut numbers = vec![vec![f64::NAN; count.capacity]; 2];
            let piece = Piece::new(
                &mut lines,
                numbers.iter_mut().map(|v| v.as_mut_slice()).collect(),
            );
            let rest = parse_piece(s, count.plain, 1, piece, &ctx).unwrap();
            assert_eq!(&lines[..rest.rows], [2, 4], "{text:?}");
        }
    }

    /// A decimal comma is noted wherever the number was read: four cells at once, one at a
    /// time (short and long) or by the general cell rule; points alone note none.
    #[test]
    fn notes_a_decimal_comma_on_every_path() {
        let names = names(6);
        let keep = [true, false, false, false, false, false];
        let ctx = ParseContext {
            path: "t.csv",
            delimiter: b';',
            decimal_comma: true,
            names: &names,
            keep: &keep,
        };
        let with_comma = [
            "PART0001;1,25;2.5;3.5;4.5;6\nPART0002;1.25;2.5;3.5;4.5;6\n",
            "P1;1.25;2.5;3.5;4.5;6,5\n",
            "P1;1.25;2.5;3.5;4.5;6,123456789\n",
            "P1;1.25;2.5;3.5;4.5; 6,5 \n",
        ];
        let cases = with_comma
            .iter()
            .map(|t| (*t, true))
            .chain([("P1;1.25;2.5;3.5;4.5;6.5\nP2;1;2;3;4;5\n", false)]);
        for (text, comma) in cases {
            let s = text.as_bytes();
            let cap = count_piece(s, false).capacity;
            let mut lines = vec![0; cap];
            let mut numbers = vec![vec![f64::NAN; cap]; 6];
            let mut piece = Piece::new(
                &mut lines,
                numbers.iter_mut().map(|v| v.as_mut_slice()).collect(),
            );
            parse_plain(s, 1, &ctx, &mut piece);
            assert_eq!(piece.decimal_comma_used, comma, "{text:?}");
            let mut lines = vec![0; cap];
            let mut numbers = vec![vec![f64::NAN; cap]; 6];
            let mut piece = Piece::new(
                &mut lines,
                numbers.iter_mut().map(|v| v.as_mut_slice()).collect(),
            );
            parse_plain_with::<false>(s, 1, &ctx, &mut piece);
            assert_eq!(piece.decimal_comma_used, comma, "baseline {text:?}");
            assert_eq!(numbers[1][0], 1.25, "{text:?}");
        }
    }

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
        let pieces = split_records(&s, 4, true);
        assert!(pieces.len() > 1);
        for p in &pieces {
            assert_eq!(memchr::memchr_iter(b'"', p).count() % 2, 0);
        }
        assert_eq!(pieces.iter().map(|p| p.len()).sum::<usize>(), s.len());
    }
}
