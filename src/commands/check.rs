//! `arcwise check`: predict the next arc from a learned file's end state, with and
//! without the learned force, and gate on the result.

use crate::error::{CliError, EXIT_CHECK_FAILED};
use crate::plot::{write_panels, Panel, Series};
use crate::report::write_report;
use clap::Args as ClapArgs;
use learned_forces::arc::Arc;
use learned_forces::learned_file::{LearnedFile, LearnedResolver};
use learned_forces::next_arc::{check, CheckError, GateRule, NextArcCheck, Prediction, Unit};
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
    /// The next arc (observations after the training arc): positions, or tracking
    /// measurements (.tdm or measurement CSV, with --sites), judged in σ units.
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
        &a.arc_options.inputs(
            &[
                ("--learned", &a.learned),
                ("--forces", &a.forces),
                ("--arc", &a.arc),
            ],
            &[],
        ),
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
        noise,
        outcome: gate,
    } = checked;
    let passed = gate.passed;
    let unit = learned.unit;
    let quarters = learned.rms_by_quarter();
    let times = &learned.times_s;
    println!(
        "next arc ({} observations, {} → {}): RMS {} with the learned force, {} with the known forces only; max {}",
        times.len(),
        arc.start(),
        arc.end(),
        unit.text(learned.rms),
        unit.text(base.rms),
        unit.text(learned.max)
    );
    let by_quarter = quarters.map(|q| unit.text(q)).join(", ");
    if unit == Unit::Km {
        println!(
            "  learned RTN RMS: R {:.2} m, T {:.2} m, N {:.2} m; by quarter: {by_quarter}",
            learned.rms_component_km(0) * 1e3,
            learned.rms_component_km(1) * 1e3,
            learned.rms_component_km(2) * 1e3,
        );
    } else {
        println!("  learned RMS by quarter: {by_quarter} (normalized residuals)");
    }
    for r in &gate.reasons {
        println!("  {r}");
    }
    println!("check {}", if passed { "passed" } else { "FAILED" });
    if let Some(p) = &a.plot {
        plot(p, &epoch, (&learned, &base), noise)?;
    }
    if let Some(path) = &a.report {
        let k = unit.key();
        let mut report = serde_json::json!({
            "command": "check",
            "arcwise_version": env!("CARGO_PKG_VERSION"),
            "learned_file": a.learned.display().to_string(),
            "learned_checksum": file.checksum,
            "arc_file": a.arc.display().to_string(),
            "observations": times.len(),
            format!("rms_{k}_learned"): learned.rms,
            format!("rms_{k}_base"): base.rms,
            format!("max_error_{k}_learned"): learned.max,
            format!("max_error_{k}_base"): base.max,
            format!("noise_rms_{k}"): noise,
            "baseline": "the known forces fitted to the same training arc, from that fit's end state",
            "pass_rule": rule.describe(),
            "pass_reasons": gate.reasons,
            format!("rms_{k}_by_quarter_learned"): quarters,
            "max_rms_km": a.max_rms_km,
            "passed": passed,
            "note": "covariance-free prediction check: a screening aid; operational decisions follow the operator's own procedures",
        });
        if unit == Unit::Km {
            report["rms_rtn_km_learned"] = serde_json::json!([
                learned.rms_component_km(0),
                learned.rms_component_km(1),
                learned.rms_component_km(2)
            ]);
        }
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
    noise: f64,
) -> Result<(), CliError> {
    // Positions in metres; measurements as |residual| / σ.
    let (scale, y_label, points_only) = match learned.unit {
        Unit::Km => (1e3, "position error (m)", false),
        Unit::Sigma => (1.0, "|residual| / σ", true),
    };
    let series = |name: &str, pr: &Prediction| Series {
        name: name.into(),
        points: learned
            .times_s
            .iter()
            .zip(&pr.errors)
            .map(|(t, e)| (t / 3600.0, e * scale))
            .collect(),
        points_only,
    };
    write_panels(
        p,
        "Next-arc prediction error",
        &format!("hours since {epoch}"),
        &[Panel {
            y_label: y_label.into(),
            series: vec![
                series("with the learned force", learned),
                series("known forces only", base),
            ],
            levels: vec![(
                format!("2× noise RMS ({})", learned.unit.text(2.0 * noise)),
                2.0 * noise * scale,
            )],
            ..Panel::default()
        }],
    )
}
