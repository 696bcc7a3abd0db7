//! Importers: turn a recording file into the recording model.
//!
//! Each importer opens a file, resolves the channel mapping, and then streams
//! sample blocks in canonical units (V, A or pu; time in seconds from the first
//! sample) into a [`FrameSink`]. Adding a format means adding a module here that
//! implements [`Source`] and a branch in [`open`].

pub(crate) mod ahead;
pub(crate) mod channels;
pub mod comtrade;
pub mod csv;
pub(crate) mod timebase;

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

/// File extensions (lower case) of recordings: CSV, and COMTRADE's
/// configuration, single file and data file.
pub const RECORDING_EXTENSIONS: [&str; 7] = ["csv", "txt", "tsv", "", "cfg", "cff", "dat"];

/// Whether `path` names a recording by its extension (a file without one is
/// read as CSV).
pub fn is_recording(path: &Path) -> bool {
    let ext = path
        .extension()
        .and_then(|e| e.to_str())
        .unwrap_or("")
        .to_ascii_lowercase();
    RECORDING_EXTENSIONS.contains(&ext.as_str())
}

/// Whether `path` is a recording to check on its own: a recording by its
/// extension, but not a COMTRADE `.dat` beside its `.cfg` (the pair is one
/// recording, named by the `.cfg`). For folder scans and file patterns.
pub fn is_own_recording(path: &Path) -> bool {
    let dat = path
        .extension()
        .is_some_and(|e| e.eq_ignore_ascii_case("dat"));
    is_recording(path)
        && !(dat && (path.with_extension("cfg").exists() || path.with_extension("CFG").exists()))
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
