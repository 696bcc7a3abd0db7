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

use super::{check_channel_set, ChannelMap, ImportOptions, Source};
use crate::error::InputError;
use crate::model::{
    ChannelInfo, ChannelKey, Connection, CurrentUnit, FrameSink, RecordingInfo, RecordingKind,
    VoltageUnit,
};
use cfg::Config;
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
}

/// A mapped channel: where its value is and how to scale it.
#[derive(Clone, Debug)]
pub(crate) struct Mapped {
    pub key: ChannelKey,
    /// Analog index (0-based) or digital index.
    pub analog: Option<usize>,
    pub digital: Option<usize>,
    /// value = (a·x + b)·k
    pub a: f64,
    pub b: f64,
    pub k: f64,
    pub name: String,
}

pub struct ComtradeSource {
    cfg: Config,
    data: DataPlace,
    mapped: Vec<Mapped>,
    info: RecordingInfo,
    opts: ImportOptions,
    /// SHA-256 of the `.cfg` bytes parsed (none for a `.cff`).
    cfg_sha256: Option<String>,
}

/// Decodes configuration text: UTF-8, else ISO 8859-1 (each byte one character).
fn decode(bytes: &[u8]) -> (String, &'static str) {
    match std::str::from_utf8(bytes) {
        Ok(s) => (s.strip_prefix('\u{feff}').unwrap_or(s).to_string(), "UTF-8"),
        Err(_) => (bytes.iter().map(|b| *b as char).collect(), "ISO 8859-1"),
    }
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

/// Splits a `.cff` into its configuration text and the place of its data.
fn split_cff(
    path: &Path,
) -> Result<(String, u64, &'static str, DataPlace, cfg::DataType), InputError> {
    let file = crate::files::open_regular(path, "recording")?;
    let mut r = BufReader::new(file);
    let mut offset = 0u64;
    let mut line_no = 0u64;
    let mut section = String::new();
    let mut cfg_bytes = Vec::new();
    let mut cfg_first_line = 0;
    let mut line = Vec::new();
    let mut prefix = <sha2::Sha256 as sha2::Digest>::new();
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
        // Compare bytes: the line may hold anything (binary data, broken UTF-8).
        let mark = CFF_MARK.len();
        if t.len() >= mark && t.as_bytes()[..mark].eq_ignore_ascii_case(CFF_MARK.as_bytes()) {
            let rest = t[CFF_MARK.len()..]
                .trim()
                .trim_end_matches('-')
                .trim()
                .to_string();
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
                let dt = cfg::DataType::parse(ty).ok_or_else(|| {
                    InputError::new(
                        path,
                        format!(
                            "DAT section type '{ty}' is not ASCII, BINARY, BINARY32 or FLOAT32"
                        ),
                    )
                    .line(line_no)
                })?;
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
                let (text, enc) = decode(&cfg_bytes);
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

fn phase_of(s: &str) -> Option<usize> {
    match s.trim().to_ascii_uppercase().as_str() {
        "A" | "L1" | "R" | "AN" | "L1N" => Some(0),
        "B" | "L2" | "S" | "BN" | "L2N" => Some(1),
        "C" | "L3" | "T" | "CN" | "L3N" => Some(2),
        _ => None,
    }
}

fn line_phase_of(s: &str) -> Option<usize> {
    match s.trim().to_ascii_uppercase().as_str() {
        "AB" | "L1L2" | "L12" | "RS" => Some(0),
        "BC" | "L2L3" | "L23" | "ST" => Some(1),
        "CA" | "L3L1" | "L31" | "TR" => Some(2),
        _ => None,
    }
}

enum UnitKind {
    Voltage(f64),
    Current(f64),
    Pu,
    Other,
}

fn unit_kind(u: &str) -> UnitKind {
    match u.trim() {
        "V" | "v" => UnitKind::Voltage(1.0),
        "kV" | "kv" | "KV" => UnitKind::Voltage(1e3),
        "mV" => UnitKind::Voltage(1e-3),
        "MV" => UnitKind::Voltage(1e6),
        "A" | "a" => UnitKind::Current(1.0),
        "kA" | "ka" | "KA" => UnitKind::Current(1e3),
        "mA" => UnitKind::Current(1e-3),
        "pu" | "PU" | "p.u." => UnitKind::Pu,
        _ => UnitKind::Other,
    }
}

impl ComtradeSource {
    pub fn open(path: &Path, map: &ChannelMap, opts: &ImportOptions) -> Result<Self, InputError> {
        let ext = path
            .extension()
            .and_then(|e| e.to_str())
            .unwrap_or("")
            .to_ascii_lowercase();
        let mut cfg_sha256 = None;
        let (text, first_line, encoding, data, cff_type) = if ext == "cff" {
            let (t, l, e, d, dt) = split_cff(path)?;
            (t, l, e, d, Some(dt))
        } else {
            let bytes = read_all(path, "configuration")?;
            cfg_sha256 = Some(crate::digest::sha256_bytes(&bytes));
            let (t, e) = decode(&bytes);
            let dp = dat_path(path);
            if !dp.exists() {
                return Err(InputError::new(
                    &dp,
                    "the data file of this configuration does not exist",
                )
                .hint(format!(
                    "{} needs {} beside it",
                    path.display(),
                    dp.display()
                )));
            }
            (
                t,
                1,
                e,
                DataPlace {
                    path: dp,
                    offset: 0,
                    len: None,
                    first_line: 1,
                    in_cff: false,
                    prefix_sha256: None,
                },
                None,
            )
        };
        let cfg = cfg::parse(path, &text, first_line)?;
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
        let distinct: Vec<f64> = cfg.rates.iter().map(|r| r.0).collect();
        if distinct
            .windows(2)
            .any(|w| (w[0] - w[1]).abs() > 1e-9 * w[0])
        {
            return Err(InputError::new(
                path,
                format!(
                    "the recording has {} sampling rates ({}); the one-cycle DFT needs one uniform rate",
                    distinct.len(),
                    cfg.rates.iter().map(|(r, e)| format!("{r} Hz to sample {e}")).collect::<Vec<_>>().join(", ")
                ),
            )
            .hint("export the part recorded at one rate"));
        }
        let (mapped, connection, mut notes) = resolve(path, &cfg, map)?;
        // Skew (µs) shifts a channel's samples in time; the analysis treats
        // channels as simultaneous, so say how large the angle error is.
        for m in &mapped {
            if let Some(i) = m.analog {
                let skew = cfg.analogs[i].skew;
                if skew != 0.0 && skew.is_finite() {
                    let deg = 360.0 * cfg.line_frequency.max(0.0) * skew * 1e-6;
                    notes.push(format!(
                        "channel '{}' has a skew of {skew} µs, not compensated: its phase angle is off by {deg:.3}° at {} Hz",
                        cfg.analogs[i].name, cfg.line_frequency
                    ));
                }
            }
        }
        let keys: Vec<ChannelKey> = mapped.iter().map(|m| m.key).collect();
        check_channel_set(path, &keys, connection)?;
        let kind = if keys.contains(&ChannelKey::VPos) {
            RecordingKind::RmsLevel
        } else {
            RecordingKind::Waveform
        };
        let mut header = vec![
            ("station".to_string(), cfg.station.clone()),
            ("device".to_string(), cfg.device.clone()),
            (
                "revision".to_string(),
                format!(
                    "{}{}",
                    cfg.revision.year(),
                    if cfg.revision_implied {
                        " (no year given: 1991)"
                    } else {
                        ""
                    }
                ),
            ),
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
            (
                "sampling".to_string(),
                if cfg.rates.is_empty() {
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
                },
            ),
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
        let used: Vec<String> = mapped.iter().map(|m| m.name.clone()).collect();
        let unmapped = cfg
            .analogs
            .iter()
            .map(|a| a.name.clone())
            .chain(cfg.digitals.iter().map(|d| d.name.clone()))
            .filter(|n| !used.contains(n))
            .collect();
        let channels = mapped
            .iter()
            .map(|m| {
                let (unit, canonical) = match (m.analog, m.key) {
                    (_, ChannelKey::Status) => ("digital 1 = connected".to_string(), "0/1"),
                    (Some(i), k) => (
                        format!(
                            "{} ({})",
                            cfg.analogs[i].unit,
                            if cfg.analogs[i].is_primary { "P" } else { "S" }
                        ),
                        if k.is_voltage()
                            && !matches!(unit_kind(&cfg.analogs[i].unit), UnitKind::Pu)
                        {
                            "V"
                        } else if k.is_phase_current()
                            && !matches!(unit_kind(&cfg.analogs[i].unit), UnitKind::Pu)
                        {
                            "A"
                        } else {
                            "pu"
                        },
                    ),
                    (None, _) => (String::new(), "pu"),
                };
                ChannelInfo {
                    key: m.key,
                    source: m.name.clone(),
                    index: m.analog.or(m.digital).unwrap_or(0) + 1,
                    unit,
                    scale: m.a * m.k,
                    canonical_unit: canonical,
                }
            })
            .collect();
        let sample_rate_hz = cfg.rates.first().map(|r| r.0).unwrap_or(f64::NAN);
        let mut info = RecordingInfo {
            path: path.display().to_string(),
            format: "COMTRADE".into(),
            kind,
            connection,
            channels,
            unmapped,
            samples: cfg.total_samples,
            sample_rate_hz,
            first_time: cfg.first_time.clone(),
            duration_s: f64::NAN,
            max_step_deviation: 0.0,
            header,
            notes,
            files: Vec::new(),
        };
        let mut src = ComtradeSource {
            cfg,
            data,
            mapped,
            info: info.clone(),
            opts: *opts,
            cfg_sha256,
        };
        if src.cfg.rates.is_empty() {
            // Timestamp-based: estimate the nominal step from the first records.
            let step = dat::probe_step(&src)?;
            info.sample_rate_hz = 1.0 / step;
            src.info = info;
        }
        Ok(src)
    }
}

/// Resolves the channel map against the configuration.
fn resolve(
    path: &Path,
    cfg: &Config,
    map: &ChannelMap,
) -> Result<(Vec<Mapped>, Connection, Vec<String>), InputError> {
    let mut notes = Vec::new();
    let find_analog = |name: &str| -> Option<usize> {
        cfg.analogs.iter().position(|a| a.name == name).or_else(|| {
            cfg.analogs
                .iter()
                .position(|a| a.name.eq_ignore_ascii_case(name.trim()))
        })
    };
    let find_digital = |name: &str| -> Option<usize> {
        cfg.digitals
            .iter()
            .position(|d| d.name == name)
            .or_else(|| {
                cfg.digitals
                    .iter()
                    .position(|d| d.name.eq_ignore_ascii_case(name.trim()))
            })
    };
    let mut picks: Vec<(ChannelKey, Option<usize>, Option<usize>)> = Vec::new();
    let names = || {
        cfg.analogs
            .iter()
            .map(|a| a.name.as_str())
            .chain(cfg.digitals.iter().map(|d| d.name.as_str()))
            .collect::<Vec<_>>()
            .join(", ")
    };
    for (key, name) in &map.keys {
        if *key == ChannelKey::Status {
            match (find_digital(name), find_analog(name)) {
                (Some(d), _) => picks.push((*key, None, Some(d))),
                (None, Some(a)) => picks.push((*key, Some(a), None)),
                (None, None) => {
                    return Err(InputError::new(
                        path,
                        format!("no channel named '{name}' for 'status'"),
                    )
                    .field(name.clone())
                    .hint(format!("channels are: {}", names())))
                }
            }
        } else {
            match find_analog(name) {
                Some(a) => picks.push((*key, Some(a), None)),
                None => {
                    return Err(InputError::new(
                        path,
                        format!("no analog channel named '{name}' for '{key}'"),
                    )
                    .field(name.clone())
                    .hint(format!("channels are: {}", names())))
                }
            }
        }
    }
    let mut connection = map.connection.unwrap_or(Connection::PhaseToNeutral);
    let has = |picks: &Vec<(ChannelKey, Option<usize>, Option<usize>)>, k: ChannelKey| {
        picks.iter().any(|p| p.0 == k)
    };
    // Automatic mapping from the phase field and unit (or the channel name).
    let rms = has(&picks, ChannelKey::VPos);
    if !rms {
        let mut auto = |keys: [ChannelKey; 3],
                        want_voltage: bool,
                        picks: &mut Vec<(ChannelKey, Option<usize>, Option<usize>)>|
         -> Result<(), InputError> {
            if keys.iter().any(|k| has(picks, *k)) {
                return Ok(());
            }
            let mut found: [Vec<usize>; 3] = Default::default();
            let mut line_found: [Vec<usize>; 3] = Default::default();
            for (i, a) in cfg.analogs.iter().enumerate() {
                let is_v = matches!(unit_kind(&a.unit), UnitKind::Voltage(_));
                let is_i = matches!(unit_kind(&a.unit), UnitKind::Current(_));
                if (want_voltage && !is_v) || (!want_voltage && !is_i) {
                    continue;
                }
                if let Some(p) = phase_of(&a.phase) {
                    found[p].push(i);
                } else if want_voltage {
                    if let Some(p) = line_phase_of(&a.phase) {
                        line_found[p].push(i);
                    }
                }
            }
            let by_name = |k: ChannelKey| {
                cfg.analogs
                    .iter()
                    .position(|a| a.name.trim().eq_ignore_ascii_case(k.name()))
            };
            let sets: [(&[Vec<usize>; 3], Connection); 2] = [
                (&found, Connection::PhaseToNeutral),
                (&line_found, Connection::PhaseToPhase),
            ];
            for (set, conn) in sets {
                if set.iter().all(|v| v.len() == 1) {
                    for p in 0..3 {
                        picks.push((keys[p], Some(set[p][0]), None));
                    }
                    if want_voltage {
                        connection = map.connection.unwrap_or(conn);
                    }
                    return Ok(());
                }
                if set.iter().any(|v| v.len() > 1) {
                    let list: Vec<String> = set
                        .iter()
                        .flatten()
                        .map(|i| {
                            format!("'{}' (line {})", cfg.analogs[*i].name, cfg.analogs[*i].line)
                        })
                        .collect();
                    return Err(InputError::new(
                        path,
                        format!(
                            "several {} channels per phase: {}",
                            if want_voltage { "voltage" } else { "current" },
                            list.join(", ")
                        ),
                    )
                    .hint(format!(
                        "choose with the plan's channels block or --map {}=NAME ...",
                        keys[0].name()
                    )));
                }
            }
            if keys.iter().all(|k| by_name(*k).is_some()) {
                for k in keys {
                    picks.push((k, by_name(k), None));
                }
            }
            Ok(())
        };
        auto(
            [ChannelKey::Va, ChannelKey::Vb, ChannelKey::Vc],
            true,
            &mut picks,
        )?;
        auto(
            [ChannelKey::Ia, ChannelKey::Ib, ChannelKey::Ic],
            false,
            &mut picks,
        )?;
    }
    let mut mapped = Vec::new();
    for (key, analog, digital) in picks {
        if let Some(d) = digital {
            mapped.push(Mapped {
                key,
                analog: None,
                digital: Some(d),
                a: 1.0,
                b: 0.0,
                k: 1.0,
                name: cfg.digitals[d].name.clone(),
            });
            continue;
        }
        let Some(i) = analog else { continue };
        let a = &cfg.analogs[i];
        let ps = if a.is_primary {
            1.0
        } else {
            a.primary / a.secondary
        };
        let override_unit = if key.is_voltage() {
            map.voltage_unit
                .map(|u| (u.factor(), u == VoltageUnit::Pu, u.label()))
        } else if key.is_phase_current() {
            map.current_unit
                .map(|u| (u.factor(), u == CurrentUnit::Pu, u.label()))
        } else {
            None
        };
        let factor = match (unit_kind(&a.unit), override_unit) {
            (_, Some((f, is_pu, label))) => {
                if !a.unit.trim().is_empty() && !a.unit.trim().eq_ignore_ascii_case(label) {
                    notes.push(format!(
                        "channel '{}' says unit '{}'; the mapping's unit {label} is used",
                        a.name, a.unit
                    ));
                }
                if is_pu {
                    1.0
                } else {
                    f
                }
            }
            (UnitKind::Voltage(f), None) if key.is_voltage() => f,
            (UnitKind::Current(f), None) if key.is_phase_current() => f,
            (UnitKind::Pu, None) => 1.0,
            (UnitKind::Other, None) if key.is_rms_level() => 1.0,
            (_, None) => {
                return Err(InputError::new(
                    path,
                    format!(
                        "channel '{}' has unit '{}', which does not fit '{key}'",
                        a.name, a.unit
                    ),
                )
                .line(a.line)
                .column(5)
                .hint(
                    "map the right channel, or give the unit in the mapping (voltage/current unit)",
                ));
            }
        };
        let k = ps * factor;
        if !(k.is_finite() && (a.a * k).is_finite() && (a.b * k).is_finite()) || k == 0.0 {
            return Err(InputError::new(
                path,
                format!(
                    "channel '{}': the scaling a = {}, b = {}{} gives no finite values",
                    a.name,
                    a.a,
                    a.b,
                    if a.is_primary {
                        String::new()
                    } else {
                        format!(", primary/secondary = {}/{}", a.primary, a.secondary)
                    }
                ),
            )
            .line(a.line)
            .field(a.name.clone())
            .hint("correct the channel's multiplier, offset or ratios in the configuration"));
        }
        mapped.push(Mapped {
            key,
            analog: Some(i),
            digital: None,
            a: a.a,
            b: a.b,
            k,
            name: a.name.clone(),
        });
    }
    if connection == Connection::PhaseToPhase {
        notes.push("voltages are phase-to-phase: zero sequence is unobservable, phase-to-neutral magnitudes assume V0 = 0".into());
    }
    Ok((mapped, connection, notes))
}

impl Source for ComtradeSource {
    fn info(&self) -> &RecordingInfo {
        &self.info
    }

    fn stream(self: Box<Self>, sink: &mut dyn FrameSink) -> Result<RecordingInfo, InputError> {
        dat::stream(*self, sink)
    }
}

/// The data file's reader, hashing every byte it reads.
pub(super) type DataReader = crate::files::Hashing<BufReader<std::fs::File>>;

/// Opens the data bytes at their place: a `.dat` from its start, or a `.cff`
/// read from its start up to the data (checking that these are the bytes
/// the configuration came from), so that the digest covers the whole file.
fn open_data(d: &DataPlace) -> Result<DataReader, InputError> {
    let f = crate::files::open_regular(&d.path, "data file")
        .map_err(|e| e.hint("a .cfg needs its .dat beside it, with the same name"))?;
    let mut r = crate::files::Hashing::new(BufReader::with_capacity(1 << 20, f));
    if d.offset > 0 {
        let skipped = std::io::copy(&mut (&mut r).take(d.offset), &mut std::io::sink())
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
    }
    Ok(r)
}
