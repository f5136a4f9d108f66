//! `arcwise rank`: an arc + forces + maneuver hypotheses → hypotheses ranked.

use crate::commands::fit::parse_estimate;
use crate::error::CliError;
use crate::progress::FitProgress;
use crate::report::write_report;
use clap::Args as ClapArgs;
use learned_forces::arc::{Arc, ArcDefaults};
use learned_forces::expr::Context;
use learned_forces::fit::FitOptions;
use learned_forces::learn::hypotheses::parse_hypotheses;
use learned_forces::learn::rank::rank;
use learned_forces::learn::{linearize, LearnOptions};
use learned_forces::learned_file::LearnedResolver;
use propagator::config::ForcesFile;
use propagator::solar_system::CenturyClock;
use propagator::Epoch;
use std::path::PathBuf;

/// Options of `arcwise rank`.
#[derive(ClapArgs, Debug)]
pub struct Args {
    /// Observation arc.
    #[arg(long, value_name = "ARC.csv")]
    arc: PathBuf,
    /// Known force model.
    #[arg(long, value_name = "FORCES.yaml")]
    forces: PathBuf,
    /// The hypotheses (see the README).
    #[arg(long, value_name = "H.yaml")]
    hypotheses: PathBuf,
    /// Classical parameters estimated in the base fit.
    #[arg(long, value_delimiter = ',', value_name = "LIST")]
    estimate: Vec<String>,
    /// σ of observations without a sigma_km column, km.
    #[arg(long, default_value_t = 0.01, value_name = "KM")]
    sigma_km: f64,
    /// Write a JSON report here.
    #[arg(long, value_name = "R.json")]
    report: Option<PathBuf>,
}

/// Runs the command.
pub fn run(a: Args) -> Result<(), CliError> {
    crate::paths::check_distinct(
        &[
            ("--arc", &a.arc),
            ("--forces", &a.forces),
            ("--hypotheses", &a.hypotheses),
        ],
        &a.report
            .as_deref()
            .map(|p| ("--report", p))
            .into_iter()
            .collect::<Vec<_>>(),
    )?;
    let text = propagator::input::read_text(&a.hypotheses, propagator::input::MAX_CONFIG_BYTES)
        .map_err(|e| CliError::input(format!("{}: {e}", a.hypotheses.display())))?;
    let spec = ForcesFile::load(&a.forces).map_err(CliError::input)?;
    let arc = Arc::load(
        &a.arc,
        ArcDefaults {
            sigma_km: a.sigma_km,
            ..ArcDefaults::default()
        },
        &spec.central_body,
    )
    .map_err(CliError::input)?;
    let t0 = arc.start();
    let span_s = arc.end().seconds_since(&t0);
    let hyps = parse_hypotheses(&text, &a.hypotheses, &t0, span_s).map_err(CliError::input)?;
    let forces_path = a.forces.clone();
    let spec2 = spec.clone();
    let make = move |e: Epoch| {
        spec2
            .build_with(&forces_path, e, &LearnedResolver)
            .map(|l| l.model)
            .map_err(|e| e.to_string())
    };
    let ctx = Context {
        radius_km: spec.central_body.radius_km,
        rotation_rad_s: spec.central_body.rotation_rad_s,
        clock: CenturyClock::new(&t0),
    };
    let options = LearnOptions {
        fit: FitOptions {
            estimate: parse_estimate(&a.estimate)?,
            ..FitOptions::default()
        },
        ..LearnOptions::default()
    };
    let mut progress = FitProgress::new("rank: fit");
    let lin = linearize(&arc, &make, ctx, &options, &mut progress);
    progress.finish();
    let (_, problem) = lin.map_err(|e| CliError::input(format!("{}: {e}", a.arc.display())))?;
    let ranked = rank(&problem, &hyps);
    let show = |name: &str, v: f64| {
        if name == "epoch_s" || name == "start_s" {
            t0.plus_seconds(v).to_utc_string()
        } else {
            format!("{v:.6e}")
        }
    };
    println!("Maneuver hypotheses ranked by BIC (a screening aid; maneuver decisions follow the operator's procedures):");
    for (i, r) in ranked.iter().enumerate() {
        let params: Vec<String> = r
            .params
            .iter()
            .map(|p| format!("{} = {} ± {:.2e}", p.name, show(&p.name, p.value), p.sigma))
            .collect();
        println!(
            "  {}. {:<24} BIC {:>14.1}  log10 evidence vs none {:>10.1}  {}",
            i + 1,
            r.name,
            r.bic,
            r.log10_evidence_vs_none,
            params.join(", ")
        );
    }
    if let Some(path) = &a.report {
        let report = serde_json::json!({
            "command": "rank",
            "arcwise_version": env!("CARGO_PKG_VERSION"),
            "arc_file": a.arc.display().to_string(),
            "hypotheses": ranked.iter().map(|r| serde_json::json!({
                "name": r.name, "parameters_fitted": r.k, "chi2": r.cost, "bic": r.bic,
                "log10_evidence_vs_no_maneuver": r.log10_evidence_vs_none,
                "parameters": r.params.iter().map(|p| {
                    let mut j = serde_json::json!({"name": p.name, "value": p.value, "sigma": p.sigma});
                    if p.name == "epoch_s" || p.name == "start_s" {
                        j["utc"] = t0.plus_seconds(p.value).to_utc_string().into();
                    }
                    j
                }).collect::<Vec<_>>(),
            })).collect::<Vec<_>>(),
        });
        write_report(path, &report)?;
    }
    Ok(())
}
