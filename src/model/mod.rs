//! The recording model: what every importer produces and every later stage reads.
//!
//! A recording is described by [`RecordingInfo`] (file facts, channel metadata,
//! sampling, the unit's ratings) and delivered as a stream of sample blocks
//! through a [`FrameSink`]. Instantaneous three-phase waveforms and RMS-level
//! series share this one model; [`RecordingKind`] says which one a file holds.
//! Streaming keeps memory bounded for recordings of millions of samples: only
//! the analysis output (decimated phasor quantities) is kept.

use serde::{Deserialize, Serialize};

/// The signals a recording channel can be mapped to (the `--map` keys).
#[derive(
    Clone, Copy, Debug, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize, schemars::JsonSchema,
)]
#[serde(rename_all = "snake_case")]
pub enum ChannelKey {
    Va,
    Vb,
    Vc,
    Ia,
    Ib,
    Ic,
    VPos,
    P,
    Q,
    Ip,
    Iq,
    Status,
    /// Residual voltage `va + vb + vc` (`3·v0`, e.g. a broken-delta winding
    /// or a neutral-displacement channel), for phase-to-phase recordings: it
    /// makes the zero sequence and so the phase-to-neutral voltages observable.
    Vn,
}

/// Number of [`ChannelKey`] variants; frames are arrays indexed by key.
pub const N_KEYS: usize = 13;

impl ChannelKey {
    /// The phase voltages and currents, in this order (the first six of
    /// [`ChannelKey::ALL`]).
    pub const PHASES: [ChannelKey; 6] = {
        let a = Self::ALL;
        [a[0], a[1], a[2], a[3], a[4], a[5]]
    };

    pub const ALL: [ChannelKey; N_KEYS] = [
        ChannelKey::Va,
        ChannelKey::Vb,
        ChannelKey::Vc,
        ChannelKey::Ia,
        ChannelKey::Ib,
        ChannelKey::Ic,
        ChannelKey::VPos,
        ChannelKey::P,
        ChannelKey::Q,
        ChannelKey::Ip,
        ChannelKey::Iq,
        ChannelKey::Status,
        ChannelKey::Vn,
    ];

    /// The name used in `--map KEY=COLUMN` and in plan `channels` blocks.
    pub fn name(self) -> &'static str {
        match self {
            ChannelKey::Va => "va",
            ChannelKey::Vb => "vb",
            ChannelKey::Vc => "vc",
            ChannelKey::Ia => "ia",
            ChannelKey::Ib => "ib",
            ChannelKey::Ic => "ic",
            ChannelKey::VPos => "v_pos",
            ChannelKey::P => "p",
            ChannelKey::Q => "q",
            ChannelKey::Ip => "ip",
            ChannelKey::Iq => "iq",
            ChannelKey::Status => "status",
            ChannelKey::Vn => "vn",
        }
    }

    pub fn parse(s: &str) -> Option<ChannelKey> {
        ChannelKey::ALL
            .iter()
            .copied()
            .find(|k| k.name().eq_ignore_ascii_case(s.trim()))
    }

    pub fn index(self) -> usize {
        self as usize
    }

    pub fn is_phase_voltage(self) -> bool {
        matches!(self, ChannelKey::Va | ChannelKey::Vb | ChannelKey::Vc)
    }

    /// Phase voltages and the residual voltage: the voltage unit applies.
    pub fn is_voltage(self) -> bool {
        self.is_phase_voltage() || self == ChannelKey::Vn
    }

    pub fn is_phase_current(self) -> bool {
        matches!(self, ChannelKey::Ia | ChannelKey::Ib | ChannelKey::Ic)
    }

    /// RMS-level quantities, given directly in per unit.
    pub fn is_rms_level(self) -> bool {
        matches!(
            self,
            ChannelKey::VPos | ChannelKey::P | ChannelKey::Q | ChannelKey::Ip | ChannelKey::Iq
        )
    }
}

/// Unit of the voltage channels.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Default, clap::ValueEnum)]
pub enum VoltageUnit {
    #[default]
    #[value(name = "V", alias = "v")]
    V,
    #[serde(rename = "kV")]
    #[value(name = "kV", aliases = ["kv", "KV"])]
    KV,
    #[serde(rename = "pu")]
    #[value(name = "pu", aliases = ["PU", "p.u."])]
    Pu,
}

/// Unit of the current channels.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Default, clap::ValueEnum)]
pub enum CurrentUnit {
    #[default]
    #[value(name = "A", alias = "a")]
    A,
    #[serde(rename = "kA")]
    #[value(name = "kA", aliases = ["ka", "KA"])]
    KA,
    #[serde(rename = "pu")]
    #[value(name = "pu", aliases = ["PU", "p.u."])]
    Pu,
}

impl VoltageUnit {
    pub fn parse(s: &str) -> Option<Self> {
        match s.trim() {
            "V" | "v" => Some(VoltageUnit::V),
            "kV" | "kv" | "KV" => Some(VoltageUnit::KV),
            "pu" | "PU" | "p.u." => Some(VoltageUnit::Pu),
            _ => None,
        }
    }
    /// Factor to volts (or 1 for per unit).
    pub fn factor(self) -> f64 {
        match self {
            VoltageUnit::V | VoltageUnit::Pu => 1.0,
            VoltageUnit::KV => 1e3,
        }
    }
    pub fn label(self) -> &'static str {
        match self {
            VoltageUnit::V => "V",
            VoltageUnit::KV => "kV",
            VoltageUnit::Pu => "pu",
        }
    }
}

impl CurrentUnit {
    pub fn parse(s: &str) -> Option<Self> {
        match s.trim() {
            "A" | "a" => Some(CurrentUnit::A),
            "kA" | "ka" | "KA" => Some(CurrentUnit::KA),
            "pu" | "PU" | "p.u." => Some(CurrentUnit::Pu),
            _ => None,
        }
    }
    /// Factor to amperes (or 1 for per unit).
    pub fn factor(self) -> f64 {
        match self {
            CurrentUnit::A | CurrentUnit::Pu => 1.0,
            CurrentUnit::KA => 1e3,
        }
    }
    pub fn label(self) -> &'static str {
        match self {
            CurrentUnit::A => "A",
            CurrentUnit::KA => "kA",
            CurrentUnit::Pu => "pu",
        }
    }
}

/// How the three voltage channels were measured.
#[derive(
    Clone, Copy, Debug, PartialEq, Eq, Serialize, Default, schemars::JsonSchema, clap::ValueEnum,
)]
#[serde(rename_all = "snake_case")]
pub enum Connection {
    #[default]
    #[value(name = "phase_to_neutral", aliases = ["ph-n", "ln"])]
    PhaseToNeutral,
    /// `va`, `vb`, `vc` hold `v_ab`, `v_bc`, `v_ca`.
    #[value(name = "phase_to_phase", aliases = ["ph-ph", "ll"])]
    PhaseToPhase,
}

impl Connection {
    pub fn parse(s: &str) -> Option<Self> {
        match s.trim() {
            "phase_to_neutral" | "ph-n" | "ln" => Some(Connection::PhaseToNeutral),
            "phase_to_phase" | "ph-ph" | "ll" => Some(Connection::PhaseToPhase),
            _ => None,
        }
    }
    pub fn name(self) -> &'static str {
        match self {
            Connection::PhaseToNeutral => "phase_to_neutral",
            Connection::PhaseToPhase => "phase_to_phase",
        }
    }
}

/// Phase rotation of the recorded channels.
#[derive(
    Clone,
    Copy,
    Debug,
    PartialEq,
    Eq,
    Default,
    Serialize,
    serde::Deserialize,
    schemars::JsonSchema,
    clap::ValueEnum,
)]
#[serde(rename_all = "snake_case")]
pub enum PhaseOrder {
    /// Phases rotate a, b, c (positive sequence a → b → c).
    #[default]
    Abc,
    /// Phases rotate a, c, b: b and c are swapped for voltages and currents.
    Acb,
}

impl PhaseOrder {
    pub fn name(self) -> &'static str {
        match self {
            PhaseOrder::Abc => "abc",
            PhaseOrder::Acb => "acb",
        }
    }
}

/// The unit's ratings, the per-unit bases (from the test plan or the
/// rating flags). The nominal frequency travels beside them: it may come
/// from each recording instead.
#[derive(Clone, Copy, Debug, PartialEq, Serialize)]
pub struct Ratings {
    /// Rated line-to-line RMS voltage `Un`, kV.
    pub rated_kv: f64,
    /// Rated apparent power `Sn`, MVA.
    pub rated_mva: f64,
}

impl Ratings {
    /// Phase-to-neutral RMS voltage base `Un/√3`, volts.
    pub fn voltage_base_phase_v(&self) -> f64 {
        self.rated_kv * 1e3 / 3f64.sqrt()
    }
    /// Line-to-line RMS voltage base `Un`, volts.
    pub fn voltage_base_line_v(&self) -> f64 {
        self.rated_kv * 1e3
    }
    /// Current base `In = Sn / (√3·Un)`, amperes.
    pub fn current_base_a(&self) -> f64 {
        self.rated_mva * 1e6 / (3f64.sqrt() * self.rated_kv * 1e3)
    }
}

/// Which signals a recording carries.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize, schemars::JsonSchema)]
#[serde(rename_all = "snake_case")]
pub enum RecordingKind {
    /// Instantaneous three-phase waveforms (voltages, optionally currents).
    Waveform,
    /// RMS-level series in per unit (`v_pos` with `p`/`q` or `ip`/`iq`).
    RmsLevel,
}

impl RecordingKind {
    pub fn name(self) -> &'static str {
        match self {
            RecordingKind::Waveform => "waveform",
            RecordingKind::RmsLevel => "rms_level",
        }
    }
}

/// The file format a recording was read from.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize, schemars::JsonSchema)]
pub enum RecordingFormat {
    #[serde(rename = "CSV")]
    Csv,
    #[serde(rename = "COMTRADE")]
    Comtrade,
    /// Built in memory (synthetic recordings, tests).
    #[serde(rename = "memory")]
    Memory,
}

impl RecordingFormat {
    pub fn name(self) -> &'static str {
        match self {
            RecordingFormat::Csv => "CSV",
            RecordingFormat::Comtrade => "COMTRADE",
            RecordingFormat::Memory => "memory",
        }
    }
}

/// One mapped channel of a recording.
#[derive(Clone, Debug, Serialize, schemars::JsonSchema)]
pub struct ChannelInfo {
    pub key: ChannelKey,
    /// Column or channel name in the source file.
    pub source: String,
    /// Zero-based column (CSV) or channel index (COMTRADE) in the source.
    pub index: usize,
    /// The unit of the values as the file gives them.
    pub unit: String,
    /// Factor applied on import to reach the canonical unit (V, A or pu).
    pub scale: f64,
    /// What the scaled values are: `V`, `A`, `pu` or `0/1`.
    pub canonical_unit: &'static str,
}

/// A channel of the source file, mapped or not (what `inspect` lists).
#[derive(Clone, Debug, Serialize, schemars::JsonSchema)]
pub struct SourceChannel {
    /// `analog`, `digital` (COMTRADE) or `column` (CSV).
    pub kind: &'static str,
    /// Channel number (COMTRADE An/Dn) or column number (CSV), from 1.
    pub number: u64,
    pub name: String,
    /// COMTRADE phase identification, circuit and unit, where given.
    pub phase: String,
    pub circuit: String,
    pub unit: String,
    /// COMTRADE: `P` or `S` values, with primary/secondary ratio terms.
    pub ps: String,
    pub primary: Option<f64>,
    pub secondary: Option<f64>,
    /// The key it is mapped to, if any.
    pub mapped_to: Option<ChannelKey>,
}

/// Facts about an imported recording.
#[derive(Clone, Debug, Serialize, schemars::JsonSchema)]
pub struct RecordingInfo {
    pub path: String,
    pub format: RecordingFormat,
    pub kind: RecordingKind,
    pub connection: Connection,
    pub channels: Vec<ChannelInfo>,
    /// Columns of the file that no key was mapped to.
    pub unmapped: Vec<String>,
    /// Every channel of the file.
    pub source_channels: Vec<SourceChannel>,
    /// The line frequency the file states (COMTRADE `lf`), Hz.
    pub line_frequency_hz: Option<f64>,
    pub samples: u64,
    pub sample_rate_hz: f64,
    /// Time of the first sample as the file states it (seconds or timestamp text).
    pub first_time: String,
    /// Seconds from the first to the last sample.
    pub duration_s: f64,
    /// Largest relative deviation of a sample step from the nominal step.
    pub max_step_deviation: f64,
    /// Format-specific facts worth showing a reviewer (key, value).
    pub header: Vec<(String, String)>,
    pub notes: Vec<String>,
    /// Every file read, with the SHA-256 of the bytes as they were read
    /// (the recording first; a COMTRADE `.dat` after its `.cfg`). Filled
    /// once the samples have been streamed.
    pub files: Vec<(String, String)>,
}

impl RecordingInfo {
    /// Facts for samples held in memory, all channels in per unit (status 0/1):
    /// for tests, benchmarks and callers that build signals themselves.
    pub fn in_memory(keys: &[ChannelKey], sample_rate_hz: f64, connection: Connection) -> Self {
        let kind = if keys.contains(&ChannelKey::VPos) {
            RecordingKind::RmsLevel
        } else {
            RecordingKind::Waveform
        };
        RecordingInfo {
            path: "(memory)".into(),
            format: RecordingFormat::Memory,
            kind,
            connection,
            channels: keys
                .iter()
                .enumerate()
                .map(|(i, k)| ChannelInfo {
                    key: *k,
                    source: k.name().into(),
                    index: i,
                    unit: "pu".into(),
                    scale: 1.0,
                    canonical_unit: if *k == ChannelKey::Status {
                        "0/1"
                    } else {
                        "pu"
                    },
                })
                .collect(),
            unmapped: Vec::new(),
            source_channels: Vec::new(),
            line_frequency_hz: None,
            samples: 0,
            sample_rate_hz,
            first_time: "0".into(),
            duration_s: 0.0,
            max_step_deviation: 0.0,
            header: Vec::new(),
            notes: Vec::new(),
            files: Vec::new(),
        }
    }

    pub fn has(&self, key: ChannelKey) -> bool {
        self.channels.iter().any(|c| c.key == key)
    }
}

/// A block of consecutive samples in canonical units, column-wise.
///
/// `time` is in seconds from the first sample of the recording; each mapped
/// channel has a slice of the same length (`None` for unmapped keys).
pub struct Block<'a> {
    pub time: &'a [f64],
    pub channels: [Option<&'a [f64]>; N_KEYS],
}

impl Block<'_> {
    pub fn len(&self) -> usize {
        self.time.len()
    }
    pub fn is_empty(&self) -> bool {
        self.time.is_empty()
    }
}

/// A block that owns its buffers, so that it can be handed over whole
/// (see [`FrameSink::block_owned`]).
#[derive(Default, Debug)]
pub struct OwnedBlock {
    pub time: Vec<f64>,
    /// Channel key index of each column.
    pub keys: Vec<usize>,
    /// One column per key, each as long as `time`.
    pub cols: Vec<Vec<f64>>,
}

impl OwnedBlock {
    /// The block as slices; a key given twice takes its last column.
    pub fn view(&self) -> Block<'_> {
        self.rows(0..self.time.len())
    }

    /// Rows `r` of the block as slices, as [`OwnedBlock::view`].
    pub fn rows(&self, r: std::ops::Range<usize>) -> Block<'_> {
        let mut channels: [Option<&[f64]>; N_KEYS] = [None; N_KEYS];
        for (key, col) in self.keys.iter().zip(&self.cols) {
            channels[*key] = Some(&col[r.clone()]);
        }
        Block {
            time: &self.time[r],
            channels,
        }
    }
}

/// Consumer of sample blocks, in time order.
pub trait FrameSink {
    fn block(&mut self, block: &Block<'_>);
    /// A block given away whole: a sink that hands blocks to another thread
    /// takes the buffers instead of copying them. Returns buffers for the
    /// next block (their lengths and contents are to be overwritten); by
    /// default the same, after [`FrameSink::block`].
    fn block_owned(&mut self, block: OwnedBlock) -> OwnedBlock {
        self.block(&block.view());
        block
    }
    /// The next block does not follow the previous one without a break
    /// (samples between them were skipped, e.g. a segment recorded at
    /// another sampling rate): windows over samples start afresh.
    fn gap(&mut self) {}
}

/// A sink that keeps every sample: for small recordings, synthetic data and tests.
#[derive(Default, Clone, Debug)]
pub struct Collected {
    pub time: Vec<f64>,
    pub channels: Vec<Option<Vec<f64>>>,
}

impl Collected {
    pub fn channel(&self, key: ChannelKey) -> Option<&[f64]> {
        self.channels.get(key.index())?.as_deref()
    }
}

impl FrameSink for Collected {
    fn block(&mut self, block: &Block<'_>) {
        if self.channels.is_empty() {
            self.channels = vec![None; N_KEYS];
        }
        self.time.extend_from_slice(block.time);
        for (i, ch) in block.channels.iter().enumerate() {
            if let Some(v) = ch {
                self.channels[i]
                    .get_or_insert_with(Vec::new)
                    .extend_from_slice(v);
            }
        }
    }
}

display_as_name!(ChannelKey, RecordingKind, RecordingFormat);
