//! The verdict on riding through one event that is not a voltage
//! disturbance (a phase-angle jump, a rate of change of frequency): the
//! unit must stay connected while the event is within the rule's limit,
//! and may trip once it has gone beyond it. Shared by the `phase_jump` and
//! `rocof` checks (docs/rules.md gives the table of verdicts).

use crate::analysis::events::{TripInfo, TripMethod};
use crate::rules::result::{CheckResult, Reason, Verdict};

/// One event as the rule sees it.
pub struct Event {
    /// When the event started and ended, s (equal for a jump).
    pub from: f64,
    pub to: f64,
    /// When the measured value first went beyond the limit.
    pub beyond_at: Option<f64>,
    /// The largest measured value (absolute) and the limit, in the
    /// check's unit.
    pub measured: f64,
    pub limit: f64,
    /// The largest measured value up to a time (for a trip before the
    /// event ended).
    pub measured_until: Box<dyn Fn(f64) -> f64>,
}

/// How the rule words it.
pub struct Words<'a> {
    /// "a phase jump of 25.0°", "ROCOF up to 1.20 Hz/s".
    pub event: String,
    /// "25°", "2 Hz/s".
    pub limit: String,
    /// "the jump", "the ROCOF event".
    pub what: &'a str,
}

/// The verdict on one event; a trip from `from` to `to + trip_window_s`
/// is the event's. `trip_from` is where trips start to count (earlier
/// trips are "already tripped").
pub fn judge(
    mut r: CheckResult,
    ev: &Event,
    trip: &TripInfo,
    trip_window_s: f64,
    rec_end: f64,
    words: &Words<'_>,
) -> CheckResult {
    let window_end = ev.to + trip_window_s;
    r.limit = Some(ev.limit);
    r.at_s = Some(ev.from);
    let tt = trip.time_s.filter(|_| trip.tripped);
    if let Some(tb) = tt.filter(|x| *x < ev.from) {
        return r.decide(
            Verdict::Inconclusive,
            Reason::AlreadyTripped,
            format!(
                "the unit had already tripped at {tb:.3} s, before {} at {:.3} s",
                words.event, ev.from
            ),
        );
    }
    if trip.method == TripMethod::None {
        return r.decide(
            Verdict::Inconclusive,
            Reason::TripNotVisible,
            format!(
                "{} at {:.3} s, but the recording can show no trip (no status channel, no usable current)",
                words.event, ev.from
            ),
        );
    }
    if let Some(t) = tt.filter(|x| *x <= window_end) {
        r.at_s = Some(t);
        if let Some(b) = ev.beyond_at.filter(|b| t >= *b) {
            r.measured = Some(ev.measured);
            r.margin = Some(ev.measured - ev.limit);
            r.permitted_trip = Some(true);
            return r.decide(
                Verdict::Pass,
                Reason::PermittedTrip,
                format!(
                    "{} at {:.3} s, beyond the {} the unit must ride through (from {b:.3} s); it tripped at {t:.3} s: a permitted trip",
                    words.event, ev.from, words.limit
                ),
            );
        }
        let m = (ev.measured_until)(t);
        r.measured = Some(m);
        r.margin = Some((m - ev.limit).min(0.0));
        r.permitted_trip = Some(false);
        let when = if t <= ev.to {
            "during it".to_string()
        } else {
            format!("{:.3} s after {}", t - ev.to, words.what)
        };
        return r.decide(
            Verdict::Fail,
            Reason::TripInsideZone,
            format!(
                "{} at {:.3} s, within the {} the unit must ride through; it tripped at {t:.3} s, {when} (trips up to {trip_window_s} s after {} count)",
                words.event, ev.from, words.limit, words.what
            ),
        );
    }
    r.measured = Some(ev.measured);
    if rec_end < window_end {
        return r.decide(
            Verdict::Inconclusive,
            Reason::InsufficientData,
            format!(
                "{} at {:.3} s and no trip, but the recording ends at {rec_end:.3} s, before the {trip_window_s} s after {} in which a trip would count",
                words.event, ev.from, words.what
            ),
        );
    }
    if let Some(b) = ev.beyond_at {
        return r.decide(
            Verdict::Pass,
            Reason::RodeThroughBeyondZone,
            format!(
                "{} at {:.3} s, beyond the {} (from {b:.3} s); the unit stayed connected",
                words.event, ev.from, words.limit
            ),
        );
    }
    r.margin = Some(ev.limit - ev.measured);
    r.decide(
        Verdict::Pass,
        Reason::NoTrip,
        format!(
            "{} at {:.3} s, within the {}; the unit stayed connected for the {trip_window_s} s after {}",
            words.event, ev.from, words.limit, words.what
        ),
    )
}
