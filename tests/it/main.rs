//! The integration tests, in one test binary: the library's computations
//! against outside references, and the binary's behaviour end to end.
//! Shared helpers live in `common`.

mod common;

mod analysis;
mod angle;
mod checks;
mod cli_hostile;
mod cli_inputs;
mod cli_rules;
mod cli_verdicts;
mod comtrade;
mod contract;
mod csv_import;
mod docs;
mod evidence;
mod figures;
mod library;
mod plans;
mod recorder_files;
mod report;
mod robustness;
mod shards;
mod slurm;
mod table_vs_envelope;
mod validation;
mod views;
