//! Test realisation: did the recording apply the test the plan says it did?
//! (docs/rules.md, "Checks holdfast adds itself" and "Test plan"). A mismatch makes
//! the test inconclusive as evidence; it is not a failure of the unit.
//!
//! The residual is the extreme of the rule set's applicable voltage; the
//! duration runs from inception to clearance on waveforms (disturbance end
//! minus start at RMS level, where no waveform shows the edges).

use super::registry::{CheckKind, Unit};
use super::result::{CheckResult, Reason, Verdict};
use crate::analysis::events::{Balance, Disturbance};
use schemars::JsonSchema;
use serde::{Deserialize, Serialize};

#[derive(Clone, Copy, Debug, Deserialize, Serialize, JsonSchema, PartialEq, Eq)]
#[serde(rename_all = "snake_case")]
pub enum ExpectedKind {
    Symmetrical,
    Unbalanced,
}

/// What the test was meant to apply.
#[derive(Clone, Debug, Deserialize, Serialize, JsonSchema, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct Expect {
    /// Residual applicable voltage during the fault, pu.
    #[serde(default)]
    pub residual_pu: Option<f64>,
    /// Fault duration, s.
    #[serde(default)]
    pub duration_s: Option<f64>,
    #[serde(default)]
    pub kind: Option<ExpectedKind>,
    /// Accepted difference of the residual voltage, pu (default 0.05).
    #[serde(default = "d_res_tol")]
    pub residual_tolerance_pu: f64,
    /// Accepted difference of the duration, s (default: the larger of
    /// 20 ms and 10 % of the planned duration).
    #[serde(default)]
    pub duration_tolerance_s: Option<f64>,
    /// Which disturbance of the recording is the test (default 0, the first).
    #[serde(default)]
    pub disturbance: usize,
}

fn d_res_tol() -> f64 {
    0.05
}

/// The check's id in results (its type is `test_realisation`).
pub const ID: &str = "realisation";

impl Expect {
    pub fn problems(&self) -> Vec<(&'static str, String)> {
        let mut out = Vec::new();
        if let Some(r) = self.residual_pu {
            if !(0.0..=3.0).contains(&r) {
                out.push(("residual_pu", format!("residual_pu {r} must be in [0, 3]")));
            }
        }
        if let Some(d) = self.duration_s {
            if !(d > 0.0 && d.is_finite()) {
                out.push(("duration_s", format!("duration_s {d} must be positive")));
            }
        }
        if !(self.residual_tolerance_pu > 0.0 && self.residual_tolerance_pu < 1.0) {
            out.push((
                "residual_tolerance_pu",
                "residual_tolerance_pu must be in (0, 1)".into(),
            ));
        }
        if self
            .duration_tolerance_s
            .is_some_and(|d| !(d > 0.0 && d.is_finite()))
        {
            out.push((
                "duration_tolerance_s",
                "duration_tolerance_s must be positive".into(),
            ));
        }
        out
    }

    /// The accepted duration difference for a planned duration.
    pub fn duration_tolerance(&self, planned_s: f64) -> f64 {
        self.duration_tolerance_s
            .unwrap_or_else(|| (0.1 * planned_s).max(0.02))
    }
}

pub fn evaluate(e: &Expect, disturbances: &[Disturbance]) -> CheckResult {
    let mut r = CheckResult::new(
        ID,
        CheckKind::TestRealisation,
        Some(e.disturbance),
        Unit::Pu,
    );
    let Some(d) = disturbances.get(e.disturbance) else {
        r.disturbance = None;
        return r.decide(
            Verdict::Inconclusive,
            Reason::NotAsPlanned,
            format!(
                "the plan expects disturbance #{} but the recording shows {}; this recording is not evidence of the planned test",
                e.disturbance,
                disturbances.len()
            ),
        );
    };
    let mut ok = Vec::new();
    let mut bad = Vec::new();
    let mut worst: Option<(f64, f64, f64, f64)> = None; // measured, limit, margin, at
    if let Some(want) = e.residual_pu {
        let got = d.extreme_pu;
        let m = compare(
            "residual (extreme)",
            "pu",
            got,
            want,
            e.residual_tolerance_pu,
            &mut ok,
            &mut bad,
        );
        worst = Some((got, want, m, d.extreme_at_s));
    }
    if let Some(want) = e.duration_s {
        let how = if d.clearance_s.is_some() {
            "duration (inception to clearance)"
        } else {
            "duration (phasor level)"
        };
        match d.fault_duration_s() {
            Some(got) => {
                let m = compare(
                    how,
                    "s",
                    got,
                    want,
                    e.duration_tolerance(want),
                    &mut ok,
                    &mut bad,
                );
                if worst.is_none() {
                    r.unit = Unit::S;
                    worst = Some((got, want, m, d.start_s));
                }
            }
            None => bad.push(
                "duration unknown: the voltage had not returned when the recording ends".into(),
            ),
        }
    }
    if let Some(k) = e.kind {
        let got = d.balance;
        let matches = matches!(
            (k, got),
            (ExpectedKind::Symmetrical, Balance::Symmetrical)
                | (ExpectedKind::Unbalanced, Balance::Unbalanced)
        );
        let s = format!(
            "{} (planned {})",
            match got {
                Balance::Symmetrical => "symmetrical",
                Balance::Unbalanced => "unbalanced",
                Balance::Undetermined => "balance undetermined",
            },
            match k {
                ExpectedKind::Symmetrical => "symmetrical",
                ExpectedKind::Unbalanced => "unbalanced",
            }
        );
        if matches {
            ok.push(s)
        } else {
            bad.push(s)
        }
    }
    if let Some((m, l, mg, at)) = worst {
        r.measured = Some(m);
        r.limit = Some(l);
        r.margin = Some(mg);
        r.at_s = Some(at);
    }
    if bad.is_empty() {
        r.decide(
            Verdict::Pass,
            Reason::AsPlanned,
            format!("the recording shows the planned test: {}", ok.join(", ")),
        )
    } else {
        r.decide(
            Verdict::Inconclusive,
            Reason::NotAsPlanned,
            format!(
                "the recording does not show the planned test: {}{}",
                bad.join(", "),
                if ok.is_empty() {
                    String::new()
                } else {
                    format!(" (as planned: {})", ok.join(", "))
                }
            ),
        )
    }
}

/// Compares a measured with a planned value; files the sentence under `ok`
/// or `bad` and returns the margin (tolerance minus the difference).
fn compare(
    what: &str,
    unit: &str,
    got: f64,
    want: f64,
    tolerance: f64,
    ok: &mut Vec<String>,
    bad: &mut Vec<String>,
) -> f64 {
    let m = tolerance - (got - want).abs();
    let s = format!("{what} {got:.3} {unit} (planned {want:.3} ± {tolerance:.3})");
    if m >= 0.0 {
        ok.push(s)
    } else {
        bad.push(s)
    }
    m
}
