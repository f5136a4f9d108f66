//! `arcwise rank`: an arc + forces + maneuver hypotheses → hypotheses ranked.

use crate::commands::fit::parse_estimate;
use crate::error::CliError;
use crate::plot::{write_panels, Panel, Series};
use crate::progress::FitProgress;
use crate::report::write_report;
use clap::Args as ClapArgs;
use learned_forces::expr::Context;
use learned_forces::fit::FitOptions;
use learned_forces::learn::hypotheses::parse_hypotheses;
use learned_forces::learn::linearized::Problem;
use learned_forces::learn::rank::{best_explains, evidence_words, rank, Hypothesis, Param, Ranked};
use learned_forces::learn::{linearize, LearnOptions};
use learned_forces::learned_file::LearnedResolver;
use propagator::config::ForcesFile;
use propagator::Epoch;
use std::path::{Path, PathBuf};

/// The caution printed with every ranking and kept in its report.
pub const RANK_NOTICE: &str = "Maneuver hypotheses from a covariance-free linearized fit: a screening aid only. Maneuver and collision-avoidance decisions follow the operator's own procedures and the applicable space-safety rules.";

/// Options of `arcwise rank`.
#[derive(ClapArgs, Debug)]
pub struct Args {
    /// Start the base fit from this state (STATE.yaml, carried to the arc's first epoch
    /// with the known forces) instead of the initial orbit determined from the data.
    #[arg(long, value_name = "STATE.yaml")]
    initial: Option<PathBuf>,
    /// Observation arc.
    #[arg(long, value_name = "ARC.csv")]
    arc: PathBuf,
    /// Known force model.
    #[arg(long, value_name = "FORCES.yaml")]
    forces: PathBuf,
    /// The hypotheses (see the README).
    #[arg(long, value_name = "H.yaml")]
    hypotheses: PathBuf,
    /// Classical parameters estimated in the base fit (comma-separated): drag_scale, srp_scale,
    /// emp_const_rtn, emp_1rev_rtn, emp_lin_rtn.
    #[arg(long, value_delimiter = ',', value_name = "LIST")]
    estimate: Vec<String>,
    #[command(flatten)]
    arc_options: super::ArcOptions,
    /// Write a JSON report here.
    #[arg(long, value_name = "R.json")]
    report: Option<PathBuf>,
    /// Draw each timed hypothesis's χ² against its trial epoch or start (SVG).
    #[arg(long, value_name = "P.svg")]
    plot: Option<PathBuf>,
}

/// Runs the command.
pub fn run(a: Args) -> Result<(), CliError> {
    crate::paths::check_distinct(
        &a.arc_options.inputs(
            &[
                ("--arc", &a.arc),
                ("--forces", &a.forces),
                ("--hypotheses", &a.hypotheses),
            ],
            &[("--initial", a.initial.as_deref())],
        ),
        &crate::paths::given(&[
            ("--report", a.report.as_deref()),
            ("--plot", a.plot.as_deref()),
        ]),
    )?;
    let (t0, problem, hyps) = linearized_arc(&a)?;
    let ranked = rank(&problem, &hyps);
    let alpha = FitOptions::default().alpha;
    let explains = best_explains(&ranked, alpha);
    let none_bic = ranked
        .iter()
        .find(|r| r.name == "no_maneuver")
        .map(|r| r.bic)
        .unwrap_or_else(|| problem.base_cost());
    println!("{RANK_NOTICE}");
    println!("Maneuver hypotheses ranked by BIC (ΔBIC against no maneuver; evidence on the Kass–Raftery scale):");
    for (i, r) in ranked.iter().enumerate() {
        let params: Vec<String> = r.params.iter().map(|p| shown(p, &t0)).collect();
        println!(
            "  {}. {:<24} ΔBIC {:>+12.1}  evidence {:<20} χ²/dof {:>8.2}  {}",
            i + 1,
            r.name,
            r.bic - none_bic,
            evidence_words(r.bic - none_bic),
            r.cost / r.dof as f64,
            params.join(", ")
        );
    }
    let verdict = if explains {
        format!("the best hypothesis ({}) explains the arc", ranked[0].name)
    } else {
        format!(
            "NONE of these hypotheses explains the arc: the best ({}) still leaves χ² = {:.0} on {} dof (p = {:.1e}); the order above is not evidence for any of them",
            ranked.first().map(|r| r.name.as_str()).unwrap_or("-"),
            ranked.first().map(|r| r.cost).unwrap_or(f64::NAN),
            ranked.first().map(|r| r.dof).unwrap_or(0),
            ranked.first().map(|r| r.p_value).unwrap_or(0.0)
        )
    };
    println!("{verdict}");
    if let Some(path) = &a.report {
        let report = serde_json::json!({
            "command": "rank",
            "arcwise_version": env!("CARGO_PKG_VERSION"),
            "notice": RANK_NOTICE,
            "arc_file": a.arc.display().to_string(),
            "arc_start_utc": t0.to_utc_string(),
            "best_explains_arc": explains,
            "verdict": verdict,
            "alpha": alpha,
            "hypotheses": ranked.iter().map(|r| serde_json::json!({
                "name": r.name, "parameters_fitted": r.k, "chi2": r.cost, "dof": r.dof,
                "p_value": r.p_value, "bic": r.bic, "delta_bic_vs_no_maneuver": r.bic - none_bic,
                "evidence_vs_no_maneuver": evidence_words(r.bic - none_bic),
                "log10_evidence_vs_no_maneuver": r.log10_evidence_vs_none,
                "parameters": r.params.iter().map(|p| {
                    let mut j = serde_json::json!({"name": p.name, "value": p.value, "sigma": p.sigma});
                    if timing(&p.name) {
                        j["utc"] = t0.plus_seconds(p.value).to_utc_string().into();
                    }
                    j
                }).collect::<Vec<_>>(),
            })).collect::<Vec<_>>(),
        });
        write_report(path, &report)?;
    }
    if let Some(path) = &a.plot {
        plot_scans(path, &ranked, &t0)?;
    }
    if !explains {
        return Err(CliError {
            message: "none of the hypotheses explains the arc".into(),
            code: crate::error::EXIT_CHECK_FAILED,
        });
    }
    Ok(())
}

/// The arc, the base fit's linearized problem around it, and the hypotheses.
fn linearized_arc(a: &Args) -> Result<(Epoch, Problem, Vec<Hypothesis>), CliError> {
    let text = propagator::input::read_text(&a.hypotheses, propagator::input::MAX_CONFIG_BYTES)
        .map_err(|e| CliError::input(format!("{}: {e}", a.hypotheses.display())))?;
    let spec = ForcesFile::load(&a.forces).map_err(CliError::input)?;
    let (arc, loaded, _) = a.arc_options.load(&a.arc, &spec, &a.forces)?;
    let t0 = arc.start();
    let initial = a
        .initial
        .as_deref()
        .map(|p| super::fit::initial_at(p, &spec, &loaded.model, &t0))
        .transpose()?;
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
    let ctx = Context::of_model(&spec, &a.forces, &t0)
        .map_err(|e| CliError::input(format!("{}: {e}", a.forces.display())))?;
    let mut options = LearnOptions {
        estimate: parse_estimate(&a.estimate)?,
        ..LearnOptions::default()
    };
    options.fit.initial_state = initial;
    let mut progress = FitProgress::new("rank: fit");
    let lin = linearize(&arc, &make, ctx, &options, &mut progress);
    progress.finish();
    let (_, problem) = lin.map_err(|e| CliError::input(format!("{}: {e}", a.arc.display())))?;
    Ok((t0, problem, hyps))
}

/// Timing parameters are seconds from the arc's start.
fn timing(name: &str) -> bool {
    name == "epoch_s" || name == "start_s"
}

/// A parameter as printed: a timing as UTC under a UTC name.
fn shown(p: &Param, t0: &Epoch) -> String {
    if timing(&p.name) {
        format!(
            "{} = {} ± {:.1} s",
            p.name.replace("_s", "_utc"),
            t0.plus_seconds(p.value),
            p.sigma
        )
    } else {
        format!("{} = {:.6e} ± {:.2e}", p.name, p.value, p.sigma)
    }
}

/// χ² above the best of all, against the trial time: how sharply the data pin the
/// timing down, and whether a second minimum competes.
fn plot_scans(path: &Path, ranked: &[Ranked], t0: &Epoch) -> Result<(), CliError> {
    let floor = ranked.iter().map(|r| r.cost).fold(f64::INFINITY, f64::min);
    let panels: Vec<Panel> = ranked
        .iter()
        .filter(|r| !r.scan.is_empty())
        .map(|r| Panel {
            y_label: "χ² − best χ²".into(),
            series: vec![Series {
                name: format!("{} (best fit at {})", r.name, shown(&r.params[0], t0)),
                points: r
                    .scan
                    .iter()
                    .filter(|(_, c)| c.is_finite())
                    .map(|(t, c)| (t / 3600.0, c - floor))
                    .collect(),
                points_only: false,
            }],
            marks: vec![("fitted timing".into(), r.params[0].value / 3600.0)],
            ..Panel::default()
        })
        .collect();
    if panels.is_empty() {
        return Ok(());
    }
    write_panels(
        path,
        "Maneuver timing scans",
        &format!("hours since {t0}"),
        &panels,
    )
}
