//! Signal analysis: per unit, one-cycle DFT phasors, symmetrical components,
//! active and reactive power and current, then disturbances and trips.
//!
//! [`Analyzer`] is a [`FrameSink`]: it consumes the importer's sample stream
//! once and keeps only a decimated [`Series`] of derived quantities (about
//! [`POINTS_PER_CYCLE`] points per nominal cycle), so memory does not grow
//! with the sampling rate.
//!
//! Conventions (generator convention, current positive out of the unit):
//! `S = V1·conj(I1)` in per unit (`= 3·V1·conj(I1)` in SI with RMS phasors),
//! `P = Re S`, `Q = Im S`; `Ip1 = Re(V1·conj(I1))/|V1|`,
//! `Iq1 = Im(V1·conj(I1))/|V1|`, so `Q = |V1|·Iq1` and positive `Iq1` is
//! over-excited (capacitive) injection that supports a sagging voltage;
//! `Iq2 = Im(V2·conj(I2))/|V2|`, negative when the unit behaves like an
//! inductance towards the negative sequence.

pub mod angle;
pub mod events;
pub mod phasor;
pub mod sequence;

use crate::error::InputError;
pub use crate::model::PhaseOrder;
use crate::model::{
    Block, ChannelKey, Connection, FrameSink, Ratings, RecordingInfo, RecordingKind, N_KEYS,
};
use num_complex::Complex64;
use phasor::SlidingDft;
use serde::Serialize;
use std::path::Path;

/// `|z|` as `sqrt(re² + im²)`: per-unit phasors can neither overflow nor
/// underflow there, and it is several times cheaper than `hypot` (what
/// `Complex64::norm` uses); the two differ by at most one unit in the last
/// place.
trait Mag {
    fn mag(self) -> f64;
}

impl Mag for Complex64 {
    #[inline]
    fn mag(self) -> f64 {
        self.norm_sqr().sqrt()
    }
}

/// Output points per nominal cycle for waveform recordings.
pub const POINTS_PER_CYCLE: usize = 64;
/// Below this magnitude (pu) a sequence voltage gives no reliable angle; the
/// last reliable angle is held as the reference for active/reactive current.
pub const MIN_REFERENCE_PU: f64 = 0.02;

/// A derived quantity of the analysis, all in per unit except `Status`.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Quantity {
    /// Positive-sequence voltage magnitude.
    V1,
    V2,
    V0,
    /// Phase-to-neutral RMS magnitudes.
    Va,
    Vb,
    Vc,
    /// Phase-to-phase RMS magnitudes (base `Un`).
    Vab,
    Vbc,
    Vca,
    P,
    Q,
    /// Positive-sequence active current.
    Ip,
    /// Positive-sequence reactive current.
    Iq,
    /// Negative-sequence reactive current.
    Iq2,
    I1,
    I2,
    /// Largest phase current RMS magnitude.
    IMax,
    /// Unit status (1 connected, 0 open); lowest value within each point.
    Status,
    /// Waveforms: largest `|x[n] − x[n−N]|` of the voltage channels since the
    /// previous point (pu): how far the waveform left the sinusoid of one
    /// cycle before. Zero in steady state; marks inception and clearance.
    WaveDeviation,
    /// Waveforms: angle of the positive-sequence voltage against the
    /// nominal-frequency reference of the DFT, radians, unwrapped (it turns
    /// at `2π·(f − fn)`); NaN where `|V1|` is below [`MIN_ANGLE_PU`].
    V1Angle,
}

pub const N_Q: usize = 20;

/// Below this `|V1|` (pu) the positive-sequence angle is not used.
pub const MIN_ANGLE_PU: f64 = 0.05;

impl Quantity {
    pub const ALL: [Quantity; N_Q] = [
        Quantity::V1,
        Quantity::V2,
        Quantity::V0,
        Quantity::Va,
        Quantity::Vb,
        Quantity::Vc,
        Quantity::Vab,
        Quantity::Vbc,
        Quantity::Vca,
        Quantity::P,
        Quantity::Q,
        Quantity::Ip,
        Quantity::Iq,
        Quantity::Iq2,
        Quantity::I1,
        Quantity::I2,
        Quantity::IMax,
        Quantity::Status,
        Quantity::WaveDeviation,
        Quantity::V1Angle,
    ];
    pub fn name(self) -> &'static str {
        match self {
            Quantity::V1 => "v1",
            Quantity::V2 => "v2",
            Quantity::V0 => "v0",
            Quantity::Va => "va",
            Quantity::Vb => "vb",
            Quantity::Vc => "vc",
            Quantity::Vab => "vab",
            Quantity::Vbc => "vbc",
            Quantity::Vca => "vca",
            Quantity::P => "p",
            Quantity::Q => "q",
            Quantity::Ip => "ip",
            Quantity::Iq => "iq",
            Quantity::Iq2 => "iq2",
            Quantity::I1 => "i1",
            Quantity::I2 => "i2",
            Quantity::IMax => "i_max",
            Quantity::Status => "status",
            Quantity::WaveDeviation => "wave_deviation",
            Quantity::V1Angle => "v1_angle",
        }
    }
}

/// Time series of derived quantities at the analysis output rate.
#[derive(Clone, Debug, Default)]
pub struct Series {
    /// Seconds from the first sample; for waveforms, the last sample of each
    /// one-cycle window.
    pub t: Vec<f64>,
    cols: Vec<Option<Vec<f64>>>,
}

impl Series {
    pub fn new(present: &[Quantity]) -> Self {
        let mut cols = vec![None; N_Q];
        for q in present {
            cols[*q as usize] = Some(Vec::new());
        }
        Series {
            t: Vec::new(),
            cols,
        }
    }
    /// A series from columns computed elsewhere (RMS-level data, tests).
    /// Time must increase strictly; every column must match its length.
    pub fn from_columns(t: Vec<f64>, columns: Vec<(Quantity, Vec<f64>)>) -> Result<Self, String> {
        if t.windows(2).any(|w| !(w[1] > w[0])) || t.iter().any(|x| !x.is_finite()) {
            return Err("time must be finite and strictly increasing".into());
        }
        let mut cols = vec![None; N_Q];
        for (q, c) in columns {
            if c.len() != t.len() {
                return Err(format!(
                    "column {} has {} values for {} times",
                    q.name(),
                    c.len(),
                    t.len()
                ));
            }
            cols[q as usize] = Some(c);
        }
        Ok(Series { t, cols })
    }

    pub fn get(&self, q: Quantity) -> Option<&[f64]> {
        self.cols.get(q as usize)?.as_deref()
    }
    pub fn has(&self, q: Quantity) -> bool {
        self.get(q).is_some()
    }
    pub fn len(&self) -> usize {
        self.t.len()
    }
    pub fn is_empty(&self) -> bool {
        self.t.is_empty()
    }
    pub fn present(&self) -> Vec<Quantity> {
        Quantity::ALL
            .iter()
            .copied()
            .filter(|q| self.has(*q))
            .collect()
    }
    #[inline]
    fn push(&mut self, q: Quantity, v: f64) {
        if let Some(c) = &mut self.cols[q as usize] {
            c.push(v);
        }
    }
    /// Index of the first point at or after `t` (len() if none).
    pub fn index_at(&self, t: f64) -> usize {
        self.t.partition_point(|x| *x < t)
    }
    /// Mean output step in seconds.
    pub fn step(&self) -> f64 {
        if self.t.len() < 2 {
            return f64::NAN;
        }
        (self.t[self.t.len() - 1] - self.t[0]) / (self.t.len() - 1) as f64
    }
}

/// Settings of the analysis stage.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct AnalysisSettings {
    /// Needed unless every channel is in per unit.
    pub ratings: Option<Ratings>,
    pub frequency_hz: f64,
    pub points_per_cycle: usize,
    pub phase_order: PhaseOrder,
}

/// Largest accepted samples per nominal cycle: the one-cycle window holds
/// this many samples per channel (5 MHz at 50 Hz; 5.6 MB for 7 channels).
pub const MAX_SAMPLES_PER_CYCLE: f64 = 100_000.0;

/// Nominal cycles at the start of a recording over which the phase rotation
/// is checked (`|V2| > |V1|` means A-C-B).
const ROTATION_CHECK_CYCLES: f64 = 5.0;

/// Streaming analysis of one recording.
pub struct Analyzer {
    kind: RecordingKind,
    connection: Connection,
    dft: Option<SlidingDft>,
    has_current: bool,
    has_status: bool,
    /// Voltages are mapped (else only currents and status are analysed).
    has_voltage: bool,
    /// The residual voltage `vn = va + vb + vc` is mapped (phase-to-phase
    /// recordings): the zero sequence becomes observable.
    has_residual: bool,
    /// A phase-to-phase voltage that is not mapped and is derived from the
    /// other two (`vab + vbc + vca = 0`).
    derived_voltage: Option<usize>,
    phase_order: PhaseOrder,
    /// Per-unit factor per channel key.
    scale: [f64; N_KEYS],
    decimation: usize,
    since_out: usize,
    status_min: f64,
    deviation_max: f64,
    u1: Option<Complex64>,
    u2: Option<Complex64>,
    /// The last usable raw V1 angle and the unwrapped angle there.
    angle: Option<(f64, f64)>,
    series: Series,
    xbuf: [f64; 7],
    frequency_hz: f64,
    /// The first unusable value (channel, time), reported by `finish`.
    problem: Option<(String, f64)>,
}

/// Result of analysing one recording.
pub struct Analysed {
    /// Facts of the recording, with the analysis' notes added.
    pub info: RecordingInfo,
    pub series: Series,
    /// Samples in one DFT window (0 for RMS-level recordings).
    pub dft_window: usize,
    /// Input samples per output point.
    pub decimation: usize,
}

/// The per-unit factor of each channel key: 1 for channels already in per
/// unit, one over the base for channels in V or A (phase or line base by the
/// connection; the residual voltage on the phase base).
fn per_unit_scale(info: &RecordingInfo, ratings: Option<&Ratings>) -> [f64; N_KEYS] {
    let mut scale = [1.0; N_KEYS];
    let Some(r) = ratings else { return scale };
    let unit_of = |k: ChannelKey| {
        info.channels
            .iter()
            .find(|c| c.key == k)
            .map(|c| c.canonical_unit)
    };
    let vbase = match info.connection {
        Connection::PhaseToNeutral => r.voltage_base_phase_v(),
        Connection::PhaseToPhase => r.voltage_base_line_v(),
    };
    for k in [ChannelKey::Va, ChannelKey::Vb, ChannelKey::Vc] {
        if unit_of(k) == Some("V") {
            scale[k.index()] = 1.0 / vbase;
        }
    }
    if unit_of(ChannelKey::Vn) == Some("V") {
        scale[ChannelKey::Vn.index()] = 1.0 / r.voltage_base_phase_v();
    }
    for k in [ChannelKey::Ia, ChannelKey::Ib, ChannelKey::Ic] {
        if unit_of(k) == Some("A") {
            scale[k.index()] = 1.0 / r.current_base_a();
        }
    }
    scale
}

/// Refuses a waveform sample rate that gives no usable one-cycle phasors.
fn check_rate(path: &Path, fs: f64, f: f64) -> Result<(), InputError> {
    if !(fs > 0.0) || !fs.is_finite() {
        return Err(InputError::new(path, "sample rate could not be determined")
            .hint("the time column needs at least two increasing values"));
    }
    if fs > MAX_SAMPLES_PER_CYCLE * f {
        return Err(InputError::new(
            path,
            format!(
                "waveforms sampled at {fs:.4e} Hz give {:.0} samples per {f} Hz cycle; at most {MAX_SAMPLES_PER_CYCLE} are accepted",
                fs / f,
            ),
        )
        .hint("check the time column's unit (seconds) or the sampling rate, or decimate the recording"));
    }
    if fs < 8.0 * f {
        return Err(InputError::new(
            path,
            format!(
                "waveforms sampled at {fs:.1} Hz cannot give {f} Hz phasors (at least 8 samples per cycle needed)"
            ),
        )
        .hint("check the time column's unit (seconds) and --frequency"));
    }
    Ok(())
}

/// The quantities the analysis of a recording produces, in series order.
fn quantities(
    info: &RecordingInfo,
    has_voltage: bool,
    has_current: bool,
    has_status: bool,
) -> Vec<Quantity> {
    let mut present = if has_voltage {
        vec![Quantity::V1]
    } else {
        Vec::new()
    };
    match (info.kind, has_voltage) {
        (RecordingKind::Waveform, false) => {
            if has_current {
                present.extend([Quantity::I1, Quantity::I2, Quantity::IMax]);
            }
        }
        (RecordingKind::Waveform, true) => {
            present.extend([
                Quantity::V2,
                Quantity::Va,
                Quantity::Vb,
                Quantity::Vc,
                Quantity::Vab,
                Quantity::Vbc,
                Quantity::Vca,
                Quantity::WaveDeviation,
                Quantity::V1Angle,
            ]);
            if info.connection == Connection::PhaseToNeutral || info.has(ChannelKey::Vn) {
                present.push(Quantity::V0);
            }
            if has_current {
                present.extend([
                    Quantity::P,
                    Quantity::Q,
                    Quantity::Ip,
                    Quantity::Iq,
                    Quantity::Iq2,
                    Quantity::I1,
                    Quantity::I2,
                    Quantity::IMax,
                ]);
            }
        }
        (RecordingKind::RmsLevel, _) => {
            if has_current {
                present.extend([
                    Quantity::P,
                    Quantity::Q,
                    Quantity::Ip,
                    Quantity::Iq,
                    Quantity::I1,
                    Quantity::IMax,
                ]);
            }
        }
    }
    if has_status {
        present.push(Quantity::Status);
    }
    present
}

impl Analyzer {
    /// Prepares the analysis for a recording as its importer opened it.
    pub fn new(info: &RecordingInfo, settings: &AnalysisSettings) -> Result<Self, InputError> {
        let path = Path::new(&info.path);
        let needs_ratings = info
            .channels
            .iter()
            .any(|c| c.canonical_unit == "V" || c.canonical_unit == "A");
        if needs_ratings && settings.ratings.is_none() {
            return Err(InputError::new(
                path,
                "channels are in V or A, so the unit's ratings are needed for per unit",
            )
            .hint("give --rated-kv and --rated-mva (or the plan's unit block)"));
        }
        if !(settings.frequency_hz > 0.0) {
            return Err(InputError::new(path, "nominal frequency is not set")
                .hint("give --frequency 50 or 60 (or the plan's unit.frequency_hz)"));
        }
        let has_current =
            info.has(ChannelKey::Ia) || info.has(ChannelKey::P) || info.has(ChannelKey::Ip);
        let has_status = info.has(ChannelKey::Status);
        let has_voltage = [
            ChannelKey::Va,
            ChannelKey::Vb,
            ChannelKey::Vc,
            ChannelKey::VPos,
        ]
        .iter()
        .any(|k| info.has(*k));
        let (dft, decimation) = match info.kind {
            RecordingKind::Waveform => {
                let fs = info.sample_rate_hz;
                check_rate(path, fs, settings.frequency_hz)?;
                // Currents only (inspect of a recording without mapped
                // voltages): magnitudes and what they show of a trip.
                let chans = match (has_voltage, has_current) {
                    (true, true) => Some(6 + info.has(ChannelKey::Vn) as usize),
                    (true, false) => Some(3 + info.has(ChannelKey::Vn) as usize),
                    (false, true) => Some(3),
                    (false, false) => None,
                };
                let dft = chans.map(|n| SlidingDft::new(fs, settings.frequency_hz, n));
                let dec = ((fs / (settings.frequency_hz * settings.points_per_cycle.max(1) as f64))
                    .floor() as usize)
                    .max(1);
                (dft, dec)
            }
            RecordingKind::RmsLevel => (None, 1),
        };
        let derived_voltage = if has_voltage
            && info.kind == RecordingKind::Waveform
            && info.connection == Connection::PhaseToPhase
        {
            [ChannelKey::Va, ChannelKey::Vb, ChannelKey::Vc]
                .iter()
                .position(|k| !info.has(*k))
        } else {
            None
        };
        let present = quantities(info, has_voltage, has_current, has_status);
        Ok(Analyzer {
            kind: info.kind,
            connection: info.connection,
            dft,
            has_current,
            has_status,
            has_voltage,
            has_residual: has_voltage && info.has(ChannelKey::Vn),
            derived_voltage,
            phase_order: settings.phase_order,
            scale: per_unit_scale(info, settings.ratings.as_ref()),
            decimation,
            since_out: 0,
            status_min: f64::INFINITY,
            deviation_max: 0.0,
            u1: None,
            angle: None,
            u2: None,
            series: Series::new(&present),
            xbuf: [0.0; 7],
            frequency_hz: settings.frequency_hz,
            problem: None,
        })
    }

    /// Ends the analysis: checks what can only be checked on the whole
    /// stream (unusable values, phase rotation) and adds the analysis' notes
    /// to the recording facts.
    pub fn finish(self, mut info: RecordingInfo) -> Result<Analysed, InputError> {
        let path = Path::new(&info.path).to_path_buf();
        if let Some((what, t)) = &self.problem {
            return Err(InputError::new(
                &path,
                format!("{what} at {t:.6} s is not a finite number after scaling"),
            )
            .field(what.clone())
            .hint("check the channel's scaling (COMTRADE a, b and ratios) and units"));
        }
        if self.kind == RecordingKind::Waveform {
            if let Some(k) = self.derived_voltage {
                let names = ["vab (va)", "vbc (vb)", "vca (vc)"];
                info.notes.push(format!(
                    "{} is not recorded and is derived as minus the sum of the other two phase-to-phase voltages",
                    names[k]
                ));
            }
            if self.phase_order == PhaseOrder::Acb {
                info.notes.push(
                    "phase_order acb: the phases rotate A-C-B, so b and c are swapped for voltages and currents"
                        .into(),
                );
            }
            let s = &self.series;
            if let (Some(v1), Some(v2), Some(&t0)) =
                (s.get(Quantity::V1), s.get(Quantity::V2), s.t.first())
            {
                let n = s.index_at(t0 + ROTATION_CHECK_CYCLES / self.frequency_hz);
                let mean = |v: &[f64]| v[..n].iter().sum::<f64>() / n.max(1) as f64;
                let (m1, m2) = (mean(v1), mean(v2));
                if n > 0 && m1 + m2 > 0.05 && m2 > m1 {
                    let ratio = m2 / m1.max(1e-12);
                    let (msg, hint) = match self.phase_order {
                        PhaseOrder::Abc => (
                            format!(
                                "the phases rotate A-C-B: before any disturbance |V2| = {m2:.3} pu exceeds |V1| = {m1:.3} pu (|V2|/|V1| = {ratio:.3})"
                            ),
                            "if the recording really rotates A-C-B, say phase_order: acb in the plan or test (or --phase-order acb); otherwise check which channels are mapped to b and c, and the nominal frequency (at the wrong one the sequences mean nothing)",
                        ),
                        PhaseOrder::Acb => (
                            format!(
                                "phase_order acb is set, but after swapping b and c |V2| = {m2:.3} pu exceeds |V1| = {m1:.3} pu (|V2|/|V1| = {ratio:.3}): the recording rotates A-B-C"
                            ),
                            "remove phase_order: acb for this recording",
                        ),
                    };
                    return Err(InputError::new(&path, msg).hint(hint));
                }
            }
        }
        Ok(Analysed {
            info,
            dft_window: self.dft.as_ref().map(|d| d.window()).unwrap_or(0),
            decimation: self.decimation,
            series: self.series,
        })
    }

    fn emit_waveform(&mut self, t: f64) {
        let Some(dft) = &self.dft else { return };
        let s = &mut self.series;
        let (v1, v2, v0, ph, pp) = match self.connection {
            Connection::PhaseToNeutral => {
                let (va, vb, vc) = (dft.phasor(0), dft.phasor(1), dft.phasor(2));
                let [v0, v1, v2] = sequence::sequences(va, vb, vc);
                let r3 = 3f64.sqrt();
                (
                    v1,
                    v2,
                    Some(v0),
                    [va.mag(), vb.mag(), vc.mag()],
                    [
                        (va - vb).mag() / r3,
                        (vb - vc).mag() / r3,
                        (vc - va).mag() / r3,
                    ],
                )
            }
            Connection::PhaseToPhase => {
                let (vab, vbc, vca) = (dft.phasor(0), dft.phasor(1), dft.phasor(2));
                let [_, v1ab, v2ab] = sequence::sequences(vab, vbc, vca);
                let (v1, v2) = sequence::from_line_sequences(v1ab, v2ab);
                // With the residual voltage vn = 3·v0 the phases are known;
                // without it they assume V0 = 0 (and are not used by rules).
                let v0 = self
                    .has_residual
                    .then(|| dft.phasor(if self.has_current { 6 } else { 3 }) / 3.0);
                let [a, b, c] = sequence::phases(v0.unwrap_or(Complex64::new(0.0, 0.0)), v1, v2);
                (
                    v1,
                    v2,
                    v0,
                    [a.mag(), b.mag(), c.mag()],
                    [vab.mag(), vbc.mag(), vca.mag()],
                )
            }
        };
        if !v1.mag().is_finite() && self.problem.is_none() {
            self.problem = Some(("the voltage phasor (values too large)".into(), t));
        }
        s.t.push(t);
        s.push(Quantity::V1, v1.mag());
        s.push(Quantity::V2, v2.mag());
        if let Some(v0) = v0 {
            s.push(Quantity::V0, v0.mag());
        }
        s.push(Quantity::Va, ph[0]);
        s.push(Quantity::Vb, ph[1]);
        s.push(Quantity::Vc, ph[2]);
        s.push(Quantity::Vab, pp[0]);
        s.push(Quantity::Vbc, pp[1]);
        s.push(Quantity::Vca, pp[2]);
        if v1.mag() >= MIN_REFERENCE_PU {
            self.u1 = Some(v1 / v1.mag());
        }
        if v2.mag() >= MIN_REFERENCE_PU {
            self.u2 = Some(v2 / v2.mag());
        }
        if self.has_current {
            let (ia, ib, ic) = (dft.phasor(3), dft.phasor(4), dft.phasor(5));
            let [_, i1, i2] = sequence::sequences(ia, ib, ic);
            let sp = v1 * i1.conj();
            s.push(Quantity::P, sp.re);
            s.push(Quantity::Q, sp.im);
            let (ip, iq) = match self.u1 {
                Some(u) => {
                    let x = u * i1.conj();
                    (x.re, x.im)
                }
                None => (f64::NAN, f64::NAN),
            };
            s.push(Quantity::Ip, ip);
            s.push(Quantity::Iq, iq);
            let iq2 = match self.u2 {
                Some(u) => (u * i2.conj()).im,
                None => f64::NAN,
            };
            s.push(Quantity::Iq2, iq2);
            s.push(Quantity::I1, i1.mag());
            s.push(Quantity::I2, i2.mag());
            s.push(Quantity::IMax, ia.mag().max(ib.mag()).max(ic.mag()));
        }
        if self.has_status {
            s.push(Quantity::Status, self.status_min);
        }
        s.push(Quantity::WaveDeviation, self.deviation_max);
        self.deviation_max = 0.0;
        let unwrapped = if v1.mag() >= MIN_ANGLE_PU && v1.mag().is_finite() {
            let raw = v1.arg();
            let u = match self.angle {
                Some((last_raw, last)) => {
                    let d = raw - last_raw;
                    last + (d + std::f64::consts::PI).rem_euclid(std::f64::consts::TAU)
                        - std::f64::consts::PI
                }
                None => raw,
            };
            self.angle = Some((raw, u));
            u
        } else {
            f64::NAN
        };
        s.push(Quantity::V1Angle, unwrapped);
    }
}

impl FrameSink for Analyzer {
    fn gap(&mut self) {
        if let Some(d) = &mut self.dft {
            d.reset();
        }
        self.since_out = 0;
        self.deviation_max = 0.0;
        self.status_min = f64::INFINITY;
    }

    fn block(&mut self, block: &Block<'_>) {
        if !self.has_voltage {
            self.block_currents_only(block);
            return;
        }
        match self.kind {
            RecordingKind::Waveform => self.block_waveform(block),
            RecordingKind::RmsLevel => self.block_rms(block),
        }
    }
}

/// Of `counted` pushes with `since_out` counted before (of `decimation`
/// per output point), the last that starts a decimation group (emits a
/// point), counted from 0.
fn decimated(since_out: usize, decimation: usize, counted: usize) -> Option<usize> {
    let first = (decimation - since_out) % decimation;
    (first < counted).then(|| first + (counted - 1 - first) / decimation * decimation)
}

/// The first sample of `range` (then the first channel) whose scaled value
/// `cols[c][i] * scales[c]` is not finite; each channel is checked whole
/// without branches first.
fn first_unusable(
    cols: &[&[f64]],
    scales: &[f64],
    range: std::ops::Range<usize>,
) -> Option<(usize, usize)> {
    cols.iter()
        .zip(scales)
        .enumerate()
        .filter(|(_, (col, s))| {
            col[range.clone()]
                .iter()
                .fold(false, |bad, x| bad | !(x * *s).is_finite())
        })
        .filter_map(|(c, (col, s))| {
            range
                .clone()
                .find(|&k| !(col[k] * s).is_finite())
                .map(|k| (k, c))
        })
        .min()
}

impl Analyzer {
    /// Waveforms: scaled (and derived, swapped) samples into the sliding DFT,
    /// one output point per decimation group.
    fn block_waveform(&mut self, block: &Block<'_>) {
        let ch = |k: ChannelKey| block.channels[k.index()];
        let status = ch(ChannelKey::Status);
        let keys = ChannelKey::PHASES;
        let nch = if self.has_current { 6 } else { 3 };
        let cols: Vec<&[f64]> = keys[..nch].iter().map(|k| ch(*k).unwrap_or(&[])).collect();
        let scales: Vec<f64> = keys[..nch].iter().map(|k| self.scale[k.index()]).collect();
        let residual = ch(ChannelKey::Vn).filter(|_| self.has_residual);
        let vn_scale = self.scale[ChannelKey::Vn.index()];
        let nd = nch + residual.is_some() as usize;
        let line = self.connection == Connection::PhaseToPhase;
        let acb = self.phase_order == PhaseOrder::Acb;
        if self.derived_voltage.is_none() && !acb && residual.is_none() && self.dft.is_some() {
            // The channels go into the DFT as they are: run by run.
            self.block_waveform_runs(block, &cols, &scales, status, &keys);
            return;
        }
        for i in 0..block.len() {
            for c in 0..nch {
                if Some(c) != self.derived_voltage {
                    self.xbuf[c] = cols[c][i] * scales[c];
                }
            }
            if let Some(k) = self.derived_voltage {
                self.xbuf[k] = -(self.xbuf[(k + 1) % 3] + self.xbuf[(k + 2) % 3]);
            }
            if acb {
                if line {
                    // Swapping b and c: v_ab → −v_ca, v_bc → −v_bc, v_ca → −v_ab.
                    let (ab, bc, ca) = (self.xbuf[0], self.xbuf[1], self.xbuf[2]);
                    self.xbuf[0] = -ca;
                    self.xbuf[1] = -bc;
                    self.xbuf[2] = -ab;
                } else {
                    self.xbuf.swap(1, 2);
                }
                if nch == 6 {
                    self.xbuf.swap(4, 5);
                }
            }
            if let Some(r) = residual {
                self.xbuf[nch] = r[i] * vn_scale;
            }
            let xb = self.xbuf;
            if xb[..nd].iter().any(|x| !x.is_finite()) && self.problem.is_none() {
                let c = xb[..nd].iter().position(|x| !x.is_finite()).unwrap_or(0);
                let name = if c < nch { keys[c].name() } else { "vn" };
                self.problem = Some((format!("channel {name}"), block.time[i]));
            }
            if let Some(d) = &mut self.dft {
                if d.ready() {
                    for c in 0..3 {
                        let dv = (xb[c] - d.oldest(c)).abs();
                        if dv > self.deviation_max {
                            self.deviation_max = dv;
                        }
                    }
                }
                d.push(&xb[..nd]);
            }
            if let Some(st) = status {
                self.status_min = self.status_min.min(st[i]);
            }
            let ready = self.dft.as_ref().is_some_and(|d| d.ready());
            if ready {
                if self.since_out == 0 {
                    self.emit_waveform(block.time[i]);
                    self.status_min = f64::INFINITY;
                }
                self.since_out += 1;
                if self.since_out >= self.decimation {
                    self.since_out = 0;
                }
            }
        }
    }

    /// [`Analyzer::block_waveform`] for channels that go into the DFT
    /// unchanged, in runs that end where a point is emitted or the DFT
    /// refreshes its sums: each run is pushed channel by channel
    /// ([`SlidingDft::push_run`]). The same values, checks and points as
    /// sample by sample.
    fn block_waveform_runs(
        &mut self,
        block: &Block<'_>,
        cols: &[&[f64]],
        scales: &[f64],
        status: Option<&[f64]>,
        keys: &[ChannelKey],
    ) {
        let len = block.len();
        let mut i = 0;
        while i < len {
            let Some(d) = self.dft.as_mut() else { return };
            let ready = d.ready();
            // Pushes up to and including the next one that emits a point.
            let to_emit = if !ready {
                d.until_ready()
            } else if self.since_out == 0 {
                1
            } else {
                self.decimation - self.since_out + 1
            };
            let run = to_emit.min(d.until_refresh()).min(len - i);
            let range = i..i + run;
            let finite = d.push_run(
                cols,
                scales,
                range.clone(),
                ready.then_some(&mut self.deviation_max),
            );
            if !finite && self.problem.is_none() {
                if let Some((k, c)) = first_unusable(cols, scales, range.clone()) {
                    self.problem = Some((format!("channel {}", keys[c].name()), block.time[k]));
                }
            }
            let ready_at_end = d.ready();
            if let Some(st) = status {
                for v in &st[range] {
                    self.status_min = self.status_min.min(*v);
                }
            }
            // The pushes that count towards the decimation: all of the run
            // with a full window, else its last if that filled the window.
            let (first, counted) = match (ready, ready_at_end) {
                (true, _) => (0, run),
                (false, true) => (run - 1, 1),
                (false, false) => (0, 0),
            };
            let emit_at =
                decimated(self.since_out, self.decimation, counted).map(|m| i + first + m);
            self.since_out = (self.since_out + counted) % self.decimation;
            if let Some(k) = emit_at {
                // Only the run's last push can emit (the run ends there).
                self.emit_waveform(block.time[k]);
                self.status_min = f64::INFINITY;
            }
            i += run;
        }
    }

    /// RMS-level values: one output point per sample, the currents from the
    /// powers or the powers from the currents.
    fn block_rms(&mut self, block: &Block<'_>) {
        let ch = |k: ChannelKey| block.channels[k.index()];
        let status = ch(ChannelKey::Status);
        let v = ch(ChannelKey::VPos).unwrap_or(&[]);
        let (p, q, ip, iq) = (
            ch(ChannelKey::P),
            ch(ChannelKey::Q),
            ch(ChannelKey::Ip),
            ch(ChannelKey::Iq),
        );
        let s = &mut self.series;
        for i in 0..block.len() {
            s.t.push(block.time[i]);
            let vi = v[i];
            s.push(Quantity::V1, vi);
            if self.has_current {
                let valid = vi.abs() >= MIN_REFERENCE_PU;
                let (pi, qi, ipi, iqi) = match (p, q, ip, iq) {
                    (Some(p), Some(q), _, _) => {
                        let (a, b) = if valid {
                            (p[i] / vi, q[i] / vi)
                        } else {
                            (f64::NAN, f64::NAN)
                        };
                        (p[i], q[i], a, b)
                    }
                    (_, _, Some(ip), Some(iq)) => (vi * ip[i], vi * iq[i], ip[i], iq[i]),
                    _ => (f64::NAN, f64::NAN, f64::NAN, f64::NAN),
                };
                s.push(Quantity::P, pi);
                s.push(Quantity::Q, qi);
                s.push(Quantity::Ip, ipi);
                s.push(Quantity::Iq, iqi);
                let i1 = if ipi.is_finite() {
                    ipi.hypot(iqi)
                } else {
                    pi.hypot(qi) / vi.abs().max(MIN_REFERENCE_PU)
                };
                s.push(Quantity::I1, i1);
                s.push(Quantity::IMax, i1);
            }
            if let Some(st) = status {
                s.push(Quantity::Status, st[i]);
            }
        }
    }
}

impl Analyzer {
    /// A recording without voltages: current magnitudes and status.
    fn block_currents_only(&mut self, block: &Block<'_>) {
        let ch = |k: ChannelKey| block.channels[k.index()];
        let status = ch(ChannelKey::Status);
        let keys = [ChannelKey::Ia, ChannelKey::Ib, ChannelKey::Ic];
        let cols: Vec<Option<&[f64]>> = keys.iter().map(|k| ch(*k)).collect();
        let scales: Vec<f64> = keys.iter().map(|k| self.scale[k.index()]).collect();
        for i in 0..block.len() {
            if let Some(st) = status {
                self.status_min = self.status_min.min(st[i]);
            }
            let Some(dft) = &mut self.dft else {
                // Status only: one point per sample group.
                if self.has_status {
                    if self.since_out == 0 {
                        self.series.t.push(block.time[i]);
                        self.series.push(Quantity::Status, self.status_min);
                        self.status_min = f64::INFINITY;
                    }
                    self.since_out = (self.since_out + 1) % self.decimation;
                }
                continue;
            };
            let mut x = [0.0; 3];
            for c in 0..3 {
                x[c] = cols[c].map_or(0.0, |v| v[i] * scales[c]);
            }
            if x.iter().any(|v| !v.is_finite()) && self.problem.is_none() {
                let c = x.iter().position(|v| !v.is_finite()).unwrap_or(0);
                self.problem = Some((format!("channel {}", keys[c].name()), block.time[i]));
            }
            dft.push(&x);
            if dft.ready() {
                if self.since_out == 0 {
                    let (ia, ib, ic) = (dft.phasor(0), dft.phasor(1), dft.phasor(2));
                    let [_, i1, i2] = sequence::sequences(ia, ib, ic);
                    let s = &mut self.series;
                    s.t.push(block.time[i]);
                    s.push(Quantity::I1, i1.norm());
                    s.push(Quantity::I2, i2.norm());
                    s.push(Quantity::IMax, ia.norm().max(ib.norm()).max(ic.norm()));
                    if self.has_status {
                        s.push(Quantity::Status, self.status_min);
                    }
                    self.status_min = f64::INFINITY;
                }
                self.since_out = (self.since_out + 1) % self.decimation;
            }
        }
    }
}

/// Opens, streams and analyses one recording.
pub fn analyse(
    source: Box<dyn crate::import::Source>,
    settings: &AnalysisSettings,
) -> Result<Analysed, InputError> {
    let mut analyzer = Analyzer::new(source.info(), settings)?;
    let info = source.stream(&mut analyzer)?;
    analyzer.finish(info)
}

#[cfg(test)]
mod tests {
    use super::decimated;

    #[test]
    fn decimation_in_one_step_is_the_count_push_by_push() {
        // Oracle: the push-by-push count (a point at each push that finds
        // the group counter at 0).
        for decimation in 1..=7 {
            for since_out in 0..decimation {
                for counted in 0..30 {
                    let mut s = since_out;
                    let mut last = None;
                    for j in 0..counted {
                        if s == 0 {
                            last = Some(j);
                        }
                        s = (s + 1) % decimation;
                    }
                    assert_eq!(
                        decimated(since_out, decimation, counted),
                        last,
                        "decimation {decimation}, since {since_out}, {counted} pushes"
                    );
                }
            }
        }
    }
}
