//! Importers: turn a recording file into the recording model.
//!
//! Each importer opens a file, resolves the channel mapping, and then streams
//! sample blocks in canonical units (V, A or pu; time in seconds from the first
//! sample) into a [`FrameSink`]. Adding a format means adding a module here that
//! implements [`Source`] and a branch in [`open`].

pub mod comtrade;
pub mod csv;

use crate::error::InputError;
use crate::model::{
    ChannelKey, Connection, CurrentUnit, FrameSink, PhaseOrder, RecordingInfo, VoltageUnit,
};
use std::path::Path;

/// How file columns map to the model's channels, and their units.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct ChannelMap {
    /// Name of the time column; `t` or `time` is found without it.
    pub time: Option<String>,
    /// Explicit `key = column name` pairs.
    pub keys: Vec<(ChannelKey, String)>,
    pub voltage_unit: Option<VoltageUnit>,
    pub current_unit: Option<CurrentUnit>,
    pub connection: Option<Connection>,
    /// Phase rotation of the channels (A-B-C unless said otherwise).
    pub phase_order: Option<PhaseOrder>,
    /// Text encoding of channel names (COMTRADE configuration, CSV header);
    /// detected when not given.
    pub encoding: Option<&'static encoding_rs::Encoding>,
    /// Sampling rate for a CSV recording without a time column, Hz.
    pub sample_rate_hz: Option<f64>,
}

impl ChannelMap {
    pub fn column_for(&self, key: ChannelKey) -> Option<&str> {
        self.keys
            .iter()
            .rev()
            .find(|(k, _)| *k == key)
            .map(|(_, c)| c.as_str())
    }
}

/// Import settings that do not depend on the format.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct ImportOptions {
    /// Largest accepted deviation of one sample step from the nominal step,
    /// as a fraction of the nominal step.
    pub step_tolerance: f64,
    /// Threads for parsing one file (0: all cores). Set 1 when many files
    /// are read in parallel.
    pub threads: usize,
    /// Read what can be read (`inspect`): channels that cannot be mapped
    /// completely are left out with a note instead of stopping the import.
    pub partial: bool,
}

impl Default for ImportOptions {
    fn default() -> Self {
        ImportOptions {
            step_tolerance: 0.10,
            threads: 0,
            partial: false,
        }
    }
}

/// An opened recording, ready to stream its samples.
pub trait Source: Send {
    /// Facts known after opening (sample count and duration are final only
    /// in the value [`Source::stream`] returns).
    fn info(&self) -> &RecordingInfo;
    /// Streams every sample into `sink` and returns the final facts.
    fn stream(self: Box<Self>, sink: &mut dyn FrameSink) -> Result<RecordingInfo, InputError>;
}

/// Opens a recording, choosing the importer by file extension.
pub fn open(
    path: &Path,
    map: &ChannelMap,
    opts: &ImportOptions,
) -> Result<Box<dyn Source>, InputError> {
    let ext = path
        .extension()
        .and_then(|e| e.to_str())
        .unwrap_or("")
        .to_ascii_lowercase();
    match ext.as_str() {
        "csv" | "txt" | "tsv" | "" => Ok(Box::new(csv::CsvSource::open(path, map, opts)?)),
        "cfg" | "cff" => Ok(Box::new(comtrade::ComtradeSource::open(path, map, opts)?)),
        "dat" => {
            let cfg = ["cfg", "CFG"]
                .iter()
                .map(|e| path.with_extension(e))
                .find(|p| p.exists())
                .unwrap_or_else(|| path.with_extension("cfg"));
            Err(InputError::new(
                path,
                "this is a COMTRADE data file; the recording is read through its configuration",
            )
            .hint(format!("give {} instead", cfg.display())))
        }
        other => Err(
            InputError::new(path, format!("unsupported recording format '.{other}'"))
                .hint("give a .csv file (COMTRADE .cfg/.cff support is listed in the README)"),
        ),
    }
}

/// The phase of a name like `Ua`, `VB`, `IL3`, `I_c`, `Van` (0 = a), with
/// the kind of quantity it names (`u`/`v` voltage, `i` current).
pub(crate) fn named_phase(name: &str) -> Option<(char, usize)> {
    let n: String = name
        .trim()
        .to_ascii_lowercase()
        .chars()
        .filter(|c| !matches!(c, '_' | ' ' | '-' | '.'))
        .collect();
    let (q, rest) = n.split_at(n.char_indices().nth(1).map_or(n.len(), |(i, _)| i));
    let q = match q {
        "u" | "v" => 'v',
        "i" => 'i',
        _ => return None,
    };
    let p = match rest {
        "a" | "an" | "l1" | "l1n" | "r" | "1" => 0,
        "b" | "bn" | "l2" | "l2n" | "s" | "2" => 1,
        "c" | "cn" | "l3" | "l3n" | "t" | "3" => 2,
        _ => return None,
    };
    Some((q, p))
}

/// A phase-to-phase voltage name (`Uab`, `VBC`, `U12`, `UL1L2` …, and the
/// reversed `U21`, `Uba` …): (pair 0 = ab, 1 = bc, 2 = ca; sign of the
/// recorded voltage relative to v_ab, v_bc, v_ca).
pub(crate) fn named_line(name: &str) -> Option<(usize, f64)> {
    let n: String = name
        .trim()
        .to_ascii_lowercase()
        .chars()
        .filter(|c| !matches!(c, '_' | ' ' | '-' | '.' | 'l'))
        .collect();
    let rest = n.strip_prefix('u').or_else(|| n.strip_prefix('v'))?;
    let ph = |c: char| match c {
        'a' | '1' | 'r' => Some(0usize),
        'b' | '2' | 's' => Some(1),
        'c' | '3' | 't' => Some(2),
        _ => None,
    };
    let cs: Vec<char> = rest.chars().collect();
    if cs.len() != 2 {
        return None;
    }
    let (x, y) = (ph(cs[0])?, ph(cs[1])?);
    match (x, y) {
        (0, 1) => Some((0, 1.0)),
        (1, 2) => Some((1, 1.0)),
        (2, 0) => Some((2, 1.0)),
        (1, 0) => Some((0, -1.0)),
        (2, 1) => Some((1, -1.0)),
        (0, 2) => Some((2, -1.0)),
        _ => None,
    }
}

/// A column or channel name without its unit suffix: `Ua(V)`, `Ia [kA]`,
/// `U_b, kV` → (`Ua`, Some(`V`)).
pub(crate) fn split_unit(name: &str) -> (String, Option<String>) {
    let n = name.trim();
    for (open, close) in [('(', ')'), ('[', ']')] {
        if let (Some(a), true) = (n.rfind(open), n.ends_with(close)) {
            let unit = n[a + 1..n.len() - 1].trim();
            return (n[..a].trim().to_string(), Some(unit.to_string()));
        }
    }
    (n.to_string(), None)
}

/// The channel key a common name stands for: phase voltages (`Ua`, `V_b`,
/// `UL3` …) and currents (`Ia`, `IL2` …). Phase-to-phase names are not
/// guessed here (their sign and base need the connection).
pub(crate) fn name_means(name: &str) -> Option<ChannelKey> {
    let (q, p) = named_phase(name)?;
    let keys = if q == 'v' {
        [ChannelKey::Va, ChannelKey::Vb, ChannelKey::Vc]
    } else {
        [ChannelKey::Ia, ChannelKey::Ib, ChannelKey::Ic]
    };
    Some(keys[p])
}

/// Decodes text from a recorder: as `forced` when given, as UTF-8 when it
/// is valid UTF-8, else in the legacy encoding a detector finds most likely
/// (Windows-1251, code page 866, GBK, Latin-1 …; the `chardetng` crate,
/// the detector of a widely used web browser). Returns the text and the
/// encoding's name.
pub fn decode_text(
    bytes: &[u8],
    forced: Option<&'static encoding_rs::Encoding>,
) -> (String, String) {
    let bytes = bytes.strip_prefix(&[0xEF, 0xBB, 0xBF]).unwrap_or(bytes);
    if let Some(e) = forced {
        let (t, _) = e.decode_without_bom_handling(bytes);
        return (t.into_owned(), format!("{} (as given)", e.name()));
    }
    if let Ok(s) = std::str::from_utf8(bytes) {
        return (s.to_string(), "UTF-8".into());
    }
    let mut d = chardetng::EncodingDetector::new();
    d.feed(bytes, true);
    let e = d.guess(None, false);
    let (t, _) = e.decode_without_bom_handling(bytes);
    (t.into_owned(), format!("{} (detected)", e.name()))
}

/// The encoding for a label such as `windows-1251`, `cp866`, `gbk`, `latin1`.
pub fn encoding_for(label: &str) -> Option<&'static encoding_rs::Encoding> {
    let l = label.trim().to_ascii_lowercase();
    let l = match l.as_str() {
        "cp866" | "866" => "ibm866",
        "cp1251" => "windows-1251",
        "cp1252" => "windows-1252",
        "cp936" => "gbk",
        other => other,
    };
    encoding_rs::Encoding::for_label(l.as_bytes())
}

/// For reading what can be read (`ImportOptions::partial`): the keys to
/// leave out so that the rest passes [`check_channel_set`], and notes
/// saying why. Without any voltage the currents (and status) still are
/// analysed.
pub(crate) fn partial_channel_set(
    present: &[ChannelKey],
    connection: Connection,
) -> (Vec<ChannelKey>, Vec<String>) {
    let has = |k: ChannelKey| present.contains(&k);
    let mut drop = Vec::new();
    let mut notes = Vec::new();
    let phase_v = [ChannelKey::Va, ChannelKey::Vb, ChannelKey::Vc];
    let phase_i = [ChannelKey::Ia, ChannelKey::Ib, ChannelKey::Ic];
    let nv = phase_v.iter().filter(|k| has(**k)).count();
    let ni = phase_i.iter().filter(|k| has(**k)).count();
    let line = connection == Connection::PhaseToPhase;
    if nv == 1 || (nv == 2 && !line) || (nv > 0 && has(ChannelKey::VPos)) {
        drop.extend(phase_v);
        drop.push(ChannelKey::Vn);
        notes.push(format!(
            "only {nv} of 3 phase voltages are mapped: voltages are not analysed"
        ));
    }
    if has(ChannelKey::Vn) && !(line && nv >= 2) {
        drop.push(ChannelKey::Vn);
    }
    if ni == 1 || ni == 2 || (ni > 0 && has(ChannelKey::VPos)) {
        drop.extend(phase_i);
        notes.push(format!(
            "only {ni} of 3 phase currents are mapped: currents are not analysed"
        ));
    }
    if !has(ChannelKey::VPos) {
        drop.extend([ChannelKey::P, ChannelKey::Q, ChannelKey::Ip, ChannelKey::Iq]);
    } else {
        let pq = has(ChannelKey::P) && has(ChannelKey::Q);
        let ipq = has(ChannelKey::Ip) && has(ChannelKey::Iq);
        if !pq {
            drop.extend([ChannelKey::P, ChannelKey::Q]);
        }
        if !ipq || pq {
            drop.extend([ChannelKey::Ip, ChannelKey::Iq]);
        }
    }
    let remaining_v = nv > 0 && !drop.contains(&ChannelKey::Va) || has(ChannelKey::VPos);
    if !remaining_v {
        notes.push(
            "no voltage channel is mapped: channels, sampling and currents are shown; map voltages (--map va=NAME ...) to find disturbances"
                .into(),
        );
    }
    (drop, notes)
}

/// Channel keys that the model checks for completeness, with what to say.
/// Phase-to-phase voltages may leave one of the three out (it is derived:
/// `vab + vbc + vca = 0`).
pub(crate) fn check_channel_set(
    path: &Path,
    present: &[ChannelKey],
    connection: Connection,
    allow_no_voltage: bool,
) -> Result<(), InputError> {
    let has = |k: ChannelKey| present.contains(&k);
    let phase_v = [ChannelKey::Va, ChannelKey::Vb, ChannelKey::Vc];
    let phase_i = [ChannelKey::Ia, ChannelKey::Ib, ChannelKey::Ic];
    let nv = phase_v.iter().filter(|k| has(**k)).count();
    let ni = phase_i.iter().filter(|k| has(**k)).count();
    let missing = |set: &[ChannelKey]| {
        set.iter()
            .filter(|k| !has(**k))
            .map(|k| k.name())
            .collect::<Vec<_>>()
            .join(", ")
    };
    let line = connection == Connection::PhaseToPhase;
    if has(ChannelKey::Vn) && !(line && nv >= 2) {
        return Err(InputError::new(
            path,
            "the residual voltage vn is mapped, but it is only used with phase-to-phase voltages",
        )
        .hint("map vn together with phase-to-phase voltages (voltage connection phase_to_phase), or remove it"));
    }
    if nv == 1 || (nv == 2 && !line) {
        return Err(InputError::new(
            path,
            format!(
                "only {nv} of 3 phase voltages are mapped (missing: {})",
                missing(&phase_v)
            ),
        )
        .hint("map all three with --map va=COL --map vb=COL --map vc=COL (two suffice for phase-to-phase voltages)"));
    }
    if ni > 0 && ni < 3 {
        return Err(InputError::new(
            path,
            format!(
                "only {ni} of 3 phase currents are mapped (missing: {})",
                missing(&phase_i)
            ),
        )
        .hint("map all three with --map ia=COL --map ib=COL --map ic=COL, or none"));
    }
    if nv >= 2 && has(ChannelKey::VPos) {
        return Err(InputError::new(
            path,
            "both phase voltages and v_pos are mapped; a recording is either waveforms or RMS-level",
        )
        .hint("remove one of the mappings"));
    }
    if nv == 0 && !has(ChannelKey::VPos) && !allow_no_voltage {
        return Err(InputError::new(path, "no voltage channel is mapped")
            .hint("name columns va, vb, vc (or map them with --map va=COLUMN ...), or map v_pos for an RMS-level recording"));
    }
    if has(ChannelKey::VPos) {
        if ni > 0 {
            return Err(InputError::new(
                path,
                "phase currents are mapped in an RMS-level recording (v_pos)",
            )
            .hint("map p and q, or ip and iq, for RMS-level recordings"));
        }
        let pq = has(ChannelKey::P) as u8 + has(ChannelKey::Q) as u8;
        let ipq = has(ChannelKey::Ip) as u8 + has(ChannelKey::Iq) as u8;
        if pq == 1 || ipq == 1 || (pq == 2 && ipq == 2) {
            return Err(InputError::new(
                path,
                "an RMS-level recording needs p and q, or ip and iq (one pair)",
            )
            .hint("map both members of one pair"));
        }
    } else {
        for k in [ChannelKey::P, ChannelKey::Q, ChannelKey::Ip, ChannelKey::Iq] {
            if has(k) {
                return Err(InputError::new(
                    path,
                    format!("'{k}' is mapped in a waveform recording; it is only used with v_pos"),
                )
                .hint("remove the mapping; P and Q are computed from the waveforms"));
            }
        }
    }
    Ok(())
}
