//! COMTRADE data records (IEEE C37.111-2013 clause 8): ASCII lines, or
//! binary records of a 4-byte sample number, a 4-byte timestamp, the analog
//! values (2-byte or 4-byte two's complement, or IEEE 754 single) and the
//! status bits packed 16 to a 2-byte word, all little-endian. Missing values:
//! an empty ASCII field, 0x8000 (BINARY), 0x80000000 (BINARY32), NaN
//! (FLOAT32); a missing timestamp is 0xFFFFFFFF.

use super::cfg::DataType;
use super::{open_data, ComtradeSource, DataReader};
use crate::error::InputError;
use crate::model::{Block, FrameSink, RecordingInfo, N_KEYS};
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

enum Reader {
    Binary {
        r: DataReader,
        /// Bytes of data left (a `.cff` section of known length).
        left: Option<u64>,
        rec: usize,
        buf: Vec<u8>,
        /// The data ended in SUB (0x1A) padding, which was ignored.
        sub_padding: bool,
    },
    Ascii {
        r: DataReader,
        line: Vec<u8>,
        line_no: u64,
        in_cff: bool,
        done: bool,
        /// Runs of blank lines skipped between records.
        blank_lines: u64,
    },
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
        let r = open_data(&src.data)?;
        let cfg = &src.cfg;
        let reader = match cfg.data_type {
            DataType::Ascii => Reader::Ascii {
                r,
                line: Vec::with_capacity(256),
                line_no: src.data.first_line - 1,
                in_cff: src.data.in_cff,
                done: false,
                blank_lines: 0,
            },
            dt => {
                let rec =
                    8 + cfg.analogs.len() * dt.analog_bytes() + 2 * cfg.digitals.len().div_ceil(16);
                // At most READ_BYTES per read, whatever the record size: the
                // buffer grows with what the file holds, not with what the
                // configuration announces.
                let records = (READ_BYTES / rec).clamp(1, BLOCK);
                Reader::Binary {
                    r,
                    left: src.data.len,
                    rec,
                    buf: vec![0; rec * records],
                    sub_padding: false,
                }
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
            Reader::Ascii { blank_lines, .. } => (*blank_lines, false),
            Reader::Binary { sub_padding, .. } => (0, *sub_padding),
        }
    }

    /// Reads the rest of the file and returns the SHA-256 of all its bytes.
    fn finish(self) -> Result<String, InputError> {
        let r = match self.reader {
            Reader::Binary { r, .. } | Reader::Ascii { r, .. } => r,
        };
        r.finish()
            .map(|(d, _)| d)
            .map_err(|e| InputError::new(&self.src.data.path, format!("cannot read: {e}")))
    }

    /// Reads up to `max` records into `raw` (cleared first); 0 at the end.
    fn next(&mut self, max: usize, raw: &mut Raw) -> Result<usize, InputError> {
        raw.sample.clear();
        raw.stamp.clear();
        raw.line.clear();
        let mapped = &self.src.mapped;
        raw.cols.resize_with(mapped.len(), Vec::new);
        for c in &mut raw.cols {
            c.clear();
        }
        let cfg = &self.src.cfg;
        let na = cfg.analogs.len();
        let nd = cfg.digitals.len();
        let field_col = &self.field_col;
        match &mut self.reader {
            Reader::Binary {
                r,
                left,
                rec,
                buf,
                sub_padding,
            } => {
                let want = (*rec * max)
                    .min(buf.len())
                    .min(left.map_or(usize::MAX, |l| l.min(usize::MAX as u64) as usize));
                let mut filled = 0;
                while filled < want {
                    match r.read(&mut buf[filled..want]) {
                        Ok(0) => break,
                        Ok(n) => filled += n,
                        Err(e) if e.kind() == std::io::ErrorKind::Interrupted => {}
                        Err(e) => {
                            return Err(InputError::new(
                                &self.src.data.path,
                                format!("cannot read: {e}"),
                            ))
                        }
                    }
                }
                if let Some(l) = left {
                    *l -= filled as u64;
                }
                let mut n = filled / *rec;
                let tail = &buf[n * *rec..filled];
                if !tail.is_empty() && tail.iter().all(|b| *b == 0x1a) {
                    // SUB padding after the last record: the end.
                    *sub_padding = true;
                    *left = Some(0);
                } else if filled % *rec != 0 && self.src.opts.partial {
                    // Inspect: the records before the cut are shown.
                    *left = Some(0);
                } else if filled % *rec != 0 {
                    return Err(InputError::new(
                        &self.src.data.path,
                        format!(
                            "record of sample {} is truncated: {} of {} bytes",
                            self.count + n as u64 + 1,
                            filled % *rec,
                            *rec
                        ),
                    )
                    .hint("the data file was cut short; the recording cannot be used as it is"));
                }
                let ab = cfg.data_type.analog_bytes();
                let dt = cfg.data_type;
                for k in 0..n {
                    let b = &buf[k * *rec..(k + 1) * *rec];
                    if b.iter().all(|x| *x == 0x1a) {
                        // Whole records of SUB padding: the data ended.
                        *sub_padding = true;
                        *left = Some(0);
                        n = k;
                        break;
                    }
                    let u32_at =
                        |o: usize| u32::from_le_bytes([b[o], b[o + 1], b[o + 2], b[o + 3]]);
                    raw.sample.push(u32_at(0) as u64);
                    let ts = u32_at(4);
                    raw.stamp
                        .push(if ts == u32::MAX { f64::NAN } else { ts as f64 });
                    for (c, m) in mapped.iter().enumerate() {
                        let v = if let Some(i) = m.analog {
                            let o = 8 + i * ab;
                            match dt {
                                DataType::Binary => {
                                    let x = i16::from_le_bytes([b[o], b[o + 1]]);
                                    if x == i16::MIN {
                                        f64::NAN
                                    } else {
                                        x as f64
                                    }
                                }
                                DataType::Binary32 => {
                                    let x =
                                        i32::from_le_bytes([b[o], b[o + 1], b[o + 2], b[o + 3]]);
                                    if x == i32::MIN {
                                        f64::NAN
                                    } else {
                                        x as f64
                                    }
                                }
                                _ => {
                                    f32::from_le_bytes([b[o], b[o + 1], b[o + 2], b[o + 3]]) as f64
                                }
                            }
                        } else if let Some(d) = m.digital {
                            let o = 8 + na * ab + 2 * (d / 16);
                            let w = u16::from_le_bytes([b[o], b[o + 1]]);
                            ((w >> (d % 16)) & 1) as f64
                        } else {
                            f64::NAN
                        };
                        raw.cols[c].push(v);
                    }
                }
                self.count += n as u64;
                Ok(n)
            }
            Reader::Ascii {
                r,
                line,
                line_no,
                in_cff,
                done,
                blank_lines,
            } => {
                let path = self.src.data.path.clone();
                let mut n = 0;
                let nfields = 2 + na + nd;
                let mut pending_blank: Option<u64> = None;
                while n < max && !*done {
                    line.clear();
                    let got = (&mut *r)
                        .take(MAX_LINE_BYTES + 1)
                        .read_until(b'\n', line)
                        .map_err(|e| InputError::new(&path, format!("cannot read: {e}")))?;
                    if got == 0 {
                        *done = true;
                        break;
                    }
                    if got as u64 > MAX_LINE_BYTES {
                        return Err(InputError::new(
                            &path,
                            format!("a line is longer than {MAX_LINE_BYTES} bytes"),
                        )
                        .line(*line_no + 1)
                        .hint(
                            "an ASCII data record is one line per sample; is this the data file?",
                        ));
                    }
                    *line_no += 1;
                    let text = trim(line);
                    if text.is_empty() {
                        pending_blank.get_or_insert(*line_no);
                        continue;
                    }
                    if *in_cff && text.starts_with(b"---") {
                        *done = true;
                        break;
                    }
                    if pending_blank.take().is_some() {
                        // Blank lines between records: skipped, as every
                        // general-purpose reader does, and counted.
                        *blank_lines += 1;
                    }
                    let mut field = 0usize;
                    let mut vals: [f64; 2] = [f64::NAN; 2];
                    let mut row_cols: smallvec_cols::Cols = smallvec_cols::Cols::new(mapped.len());
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
                                    &path,
                                    format!(
                                        "{what}: '{}' is not a number",
                                        String::from_utf8_lossy(p)
                                    ),
                                )
                                .line(*line_no)
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
                            &path,
                            format!("record has {field} fields; the configuration gives {nfields} (n, timestamp, {na} analog, {nd} digital)"),
                        )
                        .line(*line_no)
                        .hint("check the channel counts on line 2 of the configuration"));
                    }
                    if !vals[0].is_finite() {
                        return Err(InputError::new(&path, "the sample number is missing")
                            .line(*line_no)
                            .column(1));
                    }
                    raw.sample.push(vals[0] as u64);
                    raw.stamp.push(vals[1]);
                    raw.line.push(*line_no);
                    for c in 0..mapped.len() {
                        raw.cols[c].push(row_cols.get(c));
                    }
                    n += 1;
                }
                self.count += n as u64;
                Ok(n)
            }
        }
    }
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
    d.next(4096, &mut raw)?;
    let unit = stamp_unit(src);
    let mut steps: Vec<f64> = raw
        .stamp
        .windows(2)
        .map(|w| (w[1] - w[0]) * unit)
        .filter(|s| *s > 0.0)
        .collect();
    steps.sort_by(f64::total_cmp);
    steps.get(steps.len() / 2).copied().ok_or_else(|| {
        InputError::new(&src.data.path, "the sampling rate is 0 (timestamps) but fewer than two increasing timestamps were found")
            .hint("the recording needs timestamps or a sampling rate")
    })
}

pub(super) fn stream(
    src: ComtradeSource,
    sink: &mut dyn FrameSink,
) -> Result<RecordingInfo, InputError> {
    let mut d = Decoder::new(&src)?;
    let mut raw = Raw::default();
    let nm = src.mapped.len();
    let mut time: Vec<f64> = Vec::with_capacity(BLOCK);
    let mut cols: Vec<Vec<f64>> = vec![Vec::with_capacity(BLOCK); nm];
    let segs = &src.segments;
    let seg = segs.first();
    let mut seg_k = 0usize;
    let mut in_use = true;
    // Hands the collected samples to the sink as one block.
    let flush = |time: &mut Vec<f64>, cols: &mut Vec<Vec<f64>>, sink: &mut dyn FrameSink| {
        if time.is_empty() {
            return;
        }
        let mut channels: [Option<&[f64]>; N_KEYS] = [None; N_KEYS];
        for (c, m) in src.mapped.iter().enumerate() {
            channels[m.key.index()] = Some(&cols[c]);
        }
        sink.block(&Block { time, channels });
        time.clear();
        for c in cols.iter_mut() {
            c.clear();
        }
    };
    let unit = stamp_unit(&src);
    let nominal = 1.0 / src.info.sample_rate_hz;
    let mut first_stamp: Option<f64> = None;
    let mut prev_t = f64::NAN;
    let mut prev_n: Option<u64> = None;
    let mut max_dev: f64 = 0.0;
    let mut index: u64 = 0;
    let announced = src.cfg.total_samples;
    let mut extra_record = false;
    let mut stopped: Option<String> = None;
    loop {
        let n = d.next(BLOCK, &mut raw)?;
        if n == 0 {
            break;
        }
        for k in 0..n {
            let sample_no = index + 1;
            let place = |e: InputError| -> InputError {
                match raw.line.get(k) {
                    Some(l) => e.line(*l),
                    None => e,
                }
            };
            if announced > 0 && sample_no > announced {
                // One record more than announced (a recorder that counts
                // endsamp from 0): read it, say so.
                if sample_no != announced + 1 {
                    return Err(place(d.err(format!(
                        "the data holds more than the {announced} samples the configuration announces (endsamp)"
                    )))
                    .hint("check the last endsamp of the configuration"));
                }
                extra_record = true;
            }
            if let Some(p) = prev_n {
                if raw.sample[k] != p.wrapping_add(1) && raw.sample[k] != (p + 1) % (1u64 << 32) {
                    return Err(place(d.err(format!(
                        "sample number jumps from {p} to {} at sample {sample_no}",
                        raw.sample[k]
                    )))
                    .hint("records are missing or out of order"));
                }
            }
            prev_n = Some(raw.sample[k]);
            let t = match seg {
                Some(_) => {
                    // Move to the segment of this sample.
                    while seg_k + 1 < segs.len() && sample_no > segs[seg_k].last {
                        seg_k += 1;
                    }
                    let sg = &segs[seg_k];
                    let used = sg.used && sample_no >= sg.first;
                    if used != in_use {
                        // Hand over what was collected, then say whether
                        // the next samples follow without a break.
                        flush(&mut time, &mut cols, sink);
                        if used && index > 0 {
                            sink.gap();
                        }
                        in_use = used;
                    }
                    sg.t0 + (sample_no.saturating_sub(sg.first)) as f64 / sg.rate
                }
                None => {
                    let s = raw.stamp[k];
                    if !s.is_finite() {
                        return Err(place(
                            d.err(format!("the timestamp of sample {sample_no} is missing")),
                        )
                        .hint("with a sampling rate of 0, every record needs its timestamp"));
                    }
                    let f = *first_stamp.get_or_insert(s);
                    let t = (s - f) * unit;
                    if index > 0 {
                        let step = t - prev_t;
                        if !(step > 0.0) {
                            return Err(place(d.err(format!(
                                "timestamp of sample {sample_no} does not increase"
                            ))));
                        }
                        let dev = (step - nominal).abs() / nominal;
                        max_dev = max_dev.max(dev);
                        if dev > src.opts.step_tolerance && src.opts.partial {
                            // Inspect: show the evenly sampled part.
                            stopped = Some(format!(
                                "uneven sampling from sample {sample_no} on (step {step:.6e} s against {nominal:.6e} s): the samples after it are not read"
                            ));
                            break;
                        }
                        if dev > src.opts.step_tolerance {
                            return Err(place(d.err(format!(
                                "uneven sampling at sample {sample_no}: step {step:.6e} s against the nominal {nominal:.6e} s"
                            )))
                            .hint("the phasor analysis needs evenly sampled data"));
                        }
                    }
                    t
                }
            };
            prev_t = t;
            if !in_use {
                index += 1;
                continue;
            }
            time.push(t);
            for (c, m) in src.mapped.iter().enumerate() {
                let x = raw.cols[c][k];
                if !x.is_finite() {
                    return Err(place(d.err(format!(
                        "sample {sample_no} of channel '{}' is missing",
                        m.name
                    )))
                    .hint("the phasor analysis needs every sample: cut the recording before the gap or fill it"));
                }
                let y = if m.digital.is_some() {
                    x
                } else {
                    (m.a * x + m.b) * m.k
                };
                if !y.is_finite() {
                    return Err(place(d.err(format!(
                        "sample {sample_no} of channel '{}' is not a finite number after scaling (a·x + b, ratios): {x} raw",
                        m.name
                    )))
                    .field(m.name.clone())
                    .hint("check the channel's multiplier a, offset b and primary/secondary ratios in the configuration"));
                }
                cols[c].push(y);
            }
            index += 1;
        }
        flush(&mut time, &mut cols, sink);
        if stopped.is_some() {
            break;
        }
    }
    let mut short = None;
    if stopped.is_none() && announced > 0 && index < announced {
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
    let mut tolerated: Vec<String> = short.into_iter().chain(stopped).collect();
    if extra_record {
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
    info.duration_s = prev_t;
    info.sample_rate_hz = match seg {
        Some(s) => s.analysis_rate,
        None => (index - 1) as f64 / prev_t,
    };
    info.max_step_deviation = max_dev;
    Ok(info)
}
