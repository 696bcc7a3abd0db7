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

pub mod events;
pub mod phasor;
pub mod sequence;

use crate::error::InputError;
use crate::model::{
    Block, ChannelKey, Connection, FrameSink, Ratings, RecordingInfo, RecordingKind, N_KEYS,
};
use num_complex::Complex64;
use phasor::SlidingDft;
use serde::Serialize;
use std::path::Path;

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
}

pub const N_Q: usize = 18;

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
}

/// Streaming analysis of one recording.
pub struct Analyzer {
    kind: RecordingKind,
    connection: Connection,
    dft: Option<SlidingDft>,
    has_current: bool,
    has_status: bool,
    /// Per-unit factor per channel key.
    scale: [f64; N_KEYS],
    decimation: usize,
    since_out: usize,
    status_min: f64,
    u1: Option<Complex64>,
    u2: Option<Complex64>,
    series: Series,
    xbuf: [f64; 6],
}

/// Result of analysing one recording.
pub struct Analysed {
    pub info: RecordingInfo,
    pub series: Series,
    /// Samples in one DFT window (0 for RMS-level recordings).
    pub dft_window: usize,
    /// Input samples per output point.
    pub decimation: usize,
}

impl Analyzer {
    /// Prepares the analysis for a recording as its importer opened it.
    pub fn new(info: &RecordingInfo, settings: &AnalysisSettings) -> Result<Self, InputError> {
        let path = Path::new(&info.path);
        let unit_of = |k: ChannelKey| {
            info.channels
                .iter()
                .find(|c| c.key == k)
                .map(|c| c.canonical_unit)
        };
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
        let mut scale = [1.0; N_KEYS];
        if let Some(r) = &settings.ratings {
            let vbase = match info.connection {
                Connection::PhaseToNeutral => r.voltage_base_phase_v(),
                Connection::PhaseToPhase => r.voltage_base_line_v(),
            };
            for k in [ChannelKey::Va, ChannelKey::Vb, ChannelKey::Vc] {
                if unit_of(k) == Some("V") {
                    scale[k.index()] = 1.0 / vbase;
                }
            }
            for k in [ChannelKey::Ia, ChannelKey::Ib, ChannelKey::Ic] {
                if unit_of(k) == Some("A") {
                    scale[k.index()] = 1.0 / r.current_base_a();
                }
            }
        }
        let has_current =
            info.has(ChannelKey::Ia) || info.has(ChannelKey::P) || info.has(ChannelKey::Ip);
        let has_status = info.has(ChannelKey::Status);
        let mut present = vec![Quantity::V1];
        let (dft, decimation) = match info.kind {
            RecordingKind::Waveform => {
                let fs = info.sample_rate_hz;
                if !(fs > 0.0) || !fs.is_finite() {
                    return Err(InputError::new(path, "sample rate could not be determined")
                        .hint("the time column needs at least two increasing values"));
                }
                if fs < 8.0 * settings.frequency_hz {
                    return Err(InputError::new(
                        path,
                        format!(
                            "waveforms sampled at {fs:.1} Hz cannot give {} Hz phasors (at least 8 samples per cycle needed)",
                            settings.frequency_hz
                        ),
                    )
                    .hint("check the time column's unit (seconds) and --frequency"));
                }
                present.extend([
                    Quantity::V2,
                    Quantity::Va,
                    Quantity::Vb,
                    Quantity::Vc,
                    Quantity::Vab,
                    Quantity::Vbc,
                    Quantity::Vca,
                ]);
                if info.connection == Connection::PhaseToNeutral {
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
                let chans = if has_current { 6 } else { 3 };
                let dft = SlidingDft::new(fs, settings.frequency_hz, chans);
                let dec = ((fs / (settings.frequency_hz * settings.points_per_cycle.max(1) as f64))
                    .floor() as usize)
                    .max(1);
                (Some(dft), dec)
            }
            RecordingKind::RmsLevel => {
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
                (None, 1)
            }
        };
        if has_status {
            present.push(Quantity::Status);
        }
        Ok(Analyzer {
            kind: info.kind,
            connection: info.connection,
            dft,
            has_current,
            has_status,
            scale,
            decimation,
            since_out: 0,
            status_min: f64::INFINITY,
            u1: None,
            u2: None,
            series: Series::new(&present),
            xbuf: [0.0; 6],
        })
    }

    pub fn finish(self, info: RecordingInfo) -> Analysed {
        Analysed {
            info,
            dft_window: self.dft.as_ref().map(|d| d.window()).unwrap_or(0),
            decimation: self.decimation,
            series: self.series,
        }
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
                    [va.norm(), vb.norm(), vc.norm()],
                    [
                        (va - vb).norm() / r3,
                        (vb - vc).norm() / r3,
                        (vc - va).norm() / r3,
                    ],
                )
            }
            Connection::PhaseToPhase => {
                let (vab, vbc, vca) = (dft.phasor(0), dft.phasor(1), dft.phasor(2));
                let [_, v1ab, v2ab] = sequence::sequences(vab, vbc, vca);
                let (v1, v2) = sequence::from_line_sequences(v1ab, v2ab);
                let [a, b, c] = sequence::phases(Complex64::new(0.0, 0.0), v1, v2);
                (
                    v1,
                    v2,
                    None,
                    [a.norm(), b.norm(), c.norm()],
                    [vab.norm(), vbc.norm(), vca.norm()],
                )
            }
        };
        s.t.push(t);
        s.push(Quantity::V1, v1.norm());
        s.push(Quantity::V2, v2.norm());
        if let Some(v0) = v0 {
            s.push(Quantity::V0, v0.norm());
        }
        s.push(Quantity::Va, ph[0]);
        s.push(Quantity::Vb, ph[1]);
        s.push(Quantity::Vc, ph[2]);
        s.push(Quantity::Vab, pp[0]);
        s.push(Quantity::Vbc, pp[1]);
        s.push(Quantity::Vca, pp[2]);
        if v1.norm() >= MIN_REFERENCE_PU {
            self.u1 = Some(v1 / v1.norm());
        }
        if v2.norm() >= MIN_REFERENCE_PU {
            self.u2 = Some(v2 / v2.norm());
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
            s.push(Quantity::I1, i1.norm());
            s.push(Quantity::I2, i2.norm());
            s.push(Quantity::IMax, ia.norm().max(ib.norm()).max(ic.norm()));
        }
        if self.has_status {
            s.push(Quantity::Status, self.status_min);
        }
    }
}

impl FrameSink for Analyzer {
    fn block(&mut self, block: &Block<'_>) {
        let ch = |k: ChannelKey| block.channels[k.index()];
        let status = ch(ChannelKey::Status);
        match self.kind {
            RecordingKind::Waveform => {
                let keys = [
                    ChannelKey::Va,
                    ChannelKey::Vb,
                    ChannelKey::Vc,
                    ChannelKey::Ia,
                    ChannelKey::Ib,
                    ChannelKey::Ic,
                ];
                let nch = if self.has_current { 6 } else { 3 };
                let cols: Vec<&[f64]> = keys[..nch].iter().map(|k| ch(*k).unwrap_or(&[])).collect();
                let scales: Vec<f64> = keys[..nch].iter().map(|k| self.scale[k.index()]).collect();
                for i in 0..block.len() {
                    for c in 0..nch {
                        self.xbuf[c] = cols[c][i] * scales[c];
                    }
                    let xb = self.xbuf;
                    if let Some(d) = &mut self.dft {
                        d.push(&xb[..nch]);
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
            RecordingKind::RmsLevel => {
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
    }
}

/// Opens, streams and analyses one recording.
pub fn analyse(
    source: Box<dyn crate::import::Source>,
    settings: &AnalysisSettings,
) -> Result<Analysed, InputError> {
    let mut analyzer = Analyzer::new(source.info(), settings)?;
    let info = source.stream(&mut analyzer)?;
    Ok(analyzer.finish(info))
}
