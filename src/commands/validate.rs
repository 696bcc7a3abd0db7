//! `holdfast validate`: a simulated recording against the measured one of
//! the same test, under a validation rule; writes the validation pack.

use super::ExitStatus;
use crate::cli::{ValidateArgs, CAUTION};
use crate::error::InputError;
use crate::report::validation as vreport;
use crate::rules::result::Verdict;
use crate::validation::run::{analyse_one, results_of};
use std::io::{IsTerminal, Write};

pub fn run(args: &ValidateArgs) -> anyhow::Result<ExitStatus> {
    let choices = crate::cli::parse_set(&args.set)?
        .into_iter()
        .map(|(k, v)| (k, (v, "--set".to_string())))
        .collect();
    let rules = crate::validation::spec::load(&args.rules, &choices)?;
    let ratings = args.ratings.ratings()?;
    let opts = args.map.import_options()?;
    let map = args.map.channel_map()?;
    let sim_map = if args.sim_map.is_empty() {
        map.clone()
    } else {
        crate::cli::MapArgs {
            map: args.sim_map.clone(),
            ..args.map.clone()
        }
        .channel_map()?
    };
    let f = args.ratings.frequency;
    let meas = analyse_one(&args.measured, &map, &opts, ratings, f, &rules);
    let sim = analyse_one(&args.simulated, &sim_map, &opts, ratings, f, &rules);
    let (meas, sim) = match (meas, sim) {
        (Ok(a), Ok(b)) => (a, b),
        (a, b) => {
            let errs: Vec<InputError> = [a.err(), b.err()].into_iter().flatten().collect();
            return Err(crate::error::InputErrors(errs).into());
        }
    };
    let results = results_of(&rules, &meas.rec(), &sim.rec(), args.offset)?;
    let inputs = vec![
        args.measured.clone(),
        args.simulated.clone(),
        args.rules.clone(),
    ];
    let pack = crate::report::pack::PackWriter::begin(&args.out, &inputs)?;
    vreport::write_files(
        pack.dir(),
        &results,
        &meas.analysed.series,
        &sim.analysed.series,
        &rules.text,
    )?;
    pack.commit()?;
    let stdout = std::io::stdout();
    let mut out = stdout.lock();
    if args.json {
        out.write_all(&vreport::json(&results)?)?;
    } else {
        let tty = stdout.is_terminal();
        write!(out, "{}", vreport::summary(&results, tty))?;
        writeln!(
            out,
            "\nValidation pack: {}",
            crate::text::line(&args.out.display().to_string())
        )?;
        writeln!(out, "{CAUTION}")?;
    }
    Ok(if results.comparison.verdict == Verdict::Pass {
        ExitStatus::Success
    } else {
        ExitStatus::NotPassed
    })
}
