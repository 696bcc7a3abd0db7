//! COMTRADE configuration (`.cfg`) parsing: IEEE C37.111-1991/-1999/-2013
//! (= IEC 60255-24:2013). One record per line, comma-separated; the clause
//! numbers below refer to IEEE C37.111-2013 clause 7 (configuration file).
//!
//! Strict about counts and numbers (errors name the line), tolerant of
//! trailing spaces, CRLF and missing optional trailing fields.

use crate::error::InputError;

/// Largest accepted number of analog (and of digital) channels.
pub const MAX_CHANNELS: u64 = 10_000;
use std::path::Path;

#[derive(Clone, Copy, Debug, PartialEq, Eq, clap::ValueEnum)]
pub enum Revision {
    #[value(name = "1991")]
    R1991,
    #[value(name = "1999")]
    R1999,
    #[value(name = "2013")]
    R2013,
}

impl Revision {
    pub fn year(self) -> u16 {
        match self {
            Revision::R1991 => 1991,
            Revision::R1999 => 1999,
            Revision::R2013 => 2013,
        }
    }
    pub fn parse(s: &str) -> Option<Self> {
        match s.trim() {
            "1991" => Some(Revision::R1991),
            "1999" => Some(Revision::R1999),
            "2013" => Some(Revision::R2013),
            _ => None,
        }
    }
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, clap::ValueEnum)]
pub enum DataType {
    Ascii,
    Binary,
    Binary32,
    Float32,
}

impl DataType {
    pub fn parse(s: &str) -> Option<Self> {
        match s.trim().to_ascii_uppercase().as_str() {
            "ASCII" => Some(DataType::Ascii),
            "BINARY" => Some(DataType::Binary),
            "BINARY32" => Some(DataType::Binary32),
            "FLOAT32" => Some(DataType::Float32),
            _ => None,
        }
    }
    pub fn name(self) -> &'static str {
        match self {
            DataType::Ascii => "ASCII",
            DataType::Binary => "BINARY",
            DataType::Binary32 => "BINARY32",
            DataType::Float32 => "FLOAT32",
        }
    }
    /// Bytes per analog value in binary files.
    pub fn analog_bytes(self) -> usize {
        match self {
            DataType::Binary => 2,
            _ => 4,
        }
    }
}

#[derive(Clone, Debug, PartialEq)]
pub struct Analog {
    pub index: u32,
    pub name: String,
    pub phase: String,
    pub circuit: String,
    pub unit: String,
    pub a: f64,
    pub b: f64,
    /// Skew in µs.
    pub skew: f64,
    pub min: f64,
    pub max: f64,
    pub primary: f64,
    pub secondary: f64,
    /// True when `a·x + b` gives primary values (`P`).
    pub is_primary: bool,
    /// Line of the channel in the configuration.
    pub line: u64,
}

#[derive(Clone, Debug, PartialEq)]
pub struct Digital {
    pub index: u32,
    pub name: String,
    pub phase: String,
    pub circuit: String,
    /// Normal state, 0 or 1.
    pub normal: u8,
    pub line: u64,
}

#[derive(Clone, Debug, PartialEq)]
pub struct Config {
    pub station: String,
    pub device: String,
    pub revision: Revision,
    /// True when the revision year was absent (taken as 1991).
    pub revision_implied: bool,
    pub analogs: Vec<Analog>,
    pub digitals: Vec<Digital>,
    pub line_frequency: f64,
    /// `(rate Hz, last sample number)`; empty when timestamps are the time base.
    pub rates: Vec<(f64, u64)>,
    /// Total samples (last `endsamp`).
    pub total_samples: u64,
    pub first_time: String,
    pub trigger_time: String,
    /// Timestamps in the first-sample field carry nanoseconds (2013).
    pub nanoseconds: bool,
    pub data_type: DataType,
    pub timemult: f64,
    pub time_code: Option<(String, String)>,
    pub time_quality: Option<(String, String)>,
    /// What was tolerated in a file that does not follow the standard
    /// exactly (read the way general-purpose readers read it).
    pub warnings: Vec<String>,
}

/// Splits a record into trimmed fields (spaces, and the SUB padding some
/// recorders append, are not part of a value).
fn fields(line: &str) -> Vec<&str> {
    line.split(',')
        .map(|f| f.trim_matches(|c: char| c.is_whitespace() || c == '\u{1a}'))
        .collect()
}

/// Trailing characters that are not part of a line: CR, spaces, tabs and
/// SUB (0x1A) padding.
const LINE_END: [char; 4] = ['\r', ' ', '\t', '\u{1a}'];

struct Lines<'a> {
    path: &'a Path,
    lines: Vec<&'a str>,
    pos: usize,
    /// Line number (1-based) of the first line in `lines`.
    first_line: u64,
}

impl<'a> Lines<'a> {
    fn next(&mut self, what: &str) -> Result<(u64, &'a str), InputError> {
        // Skip fully blank lines only at the end; inside they are errors.
        let n = self.first_line + self.pos as u64;
        match self.lines.get(self.pos) {
            Some(l) => {
                self.pos += 1;
                Ok((n, l.trim_end_matches(LINE_END)))
            }
            None => Err(InputError::new(
                self.path,
                format!("the configuration ends before the {what} line"),
            )
            .line(n)
            .hint("the file is truncated or a count on line 2 is wrong")),
        }
    }
    fn peek(&self) -> Option<&'a str> {
        self.lines
            .get(self.pos)
            .map(|l| l.trim_end_matches(LINE_END))
    }
}

fn num<T: std::str::FromStr>(
    path: &Path,
    line: u64,
    field: usize,
    what: &str,
    s: &str,
) -> Result<T, InputError> {
    s.trim().parse::<T>().map_err(|_| {
        InputError::new(path, format!("{what} '{s}' is not a valid number"))
            .line(line)
            .column(field as u64 + 1)
            .field(what.to_string())
            .hint("COMTRADE configuration fields are comma-separated; check this field")
    })
}

/// 7.4.2 station name, recording device id, revision year.
fn station_line<'a>(
    ls: &mut Lines<'a>,
    warnings: &mut Vec<String>,
) -> Result<(&'a str, Revision, bool), InputError> {
    let path = ls.path;
    let (l1, s1) = ls.next("station")?;
    let f = fields(s1);
    if f.len() < 2 {
        return Err(
            InputError::new(path, "line 1 needs 'station_name,rec_dev_id[,rev_year]'").line(l1),
        );
    }
    let (revision, implied) = match f.get(2) {
        None | Some(&"") => (Revision::R1991, true),
        Some(y) => match Revision::parse(y) {
            Some(r) => (r, false),
            // IEC 60255-24:2001 is the IEC edition of the 1999 layout.
            None if *y == "2001" => {
                warnings
                    .push("revision 2001 (IEC 60255-24:2001) is read with the 1999 layout".into());
                (Revision::R1999, false)
            }
            None if y.len() == 4 && y.parse::<u16>().is_ok_and(|v| (1990..2100).contains(&v)) => {
                warnings.push(format!(
                    "revision year {y} is not a COMTRADE revision; read with the 1999 layout"
                ));
                (Revision::R1999, false)
            }
            None => {
                return Err(InputError::new(
                    path,
                    format!("revision year '{y}' is not 1991, 1999 or 2013"),
                )
                .line(l1)
                .column(3))
            }
        },
    };
    Ok((s1, revision, implied))
}

/// 7.4.3 channel counts: TT,##A,##D (each bounded before any sum).
fn channel_counts(ls: &mut Lines<'_>) -> Result<(u64, u64), InputError> {
    let path = ls.path;
    let (l2, s2) = ls.next("channel count")?;
    let f = fields(s2);
    if f.len() != 3 {
        return Err(InputError::new(
            path,
            format!("line 2 has {} fields; expected 'TT,##A,##D'", f.len()),
        )
        .line(l2));
    }
    let total: u64 = num(path, l2, 0, "TT", f[0])?;
    let count = |k: usize, suffix: char| -> Result<u64, InputError> {
        let s = f[k];
        let body = s
            .strip_suffix(suffix)
            .or_else(|| s.strip_suffix(suffix.to_ascii_lowercase()))
            .ok_or_else(|| {
                InputError::new(path, format!("'{s}' must end with '{suffix}'"))
                    .line(l2)
                    .column(k as u64 + 1)
            })?;
        num(path, l2, k, "channel count", body)
    };
    let na = count(1, 'A')?;
    let nd = count(2, 'D')?;
    if na > MAX_CHANNELS || nd > MAX_CHANNELS || total > MAX_CHANNELS {
        return Err(InputError::new(
            path,
            format!(
                "line 2 announces {total} channels ({na} analog, {nd} digital); at most {MAX_CHANNELS} of each are accepted"
            ),
        )
        .line(l2)
        .hint("check line 2 (TT,##A,##D) of the configuration"));
    }
    if total != na + nd {
        return Err(InputError::new(
            path,
            format!(
                "TT = {total} but {na} analog + {nd} digital channels = {}",
                na + nd
            ),
        )
        .line(l2)
        .hint("TT must be the sum of ##A and ##D"));
    }
    Ok((na, nd))
}

/// The revision as the channel lines show it, and whether the year was
/// absent from line 1.
struct Layout {
    revision: Revision,
    implied: bool,
}

/// 7.4.4 one analog channel line (the first may show the 1999 layout in a
/// file without a revision year).
fn analog_line(
    ls: &mut Lines<'_>,
    k: u64,
    layout: &mut Layout,
    warnings: &mut Vec<String>,
) -> Result<Analog, InputError> {
    let path = ls.path;
    let (ln, s) = ls.next(&format!("analog channel {}", k + 1))?;
    let f = fields(s);
    if k == 0 && layout.implied && f.len() == 13 {
        // No revision year, but channel lines of the 1999 layout.
        layout.revision = Revision::R1999;
        layout.implied = false;
        warnings.push(
            "no revision year on line 1; the channel lines have the 1999 layout, so it is read as 1999"
                .into(),
        );
    }
    let revision = layout.revision;
    let want = if revision == Revision::R1991 { 10 } else { 13 };
    if f.len() < 10 || f.len() > 13 || (revision != Revision::R1991 && f.len() != 13) {
        return Err(InputError::new(
            path,
            format!(
                "analog channel line has {} fields; expected {want} for revision {} (An,ch_id,ph,ccbm,uu,a,b,skew,min,max{})",
                f.len(),
                revision.year(),
                if want == 13 { ",primary,secondary,PS" } else { "" }
            ),
        )
        .line(ln)
        .hint("is a digital channel listed among the analog ones? Check ##A on line 2"));
    }
    let opt = |i: usize, d: f64, what: &str| -> Result<f64, InputError> {
        match f.get(i) {
            None | Some(&"") => Ok(d),
            Some(v) => num(path, ln, i, what, v),
        }
    };
    let ps = f.get(12).copied().unwrap_or("P");
    let is_primary = match ps {
        "P" | "p" | "" => true,
        "S" | "s" => false,
        o => {
            return Err(
                InputError::new(path, format!("PS flag '{o}' must be P or S"))
                    .line(ln)
                    .column(13),
            );
        }
    };
    let a = Analog {
        index: num(path, ln, 0, "An", f[0])?,
        name: f[1].to_string(),
        phase: f[2].to_string(),
        circuit: f[3].to_string(),
        unit: f[4].to_string(),
        a: num(path, ln, 5, "a", f[5])?,
        b: opt(6, 0.0, "b")?,
        skew: opt(7, 0.0, "skew")?,
        min: opt(8, f64::NEG_INFINITY, "min")?,
        max: opt(9, f64::INFINITY, "max")?,
        primary: opt(10, 1.0, "primary")?,
        secondary: opt(11, 1.0, "secondary")?,
        is_primary,
        line: ln,
    };
    if !a.a.is_finite() || !a.b.is_finite() {
        return Err(InputError::new(path, "multiplier a and offset b must be finite").line(ln));
    }
    let ratio_ok = a.primary > 0.0 && a.secondary > 0.0;
    if !is_primary && !ratio_ok {
        return Err(InputError::new(
            path,
            "secondary values need positive primary and secondary ratio terms",
        )
        .line(ln)
        .column(11));
    }
    Ok(a)
}

/// 7.4.5 one digital (status) channel line.
fn digital_line(
    ls: &mut Lines<'_>,
    k: u64,
    revision: Revision,
    warnings: &mut Vec<String>,
) -> Result<Digital, InputError> {
    let path = ls.path;
    let (ln, s) = ls.next(&format!("digital channel {}", k + 1))?;
    let f = fields(s);
    let (name, phase, circuit, normal) = match f.len() {
        5 => (f[1], f[2], f[3], f[4]),
        3 if revision == Revision::R1991 => (f[1], "", "", f[2]),
        4 => {
            if !warnings
                .iter()
                .any(|w| w.starts_with("digital channel lines"))
            {
                warnings.push(format!(
                    "digital channel lines have 4 fields (no normal state), from line {ln}; normal state 0 is assumed"
                ));
            }
            (f[1], f[2], f[3], "")
        }
        n => {
            return Err(InputError::new(
                path,
                format!("digital channel line has {n} fields; expected 5 (Dn,ch_id,ph,ccbm,y)"),
            )
            .line(ln)
            .hint("check ##A and ##D on line 2"));
        }
    };
    let normal = match normal {
        "" | "0" => 0,
        "1" => 1,
        o => {
            return Err(
                InputError::new(path, format!("normal state '{o}' must be 0 or 1")).line(ln),
            )
        }
    };
    Ok(Digital {
        index: num(path, ln, 0, "Dn", f[0])?,
        name: name.to_string(),
        phase: phase.to_string(),
        circuit: circuit.to_string(),
        normal,
        line: ln,
    })
}

/// The sampling section.
struct Sampling {
    line_frequency: f64,
    rates: Vec<(f64, u64)>,
    total_samples: u64,
}

/// 7.4.6 line frequency, 7.4.7 sampling rates.
fn sampling(ls: &mut Lines<'_>) -> Result<Sampling, InputError> {
    let path = ls.path;
    let (lf_line, lf) = ls.next("line frequency")?;
    let line_frequency: f64 = if lf.trim().is_empty() {
        f64::NAN
    } else {
        num(path, lf_line, 0, "lf", lf)?
    };
    let (nl, ns) = ls.next("nrates")?;
    let nrates: u64 = num(path, nl, 0, "nrates", ns)?;
    if nrates > 1000 {
        return Err(InputError::new(path, format!("nrates {nrates} is not plausible")).line(nl));
    }
    let mut rates = Vec::new();
    let mut total_samples = 0;
    for _ in 0..nrates.max(1) {
        // nrates = 0: one line '0,endsamp' gives the sample count (timestamps are the time base).
        let (ln, s) = ls.next("samp,endsamp")?;
        let f = fields(s);
        if f.len() != 2 {
            return Err(InputError::new(path, format!("'{s}' is not 'samp,endsamp'")).line(ln));
        }
        let samp: f64 = num(path, ln, 0, "samp", f[0])?;
        if !samp.is_finite() {
            return Err(InputError::new(
                path,
                format!("sampling rate '{}' is not a finite number", f[0].trim()),
            )
            .line(ln)
            .column(1)
            .hint("give the rate in Hz, or 0 when the timestamps are the time base"));
        }
        let end: u64 = num(path, ln, 1, "endsamp", f[1])?;
        if end < total_samples {
            return Err(InputError::new(path, "endsamp decreases")
                .line(ln)
                .column(2));
        }
        total_samples = end;
        if nrates > 0 && samp > 0.0 {
            rates.push((samp, end));
        } else if nrates > 0 && samp < 0.0 {
            return Err(InputError::new(path, "a sampling rate must not be negative").line(ln));
        }
    }
    Ok(Sampling {
        line_frequency,
        rates,
        total_samples,
    })
}

/// The optional time lines after the file type.
struct TimeLines {
    timemult: f64,
    time_code: Option<(String, String)>,
    time_quality: Option<(String, String)>,
}

/// 7.4.10 time multiplier (1999+), 7.4.11 time codes (2013), 7.4.12 time
/// quality (2013); nothing but blank lines after them.
fn time_lines(ls: &mut Lines<'_>, revision: Revision) -> Result<TimeLines, InputError> {
    let path = ls.path;
    let mut timemult: f64 = 1.0;
    let mut time_code = None;
    let mut time_quality = None;
    if revision != Revision::R1991 {
        if let Some(s) = ls.peek().filter(|s| !s.trim().is_empty()) {
            let (ln, _) = ls.next("timemult")?;
            timemult = num(path, ln, 0, "timemult", s)?;
            if !(timemult > 0.0 && timemult.is_finite()) {
                return Err(InputError::new(path, "timemult must be positive").line(ln));
            }
        }
    }
    if revision == Revision::R2013 {
        for slot in [&mut time_code, &mut time_quality] {
            if let Some(s) = ls.peek().filter(|s| !s.trim().is_empty()) {
                let (ln, _) = ls.next("time code")?;
                let f = fields(s);
                if f.len() != 2 {
                    return Err(
                        InputError::new(path, format!("'{s}' should have two fields")).line(ln),
                    );
                }
                *slot = Some((f[0].to_string(), f[1].to_string()));
            }
        }
    }
    while let Some(s) = ls.peek() {
        if !s.trim().is_empty() {
            let (ln, _) = ls.next("end")?;
            return Err(InputError::new(
                path,
                format!("unexpected line '{s}' after the configuration"),
            )
            .line(ln)
            .hint("check the channel counts on line 2"));
        }
        ls.pos += 1;
    }
    Ok(TimeLines {
        timemult,
        time_code,
        time_quality,
    })
}

/// Parses a configuration held in `text`. `first_line` is the line number of
/// its first line in the file (1, or later inside a `.cff`).
pub fn parse(path: &Path, text: &str, first_line: u64) -> Result<Config, InputError> {
    let mut ls = Lines {
        path,
        lines: text.split('\n').collect(),
        pos: 0,
        first_line,
    };
    let mut warnings = Vec::new();
    let (s1, revision, implied) = station_line(&mut ls, &mut warnings)?;
    let (na, nd) = channel_counts(&mut ls)?;
    let mut layout = Layout { revision, implied };
    let mut analogs = Vec::with_capacity((na as usize).min(1024));
    for k in 0..na {
        analogs.push(analog_line(&mut ls, k, &mut layout, &mut warnings)?);
    }
    let Layout { revision, implied } = layout;
    let mut digitals = Vec::with_capacity((nd as usize).min(1024));
    for k in 0..nd {
        digitals.push(digital_line(&mut ls, k, revision, &mut warnings)?);
    }
    let sampling = sampling(&mut ls)?;
    // 7.4.8 first-sample and trigger times.
    let (ft_line, first_time) = ls.next("first sample time")?;
    let nanoseconds = check_stamp(path, ft_line, first_time)?;
    let (tt_line, trigger_time) = ls.next("trigger time")?;
    check_stamp(path, tt_line, trigger_time)?;
    // 7.4.9 data file type.
    let (dl, ds) = ls.next("file type")?;
    let data_type = DataType::parse(ds).ok_or_else(|| {
        InputError::new(
            path,
            format!("file type '{ds}' is not ASCII, BINARY, BINARY32 or FLOAT32"),
        )
        .line(dl)
        .hint("BINARY32 and FLOAT32 need revision 2013")
    })?;
    let times = time_lines(&mut ls, revision)?;
    Ok(Config {
        station: f_string(s1, 0),
        device: f_string(s1, 1),
        revision,
        revision_implied: implied,
        analogs,
        digitals,
        line_frequency: sampling.line_frequency,
        rates: sampling.rates,
        total_samples: sampling.total_samples,
        first_time: first_time.trim().to_string(),
        trigger_time: trigger_time.trim().to_string(),
        nanoseconds,
        data_type,
        timemult: times.timemult,
        time_code: times.time_code,
        time_quality: times.time_quality,
        warnings,
    })
}

fn f_string(line: &str, k: usize) -> String {
    fields(line)
        .get(k)
        .map(|s| s.to_string())
        .unwrap_or_default()
}

/// Checks `dd/mm/yyyy,hh:mm:ss.ssssss[sss]` (mm/dd/yyyy in 1991 files);
/// returns whether it has nanoseconds.
fn check_stamp(path: &Path, line: u64, s: &str) -> Result<bool, InputError> {
    let bad = || {
        InputError::new(
            path,
            format!("'{s}' is not a date and time 'dd/mm/yyyy,hh:mm:ss.ssssss'"),
        )
        .line(line)
    };
    let (date, time) = s.trim().split_once(',').ok_or_else(bad)?;
    let d: Vec<&str> = date.split('/').collect();
    if d.len() != 3
        || d.iter()
            .any(|x| x.is_empty() || !x.chars().all(|c| c.is_ascii_digit()))
    {
        return Err(bad());
    }
    let (hms, frac) = time.split_once('.').unwrap_or((time, ""));
    let t: Vec<&str> = hms.split(':').collect();
    if t.len() != 3
        || t.iter()
            .any(|x| x.is_empty() || !x.chars().all(|c| c.is_ascii_digit()))
    {
        return Err(bad());
    }
    if !frac.chars().all(|c| c.is_ascii_digit()) {
        return Err(bad());
    }
    Ok(frac.len() > 6)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn parses_revision_2013_with_time_codes() {
        let text = "SUB,DEV,2013\r\n2,1A,1D\r\n1,VA,A,F1,kV,0.01,0,0,-32767,32767,110,0.1,S\r\n1,CB,,F1,1\r\n50\r\n1\r\n4000,800\r\n14/03/2026,10:00:00.000000\r\n14/03/2026,10:00:00.050000\r\nBINARY\r\n1\r\n0,0\r\nB,0\r\n";
        let c = parse(Path::new("x.cfg"), text, 1).unwrap();
        assert_eq!(c.revision, Revision::R2013);
        assert_eq!(c.analogs[0].primary, 110.0);
        assert!(!c.analogs[0].is_primary);
        assert_eq!(c.rates, vec![(4000.0, 800)]);
        assert_eq!(c.time_quality, Some(("B".into(), "0".into())));
    }

    #[test]
    fn counts_must_add_up() {
        let text = "S,D,1999\n3,1A,1D\n";
        let e = parse(Path::new("x.cfg"), text, 1).unwrap_err();
        assert_eq!(e.line, Some(2));
    }
}
