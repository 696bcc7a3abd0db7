//! holdfast checks fault ride-through (FRT) recordings of grid-connected
//! generators against grid-code rule sets.
//!
//! The pipeline runs in one direction; no stage imports a later one:
//!
//! 1. [`model`] – the recording model every importer produces (channels,
//!    units, ratings, streamed sample blocks);
//! 2. [`import`] – CSV (and COMTRADE) files into that model, streaming;
//! 3. [`analysis`] – per unit, one-cycle DFT phasors, symmetrical components,
//!    P, Q, active/reactive current, then disturbances and trips
//!    ([`analysis::events`]);
//! 4. `rules` – rule sets and the checks that turn analysed recordings into
//!    verdicts;
//! 5. `report` – renderers of those verdicts (terminal table, JSON, CSV, HTML);
//! 6. [`pipeline`] – one test from recording to evidence, a whole job in
//!    parallel;
//! 7. [`commands`] – one module per subcommand, wired up by [`cli`].
//!
//! Results support engineering judgement; they are not a certification. The
//! applicable grid code, the network operator and licensed professional
//! practice decide.

/// `Display` as the type's `name()` (the spelling files and reports use).
macro_rules! display_as_name {
    ($($t:ty),* $(,)?) => {
        $(impl std::fmt::Display for $t {
            fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
                f.write_str(self.name())
            }
        })*
    };
}

pub mod analysis;
pub mod cli;
pub mod commands;
pub mod digest;
pub mod error;
pub mod files;
pub mod import;
pub mod model;
pub mod pipeline;
pub mod plan;
pub mod report;
pub mod rules;
pub mod synth;
pub mod text;
pub mod validation;
