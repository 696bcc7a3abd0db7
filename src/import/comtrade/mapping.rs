//! Which COMTRADE channels are the model's channels, and how their values
//! are scaled to V, A or pu.
//!
//! Explicit names (or `#n`, the channel number) come first. Then, for
//! voltages and currents each: the phase field and a voltage/current unit
//! (`A`/`B`/`C`, `L1`… or `AB`/`BC`/`CA`), else channel names (`Ua`, `IL2`,
//! `Uab`, `U21` …); two phase-to-phase voltages suffice. A digital channel
//! named `status` is the unit's status. With `partial`, a set that is
//! ambiguous is left out with a note instead of an error.

use super::cfg::{self, Config};
use crate::error::InputError;
use crate::import::{channels, ChannelMap};
use crate::model::{ChannelKey, Connection};
use std::path::Path;

/// A mapped channel: where its value is and how to scale it.
#[derive(Clone, Debug)]
pub(crate) struct Mapped {
    pub key: ChannelKey,
    /// Analog index (0-based) or digital index.
    pub analog: Option<usize>,
    pub digital: Option<usize>,
    /// value = (a·x + b)·k
    pub a: f64,
    pub b: f64,
    pub k: f64,
    pub name: String,
    /// The unit its samples are handed over in (V, A, pu, 0/1).
    pub canonical: &'static str,
}

fn phase_of(s: &str) -> Option<usize> {
    match s.trim().to_ascii_uppercase().as_str() {
        "A" | "L1" | "R" | "AN" | "L1N" => Some(0),
        "B" | "L2" | "S" | "BN" | "L2N" => Some(1),
        "C" | "L3" | "T" | "CN" | "L3N" => Some(2),
        _ => None,
    }
}

fn line_phase_of(s: &str) -> Option<usize> {
    match s.trim().to_ascii_uppercase().as_str() {
        "AB" | "L1L2" | "L12" | "RS" => Some(0),
        "BC" | "L2L3" | "L23" | "ST" => Some(1),
        "CA" | "L3L1" | "L31" | "TR" => Some(2),
        _ => None,
    }
}

enum UnitKind {
    Voltage(f64),
    Current(f64),
    Pu,
    Other,
}

fn unit_kind(u: &str) -> UnitKind {
    match u.trim() {
        "V" | "v" => UnitKind::Voltage(1.0),
        "kV" | "kv" | "KV" => UnitKind::Voltage(1e3),
        "mV" => UnitKind::Voltage(1e-3),
        "MV" => UnitKind::Voltage(1e6),
        "A" | "a" => UnitKind::Current(1.0),
        "kA" | "ka" | "KA" => UnitKind::Current(1e3),
        "mA" => UnitKind::Current(1e-3),
        "pu" | "PU" | "p.u." => UnitKind::Pu,
        // Spelled out, as some exports write them.
        other => match other.to_ascii_lowercase().as_str() {
            "volt" | "volts" => UnitKind::Voltage(1.0),
            "kilovolt" | "kilovolts" => UnitKind::Voltage(1e3),
            "ampere" | "amperes" | "amp" | "amps" => UnitKind::Current(1.0),
            "kiloampere" | "kiloamperes" => UnitKind::Current(1e3),
            _ => UnitKind::Other,
        },
    }
}

/// One analog channel as a message names it: `'name' (#n, phase P, unit U)`.
fn describe(a: &cfg::Analog) -> String {
    format!(
        "'{}' (#{}, phase '{}', unit '{}')",
        a.name, a.index, a.phase, a.unit
    )
}

/// Channels found for a set of keys: (phase, analog index, sign), the
/// connection they imply, and how they were found.
type Chosen = (Vec<(usize, usize, f64)>, Connection, &'static str);

/// A pick of a key: analog or digital channel index, and a sign.
type Pick = (ChannelKey, Option<usize>, Option<usize>, f64);

/// Finds channels of a configuration by name or number.
struct Finder<'a> {
    cfg: &'a Config,
}

impl Finder<'_> {
    /// A channel by `#n` (its number), else by its name as written, else
    /// in any case; `channels` are (number, name) pairs.
    fn position<'n>(
        channels: impl Iterator<Item = (u32, &'n str)> + Clone,
        name: &str,
    ) -> Option<usize> {
        let mut all = channels.clone();
        if let Some(n) = name
            .trim()
            .strip_prefix('#')
            .and_then(|n| n.trim().parse::<u32>().ok())
        {
            return all.position(|(i, _)| i == n);
        }
        all.position(|(_, x)| x == name).or_else(|| {
            channels
                .clone()
                .position(|(_, x)| x.eq_ignore_ascii_case(name.trim()))
        })
    }

    fn analog(&self, name: &str) -> Option<usize> {
        let a = self.cfg.analogs.iter();
        Self::position(a.map(|x| (x.index, x.name.as_str())), name)
    }

    fn digital(&self, name: &str) -> Option<usize> {
        let d = self.cfg.digitals.iter();
        Self::position(d.map(|x| (x.index, x.name.as_str())), name)
    }

    /// The channels, for a hint (the first 24 analog and 8 digital ones).
    fn list(&self) -> String {
        let cfg = self.cfg;
        let mut v: Vec<String> = cfg.analogs.iter().take(24).map(describe).collect();
        if cfg.analogs.len() > 24 {
            v.push(format!("… {} more analog channels", cfg.analogs.len() - 24));
        }
        v.extend(
            cfg.digitals
                .iter()
                .take(8)
                .map(|d| format!("'{}' (digital #{})", d.name, d.index)),
        );
        if cfg.digitals.len() > 8 {
            v.push(format!(
                "… {} more digital channels",
                cfg.digitals.len() - 8
            ));
        }
        v.join(", ")
    }
}

/// The channels the mapping names.
fn explicit_picks(path: &Path, cfg: &Config, map: &ChannelMap) -> Result<Vec<Pick>, InputError> {
    let find = Finder { cfg };
    let mut picks: Vec<Pick> = Vec::new();
    for (key, name) in &map.keys {
        if *key == ChannelKey::Status {
            match (find.digital(name), find.analog(name)) {
                (Some(d), _) => picks.push((*key, None, Some(d), 1.0)),
                (None, Some(a)) => picks.push((*key, Some(a), None, 1.0)),
                (None, None) => {
                    return Err(InputError::new(
                        path,
                        format!("no channel named '{name}' for 'status'"),
                    )
                    .field(name.clone())
                    .hint(format!("channels are: {}", find.list())))
                }
            }
        } else {
            match find.analog(name) {
                Some(a) => picks.push((*key, Some(a), None, 1.0)),
                None => {
                    return Err(InputError::new(
                        path,
                        format!("no analog channel named '{name}' for '{key}'"),
                    )
                    .field(name.clone())
                    .hint(format!(
                        "give a channel name or its number as #n; channels are: {}",
                        find.list()
                    )))
                }
            }
        }
    }
    Ok(picks)
}

/// Candidate analog channels per phase (or phase pair) of one quantity.
#[derive(Default)]
struct Candidates {
    by_field: [Vec<usize>; 3],
    line_field: [Vec<usize>; 3],
    by_name: [Vec<usize>; 3],
    line_name: [Vec<(usize, f64)>; 3],
}

fn one_each(set: &[Vec<usize>; 3]) -> bool {
    set.iter().all(|v| v.len() == 1)
}

fn ambiguous(set: &[Vec<usize>; 3]) -> bool {
    set.iter().any(|v| v.len() > 1)
}

/// Two or three phase-to-phase voltages, one per pair.
fn line_pick(set: &[Vec<(usize, f64)>; 3]) -> Option<Vec<(usize, usize, f64)>> {
    if set.iter().any(|v| v.len() > 1) {
        return None;
    }
    let got: Vec<(usize, usize, f64)> = (0..3)
        .filter_map(|p| set[p].first().map(|(i, s)| (p, *i, *s)))
        .collect();
    (got.len() >= 2).then_some(got)
}

impl Candidates {
    /// Voltage (`want_voltage`) or current channels by phase field and by name.
    fn find(cfg: &Config, want_voltage: bool) -> Self {
        let mut c = Candidates::default();
        let q = if want_voltage { 'v' } else { 'i' };
        for (i, a) in cfg.analogs.iter().enumerate() {
            let fits = match unit_kind(&a.unit) {
                UnitKind::Voltage(_) => want_voltage,
                UnitKind::Current(_) => !want_voltage,
                _ => false,
            };
            if !fits {
                continue;
            }
            if let Some(p) = phase_of(&a.phase) {
                c.by_field[p].push(i);
            } else if want_voltage && line_phase_of(&a.phase).is_some() {
                c.line_field[line_phase_of(&a.phase).unwrap_or(0)].push(i);
            }
            if let Some((qq, p)) = channels::named_phase(&a.name) {
                if qq == q {
                    c.by_name[p].push(i);
                }
            }
            if want_voltage {
                if let Some((p, sign)) = channels::named_line(&a.name) {
                    c.line_name[p].push((i, sign));
                }
            }
        }
        c
    }

    /// One channel per phase by the phase field, else by name; phase-to-phase
    /// voltages when no phase-to-neutral ones are there.
    fn choose(&self, want_voltage: bool) -> Option<Chosen> {
        let line_field: [Vec<(usize, f64)>; 3] =
            [0, 1, 2].map(|p| self.line_field[p].iter().map(|i| (*i, 1.0)).collect());
        Self::pick(&self.by_field, &line_field, want_voltage, "phase field").or_else(|| {
            if ambiguous(&self.by_field) {
                None
            } else {
                Self::pick(
                    &self.by_name,
                    &self.line_name,
                    want_voltage,
                    "channel names",
                )
            }
        })
    }

    /// One channel per phase; else, for voltages without any, two or three
    /// phase-to-phase ones.
    fn pick(
        phases: &[Vec<usize>; 3],
        lines: &[Vec<(usize, f64)>; 3],
        want_voltage: bool,
        how: &'static str,
    ) -> Option<Chosen> {
        if one_each(phases) {
            let each = (0..3).map(|p| (p, phases[p][0], 1.0)).collect();
            return Some((each, Connection::PhaseToNeutral, how));
        }
        if want_voltage && phases.iter().all(|v| v.is_empty()) {
            return line_pick(lines).map(|l| (l, Connection::PhaseToPhase, how));
        }
        None
    }

    /// The ambiguous set, if one is: several channels for one phase.
    fn ambiguity(&self) -> Option<&[Vec<usize>; 3]> {
        let set = if ambiguous(&self.by_field) {
            &self.by_field
        } else {
            &self.by_name
        };
        ambiguous(set).then_some(set)
    }
}

/// Finds the phase voltages or currents the mapping does not name, and
/// says how; returns the connection the voltages imply.
#[allow(clippy::too_many_arguments)]
fn find_phases(
    path: &Path,
    cfg: &Config,
    map: &ChannelMap,
    partial: bool,
    want_voltage: bool,
    picks: &mut Vec<Pick>,
    notes: &mut Vec<String>,
) -> Result<Option<Connection>, InputError> {
    let keys = if want_voltage {
        [ChannelKey::Va, ChannelKey::Vb, ChannelKey::Vc]
    } else {
        [ChannelKey::Ia, ChannelKey::Ib, ChannelKey::Ic]
    };
    if keys.iter().any(|k| picks.iter().any(|p| p.0 == *k)) {
        return Ok(None);
    }
    let cands = Candidates::find(cfg, want_voltage);
    if let Some((list, conn, how)) = cands.choose(want_voltage) {
        for (p, i, sign) in &list {
            picks.push((keys[*p], Some(*i), None, *sign));
        }
        let desc: Vec<String> = list
            .iter()
            .map(|(p, i, sign)| {
                format!(
                    "{} ← {}'{}'",
                    keys[*p].name(),
                    if *sign < 0.0 { "minus " } else { "" },
                    cfg.analogs[*i].name
                )
            })
            .collect();
        notes.push(format!(
            "channels found by their {how}: {}",
            desc.join(", ")
        ));
        return Ok(want_voltage.then(|| map.connection.unwrap_or(conn)));
    }
    if let Some(set) = cands.ambiguity() {
        let list: Vec<String> = set
            .iter()
            .flatten()
            .map(|i| describe(&cfg.analogs[*i]))
            .collect();
        let msg = format!(
            "several {} channels per phase: {}",
            if want_voltage { "voltage" } else { "current" },
            list.join(", ")
        );
        let hint = format!(
            "choose with the plan's channels block or --map {}=NAME (or #n) ...",
            keys[0].name()
        );
        if !partial {
            return Err(InputError::new(path, msg).hint(hint));
        }
        notes.push(format!("{msg}: not mapped ({hint})"));
    }
    Ok(None)
}

/// The scaling of one picked analog channel: primary values in V, A or pu.
fn scale_analog(
    path: &Path,
    a: &cfg::Analog,
    map: &ChannelMap,
    key: ChannelKey,
    sign: f64,
    notes: &mut Vec<String>,
) -> Result<(f64, &'static str), InputError> {
    let ps = if a.is_primary {
        1.0
    } else {
        a.primary / a.secondary
    };
    let (factor, per_unit) = match (unit_kind(&a.unit), channels::unit_override(map, key)) {
        (_, Some((f, is_pu, label))) => {
            if !a.unit.trim().is_empty() && !a.unit.trim().eq_ignore_ascii_case(label) {
                notes.push(format!(
                    "channel '{}' says unit '{}'; the mapping's unit {label} is used",
                    a.name, a.unit
                ));
            }
            if is_pu {
                (1.0, true)
            } else {
                (f, false)
            }
        }
        (UnitKind::Voltage(f), None) if key.is_voltage() => (f, false),
        (UnitKind::Current(f), None) if key.is_phase_current() => (f, false),
        (UnitKind::Pu, None) => (1.0, true),
        (UnitKind::Other, None) if key.is_rms_level() => (1.0, true),
        (_, None) => {
            return Err(InputError::new(
                path,
                format!(
                    "channel '{}' has unit '{}', which does not fit '{key}'",
                    a.name, a.unit
                ),
            )
            .line(a.line)
            .column(5)
            .hint(
                "map the right channel, or give the unit in the mapping (voltage/current unit)",
            ));
        }
    };
    let k = ps * factor * sign;
    if !(k.is_finite() && (a.a * k).is_finite() && (a.b * k).is_finite()) || k == 0.0 {
        return Err(InputError::new(
            path,
            format!(
                "channel '{}': the scaling a = {}, b = {}{} gives no finite values",
                a.name,
                a.a,
                a.b,
                if a.is_primary {
                    String::new()
                } else {
                    format!(", primary/secondary = {}/{}", a.primary, a.secondary)
                }
            ),
        )
        .line(a.line)
        .field(a.name.clone())
        .hint("correct the channel's multiplier, offset or ratios in the configuration"));
    }
    Ok((k, channels::canonical_unit(key, per_unit)))
}

/// Resolves the channel map against the configuration (module docs).
pub(super) fn resolve(
    path: &Path,
    cfg: &Config,
    map: &ChannelMap,
    partial: bool,
) -> Result<(Vec<Mapped>, Connection, Vec<String>), InputError> {
    let mut notes = Vec::new();
    let mut picks = explicit_picks(path, cfg, map)?;
    let mut connection = map.connection.unwrap_or(Connection::PhaseToNeutral);
    if !picks.iter().any(|p| p.0 == ChannelKey::VPos) {
        for want_voltage in [true, false] {
            let found = find_phases(
                path,
                cfg,
                map,
                partial,
                want_voltage,
                &mut picks,
                &mut notes,
            )?;
            if let Some(c) = found {
                connection = c;
            }
        }
    }
    if !picks.iter().any(|p| p.0 == ChannelKey::Status) {
        if let Some(d) = cfg
            .digitals
            .iter()
            .position(|d| d.name.trim().eq_ignore_ascii_case("status"))
        {
            picks.push((ChannelKey::Status, None, Some(d), 1.0));
        }
    }
    let mut mapped = Vec::new();
    for (key, analog, digital, sign) in picks {
        if let Some(d) = digital {
            mapped.push(Mapped {
                key,
                analog: None,
                digital: Some(d),
                a: 1.0,
                b: 0.0,
                k: 1.0,
                name: cfg.digitals[d].name.clone(),
                canonical: channels::canonical_unit(key, false),
            });
            continue;
        }
        let Some(i) = analog else { continue };
        let a = &cfg.analogs[i];
        let (k, canonical) = scale_analog(path, a, map, key, sign, &mut notes)?;
        mapped.push(Mapped {
            key,
            analog: Some(i),
            digital: None,
            a: a.a,
            b: a.b,
            k,
            name: a.name.clone(),
            canonical,
        });
    }
    if connection == Connection::PhaseToPhase {
        notes.push(channels::PHASE_TO_PHASE_NOTE.into());
    }
    Ok((mapped, connection, notes))
}
