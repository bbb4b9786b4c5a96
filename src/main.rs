//! The `candor` command line: argument parsing, and the mapping of each
//! command's status or error to an exit code. Every command's logic lives
//! in the library's `commands` module.

use candor::commands::{self, Output};
use clap::{Parser, Subcommand};
use std::io::{IsTerminal, Write as _};
use std::process::ExitCode;

#[derive(Parser)]
#[command(
    name = "candor",
    version,
    about = "Compare model families and post-hoc calibration methods with cross-fitted calibration folds"
)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Train, calibrate and evaluate everything a manifest lists, then print
    /// calibration error before and after each method.
    Run(commands::run::RunArgs),
    /// Assemble the results and report of a sharded run (`run --shard`),
    /// once every shard is done; lists missing cells and their shards.
    Merge(commands::merge::MergeArgs),
    /// Write the tables, diagnosis, ranking, figures and HTML report of a
    /// finished results folder into its `report/` folder.
    Report(commands::report::ReportArgs),
    /// Check a results folder against a baseline's rules: exit 0 when every
    /// rule holds, 1 on a regression, 2 on a usage or input error.
    Gate(commands::gate::GateArgs),
    /// Score predictions made elsewhere: every metric, the diagnosis, the
    /// reliability diagrams, and every calibration method cross-fitted over
    /// the rows, written as a results folder with its report.
    Score(commands::score::ScoreArgs),
    /// Apply a saved calibration map to predictions; writes the CSV with a
    /// `calibrated_<class>` column per class added.
    Apply(commands::score::ApplyArgs),
    /// Write the demo scenario's synthetic predictions (see the README).
    Demo(commands::demo::DemoArgs),
    /// Bundled datasets, and checking or adding an in-house CSV.
    Data {
        #[command(subcommand)]
        command: commands::data::DataCommand,
    },
    /// Check a manifest and its datasets without training anything.
    Check(commands::check::CheckArgs),
    /// List what a manifest can name.
    List(commands::list::ListArgs),
}

fn main() -> ExitCode {
    let command = Cli::parse().command;
    // The gate's contract: 2 for usage and input errors (clap already exits
    // with 2 on bad arguments), so CI can tell them from a regression.
    let error_code = if matches!(command, Command::Gate(_)) {
        2
    } else {
        1
    };
    let mut out = Output::default();
    let status = match command {
        Command::Run(args) => {
            commands::run::execute(args, std::io::stderr().is_terminal(), &mut out)
        }
        Command::Merge(args) => commands::merge::execute(args, &mut out),
        Command::Report(args) => commands::report::execute(args, &mut out),
        Command::Gate(args) => commands::gate::execute(args, &mut out),
        Command::Score(args) => commands::score::execute(args, &mut out),
        Command::Apply(args) => commands::score::apply(args, &mut out),
        Command::Demo(args) => commands::demo::execute(args, &mut out),
        Command::Data { command } => commands::data::execute(command, &mut out),
        Command::Check(args) => commands::check::execute(args, &mut out),
        Command::List(args) => commands::list::execute(args, &mut out),
    };
    eprint!("{}", out.notes);
    emit(&out.text);
    match status {
        Ok(status) => ExitCode::from(status.code()),
        Err(e) => {
            // One `error:` line per problem (a manifest may have several).
            for line in e.to_string().lines() {
                eprintln!("error: {line}");
            }
            ExitCode::from(error_code)
        }
    }
}

/// Writes to standard output; a closed pipe (as with `| head`) ends the
/// program quietly instead of panicking.
fn emit(text: &str) {
    let mut stdout = std::io::stdout().lock();
    if let Err(e) = stdout
        .write_all(text.as_bytes())
        .and_then(|()| stdout.flush())
    {
        if e.kind() == std::io::ErrorKind::BrokenPipe {
            std::process::exit(0);
        }
        eprintln!("error: cannot write to standard output: {e}");
        std::process::exit(1);
    }
}
