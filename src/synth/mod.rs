//! Synthetic recordings of a specified voltage dip and unit response.
//!
//! The grid side is a three-phase source whose phase voltages step to the
//! given residual magnitudes (optionally with a phase jump) for the fault
//! duration, then to the recovery voltage. The unit side is a current source
//! in the positive-sequence frame of the voltage:
//!
//! * reactive current `iq` follows its target `iq0 + k·(|ΔV| − db)` (dead band
//!   `offset`) or `iq0 + k·|ΔV|` (`full`), signed so that a sag asks for
//!   capacitive current, limited so that `|I1| ≤ limit`, through a first-order
//!   lag with time constant `τ` (exact discretisation
//!   `iq += (target − iq)·(1 − e^(−Δt/τ))`);
//! * active current keeps its pre-fault value unless the current limit
//!   needs room, and after the fault ramps back at a set rate;
//! * optional negative-sequence reactive current `iq2 = −k2·(|V2| − db)`
//!   (inductive; same dead-band law as the positive sequence);
//! * an optional trip (current and status to zero) or momentary blocking.
//!
//! The controller sees the true fundamental voltage, so analysing the file
//! shows the response through the analysis' one-cycle window: that is what a
//! measurement of a real unit shows too.

pub mod comtrade;

use crate::analysis::sequence;
use crate::model::{Connection, CurrentUnit, Ratings, VoltageUnit};
use num_complex::Complex64;
use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Normal};
use serde::Serialize;
use std::f64::consts::{PI, SQRT_2};
use std::io::Write;

#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, clap::ValueEnum)]
#[serde(rename_all = "snake_case")]
pub enum DeadBandMode {
    /// Required current `k·(|ΔV| − db)`.
    Offset,
    /// Required current `k·|ΔV|` once outside the dead band.
    Full,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, clap::ValueEnum)]
pub enum SynthLayout {
    /// Instantaneous three-phase voltages and currents.
    Waveform,
    /// RMS-level series: `v_pos`, `p`, `q` in per unit.
    Rms,
}

#[derive(Clone, Copy, Debug, PartialEq, Eq, clap::ValueEnum)]
pub enum TimeFormat {
    Seconds,
    /// ISO-8601 timestamps.
    Iso,
}

/// The field delimiter of a written CSV file.
#[derive(Clone, Copy, Debug, PartialEq, Eq, clap::ValueEnum)]
pub enum Delimiter {
    #[value(alias = ",")]
    Comma,
    #[value(alias = ";")]
    Semicolon,
    Tab,
}

impl Delimiter {
    pub fn byte(self) -> u8 {
        match self {
            Delimiter::Comma => b',',
            Delimiter::Semicolon => b';',
            Delimiter::Tab => b'\t',
        }
    }
}

/// Neutral names for the COMTRADE header (no real site or product).
pub const DEFAULT_STATION: &str = "SYNTHETIC STATION";
pub const DEFAULT_DEVICE: &str = "HOLDFAST SYNTH";

/// Everything that defines a synthetic recording.
#[derive(Clone, Debug, PartialEq)]
pub struct SynthSpec {
    pub ratings: Ratings,
    /// Nominal frequency, Hz.
    pub frequency_hz: f64,
    pub sample_rate_hz: f64,
    pub duration_s: f64,
    pub fault_start_s: f64,
    pub fault_duration_s: f64,
    /// Residual phase-to-neutral magnitude per phase during the fault, pu.
    pub residual_pu: [f64; 3],
    pub phase_jump_deg: f64,
    /// Voltage after the fault, pu.
    pub recovery_pu: f64,
    /// Voltage before the fault, pu (the controller's reference).
    pub prefault_pu: f64,
    pub p0_pu: f64,
    pub q0_pu: f64,
    pub k_gain: f64,
    pub dead_band_pu: f64,
    pub dead_band_mode: DeadBandMode,
    pub iq_tau_s: f64,
    pub current_limit_pu: f64,
    pub k2_gain: f64,
    /// Active current recovery rate after the fault, pu/s (infinite: a step).
    pub p_ramp_pu_per_s: f64,
    pub trip_at_s: Option<f64>,
    pub block: Option<(f64, f64)>,
    /// (harmonic order, amplitude in pu of the fundamental base).
    pub harmonics: Vec<(u32, f64)>,
    /// Standard deviation of Gaussian noise, pu.
    pub noise_pu: f64,
    pub seed: u64,
    pub layout: SynthLayout,
    pub voltage_unit: VoltageUnit,
    pub current_unit: CurrentUnit,
    pub connection: Connection,
    pub delimiter: u8,
    pub decimal_comma: bool,
    pub time_format: TimeFormat,
    pub status_column: bool,
    /// COMTRADE station name and recording device id.
    pub station: String,
    pub device: String,
    /// Voltage profile `(from time s, pu)` instead of one fault; the last
    /// step is the recovery. Empty: the fault of `fault_start_s`,
    /// `fault_duration_s` and `residual_pu`.
    pub steps: Vec<(f64, f64)>,
    /// Grid frequency `(time s, Hz)`, linear between the points; empty:
    /// the nominal frequency throughout.
    pub frequency_profile: Vec<(f64, f64)>,
    /// `Acb`: the file's b and c channels hold phases c and b.
    pub phase_order: crate::model::PhaseOrder,
}

impl SynthSpec {
    /// A balanced 50 Hz dip with a compliant unit; change what you need.
    pub fn example() -> Self {
        SynthSpec {
            ratings: Ratings {
                rated_kv: 0.69,
                rated_mva: 4.2,
            },
            frequency_hz: 50.0,
            sample_rate_hz: 10_000.0,
            duration_s: 3.0,
            fault_start_s: 1.0,
            fault_duration_s: 0.5,
            residual_pu: [0.2; 3],
            phase_jump_deg: 0.0,
            recovery_pu: 1.0,
            prefault_pu: 1.0,
            p0_pu: 0.8,
            q0_pu: 0.0,
            k_gain: 2.0,
            dead_band_pu: 0.1,
            dead_band_mode: DeadBandMode::Offset,
            iq_tau_s: 0.01,
            current_limit_pu: 1.1,
            k2_gain: 0.0,
            p_ramp_pu_per_s: 5.0,
            trip_at_s: None,
            block: None,
            harmonics: Vec::new(),
            noise_pu: 0.0,
            seed: 1,
            layout: SynthLayout::Waveform,
            voltage_unit: VoltageUnit::V,
            current_unit: CurrentUnit::A,
            connection: Connection::PhaseToNeutral,
            delimiter: b',',
            decimal_comma: false,
            time_format: TimeFormat::Seconds,
            status_column: false,
            station: DEFAULT_STATION.into(),
            device: DEFAULT_DEVICE.into(),
            steps: Vec::new(),
            frequency_profile: Vec::new(),
            phase_order: crate::model::PhaseOrder::Abc,
        }
    }

    /// Checks the spec for values that cannot make a recording.
    pub fn validate(&self) -> Result<(), String> {
        let pos = |name: &str, v: f64| {
            if v.is_finite() && v > 0.0 {
                Ok(())
            } else {
                Err(format!("{name} must be a positive number, got {v}"))
            }
        };
        pos("--sample-rate", self.sample_rate_hz)?;
        pos("--duration", self.duration_s)?;
        pos("--frequency", self.frequency_hz)?;
        pos("--rated-kv", self.ratings.rated_kv)?;
        pos("--rated-mva", self.ratings.rated_mva)?;
        pos("--current-limit", self.current_limit_pu)?;
        if self.sample_rate_hz < 8.0 * self.frequency_hz && self.layout == SynthLayout::Waveform {
            return Err("--sample-rate must be at least 8 samples per cycle for waveforms".into());
        }
        if self
            .residual_pu
            .iter()
            .any(|r| !(r.is_finite() && *r >= 0.0))
        {
            return Err("residual voltages must be >= 0 pu".into());
        }
        if !(self.fault_duration_s >= 0.0) || !(self.fault_start_s >= 0.0) {
            return Err("--fault-start and --fault-duration must be >= 0".into());
        }
        if !(self.iq_tau_s >= 0.0) || !(self.noise_pu >= 0.0) || !(self.p_ramp_pu_per_s > 0.0) {
            return Err("--iq-tau, --noise must be >= 0 and --p-ramp > 0".into());
        }
        if !(self.prefault_pu > 0.5 && self.prefault_pu < 1.5) {
            return Err("--prefault must be between 0.5 and 1.5 pu".into());
        }
        if self.p0_pu.hypot(self.q0_pu) / self.prefault_pu > self.current_limit_pu {
            return Err("pre-fault P and Q exceed the current limit".into());
        }
        if self.decimal_comma && self.delimiter == b',' {
            return Err("a decimal comma needs ';' or tab as delimiter".into());
        }
        if self.duration_s * self.sample_rate_hz > 2e9 {
            return Err("more than 2e9 samples: shorten --duration or lower --sample-rate".into());
        }
        Ok(())
    }
}

/// The grid voltage at one instant (pu of the phase base) and where it is
/// in the fault.
struct Grid {
    mags: [f64; 3],
    ang: f64,
    /// Inside the unit's fault response (a step back to normal between
    /// faults of a step profile is not).
    in_fault: bool,
    /// After the fault began and outside the fault response: active power
    /// ramps back.
    after: bool,
}

/// The voltage profile of the recording: one fault with per-phase
/// residuals and a phase jump, or a step profile.
struct Profile<'a> {
    spec: &'a SynthSpec,
    fault_start: f64,
    fault_end: f64,
    recovery: f64,
    jump: f64,
}

impl<'a> Profile<'a> {
    fn new(spec: &'a SynthSpec) -> Self {
        let (fault_start, fault_end) = match (spec.steps.first(), spec.steps.last()) {
            (Some(a), Some(b)) if spec.steps.len() > 1 => (a.0, b.0),
            _ => (
                spec.fault_start_s,
                spec.fault_start_s + spec.fault_duration_s,
            ),
        };
        Profile {
            spec,
            fault_start,
            fault_end,
            recovery: spec.steps.last().map_or(spec.recovery_pu, |s| s.1),
            jump: spec.phase_jump_deg.to_radians(),
        }
    }

    /// The fault's voltage at t: per phase residuals, or the step profile.
    fn fault_level(&self, t: f64) -> [f64; 3] {
        let spec = self.spec;
        match spec.steps.iter().rev().find(|s| s.0 <= t) {
            Some(s) if !spec.steps.is_empty() => [s.1; 3],
            _ => spec.residual_pu,
        }
    }

    fn at(&self, t: f64) -> Grid {
        let spec = self.spec;
        let in_window = t >= self.fault_start && t < self.fault_end;
        let (mags, ang) = if in_window {
            (self.fault_level(t), self.jump)
        } else if t >= self.fault_end {
            ([self.recovery; 3], 0.0)
        } else {
            ([spec.prefault_pu; 3], 0.0)
        };
        let in_fault = in_window
            && (spec.steps.is_empty() || mags.iter().any(|m| (m - spec.prefault_pu).abs() > 0.05));
        Grid {
            mags,
            ang,
            in_fault,
            after: t >= self.fault_start && !in_fault,
        }
    }
}

/// Unit controller state.
struct Unit {
    ip: f64,
    iq: f64,
    iq2: f64,
    /// Pre-fault active and reactive current, pu.
    ip0: f64,
    iq0: f64,
    /// First-order lag factor per sample.
    alpha: f64,
}

impl Unit {
    /// One sample of the controller: reactive current towards `k·ΔV`
    /// (limited), active current within the remaining room, negative-sequence
    /// current towards `−k2·|V2|`. Returns the injected `(ip, iq, iq2)`:
    /// zero while tripped or blocked.
    fn step(&mut self, spec: &SynthSpec, v1: f64, v2m: f64, g: &Grid, off: bool) -> [f64; 3] {
        let dt = 1.0 / spec.sample_rate_hz;
        let dv = v1 - spec.prefault_pu;
        let extra = if dv.abs() > spec.dead_band_pu {
            let mag = match spec.dead_band_mode {
                DeadBandMode::Offset => spec.k_gain * (dv.abs() - spec.dead_band_pu),
                DeadBandMode::Full => spec.k_gain * dv.abs(),
            };
            -mag * dv.signum()
        } else {
            0.0
        };
        let lim = spec.current_limit_pu;
        let iq_target = (self.iq0 + extra).clamp(-lim, lim);
        self.iq += (iq_target - self.iq) * self.alpha;
        if g.in_fault {
            let room = (lim * lim - self.iq * self.iq).max(0.0).sqrt();
            self.ip = self.ip0.min(room);
        } else if g.after {
            let room = (lim * lim - self.iq * self.iq).max(0.0).sqrt();
            self.ip = (self.ip + spec.p_ramp_pu_per_s * dt)
                .min(self.ip0)
                .min(room);
        }
        let iq2_target = if v2m > spec.dead_band_pu {
            match spec.dead_band_mode {
                DeadBandMode::Offset => -spec.k2_gain * (v2m - spec.dead_band_pu),
                DeadBandMode::Full => -spec.k2_gain * v2m,
            }
        } else {
            0.0
        };
        self.iq2 += (iq2_target - self.iq2) * self.alpha;
        if off {
            [0.0; 3]
        } else {
            [self.ip, self.iq, self.iq2]
        }
    }
}

/// Turns phasors into the file's values: instantaneous waveforms with
/// harmonics and noise, or RMS-level values, in the file's units.
struct Output<'a> {
    spec: &'a SynthSpec,
    rng: ChaCha8Rng,
    normal: Normal<f64>,
    /// Angular frequency, rad/s.
    w: f64,
    vfactor: f64,
    ifactor: f64,
}

impl Output<'_> {
    /// Harmonics and noise of phase `k` at `t`.
    fn harm(&mut self, k: usize, t: f64) -> f64 {
        let spec = self.spec;
        let mut h = 0.0;
        for (order, amp) in &spec.harmonics {
            let o = *order as f64;
            h += SQRT_2 * amp * (o * (self.w * t - 2.0 * PI * k as f64 / 3.0)).cos();
        }
        if spec.noise_pu > 0.0 {
            h += spec.noise_pu * self.normal.sample(&mut self.rng);
        }
        h
    }

    fn waveform(
        &mut self,
        vals: &mut SampleValues,
        t: f64,
        phase_v: [Complex64; 3],
        phase_i: [Complex64; 3],
        tripped: bool,
    ) {
        let spec = self.spec;
        let acb = spec.phase_order == crate::model::PhaseOrder::Acb;
        let rot = Complex64::from_polar(1.0, phase_at(&spec.frequency_profile, self.w, t));
        let inst = |x: Complex64| SQRT_2 * (x * rot).re;
        let mut pv = [0.0; 3];
        for k in 0..3 {
            pv[k] = inst(phase_v[k]) + self.harm(k, t);
        }
        if acb {
            // The file's b and c columns hold phases c and b.
            pv.swap(1, 2);
        }
        let vout = match spec.connection {
            Connection::PhaseToNeutral => pv,
            Connection::PhaseToPhase => [pv[0] - pv[1], pv[1] - pv[2], pv[2] - pv[0]],
        };
        for k in 0..3 {
            vals[k] = vout[k] * self.vfactor;
        }
        for k in 0..3 {
            let ival = if tripped {
                0.0
            } else {
                inst(phase_i[k]) + self.harm(k, t)
            };
            vals[3 + k] = ival * self.ifactor;
        }
        if acb {
            vals.swap(4, 5);
        }
    }

    fn rms(&mut self, vals: &mut SampleValues, v1: Complex64, i1: Complex64) {
        let spec = self.spec;
        let mut noise = || {
            if spec.noise_pu > 0.0 {
                spec.noise_pu * self.normal.sample(&mut self.rng)
            } else {
                0.0
            }
        };
        let s = v1 * i1.conj();
        vals[0] = v1.norm() + noise();
        vals[1] = s.re + noise();
        vals[2] = s.im + noise();
    }
}

/// The phase `2π·∫f dt` at `t` of a piecewise-linear frequency profile
/// (`w·t` for an empty one; `w` the nominal angular frequency).
fn phase_at(profile: &[(f64, f64)], w: f64, t: f64) -> f64 {
    let (Some(first), Some(last)) = (profile.first(), profile.last()) else {
        return w * t;
    };
    let tau = std::f64::consts::TAU;
    // Cycles up to t: the first value until the first point, the area of
    // each trapezoid, the last value after the last point.
    let mut cycles = first.1 * t.min(first.0);
    for w2 in profile.windows(2) {
        let ((a, fa), (b, fb)) = (w2[0], w2[1]);
        if t <= a {
            break;
        }
        let e = t.min(b);
        let fe = fa + (fb - fa) * (e - a) / (b - a);
        cycles += 0.5 * (fa + fe) * (e - a);
    }
    if t > last.0 {
        cycles += last.1 * (t - last.0);
    }
    tau * cycles
}

/// Values of one sample in the file's units: waveform layout
/// `[va, vb, vc, ia, ib, ic, status]`, RMS layout `[v_pos, p, q, 0, 0, 0, status]`.
pub type SampleValues = [f64; 7];

/// Generates every sample of the recording, in order, into `emit(index, t, values)`.
pub fn generate(
    spec: &SynthSpec,
    mut emit: impl FnMut(u64, f64, &SampleValues) -> std::io::Result<()>,
) -> std::io::Result<u64> {
    let r = &spec.ratings;
    let dt = 1.0 / spec.sample_rate_hz;
    let n = (spec.duration_s * spec.sample_rate_hz).round() as u64 + 1;
    let a = sequence::a();
    let a2 = a * a;
    let profile = Profile::new(spec);
    let ip0 = spec.p0_pu / spec.prefault_pu;
    let iq0 = spec.q0_pu / spec.prefault_pu;
    let mut unit = Unit {
        ip: ip0,
        iq: iq0,
        iq2: 0.0,
        ip0,
        iq0,
        alpha: if spec.iq_tau_s > 0.0 {
            1.0 - (-dt / spec.iq_tau_s).exp()
        } else {
            1.0
        },
    };
    let mut out = Output {
        spec,
        rng: ChaCha8Rng::seed_from_u64(spec.seed),
        normal: Normal::new(0.0, 1.0).map_err(std::io::Error::other)?,
        w: 2.0 * PI * spec.frequency_hz,
        vfactor: match (spec.voltage_unit, spec.connection) {
            (VoltageUnit::Pu, Connection::PhaseToNeutral) => 1.0,
            (VoltageUnit::Pu, Connection::PhaseToPhase) => 1.0 / 3f64.sqrt(),
            (u, _) => r.voltage_base_phase_v() / u.factor(),
        },
        ifactor: match spec.current_unit {
            CurrentUnit::Pu => 1.0,
            u => r.current_base_a() / u.factor(),
        },
    };
    let mut vals: SampleValues = [0.0; 7];
    for m in 0..n {
        let t = m as f64 * dt;
        let g = profile.at(t);
        let va = Complex64::from_polar(g.mags[0], g.ang);
        let vb = Complex64::from_polar(g.mags[1], g.ang - 2.0 * PI / 3.0);
        let vc = Complex64::from_polar(g.mags[2], g.ang + 2.0 * PI / 3.0);
        let [_, v1, v2] = sequence::sequences(va, vb, vc);
        let tripped = spec.trip_at_s.is_some_and(|tt| t >= tt);
        let blocked = spec.block.is_some_and(|(b0, b1)| t >= b0 && t < b1);
        let [ip, iq, iq2n] = unit.step(spec, v1.norm(), v2.norm(), &g, tripped || blocked);
        let u1 = if v1.norm() > 1e-9 {
            v1 / v1.norm()
        } else {
            Complex64::from_polar(1.0, g.ang)
        };
        let u2 = if v2.norm() > 1e-9 {
            v2 / v2.norm()
        } else {
            Complex64::new(0.0, 0.0)
        };
        let i1 = Complex64::new(ip, -iq) * u1;
        let i2 = Complex64::new(0.0, -iq2n) * u2;
        match spec.layout {
            SynthLayout::Waveform => {
                let phase_i = [i1 + i2, a2 * i1 + a * i2, a * i1 + a2 * i2];
                out.waveform(&mut vals, t, [va, vb, vc], phase_i, tripped);
            }
            SynthLayout::Rms => out.rms(&mut vals, v1, i1),
        }
        vals[6] = if tripped { 0.0 } else { 1.0 };
        emit(m, t, &vals)?;
    }
    Ok(n)
}

/// Writes the recording as CSV to `out`.
pub fn write_csv(spec: &SynthSpec, out: &mut dyn Write) -> std::io::Result<u64> {
    let d = spec.delimiter as char;
    let decimals_t = ((spec.sample_rate_hz.log10().ceil() as usize) + 3).min(12);
    let origin = chrono::NaiveDate::from_ymd_opt(2026, 3, 14)
        .and_then(|d| d.and_hms_opt(10, 0, 0))
        .unwrap_or_default();
    let mut header: Vec<&str> = vec!["t"];
    let ncols = match spec.layout {
        SynthLayout::Waveform => {
            header.extend(["va", "vb", "vc", "ia", "ib", "ic"]);
            6
        }
        SynthLayout::Rms => {
            header.extend(["v_pos", "p", "q"]);
            3
        }
    };
    if spec.status_column {
        header.push("status");
    }
    writeln!(out, "{}", header.join(&d.to_string()))?;
    let vdec = if spec.voltage_unit == VoltageUnit::Pu {
        6
    } else {
        4
    };
    let mut line = String::with_capacity(128);
    generate(spec, |_, t, vals| {
        use std::fmt::Write as _;
        line.clear();
        match spec.time_format {
            TimeFormat::Seconds => {
                let _ = write!(line, "{:.*}", decimals_t, t);
            }
            TimeFormat::Iso => {
                let ts = origin + chrono::Duration::nanoseconds((t * 1e9).round() as i64);
                let _ = write!(line, "{}", ts.format("%Y-%m-%dT%H:%M:%S%.6f"));
            }
        }
        for (k, v) in vals[..ncols].iter().enumerate() {
            line.push(d);
            let dec = match (spec.layout, k) {
                (SynthLayout::Waveform, 0..=2) => vdec,
                (SynthLayout::Waveform, _) => 5,
                (SynthLayout::Rms, _) => 6,
            };
            let _ = write!(line, "{:.*}", dec, v);
        }
        if spec.status_column {
            let _ = write!(line, "{d}{}", vals[6]);
        }
        if spec.decimal_comma {
            // The delimiter is ';' or tab here, so every '.' of a number is a
            // decimal point; ISO timestamps keep theirs.
            let from = match spec.time_format {
                TimeFormat::Seconds => 0,
                TimeFormat::Iso => line.find(d).unwrap_or(line.len()),
            };
            let tail = line[from..].replace('.', ",");
            line.truncate(from);
            line.push_str(&tail);
        }
        line.push('\n');
        out.write_all(line.as_bytes())
    })
}
