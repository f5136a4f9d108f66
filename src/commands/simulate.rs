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
    /// Observe with these sensors instead of positions: the arcs are the ranges and
    /// angles they measure while they see the object (mask; a telescope at night, the
    /// object lit), with their σ and bias.
    #[arg(long, value_name = "SITES.yaml")]
    sites: Option<PathBuf>,
    /// With --sites: write the measurements as a CCSDS TDM (`tdm`) or in the
    /// measurement CSV layout (`csv`).
    #[arg(long, value_name = "tdm|csv", default_value = "tdm")]
    format: String,
}

/// The files written into the output folder: the two arcs (by `arc_ext`), the truth and
/// the known forces.
fn output_files(arc_ext: &str) -> [String; 4] {
    [
        format!("train.{arc_ext}"),
        format!("next.{arc_ext}"),
        "truth.oem".into(),
        "forces.yaml".into(),
    ]
}

/// The sensors of `--sites`, on the shipped Earth orientation.
fn sensors(path: &Path) -> Result<std::sync::Arc<learned_forces::arc::Tracking>, CliError> {
    let sites = super::load_sites(path)?;
    let earth = propagator::earth::EarthOrientation::shipped().map_err(CliError::input)?;
    Ok(std::sync::Arc::new(learned_forces::arc::Tracking {
        sites,
        earth,
    }))
}

/// An arc's text in the output format.
fn arc_text(arc: &learned_forces::arc::Arc, ext: &str, object: &str) -> String {
    match (&arc.tracking, ext) {
        (Some(t), "tdm") => learned_forces::tracking_arc::to_tdm(arc, t, object),
        _ => arc.to_csv(),
    }
}

/// Runs the command.
pub fn run(a: Args) -> Result<(), CliError> {
    let file = |name: &str| a.out.join(name);
    let report_path = a.report.clone().unwrap_or_else(|| file("simulate.json"));
    let ext = match (a.sites.is_some(), a.format.as_str()) {
        (false, _) => "csv",
        (true, f @ ("tdm" | "csv")) => f,
        (true, f) => {
            return Err(CliError::input(format!(
                "--format {}: tdm or csv",
                propagator::text::sanitized(f)
            )))
        }
    };
    let names = output_files(ext);
    let written: Vec<PathBuf> = names.iter().map(|f| file(f)).collect();
    let mut outputs: Vec<(&str, &Path)> = written.iter().map(|p| ("--out", p.as_path())).collect();
    outputs.push(("--report", &report_path));
    let mut inputs: Vec<(&str, &Path)> = vec![("SCENARIO.yaml", &a.scenario)];
    if let Some(s) = &a.sites {
        inputs.push(("--sites", s));
    }
    crate::paths::check_distinct(&inputs, &outputs)?;
    let sensors = a.sites.as_deref().map(sensors).transpose()?;
    let mut spec = ScenarioSpec::load(&a.scenario).map_err(CliError::input)?;
    if let Some(s) = a.seed {
        spec.tracking.seed = s;
    }
    let sim = spec
        .simulate_with(&a.scenario, sensors.as_ref())
        .map_err(CliError::input)?;
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
    let object = &spec.object_name;
    write_atomically(&written[0], arc_text(&sim.train, ext, object).as_bytes())
        .map_err(CliError::input)?;
    write_atomically(&written[1], arc_text(&sim.next, ext, object).as_bytes())
        .map_err(CliError::input)?;
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
    let noise = match &a.sites {
        Some(p) => format!("measured by the sites of {}", p.display()),
        None => format!("σ = {} m", spec.tracking.sigma_km * 1e3),
    };
    println!(
        "simulated {}: {} training observations ({} → {}), {} next-arc observations, {noise}, seed {}; files in {}",
        spec.object_name,
        sim.train.observations.len(),
        sim.train.start(),
        sim.train.end(),
        sim.next.observations.len(),
        spec.tracking.seed,
        a.out.display()
    );
    let report = serde_json::json!({
        "command": "simulate",
        "arcwise_version": env!("CARGO_PKG_VERSION"),
        "scenario_file": a.scenario.display().to_string(),
        "object_name": spec.object_name,
        "seed": spec.tracking.seed,
        "train_observations": sim.train.observations.len(),
        "next_observations": sim.next.observations.len(),
        "train_start_utc": sim.train.start().to_utc_string(),
        "train_end_utc": sim.train.end().to_utc_string(),
        "truth_terms": spec.truth.iter().map(|t| format!("{t:?}")).collect::<Vec<_>>(),
        "files": names,
    });
    let mut report = report;
    match &a.sites {
        Some(p) => {
            report["sites_file"] = p.display().to_string().into();
            report["measurements"] = measurement_counts(&sim.train).into();
        }
        None => report["sigma_km"] = spec.tracking.sigma_km.into(),
    }
    write_report(&report_path, &report)
}

/// How many measurements of each kind an arc holds (its word → count).
fn measurement_counts(
    arc: &learned_forces::arc::Arc,
) -> serde_json::Map<String, serde_json::Value> {
    let mut counts = serde_json::Map::new();
    for info in propagator::tracking::measurement::Kind::TABLE {
        let n = arc
            .observations
            .iter()
            .filter(|o| o.as_tracked().is_some_and(|m| m.kind == info.kind))
            .count();
        if n > 0 {
            counts.insert(info.word.into(), n.into());
        }
    }
    counts
}
