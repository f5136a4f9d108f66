//! `arcwise check`: predict the next arc from a learned file's end state, with and
//! without the learned force, and gate on the result.

use crate::error::{CliError, EXIT_CHECK_FAILED};
use crate::plot::{write_panels, Panel, Series};
use crate::report::write_report;
use clap::Args as ClapArgs;
use learned_forces::arc::Arc;
use learned_forces::learned_file::{LearnedFile, LearnedResolver};
use learned_forces::next_arc::{check, CheckError, GateRule, NextArcCheck, Prediction};
use propagator::config::ForcesFile;
use propagator::Epoch;
use std::path::{Path, PathBuf};

/// Options of `arcwise check`.
#[derive(ClapArgs, Debug)]
pub struct Args {
    /// The learned-force file (its `state_at_end` is the starting point).
    #[arg(long, value_name = "LEARNED.yaml")]
    learned: PathBuf,
    /// The known force model the file was learned with.
    #[arg(long, value_name = "FORCES.yaml")]
    forces: PathBuf,
    /// The next arc (observations after the training arc).
    #[arg(long, value_name = "NEXT.csv")]
    arc: PathBuf,
    /// Also fail (exit 1) when the learned prediction's RMS exceeds this, km. The check
    /// always requires the learned prediction to be at the noise level (RMS ≤ 2× the
    /// noise RMS √(mean 3σ²)) or at least 2× better than the known forces fitted to the
    /// same training arc.
    #[arg(long, value_name = "KM")]
    max_rms_km: Option<f64>,
    #[command(flatten)]
    arc_options: super::ArcOptions,
    /// Write a JSON report here.
    #[arg(long, value_name = "R.json")]
    report: Option<PathBuf>,
    /// Draw both predictions' errors against time (SVG).
    #[arg(long, value_name = "P.svg")]
    plot: Option<PathBuf>,
}

/// Runs the command.
pub fn run(a: Args) -> Result<(), CliError> {
    crate::paths::check_distinct(
        &a.arc_options.inputs(&[
            ("--learned", &a.learned),
            ("--forces", &a.forces),
            ("--arc", &a.arc),
        ]),
        &crate::paths::given(&[
            ("--report", a.report.as_deref()),
            ("--plot", a.plot.as_deref()),
        ]),
    )?;
    if let Some(m) = a.max_rms_km {
        if !(m.is_finite() && m > 0.0) {
            return Err(CliError::input(
                "--max-rms-km must be a positive number of km",
            ));
        }
    }
    let (file, arc, rule, checked) = run_check(&a)?;
    let NextArcCheck {
        epoch,
        learned,
        known: base,
        noise_km,
        outcome: gate,
    } = checked;
    let passed = gate.passed;
    let quarters = learned.rms_by_quarter_km();
    let times = &learned.times_s;
    println!(
        "next arc ({} observations, {} → {}): RMS {:.2} m with the learned force, {:.2} m with the known forces only; max {:.2} m",
        times.len(),
        arc.start(),
        arc.end(),
        learned.rms_km * 1e3,
        base.rms_km * 1e3,
        learned.max_km * 1e3
    );
    println!(
        "  learned RTN RMS: R {:.2} m, T {:.2} m, N {:.2} m; by quarter: {}",
        learned.rms_component_km(0) * 1e3,
        learned.rms_component_km(1) * 1e3,
        learned.rms_component_km(2) * 1e3,
        quarters
            .iter()
            .map(|q| format!("{:.2} m", q * 1e3))
            .collect::<Vec<_>>()
            .join(", ")
    );
    for r in &gate.reasons {
        println!("  {r}");
    }
    println!("check {}", if passed { "passed" } else { "FAILED" });
    if let Some(p) = &a.plot {
        plot(p, &epoch, (&learned, &base), noise_km)?;
    }
    if let Some(path) = &a.report {
        let report = serde_json::json!({
            "command": "check",
            "arcwise_version": env!("CARGO_PKG_VERSION"),
            "learned_file": a.learned.display().to_string(),
            "learned_checksum": file.checksum,
            "arc_file": a.arc.display().to_string(),
            "observations": times.len(),
            "rms_km_learned": learned.rms_km,
            "rms_km_base": base.rms_km,
            "max_error_km_learned": learned.max_km,
            "max_error_km_base": base.max_km,
            "rms_rtn_km_learned": [learned.rms_component_km(0), learned.rms_component_km(1), learned.rms_component_km(2)],
            "noise_rms_km": noise_km,
            "baseline": "the known forces fitted to the same training arc, from that fit's end state",
            "pass_rule": rule.describe(),
            "pass_reasons": gate.reasons,
            "rms_km_by_quarter_learned": quarters,
            "max_rms_km": a.max_rms_km,
            "passed": passed,
            "note": "covariance-free prediction check: a screening aid; operational decisions follow the operator's own procedures",
        });
        write_report(path, &report)?;
    }
    if passed {
        Ok(())
    } else {
        Err(CliError {
            message: "the learned prediction failed the check".into(),
            code: EXIT_CHECK_FAILED,
        })
    }
}

/// The learned file, the next arc and the rule, and the check of the one on the other
/// (warning when the forces file is not the one the force was learned with).
fn run_check(a: &Args) -> Result<(LearnedFile, Arc, GateRule, NextArcCheck), CliError> {
    let file = LearnedFile::load(&a.learned).map_err(CliError::input)?;
    // A force learned against one known model means little on top of another: say so.
    let forces_hash = std::fs::read(&a.forces)
        .map(|b| learned_forces::learned_file::sha256_hex(&b))
        .map_err(|e| CliError::input(format!("{}: {e}", a.forces.display())))?;
    if forces_hash != file.provenance.forces_sha256 {
        propagator::notice::warn_once(format!(
            "{} is not the forces file {} was learned with ({} there, {forces_hash} here): the learned force may miss or double-count what the two models treat differently",
            a.forces.display(),
            a.learned.display(),
            file.provenance.forces_sha256
        ));
    }
    let spec = ForcesFile::load(&a.forces).map_err(CliError::input)?;
    let (arc, _, _) = a.arc_options.load(&a.arc, &spec, &a.forces)?;
    let rule = GateRule {
        max_rms_km: a.max_rms_km,
        ..GateRule::default()
    };
    let known_forces = |at: Epoch| {
        spec.build_with(&a.forces, at, &LearnedResolver)
            .map(|b| b.model)
            .map_err(|e| e.to_string())
    };
    let host = Some((&spec, a.forces.as_path()));
    let checked = check(&file, &known_forces, host, &arc, &rule).map_err(|e| match e {
        CheckError::Learned(m) => CliError::input(format!("{}: {m}", a.learned.display())),
        CheckError::Model(m) => CliError::input(m),
        CheckError::Arc(m) => CliError::input(format!("{}: {m}", a.arc.display())),
    })?;
    Ok((file, arc, rule, checked))
}

/// The prediction errors with the learned force and with the known forces only, against
/// twice the noise.
fn plot(
    p: &Path,
    epoch: &Epoch,
    (learned, base): (&Prediction, &Prediction),
    noise_km: f64,
) -> Result<(), CliError> {
    let series = |name: &str, pr: &Prediction| Series {
        name: name.into(),
        points: learned
            .times_s
            .iter()
            .zip(&pr.errors_rtn_km)
            .map(|(t, e)| (t / 3600.0, e.norm() * 1e3))
            .collect(),
        points_only: false,
    };
    write_panels(
        p,
        "Next-arc prediction error",
        &format!("hours since {epoch}"),
        &[Panel {
            y_label: "position error (m)".into(),
            series: vec![
                series("with the learned force", learned),
                series("known forces only", base),
            ],
            levels: vec![(
                format!("2× noise RMS ({:.2} m)", 2e3 * noise_km),
                2e3 * noise_km,
            )],
            ..Panel::default()
        }],
    )
}
