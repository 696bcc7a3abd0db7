//! CSV importer: delimited text with a header row.
//!
//! * delimiter `,` `;` or tab, detected from the header row;
//! * decimal comma, detected when the delimiter is not a comma and the first
//!   data row holds commas;
//! * optional UTF-8 byte-order mark, LF or CRLF line ends, quoted fields;
//! * time as seconds or as ISO-8601 timestamps (converted to seconds from
//!   the first sample);
//! * voltages in V, kV or pu, phase-to-neutral or phase-to-phase; currents in
//!   A, kA or pu.
//!
//! The file is read in chunks; each chunk is split at line boundaries and its
//! parts are parsed on all cores into reusable column buffers (no allocation
//! per value), then checked for time order and even sampling and handed to
//! the sink in order. Memory stays bounded by the chunk size whatever the
//! file size.

use super::{channels, timebase, ChannelMap, ImportOptions, Source};
use crate::error::InputError;
use crate::files::Hashing;
use crate::model::{
    Block, ChannelInfo, ChannelKey, Connection, CurrentUnit, FrameSink, RecordingInfo,
    RecordingKind, VoltageUnit, N_KEYS,
};
use chrono::{DateTime, FixedOffset, NaiveDateTime};
use std::fs::File;
use std::io::Read;
use std::path::{Path, PathBuf};

/// Bytes read per chunk.
const CHUNK: usize = 4 << 20;
/// Longest accepted line (header or data row).
pub const MAX_LINE_BYTES: u64 = 16 << 20;
/// Most columns accepted in a recording.
pub const MAX_COLUMNS: usize = 100_000;
/// Data rows used to estimate the nominal sample step at open.
const STEP_ESTIMATE_ROWS: usize = 10_000;
/// The step estimate reads at most this much before streaming starts (a
/// wide file gives fewer rows; the estimate ends at the last complete line).
const PROBE_BYTES: usize = 4 << 20;
/// Regions smaller than this are parsed on one thread.
const PARALLEL_MIN: usize = 256 << 10;
/// Column slot marker: column not used.
const SKIP: u16 = u16::MAX;
/// Column slot marker: the time column.
const TIME: u16 = u16::MAX - 1;

#[derive(Clone, Debug)]
enum TimeKind {
    Seconds,
    /// ISO-8601 timestamps; values are seconds from this origin.
    Timestamp(DateTime<FixedOffset>),
    /// No time column: the n-th row is at n / rate seconds.
    Rate(f64),
}

/// What the parsers need to know about the layout; shared by all threads.
#[derive(Clone, Debug)]
struct Layout {
    delim: u8,
    decimal_comma: bool,
    ncols: usize,
    /// Per file column: [`SKIP`], [`TIME`] or the index of a mapped channel.
    col_slot: Vec<u16>,
    /// Per mapped channel: factor to canonical units.
    scale: Vec<f64>,
    time: TimeKind,
}

/// Parsed values of one part of a chunk, column-wise.
#[derive(Default, Debug)]
struct Part {
    time: Vec<f64>,
    cols: Vec<Vec<f64>>,
    /// Per column of `cols`, and for `time`: the values still to be divided.
    undivided: Vec<Undivided>,
    time_undivided: Undivided,
    /// Lines consumed, including trailing blank lines.
    lines: u64,
    /// First of the blank lines that end the part, if any.
    trailing_blank: Option<u64>,
}

/// No values waiting for their division.
const SETTLED: usize = usize::MAX;

/// The tail of a column that [`fast_line`] filled with the exact digits of
/// its numbers (see [`fast_mantissa`]): from index `from` on, every value is
/// still to be divided by `10^decimals` and scaled. Dividing a whole run at
/// once is what makes the fast path fast: the divisions no longer sit
/// between the parsing of one field and the next.
#[derive(Debug, Clone, Copy)]
struct Undivided {
    from: usize,
    /// Decimals of every value in the run, or [`SETTLED`].
    decimals: usize,
}

impl Default for Undivided {
    fn default() -> Self {
        Undivided {
            from: 0,
            decimals: SETTLED,
        }
    }
}

impl Undivided {
    /// Divides the run (the same two roundings as `m / 10^k * scale` value
    /// by value) and starts none.
    fn settle(&mut self, col: &mut [f64], scale: f64) {
        if self.decimals != SETTLED {
            let d = POW10[self.decimals];
            for x in &mut col[self.from..] {
                *x = *x / d * scale;
            }
            self.decimals = SETTLED;
        }
        self.from = col.len();
    }

    /// Before a value with `decimals` is pushed onto `col`: a run of other
    /// decimals is divided first.
    #[inline]
    fn before_push(&mut self, col: &mut [f64], decimals: usize, scale: f64) {
        if decimals != self.decimals {
            self.settle(col, scale);
            self.decimals = decimals;
        }
    }
}

impl Part {
    fn reset(&mut self, nslots: usize) {
        self.time.clear();
        self.cols.resize_with(nslots, Vec::new);
        for c in &mut self.cols {
            c.clear();
        }
        self.undivided.clear();
        self.undivided.resize(nslots, Undivided::default());
        self.time_undivided = Undivided::default();
        self.lines = 0;
        self.trailing_blank = None;
    }

    /// Divides every run that [`fast_line`] left: afterwards all values are
    /// final.
    fn settle(&mut self, layout: &Layout) {
        self.time_undivided.settle(&mut self.time, 1.0);
        for (slot, (u, col)) in self.undivided.iter_mut().zip(&mut self.cols).enumerate() {
            u.settle(col, layout.scale[slot]);
        }
    }
}

#[derive(Debug, Clone, PartialEq)]
enum RowProblem {
    NotNumber { col: usize, text: String },
    NotFinite { col: usize, text: String },
    BadTimestamp { col: usize, text: String },
    TooFewFields { have: usize },
    TooManyFields,
    BlankLine,
}

#[derive(Debug, Clone, PartialEq)]
struct PartError {
    /// Zero-based line within the part.
    line: u64,
    problem: RowProblem,
}

/// An opened CSV recording.
pub struct CsvSource {
    path: PathBuf,
    /// Taken by the reader stage when streaming starts.
    file: Option<Hashing<File>>,
    /// Unprocessed bytes, starting at the first data line.
    buf: Vec<u8>,
    eof: bool,
    layout: Layout,
    /// One-based line number of the first data line (after the header).
    first_data_line: u64,
    nominal_step: f64,
    opts: ImportOptions,
    info: RecordingInfo,
    slot_keys: Vec<ChannelKey>,
    header: Vec<String>,
}

fn fill(
    file: &mut impl Read,
    buf: &mut Vec<u8>,
    want: usize,
    path: &Path,
) -> Result<bool, InputError> {
    // Returns true at end of file. `read_to_end` reads into the spare
    // capacity without zeroing it first.
    buf.reserve(want);
    let mut left = want as u64;
    while left > 0 {
        match file.by_ref().take(left).read_to_end(buf) {
            Ok(0) => return Ok(true),
            Ok(n) => left -= n as u64,
            Err(e) if e.kind() == std::io::ErrorKind::Interrupted => {}
            Err(e) => {
                return Err(InputError::new(path, format!("cannot read: {e}")));
            }
        }
    }
    Ok(false)
}

fn trim_bytes(mut b: &[u8]) -> &[u8] {
    while let [first, rest @ ..] = b {
        if *first == b' ' || *first == b'\t' {
            b = rest;
        } else {
            break;
        }
    }
    while let [rest @ .., last] = b {
        if *last == b' ' || *last == b'\t' {
            b = rest;
        } else {
            break;
        }
    }
    b
}

fn strip_quotes(b: &[u8]) -> &[u8] {
    let b = trim_bytes(b);
    if b.len() >= 2 && b[0] == b'"' && b[b.len() - 1] == b'"' {
        &b[1..b.len() - 1]
    } else {
        b
    }
}

/// Splits a line at `delim`, honouring double quotes.
fn split_fields(line: &[u8], delim: u8) -> Vec<&[u8]> {
    let mut out = Vec::new();
    let mut start = 0;
    let mut quoted = false;
    for (i, &c) in line.iter().enumerate() {
        if c == b'"' {
            quoted = !quoted;
        } else if c == delim && !quoted {
            out.push(&line[start..i]);
            start = i + 1;
        }
    }
    out.push(&line[start..]);
    out
}

fn count_outside_quotes(line: &[u8], c: u8) -> usize {
    let mut quoted = false;
    let mut n = 0;
    for &b in line {
        if b == b'"' {
            quoted = !quoted;
        } else if b == c && !quoted {
            n += 1;
        }
    }
    n
}

fn parse_timestamp(s: &str) -> Option<DateTime<FixedOffset>> {
    let s = s.trim();
    // ISO 8601 allows a decimal comma in the seconds (10:00:00,25).
    let owned;
    let s = match s.rfind(',') {
        Some(i)
            if s[..i].ends_with(|c: char| c.is_ascii_digit())
                && s[i + 1..].starts_with(|c: char| c.is_ascii_digit()) =>
        {
            owned = format!("{}.{}", &s[..i], &s[i + 1..]);
            owned.as_str()
        }
        _ => s,
    };
    if let Ok(t) = DateTime::parse_from_rfc3339(s) {
        return Some(t);
    }
    for fmt in [
        "%Y-%m-%dT%H:%M:%S%.f",
        "%Y-%m-%d %H:%M:%S%.f",
        "%Y-%m-%dT%H:%M:%S",
        "%Y-%m-%d %H:%M:%S",
    ] {
        if let Ok(t) = NaiveDateTime::parse_from_str(s, fmt) {
            return Some(t.and_utc().fixed_offset());
        }
    }
    None
}

fn is_blank(line: &[u8]) -> bool {
    line.iter().all(|b| b.is_ascii_whitespace())
}

/// Exact powers of ten representable in an f64.
const POW10: [f64; 23] = [
    1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16,
    1e17, 1e18, 1e19, 1e20, 1e21, 1e22,
];

/// Powers of ten for whole digit groups (up to eight digits at once).
const POW10_U64: [u64; 9] = [
    1,
    10,
    100,
    1_000,
    10_000,
    100_000,
    1_000_000,
    10_000_000,
    100_000_000,
];

/// The number written by eight digit values (0..=9, one per byte, the most
/// significant in the lowest byte): pairs, then fours, then all eight, with
/// three multiplications instead of eight dependent ones (the SWAR
/// "parse eight digits" method of D. Lemire, "Number parsing at a gigabyte
/// per second", Software: Practice and Experience 51(8), 2021).
#[inline(always)]
fn eight_digits(v: u64) -> u64 {
    const MASK: u64 = 0x0000_00FF_0000_00FF;
    const MUL1: u64 = 0x000F_4240_0000_0064; // 10^6 << 32 | 100
    const MUL2: u64 = 0x0000_2710_0000_0001; // 10^4 << 32 | 1
    let v = v.wrapping_mul(10).wrapping_add(v >> 8);
    let v1 = (v & MASK).wrapping_mul(MUL1);
    let v2 = ((v >> 16) & MASK).wrapping_mul(MUL2);
    u64::from(((v1.wrapping_add(v2)) >> 32) as u32)
}

/// Appends the run of ASCII digits at `b[i..]` to `mant` (decimal, wrapping
/// past 2^64 like the digit-by-digit loop) and returns the run's length.
/// Eight bytes are looked at together while eight can be read; the bytes
/// after the run are only masked away, never used.
#[inline(always)]
fn digit_run(b: &[u8], mut i: usize, mant: &mut u64) -> usize {
    let from = i;
    while let Some(w) = b.get(i..i + 8) {
        let Ok(w) = <[u8; 8]>::try_from(w) else {
            break;
        };
        // Digit values; a byte below '0' borrows only from bytes after it.
        let x = u64::from_le_bytes(w).wrapping_sub(0x3030_3030_3030_3030);
        // High bit of every byte that is not a digit: below '0' wraps past
        // 0x7f, above '9' reaches 0x80 when 0x76 is added.
        let not_digit = (x | x.wrapping_add(0x7676_7676_7676_7676)) & 0x8080_8080_8080_8080;
        let k = (not_digit.trailing_zeros() / 8) as usize;
        if k == 0 {
            return i - from;
        }
        // The run's digits moved to the top bytes, zeros (leading) below.
        let v = eight_digits(x << (64 - 8 * k as u32));
        *mant = mant.wrapping_mul(POW10_U64[k]).wrapping_add(v);
        i += k;
        if k < 8 {
            return i - from;
        }
    }
    while i < b.len() {
        let d = b[i].wrapping_sub(b'0');
        if d > 9 {
            break;
        }
        *mant = mant.wrapping_mul(10).wrapping_add(u64::from(d));
        i += 1;
    }
    i - from
}

/// Plain decimals (`-123.4567`, no exponent) by Clinger's fast path: when the
/// digits form an integer `m < 2^53` and there are at most 22 decimals, `m`
/// and `10^k` are exact in f64 and one IEEE division gives the correctly
/// rounded value (W. D. Clinger, "How to read floating point numbers
/// accurately", PLDI 1990). Anything else goes to the general parser.
#[inline]
fn fast_decimal(b: &[u8]) -> Option<(f64, usize)> {
    let (m, frac, used) = fast_mantissa(b)?;
    Some((m / POW10[frac], used))
}

/// [`fast_decimal`] before its division: the signed digits as an exact f64
/// (below 2^53), the number of decimals and the length of the number; the
/// value is `m / 10^decimals` (one correctly rounded division).
#[inline(always)]
fn fast_mantissa(b: &[u8]) -> Option<(f64, usize, usize)> {
    let n = b.len();
    let mut i = 0;
    let neg = match b.first() {
        Some(b'-') => {
            i = 1;
            true
        }
        Some(b'+') => {
            i = 1;
            false
        }
        _ => false,
    };
    let mut mant: u64 = 0;
    let int_from = i;
    i += digit_run(b, i, &mut mant);
    let mut digits = i - int_from;
    let mut frac = 0usize;
    if i < n && b[i] == b'.' {
        i += 1;
        frac = digit_run(b, i, &mut mant);
        i += frac;
        digits += frac;
    }
    // More than 19 significant digits may have wrapped the mantissa;
    // leading zeros add nothing to it (counted only in this rare case).
    let significant = || {
        b[int_from..i]
            .iter()
            .filter(|c| c.is_ascii_digit())
            .skip_while(|c| **c == b'0')
            .count()
    };
    if digits == 0 || (digits > 19 && significant() > 19) || frac > 22 || mant >= (1u64 << 53) {
        return None;
    }
    if i < n && matches!(b[i], b'e' | b'E' | b'n' | b'N' | b'i' | b'I') {
        return None;
    }
    let m = mant as f64;
    Some((if neg { -m } else { m }, frac, i))
}

/// Parses one field as a number; returns the value and the end of the field.
#[inline]
fn number_field(line: &[u8], start: usize, layout: &Layout) -> Result<(f64, usize), ()> {
    let delim = layout.delim;
    if layout.decimal_comma {
        let end = memchr::memchr(delim, &line[start..])
            .map(|i| start + i)
            .unwrap_or(line.len());
        let field = strip_quotes(&line[start..end]);
        let mut tmp = [0u8; 64];
        if field.is_empty() || field.len() > tmp.len() {
            return Err(());
        }
        for (d, s) in tmp.iter_mut().zip(field) {
            *d = if *s == b',' { b'.' } else { *s };
        }
        let v: f64 = fast_float2::parse(&tmp[..field.len()]).map_err(|_| ())?;
        return Ok((v, end));
    }
    let mut p = start;
    while p < line.len() && line[p] == b' ' {
        p += 1;
    }
    let quoted = p < line.len() && line[p] == b'"';
    if quoted {
        p += 1;
    }
    let (v, n): (f64, usize) = match fast_decimal(&line[p..]) {
        Some(x) => x,
        None => fast_float2::parse_partial(&line[p..]).map_err(|_| ())?,
    };
    p += n;
    if quoted {
        if p < line.len() && line[p] == b'"' {
            p += 1;
        } else {
            return Err(());
        }
    }
    while p < line.len() && line[p] == b' ' {
        p += 1;
    }
    if p == line.len() || line[p] == delim {
        Ok((v, p))
    } else {
        Err(())
    }
}

fn field_text(line: &[u8], start: usize, delim: u8) -> String {
    let end = memchr::memchr(delim, &line[start..])
        .map(|i| start + i)
        .unwrap_or(line.len());
    String::from_utf8_lossy(trim_bytes(&line[start..end])).into_owned()
}

fn parse_line(line: &[u8], layout: &Layout, part: &mut Part) -> Result<(), RowProblem> {
    let mut pos = 0usize;
    let mut col = 0usize;
    loop {
        if col >= layout.ncols {
            return Err(RowProblem::TooManyFields);
        }
        let slot = layout.col_slot[col];
        let end = if slot == SKIP {
            memchr::memchr(layout.delim, &line[pos..])
                .map(|i| pos + i)
                .unwrap_or(line.len())
        } else if slot == TIME {
            match &layout.time {
                TimeKind::Seconds => match number_field(line, pos, layout) {
                    Ok((v, end)) if v.is_finite() => {
                        part.time.push(v);
                        end
                    }
                    Ok(_) => {
                        return Err(RowProblem::NotFinite {
                            col,
                            text: field_text(line, pos, layout.delim),
                        })
                    }
                    Err(()) => {
                        return Err(RowProblem::NotNumber {
                            col,
                            text: field_text(line, pos, layout.delim),
                        })
                    }
                },
                // No time column, so no TIME slot.
                TimeKind::Rate(_) => memchr::memchr(layout.delim, &line[pos..])
                    .map(|i| pos + i)
                    .unwrap_or(line.len()),
                TimeKind::Timestamp(origin) => {
                    let end = memchr::memchr(layout.delim, &line[pos..])
                        .map(|i| pos + i)
                        .unwrap_or(line.len());
                    let text = String::from_utf8_lossy(strip_quotes(&line[pos..end]));
                    match parse_timestamp(&text) {
                        Some(t) => {
                            let d = t.signed_duration_since(*origin);
                            let secs = d.num_seconds() as f64 + (d.subsec_nanos() as f64) * 1e-9;
                            part.time.push(secs);
                        }
                        None => {
                            return Err(RowProblem::BadTimestamp {
                                col,
                                text: text.into_owned(),
                            })
                        }
                    }
                    end
                }
            }
        } else {
            match number_field(line, pos, layout) {
                Ok((v, end)) if v.is_finite() => {
                    part.cols[slot as usize].push(v * layout.scale[slot as usize]);
                    end
                }
                Ok(_) => {
                    return Err(RowProblem::NotFinite {
                        col,
                        text: field_text(line, pos, layout.delim),
                    })
                }
                Err(()) => {
                    return Err(RowProblem::NotNumber {
                        col,
                        text: field_text(line, pos, layout.delim),
                    })
                }
            }
        };
        col += 1;
        if end >= line.len() {
            break;
        }
        pos = end + 1;
    }
    if col < layout.ncols {
        return Err(RowProblem::TooFewFields { have: col });
    }
    if let TimeKind::Rate(_) = layout.time {
        // No time column: the sequential check gives the time.
        part.time.push(f64::NAN);
    }
    Ok(())
}

/// Most columns a line may have for [`fast_line`].
const FAST_COLS: usize = 32;

/// Whether lines of this layout can take [`fast_line`]: point decimals, time
/// in seconds or from the rate, few columns.
fn fast_layout(layout: &Layout) -> bool {
    !layout.decimal_comma
        && layout.ncols <= FAST_COLS
        && matches!(layout.time, TimeKind::Seconds | TimeKind::Rate(_))
}

/// One line of plain numbers parsed straight from the region, without
/// looking for its end first: the values of `start`'s line are pushed and
/// the index of its end (the `\n`, or the region's end) returned. Anything
/// unusual (spaces, quotes, an exponent, a wrong field count, a value that
/// is not plain) returns `None` with nothing pushed, and the line takes the
/// general path, which gives the same values or the error.
#[inline]
fn fast_line(region: &[u8], start: usize, layout: &Layout, part: &mut Part) -> Option<usize> {
    let mut values = [0.0f64; FAST_COLS];
    let mut fracs = [0usize; FAST_COLS];
    let mut p = start;
    let n = region.len();
    for col in 0..layout.ncols {
        let last = col + 1 == layout.ncols;
        if layout.col_slot[col] == SKIP {
            let rest = &region[p..];
            let i = memchr::memchr2(layout.delim, b'\n', rest).unwrap_or(rest.len());
            p += i;
        } else {
            let (m, frac, used) = fast_mantissa(&region[p..])?;
            values[col] = m;
            fracs[col] = frac;
            p += used;
        }
        let c = region.get(p).copied();
        if !last {
            if c != Some(layout.delim) {
                return None;
            }
            p += 1;
        } else {
            match c {
                None | Some(b'\n') => {}
                Some(b'\r') if p + 1 == n || region[p + 1] == b'\n' => p += 1,
                _ => return None,
            }
        }
    }
    for col in 0..layout.ncols {
        match layout.col_slot[col] {
            SKIP => {}
            TIME => {
                part.time_undivided
                    .before_push(&mut part.time, fracs[col], 1.0);
                part.time.push(values[col]);
            }
            slot => {
                let slot = slot as usize;
                let col_values = &mut part.cols[slot];
                part.undivided[slot].before_push(col_values, fracs[col], layout.scale[slot]);
                col_values.push(values[col]);
            }
        }
    }
    if let TimeKind::Rate(_) = layout.time {
        part.time.push(f64::NAN);
    }
    Some(p.min(n))
}

/// Parses a region of complete lines into `part`.
fn parse_region(region: &[u8], layout: &Layout, part: &mut Part) -> Result<(), PartError> {
    let mut start = 0usize;
    let mut line_no = 0u64;
    let mut blank_at: Option<u64> = None;
    let fast = fast_layout(layout);
    while start < region.len() {
        if fast && blank_at.is_none() {
            if let Some(end) = fast_line(region, start, layout, part) {
                line_no += 1;
                start = end + 1;
                continue;
            }
        }
        let end = memchr::memchr(b'\n', &region[start..])
            .map(|i| start + i)
            .unwrap_or(region.len());
        let mut line = &region[start..end];
        if let [rest @ .., b'\r'] = line {
            line = rest;
        }
        if line.is_empty() || is_blank(line) {
            blank_at.get_or_insert(line_no);
        } else {
            if let Some(b) = blank_at {
                return Err(PartError {
                    line: b,
                    problem: RowProblem::BlankLine,
                });
            }
            if fast {
                // The general path pushes final values.
                part.settle(layout);
            }
            if let Err(problem) = parse_line(line, layout, part) {
                // Keep the columns aligned for the caller's sake.
                return Err(PartError {
                    line: line_no,
                    problem,
                });
            }
        }
        line_no += 1;
        start = end + 1;
    }
    part.settle(layout);
    part.lines = line_no;
    // Blank lines at the end of a part are fine only at the end of the file;
    // the caller checks that no data follows.
    part.trailing_blank = blank_at;
    Ok(())
}

/// Splits `region` into up to `n` pieces at line boundaries.
fn split_at_lines(region: &[u8], n: usize) -> Vec<&[u8]> {
    if n <= 1 || region.len() < PARALLEL_MIN {
        return vec![region];
    }
    let mut pieces = Vec::with_capacity(n);
    let mut start = 0;
    for k in 1..n {
        let target = region.len() * k / n;
        if target <= start {
            continue;
        }
        match memchr::memchr(b'\n', &region[target..]) {
            Some(i) => {
                let cut = target + i + 1;
                pieces.push(&region[start..cut]);
                start = cut;
            }
            None => break,
        }
    }
    pieces.push(&region[start..]);
    pieces
}

/// The header row and what it tells.
struct Header {
    /// Byte offset of the header's line end in the first buffer.
    end: usize,
    delim: u8,
    names: Vec<String>,
    /// Names without their unit suffix: "Ua(V)" → ("Ua", "V").
    bare: Vec<(String, Option<String>)>,
}

/// Reads the header row: delimiter, column names; at least two named columns.
fn read_header(path: &Path, buf: &[u8], eof: bool) -> Result<Header, InputError> {
    let end = match memchr::memchr(b'\n', buf) {
        Some(i) => i,
        None if eof => buf.len(),
        None => {
            return Err(InputError::new(
                path,
                format!("the header line is longer than {} bytes", buf.len()),
            )
            .line(1)
            .hint("is this a CSV recording?"))
        }
    };
    let mut line = &buf[..end];
    if let [rest @ .., b'\r'] = line {
        line = rest;
    }
    let delim = [b',', b';', b'\t']
        .into_iter()
        .max_by_key(|d| (count_outside_quotes(line, *d), *d == b','))
        .unwrap_or(b',');
    let names: Vec<String> = split_fields(line, delim)
        .into_iter()
        .map(|f| String::from_utf8_lossy(strip_quotes(f)).trim().to_string())
        .collect();
    let ncols = names.len();
    if ncols > MAX_COLUMNS {
        return Err(InputError::new(
            path,
            format!("the header has {ncols} columns; at most {MAX_COLUMNS} are accepted"),
        )
        .line(1));
    }
    if ncols < 2 {
        return Err(InputError::new(
            path,
            "the header row has a single column; no delimiter (',' ';' or tab) was found",
        )
        .line(1)
        .hint("the first line must name the columns, e.g. t,va,vb,vc,ia,ib,ic"));
    }
    if let Some(i) = names.iter().position(|h| h.is_empty()) {
        return Err(
            InputError::new(path, format!("column {} has no name", i + 1))
                .line(1)
                .hint("give every column a name in the header row"),
        );
    }
    let bare = names.iter().map(|h| channels::split_unit(h)).collect();
    Ok(Header {
        end,
        delim,
        names,
        bare,
    })
}

/// Columns mapped to channel keys, and the time column.
struct Columns {
    time: Option<usize>,
    mapped: Vec<(ChannelKey, usize)>,
    connection: Connection,
    kind: RecordingKind,
    notes: Vec<String>,
}

impl Header {
    /// The one column of this name (any case).
    fn find(&self, path: &Path, name: &str) -> Result<usize, InputError> {
        let hits: Vec<usize> = self
            .names
            .iter()
            .enumerate()
            .filter(|(_, h)| h.eq_ignore_ascii_case(name.trim()))
            .map(|(i, _)| i)
            .collect();
        match hits.len() {
            1 => Ok(hits[0]),
            0 => Err(InputError::new(path, "column not found in the header row")
                .line(1)
                .field(name)
                .hint(format!("columns are: {}", self.names.join(", ")))),
            _ => Err(InputError::new(path, "column name appears more than once")
                .line(1)
                .field(name)
                .hint("rename the columns so that each name is unique")),
        }
    }

    /// The column of a key: as mapped, else by its key name, else by a
    /// common name (Ua, V_b, IL3 … unit suffix apart) that only one column has.
    fn column_of(
        &self,
        path: &Path,
        map: &ChannelMap,
        key: ChannelKey,
    ) -> Result<Option<usize>, InputError> {
        if let Some(name) = map.column_for(key) {
            return self.find(path, name).map(Some);
        }
        if let Some(i) = self
            .names
            .iter()
            .position(|h| h.eq_ignore_ascii_case(key.name()))
        {
            return Ok(Some(i));
        }
        let hits: Vec<usize> = self
            .bare
            .iter()
            .enumerate()
            .filter(|(_, (h, _))| channels::name_means(h) == Some(key))
            .map(|(i, _)| i)
            .collect();
        Ok((hits.len() == 1).then(|| hits[0]))
    }

    /// Resolves the mapping: time column, one column per key at most, a
    /// complete channel set.
    fn map_columns(
        &self,
        path: &Path,
        map: &ChannelMap,
        opts: &ImportOptions,
    ) -> Result<Columns, InputError> {
        let time: Option<usize> = match &map.time {
            Some(name) => Some(self.find(path, name)?),
            None => self
                .bare
                .iter()
                .position(|(h, _)| h.eq_ignore_ascii_case("t") || h.eq_ignore_ascii_case("time")),
        };
        if time.is_none() && map.sample_rate_hz.is_none() {
            return Err(InputError::new(path, "no time column")
                .line(1)
                .hint(format!(
                    "name it 't' or 'time', map it with --map time=COLUMN, or give --sample-rate HZ (plan: channels.sample_rate_hz) for a file without one; columns are: {}",
                    self.names.join(", ")
                )));
        }
        let mut mapped: Vec<(ChannelKey, usize)> = Vec::new();
        for key in ChannelKey::ALL {
            let Some(c) = self.column_of(path, map, key)? else {
                continue;
            };
            let twice = |what: String| {
                InputError::new(
                    path,
                    format!("column is mapped both as {what} and as '{key}'"),
                )
                .line(1)
                .field(&self.names[c])
            };
            if Some(c) == time {
                return Err(twice("time".into()));
            }
            if let Some((other, _)) = mapped.iter().find(|(_, oc)| *oc == c) {
                return Err(twice(format!("'{other}'")));
            }
            mapped.push((key, c));
        }
        let keys: Vec<ChannelKey> = mapped.iter().map(|(k, _)| *k).collect();
        let connection = map.connection.unwrap_or(Connection::PhaseToNeutral);
        let set = channels::settle_channel_set(path, &keys, connection, opts.partial)?;
        mapped.retain(|(k, _)| !set.dropped.contains(k));
        Ok(Columns {
            time,
            mapped,
            connection,
            kind: set.kind,
            notes: set.notes,
        })
    }
}

/// The mapped columns' units, factors and descriptions.
struct ChannelUnits {
    col_slot: Vec<u16>,
    scale: Vec<f64>,
    channels: Vec<ChannelInfo>,
    slot_keys: Vec<ChannelKey>,
}

/// Units: as given, else from the header's unit suffix ("Ua(kV)"), else
/// V and A (waveforms) or pu (RMS-level).
fn channel_units(
    path: &Path,
    header: &Header,
    cols: &Columns,
    map: &ChannelMap,
) -> Result<ChannelUnits, InputError> {
    let suffix_of = |want: fn(ChannelKey) -> bool| -> Option<String> {
        cols.mapped
            .iter()
            .filter(|(k, _)| want(*k))
            .find_map(|(_, c)| header.bare[*c].1.clone())
    };
    let vu = map
        .voltage_unit
        .or_else(|| suffix_of(ChannelKey::is_voltage).and_then(|u| VoltageUnit::parse(&u)))
        .unwrap_or(match cols.kind {
            RecordingKind::Waveform => VoltageUnit::V,
            RecordingKind::RmsLevel => VoltageUnit::Pu,
        });
    let cu = map
        .current_unit
        .or_else(|| suffix_of(ChannelKey::is_phase_current).and_then(|u| CurrentUnit::parse(&u)))
        .unwrap_or(CurrentUnit::A);
    if cols.kind == RecordingKind::RmsLevel && vu != VoltageUnit::Pu {
        let v_pos = cols
            .mapped
            .iter()
            .find(|(k, _)| *k == ChannelKey::VPos)
            .map_or(0, |(_, c)| *c);
        return Err(InputError::new(
            path,
            "RMS-level channels (v_pos, p, q, ip, iq) must be in per unit",
        )
        .field(&header.names[v_pos])
        .hint("drop --voltage-unit, or convert the columns to per unit"));
    }
    let mut out = ChannelUnits {
        col_slot: vec![SKIP; header.names.len()],
        scale: Vec::new(),
        channels: Vec::new(),
        slot_keys: Vec::new(),
    };
    if let Some(tc) = cols.time {
        out.col_slot[tc] = TIME;
    }
    for (slot, (key, col)) in cols.mapped.iter().enumerate() {
        out.col_slot[*col] = slot as u16;
        let (unit, factor, per_unit): (String, f64, bool) = if key.is_voltage() {
            (vu.label().into(), vu.factor(), vu == VoltageUnit::Pu)
        } else if key.is_phase_current() {
            (cu.label().into(), cu.factor(), cu == CurrentUnit::Pu)
        } else if *key == ChannelKey::Status {
            ("1 = connected".into(), 1.0, false)
        } else {
            ("pu".into(), 1.0, true)
        };
        out.scale.push(factor);
        out.slot_keys.push(*key);
        out.channels.push(ChannelInfo {
            key: *key,
            source: header.names[*col].clone(),
            index: *col,
            unit,
            scale: factor,
            canonical_unit: channels::canonical_unit(*key, per_unit),
        });
    }
    Ok(out)
}

/// What the first data row tells: decimal comma, how time is written.
struct FirstRow {
    decimal_comma: bool,
    time: TimeKind,
    /// The first time as written.
    time_text: String,
}

fn read_first_row(
    path: &Path,
    header: &Header,
    time_col: Option<usize>,
    map: &ChannelMap,
    rest: &[u8],
) -> Result<FirstRow, InputError> {
    let first_end = memchr::memchr(b'\n', rest).unwrap_or(rest.len());
    let mut first = &rest[..first_end];
    if let [r @ .., b'\r'] = first {
        first = r;
    }
    if is_blank(first) {
        return Err(
            InputError::new(path, "the file has a header row but no data rows")
                .line(2)
                .hint("a recording needs at least two samples"),
        );
    }
    let decimal_comma = header.delim != b',' && first.contains(&b',');
    let time_text = match time_col {
        Some(tc) => split_fields(first, header.delim)
            .get(tc)
            .map(|f| String::from_utf8_lossy(strip_quotes(f)).into_owned())
            .unwrap_or_default(),
        None => "0".into(),
    };
    let numeric = fast_float2::parse::<f64, _>(time_text.replace(',', ".").trim()).is_ok();
    let time = if let (None, Some(r)) = (time_col, map.sample_rate_hz) {
        TimeKind::Rate(r)
    } else if numeric {
        TimeKind::Seconds
    } else if let Some(origin) = parse_timestamp(&time_text) {
        TimeKind::Timestamp(origin)
    } else {
        return Err(InputError::new(
            path,
            format!("time '{time_text}' is neither seconds nor an ISO-8601 timestamp"),
        )
        .line(2)
        .column(time_col.unwrap_or(0) as u64 + 1)
        .field(&header.names[time_col.unwrap_or(0)])
        .hint("write time in seconds (e.g. 0.0001) or as 2026-03-01T12:00:00.000123"));
    };
    Ok(FirstRow {
        decimal_comma,
        time,
        time_text,
    })
}

/// The format facts a reviewer sees (delimiter, decimal separator, time).
fn header_facts(
    header: &Header,
    time_col: Option<usize>,
    layout: &Layout,
) -> Vec<(String, String)> {
    let delimiter = match layout.delim {
        b',' => "comma",
        b';' => "semicolon",
        _ => "tab",
    };
    let time = match (time_col, &layout.time) {
        (None, TimeKind::Rate(r)) => format!("none: rows at {r} Hz (as given)"),
        (Some(tc), t) => format!(
            "{} ({})",
            header.names[tc],
            match t {
                TimeKind::Timestamp(_) => "ISO-8601 timestamps",
                _ => "seconds",
            }
        ),
        (None, _) => "none".into(),
    };
    vec![
        ("delimiter".into(), delimiter.into()),
        (
            "decimal separator".into(),
            if layout.decimal_comma {
                "comma"
            } else {
                "point"
            }
            .into(),
        ),
        ("time column".into(), time),
    ]
}

/// Every column of the file, with the key it was mapped to.
fn source_channels(header: &Header, cols: &Columns) -> Vec<crate::model::SourceChannel> {
    header
        .names
        .iter()
        .enumerate()
        .map(|(i, h)| crate::model::SourceChannel {
            kind: "column",
            number: i as u64 + 1,
            name: h.clone(),
            phase: String::new(),
            circuit: String::new(),
            unit: String::new(),
            ps: String::new(),
            primary: None,
            secondary: None,
            mapped_to: cols.mapped.iter().find(|(_, c)| *c == i).map(|(k, _)| *k),
        })
        .collect()
}

/// Reads until the header and the rows used to estimate the step are in
/// `buf` (or [`PROBE_BYTES`], or the end); drops a UTF-8 byte-order mark.
fn read_probe(file: &mut Hashing<File>, path: &Path) -> Result<(Vec<u8>, bool), InputError> {
    let mut buf = Vec::new();
    let mut eof = fill(file, &mut buf, 1 << 20, path)?;
    while !eof && memchr::memchr_iter(b'\n', &buf).count() <= STEP_ESTIMATE_ROWS + 1 {
        if buf.len() >= PROBE_BYTES {
            break;
        }
        eof = fill(file, &mut buf, 1 << 20, path)?;
    }
    if buf.starts_with(&[0xEF, 0xBB, 0xBF]) {
        buf.drain(..3);
    }
    Ok((buf, eof))
}

/// Parses the first complete rows (at most [`STEP_ESTIMATE_ROWS`]) and
/// returns the nominal step: the median step, or 1/rate.
fn estimate_step(
    buf: &[u8],
    eof: bool,
    layout: &Layout,
    nslots: usize,
) -> (f64, Result<(), PartError>) {
    let mut probe = Part::default();
    probe.reset(nslots);
    // Complete lines only: when the first read stopped in the middle of
    // a line (a wide file), the probe ends at the last complete one.
    let complete = if eof {
        buf.len()
    } else {
        memchr::memrchr(b'\n', buf).map_or(0, |i| i + 1)
    };
    let limit = memchr::memchr_iter(b'\n', buf)
        .nth(STEP_ESTIMATE_ROWS)
        .map(|i| i + 1)
        .unwrap_or(complete)
        .min(complete);
    let parsed = parse_region(&buf[..limit], layout, &mut probe);
    let step = if let TimeKind::Rate(r) = layout.time {
        1.0 / r
    } else if probe.time.len() >= 2 {
        timebase::median_step(&probe.time).unwrap_or(f64::NAN)
    } else {
        f64::NAN
    };
    (step, parsed)
}

impl CsvSource {
    pub fn open(path: &Path, map: &ChannelMap, opts: &ImportOptions) -> Result<Self, InputError> {
        let mut file = Hashing::new(crate::files::open_regular(path, "recording")?);
        let (mut buf, eof) = read_probe(&mut file, path)?;
        if buf.iter().all(|b| b.is_ascii_whitespace()) {
            return Err(InputError::new(path, "the file is empty")
                .hint("a recording needs a header row and at least two data rows"));
        }
        let header = read_header(path, &buf, eof)?;
        let cols = header.map_columns(path, map, opts)?;
        let units = channel_units(path, &header, &cols, map)?;
        let unmapped = header
            .names
            .iter()
            .enumerate()
            .filter(|(i, _)| units.col_slot[*i] == SKIP)
            .map(|(_, h)| h.clone())
            .collect();
        let data_start = (header.end + 1).min(buf.len());
        let first = read_first_row(path, &header, cols.time, map, &buf[data_start..])?;
        let layout = Layout {
            delim: header.delim,
            decimal_comma: first.decimal_comma,
            ncols: header.names.len(),
            col_slot: units.col_slot,
            scale: units.scale,
            time: first.time,
        };
        buf.drain(..data_start);
        let mut info = RecordingInfo {
            source_channels: source_channels(&header, &cols),
            line_frequency_hz: None,
            path: path.display().to_string(),
            format: crate::model::RecordingFormat::Csv,
            kind: cols.kind,
            connection: cols.connection,
            channels: units.channels,
            unmapped,
            samples: 0,
            sample_rate_hz: 0.0,
            first_time: first.time_text.trim().to_string(),
            duration_s: 0.0,
            max_step_deviation: 0.0,
            files: Vec::new(),
            header: header_facts(&header, cols.time, &layout),
            notes: cols.notes,
        };
        if cols.kind == RecordingKind::Waveform && cols.connection == Connection::PhaseToPhase {
            info.notes.push(channels::PHASE_TO_PHASE_NOTE.into());
        }
        let (nominal_step, probe_result) = estimate_step(&buf, eof, &layout, units.slot_keys.len());
        let mut src = CsvSource {
            path: path.to_path_buf(),
            file: Some(file),
            buf,
            eof,
            layout,
            first_data_line: 2,
            nominal_step,
            opts: *opts,
            info,
            slot_keys: units.slot_keys,
            header: header.names,
        };
        // A bad row among the first rows is reported now, with its place,
        // rather than as a failure to find the sample rate.
        if let Err(PartError { line, problem }) = probe_result {
            return Err(src.part_error(src.first_data_line + line, problem));
        }
        if nominal_step.is_finite() && nominal_step > 0.0 {
            src.info.sample_rate_hz = 1.0 / nominal_step;
        }
        Ok(src)
    }

    fn part_error(&self, line: u64, problem: RowProblem) -> InputError {
        let p = &self.path;
        let name = |col: usize| self.header.get(col).cloned().unwrap_or_default();
        match problem {
            RowProblem::NotNumber { col, text } => InputError::new(
                p,
                if text.is_empty() {
                    "empty field where a number is expected".to_string()
                } else {
                    format!("'{text}' is not a number")
                },
            )
            .line(line)
            .column(col as u64 + 1)
            .field(name(col))
            .hint(if self.layout.decimal_comma {
                "fields use a decimal comma (detected from the first data row); fix or remove the value"
            } else {
                "fix or remove the value; missing samples cannot be guessed"
            }),
            RowProblem::NotFinite { col, text } => {
                InputError::new(p, format!("value '{text}' is not finite"))
                    .line(line)
                    .column(col as u64 + 1)
                    .field(name(col))
                    .hint("NaN and infinity are not measurements; fix the recording or cut it before this row")
            }
            RowProblem::BadTimestamp { col, text } => InputError::new(
                p,
                format!("'{text}' is not an ISO-8601 timestamp like the first row's"),
            )
            .line(line)
            .column(col as u64 + 1)
            .field(name(col))
            .hint("use one time format for the whole column"),
            RowProblem::TooFewFields { have } => InputError::new(
                p,
                format!("row has {have} fields, the header has {}", self.layout.ncols),
            )
            .line(line)
            .field(name(have))
            .hint("the row is missing values (a truncated file?)"),
            RowProblem::TooManyFields => InputError::new(
                p,
                format!("row has more fields than the header's {}", self.layout.ncols),
            )
            .line(line)
            .hint(if self.layout.delim == b',' {
                "a decimal comma in a comma-separated file? Use ';' as delimiter then"
            } else {
                "check the delimiter and quoting of this row"
            }),
            RowProblem::BlankLine => InputError::new(p, "blank line inside the data")
                .line(line)
                .hint("remove blank lines between data rows"),
        }
    }
}

/// Line numbering and blank-line state across handed-over parts.
struct Handover {
    line_base: u64,
    /// A blank line seen at the end of a part: an error if data follows.
    pending_blank: Option<u64>,
}

/// A file cut into regions of whole lines of about `CHUNK` bytes, every
/// byte read hashed.
struct Regions<'p> {
    file: Hashing<File>,
    /// Bytes read after the last line end of the previous region.
    carry: Vec<u8>,
    eof: bool,
    done: bool,
    path: &'p Path,
}

impl Regions<'_> {
    /// The next region, in `buf` (its contents replaced, its memory
    /// reused); `None` after the last.
    fn next(&mut self, mut buf: Vec<u8>) -> Result<Option<Vec<u8>>, InputError> {
        let path = self.path;
        if buf.capacity() == 0 {
            buf.reserve(CHUNK + (64 << 10));
        }
        while !self.done {
            buf.clear();
            buf.append(&mut self.carry);
            loop {
                if !self.eof && buf.len() < CHUNK {
                    let want = CHUNK - buf.len();
                    self.eof = fill(&mut self.file, &mut buf, want, path)?;
                }
                if self.eof {
                    break;
                }
                match memchr::memrchr(b'\n', &buf) {
                    Some(i) => {
                        self.carry.extend_from_slice(&buf[i + 1..]);
                        buf.truncate(i + 1);
                        break;
                    }
                    None => {
                        // A line longer than the chunk: read more, up to the limit.
                        if buf.len() as u64 > MAX_LINE_BYTES {
                            return Err(InputError::new(
                                path,
                                format!("a line is longer than {MAX_LINE_BYTES} bytes"),
                            )
                            .hint(
                                "a recording has one sample per line; is this a CSV recording?",
                            ));
                        }
                        let more = buf.len().max(CHUNK);
                        self.eof = fill(&mut self.file, &mut buf, more, path)?;
                    }
                }
            }
            self.done = self.eof && self.carry.is_empty();
            if !buf.is_empty() {
                return Ok(Some(buf));
            }
        }
        Ok(None)
    }

    /// The SHA-256 of every byte read.
    fn digest(self) -> Option<String> {
        self.file.finish().ok().map(|(d, _)| d)
    }
}

/// Reader stage: the regions in order, then the digest; an error ends it.
fn read_regions(
    mut regions: Regions<'_>,
    tx: std::sync::mpsc::SyncSender<Result<Vec<u8>, InputError>>,
    recycle: std::sync::mpsc::Receiver<Vec<u8>>,
) -> Option<String> {
    loop {
        let buf = recycle.try_recv().unwrap_or_default();
        match regions.next(buf) {
            Ok(Some(region)) => {
                if tx.send(Ok(region)).is_err() {
                    return None;
                }
            }
            Ok(None) => return regions.digest(),
            Err(e) => {
                let _ = tx.send(Err(e));
                return None;
            }
        }
    }
}

/// State of the sequential time check across parts.
struct TimeCheck {
    /// No time column: rows at this rate.
    rate: Option<f64>,
    steps: timebase::StepCheck,
    /// Rows checked so far.
    count: u64,
    /// Time of the last row from the first, s.
    last: f64,
}

impl CsvSource {
    /// Checks time order and blank lines of parsed parts, in file order, and
    /// hands their samples to the sink.
    fn hand_over(
        &self,
        parts: &mut [Part],
        results: Vec<Result<(), PartError>>,
        st: &mut Handover,
        tc: &mut TimeCheck,
        sink: &mut dyn FrameSink,
    ) -> Result<(), InputError> {
        for (k, res) in results.into_iter().enumerate() {
            let part = &mut parts[k];
            if let Err(PartError { line, problem }) = res {
                return Err(self.part_error(st.line_base + line, problem));
            }
            if let Some(b) = st.pending_blank {
                if !part.time.is_empty() {
                    return Err(self.part_error(b, RowProblem::BlankLine));
                }
            }
            if let Some(b) = part.trailing_blank {
                st.pending_blank.get_or_insert(st.line_base + b);
            }
            check_time(tc, &mut part.time, st.line_base).map_err(|(line, msg, hint)| {
                InputError::new(&self.path, msg)
                    .line(line)
                    .field(
                        self.header[self
                            .layout
                            .col_slot
                            .iter()
                            .position(|s| *s == TIME)
                            .unwrap_or(0)]
                        .clone(),
                    )
                    .hint(hint)
            })?;
            if !part.time.is_empty() {
                let mut channels: [Option<&[f64]>; N_KEYS] = [None; N_KEYS];
                for (slot, key) in self.slot_keys.iter().enumerate() {
                    channels[key.index()] = Some(&part.cols[slot]);
                }
                sink.block(&Block {
                    time: &part.time,
                    channels,
                });
            }
            st.line_base += part.lines;
        }
        Ok(())
    }
}

/// A parsed region (its parts in file order with each part's result), or
/// the reader's error.
type Parsed = Result<ParsedRegion, InputError>;

struct ParsedRegion {
    parts: Vec<Part>,
    results: Vec<Result<(), PartError>>,
}

/// Parser stage: each region is cut at line boundaries into one piece per
/// thread and parsed in parallel; the parts go on in file order and come
/// back through `parts_back` for reuse, as the region buffers go back to
/// the reader.
fn parse_regions(
    layout: &Layout,
    nslots: usize,
    threads: usize,
    regions: std::sync::mpsc::Receiver<Result<Vec<u8>, InputError>>,
    recycle: std::sync::mpsc::Sender<Vec<u8>>,
    out: std::sync::mpsc::SyncSender<Parsed>,
    parts_back: std::sync::mpsc::Receiver<Vec<Part>>,
) {
    for region in regions {
        let region = match region {
            Ok(r) => r,
            Err(e) => {
                let _ = out.send(Err(e));
                return;
            }
        };
        let mut parts = parts_back.try_recv().unwrap_or_default();
        parts.resize_with(threads, Part::default);
        let pieces = split_at_lines(&region, threads);
        let results: Vec<Result<(), PartError>> = std::thread::scope(|s| {
            let handles: Vec<_> = pieces
                .iter()
                .zip(parts.iter_mut())
                .map(|(piece, part)| {
                    s.spawn(move || {
                        part.reset(nslots);
                        parse_region(piece, layout, part)
                    })
                })
                .collect();
            handles
                .into_iter()
                .map(|h| match h.join() {
                    Ok(r) => r,
                    Err(panic) => std::panic::resume_unwind(panic),
                })
                .collect()
        });
        let _ = recycle.send(region);
        if out.send(Ok(ParsedRegion { parts, results })).is_err() {
            return;
        }
    }
}

impl Source for CsvSource {
    fn info(&self) -> &RecordingInfo {
        &self.info
    }

    fn stream(mut self: Box<Self>, sink: &mut dyn FrameSink) -> Result<RecordingInfo, InputError> {
        // Three stages overlap: a reader thread fills the next region (cut at
        // a line boundary), a parser thread has it parsed in pieces, and this
        // thread checks time and hands the regions parsed before to the sink
        // (no stage waits for another to finish a region unless it is a
        // region ahead). One parser more than cores: the reader (which also
        // hashes) and this thread take turns with them. With one thread the
        // stages take turns on this thread.
        let threads = match self.opts.threads {
            0 => std::thread::available_parallelism()
                .map(|n| n.get() + 1)
                .unwrap_or(1)
                .clamp(1, 8),
            n => n,
        };
        let nslots = self.slot_keys.len();
        let mut tc = TimeCheck {
            rate: match self.layout.time {
                TimeKind::Rate(r) => Some(r),
                _ => None,
            },
            steps: timebase::StepCheck::new(self.nominal_step, self.opts.step_tolerance),
            count: 0,
            last: f64::NAN,
        };
        let file = self.file.take();
        let first = std::mem::take(&mut self.buf);
        let eof = self.eof;
        let this: &CsvSource = &self;
        let mut state = Handover {
            line_base: this.first_data_line,
            pending_blank: None,
        };
        let mut digest: Option<String> = None;
        let regions = file.map(|file| Regions {
            file,
            carry: first,
            eof,
            done: false,
            path: &this.path,
        });
        if threads == 1 {
            // One thread (many files read at once): the same stages in turn
            // on this thread, without starting any.
            if let Some(mut regions) = regions {
                let mut parts = vec![Part::default()];
                let mut spare = Vec::new();
                while let Some(region) = regions.next(spare)? {
                    parts[0].reset(nslots);
                    let results = vec![parse_region(&region, &this.layout, &mut parts[0])];
                    this.hand_over(&mut parts, results, &mut state, &mut tc, sink)?;
                    spare = region;
                }
                digest = regions.digest();
            }
            return self.finish(&tc, digest);
        }
        // Stages run ahead of the next one by one region (4 MB) each: every
        // stage stays busy without holding much.
        let (tx, rx) = std::sync::mpsc::sync_channel::<Result<Vec<u8>, InputError>>(1);
        let (recycle_tx, recycle_rx) = std::sync::mpsc::channel::<Vec<u8>>();
        let (parsed_tx, parsed_rx) = std::sync::mpsc::sync_channel::<Parsed>(1);
        let (parts_tx, parts_rx) = std::sync::mpsc::channel::<Vec<Part>>();
        std::thread::scope(|scope| -> Result<(), InputError> {
            let reader = match regions {
                Some(regions) => Some(scope.spawn(move || read_regions(regions, tx, recycle_rx))),
                None => {
                    drop(tx);
                    None
                }
            };
            let layout = &this.layout;
            scope.spawn(move || {
                parse_regions(layout, nslots, threads, rx, recycle_tx, parsed_tx, parts_rx);
            });
            // This thread: time checks and the sink, in file order, while the
            // next regions are read and parsed. Leaving on an error drops the
            // receivers, which stops the other stages.
            for parsed in parsed_rx {
                let ParsedRegion { mut parts, results } = parsed?;
                this.hand_over(&mut parts, results, &mut state, &mut tc, sink)?;
                let _ = parts_tx.send(parts);
            }
            // The reader hashed every byte it read: the digest of the file
            // as analysed.
            if let Some(r) = reader {
                digest = r.join().ok().flatten();
            }
            Ok(())
        })?;
        self.finish(&tc, digest)
    }
}

impl CsvSource {
    /// What the stream found, after the last row.
    fn finish(&self, tc: &TimeCheck, digest: Option<String>) -> Result<RecordingInfo, InputError> {
        let n = tc.count;
        if n < 2 {
            return Err(
                InputError::new(&self.path, format!("the recording has {n} data row(s)"))
                    .hint("a recording needs at least two samples"),
            );
        }
        let duration = tc.last;
        let mut info = self.info.clone();
        info.files = digest
            .map(|d| vec![(info.path.clone(), d)])
            .unwrap_or_default();
        info.samples = n;
        info.duration_s = duration;
        info.sample_rate_hz = (n - 1) as f64 / duration;
        info.max_step_deviation = tc.steps.max_deviation;
        Ok(info)
    }
}

/// Checks increasing, evenly spaced time and shifts it to start at zero.
/// On error returns (line, message, hint).
fn check_time(
    tc: &mut TimeCheck,
    time: &mut [f64],
    line_base: u64,
) -> Result<(), (u64, String, String)> {
    for (i, t) in time.iter_mut().enumerate() {
        let raw = match tc.rate {
            Some(r) => tc.count as f64 / r,
            None => *t,
        };
        *t = tc.steps.next(raw).map_err(|p| {
            let line = line_base + i as u64;
            match p {
                timebase::StepProblem::NotIncreasing { t, prev } => (
                    line,
                    format!(
                        "time {t} {} the previous sample's time {prev}",
                        if t == prev { "repeats" } else { "goes back from" }
                    ),
                    "time must increase from row to row; remove duplicated rows or sort the file".into(),
                ),
                timebase::StepProblem::Uneven {
                    step,
                    nominal,
                    deviation,
                    tolerance,
                } => (
                    line,
                    format!(
                        "uneven sampling: step {:.6e} s against the nominal {:.6e} s ({:.1} % off, tolerance {:.1} %)",
                        step,
                        nominal,
                        deviation * 100.0,
                        tolerance * 100.0
                    ),
                    "the phasor analysis needs evenly sampled data: fill the gap or split the recording here; \
                     --step-tolerance widens the accepted jitter".into(),
                ),
            }
        })?;
        tc.last = *t;
        tc.count += 1;
    }
    Ok(())
}

#[cfg(test)]
mod fast_decimal_tests {
    use super::{digit_run, fast_decimal};

    /// Digit by digit, the obvious way: the oracle of the eight-at-once run.
    fn digit_run_plain(b: &[u8], mut i: usize, mant: &mut u64) -> usize {
        let from = i;
        while i < b.len() && b[i].is_ascii_digit() {
            *mant = mant.wrapping_mul(10).wrapping_add(u64::from(b[i] - b'0'));
            i += 1;
        }
        i - from
    }

    #[test]
    fn digit_runs_agree_with_the_plain_loop_on_any_bytes() {
        // Every byte value after a run (the borrow and carry cases of the
        // eight-byte test), runs of 0 to 30 digits (wrapping past 2^64),
        // any start offset.
        let mut x: u64 = 0x2545_F491_4F6C_DD1D;
        let mut next = || {
            x ^= x << 13;
            x ^= x >> 7;
            x ^= x << 17;
            x
        };
        for _ in 0..300_000 {
            let r = next();
            let len = (r % 31) as usize;
            let mut b: Vec<u8> = (0..len).map(|_| b'0' + (next() % 10) as u8).collect();
            b.push((r >> 8) as u8);
            for _ in 0..(r >> 16) % 10 {
                b.push(next() as u8);
            }
            let start = ((r >> 24) % 3) as usize;
            let start = start.min(b.len());
            let (mut a, mut p) = (r >> 32, r >> 32);
            let got = digit_run(&b, start, &mut a);
            let want = digit_run_plain(&b, start, &mut p);
            assert_eq!((got, a), (want, p), "{b:?} from {start}");
        }
    }

    #[test]
    fn numbers_inside_a_line_agree_with_the_standard_library() {
        // As in a recording: the number is followed by more of the line, so
        // the eight-byte reads see the delimiter and what comes after it.
        let mut x: u64 = 0x9E37_79B9_7F4A_7C15;
        for k in 0..200_000u64 {
            x ^= x << 13;
            x ^= x >> 7;
            x ^= x << 17;
            let int = (x >> 20) % 10u64.pow((x % 9) as u32 + 1);
            let places = ((x >> 4) % 13) as u32;
            let dec = ((x >> 8) % 1_000_000_000_000) % 10u64.pow(places);
            let sign = ["", "-", "+"][(k % 3) as usize];
            let s = if places == 0 {
                format!("{sign}{int}")
            } else {
                format!("{sign}{int}.{dec:0w$}", w = places as usize)
            };
            let want: f64 = s.parse().unwrap();
            let tail = [",", ",-0.5,12.25\r\n", "\n1.0,2", ";9", "\t", " x"][(k % 6) as usize];
            let line = format!("{s}{tail}");
            match fast_decimal(line.as_bytes()) {
                Some((got, n)) => {
                    assert_eq!(n, s.len(), "{line:?}");
                    assert_eq!(got.to_bits(), want.to_bits(), "{line:?}");
                }
                None => assert!(s.bytes().filter(|b| b.is_ascii_digit()).count() > 15, "{s}"),
            }
        }
    }

    #[test]
    fn agrees_with_the_standard_library() {
        // Oracle: Rust's `str::parse::<f64>` (correctly rounded).
        let mut x: u64 = 0x9E37_79B9_7F4A_7C15;
        let mut fast = 0;
        for _ in 0..200_000 {
            x ^= x << 13;
            x ^= x >> 7;
            x ^= x << 17;
            let int = (x >> 20) % 10_000_000;
            let places = (x % 12) as u32;
            let dec = ((x >> 8) % 1_000_000_000_000) % 10u64.pow(places);
            let sign = if x & 1 == 1 { "-" } else { "" };
            let s = if places == 0 {
                format!("{sign}{int}")
            } else {
                format!("{sign}{int}.{dec:0w$}", w = places as usize)
            };
            let want: f64 = s.parse().unwrap();
            match fast_decimal(s.as_bytes()) {
                Some((got, n)) => {
                    assert_eq!(n, s.len());
                    assert_eq!(got.to_bits(), want.to_bits(), "{s}");
                    fast += 1;
                }
                // Only numbers with more than 15 significant digits may leave the fast path.
                None => assert!(s.bytes().filter(|b| b.is_ascii_digit()).count() > 15, "{s}"),
            }
        }
        assert!(fast > 150_000, "{fast}");
        for s in [
            "0",
            "-0.0",
            "12",
            "+3.5",
            "0.000000000000000000001",
            "9007199254740991",
        ] {
            let (got, _) = fast_decimal(s.as_bytes()).unwrap();
            assert_eq!(got.to_bits(), s.parse::<f64>().unwrap().to_bits(), "{s}");
        }
        // Out of the fast path: the caller falls back to the general parser.
        for s in [
            "1e5",
            "9007199254740993",
            "12345678901234567890",
            "NaN",
            "inf",
            "",
            "-",
            ".",
        ] {
            assert!(fast_decimal(s.as_bytes()).is_none(), "{s}");
        }
    }
}
