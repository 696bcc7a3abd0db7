//! `holdfast inspect`: what a recording holds and which disturbances it shows.

use super::ExitStatus;
use crate::analysis::events::{
    detect_disturbances, detect_trip, Balance, DetectionSettings, Disturbance, TripInfo, TripMethod,
};
use crate::analysis::{AnalysisSettings, Analyzer, POINTS_PER_CYCLE};
use crate::cli::{InspectArgs, CAUTION};
use crate::error::UsageError;
use crate::import;
use crate::model::{Block, FrameSink, RecordingInfo, RecordingKind};
use anyhow::Context;
use serde::Serialize;
use std::io::Write;

/// A sink that only lets the importer count and validate samples.
struct Discard;

impl FrameSink for Discard {
    fn block(&mut self, _: &Block<'_>) {}
}

#[derive(Serialize, schemars::JsonSchema)]
struct AnalysisFacts {
    frequency_hz: f64,
    /// Samples in one DFT window (0 for RMS-level recordings).
    dft_window_samples: usize,
    /// Input samples per analysed point.
    decimation: usize,
    points: usize,
}

/// `holdfast inspect --json`, schema version 1 (`schemas/inspect-v1.schema.json`).
#[derive(Serialize, schemars::JsonSchema)]
#[schemars(title = "holdfast inspect report")]
pub struct InspectReport {
    /// 1 for this layout; later versions only add keys.
    schema_version: u32,
    recording: RecordingInfo,
    analysis: Option<AnalysisFacts>,
    detection: Option<DetectionSettings>,
    disturbances: Vec<Disturbance>,
    trip: Option<TripInfo>,
    /// Steps of the positive-sequence voltage angle (waveform recordings).
    phase_jumps: Vec<crate::analysis::angle::PhaseJump>,
    /// The frequency from the positive-sequence angle (waveform recordings).
    frequency: Option<crate::analysis::angle::FrequencySummary>,
    notes: Vec<String>,
    caution: &'static str,
}

pub fn run(args: &InspectArgs) -> anyhow::Result<ExitStatus> {
    let map = args.map.channel_map()?;
    let mut opts = args.map.import_options()?;
    // Inspect reads what can be read: channels that cannot all be mapped
    // are left out with a note instead of stopping.
    opts.partial = true;
    let ratings = args.ratings.ratings()?;
    if !(args.below_pu > 0.0 && args.below_pu < 1.0 && args.above_pu > 1.0) {
        return Err(
            UsageError("--below-pu must be in (0, 1) and --above-pu above 1".into()).into(),
        );
    }
    let source = import::open(&args.recording, &map, &opts)?;
    let mut notes = Vec::new();
    let frequency = nominal_frequency(args.ratings.frequency, source.info(), &mut notes);
    let needs_ratings = source
        .info()
        .channels
        .iter()
        .any(|c| c.canonical_unit == "V" || c.canonical_unit == "A");
    let report = match frequency {
        Some(f) if !(needs_ratings && ratings.is_none()) => {
            let settings = AnalysisSettings {
                ratings,
                frequency_hz: f,
                points_per_cycle: POINTS_PER_CYCLE,
                phase_order: map.phase_order.unwrap_or_default(),
            };
            analyse(source, &settings, args, notes)?
        }
        _ => {
            if frequency.is_none() {
                notes.push(
                    "no analysis: give --frequency (50 or 60) to compute phasors and find disturbances"
                        .to_string(),
                );
            }
            if needs_ratings && ratings.is_none() {
                notes.push(
                    "no analysis: channels are in V or A; give --rated-kv and --rated-mva for per unit"
                        .to_string(),
                );
            }
            InspectReport::unanalysed(source.stream(&mut Discard)?, notes)
        }
    };
    let stdout = std::io::stdout();
    let mut out = stdout.lock();
    if args.json {
        serde_json::to_writer_pretty(&mut out, &report).context("writing JSON to stdout")?;
        writeln!(out)?;
    } else {
        // Channel names, header fields and notes come from the file:
        // escaped before they reach the terminal.
        let mut buf = Vec::new();
        write_text(&mut buf, &report)?;
        out.write_all(crate::text::lines(&String::from_utf8_lossy(&buf)).as_bytes())?;
    }
    Ok(ExitStatus::Success)
}

/// The nominal frequency: the option, else the file's line frequency (with
/// a note either way when they differ or the file's is used).
fn nominal_frequency(
    option: Option<f64>,
    info: &RecordingInfo,
    notes: &mut Vec<String>,
) -> Option<f64> {
    match (option, info.line_frequency_hz) {
        (Some(f), Some(lf)) if (f - lf).abs() > 1e-6 => {
            notes.push(format!(
                "--frequency {f} Hz is used; the file states a line frequency of {lf} Hz"
            ));
            Some(f)
        }
        (Some(f), _) => Some(f),
        (None, Some(lf)) => {
            notes.push(format!(
                "nominal frequency {lf} Hz taken from the file's line frequency (give --frequency to choose another)"
            ));
            Some(lf)
        }
        (None, None) => None,
    }
}

impl InspectReport {
    /// The facts of a recording that was read but not analysed.
    fn unanalysed(recording: RecordingInfo, notes: Vec<String>) -> Self {
        InspectReport {
            schema_version: 1,
            recording,
            analysis: None,
            detection: None,
            disturbances: Vec::new(),
            phase_jumps: Vec::new(),
            frequency: None,
            trip: None,
            notes,
            caution: CAUTION,
        }
    }
}

/// Analyses the recording and finds its disturbances and trip. What the
/// analysis cannot do with this recording (a sampling rate too low for
/// phasors, A-C-B rotation, values that are not finite) is a finding of
/// inspect, not the end of it.
fn analyse(
    source: Box<dyn import::Source>,
    settings: &AnalysisSettings,
    args: &InspectArgs,
    mut notes: Vec<String>,
) -> anyhow::Result<InspectReport> {
    let mut analyzer = match Analyzer::new(source.info(), settings) {
        Ok(a) => a,
        Err(e) => {
            notes.push(format!("no analysis: {}", e.message));
            return Ok(InspectReport::unanalysed(
                source.stream(&mut Discard)?,
                notes,
            ));
        }
    };
    let info = source.stream(&mut analyzer)?;
    let analysed = match analyzer.finish(info.clone()) {
        Ok(a) => a,
        Err(e) => {
            notes.push(format!(
                "no analysis: {}{}",
                e.message,
                e.hint.map(|h| format!(" ({h})")).unwrap_or_default()
            ));
            return Ok(InspectReport::unanalysed(info, notes));
        }
    };
    let f = settings.frequency_hz;
    let mut det = DetectionSettings::defaults(f);
    det.applicable = args.applicable;
    det.below_pu = args.below_pu;
    det.above_pu = args.above_pu;
    let disturbances = match detect_disturbances(&analysed.series, &det) {
        Ok(d) => d,
        Err(why) => {
            notes.push(format!("no disturbance detection: {why}"));
            Vec::new()
        }
    };
    let trip = detect_trip(&analysed.series, &det);
    let angle = crate::analysis::angle::summarise(&analysed.series, f, &disturbances);
    Ok(InspectReport {
        schema_version: 1,
        analysis: Some(AnalysisFacts {
            frequency_hz: f,
            dft_window_samples: analysed.dft_window,
            decimation: analysed.decimation,
            points: analysed.series.len(),
        }),
        recording: analysed.info,
        detection: Some(det),
        disturbances,
        trip: Some(trip),
        phase_jumps: angle.as_ref().map(|a| a.0.clone()).unwrap_or_default(),
        frequency: angle.map(|a| a.1),
        notes,
        caution: CAUTION,
    })
}

/// The JSON Schema of `inspect --json`.
pub fn schema() -> String {
    let s = schemars::schema_for!(InspectReport);
    serde_json::to_string_pretty(&s).unwrap_or_default() + "\n"
}

fn fmt_s(x: f64) -> String {
    format!("{x:.4} s")
}

/// The text of `inspect`: the recording, its channels, the analysis with
/// each disturbance, the trip and the notes.
fn write_text(out: &mut dyn Write, r: &InspectReport) -> std::io::Result<()> {
    let i = &r.recording;
    let kind = match i.kind {
        RecordingKind::Waveform => "instantaneous waveforms",
        RecordingKind::RmsLevel => "RMS-level series",
    };
    writeln!(out, "recording   {}", i.path)?;
    writeln!(out, "format      {} ({kind})", i.format)?;
    for (k, v) in &i.header {
        writeln!(out, "  {k:<20}{v}")?;
    }
    writeln!(
        out,
        "samples     {} at {:.6} Hz, duration {:.6} s (first time value {})",
        i.samples, i.sample_rate_hz, i.duration_s, i.first_time
    )?;
    writeln!(
        out,
        "sampling    largest step deviation {:.3} % of the nominal step",
        i.max_step_deviation * 100.0
    )?;
    if i.kind == RecordingKind::Waveform {
        writeln!(out, "voltages    {}", i.connection.name())?;
    }
    writeln!(out, "channels")?;
    writeln!(
        out,
        "  {:<8}{:<24}{:>6}  {:<8}{:>14}",
        "key", "source", "index", "unit", "scale"
    )?;
    for c in &i.channels {
        writeln!(
            out,
            "  {:<8}{:<24}{:>6}  {:<8}{:>14}",
            c.key.name(),
            c.source,
            c.index,
            format!("{}→{}", c.unit, c.canonical_unit),
            format!("{:.6e}", c.scale)
        )?;
    }
    write_file_channels(out, i)?;
    if let (Some(a), Some(d)) = (&r.analysis, &r.detection) {
        write_analysis(out, i, a, d, r.disturbances.len())?;
        for (n, dist) in r.disturbances.iter().enumerate() {
            write_disturbance(out, n, dist)?;
        }
    }
    if let Some(t) = &r.trip {
        write_trip(out, t)?;
    }
    write_angle(out, r)?;
    for n in i.notes.iter().chain(&r.notes) {
        writeln!(out, "note        {n}")?;
    }
    writeln!(out)?;
    writeln!(out, "{CAUTION}")?;
    Ok(())
}

/// Phase jumps and the frequency, where the recording has an angle.
fn write_angle(out: &mut dyn Write, r: &InspectReport) -> std::io::Result<()> {
    let Some(f) = &r.frequency else {
        return Ok(());
    };
    writeln!(
        out,
        "phase jumps ({}° or more, positive-sequence angle against the pre-event reference): {}",
        crate::analysis::angle::DEFAULT_THRESHOLD_DEG,
        r.phase_jumps.len()
    )?;
    for (n, j) in r.phase_jumps.iter().enumerate() {
        writeln!(
            out,
            "  #{n} at {}: {:+.2}° (reference {:.3} Hz over {}..{}){}",
            fmt_s(j.at_s),
            j.jump_deg,
            j.reference_hz,
            fmt_s(j.reference_s[0]),
            fmt_s(j.reference_s[1]),
            if j.settled {
                ""
            } else {
                ", not settled: approximate"
            }
        )?;
    }
    match (f.min_hz, f.max_hz) {
        (Some(lo), Some(hi)) => writeln!(
            out,
            "frequency   {lo:.3}..{hi:.3} Hz over {} s windows ({:.0} % of the points; disturbances and jumps left out); largest |ROCOF| over {} s {}",
            f.averaging_s,
            f.estimated_share * 100.0,
            f.rocof_window_s,
            f.max_abs_rocof_hz_per_s
                .map(|x| format!("{x:.3} Hz/s"))
                .unwrap_or_else(|| "not estimated".into())
        ),
        _ => writeln!(
            out,
            "frequency   not estimated (no {} s stretch free of disturbances and jumps)",
            f.averaging_s
        ),
    }
}

/// The channels of the file as it states them, with what each is mapped to.
fn write_file_channels(out: &mut dyn Write, i: &RecordingInfo) -> std::io::Result<()> {
    if !i.source_channels.is_empty() {
        writeln!(out, "file channels ({})", i.source_channels.len())?;
        writeln!(
            out,
            "  {:<8}{:>6}  {:<28}{:<7}{:<9}{:<3}{:>22}  mapped",
            "kind", "no.", "name", "phase", "unit", "PS", "primary/secondary"
        )?;
        for c in &i.source_channels {
            let ratio = match (c.primary, c.secondary) {
                (Some(p), Some(s)) => format!("{p}/{s}"),
                _ => String::new(),
            };
            writeln!(
                out,
                "  {:<8}{:>6}  {:<28}{:<7}{:<9}{:<3}{:>22}  {}",
                c.kind,
                c.number,
                c.name,
                c.phase,
                c.unit,
                c.ps,
                ratio,
                c.mapped_to.map(|k| k.name()).unwrap_or("")
            )?;
        }
    } else if !i.unmapped.is_empty() {
        writeln!(out, "unmapped    {}", i.unmapped.join(", "))?;
    }
    Ok(())
}

/// How the recording was analysed and the disturbance count.
fn write_analysis(
    out: &mut dyn Write,
    i: &RecordingInfo,
    a: &AnalysisFacts,
    d: &DetectionSettings,
    count: usize,
) -> std::io::Result<()> {
    if a.dft_window_samples > 0 {
        writeln!(
            out,
            "analysis    one-cycle DFT at {} Hz over {} samples, one point every {} samples ({} points)",
            a.frequency_hz, a.dft_window_samples, a.decimation, a.points
        )?;
    } else if i.kind == RecordingKind::RmsLevel {
        writeln!(
            out,
            "analysis    RMS-level values used as given ({} points)",
            a.points
        )?;
    } else {
        writeln!(
            out,
            "analysis    none: no voltage or current channel is mapped ({} points)",
            a.points
        )?;
    }
    writeln!(
        out,
        "disturbances ({} voltage outside {:.3}..{:.3} pu): {}",
        d.applicable.name().replace('_', " "),
        d.below_pu,
        d.above_pu,
        if count == 0 {
            "none".to_string()
        } else {
            count.to_string()
        }
    )?;
    Ok(())
}

/// One disturbance: its times, extreme, balance, residual, waveform
/// instants and pre-fault references.
fn write_disturbance(out: &mut dyn Write, n: usize, dist: &Disturbance) -> std::io::Result<()> {
    let end = match dist.end_s {
        Some(e) => format!(
            "end {}{}, duration {}",
            fmt_s(e),
            if dist.end_confirmed {
                ""
            } else {
                " (not confirmed before the recording ends)"
            },
            fmt_s(e - dist.start_s)
        ),
        None => "no end before the recording ends".to_string(),
    };
    writeln!(
        out,
        "  #{n} {}: start {}, {end}",
        match dist.kind {
            crate::analysis::events::DisturbanceKind::Undervoltage => "undervoltage",
            crate::analysis::events::DisturbanceKind::Overvoltage => "overvoltage",
        },
        fmt_s(dist.start_s)
    )?;
    let balance = match dist.balance {
        Balance::Symmetrical => "symmetrical",
        Balance::Unbalanced => "unbalanced",
        Balance::Undetermined => "balance undetermined",
    };
    writeln!(
        out,
        "     extreme {:.4} pu at {}; {balance}{}",
        dist.extreme_pu,
        fmt_s(dist.extreme_at_s),
        dist.unbalance_ratio
            .map(|u| format!(" (|V2|/|V1| = {u:.4})"))
            .unwrap_or_default()
    )?;
    if let Some(res) = &dist.residual {
        let mut s = format!("     residual V1 {:.4} pu", res.v1_pu);
        if let Some(p) = res.phase_pu {
            s += &format!(", phase a/b/c {:.4}/{:.4}/{:.4} pu", p[0], p[1], p[2]);
        }
        if let Some(l) = res.line_pu {
            s += &format!(", ab/bc/ca {:.4}/{:.4}/{:.4} pu", l[0], l[1], l[2]);
        }
        writeln!(out, "{s}")?;
    }
    match (dist.inception_s, dist.clearance_s) {
        (Some(a), Some(b)) => writeln!(
            out,
            "     waveform inception {}, clearance {}: fault {}",
            fmt_s(a),
            fmt_s(b),
            fmt_s(b - a)
        )?,
        (Some(a), None) => writeln!(out, "     waveform inception {}", fmt_s(a))?,
        _ => {}
    }
    if let Some(k) = dist.prefault_from {
        writeln!(
            out,
            "     references inherited from disturbance #{k} (no clean pre-fault window in between)"
        )?;
    }
    match (&dist.prefault, &dist.prefault_problem) {
        (Some(p), _) => {
            let mut s = format!(
                "     pre-fault {}..{}: V {:.4} pu",
                fmt_s(p.from_s),
                fmt_s(p.to_s),
                p.v_pu
            );
            for (name, v) in [
                ("P", p.p_pu),
                ("Q", p.q_pu),
                ("Ip1", p.ip_pu),
                ("Iq1", p.iq_pu),
            ] {
                if let Some(v) = v {
                    s += &format!(", {name} {v:.4} pu");
                }
            }
            writeln!(out, "{s}")?;
        }
        (None, Some(why)) => writeln!(out, "     pre-fault: none ({why})")?,
        (None, None) => {}
    }
    Ok(())
}

/// The trip, cessations and the trip note.
fn write_trip(out: &mut dyn Write, t: &TripInfo) -> std::io::Result<()> {
    let how = match t.method {
        TripMethod::Status => "from the status channel",
        TripMethod::Current => "from the current",
        TripMethod::None => "cannot be determined",
    };
    match (t.tripped, t.time_s) {
        (true, Some(ts)) => {
            write!(out, "trip        at {} ({how})", fmt_s(ts))?;
            if let Some(rc) = t.reconnected_s {
                write!(out, ", status closed again at {}", fmt_s(rc))?;
            }
            writeln!(out)?;
        }
        _ => writeln!(out, "trip        none ({how})")?,
    }
    for (a, b) in &t.cessations {
        writeln!(
            out,
            "cessation   current below threshold {}..{}",
            fmt_s(*a),
            fmt_s(*b)
        )?;
    }
    if let Some(n) = &t.note {
        writeln!(out, "            {n}")?;
    }
    Ok(())
}
