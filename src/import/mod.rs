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
}

impl Default for ImportOptions {
    fn default() -> Self {
        ImportOptions {
            step_tolerance: 0.10,
            threads: 0,
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
        other => Err(
            InputError::new(path, format!("unsupported recording format '.{other}'"))
                .hint("give a .csv file (COMTRADE .cfg/.cff support is listed in the README)"),
        ),
    }
}

/// Channel keys that the model checks for completeness, with what to say.
/// Phase-to-phase voltages may leave one of the three out (it is derived:
/// `vab + vbc + vca = 0`).
pub(crate) fn check_channel_set(
    path: &Path,
    present: &[ChannelKey],
    connection: Connection,
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
    if nv == 0 && !has(ChannelKey::VPos) {
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
