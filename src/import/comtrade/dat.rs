//! COMTRADE data records (IEEE C37.111-2013 clause 8): ASCII lines, or
//! binary records of a 4-byte sample number, a 4-byte timestamp, the analog
//! values (2-byte or 4-byte two's complement, or IEEE 754 single) and the
//! status bits packed 16 to a 2-byte word, all little-endian. Missing values:
//! an empty ASCII field, 0x8000 (BINARY), 0x80000000 (BINARY32), NaN
//! (FLOAT32); a missing timestamp is 0xFFFFFFFF.

use super::cfg::DataType;
use super::{open_data, ComtradeSource, DataReader, Mapped, RateSegment};
use crate::error::InputError;
use crate::import::timebase::{StepCheck, StepProblem};
use crate::model::{FrameSink, OwnedBlock, RecordingInfo};
use std::io::{BufRead, Read};

const BLOCK: usize = 16_384;
/// Bytes read from a binary data file at a time.
const READ_BYTES: usize = 4 << 20;
/// Longest accepted line of an ASCII data file.
pub const MAX_LINE_BYTES: u64 = 1 << 20;

/// Raw values of a block of records.
#[derive(Default)]
struct Raw {
    sample: Vec<u64>,
    /// Timestamps in file units (NaN when missing).
    stamp: Vec<f64>,
    /// Per mapped channel: raw value x (NaN when missing) or the status bit.
    cols: Vec<Vec<f64>>,
    /// ASCII: line of each record.
    line: Vec<u64>,
}

impl Raw {
    fn clear(&mut self, channels: usize) {
        self.sample.clear();
        self.stamp.clear();
        self.line.clear();
        self.cols.resize_with(channels, Vec::new);
        for c in &mut self.cols {
            c.clear();
        }
    }
}

/// Binary records (BINARY, BINARY32, FLOAT32).
struct Binary {
    r: DataReader,
    /// Bytes of data left (a `.cff` section of known length).
    left: Option<u64>,
    /// Bytes per record.
    rec: usize,
    buf: Vec<u8>,
    /// The data ended in SUB (0x1A) padding, which was ignored.
    sub_padding: bool,
}

/// ASCII records, one line each.
struct Ascii {
    r: DataReader,
    line: Vec<u8>,
    line_no: u64,
    in_cff: bool,
    done: bool,
    /// Runs of blank lines skipped between records.
    blank_lines: u64,
}

enum Reader {
    Binary(Binary),
    Ascii(Ascii),
}

struct Decoder<'a> {
    src: &'a ComtradeSource,
    reader: Reader,
    /// Records read so far.
    count: u64,
    /// Which mapped channels take each ASCII field (0-based).
    field_col: Vec<Vec<usize>>,
}

impl<'a> Decoder<'a> {
    fn new(src: &'a ComtradeSource) -> Result<Self, InputError> {
        let r = open_data(&src.data, src.opts.threads != 1)?;
        let cfg = &src.cfg;
        let reader = match cfg.data_type {
            DataType::Ascii => Reader::Ascii(Ascii {
                r,
                line: Vec::with_capacity(256),
                line_no: src.data.first_line - 1,
                in_cff: src.data.in_cff,
                done: false,
                blank_lines: 0,
            }),
            dt => {
                let rec =
                    8 + cfg.analogs.len() * dt.analog_bytes() + 2 * cfg.digitals.len().div_ceil(16);
                // At most READ_BYTES per read, whatever the record size: the
                // buffer grows with what the file holds, not with what the
                // configuration announces.
                let records = (READ_BYTES / rec).clamp(1, BLOCK);
                Reader::Binary(Binary {
                    r,
                    left: src.data.len,
                    rec,
                    buf: vec![0; rec * records],
                    sub_padding: false,
                })
            }
        };
        let na = cfg.analogs.len();
        let field_col = (0..2 + na + cfg.digitals.len())
            .map(|f| match f.checked_sub(2) {
                None => Vec::new(),
                Some(k) => (0..src.mapped.len())
                    .filter(|c| {
                        let m = &src.mapped[*c];
                        if k < na {
                            m.analog == Some(k)
                        } else {
                            m.digital == Some(k - na)
                        }
                    })
                    .collect(),
            })
            .collect();
        Ok(Decoder {
            src,
            reader,
            count: 0,
            field_col,
        })
    }

    fn err(&self, msg: String) -> InputError {
        InputError::new(&self.src.data.path, msg)
    }

    /// What was tolerated: runs of blank lines skipped, SUB padding ignored.
    fn tolerated(&self) -> (u64, bool) {
        match &self.reader {
            Reader::Ascii(a) => (a.blank_lines, false),
            Reader::Binary(b) => (0, b.sub_padding),
        }
    }

    /// Reads the rest of the file and returns the SHA-256 of all its bytes.
    fn finish(self) -> Result<String, InputError> {
        let r = match self.reader {
            Reader::Binary(Binary { r, .. }) | Reader::Ascii(Ascii { r, .. }) => r,
        };
        r.finish()
            .map(|(d, _)| d)
            .map_err(|e| InputError::new(&self.src.data.path, format!("cannot read: {e}")))
    }

    /// Reads up to `max` records into `raw` and their values, scaled to
    /// canonical units (NaN when missing), into `cols`, one per mapped
    /// channel (all cleared first); 0 at the end.
    fn next(
        &mut self,
        max: usize,
        raw: &mut Raw,
        cols: &mut Vec<Vec<f64>>,
    ) -> Result<usize, InputError> {
        let mapped = &self.src.mapped;
        raw.clear(mapped.len());
        cols.resize_with(mapped.len(), Vec::new);
        for c in cols.iter_mut() {
            c.clear();
        }
        let n = match &mut self.reader {
            // Decoded and scaled in one pass.
            Reader::Binary(b) => b.read(self.src, self.count, max, raw, cols)?,
            Reader::Ascii(a) => {
                let n = a.read(self.src, &self.field_col, max, raw)?;
                for ((m, x), y) in mapped.iter().zip(&raw.cols).zip(cols.iter_mut()) {
                    y.extend(x.iter().map(|x| scale_value(m, *x)));
                }
                n
            }
        };
        self.count += n as u64;
        Ok(n)
    }

    /// The raw value of mapped channel `c` in record `k` of the block last
    /// read (NaN when missing).
    fn raw_value(&self, raw: &Raw, c: usize, k: usize) -> f64 {
        match &self.reader {
            Reader::Ascii(_) => raw.cols[c][k],
            Reader::Binary(b) => {
                let r = &b.buf[k * b.rec..(k + 1) * b.rec];
                let m = &self.src.mapped[c];
                let dt = self.src.cfg.data_type;
                match m.analog {
                    Some(i) => analog_raw(r, i, dt),
                    None => status_value(r, m, dt, self.src.cfg.analogs.len()),
                }
            }
        }
    }
}

/// Analog channel `i`'s raw value in a binary record `b` (NaN when
/// missing); inlined into the column loops of [`Binary::read`] with `dt`
/// fixed there.
#[inline(always)]
fn analog_raw(b: &[u8], i: usize, dt: DataType) -> f64 {
    match dt {
        DataType::Binary => {
            let o = 8 + 2 * i;
            let x = u16_at(b, o) as i16;
            if x == i16::MIN {
                f64::NAN
            } else {
                f64::from(x)
            }
        }
        DataType::Binary32 => {
            let x = u32_at(b, 8 + 4 * i) as i32;
            if x == i32::MIN {
                f64::NAN
            } else {
                f64::from(x)
            }
        }
        _ => f64::from(f32::from_bits(u32_at(b, 8 + 4 * i))),
    }
}

#[inline(always)]
fn u16_at(b: &[u8], o: usize) -> u16 {
    let two: [u8; 2] = b[o..o + 2].try_into().unwrap_or_default();
    u16::from_le_bytes(two)
}

#[inline(always)]
fn u32_at(b: &[u8], o: usize) -> u32 {
    // One check of the four bytes, then one load.
    let four: [u8; 4] = b[o..o + 4].try_into().unwrap_or_default();
    u32::from_le_bytes(four)
}

/// A status channel's bit in a binary record `b` (NaN for a mapped channel
/// that is neither analog nor status); analog values are decoded field by
/// field in [`Binary::read`].
fn status_value(b: &[u8], m: &Mapped, dt: DataType, na: usize) -> f64 {
    match m.digital {
        Some(d) => {
            let o = 8 + na * dt.analog_bytes() + 2 * (d / 16);
            let w = u16_at(b, o);
            ((w >> (d % 16)) & 1) as f64
        }
        None => f64::NAN,
    }
}

impl Binary {
    /// Fills the buffer with up to `max` records; returns the bytes read.
    fn fill(&mut self, src: &ComtradeSource, max: usize) -> Result<usize, InputError> {
        let want = (self.rec * max).min(self.buf.len()).min(
            self.left
                .map_or(usize::MAX, |l| l.min(usize::MAX as u64) as usize),
        );
        let mut filled = 0;
        while filled < want {
            match self.r.read(&mut self.buf[filled..want]) {
                Ok(0) => break,
                Ok(n) => filled += n,
                Err(e) if e.kind() == std::io::ErrorKind::Interrupted => {}
                Err(e) => return Err(InputError::new(&src.data.path, format!("cannot read: {e}"))),
            }
        }
        if let Some(l) = &mut self.left {
            *l -= filled as u64;
        }
        Ok(filled)
    }

    /// Reads up to `max` records (`count` were read before).
    fn read(
        &mut self,
        src: &ComtradeSource,
        count: u64,
        max: usize,
        raw: &mut Raw,
        cols: &mut [Vec<f64>],
    ) -> Result<usize, InputError> {
        let filled = self.fill(src, max)?;
        let rec = self.rec;
        let mut n = filled / rec;
        let tail = &self.buf[n * rec..filled];
        if !tail.is_empty() && tail.iter().all(|b| *b == 0x1a) {
            // SUB padding after the last record: the end.
            self.sub_padding = true;
            self.left = Some(0);
        } else if filled % rec != 0 && src.opts.partial {
            // Inspect: the records before the cut are shown.
            self.left = Some(0);
        } else if filled % rec != 0 {
            return Err(InputError::new(
                &src.data.path,
                format!(
                    "record of sample {} is truncated: {} of {} bytes",
                    count + n as u64 + 1,
                    filled % rec,
                    rec
                ),
            )
            .hint("the data file was cut short; the recording cannot be used as it is"));
        }
        let dt = src.cfg.data_type;
        let na = src.cfg.analogs.len();
        if let Some(k) =
            (0..n).find(|k| self.buf[k * rec..(k + 1) * rec].iter().all(|x| *x == 0x1a))
        {
            // Whole records of SUB padding: the data ended.
            self.sub_padding = true;
            self.left = Some(0);
            n = k;
        }
        // Field by field over the records: each loop does one thing.
        let records = self.buf[..n * rec].chunks_exact(rec);
        raw.sample
            .extend(records.clone().map(|b| u64::from(u32_at(b, 0))));
        raw.stamp.extend(records.clone().map(|b| {
            let ts = u32_at(b, 4);
            if ts == u32::MAX {
                f64::NAN
            } else {
                f64::from(ts)
            }
        }));
        for (m, col) in src.mapped.iter().zip(cols.iter_mut()) {
            // The operations of `scale_value`, the data type fixed per loop.
            let (a, b0, k) = (m.a, m.b, m.k);
            match (m.analog, dt) {
                (Some(i), DataType::Binary) => col.extend(
                    records
                        .clone()
                        .map(|b| (a * analog_raw(b, i, DataType::Binary) + b0) * k),
                ),
                (Some(i), DataType::Binary32) => col.extend(
                    records
                        .clone()
                        .map(|b| (a * analog_raw(b, i, DataType::Binary32) + b0) * k),
                ),
                (Some(i), _) => col.extend(
                    records
                        .clone()
                        .map(|b| (a * analog_raw(b, i, DataType::Float32) + b0) * k),
                ),
                (None, _) => col.extend(
                    records
                        .clone()
                        .map(|b| scale_value(m, status_value(b, m, dt, na))),
                ),
            }
        }
        Ok(n)
    }
}

impl Ascii {
    /// The next line that is not blank (counting runs of blank lines
    /// between records), or `None` at the end of the data.
    fn next_line(&mut self, path: &std::path::Path) -> Result<Option<()>, InputError> {
        let mut pending_blank = false;
        loop {
            self.line.clear();
            let got = (&mut self.r)
                .take(MAX_LINE_BYTES + 1)
                .read_until(b'\n', &mut self.line)
                .map_err(|e| InputError::new(path, format!("cannot read: {e}")))?;
            if got == 0 {
                self.done = true;
                return Ok(None);
            }
            if got as u64 > MAX_LINE_BYTES {
                return Err(InputError::new(
                    path,
                    format!("a line is longer than {MAX_LINE_BYTES} bytes"),
                )
                .line(self.line_no + 1)
                .hint("an ASCII data record is one line per sample; is this the data file?"));
            }
            self.line_no += 1;
            let text = trim(&self.line);
            if text.is_empty() {
                pending_blank = true;
                continue;
            }
            if self.in_cff && text.starts_with(b"---") {
                self.done = true;
                return Ok(None);
            }
            if pending_blank {
                // Blank lines between records: skipped, as every
                // general-purpose reader does, and counted.
                self.blank_lines += 1;
            }
            return Ok(Some(()));
        }
    }

    /// Reads up to `max` records.
    fn read(
        &mut self,
        src: &ComtradeSource,
        field_col: &[Vec<usize>],
        max: usize,
        raw: &mut Raw,
    ) -> Result<usize, InputError> {
        let path = src.data.path.clone();
        let mut n = 0;
        while n < max && !self.done {
            if self.next_line(&path)?.is_none() {
                break;
            }
            let (sample, stamp, cols) = record(src, field_col, trim(&self.line), self.line_no)?;
            raw.sample.push(sample);
            raw.stamp.push(stamp);
            raw.line.push(self.line_no);
            for c in 0..src.mapped.len() {
                raw.cols[c].push(cols.get(c));
            }
            n += 1;
        }
        Ok(n)
    }
}

/// One ASCII record: sample number, timestamp and the mapped values.
fn record(
    src: &ComtradeSource,
    field_col: &[Vec<usize>],
    text: &[u8],
    line_no: u64,
) -> Result<(u64, f64, smallvec_cols::Cols), InputError> {
    let path = &src.data.path;
    let cfg = &src.cfg;
    let (na, nd) = (cfg.analogs.len(), cfg.digitals.len());
    let nfields = 2 + na + nd;
    let mut field = 0usize;
    let mut vals: [f64; 2] = [f64::NAN; 2];
    let mut row_cols = smallvec_cols::Cols::new(src.mapped.len());
    for (fi, part) in text.split(|c| *c == b',').enumerate() {
        field = fi + 1;
        if fi >= nfields {
            continue;
        }
        let p = trim(part);
        let parse = |what: &str| -> Result<f64, InputError> {
            if p.is_empty() {
                return Ok(f64::NAN);
            }
            match fast_float2::parse::<f64, _>(p) {
                Ok(v) if v.is_finite() => Ok(v),
                _ => Err(InputError::new(
                    path,
                    format!("{what}: '{}' is not a number", String::from_utf8_lossy(p)),
                )
                .line(line_no)
                .column(fi as u64 + 1)),
            }
        };
        if fi < 2 {
            vals[fi] = parse(if fi == 0 {
                "sample number"
            } else {
                "timestamp"
            })?;
        } else if !field_col[fi].is_empty() {
            let k = fi - 2;
            let name = if k < na {
                &cfg.analogs[k].name
            } else {
                &cfg.digitals[k - na].name
            };
            let v = parse(&format!("channel '{name}'"))?;
            for c in &field_col[fi] {
                row_cols.set(*c, v);
            }
        }
    }
    if field != nfields {
        return Err(InputError::new(
            path,
            format!("record has {field} fields; the configuration gives {nfields} (n, timestamp, {na} analog, {nd} digital)"),
        )
        .line(line_no)
        .hint("check the channel counts on line 2 of the configuration"));
    }
    if !vals[0].is_finite() {
        return Err(InputError::new(path, "the sample number is missing")
            .line(line_no)
            .column(1));
    }
    Ok((vals[0] as u64, vals[1], row_cols))
}

/// A fixed set of per-record values without allocation per record.
mod smallvec_cols {
    pub struct Cols {
        v: [f64; 32],
        extra: Vec<f64>,
    }
    impl Cols {
        pub fn new(n: usize) -> Self {
            Cols {
                v: [f64::NAN; 32],
                extra: if n > 32 {
                    vec![f64::NAN; n - 32]
                } else {
                    Vec::new()
                },
            }
        }
        pub fn set(&mut self, i: usize, x: f64) {
            if i < 32 {
                self.v[i] = x
            } else {
                self.extra[i - 32] = x
            }
        }
        pub fn get(&self, i: usize) -> f64 {
            if i < 32 {
                self.v[i]
            } else {
                self.extra[i - 32]
            }
        }
    }
}

/// Trims spaces, line ends and SUB (0x1A) padding.
fn trim(b: &[u8]) -> &[u8] {
    let pad = |c: &u8| c.is_ascii_whitespace() || *c == 0x1a;
    let s = b.iter().position(|c| !pad(c)).unwrap_or(b.len());
    let e = b.iter().rposition(|c| !pad(c)).map_or(s, |i| i + 1);
    &b[s..e]
}

/// Seconds per timestamp unit.
fn stamp_unit(src: &ComtradeSource) -> f64 {
    src.cfg.timemult * if src.cfg.nanoseconds { 1e-9 } else { 1e-6 }
}

/// Nominal step of a timestamp-based file: the median of the first steps.
pub(super) fn probe_step(src: &ComtradeSource) -> Result<f64, InputError> {
    let mut d = Decoder::new(src)?;
    let mut raw = Raw::default();
    d.next(4096, &mut raw, &mut Vec::new())?;
    // Scaling by the (positive) unit keeps the median's place.
    let unit = stamp_unit(src);
    crate::import::timebase::median_step(&raw.stamp)
        .map(|s| s * unit)
        .filter(|s| *s > 0.0)
        .ok_or_else(|| {
        InputError::new(&src.data.path, "the sampling rate is 0 (timestamps) but fewer than two increasing timestamps were found")
            .hint("the recording needs timestamps or a sampling rate")
    })
}

/// The time of each sample: from the rate segments, or from the
/// timestamps × timemult, checked step by step.
enum Clock<'a> {
    Segments {
        segs: &'a [RateSegment],
        k: usize,
    },
    Stamps {
        unit: f64,
        first: Option<f64>,
        steps: StepCheck,
    },
}

/// Why the clock stops: an error, or (reading what can be read) uneven
/// sampling from here on.
enum ClockStop {
    Error(InputError),
    Uneven(String),
}

impl<'a> Clock<'a> {
    fn new(src: &'a ComtradeSource) -> Self {
        if src.segments.is_empty() {
            Clock::Stamps {
                unit: stamp_unit(src),
                first: None,
                steps: StepCheck::new(1.0 / src.info.sample_rate_hz, src.opts.step_tolerance),
            }
        } else {
            Clock::Segments {
                segs: &src.segments,
                k: 0,
            }
        }
    }

    /// Time of sample `sample_no` (1-based), and whether it is analysed.
    fn at(
        &mut self,
        sample_no: u64,
        stamp: f64,
        d: &Decoder<'_>,
        partial: bool,
    ) -> Result<(f64, bool), ClockStop> {
        match self {
            Clock::Segments { segs, k } => {
                while *k + 1 < segs.len() && sample_no > segs[*k].last {
                    *k += 1;
                }
                let sg = &segs[*k];
                let used = sg.used && sample_no >= sg.first;
                let t = sg.t0 + (sample_no.saturating_sub(sg.first)) as f64 / sg.rate;
                Ok((t, used))
            }
            Clock::Stamps { unit, first, steps } => {
                if !stamp.is_finite() {
                    return Err(ClockStop::Error(
                        d.err(format!("the timestamp of sample {sample_no} is missing"))
                            .hint("with a sampling rate of 0, every record needs its timestamp"),
                    ));
                }
                let f = *first.get_or_insert(stamp);
                let t = (stamp - f) * *unit;
                match steps.next(t) {
                    Ok(t) => Ok((t, true)),
                    Err(StepProblem::NotIncreasing { .. }) => Err(ClockStop::Error(d.err(
                        format!("timestamp of sample {sample_no} does not increase"),
                    ))),
                    Err(StepProblem::Uneven { step, nominal, .. }) if partial => {
                        // Inspect: show the evenly sampled part.
                        Err(ClockStop::Uneven(format!(
                            "uneven sampling from sample {sample_no} on (step {step:.6e} s against {nominal:.6e} s): the samples after it are not read"
                        )))
                    }
                    Err(StepProblem::Uneven { step, nominal, .. }) => Err(ClockStop::Error(
                        d.err(format!(
                            "uneven sampling at sample {sample_no}: step {step:.6e} s against the nominal {nominal:.6e} s"
                        ))
                        .hint("the phasor analysis needs evenly sampled data"),
                    )),
                }
            }
        }
    }

    fn max_deviation(&self) -> f64 {
        match self {
            Clock::Segments { .. } => 0.0,
            Clock::Stamps { steps, .. } => steps.max_deviation,
        }
    }
}

/// One raw value of a mapped channel in canonical units.
fn scaled(m: &Mapped, x: f64, sample_no: u64, d: &Decoder<'_>) -> Result<f64, InputError> {
    if !x.is_finite() {
        return Err(d.err(format!(
            "sample {sample_no} of channel '{}' is missing",
            m.name
        ))
        .hint("the phasor analysis needs every sample: cut the recording before the gap or fill it"));
    }
    let y = scale_value(m, x);
    if !y.is_finite() {
        return Err(d.err(format!(
            "sample {sample_no} of channel '{}' is not a finite number after scaling (a·x + b, ratios): {x} raw",
            m.name
        ))
        .field(m.name.clone())
        .hint("check the channel's multiplier a, offset b and primary/secondary ratios in the configuration"));
    }
    Ok(y)
}

/// The value [`scaled`] gives when it accepts `x` (the same operations).
#[inline]
fn scale_value(m: &Mapped, x: f64) -> f64 {
    if m.digital.is_some() {
        x
    } else {
        (m.a * x + m.b) * m.k
    }
}

/// The first row from `from` on where [`scaled`] refuses a value (missing,
/// or not finite after scaling) in any channel. A missing raw value scales
/// to NaN or infinity, so the scaled values alone tell; each column is
/// first checked whole without branches and searched only when it fails.
fn first_refused(scaled: &[Vec<f64>], from: usize, n: usize) -> Option<usize> {
    scaled
        .iter()
        .filter(|y| y[from..n].iter().fold(false, |bad, v| bad | !v.is_finite()))
        .filter_map(|y| (from..n).find(|&k| !y[k].is_finite()))
        .min()
}

/// What the sample loop found.
struct Counted {
    index: u64,
    last_t: f64,
    extra_record: bool,
    stopped: Option<String>,
    max_deviation: f64,
}

/// The count and numbering of record `sample_no` (1-based) whose sample
/// number is `got`, after one numbered `prev`: true for the one record more
/// than announced (a recorder that counts endsamp from 0), which is read.
fn numbering(
    d: &Decoder<'_>,
    sample_no: u64,
    announced: u64,
    prev: Option<u64>,
    got: u64,
) -> Result<bool, InputError> {
    let extra = announced > 0 && sample_no > announced;
    if extra && sample_no != announced + 1 {
        return Err(d
            .err(format!(
                "the data holds more than the {announced} samples the configuration announces (endsamp)"
            ))
            .hint("check the last endsamp of the configuration"));
    }
    if let Some(p) = prev {
        if got != p.wrapping_add(1) && got != (p + 1) % (1u64 << 32) {
            return Err(d
                .err(format!(
                    "sample number jumps from {p} to {got} at sample {sample_no}"
                ))
                .hint("records are missing or out of order"));
        }
    }
    Ok(extra)
}

/// How many of the next rows (`samples`, their sample numbers, up to the
/// first row with a refused value) are ordinary, and the rate segment they
/// lie in (`None` for none): timed by a rate segment,
/// inside the segment and the announced samples, analysed as the rows
/// before them (or not), numbered on from `prev` without a jump or a wrap.
/// Anything else (the first row, a timestamp clock, a new segment) is left
/// to the row-by-row checks.
fn ordinary_rows<'a>(
    clock: &Clock<'a>,
    samples: &[u64],
    prev: Option<u64>,
    sample_no: u64,
    announced: u64,
    in_use: bool,
) -> Option<(usize, &'a RateSegment)> {
    let (Clock::Segments { segs, k }, Some(prev)) = (clock, prev) else {
        return None;
    };
    let sg = &segs[*k];
    if sample_no < sg.first || sample_no > sg.last || sg.used != in_use {
        return None;
    }
    let mut limit = (sg.last - sample_no + 1).min(samples.len() as u64);
    if announced > 0 {
        limit = limit.min(announced.saturating_sub(sample_no - 1));
    }
    let rows = samples[..limit as usize]
        .iter()
        .zip(prev + 1..)
        .take_while(|(s, want)| **s == *want)
        .count();
    (rows > 0).then_some((rows, sg))
}

/// What a block's rows come to, in order: runs of analysed rows and breaks.
enum Piece {
    Rows(std::ops::Range<usize>),
    Gap,
}

/// Hands a block's pieces to the sink: a block analysed whole is given
/// away with its buffers; returns the buffers for the next block.
fn hand_over(block: OwnedBlock, pieces: &[Piece], sink: &mut dyn FrameSink) -> OwnedBlock {
    if let [Piece::Rows(r)] = pieces {
        if r.start == 0 && r.end == block.time.len() {
            return sink.block_owned(block);
        }
    }
    for p in pieces {
        match p {
            Piece::Gap => sink.gap(),
            Piece::Rows(r) => sink.block(&block.rows(r.clone())),
        }
    }
    block
}

/// Reads every record: sample numbers in sequence, times, scaled values.
fn read_samples(
    src: &ComtradeSource,
    d: &mut Decoder<'_>,
    sink: &mut dyn FrameSink,
) -> Result<Counted, InputError> {
    let mut raw = Raw::default();
    let mut block = OwnedBlock::default();
    let mut clock = Clock::new(src);
    let announced = src.cfg.total_samples;
    let mut c = Counted {
        index: 0,
        last_t: f64::NAN,
        extra_record: false,
        stopped: None,
        max_deviation: 0.0,
    };
    let mut prev_n: Option<u64> = None;
    let mut in_use = true;
    let mut pieces: Vec<Piece> = Vec::new();
    loop {
        let n = d.next(BLOCK, &mut raw, &mut block.cols)?;
        if n == 0 {
            break;
        }
        block.keys.clear();
        block.keys.extend(src.mapped.iter().map(|m| m.key.index()));
        block.time.clear();
        pieces.clear();
        // Values are scaled for the whole block at once and handed on per
        // run of analysed rows; a row with a value that `scaled` refuses is
        // met in row order, so errors come in the same order as row by row.
        let mut refused = first_refused(&block.cols, 0, n);
        // First row of the analysed run not in `pieces` yet.
        let mut run: Option<usize> = None;
        let mut end = n;
        let mut k = 0;
        while k < n {
            let sample_no = c.index + 1;
            if let Some((m, sg)) = ordinary_rows(
                &clock,
                &raw.sample[k..refused.unwrap_or(n)],
                prev_n,
                sample_no,
                announced,
                in_use,
            ) {
                // Rows that the checks below would pass without a word:
                // their times in a tight loop (the same formula as
                // `Clock::at`).
                block.time.extend(
                    (sample_no..sample_no + m as u64)
                        .map(|no| sg.t0 + (no - sg.first) as f64 / sg.rate),
                );
                if in_use {
                    run.get_or_insert(k);
                }
                c.index += m as u64;
                c.last_t = block.time[k + m - 1];
                prev_n = Some(raw.sample[k + m - 1]);
                k += m;
                continue;
            }
            let place = |e: InputError| -> InputError {
                match raw.line.get(k) {
                    Some(l) => e.line(*l),
                    None => e,
                }
            };
            if numbering(d, sample_no, announced, prev_n, raw.sample[k]).map_err(place)? {
                c.extra_record = true;
            }
            prev_n = Some(raw.sample[k]);
            let (t, used) = match clock.at(sample_no, raw.stamp[k], d, src.opts.partial) {
                Ok(x) => x,
                Err(ClockStop::Error(e)) => return Err(place(e)),
                Err(ClockStop::Uneven(why)) => {
                    c.stopped = Some(why);
                    end = k;
                    break;
                }
            };
            // Every row's time, analysed or not: the runs index into it.
            block.time.push(t);
            if used != in_use {
                // What was collected goes first, then whether the next
                // samples follow without a break.
                if let Some(from) = run.take() {
                    pieces.push(Piece::Rows(from..k));
                }
                if used && c.index > 0 {
                    pieces.push(Piece::Gap);
                }
                in_use = used;
            }
            c.last_t = t;
            c.index += 1;
            if refused == Some(k) {
                if in_use {
                    // The error of the first channel refused, as row by row.
                    for (col, m) in src.mapped.iter().enumerate() {
                        scaled(m, d.raw_value(&raw, col, k), sample_no, d).map_err(place)?;
                    }
                }
                // A row that is not analysed may miss values.
                refused = first_refused(&block.cols, k + 1, n);
            }
            if in_use {
                run.get_or_insert(k);
            }
            k += 1;
        }
        if let Some(from) = run.take() {
            pieces.push(Piece::Rows(from..end));
        }
        for col in &mut block.cols {
            col.truncate(end);
        }
        block = hand_over(block, &pieces, sink);
        if c.stopped.is_some() {
            break;
        }
    }
    c.max_deviation = clock.max_deviation();
    Ok(c)
}

pub(super) fn stream(
    src: ComtradeSource,
    sink: &mut dyn FrameSink,
) -> Result<RecordingInfo, InputError> {
    let mut d = Decoder::new(&src)?;
    let c = if src.opts.threads == 1 {
        read_samples(&src, &mut d, sink)?
    } else {
        // Decoding and the analysis on a thread each.
        crate::import::ahead::ahead(sink, |forward| read_samples(&src, &mut d, forward))?
    };
    let (index, announced) = (c.index, src.cfg.total_samples);
    let mut short = None;
    if c.stopped.is_none() && announced > 0 && index < announced {
        let msg = format!(
            "the data ends after {index} samples; the configuration announces {announced} (endsamp): the data file is truncated"
        );
        if !src.opts.partial {
            return Err(d
                .err(msg)
                .hint("the data file is truncated or the configuration is wrong"));
        }
        short = Some(msg);
    }
    if index < 2 {
        return Err(d.err(match &short {
            Some(why) => why.clone(),
            None => format!("the recording has {index} sample(s)"),
        }));
    }
    let mut tolerated: Vec<String> = short.into_iter().chain(c.stopped).collect();
    if c.extra_record {
        tolerated.push(format!(
            "the data holds one record more than the {announced} the configuration announces (endsamp counted from 0); it is read"
        ));
    }
    let (blanks, sub) = d.tolerated();
    if blanks > 0 {
        tolerated.push(format!(
            "{blanks} run(s) of blank lines between data records were skipped"
        ));
    }
    if sub {
        tolerated.push("SUB (0x1A) padding at the end of the data file was ignored".into());
    }
    let data_sha = d.finish()?;
    let mut info = src.info.clone();
    info.notes.extend(tolerated);
    info.files = match &src.cfg_sha256 {
        Some(c) => vec![
            (info.path.clone(), c.clone()),
            (src.data.path.display().to_string(), data_sha),
        ],
        None => vec![(info.path.clone(), data_sha)],
    };
    info.samples = index;
    info.duration_s = c.last_t;
    info.sample_rate_hz = match src.segments.first() {
        Some(s) => s.analysis_rate,
        None => (index - 1) as f64 / c.last_t,
    };
    info.max_step_deviation = c.max_deviation;
    Ok(info)
}
