//! The registered check types: the one list that names them all, and the
//! kinds and units results carry.
//!
//! [`check_types!`] holds the list and hands it to a macro of the caller's
//! choosing; [`CheckKind`] is made from it here, the rule-set format's
//! `CheckSpec` and its dispatch in [`crate::rules::checks`]. Adding a check
//! type is one line in the list (and its module in `rules/checks/`).

use schemars::JsonSchema;
use serde::{Deserialize, Serialize};

/// Hands the list of check types to `$then!`: for each, its doc comment,
/// the variant name, its module in `rules/checks/` with the spec type, and
/// its `type` name in rule sets and results.
macro_rules! check_types {
    ($then:ident) => {
        $then! {
            /// Voltage-against-time boundary of the ride-through zone.
            Envelope(envelope::EnvelopeSpec) = "envelope",
            /// "Below (above) x pu for up to d s" rows.
            DurationTable(duration_table::DurationTableSpec) = "duration_table",
            /// Fast reactive current injection.
            ReactiveCurrent(reactive_current::ReactiveCurrentSpec) = "reactive_current",
            /// Active power back to a fraction of pre-fault within a time.
            ActivePowerRecovery(active_power_recovery::ActivePowerRecoverySpec) = "active_power_recovery",
            /// Ride through positive-sequence phase-angle jumps up to a size.
            PhaseJump(phase_jump::PhaseJumpSpec) = "phase_jump",
            /// Ride through a number of disturbances within a time window.
            ConsecutiveDisturbances(consecutive::ConsecutiveSpec) = "consecutive_disturbances",
            /// "Below (above) f Hz for up to d s" rows of frequency ride-through.
            FrequencyTable(frequency_table::FrequencyTableSpec) = "frequency_table",
            /// Ride through a rate of change of frequency up to a limit.
            Rocof(rocof::RocofSpec) = "rocof",
        }
    };
}
pub(crate) use check_types;

/// Makes [`CheckKind`] from the list (the spec types are not looked at).
macro_rules! define_kinds {
    ($( $(#[$doc:meta])* $variant:ident($module:ident :: $spec:ident) = $name:literal, )*) => {
        /// The type of a check result: a rule-set check type, or one of the
        /// checks holdfast adds itself.
        #[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Serialize, Deserialize, JsonSchema)]
        pub enum CheckKind {
            $( #[serde(rename = $name)] $variant, )*
            /// Did the unit stay connected (every recording).
            #[serde(rename = "connection")]
            Connection,
            /// Did the recording apply the planned test (a plan's `expect`).
            #[serde(rename = "test_realisation")]
            TestRealisation,
        }

        impl CheckKind {
            pub fn name(self) -> &'static str {
                match self {
                    $( CheckKind::$variant => $name, )*
                    CheckKind::Connection => "connection",
                    CheckKind::TestRealisation => "test_realisation",
                }
            }
        }
    };
}

check_types!(define_kinds);

/// The unit of a check's measured value, limit and margin.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize, JsonSchema)]
pub enum Unit {
    #[serde(rename = "pu")]
    Pu,
    #[serde(rename = "s")]
    S,
    /// Degrees (phase angle).
    #[serde(rename = "deg")]
    Deg,
    #[serde(rename = "Hz")]
    Hz,
    #[serde(rename = "Hz/s")]
    HzPerS,
    /// A number of disturbances.
    #[serde(rename = "count")]
    Count,
}

impl Unit {
    pub fn name(self) -> &'static str {
        match self {
            Unit::Pu => "pu",
            Unit::S => "s",
            Unit::Deg => "deg",
            Unit::Hz => "Hz",
            Unit::HzPerS => "Hz/s",
            Unit::Count => "count",
        }
    }
}

display_as_name!(CheckKind, Unit);
