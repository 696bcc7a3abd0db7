//! What every importer does with channels once it knows their names:
//! recognise common names (`Ua`, `IL2`, `Uab`, `U21` …) and unit suffixes,
//! settle the mapped set (complete three-phase sets, waveform or RMS-level;
//! with `partial`, leave out what is incomplete), and name the canonical
//! unit the samples are handed over in.

use super::ChannelMap;
use crate::error::InputError;
use crate::model::{ChannelKey, Connection, CurrentUnit, RecordingKind, VoltageUnit};
use std::path::Path;

/// Said of every waveform recording with phase-to-phase voltages.
pub(crate) const PHASE_TO_PHASE_NOTE: &str = "voltages are phase-to-phase: zero sequence is unobservable, phase-to-neutral magnitudes assume V0 = 0";

/// The phase of a name like `Ua`, `VB`, `IL3`, `I_c`, `Van` (0 = a), with
/// the kind of quantity it names (`u`/`v` voltage, `i` current).
pub(crate) fn named_phase(name: &str) -> Option<(char, usize)> {
    let n: String = name
        .trim()
        .to_ascii_lowercase()
        .chars()
        .filter(|c| !matches!(c, '_' | ' ' | '-' | '.'))
        .collect();
    let (q, rest) = n.split_at(n.char_indices().nth(1).map_or(n.len(), |(i, _)| i));
    let q = match q {
        "u" | "v" => 'v',
        "i" => 'i',
        _ => return None,
    };
    let p = match rest {
        "a" | "an" | "l1" | "l1n" | "r" | "1" => 0,
        "b" | "bn" | "l2" | "l2n" | "s" | "2" => 1,
        "c" | "cn" | "l3" | "l3n" | "t" | "3" => 2,
        _ => return None,
    };
    Some((q, p))
}

/// A phase-to-phase voltage name (`Uab`, `VBC`, `U12`, `UL1L2` …, and the
/// reversed `U21`, `Uba` …): (pair 0 = ab, 1 = bc, 2 = ca; sign of the
/// recorded voltage relative to v_ab, v_bc, v_ca).
pub(crate) fn named_line(name: &str) -> Option<(usize, f64)> {
    let n: String = name
        .trim()
        .to_ascii_lowercase()
        .chars()
        .filter(|c| !matches!(c, '_' | ' ' | '-' | '.' | 'l'))
        .collect();
    let rest = n.strip_prefix('u').or_else(|| n.strip_prefix('v'))?;
    let ph = |c: char| match c {
        'a' | '1' | 'r' => Some(0usize),
        'b' | '2' | 's' => Some(1),
        'c' | '3' | 't' => Some(2),
        _ => None,
    };
    let cs: Vec<char> = rest.chars().collect();
    if cs.len() != 2 {
        return None;
    }
    let (x, y) = (ph(cs[0])?, ph(cs[1])?);
    match (x, y) {
        (0, 1) => Some((0, 1.0)),
        (1, 2) => Some((1, 1.0)),
        (2, 0) => Some((2, 1.0)),
        (1, 0) => Some((0, -1.0)),
        (2, 1) => Some((1, -1.0)),
        (0, 2) => Some((2, -1.0)),
        _ => None,
    }
}

/// A column or channel name without its unit suffix: `Ua(V)`, `Ia [kA]`,
/// `U_b, kV` → (`Ua`, Some(`V`)).
pub(crate) fn split_unit(name: &str) -> (String, Option<String>) {
    let n = name.trim();
    for (open, close) in [('(', ')'), ('[', ']')] {
        if let (Some(a), true) = (n.rfind(open), n.ends_with(close)) {
            let unit = n[a + 1..n.len() - 1].trim();
            return (n[..a].trim().to_string(), Some(unit.to_string()));
        }
    }
    (n.to_string(), None)
}

/// The channel key a common name stands for: phase voltages (`Ua`, `V_b`,
/// `UL3` …) and currents (`Ia`, `IL2` …). Phase-to-phase names are not
/// guessed here (their sign and base need the connection).
pub(crate) fn name_means(name: &str) -> Option<ChannelKey> {
    let (q, p) = named_phase(name)?;
    let keys = if q == 'v' {
        [ChannelKey::Va, ChannelKey::Vb, ChannelKey::Vc]
    } else {
        [ChannelKey::Ia, ChannelKey::Ib, ChannelKey::Ic]
    };
    Some(keys[p])
}

/// The mapped set after [`settle_channel_set`].
pub(crate) struct ChannelSet {
    /// Keys left out (partial reading only).
    pub dropped: Vec<ChannelKey>,
    /// Why they were left out.
    pub notes: Vec<String>,
    pub kind: RecordingKind,
}

/// Settles the mapped keys: with `partial`, leaves out incomplete sets
/// ([`partial_channel_set`]); then checks what remains
/// ([`check_channel_set`]) and tells waveform from RMS-level recordings.
pub(crate) fn settle_channel_set(
    path: &Path,
    keys: &[ChannelKey],
    connection: Connection,
    partial: bool,
) -> Result<ChannelSet, InputError> {
    let (dropped, notes) = if partial {
        partial_channel_set(keys, connection)
    } else {
        (Vec::new(), Vec::new())
    };
    let kept: Vec<ChannelKey> = keys
        .iter()
        .copied()
        .filter(|k| !dropped.contains(k))
        .collect();
    check_channel_set(path, &kept, connection, partial)?;
    let kind = if kept.contains(&ChannelKey::VPos) {
        RecordingKind::RmsLevel
    } else {
        RecordingKind::Waveform
    };
    Ok(ChannelSet {
        dropped,
        notes,
        kind,
    })
}

/// The canonical unit a channel's samples are handed over in: `V` or `A`
/// (the analysis divides by the ratings' bases), `pu`, or `0/1` for the
/// status. `per_unit`: the channel's effective unit is per unit.
pub(crate) fn canonical_unit(key: ChannelKey, per_unit: bool) -> &'static str {
    if key == ChannelKey::Status {
        "0/1"
    } else if per_unit {
        "pu"
    } else if key.is_voltage() {
        "V"
    } else if key.is_phase_current() {
        "A"
    } else {
        "pu"
    }
}

/// A unit the mapping gives for a key (voltage or current unit):
/// factor to V or A, whether it is per unit, and its label.
pub(crate) fn unit_override(
    map: &ChannelMap,
    key: ChannelKey,
) -> Option<(f64, bool, &'static str)> {
    if key.is_voltage() {
        map.voltage_unit
            .map(|u| (u.factor(), u == VoltageUnit::Pu, u.label()))
    } else if key.is_phase_current() {
        map.current_unit
            .map(|u| (u.factor(), u == CurrentUnit::Pu, u.label()))
    } else {
        None
    }
}

/// For reading what can be read (`ImportOptions::partial`): the keys to
/// leave out so that the rest passes [`check_channel_set`], and notes
/// saying why. Without any voltage the currents (and status) still are
/// analysed.
pub(crate) fn partial_channel_set(
    present: &[ChannelKey],
    connection: Connection,
) -> (Vec<ChannelKey>, Vec<String>) {
    let has = |k: ChannelKey| present.contains(&k);
    let mut drop = Vec::new();
    let mut notes = Vec::new();
    let phase_v = [ChannelKey::Va, ChannelKey::Vb, ChannelKey::Vc];
    let phase_i = [ChannelKey::Ia, ChannelKey::Ib, ChannelKey::Ic];
    let nv = phase_v.iter().filter(|k| has(**k)).count();
    let ni = phase_i.iter().filter(|k| has(**k)).count();
    let line = connection == Connection::PhaseToPhase;
    if nv == 1 || (nv == 2 && !line) || (nv > 0 && has(ChannelKey::VPos)) {
        drop.extend(phase_v);
        drop.push(ChannelKey::Vn);
        notes.push(format!(
            "only {nv} of 3 phase voltages are mapped: voltages are not analysed"
        ));
    }
    if has(ChannelKey::Vn) && !(line && nv >= 2) {
        drop.push(ChannelKey::Vn);
    }
    if ni == 1 || ni == 2 || (ni > 0 && has(ChannelKey::VPos)) {
        drop.extend(phase_i);
        notes.push(format!(
            "only {ni} of 3 phase currents are mapped: currents are not analysed"
        ));
    }
    if !has(ChannelKey::VPos) {
        drop.extend([ChannelKey::P, ChannelKey::Q, ChannelKey::Ip, ChannelKey::Iq]);
    } else {
        let pq = has(ChannelKey::P) && has(ChannelKey::Q);
        let ipq = has(ChannelKey::Ip) && has(ChannelKey::Iq);
        if !pq {
            drop.extend([ChannelKey::P, ChannelKey::Q]);
        }
        if !ipq || pq {
            drop.extend([ChannelKey::Ip, ChannelKey::Iq]);
        }
    }
    let remaining_v = nv > 0 && !drop.contains(&ChannelKey::Va) || has(ChannelKey::VPos);
    if !remaining_v {
        notes.push(
            "no voltage channel is mapped: channels, sampling and currents are shown; map voltages (--map va=NAME ...) to find disturbances"
                .into(),
        );
    }
    (drop, notes)
}

/// Channel keys that the model checks for completeness, with what to say.
/// Phase-to-phase voltages may leave one of the three out (it is derived:
/// `vab + vbc + vca = 0`).
pub(crate) fn check_channel_set(
    path: &Path,
    present: &[ChannelKey],
    connection: Connection,
    allow_no_voltage: bool,
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
    if nv == 0 && !has(ChannelKey::VPos) && !allow_no_voltage {
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
