//! Writes a synthetic recording as COMTRADE (IEEE C37.111-1991/-1999/-2013):
//! `.cfg` + `.dat`, or a 2013 `.cff`, in any of the four data types.
//!
//! Integer types are scaled so the largest value of each channel uses most of
//! the range (a = max|v| / full scale, b = 0). From revision 1999 on, analog
//! channels are stored as secondary values (PS = `S`) with instrument
//! transformer ratios derived from the ratings ([`vt_ratio`], [`ct_ratio`]),
//! so that a reader must convert to primary values; 1991 files hold primary
//! values.

use super::{generate, SynthLayout, SynthSpec};
use crate::import::comtrade::cfg::{DataType, Revision};
use crate::model::{Connection, CurrentUnit, VoltageUnit};
use std::io::Write;
use std::path::Path;

/// The voltage transformer ratio (primary, secondary) for a unit rated
/// `rated_kv`: the rated line-to-line voltage in volts to 100 V (a usual
/// VT secondary rating; IEC 61869-3 lists 100 V and 110 V among the standard
/// values, from memory).
pub fn vt_ratio(rated_kv: f64) -> (f64, f64) {
    (rated_kv * 1e3, 100.0)
}

/// The current transformer ratio (primary, secondary): the smallest standard
/// primary current at or above the rated current, to 1 A. Standard primary
/// ratings 10, 12.5, 15, 20, 25, 30, 40, 50, 60, 75 A and their decimal
/// multiples (IEC 61869-2, from memory).
pub fn ct_ratio(rated_current_a: f64) -> (f64, f64) {
    const STEPS: [f64; 10] = [10.0, 12.5, 15.0, 20.0, 25.0, 30.0, 40.0, 50.0, 60.0, 75.0];
    let mut decade = 1.0;
    loop {
        for s in STEPS {
            if s * decade >= rated_current_a || decade > 1e6 {
                return (s * decade, 1.0);
            }
        }
        decade *= 10.0;
    }
}

struct Chan {
    name: &'static str,
    phase: &'static str,
    unit: String,
    /// primary, secondary, PS
    ratio: (f64, f64),
    secondary: bool,
    a: f64,
}

fn full_scale(dt: DataType) -> f64 {
    match dt {
        DataType::Binary => 32_000.0,
        DataType::Binary32 => 2.0e9,
        DataType::Ascii => 1.0e6,
        DataType::Float32 => 1.0,
    }
}

impl Chan {
    /// The value as stored: secondary where the channel says so.
    fn stored(&self, v: f64) -> f64 {
        if self.secondary {
            v * self.ratio.1 / self.ratio.0
        } else {
            v
        }
    }
}

/// Writes the COMTRADE files for `spec` at `out` (`.cfg`, with `.dat`
/// beside it, or `.cff`). Returns the number of samples.
pub fn write_comtrade(
    spec: &SynthSpec,
    out: &Path,
    dt: DataType,
    rev: Revision,
) -> std::io::Result<u64> {
    let cff = out
        .extension()
        .and_then(|e| e.to_str())
        .is_some_and(|e| e.eq_ignore_ascii_case("cff"));
    let bad = |m: String| std::io::Error::new(std::io::ErrorKind::InvalidInput, m);
    if cff && rev != Revision::R2013 {
        return Err(bad("a .cff single file needs revision 2013".into()));
    }
    if rev != Revision::R2013 && matches!(dt, DataType::Binary32 | DataType::Float32) {
        return Err(bad(format!("{} needs revision 2013", dt.name())));
    }
    if spec.duration_s > 4000.0 {
        return Err(bad(
            "COMTRADE timestamps in µs overflow 32 bits after 4294 s".into(),
        ));
    }
    let chans = scaled_channels(spec, dt, rev)?;
    let n = (spec.duration_s * spec.sample_rate_hz).round() as u64 + 1;
    let cfg = configuration(spec, &chans, dt, rev, n);
    let data = data_records(spec, &chans, dt)?;
    if let Some(dir) = out.parent().filter(|d| !d.as_os_str().is_empty()) {
        std::fs::create_dir_all(dir)?;
    }
    if cff {
        let mut f = std::io::BufWriter::new(std::fs::File::create(out)?);
        f.write_all(b"--- file type: CFG ---\r\n")?;
        f.write_all(cfg.as_bytes())?;
        f.write_all(b"--- file type: INF ---\r\n--- file type: HDR ---\r\n")?;
        match dt {
            DataType::Ascii => f.write_all(b"--- file type: DAT ASCII ---\r\n")?,
            _ => write!(
                f,
                "--- file type: DAT {}: {} ---\r\n",
                dt.name(),
                data.len()
            )?,
        }
        f.write_all(&data)?;
        f.flush()?;
    } else {
        std::fs::write(out, cfg.as_bytes())?;
        let upper = out
            .extension()
            .and_then(|e| e.to_str())
            .is_some_and(|e| e.chars().any(|c| c.is_ascii_uppercase()));
        std::fs::write(out.with_extension(if upper { "DAT" } else { "dat" }), &data)?;
    }
    Ok(n)
}

/// The analog channels of the layout, each with the multiplier `a` that
/// lets its largest stored value use most of the data type's range (a first
/// pass over the signals).
fn scaled_channels(spec: &SynthSpec, dt: DataType, rev: Revision) -> std::io::Result<Vec<Chan>> {
    let use_secondary = rev != Revision::R1991;
    let vunit = spec.voltage_unit.label().to_string();
    let cunit = spec.current_unit.label().to_string();
    let (pa, pb, pc) = match spec.connection {
        Connection::PhaseToNeutral => ("A", "B", "C"),
        Connection::PhaseToPhase => ("AB", "BC", "CA"),
    };
    let v_sec = use_secondary && spec.voltage_unit != VoltageUnit::Pu;
    let i_sec = use_secondary && spec.current_unit != CurrentUnit::Pu;
    let mk = |name, phase, unit: &str, ratio, secondary| Chan {
        name,
        phase,
        unit: unit.to_string(),
        ratio,
        secondary,
        a: 1.0,
    };
    let (vt, ct) = (
        vt_ratio(spec.ratings.rated_kv),
        ct_ratio(spec.ratings.current_base_a()),
    );
    let mut chans: Vec<Chan> = match spec.layout {
        SynthLayout::Waveform => vec![
            mk("VA", pa, &vunit, vt, v_sec),
            mk("VB", pb, &vunit, vt, v_sec),
            mk("VC", pc, &vunit, vt, v_sec),
            mk("IA", "A", &cunit, ct, i_sec),
            mk("IB", "B", &cunit, ct, i_sec),
            mk("IC", "C", &cunit, ct, i_sec),
        ],
        SynthLayout::Rms => vec![
            mk("V_POS", "", "pu", (1.0, 1.0), false),
            mk("P", "", "pu", (1.0, 1.0), false),
            mk("Q", "", "pu", (1.0, 1.0), false),
        ],
    };
    let n_analog = chans.len();
    let mut peak = vec![0.0f64; n_analog];
    generate(spec, |_, _, vals| {
        for k in 0..n_analog {
            peak[k] = peak[k].max(chans[k].stored(vals[k]).abs());
        }
        Ok(())
    })?;
    for (k, c) in chans.iter_mut().enumerate() {
        c.a = if dt == DataType::Float32 {
            1.0
        } else {
            peak[k].max(1e-12) / full_scale(dt)
        };
    }
    Ok(chans)
}

/// The configuration text (CR/LF line ends, clause 7 of C37.111-2013).
fn configuration(spec: &SynthSpec, chans: &[Chan], dt: DataType, rev: Revision, n: u64) -> String {
    let n_analog = chans.len();
    let nd = usize::from(spec.status_column);
    let mut cfg = String::new();
    let mut line = |s: String| {
        cfg.push_str(&s);
        cfg.push_str("\r\n");
    };
    // Commas would end the fields early.
    let (station, device) = (
        spec.station.replace(',', " "),
        spec.device.replace(',', " "),
    );
    line(match rev {
        Revision::R1991 => format!("{station},{device}"),
        r => format!("{station},{device},{}", r.year()),
    });
    line(format!("{},{}A,{}D", n_analog + nd, n_analog, nd));
    let (lo, hi) = match dt {
        DataType::Binary => ("-32767", "32767"),
        DataType::Binary32 => ("-2147483647", "2147483647"),
        DataType::Ascii => ("-99999999", "99999999"),
        DataType::Float32 => ("-3.4e38", "3.4e38"),
    };
    for (k, c) in chans.iter().enumerate() {
        let base = format!(
            "{},{},{},U1,{},{:e},0,0,{lo},{hi}",
            k + 1,
            c.name,
            c.phase,
            c.unit,
            c.a
        );
        line(match rev {
            Revision::R1991 => base,
            _ => format!(
                "{base},{},{},{}",
                c.ratio.0,
                c.ratio.1,
                if c.secondary { "S" } else { "P" }
            ),
        });
    }
    if nd == 1 {
        line(match rev {
            Revision::R1991 => format!("{},status,1", n_analog + 1),
            _ => format!("{},status,,U1,1", n_analog + 1),
        });
    }
    line(format!("{}", spec.frequency_hz));
    line("1".into());
    line(format!("{},{n}", spec.sample_rate_hz));
    let origin = chrono::NaiveDate::from_ymd_opt(2026, 3, 14)
        .and_then(|d| d.and_hms_opt(10, 0, 0))
        .unwrap_or_default();
    let trig = origin + chrono::Duration::microseconds((spec.fault_start_s * 1e6).round() as i64);
    // Dates are mm/dd/yyyy in 1991 files and dd/mm/yyyy from 1999 on.
    let date_fmt = if rev == Revision::R1991 {
        "%m/%d/%Y,%H:%M:%S%.6f"
    } else {
        "%d/%m/%Y,%H:%M:%S%.6f"
    };
    line(origin.format(date_fmt).to_string());
    line(trig.format(date_fmt).to_string());
    line(dt.name().to_string());
    if rev != Revision::R1991 {
        line("1".into());
    }
    if rev == Revision::R2013 {
        line("0,0".into());
        line("0,0".into());
    }
    cfg
}

/// The data records: sample number, time stamp in µs, the analog values
/// over `a`, and the status.
fn data_records(spec: &SynthSpec, chans: &[Chan], dt: DataType) -> std::io::Result<Vec<u8>> {
    let n_analog = chans.len();
    let nd = usize::from(spec.status_column);
    let mut data: Vec<u8> = Vec::new();
    let mut text = String::new();
    generate(spec, |m, t, vals| {
        let ts = (t * 1e6).round() as u32;
        match dt {
            DataType::Ascii => {
                use std::fmt::Write as _;
                text.clear();
                let _ = write!(text, "{},{}", m + 1, ts);
                for k in 0..n_analog {
                    let x = (chans[k].stored(vals[k]) / chans[k].a).round() as i64;
                    let _ = write!(text, ",{x}");
                }
                if nd == 1 {
                    let _ = write!(text, ",{}", vals[6] as u8);
                }
                text.push_str("\r\n");
                data.extend_from_slice(text.as_bytes());
            }
            _ => {
                data.extend_from_slice(&((m + 1) as u32).to_le_bytes());
                data.extend_from_slice(&ts.to_le_bytes());
                for k in 0..n_analog {
                    let v = chans[k].stored(vals[k]) / chans[k].a;
                    match dt {
                        DataType::Binary => data.extend_from_slice(
                            &(v.round().clamp(-32767.0, 32767.0) as i16).to_le_bytes(),
                        ),
                        DataType::Binary32 => {
                            data.extend_from_slice(&(v.round() as i32).to_le_bytes())
                        }
                        _ => data.extend_from_slice(&(v as f32).to_le_bytes()),
                    }
                }
                if nd == 1 {
                    data.extend_from_slice(&(vals[6] as u16).to_le_bytes());
                }
            }
        }
        Ok(())
    })?;
    Ok(data)
}
