//! COMTRADE recordings (IEEE C37.111-1991/-1999/-2013, IEC 60255-24:2013):
//! a `.cfg` with its `.dat`, or a 2013 `.cff` single file, into the recording
//! model. Values are `a·x + b`, converted to primary values (channels flagged
//! `S` are multiplied by primary/secondary), then to V or A.
//!
//! Time comes from the sampling rate when the configuration gives one (the
//! standard makes it the primary time base) and from the timestamps ×
//! `timemult` otherwise. Several different sampling rates in one file are
//! refused: the one-cycle DFT needs a uniform rate.

pub mod cfg;
mod dat;
mod mapping;

use super::{channels, ChannelMap, ImportOptions, Source};
use crate::error::InputError;
use crate::model::{ChannelInfo, ChannelKey, FrameSink, RecordingInfo, SourceChannel};
use cfg::Config;
pub(crate) use mapping::Mapped;
use std::io::{BufRead, BufReader, Read};
use std::path::{Path, PathBuf};

/// Where the sample records are.
#[derive(Clone, Debug)]
struct DataPlace {
    path: PathBuf,
    offset: u64,
    /// Byte length for binary data inside a `.cff`.
    len: Option<u64>,
    /// Line number of the first data line (ASCII), for messages.
    first_line: u64,
    /// ASCII data inside a `.cff` ends at the next section header.
    in_cff: bool,
    /// `.cff`: SHA-256 of the bytes before the data as the configuration
    /// was read; the data stream checks that it reads the same bytes.
    prefix_sha256: Option<String>,
    /// What was tolerated while finding the data (non-standard markers).
    notes: Vec<String>,
}

pub struct ComtradeSource {
    cfg: Config,
    data: DataPlace,
    mapped: Vec<Mapped>,
    info: RecordingInfo,
    opts: ImportOptions,
    /// SHA-256 of the `.cfg` bytes parsed (none for a `.cff`).
    cfg_sha256: Option<String>,
    /// The sampling-rate segments and which of them are analysed.
    segments: Vec<RateSegment>,
}

/// Samples `first..=last` (1-based) recorded at `rate`.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(crate) struct RateSegment {
    pub rate: f64,
    pub first: u64,
    pub last: u64,
    /// Seconds from the first sample to this segment's first sample.
    pub t0: f64,
    /// Analysed (at `analysis_rate`), or skipped.
    pub used: bool,
    /// The one rate the analysis uses for every analysed segment.
    pub analysis_rate: f64,
}

/// Plans the analysis of a file with several sampling rates (IEEE
/// C37.111 `nrates` > 1): rates within 1 % of their median (a
/// frequency-tracking recorder) are analysed as one rate with each sample
/// at its true time; otherwise the segments at the highest rate are
/// analysed and the slower ones skipped (a one-cycle DFT needs one rate).
/// Returns the segments and a note saying what was done.
fn rate_segments(cfg: &Config) -> (Vec<RateSegment>, Option<String>) {
    let mut segs = Vec::new();
    let mut first = 1u64;
    let mut t0 = 0.0;
    for (rate, end) in &cfg.rates {
        if *end >= first {
            segs.push(RateSegment {
                rate: *rate,
                first,
                last: *end,
                t0,
                used: true,
                analysis_rate: *rate,
            });
            t0 += (*end - first + 1) as f64 / rate;
            first = end + 1;
        }
    }
    if segs.len() <= 1 {
        return (segs, None);
    }
    let mut rates: Vec<f64> = segs.iter().map(|s| s.rate).collect();
    rates.sort_by(f64::total_cmp);
    let median = rates[rates.len() / 2];
    let close = |r: f64, to: f64| (r - to).abs() <= 0.01 * to;
    let range = |s: &RateSegment| format!("{}–{}", s.first, s.last);
    if segs.iter().all(|s| close(s.rate, median)) {
        let (lo, hi) = (rates[0], rates[rates.len() - 1]);
        for s in &mut segs {
            s.analysis_rate = median;
        }
        let note = if hi > lo {
            Some(format!(
                "{} sampling-rate segments from {lo} to {hi} Hz (a frequency-tracking recorder): analysed as one rate of {median} Hz, each sample at its true time",
                segs.len()
            ))
        } else {
            None
        };
        return (segs, note);
    }
    let top = rates[rates.len() - 1];
    for s in &mut segs {
        s.used = close(s.rate, top);
        s.analysis_rate = top;
    }
    let used: Vec<String> = segs.iter().filter(|s| s.used).map(range).collect();
    let skipped: Vec<String> = segs
        .iter()
        .filter(|s| !s.used)
        .map(|s| format!("{} at {} Hz", range(s), s.rate))
        .collect();
    (
        segs,
        Some(format!(
            "several sampling rates: samples {} at {top} Hz are analysed (each segment on its own one-cycle window); samples {} are skipped (a one-cycle DFT needs one rate)",
            used.join(", "),
            skipped.join(", ")
        )),
    )
}

/// Decodes configuration text: UTF-8, else ISO 8859-1 (each byte one character).
fn decode(bytes: &[u8], forced: Option<&'static encoding_rs::Encoding>) -> (String, String) {
    super::decode_text(bytes, forced)
}

/// Largest accepted configuration (a .cfg, or the CFG section of a .cff).
pub const MAX_CFG_BYTES: u64 = 16 << 20;

fn read_all(path: &Path, what: &str) -> Result<Vec<u8>, InputError> {
    crate::files::read_capped(path, what, MAX_CFG_BYTES)
}

/// The data file next to a configuration: same stem, `.dat` in the same case.
fn dat_path(cfg_path: &Path) -> PathBuf {
    let ext = cfg_path
        .extension()
        .and_then(|e| e.to_str())
        .unwrap_or("cfg");
    let want = if ext.chars().any(|c| c.is_ascii_uppercase()) {
        "DAT"
    } else {
        "dat"
    };
    let p = cfg_path.with_extension(want);
    if p.exists() {
        return p;
    }
    let other = cfg_path.with_extension(if want == "dat" { "DAT" } else { "dat" });
    if other.exists() {
        other
    } else {
        p
    }
}

const CFF_MARK: &str = "--- file type:";

/// A `.cff` section marker: `--- file type: X ---` (IEEE C37.111-2013
/// clause 9), and near misses that writers produce (`-- file type  X ---`,
/// no colon, other spacing). Returns the text after "file type" and whether
/// the marker had the standard form.
fn section_marker(t: &str) -> Option<(String, bool)> {
    let exact = t.len() >= CFF_MARK.len()
        && t.as_bytes()[..CFF_MARK.len()].eq_ignore_ascii_case(CFF_MARK.as_bytes());
    if !t.starts_with("--") {
        return None;
    }
    let body = t.trim_start_matches('-').trim_start();
    let lower = body.get(..9)?.to_ascii_lowercase();
    if lower != "file type" {
        return None;
    }
    let rest = body[9..]
        .trim_start()
        .trim_start_matches(':')
        .trim()
        .trim_end_matches('-')
        .trim();
    Some((rest.split_whitespace().collect::<Vec<_>>().join(" "), exact))
}

/// Splits a `.cff` into its configuration text and the place of its data.
fn split_cff(
    path: &Path,
    encoding: Option<&'static encoding_rs::Encoding>,
) -> Result<(String, u64, String, DataPlace, Option<cfg::DataType>), InputError> {
    let file = crate::files::open_regular(path, "recording")?;
    let mut r = BufReader::new(file);
    let mut offset = 0u64;
    let mut line_no = 0u64;
    let mut section = String::new();
    let mut cfg_bytes = Vec::new();
    let mut cfg_first_line = 0;
    let mut line = Vec::new();
    let mut prefix = <sha2::Sha256 as sha2::Digest>::new();
    let mut near_miss = false;
    let mut marker_notes = Vec::new();
    loop {
        line.clear();
        let n = (&mut r)
            .take(dat::MAX_LINE_BYTES + 1)
            .read_until(b'\n', &mut line)
            .map_err(|e| InputError::new(path, format!("cannot read: {e}")))?;
        if n as u64 > dat::MAX_LINE_BYTES {
            return Err(InputError::new(
                path,
                format!(
                    "a line before the DAT section is longer than {} bytes",
                    dat::MAX_LINE_BYTES
                ),
            )
            .line(line_no + 1)
            .hint("a .cff starts with text sections (CFG, INF, HDR); is this a COMTRADE file?"));
        }
        if cfg_bytes.len() as u64 > MAX_CFG_BYTES {
            return Err(InputError::new(
                path,
                format!("the CFG section is larger than {MAX_CFG_BYTES} bytes"),
            ));
        }
        if n == 0 {
            return Err(
                InputError::new(path, "no '--- file type: DAT ... ---' section")
                    .hint("a .cff holds CFG, INF, HDR and DAT sections"),
            );
        }
        line_no += 1;
        offset += n as u64;
        sha2::Digest::update(&mut prefix, &line);
        let text = String::from_utf8_lossy(&line);
        let t = text.trim();
        if let Some((rest, exact)) = section_marker(t) {
            if !exact && !near_miss {
                near_miss = true;
                marker_notes.push(format!(
                    "section markers do not have the standard form '--- file type: X ---' (line {line_no}: '{}'); read anyway",
                    crate::text::excerpt(t, 40)
                ));
            }
            let mut parts = rest.splitn(2, ' ');
            section = parts.next().unwrap_or("").to_ascii_uppercase();
            if section == "CFG" {
                cfg_first_line = line_no + 1;
            }
            if section == "DAT" {
                let spec = parts.next().unwrap_or("").trim();
                let (ty, len) = match spec.split_once(':') {
                    Some((ty, n)) => (ty.trim(), Some(n.trim())),
                    None => (spec, None),
                };
                // A marker without the type: the configuration says it.
                let dt = if ty.is_empty() {
                    None
                } else {
                    Some(cfg::DataType::parse(ty).ok_or_else(|| {
                        InputError::new(
                            path,
                            format!(
                                "DAT section type '{ty}' is not ASCII, BINARY, BINARY32 or FLOAT32"
                            ),
                        )
                        .line(line_no)
                    })?)
                };
                let len = match len {
                    Some(n) => Some(n.parse::<u64>().map_err(|_| {
                        InputError::new(path, format!("DAT section length '{n}' is not a number"))
                            .line(line_no)
                    })?),
                    None => None,
                };
                if cfg_bytes.is_empty() {
                    return Err(
                        InputError::new(path, "no CFG section before the DAT section")
                            .line(line_no),
                    );
                }
                let (text, enc) = decode(&cfg_bytes, encoding);
                return Ok((
                    text,
                    cfg_first_line,
                    enc,
                    DataPlace {
                        path: path.to_path_buf(),
                        offset,
                        len,
                        first_line: line_no + 1,
                        in_cff: true,
                        prefix_sha256: Some(crate::digest::hex(&sha2::Digest::finalize(prefix))),
                        notes: marker_notes,
                    },
                    dt,
                ));
            }
            continue;
        }
        if section == "CFG" {
            cfg_bytes.extend_from_slice(&line);
        }
    }
}

/// The configuration text and where the data is.
struct Opened {
    text: String,
    /// Line number of the configuration's first line in the file.
    first_line: u64,
    encoding: String,
    data: DataPlace,
    /// `.cff`: the data type its DAT section header states.
    cff_type: Option<cfg::DataType>,
    /// SHA-256 of the `.cfg` bytes (none for a `.cff`).
    cfg_sha256: Option<String>,
}

/// Reads a `.cff`, or a `.cfg` with its `.dat` beside it.
fn read_configuration(path: &Path, map: &ChannelMap) -> Result<Opened, InputError> {
    let ext = path
        .extension()
        .and_then(|e| e.to_str())
        .unwrap_or("")
        .to_ascii_lowercase();
    if ext == "cff" {
        let (text, first_line, encoding, data, cff_type) = split_cff(path, map.encoding)?;
        return Ok(Opened {
            text,
            first_line,
            encoding,
            data,
            cff_type,
            cfg_sha256: None,
        });
    }
    let bytes = read_all(path, "configuration")?;
    let cfg_sha256 = Some(crate::digest::sha256_bytes(&bytes));
    let (text, encoding) = decode(&bytes, map.encoding);
    let dp = dat_path(path);
    if !dp.exists() {
        return Err(
            InputError::new(&dp, "the data file of this configuration does not exist").hint(
                format!("{} needs {} beside it", path.display(), dp.display()),
            ),
        );
    }
    Ok(Opened {
        text,
        first_line: 1,
        encoding,
        data: DataPlace {
            path: dp,
            offset: 0,
            len: None,
            first_line: 1,
            in_cff: false,
            prefix_sha256: None,
            notes: Vec::new(),
        },
        cff_type: None,
        cfg_sha256,
    })
}

/// The data type agrees with a `.cff`'s section header and the revision.
fn check_data_type(
    path: &Path,
    cfg: &Config,
    cff_type: Option<cfg::DataType>,
) -> Result<(), InputError> {
    if let Some(dt) = cff_type {
        if dt != cfg.data_type {
            return Err(InputError::new(
                path,
                format!(
                    "the DAT section is {} but the configuration says {}",
                    dt.name(),
                    cfg.data_type.name()
                ),
            ));
        }
    }
    if cfg.revision != cfg::Revision::R2013
        && matches!(
            cfg.data_type,
            cfg::DataType::Binary32 | cfg::DataType::Float32
        )
    {
        return Err(InputError::new(
            path,
            format!(
                "{} data needs revision 2013 (the file says {})",
                cfg.data_type.name(),
                cfg.revision.year()
            ),
        ));
    }
    Ok(())
}

/// Skew (µs) shifts a channel's samples in time; the analysis treats
/// channels as simultaneous, so say how large the angle error is.
fn skew_notes(cfg: &Config, mapped: &[Mapped]) -> Vec<String> {
    let mut notes = Vec::new();
    for i in mapped.iter().filter_map(|m| m.analog) {
        let skew = cfg.analogs[i].skew;
        if skew != 0.0 && skew.is_finite() {
            let deg = 360.0 * cfg.line_frequency.max(0.0) * skew * 1e-6;
            notes.push(format!(
                "channel '{}' has a skew of {skew} µs, not compensated: its phase angle is off by {deg:.3}° at {} Hz",
                cfg.analogs[i].name, cfg.line_frequency
            ));
        }
    }
    notes
}

/// The format facts a reviewer sees (station, revision, sampling …).
fn header_facts(
    cfg: &Config,
    data: &DataPlace,
    encoding: &str,
    mapped: &[Mapped],
) -> Vec<(String, String)> {
    let revision = format!(
        "{}{}",
        cfg.revision.year(),
        if cfg.revision_implied {
            " (no year given: 1991)"
        } else {
            ""
        }
    );
    let sampling = if cfg.rates.is_empty() {
        format!(
            "from timestamps × timemult {} ({} samples)",
            cfg.timemult, cfg.total_samples
        )
    } else {
        cfg.rates
            .iter()
            .map(|(r, e)| format!("{r} Hz to sample {e}"))
            .collect::<Vec<_>>()
            .join(", ")
    };
    let mut header = vec![
        ("station".to_string(), cfg.station.clone()),
        ("device".to_string(), cfg.device.clone()),
        ("revision".to_string(), revision),
        ("data type".to_string(), cfg.data_type.name().to_string()),
        ("data file".to_string(), data.path.display().to_string()),
        (
            "channels".to_string(),
            format!(
                "{} analog, {} digital",
                cfg.analogs.len(),
                cfg.digitals.len()
            ),
        ),
        (
            "line frequency".to_string(),
            format!("{} Hz", cfg.line_frequency),
        ),
        ("sampling".to_string(), sampling),
        ("first sample".to_string(), cfg.first_time.clone()),
        ("trigger".to_string(), cfg.trigger_time.clone()),
        ("encoding".to_string(), encoding.to_string()),
    ];
    if let Some((tc, lc)) = &cfg.time_code {
        header.push(("time code".to_string(), format!("{tc} (local {lc})")));
    }
    if let Some((q, l)) = &cfg.time_quality {
        header.push(("time quality".to_string(), format!("{q}, leap second {l}")));
    }
    let secondary: Vec<String> = mapped
        .iter()
        .filter_map(|m| m.analog)
        .filter(|i| !cfg.analogs[*i].is_primary)
        .map(|i| cfg.analogs[i].name.clone())
        .collect();
    header.push((
        "values".to_string(),
        if secondary.is_empty() {
            "primary values (as recorded)".to_string()
        } else {
            format!(
                "primary values: {} converted from secondary with primary/secondary",
                secondary.join(", ")
            )
        },
    ));
    header
}

/// The mapped channels as the recording model describes them.
fn channel_infos(cfg: &Config, mapped: &[Mapped]) -> Vec<ChannelInfo> {
    mapped
        .iter()
        .map(|m| ChannelInfo {
            key: m.key,
            source: m.name.clone(),
            index: m.analog.or(m.digital).unwrap_or(0) + 1,
            unit: match (m.analog, m.key) {
                (_, ChannelKey::Status) => "digital 1 = connected".to_string(),
                (Some(i), _) => format!(
                    "{} ({})",
                    cfg.analogs[i].unit,
                    if cfg.analogs[i].is_primary { "P" } else { "S" }
                ),
                (None, _) => String::new(),
            },
            scale: m.a * m.k,
            canonical_unit: m.canonical,
        })
        .collect()
}

/// Every channel of the configuration, with the key it was mapped to.
fn source_channels(cfg: &Config, mapped: &[Mapped]) -> Vec<SourceChannel> {
    let key_of = |analog: Option<usize>, digital: Option<usize>| {
        mapped
            .iter()
            .find(|m| {
                (analog.is_some() && m.analog == analog)
                    || (digital.is_some() && m.digital == digital)
            })
            .map(|m| m.key)
    };
    cfg.analogs
        .iter()
        .enumerate()
        .map(|(i, a)| SourceChannel {
            kind: "analog",
            number: a.index as u64,
            name: a.name.clone(),
            phase: a.phase.clone(),
            circuit: a.circuit.clone(),
            unit: a.unit.clone(),
            ps: if a.is_primary { "P" } else { "S" }.into(),
            primary: Some(a.primary),
            secondary: Some(a.secondary),
            mapped_to: key_of(Some(i), None),
        })
        .chain(cfg.digitals.iter().enumerate().map(|(i, d)| SourceChannel {
            kind: "digital",
            number: d.index as u64,
            name: d.name.clone(),
            phase: d.phase.clone(),
            circuit: d.circuit.clone(),
            unit: String::new(),
            ps: String::new(),
            primary: None,
            secondary: None,
            mapped_to: key_of(None, Some(i)),
        }))
        .collect()
}

impl ComtradeSource {
    pub fn open(path: &Path, map: &ChannelMap, opts: &ImportOptions) -> Result<Self, InputError> {
        let opened = read_configuration(path, map)?;
        let data = opened.data;
        let cfg = cfg::parse(path, &opened.text, opened.first_line)?;
        check_data_type(path, &cfg, opened.cff_type)?;
        let (segments, rate_note) = rate_segments(&cfg);
        // A truncated data file is the real problem, whatever the mapping.
        let truncated = |e: InputError| truncation(&cfg, &data).unwrap_or(e);
        let (mut mapped, connection, mut notes) =
            mapping::resolve(path, &cfg, map, opts.partial).map_err(truncated)?;
        notes.extend(cfg.warnings.iter().cloned());
        notes.extend(data.notes.iter().cloned());
        notes.extend(rate_note);
        notes.extend(skew_notes(&cfg, &mapped));
        let keys: Vec<ChannelKey> = mapped.iter().map(|m| m.key).collect();
        let set = channels::settle_channel_set(path, &keys, connection, opts.partial)
            .map_err(truncated)?;
        mapped.retain(|m| !set.dropped.contains(&m.key));
        notes.extend(set.notes);
        let used: Vec<String> = mapped.iter().map(|m| m.name.clone()).collect();
        let unmapped = cfg
            .analogs
            .iter()
            .map(|a| a.name.clone())
            .chain(cfg.digitals.iter().map(|d| d.name.clone()))
            .filter(|n| !used.contains(n))
            .collect();
        let sample_rate_hz = segments
            .iter()
            .find(|s| s.used)
            .map_or(f64::NAN, |s| s.analysis_rate);
        let info = RecordingInfo {
            source_channels: source_channels(&cfg, &mapped),
            line_frequency_hz: Some(cfg.line_frequency)
                .filter(|f| f.is_finite() && *f >= 10.0 && *f <= 1000.0),
            path: path.display().to_string(),
            format: crate::model::RecordingFormat::Comtrade,
            kind: set.kind,
            connection,
            channels: channel_infos(&cfg, &mapped),
            unmapped,
            samples: cfg.total_samples,
            sample_rate_hz,
            first_time: cfg.first_time.clone(),
            duration_s: f64::NAN,
            max_step_deviation: 0.0,
            header: header_facts(&cfg, &data, &opened.encoding, &mapped),
            notes,
            files: Vec::new(),
        };
        let mut src = ComtradeSource {
            cfg,
            data,
            mapped,
            info,
            opts: *opts,
            cfg_sha256: opened.cfg_sha256,
            segments,
        };
        if src.cfg.rates.is_empty() {
            // Timestamp-based: estimate the nominal step from the first records.
            let step = dat::probe_step(&src)?;
            src.info.sample_rate_hz = 1.0 / step;
        }
        Ok(src)
    }
}

impl Source for ComtradeSource {
    fn info(&self) -> &RecordingInfo {
        &self.info
    }

    fn stream(self: Box<Self>, sink: &mut dyn FrameSink) -> Result<RecordingInfo, InputError> {
        dat::stream(*self, sink)
    }
}

/// A data file that holds fewer records than the configuration announces,
/// found without decoding it (for a clear message before any other).
fn truncation(cfg: &Config, d: &DataPlace) -> Option<InputError> {
    let announced = cfg.total_samples;
    if announced == 0 {
        return None;
    }
    let file_len = std::fs::metadata(&d.path).ok()?.len();
    let avail = d.len.unwrap_or(file_len.saturating_sub(d.offset));
    let have = match cfg.data_type {
        cfg::DataType::Ascii => {
            // Records are lines; count them within a bounded read.
            let f = crate::files::open_regular(&d.path, "data file").ok()?;
            let mut r = BufReader::new(f);
            std::io::copy(&mut (&mut r).take(d.offset), &mut std::io::sink()).ok()?;
            let mut n = 0u64;
            let mut line = Vec::new();
            let mut last_line = d.first_line;
            loop {
                line.clear();
                match (&mut r)
                    .take(dat::MAX_LINE_BYTES)
                    .read_until(b'\n', &mut line)
                {
                    Ok(0) | Err(_) => break,
                    Ok(_) => {}
                }
                let t = String::from_utf8_lossy(&line);
                let t = t.trim_matches(|c: char| c.is_whitespace() || c == '\u{1a}');
                if d.in_cff && t.starts_with("--") {
                    break;
                }
                last_line += 1;
                if !t.is_empty() {
                    n += 1;
                }
                if n > announced {
                    return None;
                }
            }
            if n < announced {
                return Some(
                    InputError::new(
                        &d.path,
                        format!(
                            "the data is truncated: {n} of the {announced} records the configuration announces (endsamp), ending at line {}",
                            last_line.saturating_sub(1)
                        ),
                    )
                    .line(last_line.saturating_sub(1))
                    .hint("the data file was cut short; the recording cannot be used as it is"),
                );
            }
            return None;
        }
        dt => {
            let rec = 8
                + cfg.analogs.len() as u64 * dt.analog_bytes() as u64
                + 2 * (cfg.digitals.len() as u64).div_ceil(16);
            avail / rec.max(1)
        }
    };
    (have < announced).then(|| {
        InputError::new(
            &d.path,
            format!(
                "the data is truncated: {have} of the {announced} records the configuration announces (endsamp)"
            ),
        )
        .hint("the data file was cut short; the recording cannot be used as it is")
    })
}

/// The data file's reader, hashing every byte it reads: on this thread, or
/// (one recording read by itself) on a thread of its own, ahead.
pub(super) enum DataReader {
    Here(crate::files::Hashing<BufReader<std::fs::File>>),
    Ahead(crate::files::HashedAhead),
}

impl DataReader {
    /// Reads the rest; the digest of the whole file and its length.
    pub(super) fn finish(self) -> std::io::Result<(String, u64)> {
        match self {
            DataReader::Here(r) => r.finish(),
            DataReader::Ahead(r) => r.finish(),
        }
    }
}

impl std::io::Read for DataReader {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        match self {
            DataReader::Here(r) => r.read(buf),
            DataReader::Ahead(r) => r.read(buf),
        }
    }
}

impl std::io::BufRead for DataReader {
    fn fill_buf(&mut self) -> std::io::Result<&[u8]> {
        match self {
            DataReader::Here(r) => r.fill_buf(),
            DataReader::Ahead(r) => r.fill_buf(),
        }
    }
    fn consume(&mut self, amt: usize) {
        match self {
            DataReader::Here(r) => r.consume(amt),
            DataReader::Ahead(r) => r.consume(amt),
        }
    }
}

/// Opens the data bytes at their place: a `.dat` from its start, or a `.cff`
/// read from its start up to the data (checking that these are the bytes
/// the configuration came from), so that the digest covers the whole file.
/// With `ahead`, the data is then read and hashed on a thread of its own.
fn open_data(d: &DataPlace, ahead: bool) -> Result<DataReader, InputError> {
    let f = crate::files::open_regular(&d.path, "data file")
        .map_err(|e| e.hint("a .cfg needs its .dat beside it, with the same name"))?;
    if ahead {
        // Unbuffered up to the data: the thread goes on from there.
        let mut r = crate::files::Hashing::new(f);
        skip_prefix(&mut r, d)?;
        let (f, hash, bytes) = r.into_parts();
        return Ok(DataReader::Ahead(crate::files::HashedAhead::start(
            f, hash, bytes,
        )));
    }
    let mut r = crate::files::Hashing::new(BufReader::with_capacity(1 << 20, f));
    skip_prefix(&mut r, d)?;
    Ok(DataReader::Here(r))
}

/// Reads a `.cff`'s bytes before the data through `r`, checking that they
/// are the bytes the configuration was read from.
fn skip_prefix<R: std::io::Read>(
    r: &mut crate::files::Hashing<R>,
    d: &DataPlace,
) -> Result<(), InputError> {
    if d.offset == 0 {
        return Ok(());
    }
    let skipped = std::io::copy(&mut (&mut *r).take(d.offset), &mut std::io::sink())
        .map_err(|e| InputError::new(&d.path, format!("cannot read: {e}")))?;
    let same = d
        .prefix_sha256
        .as_ref()
        .is_none_or(|p| *p == r.digest_so_far());
    if skipped != d.offset || !same {
        return Err(
            InputError::new(&d.path, "the file changed while it was being read")
                .hint("check the recording when nothing is writing to it"),
        );
    }
    Ok(())
}
