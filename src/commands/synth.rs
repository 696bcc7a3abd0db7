//! `holdfast synth`: write a synthetic recording of a specified dip.

use super::ExitStatus;
use crate::cli::SynthArgs;
use crate::error::UsageError;
use crate::model::Ratings;
use crate::synth::comtrade::write_comtrade;
use crate::synth::{write_csv, SynthLayout, SynthSpec, TimeFormat};
use anyhow::Context;
use std::io::{BufWriter, Write};

fn list_f64(flag: &str, s: &str, n: usize) -> Result<Vec<f64>, UsageError> {
    let v: Result<Vec<f64>, _> = s.split(',').map(|x| x.trim().parse::<f64>()).collect();
    match v {
        Ok(v) if v.len() == n && v.iter().all(|x| x.is_finite()) => Ok(v),
        _ => Err(UsageError(format!(
            "{flag} '{s}': expected {n} comma-separated numbers"
        ))),
    }
}

/// Turns the command-line arguments into a validated spec.
pub fn spec_from_args(a: &SynthArgs) -> Result<SynthSpec, UsageError> {
    let residual_pu = match &a.residuals {
        Some(s) => {
            let v = list_f64("--residuals", s, 3)?;
            [v[0], v[1], v[2]]
        }
        None => [a.residual; 3],
    };
    let block = match &a.block {
        Some(s) => {
            let v = list_f64("--block", s, 2)?;
            if v[1] <= v[0] {
                return Err(UsageError(format!("--block '{s}': FROM must be before TO")));
            }
            Some((v[0], v[1]))
        }
        None => None,
    };
    let steps = match &a.steps {
        Some(list) => {
            let steps = time_list(list, "--steps", "PU", "1.0:0.2")?;
            if steps.len() < 2 {
                return Err(UsageError(format!(
                    "--steps '{list}': give at least a fault step and the recovery step"
                )));
            }
            steps
        }
        None => Vec::new(),
    };
    let frequency_profile = match &a.frequency_profile {
        Some(list) => {
            let p = time_list(list, "--frequency-profile", "HZ", "1.0:50,3.0:49")?;
            if let Some((_, f)) = p
                .iter()
                .find(|(_, f)| !(*f > 0.5 * a.frequency && *f < 1.5 * a.frequency))
            {
                return Err(UsageError(format!(
                    "--frequency-profile: {f} Hz is not within ±50 % of the nominal {} Hz",
                    a.frequency
                )));
            }
            p
        }
        None => Vec::new(),
    };
    let mut harmonics = Vec::new();
    if let Some(h) = &a.harmonics {
        for item in h.split(',').filter(|x| !x.trim().is_empty()) {
            let bad = || {
                UsageError(format!(
                    "--harmonics item '{item}': expected ORDER:AMPLITUDE, e.g. 5:0.02"
                ))
            };
            let (o, amp) = item.split_once(':').ok_or_else(bad)?;
            let o: u32 = o.trim().parse().map_err(|_| bad())?;
            let amp: f64 = amp.trim().parse().map_err(|_| bad())?;
            if o < 2 || !amp.is_finite() || amp < 0.0 {
                return Err(bad());
            }
            harmonics.push((o, amp));
        }
    }
    let spec = SynthSpec {
        ratings: Ratings {
            rated_kv: a.rated_kv,
            rated_mva: a.rated_mva,
        },
        frequency_hz: a.frequency,
        sample_rate_hz: a.sample_rate,
        duration_s: a.duration,
        fault_start_s: a.fault_start,
        fault_duration_s: a.fault_duration,
        residual_pu,
        phase_jump_deg: a.phase_jump,
        recovery_pu: a.recovery,
        prefault_pu: a.prefault,
        p0_pu: a.p0,
        q0_pu: a.q0,
        k_gain: a.k_gain,
        dead_band_pu: a.dead_band,
        dead_band_mode: a.dead_band_mode,
        iq_tau_s: a.iq_tau,
        current_limit_pu: a.current_limit,
        k2_gain: a.k2_gain,
        p_ramp_pu_per_s: a.p_ramp,
        trip_at_s: a.trip_at,
        block,
        harmonics,
        noise_pu: a.noise,
        seed: a.seed,
        layout: a.layout,
        voltage_unit: a.voltage_unit,
        current_unit: a.current_unit,
        connection: a.voltage_connection,
        delimiter: a.delimiter.byte(),
        decimal_comma: a.decimal_comma,
        time_format: a.time_format,
        status_column: a.status,
        station: a.station.clone(),
        device: a.device.clone(),
        steps,
        frequency_profile,
        phase_order: a.phase_order,
    };
    spec.validate().map_err(UsageError)?;
    Ok(spec)
}

pub fn run(args: &SynthArgs) -> anyhow::Result<ExitStatus> {
    let spec = spec_from_args(args)?;
    let ext = args
        .out
        .extension()
        .and_then(|e| e.to_str())
        .unwrap_or("")
        .to_ascii_lowercase();
    let n = if ext == "cfg" || ext == "cff" {
        if spec.layout == SynthLayout::Waveform && spec.time_format != TimeFormat::Seconds {
            return Err(UsageError("--time-format applies to CSV only".into()).into());
        }
        write_comtrade(&spec, &args.out, args.comtrade_type, args.revision).map_err(|e| {
            if e.kind() == std::io::ErrorKind::InvalidInput {
                anyhow::Error::new(UsageError(e.to_string()))
            } else {
                anyhow::Error::new(e).context(format!("writing {}", args.out.display()))
            }
        })?
    } else {
        if let Some(dir) = args.out.parent().filter(|d| !d.as_os_str().is_empty()) {
            std::fs::create_dir_all(dir)
                .with_context(|| format!("creating directory {}", dir.display()))?;
        }
        let file = std::fs::File::create(&args.out)
            .with_context(|| format!("creating {}", args.out.display()))?;
        let mut w = BufWriter::with_capacity(1 << 20, file);
        let n =
            write_csv(&spec, &mut w).with_context(|| format!("writing {}", args.out.display()))?;
        w.flush()
            .with_context(|| format!("writing {}", args.out.display()))?;
        n
    };
    eprintln!("wrote {} ({n} samples)", args.out.display());
    Ok(ExitStatus::Success)
}

/// A list `TIME:VALUE,...` with increasing times and non-negative values.
fn time_list(
    list: &str,
    flag: &str,
    what: &str,
    example: &str,
) -> Result<Vec<(f64, f64)>, UsageError> {
    let mut out: Vec<(f64, f64)> = Vec::new();
    for item in list.split(',').filter(|x| !x.trim().is_empty()) {
        let bad = || {
            UsageError(format!(
                "{flag} item '{item}': expected TIME:{what}, e.g. {example}"
            ))
        };
        let (t, v) = item.split_once(':').ok_or_else(bad)?;
        let t: f64 = t.trim().parse().map_err(|_| bad())?;
        let v: f64 = v.trim().parse().map_err(|_| bad())?;
        if !(t.is_finite() && t >= 0.0 && v.is_finite() && v >= 0.0) {
            return Err(bad());
        }
        if out.last().is_some_and(|(p, _)| t <= *p) {
            return Err(UsageError(format!("{flag} '{list}': times must increase")));
        }
        out.push((t, v));
    }
    Ok(out)
}
