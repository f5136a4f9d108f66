//! `arcwise simulate`: a scenario → training arc, next arc, truth ephemeris, forces.yaml.

use crate::error::CliError;
use crate::report::write_report;
use clap::Args as ClapArgs;
use learned_forces::scenario::ScenarioSpec;
use propagator::ephemeris::write_atomically;
use std::path::{Path, PathBuf};

/// Options of `arcwise simulate`.
#[derive(ClapArgs, Debug)]
pub struct Args {
    /// The scenario file (see examples/scenarios/).
    #[arg(value_name = "SCENARIO.yaml")]
    scenario: PathBuf,
    /// Output folder (created if needed).
    #[arg(long, value_name = "DIR")]
    out: PathBuf,
    /// Override the scenario's noise seed.
    #[arg(long)]
    seed: Option<u64>,
    /// Write a JSON report here (default DIR/simulate.json).
    #[arg(long, value_name = "R.json")]
    report: Option<PathBuf>,
}

/// The files written into the output folder.
const OUTPUT_FILES: [&str; 4] = ["train.csv", "next.csv", "truth.oem", "forces.yaml"];

/// Runs the command.
pub fn run(a: Args) -> Result<(), CliError> {
    let file = |name: &str| a.out.join(name);
    let report_path = a.report.clone().unwrap_or_else(|| file("simulate.json"));
    let written: Vec<PathBuf> = OUTPUT_FILES.iter().map(|f| file(f)).collect();
    let mut outputs: Vec<(&str, &Path)> = written.iter().map(|p| ("--out", p.as_path())).collect();
    outputs.push(("--report", &report_path));
    crate::paths::check_distinct(&[("SCENARIO.yaml", &a.scenario)], &outputs)?;
    let mut spec = ScenarioSpec::load(&a.scenario).map_err(CliError::input)?;
    if let Some(s) = a.seed {
        spec.tracking.seed = s;
    }
    let sim = spec.simulate(&a.scenario).map_err(CliError::input)?;
    if sim.decayed {
        return Err(CliError::input(format!(
            "{}: the truth orbit decays inside the simulated span",
            a.scenario.display()
        )));
    }
    if sim.train.observations.len() < 3 {
        return Err(CliError::input(format!(
            "{}: the tracking schedule gives only {} training observations",
            a.scenario.display(),
            sim.train.observations.len()
        )));
    }
    write_atomically(&file("train.csv"), sim.train.to_csv().as_bytes()).map_err(CliError::input)?;
    write_atomically(&file("next.csv"), sim.next.to_csv().as_bytes()).map_err(CliError::input)?;
    sim.truth
        .save(&file("truth.oem"))
        .map_err(CliError::input)?;
    // Both go into a YAML comment: quoted and escaped, so neither can add a line.
    let header = format!(
        "# Known force model of scenario {:?} (object {:?}), written by arcwise simulate.\n",
        a.scenario.display().to_string(),
        spec.object_name
    );
    write_atomically(
        &file("forces.yaml"),
        format!("{header}{}", sim.forces_yaml).as_bytes(),
    )
    .map_err(CliError::input)?;
    println!(
        "simulated {}: {} training observations ({} → {}), {} next-arc observations, σ = {} m, seed {}; files in {}",
        spec.object_name,
        sim.train.observations.len(),
        sim.train.start(),
        sim.train.end(),
        sim.next.observations.len(),
        spec.tracking.sigma_km * 1e3,
        spec.tracking.seed,
        a.out.display()
    );
    let report = serde_json::json!({
        "command": "simulate",
        "arcwise_version": env!("CARGO_PKG_VERSION"),
        "scenario_file": a.scenario.display().to_string(),
        "object_name": spec.object_name,
        "seed": spec.tracking.seed,
        "sigma_km": spec.tracking.sigma_km,
        "train_observations": sim.train.observations.len(),
        "next_observations": sim.next.observations.len(),
        "train_start_utc": sim.train.start().to_utc_string(),
        "train_end_utc": sim.train.end().to_utc_string(),
        "truth_terms": spec.truth.iter().map(|t| format!("{t:?}")).collect::<Vec<_>>(),
        "files": OUTPUT_FILES,
    });
    write_report(&report_path, &report)
}
