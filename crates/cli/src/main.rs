//! The `twistlot` command: parses arguments, opens the plant, calls the crates, prints.
//!
//! Nothing here computes; every job lives in a library crate so it can be tested and
//! reused. One file per command under [`commands`]; exit codes are part of the
//! interface (see `--help`).

mod commands;
mod output;

use clap::{Parser, Subcommand};
use std::process::ExitCode;

/// Exit status when the command ran but some input files were rejected.
pub const EXIT_SOME_REJECTED: u8 = 3;

const EXIT_HELP: &str = "Exit status: 0 when everything was read; 3 when the command ran but some inputs \
(export files, part specs, plugin manifests, paths among several that do not exist) were rejected, each listed \
with its reason; 1 when the command could not run (no plant config, no path named exists, a shift folder \
without a lot list or without exports, a broken switching record); 2 for bad arguments.";

const PLAN_EXIT_HELP: &str = "Exit status: 0 when every listed lot is planned; 3 when the plan was made but \
some lots are left out (each listed with its reason); 1 when no plan could be made; 2 for bad arguments.";

/// The caution printed after results that people act on.
pub const CAUTION: &str =
    "Caution: results come only from the rig data supplied. The customer's drawing and \
specification govern acceptance; local codes and licensed practice govern safety. Rigs must be within \
calibration. A loaded torsion spring stores energy and can leave a fixture violently.";

#[derive(Parser)]
#[command(name = "twistlot", version, about = "Plan, read, judge and decide torsion-spring test lots.", after_help = EXIT_HELP)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Read rig exports (files or folders) into canonical curves and account for every file.
    #[command(after_help = EXIT_HELP)]
    Ingest(commands::ingest::Args),
    /// Plan a shift's tests: sample counts, rigs, order and reference checks; writes the plan and work lists.
    #[command(after_help = PLAN_EXIT_HELP)]
    Plan(commands::plan::Args),
    /// Run a whole shift: read every export, judge every part, decide every listed lot, write the reports.
    #[command(after_help = EXIT_HELP)]
    Shift(commands::shift::Args),
    /// Measure each tested part's curve and judge it against its part spec.
    #[command(after_help = EXIT_HELP)]
    Evaluate(commands::evaluate::Args),
    /// What a spring's drawing geometry predicts: rate, torque, stress, wound-down size (EN 13906-3 forms).
    #[command(after_help = EXIT_HELP)]
    Theory(commands::theory::Args),
    /// The dynamic rate from free-decay (free-swing) records: one known inertia, or two added ones.
    #[command(after_help = EXIT_HELP)]
    Swing(commands::swing::Args),
    /// Look up attribute sampling plans, or design plans from producer's and consumer's risks.
    #[command(args_conflicts_with_subcommands = true, after_help = EXIT_HELP)]
    Sampling(commands::sampling::Args),
    /// Show each part's inspection severity from the plant's switching record, or resume a discontinued part.
    #[command(args_conflicts_with_subcommands = true, after_help = EXIT_HELP)]
    Switching(commands::switching::Args),
    /// List and validate the plugins: built in, and found in the plant's and given folders.
    #[command(after_help = EXIT_HELP)]
    Plugins(commands::plugins::Args),
    /// Generate invented rig exports: the demo shift or the benchmark's data.
    #[command(subcommand)]
    Synth(commands::synth::Command),
}

fn main() -> ExitCode {
    // Output piped into `head` should end quietly, as other command-line tools do.
    #[cfg(unix)]
    // SAFETY: restoring the default SIGPIPE action before any thread starts has no other effect.
    unsafe {
        libc::signal(libc::SIGPIPE, libc::SIG_DFL);
    }
    let cli = Cli::parse();
    let result = match cli.command {
        Command::Ingest(args) => commands::ingest::run(args),
        Command::Plan(args) => commands::plan::run(args),
        Command::Shift(args) => commands::shift::run(args),
        Command::Evaluate(args) => commands::evaluate::run(args),
        Command::Theory(args) => commands::theory::run(args),
        Command::Swing(args) => commands::swing::run(args),
        Command::Sampling(args) => commands::sampling::run(args),
        Command::Switching(args) => commands::switching::run(args),
        Command::Plugins(args) => commands::plugins::run(args),
        Command::Synth(command) => commands::synth::run(command),
    };
    match result {
        Ok(code) => code,
        Err(err) => {
            eprintln!("twistlot: {err:#}");
            ExitCode::FAILURE
        }
    }
}
