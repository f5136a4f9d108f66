//! `arcwise demo`: the whole chain on a built-in invented scenario, into a folder.

use crate::error::CliError;
use crate::run_words;
use clap::Args as ClapArgs;
use std::path::{Path, PathBuf};

/// The built-in scenario: the venting debris of `examples/scenarios/venting.yaml`.
const SCENARIO: &str = include_str!("../../examples/scenarios/venting.yaml");

/// Options of `arcwise demo`.
#[derive(ClapArgs, Debug)]
pub struct Args {
    /// Output folder for every file, report and plot.
    #[arg(long, default_value = "demo-out", value_name = "DIR")]
    out: PathBuf,
    /// Generations of the search, per seed (fewer is faster).
    #[arg(long, default_value_t = learned_forces::learn::search::SearchOptions::default().generations)]
    generations: usize,
}

fn words(list: &[&str]) -> Vec<String> {
    list.iter().map(|s| s.to_string()).collect()
}

fn step(title: &str, w: Vec<String>) -> Result<(), CliError> {
    println!("\n── {title}\n$ arcwise {}", w.join(" "));
    run_words(&w)
}

fn p(dir: &Path, name: &str) -> String {
    dir.join(name).display().to_string()
}

/// Runs the command.
pub fn run(a: Args) -> Result<(), CliError> {
    let d = &a.out;
    std::fs::create_dir_all(d).map_err(|e| CliError::input(format!("{}: {e}", d.display())))?;
    let scenario = d.join("scenario.yaml");
    std::fs::write(&scenario, SCENARIO)
        .map_err(|e| CliError::input(format!("{}: {e}", scenario.display())))?;
    println!(
        "arcwise demo: an invented piece of debris, TESSERA-114, vents gas after a collision."
    );
    println!(
        "Its tracking arc does not fit the known forces; we find the missing force, compile it,"
    );
    println!(
        "check the next pass with it and screen for close approaches. Everything goes to {}.",
        d.display()
    );
    let arcs = d.join("arcs");
    simulate_fit_learn(d, &arcs, a.generations)?;
    let corrected = build_plugin(d, &arcs)?;
    check_next_pass(d, &arcs)?;
    let (end, secondary) = place_secondary(d, &corrected)?;
    step(
        "6. screen the corrected orbit against a cataloged object over the next 12 h",
        words(&[
            "screen",
            "--primary",
            &p(d, "learned.yaml"),
            "--secondaries",
            &secondary.display().to_string(),
            "--forces",
            &p(&arcs, "forces.yaml"),
            "--from",
            &end.to_utc_string(),
            "--to",
            &end.plus_seconds(12.0 * 3600.0).to_utc_string(),
            "--threshold-km",
            "5",
            "--report",
            &p(d, "screen.json"),
        ]),
    )?;
    println!(
        "\nDone. Reports (*.json), plots (*.svg), the learned force and the plugin are in {}.",
        d.display()
    );
    Ok(())
}

/// Steps 1–3: simulate the arcs, fit the training arc, learn the missing force.
fn simulate_fit_learn(d: &Path, arcs: &Path, generations: usize) -> Result<(), CliError> {
    step(
        "1. simulate the tracking arcs (truth + 5 m noise)",
        words(&["simulate", &p(d, "scenario.yaml"), "--out", &p(d, "arcs")]),
    )?;
    step(
        "2. fit the training arc with the known forces",
        words(&[
            "fit",
            "--arc",
            &p(arcs, "train.csv"),
            "--forces",
            &p(arcs, "forces.yaml"),
            "--report",
            &p(d, "fit.json"),
            "--plot",
            &p(d, "fit_residuals.svg"),
        ]),
    )?;
    let g = generations.to_string();
    step(
        "3. learn the missing force as a formula",
        words(&[
            "learn",
            "--arc",
            &p(arcs, "train.csv"),
            "--forces",
            &p(arcs, "forces.yaml"),
            "--out",
            &p(d, "learned.yaml"),
            "--report",
            &p(d, "learn.json"),
            "--plot",
            &p(d, "plots"),
            "--generations",
            &g,
            "--name",
            "tessera-114-venting",
        ]),
    )
}

/// Step 4: the native plugin, and the known forces with it (or, with no Rust toolchain,
/// with the learned file in process); returns that forces file.
fn build_plugin(d: &Path, arcs: &Path) -> Result<PathBuf, CliError> {
    let plugin = format!(
        "{}{}{}",
        std::env::consts::DLL_PREFIX,
        "tessera_venting",
        std::env::consts::DLL_SUFFIX
    );
    let built = step(
        "4. compile it into a native force plugin",
        words(&["build", &p(d, "learned.yaml"), "--out", &p(d, &plugin)]),
    );
    let forces_text = std::fs::read_to_string(arcs.join("forces.yaml"))
        .map_err(|e| CliError::input(e.to_string()))?;
    let corrected = d.join("forces_corrected.yaml");
    let plugin_line = match &built {
        Ok(()) => format!("plugins: [{plugin}]\n"),
        Err(e) => {
            println!(
                "(no plugin: {}; the learned file is used in process instead)",
                e.message
            );
            "plugins: [learned.yaml]\n".to_string()
        }
    };
    std::fs::write(&corrected, format!("{forces_text}{plugin_line}"))
        .map_err(|e| CliError::input(e.to_string()))?;
    Ok(corrected)
}

/// Step 5: the next 12 h of tracking against the corrected prediction.
fn check_next_pass(d: &Path, arcs: &Path) -> Result<(), CliError> {
    step(
        "5. check the next 12 h of tracking against the corrected prediction",
        words(&[
            "check",
            "--learned",
            &p(d, "learned.yaml"),
            "--forces",
            &p(arcs, "forces.yaml"),
            "--arc",
            &p(arcs, "next.csv"),
            "--report",
            &p(d, "check.json"),
            "--plot",
            &p(d, "check.svg"),
        ]),
    )
}

/// A built-in secondary: a cataloged object placed 1.5 km below TESSERA-114's corrected
/// position (propagated with `corrected`) 6 h after the arc, crossing at right angles.
/// Returns the arc's end and the secondary's state file.
fn place_secondary(d: &Path, corrected: &Path) -> Result<(propagator::Epoch, PathBuf), CliError> {
    let learned = learned_forces::learned_file::LearnedFile::load(&d.join("learned.yaml"))
        .map_err(CliError::input)?;
    let end = propagator::Epoch::parse_utc(&learned.state_at_end.epoch_utc)
        .map_err(|e| CliError::input(e.to_string()))?;
    let meet = end.plus_seconds(6.0 * 3600.0);
    let ahead = d.join("primary_at_meet.csv");
    let start = d.join("primary_end.yaml");
    let s = &learned.state_at_end;
    std::fs::write(
        &start,
        format!(
            "epoch_utc: {}\nr_km: {:?}\nv_km_s: {:?}\n",
            s.epoch_utc, s.r_km, s.v_km_s
        ),
    )
    .map_err(|e| CliError::input(e.to_string()))?;
    run_words(&words(&[
        "propagate",
        "--forces",
        &corrected.display().to_string(),
        "--state",
        &start.display().to_string(),
        "--to",
        &meet.to_utc_string(),
        "--step",
        "600",
        "--out",
        &ahead.display().to_string(),
    ]))?;
    let eph = propagator::ephemeris::Ephemeris::load(&ahead, &propagator::CentralBody::EARTH_EGM96)
        .map_err(CliError::input)?;
    let x = eph
        .points
        .last()
        .map(|pt| pt.state)
        .ok_or_else(|| CliError::input("empty prediction"))?;
    let r = nalgebra::Vector3::new(x[0], x[1], x[2]);
    let v = nalgebra::Vector3::new(x[3], x[4], x[5]);
    let rr = r * ((r.norm() - 1.5) / r.norm());
    // A circular orbit in another plane crossing the prediction 1.5 km below it.
    let mu = propagator::CentralBody::EARTH_EGM96.mu_km3_s2;
    let vs = r.normalize().cross(&v).normalize() * (mu / rr.norm()).sqrt();
    let secondary = d.join("secondary_debris.yaml");
    std::fs::write(
        &secondary,
        format!(
            "object_name: CATALOG-90211\nepoch_utc: {}\nr_km: [{}, {}, {}]\nv_km_s: [{}, {}, {}]\n",
            meet, rr[0], rr[1], rr[2], vs[0], vs[1], vs[2]
        ),
    )
    .map_err(|e| CliError::input(e.to_string()))?;
    Ok((end, secondary))
}
