//! `arcwise`: the command-line shell over the `propagator` and `learned_forces`
//! libraries. Argument parsing, progress display and reports live here; no physics.
#![cfg_attr(not(test), deny(clippy::unwrap_used, clippy::expect_used))]

pub mod commands;
mod error;
mod paths;
mod plot;
mod progress;
mod report;

use clap::{Parser, Subcommand};
use error::CliError;
use std::process::ExitCode;

/// Find the missing force in orbit tracking arcs, as a readable formula; propagate with it.
#[derive(Parser)]
#[command(name = "arcwise", version, about, long_about = None)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// The whole chain on a built-in scenario: simulate, fit, learn, build, check, screen.
    Demo(commands::demo::Args),
    /// Simulate a scenario into a training arc, a next arc and the truth (demo and test data).
    Simulate(commands::simulate::Args),
    /// Fit an arc with the known forces: state, residuals in RTN, anomaly verdict.
    Fit(commands::fit::Args),
    /// Learn the missing force of an arc as a formula: a learned-force file and a report.
    Learn(commands::learn::Args),
    /// Compile a learned-force file into a native force plugin.
    Build(commands::build::Args),
    /// Predict the next arc with and without a learned force; exit 1 if the check fails.
    Check(commands::check::Args),
    /// Propagate a state with a force model into an ephemeris (OEM or CSV).
    Propagate(commands::propagate::Args),
    /// Rank maneuver hypotheses for an arc (no maneuver, impulsive, finite burn, thrust).
    Rank(commands::rank::Args),
    /// Screen a primary against secondaries for close approaches (a screening aid).
    Screen(commands::screen::Args),
}

/// Runs one command.
fn dispatch(command: Command) -> Result<(), CliError> {
    match command {
        Command::Demo(args) => commands::demo::run(args),
        Command::Simulate(args) => commands::simulate::run(args),
        Command::Fit(args) => commands::fit::run(args),
        Command::Learn(args) => commands::learn::run(args),
        Command::Build(args) => commands::build::run(args),
        Command::Check(args) => commands::check::run(args),
        Command::Propagate(args) => commands::propagate::run(args),
        Command::Screen(args) => commands::screen::run(args),
        Command::Rank(args) => commands::rank::run(args),
    }
}

/// Runs a command given as words (`["fit", "--arc", …]`), as the demo does.
pub fn run_words(words: &[String]) -> Result<(), CliError> {
    let mut argv = vec!["arcwise".to_string()];
    argv.extend(words.iter().cloned());
    let cli = Cli::try_parse_from(&argv).map_err(|e| CliError::input(e.to_string()))?;
    dispatch(cli.command)
}

fn main() -> ExitCode {
    // Rust ignores SIGPIPE, so printing into a closed pipe (`arcwise fit … | head -1`)
    // would panic; the default action ends the process quietly, as command-line tools do.
    #[cfg(unix)]
    // SAFETY: setting a signal's disposition to its default has no preconditions.
    unsafe {
        libc::signal(libc::SIGPIPE, libc::SIG_DFL);
    }
    // SIGINT/SIGTERM: remove what the run is in the middle of writing (temporary files,
    // build folders), then exit 130 as a shell expects after an interrupt.
    let _ = ctrlc::set_handler(|| {
        propagator::cleanup::remove_all();
        std::process::exit(130);
    });
    let cli = match Cli::try_parse() {
        Ok(c) => c,
        Err(e) => {
            // Help and version go to stdout with 0; usage errors exit with 2.
            let code = if e.use_stderr() { 2 } else { 0 };
            let _ = e.print();
            return ExitCode::from(code);
        }
    };
    let result = dispatch(cli.command);
    if propagator::cleanup::interrupted() {
        // The signal handler is cleaning up; finish that here and exit as interrupted.
        propagator::cleanup::remove_all();
        return ExitCode::from(130);
    }
    // Each warning of the run once, whatever the outcome (reports carry them too).
    for w in propagator::notice::all() {
        eprintln!("arcwise: warning: {w}");
    }
    match result {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("arcwise: error: {}", e.message);
            ExitCode::from(e.code)
        }
    }
}
