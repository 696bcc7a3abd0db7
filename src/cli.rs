//! Command-line definitions: raw arguments become typed settings here, once.

use crate::analysis::events::{default, ApplicableVoltage};
use crate::error::UsageError;
use crate::import::comtrade::cfg::{DataType, Revision};
use crate::import::{ChannelMap, ImportOptions};
use crate::model::{ChannelKey, Connection, CurrentUnit, PhaseOrder, Ratings, VoltageUnit};
use crate::synth::{DeadBandMode, Delimiter, SynthLayout, TimeFormat};
use clap::{Args, Parser, Subcommand};
use std::path::PathBuf;

pub const CAUTION: &str = "Results support engineering judgement; they are not a certification. \
The applicable grid code, the network operator and licensed professional practice decide.";

#[derive(Parser, Debug)]
#[command(
    name = "holdfast",
    version,
    about = "Checks fault ride-through recordings of grid-connected generators against grid-code rule sets",
    after_help = CAUTION
)]
pub struct Cli {
    #[command(subcommand)]
    pub command: Command,
}

#[derive(Subcommand, Debug)]
pub enum Command {
    /// Show a recording's channels, units, sampling, and the disturbances and trips found in it.
    Inspect(Box<InspectArgs>),
    /// Write a synthetic recording of a specified dip and unit response (for demos and tests).
    Synth(Box<SynthArgs>),
    /// Check recordings against a rule set: a test plan, or recordings with --rules.
    Check(Box<CheckArgs>),
    /// Work with rule sets.
    Rules(RulesArgs),
    /// Work with test plans.
    Plan(PlanArgs),
    /// Merge the shard packs of one plan (`check --shard`) into one evidence pack.
    Merge(MergeArgs),
    /// Compare a simulation with the measurement of the same test (model validation).
    Validate(Box<ValidateArgs>),
    /// Print a shell completion script (bash, zsh, fish, elvish, powershell).
    #[command(
        after_help = "For bash: holdfast completions bash > ~/.local/share/bash-completion/completions/holdfast"
    )]
    Completions {
        /// The shell.
        shell: clap_complete::Shell,
    },
    /// Write man pages (holdfast.1 and one per subcommand) into a folder.
    #[command(
        after_help = "Then: man -l DIR/holdfast.1, or copy the pages to a man1 folder on MANPATH."
    )]
    Man {
        /// Folder for the pages (created if missing).
        #[arg(short, long, value_name = "DIR")]
        out: PathBuf,
    },
}

#[derive(Args, Debug)]
pub struct PlanArgs {
    #[command(subcommand)]
    pub command: PlanCommand,
}

#[derive(Subcommand, Debug)]
pub enum PlanCommand {
    /// Print the JSON Schema of the test-plan format.
    Schema,
    /// Write a test plan from a folder of recordings: one test per recording
    /// (CSV, COMTRADE .cfg/.cff; sub-folders included), the channels found in
    /// each, and the unit's ratings and the rule set left to fill in.
    #[command(
        after_help = "The plan is written to DIR/plan.yaml unless --out says otherwise; an existing file is kept unless --force. Fill in the values marked FILL IN, then run `holdfast check PLAN`."
    )]
    Init(PlanInitArgs),
}

#[derive(Args, Debug)]
#[command(
    after_help = "The two recordings are aligned on their disturbance starts (the alignment is stated in the report; --offset adds to it). Per window (pre-fault, fault and post-fault, each without its transient part) and quantity: ME, MAE and MXE in pu against the rule's limits. Writes validation.json (schemas/validation-results-v1.schema.json), validation.csv, validation.html and plots/ to --out.\nExit status: 0 every compared window passed, 1 some failed or could not be judged, 2 the input could not be used.",
    allow_negative_numbers = true
)]
pub struct ValidateArgs {
    /// The measured recording (CSV or COMTRADE; waveforms or RMS level).
    pub measured: PathBuf,
    /// The simulated recording of the same test.
    pub simulated: PathBuf,
    /// Validation rule (YAML; `holdfast rules schema --validation` prints its schema).
    #[arg(long, value_name = "RULE.yaml")]
    pub rules: PathBuf,
    /// Seconds added to the automatic alignment (positive: the simulated
    /// event is placed later).
    #[arg(long, default_value_t = 0.0, value_name = "S")]
    pub offset: f64,
    #[command(flatten)]
    pub ratings: RatingArgs,
    #[command(flatten)]
    pub map: MapArgs,
    /// Channel mapping of the simulated recording, KEY=COLUMN, repeatable
    /// (default: the --map of the measured one).
    #[arg(long = "sim-map", value_name = "KEY=COLUMN")]
    pub sim_map: Vec<String>,
    /// Choose a parameter of the validation rule: NAME=VALUE, repeatable.
    #[arg(long = "set", value_name = "NAME=VALUE")]
    pub set: Vec<String>,
    /// Directory for the validation pack.
    #[arg(long, default_value = "holdfast-validation", value_name = "DIR")]
    pub out: PathBuf,
    /// Print validation.json to stdout instead of the summary.
    #[arg(long)]
    pub json: bool,
}

#[derive(Args, Debug)]
#[command(
    after_help = "Refuses shards of another plan, rule set or tool version and names missing shards and tests. Exit status: 0 every test passed, 1 some test failed or was inconclusive, 2 the shards could not be merged."
)]
pub struct MergeArgs {
    /// The shard packs (each written by `check --shard K/N`).
    #[arg(required = true, value_name = "SHARD_DIR")]
    pub shards: Vec<PathBuf>,
    /// Directory for the merged evidence pack.
    #[arg(long, default_value = "holdfast-report", value_name = "DIR")]
    pub out: PathBuf,
    /// Print nothing but errors.
    #[arg(long, short = 'q')]
    pub quiet: bool,
}

#[derive(Args, Debug)]
pub struct PlanInitArgs {
    /// Folder with the recordings.
    pub dir: PathBuf,
    /// Where to write the plan (default DIR/plan.yaml).
    #[arg(short, long, value_name = "FILE")]
    pub out: Option<PathBuf>,
    /// Replace an existing plan file.
    #[arg(long)]
    pub force: bool,
}

#[derive(Args, Debug)]
#[command(
    after_help = "Exit status: 0 every test passed (or was not applicable), 1 some test failed or was inconclusive, 2 the input could not be used.",
    allow_negative_numbers = true
)]
pub struct CheckArgs {
    /// A test plan (PLAN.yaml), or recordings when --rules is given.
    #[arg(required = true, value_name = "PLAN|RECORDING")]
    pub inputs: Vec<PathBuf>,
    /// Rule set for a one-off check of the recordings given (no plan file).
    #[arg(long, value_name = "RULES.yaml")]
    pub rules: Option<PathBuf>,
    /// Directory for the evidence pack (index.html, report.html, results.json, tests.csv, summary.csv, rules/, plots/).
    #[arg(long, default_value = "holdfast-report", value_name = "DIR")]
    pub out: PathBuf,
    /// Also write each figure as PNG beside its SVG (for word processors;
    /// rendering PNG takes about as long as the rest of the check).
    #[arg(long)]
    pub png: bool,
    /// Print results.json to stdout instead of the table (the pack is
    /// written as usual).
    #[arg(long, conflicts_with = "quiet")]
    pub json: bool,
    /// Print nothing but errors; the exit status gives the verdict.
    #[arg(long, short = 'q')]
    pub quiet: bool,
    /// Verdict colours in the table: auto (on a terminal, unless NO_COLOR
    /// is set or TERM is dumb), always or never.
    #[arg(long, value_enum, default_value_t = ColorChoice::Auto, value_name = "WHEN")]
    pub color: ColorChoice,
    /// Tests evaluated at once (0: one per core).
    #[arg(long, default_value_t = 0, value_name = "N")]
    pub jobs: usize,
    /// Evaluate shard K of N of the plan's tests (every N-th test from the
    /// K-th, in plan order) and write a shard pack for `holdfast merge`;
    /// `auto` reads K and N from Slurm (SLURM_ARRAY_TASK_ID with
    /// SLURM_ARRAY_TASK_MIN and SLURM_ARRAY_TASK_COUNT) or Kubernetes
    /// (JOB_COMPLETION_INDEX with HOLDFAST_SHARDS).
    #[arg(long, value_name = "K/N|auto")]
    pub shard: Option<String>,
    /// Exit 0 once every test was evaluated, whatever the verdicts (for
    /// schedulers, where a failed verdict would mark the job failed);
    /// errors still exit 2.
    #[arg(long)]
    pub exit_zero_when_evaluated: bool,
    /// Choose a rule-set parameter: NAME=VALUE, repeatable (over the plan's values).
    #[arg(long = "set", value_name = "NAME=VALUE")]
    pub set: Vec<String>,
    #[command(flatten)]
    pub ratings: RatingArgs,
    #[command(flatten)]
    pub map: MapArgs,
}

/// When the terminal table is coloured.
#[derive(Clone, Copy, Debug, PartialEq, Eq, clap::ValueEnum)]
pub enum ColorChoice {
    Auto,
    Always,
    Never,
}

impl ColorChoice {
    /// Whether to colour output going to a terminal (`tty`) with the
    /// environment's `NO_COLOR` and `TERM`.
    pub fn decide(self, tty: bool, no_color: Option<&str>, term: Option<&str>) -> bool {
        match self {
            ColorChoice::Always => true,
            ColorChoice::Never => false,
            ColorChoice::Auto => {
                tty && no_color.is_none_or(|v| v.is_empty()) && term != Some("dumb")
            }
        }
    }
}

#[derive(Args, Debug)]
pub struct RulesArgs {
    #[command(subcommand)]
    pub command: RulesCommand,
}

#[derive(Subcommand, Debug)]
pub enum RulesCommand {
    /// Validate a rule set; reports every problem found, with line and column.
    Lint {
        /// Rule-set file (YAML).
        file: PathBuf,
        /// Choose a parameter: NAME=VALUE, repeatable.
        #[arg(long = "set", value_name = "NAME=VALUE")]
        set: Vec<String>,
    },
    /// Draw each envelope and duration table and each reactive-current characteristic (SVG and PNG).
    Plot {
        /// Rule-set file (YAML).
        file: PathBuf,
        /// Directory for the figures.
        #[arg(long, default_value = "holdfast-rules-plots", value_name = "DIR")]
        out: PathBuf,
        /// Choose a parameter: NAME=VALUE, repeatable.
        #[arg(long = "set", value_name = "NAME=VALUE")]
        set: Vec<String>,
    },
    /// Print the JSON Schema of the rule-set format (or, with --validation,
    /// of the validation rule format).
    Schema {
        /// The validation rule format instead.
        #[arg(long)]
        validation: bool,
    },
    /// List the rule sets shipped with holdfast: title, source, parameters.
    List {
        /// As JSON (an array, one object per rule set).
        #[arg(long)]
        json: bool,
    },
    /// Print a shipped rule set's YAML (by its id or file name), to copy and adapt.
    Export {
        /// Rule-set id or file name, as `rules list` shows them.
        id: String,
    },
}

/// The unit's ratings (shared by `inspect` and the one-off `check`).
#[derive(Args, Debug, Clone, Default)]
pub struct RatingArgs {
    /// Rated line-to-line RMS voltage Un, kV.
    #[arg(long, value_name = "KV")]
    pub rated_kv: Option<f64>,
    /// Rated apparent power Sn, MVA.
    #[arg(long, value_name = "MVA")]
    pub rated_mva: Option<f64>,
    /// Nominal frequency, Hz (50 or 60).
    #[arg(long, value_name = "HZ")]
    pub frequency: Option<f64>,
}

impl RatingArgs {
    /// Ratings when both kV and MVA are given; checks values.
    pub fn ratings(&self) -> Result<Option<Ratings>, UsageError> {
        let check = |name: &str, v: f64| {
            if v.is_finite() && v > 0.0 {
                Ok(v)
            } else {
                Err(UsageError(format!(
                    "{name} must be a positive number, got {v}"
                )))
            }
        };
        if let Some(f) = self.frequency {
            check("--frequency", f)?;
        }
        match (self.rated_kv, self.rated_mva) {
            (Some(kv), Some(mva)) => Ok(Some(Ratings {
                rated_kv: check("--rated-kv", kv)?,
                rated_mva: check("--rated-mva", mva)?,
            })),
            (None, None) => Ok(None),
            (Some(_), None) => Err(UsageError("--rated-kv needs --rated-mva as well".into())),
            (None, Some(_)) => Err(UsageError("--rated-mva needs --rated-kv as well".into())),
        }
    }
}

/// How recording columns map to channels.
#[derive(Args, Debug, Clone, Default)]
pub struct MapArgs {
    /// Map a channel to a column: KEY=COLUMN, repeatable. Keys: time, va, vb, vc, ia, ib, ic,
    /// v_pos, p, q, ip, iq, status, vn (residual voltage va+vb+vc with phase-to-phase voltages). Columns named t/time, va, vb, vc, ia, ib, ic (any case)
    /// are found without it.
    #[arg(long = "map", value_name = "KEY=COLUMN")]
    pub map: Vec<String>,
    /// Unit of the voltage columns.
    #[arg(long, value_enum, value_name = "UNIT")]
    pub voltage_unit: Option<VoltageUnit>,
    /// Unit of the current columns.
    #[arg(long, value_enum, value_name = "UNIT")]
    pub current_unit: Option<CurrentUnit>,
    /// phase_to_neutral (default) or phase_to_phase (va, vb, vc then hold v_ab, v_bc, v_ca).
    #[arg(long, value_enum, value_name = "CONNECTION")]
    pub voltage_connection: Option<Connection>,
    /// Phase rotation of the recorded channels: abc (default) or acb (b and c are swapped
    /// for voltages and currents before the analysis).
    #[arg(long, value_enum, value_name = "ORDER")]
    pub phase_order: Option<PhaseOrder>,
    /// Text encoding of channel names (utf-8, windows-1251, cp866, gbk, latin1 …); detected
    /// when not given.
    #[arg(long, value_name = "LABEL")]
    pub encoding: Option<String>,
    /// Sampling rate, Hz, of a CSV recording that has no time column.
    #[arg(long, value_name = "HZ")]
    pub sample_rate: Option<f64>,
    /// Largest accepted deviation of a sample step from the nominal step, as a fraction.
    #[arg(long, value_name = "FRACTION", default_value_t = 0.10)]
    pub step_tolerance: f64,
}

impl MapArgs {
    pub fn channel_map(&self) -> Result<ChannelMap, UsageError> {
        let mut m = ChannelMap::default();
        for item in &self.map {
            let (k, col) = item.split_once('=').ok_or_else(|| {
                UsageError(format!(
                    "--map '{item}' is not KEY=COLUMN (e.g. --map va=U_L1)"
                ))
            })?;
            if col.trim().is_empty() {
                return Err(UsageError(format!("--map '{item}' names no column")));
            }
            if k.trim().eq_ignore_ascii_case("time") {
                m.time = Some(col.trim().to_string());
                continue;
            }
            let key = ChannelKey::parse(k).ok_or_else(|| {
                UsageError(format!(
                    "--map '{item}': unknown key '{k}'; keys are time, {}",
                    ChannelKey::ALL.map(|k| k.name()).join(", ")
                ))
            })?;
            m.keys.push((key, col.trim().to_string()));
        }
        m.voltage_unit = self.voltage_unit;
        m.current_unit = self.current_unit;
        m.connection = self.voltage_connection;
        m.phase_order = self.phase_order;
        if let Some(e) = &self.encoding {
            m.encoding = Some(crate::import::encoding_for(e).ok_or_else(|| {
                UsageError(format!(
                    "--encoding '{e}' is not known; use e.g. utf-8, windows-1251, cp866, gbk, latin1"
                ))
            })?);
        }
        if let Some(r) = self.sample_rate {
            if !(r > 0.0 && r.is_finite()) {
                return Err(UsageError(format!("--sample-rate {r} must be positive")));
            }
            m.sample_rate_hz = Some(r);
        }
        Ok(m)
    }

    pub fn import_options(&self) -> Result<ImportOptions, UsageError> {
        if !(self.step_tolerance > 0.0 && self.step_tolerance < 1.0) {
            return Err(UsageError(
                "--step-tolerance must be between 0 and 1".into(),
            ));
        }
        Ok(ImportOptions {
            step_tolerance: self.step_tolerance,
            threads: 0,
            partial: false,
        })
    }
}

#[derive(Args, Debug)]
#[command(allow_negative_numbers = true)]
pub struct InspectArgs {
    /// Recording file: CSV (.csv, .txt, .tsv) or COMTRADE (.cfg with its .dat, or .cff).
    pub recording: PathBuf,
    #[command(flatten)]
    pub ratings: RatingArgs,
    #[command(flatten)]
    pub map: MapArgs,
    /// Voltage used to find disturbances.
    #[arg(
        long,
        value_enum,
        default_value = "positive_sequence",
        value_name = "VOLTAGE"
    )]
    pub applicable: ApplicableVoltage,
    /// A disturbance starts below this voltage, pu.
    #[arg(long, default_value_t = default::BELOW_PU, value_name = "PU")]
    pub below_pu: f64,
    /// A disturbance starts above this voltage, pu.
    #[arg(long, default_value_t = default::ABOVE_PU, value_name = "PU")]
    pub above_pu: f64,
    /// Print JSON instead of text.
    #[arg(long)]
    pub json: bool,
}

#[derive(Args, Debug)]
#[command(args_override_self = true, allow_negative_numbers = true)]
pub struct SynthArgs {
    /// Output file: .csv, or COMTRADE .cfg (with .dat beside it) or .cff.
    #[arg(long, short, value_name = "FILE")]
    pub out: PathBuf,
    /// COMTRADE data type.
    #[arg(
        long,
        value_enum,
        ignore_case = true,
        default_value = "binary",
        value_name = "TYPE"
    )]
    pub comtrade_type: DataType,
    /// COMTRADE revision.
    #[arg(long, value_enum, default_value = "2013", value_name = "YEAR")]
    pub revision: Revision,
    /// Rated line-to-line voltage, kV.
    #[arg(long, default_value_t = 0.69)]
    pub rated_kv: f64,
    /// Rated apparent power, MVA.
    #[arg(long, default_value_t = 4.2)]
    pub rated_mva: f64,
    /// Nominal frequency, Hz.
    #[arg(long, default_value_t = 50.0)]
    pub frequency: f64,
    /// Sampling rate, Hz.
    #[arg(long, default_value_t = 10_000.0)]
    pub sample_rate: f64,
    /// Recording length, s.
    #[arg(long, default_value_t = 3.0)]
    pub duration: f64,
    /// Fault inception, s from the first sample.
    #[arg(long, default_value_t = 1.0)]
    pub fault_start: f64,
    /// Fault duration, s.
    #[arg(long, default_value_t = 0.5)]
    pub fault_duration: f64,
    /// Residual phase-to-neutral voltage of all phases during the fault, pu
    /// (above 1 gives a swell).
    #[arg(long, default_value_t = 0.2)]
    pub residual: f64,
    /// Per-phase residuals A,B,C in pu (overrides --residual), e.g. 0.3,1,1.
    #[arg(long, value_name = "A,B,C")]
    pub residuals: Option<String>,
    /// Phase jump of the voltage during the fault, degrees.
    #[arg(long, default_value_t = 0.0)]
    pub phase_jump: f64,
    /// Voltage after the fault, pu.
    #[arg(long, default_value_t = 1.0)]
    pub recovery: f64,
    /// Voltage before the fault, pu.
    #[arg(long, default_value_t = 1.0)]
    pub prefault: f64,
    /// Pre-fault active power, pu.
    #[arg(long, default_value_t = 0.8)]
    pub p0: f64,
    /// Pre-fault reactive power, pu (positive: over-excited).
    #[arg(long, default_value_t = 0.0)]
    pub q0: f64,
    /// Reactive current gain k (extra Iq per pu of voltage deviation).
    #[arg(long, default_value_t = 2.0)]
    pub k_gain: f64,
    /// Dead band of the voltage deviation, pu.
    #[arg(long, default_value_t = 0.1)]
    pub dead_band: f64,
    /// offset: k·(|ΔV| − db); full: k·|ΔV| once outside the dead band.
    #[arg(long, value_enum, default_value = "offset")]
    pub dead_band_mode: DeadBandMode,
    /// First-order time constant of the current response, s.
    #[arg(long, default_value_t = 0.01)]
    pub iq_tau: f64,
    /// Current limit, pu.
    #[arg(long, default_value_t = 1.1)]
    pub current_limit: f64,
    /// Negative-sequence reactive current gain (inductive).
    #[arg(long, default_value_t = 0.0)]
    pub k2_gain: f64,
    /// Active current recovery rate after the fault, pu/s.
    #[arg(long, default_value_t = 5.0)]
    pub p_ramp: f64,
    /// The unit trips (current and status to zero) at this time, s.
    #[arg(long)]
    pub trip_at: Option<f64>,
    /// Voltage profile instead of one fault: TIME:PU,... — from each TIME (s) every phase is at
    /// PU; the last step is the recovery (overrides --fault-start, --fault-duration, --residual,
    /// --recovery), e.g. 1.0:0.2,1.25:0.75,1.4:1.0 or two faults 1.0:0.3,1.2:1.0,1.5:0.3,1.7:1.0.
    #[arg(long, value_name = "LIST")]
    pub steps: Option<String>,
    /// Grid frequency against time instead of the nominal one: TIME:HZ,... linear between the
    /// points (the first value before the first time, the last after), e.g. 1.0:50,3.0:49 for a
    /// ramp of −0.5 Hz/s; the phase follows it continuously.
    #[arg(long, value_name = "LIST")]
    pub frequency_profile: Option<String>,
    /// Phase rotation written to the file: abc, or acb (the b and c columns hold phases c and b).
    #[arg(long, value_enum, default_value = "abc", value_name = "ORDER")]
    pub phase_order: PhaseOrder,
    /// Momentary cessation: current blocked from..to, s, e.g. 1.0,1.2.
    #[arg(long, value_name = "FROM,TO")]
    pub block: Option<String>,
    /// Harmonics ORDER:AMPLITUDE_PU,..., e.g. 5:0.02,7:0.01.
    #[arg(long, value_name = "LIST")]
    pub harmonics: Option<String>,
    /// Standard deviation of Gaussian noise on every channel, pu.
    #[arg(long, default_value_t = 0.0)]
    pub noise: f64,
    /// Random seed for the noise.
    #[arg(long, default_value_t = 1)]
    pub seed: u64,
    /// waveform (va..ic) or rms (v_pos, p, q).
    #[arg(long, value_enum, default_value = "waveform")]
    pub layout: SynthLayout,
    /// Voltage unit of the file.
    #[arg(long, value_enum, default_value = "V")]
    pub voltage_unit: VoltageUnit,
    /// Current unit of the file.
    #[arg(long, value_enum, default_value = "A")]
    pub current_unit: CurrentUnit,
    /// Voltage connection of the file.
    #[arg(long, value_enum, default_value = "phase_to_neutral")]
    pub voltage_connection: Connection,
    /// Field delimiter.
    #[arg(long, value_enum, default_value = "comma")]
    pub delimiter: Delimiter,
    /// Write numbers with a decimal comma (needs semicolon or tab delimiter).
    #[arg(long)]
    pub decimal_comma: bool,
    /// Time column: seconds, or ISO-8601 timestamps.
    #[arg(long, value_enum, default_value = "seconds")]
    pub time_format: TimeFormat,
    /// Add a status column (1 connected, 0 tripped).
    #[arg(long)]
    pub status: bool,
    /// COMTRADE station name (no commas).
    #[arg(long, default_value = crate::synth::DEFAULT_STATION)]
    pub station: String,
    /// COMTRADE recording device id (no commas).
    #[arg(long, default_value = crate::synth::DEFAULT_DEVICE)]
    pub device: String,
}

/// Parses `--set NAME=VALUE` flags.
pub fn parse_set(items: &[String]) -> Result<std::collections::BTreeMap<String, f64>, UsageError> {
    let mut out = std::collections::BTreeMap::new();
    for item in items {
        let (k, v) = item.split_once('=').ok_or_else(|| {
            UsageError(format!(
                "--set '{item}' is not NAME=VALUE (e.g. --set t_clear=0.15)"
            ))
        })?;
        let v: f64 = v
            .trim()
            .parse()
            .ok()
            .filter(|x: &f64| x.is_finite())
            .ok_or_else(|| UsageError(format!("--set '{item}': '{v}' is not a number")))?;
        out.insert(k.trim().to_string(), v);
    }
    Ok(out)
}

/// The command line as run, quoted where a shell would need it.
pub fn command_line() -> String {
    std::env::args()
        .map(|a| {
            if a.is_empty() || a.contains(|c: char| c.is_whitespace() || "'\"$`\\".contains(c)) {
                format!("'{}'", a.replace('\'', "'\\''"))
            } else {
                a
            }
        })
        .collect::<Vec<_>>()
        .join(" ")
}
