//! `arcwise learn`: an arc + forces → a learned-force file, the Pareto front, a report,
//! plots.

use crate::commands::fit::{fit_json, parse_estimate, plot_fit_residuals};
use crate::error::{CliError, EXIT_CHECK_FAILED};
use crate::plot::{write_panels, Panel, Series};
use crate::progress::{FitProgress, SearchProgress};
use crate::report::write_report;
use clap::Args as ClapArgs;
use learned_forces::arc::Arc;
use learned_forces::expr::Context;
use learned_forces::learn::search::SearchOptions;
use learned_forces::learn::timing::{Scan, Timing};
use learned_forces::learn::{learn, trajectory, LearnOptions, Learned, Outcome};
use learned_forces::learned_file::{
    sha256_hex, LearnedFile, LearnedResolver, OutsidePolicy, ProvenanceEntry,
};
use learned_forces::next_arc::Unit;
use propagator::config::ForcesFile;
use propagator::ephemeris::write_atomically;
use propagator::frames::eci_to_rtn;
use std::path::{Path, PathBuf};
use std::time::Duration;

/// Options of `arcwise learn`.
#[derive(ClapArgs, Debug)]
pub struct Args {
    /// Start the base fit from this state (STATE.yaml, carried to the arc's first epoch
    /// with the known forces) instead of the initial orbit determined from the data.
    #[arg(long, value_name = "STATE.yaml")]
    initial: Option<PathBuf>,
    /// Observation arc (.csv, .oem or .sp3).
    #[arg(long, value_name = "ARC.csv")]
    arc: PathBuf,
    /// Known force model.
    #[arg(long, value_name = "FORCES.yaml")]
    forces: PathBuf,
    /// The learned-force file to write.
    #[arg(long, value_name = "LEARNED.yaml")]
    out: PathBuf,
    /// Write a JSON report here.
    #[arg(long, value_name = "R.json")]
    report: Option<PathBuf>,
    /// Write plots (SVG) into this folder.
    #[arg(long, value_name = "DIR")]
    plot: Option<PathBuf>,
    /// Search seed (the first, with --seeds above 1).
    #[arg(long, default_value_t = 1)]
    seed: u64,
    /// Searches run, with seeds --seed, --seed + 1, …: the model most of them agree on
    /// is chosen, and a disagreement is reported.
    #[arg(long, default_value_t = learned_forces::learn::DEFAULT_SEEDS)]
    seeds: usize,
    /// Wall-clock budget of the search, s (stops at a generation boundary; results then
    /// depend on the machine's speed).
    #[arg(long, value_name = "SECONDS")]
    time_limit: Option<f64>,
    /// Threads for the search (default: all cores). Results do not depend on it.
    #[arg(long)]
    threads: Option<usize>,
    /// Generations of the search (per seed).
    #[arg(long, default_value_t = SearchOptions::default().generations)]
    generations: usize,
    /// Individuals per generation.
    #[arg(long, default_value_t = SearchOptions::default().population)]
    population: usize,
    /// Classical parameters estimated with the state in every fit (comma-separated): drag_scale, srp_scale,
    /// emp_const_rtn, emp_1rev_rtn, emp_lin_rtn.
    #[arg(long, value_delimiter = ',', value_name = "LIST")]
    estimate: Vec<String>,
    #[command(flatten)]
    arc_options: super::ArcOptions,
    /// What the learned force does outside its validity window: warn, zero or refuse.
    #[arg(long, default_value = "warn")]
    outside: String,
    /// A name for the learned force (default: from the arc file).
    #[arg(long)]
    name: Option<String>,
}

/// The plots `--plot DIR` writes.
const PLOT_FILES: [&str; 5] = [
    "residuals_before.svg",
    "residuals_after.svg",
    "learned_acceleration.svg",
    "period_scan.svg",
    "onset_scan.svg",
];

/// Runs the command.
pub fn run(a: Args) -> Result<(), CliError> {
    let plot_files: Vec<PathBuf> = a
        .plot
        .iter()
        .flat_map(|d| PLOT_FILES.iter().map(move |f| d.join(f)))
        .collect();
    let mut outputs: Vec<(&str, &Path)> = vec![("--out", &a.out)];
    outputs.extend(a.report.as_deref().map(|p| ("--report", p)));
    outputs.extend(plot_files.iter().map(|p| ("--plot", p.as_path())));
    crate::paths::check_distinct(
        &a.arc_options.inputs(
            &[("--arc", &a.arc), ("--forces", &a.forces)],
            &[("--initial", a.initial.as_deref())],
        ),
        &outputs,
    )?;
    let outside = checked_options(&a)?;
    let estimate = parse_estimate(&a.estimate)?;
    let spec = ForcesFile::load(&a.forces).map_err(CliError::input)?;
    // Check the model builds before the long work.
    let (arc, loaded, model_error) = a.arc_options.load(&a.arc, &spec, &a.forces)?;
    let initial = a
        .initial
        .as_deref()
        .map(|p| super::fit::initial_at(p, &spec, &loaded.model, &arc.start()))
        .transpose()?;
    if model_error.floor_km > 0.0 {
        eprintln!(
            "model error: {:.3} m added in quadrature to each σ ({})",
            model_error.floor_km * 1e3,
            model_error.basis
        );
    }
    let forces_path = a.forces.clone();
    let spec_for_build = spec.clone();
    let make = move |e: propagator::Epoch| {
        spec_for_build
            .build_with(&forces_path, e, &LearnedResolver)
            .map(|l| l.model)
            .map_err(|e| e.to_string())
    };
    let context = Context::of_model(&spec, &a.forces, &arc.start())
        .map_err(|e| CliError::input(format!("{}: {e}", a.forces.display())))?;
    let mut options = LearnOptions {
        estimate,
        search: SearchOptions {
            population: a.population,
            generations: a.generations,
            seed: a.seed,
            time_limit: a.time_limit.map(Duration::from_secs_f64),
            ..SearchOptions::default()
        },
        seeds: a.seeds,
        ..LearnOptions::default()
    };
    options.fit.initial_state = initial;
    let pool = thread_pool(a.threads)?;
    let mut fit_progress = FitProgress::new("learn: fit");
    let search_progress = SearchProgress::new("learn: search", a.generations * a.seeds);
    let learned = pool.install(|| {
        learn(
            &arc,
            &make,
            context.clone(),
            &options,
            &mut fit_progress,
            &search_progress,
        )
    });
    fit_progress.finish();
    search_progress.finish();
    let learned = learned.map_err(|e| CliError::input(format!("{}: {e}", a.arc.display())))?;

    let name = file_name(&a);
    let mut file = learned_file(&a, &arc, &context, &learned, &name, outside)?;
    write_atomically(&a.out, file.to_yaml().as_bytes()).map_err(CliError::input)?;
    let scale = Unit::of(&arc);
    summarize(&learned, &a.out, scale);
    if let Some(dir) = &a.plot {
        plots(dir, &learned, &arc, &make, context, &options)?;
    }
    if let Some(path) = &a.report {
        let mut j = report(&a, &learned, &file);
        if scale == Unit::Sigma {
            to_sigma_keys(&mut j, &learned);
            j["tracking"] = super::fit::tracking_json(&learned.base, &arc);
        }
        j["model_error"] = super::model_error_json(&model_error);
        write_report(path, &j)?;
    }
    let outcome = learned.outcome();
    if outcome.is_explained() {
        Ok(())
    } else {
        Err(CliError {
            message: format!(
                "the arc is anomalous and the learned model does not explain it ({}); {} was written for inspection, not for use",
                outcome.as_str(),
                a.out.display()
            ),
            code: EXIT_CHECK_FAILED,
        })
    }
}

/// The options checked; the outside policy they name.
fn checked_options(a: &Args) -> Result<OutsidePolicy, CliError> {
    let outside = match a.outside.as_str() {
        "warn" => OutsidePolicy::Warn,
        "zero" => OutsidePolicy::Zero,
        "refuse" => OutsidePolicy::Refuse,
        o => {
            return Err(CliError::input(format!(
                "--outside {o}: expected warn, zero or refuse"
            )))
        }
    };
    if !(1..=MAX_SEEDS).contains(&a.seeds) {
        return Err(CliError::input(format!(
            "--seeds {}: expected 1 to {MAX_SEEDS}",
            a.seeds
        )));
    }
    if a.generations == 0 || a.population < 8 {
        return Err(CliError::input(
            "--generations must be at least 1 and --population at least 8",
        ));
    }
    if let Some(t) = a.time_limit {
        if !(t.is_finite() && t > 0.0) {
            return Err(CliError::input(
                "--time-limit must be a positive number of seconds",
            ));
        }
    }
    if let Some(n) = &a.name {
        propagator::text::check_name("--name", n).map_err(CliError::input)?;
    }
    Ok(outside)
}

/// A pool of `threads` (all cores when `None`) for the search.
fn thread_pool(threads: Option<usize>) -> Result<rayon::ThreadPool, CliError> {
    let mut builder = rayon::ThreadPoolBuilder::new();
    if let Some(n) = threads {
        if n == 0 {
            return Err(CliError::input("--threads must be at least 1"));
        }
        builder = builder.num_threads(n);
    }
    builder
        .build()
        .map_err(|e| CliError::input(format!("--threads: {e}")))
}

/// The learned force's name: `--name`, or the arc file's name made safe.
fn file_name(a: &Args) -> String {
    a.name.clone().unwrap_or_else(|| {
        a.arc
            .file_stem()
            .map(|s| {
                propagator::text::sanitized(&s.to_string_lossy())
                    .chars()
                    .take(propagator::text::MAX_NAME_CHARS)
                    .collect()
            })
            .unwrap_or_else(|| "learned".into())
    })
}

/// The learned file: the library assembles it; the command adds the provenance.
fn learned_file(
    a: &Args,
    arc: &Arc,
    context: &Context,
    l: &Learned,
    name: &str,
    outside: OutsidePolicy,
) -> Result<LearnedFile, CliError> {
    let read = |p: &Path| {
        std::fs::read(p)
            .map(|b| sha256_hex(&b))
            .map_err(|e| CliError::input(format!("{}: {e}", p.display())))
    };
    let provenance = ProvenanceEntry {
        arc_sha256: read(&a.arc)?,
        forces_sha256: read(&a.forces)?,
        seed: a.seed,
        tool_version: env!("CARGO_PKG_VERSION").into(),
    };
    Ok(LearnedFile::from_learned(
        l, arc, context, name, outside, provenance,
    ))
}

/// Most search seeds one learn may run.
const MAX_SEEDS: usize = 64;

/// A tracking arc's report: the RMS in σ units under `_sigma` keys (the `_km` keys are
/// positions, which measurements do not give).
fn to_sigma_keys(j: &mut serde_json::Value, l: &Learned) {
    fn rename(v: &mut serde_json::Value) {
        match v {
            serde_json::Value::Object(o) => {
                if let Some(x) = o.remove("held_out_rms_km") {
                    o.insert("held_out_rms_sigma".into(), x);
                }
                if let Some(x) = o.remove("held_out_rms_km_known_forces") {
                    o.insert("held_out_rms_sigma_known_forces".into(), x);
                }
                o.values_mut().for_each(rename);
            }
            serde_json::Value::Array(a) => a.iter_mut().for_each(rename),
            _ => {}
        }
    }
    rename(j);
    if let Some(o) = j.as_object_mut() {
        o.remove("rms_km_before");
        o.remove("rms_km_after");
        o.insert("rms_sigma_before".into(), l.base.rms_sigma.into());
        let after = l
            .chosen
            .as_ref()
            .map_or(l.base.rms_sigma, |c| c.fit.rms_sigma);
        o.insert("rms_sigma_after".into(), after.into());
    }
}

fn summarize(l: &Learned, out: &Path, scale: Unit) {
    let v = &l.base.verdict;
    println!(
        "base fit: RMS {}, χ² {:.1} on {} dof, verdict {}",
        scale.fit_rms(&l.base),
        v.chi2,
        v.dof,
        if v.anomaly { "anomaly" } else { "no_anomaly" }
    );
    if let Some(st) = l.search_stats {
        let (n, g, s) = (st.evaluations, st.generations, st.seconds);
        println!(
            "search: {n} candidates in {g} generations over {} seed(s), {s:.1} s ({:.0} per second), stopped by {}",
            st.runs,
            n as f64 / s.max(1e-9),
            st.termination.as_str().replace('_', " ")
        );
    }
    let agreeing = l.seed_runs.iter().filter(|r| r.agrees).count();
    if !l.seed_runs.is_empty() {
        if l.seed_runs.iter().all(|r| r.formula.is_none()) {
            println!("seeds: none of {} chose a model", l.seed_runs.len());
        } else if agreeing == l.seed_runs.len() {
            println!("seeds: {agreeing} of {agreeing} chose the reported model");
        } else {
            println!(
                "seeds: DISAGREE — {agreeing} of {} chose the reported model:",
                l.seed_runs.len()
            );
            for r in &l.seed_runs {
                println!(
                    "  seed {}{}: {}",
                    r.seed,
                    if r.agrees { " (agrees)" } else { "" },
                    r.formula.as_deref().unwrap_or("nothing")
                );
            }
        }
    }
    for f in &l.front {
        let held = f
            .held_out_rms
            .map(|h| format!(", held-out {}", scale.text(h)))
            .unwrap_or_default();
        println!(
            "  front [{}] cost {:.1}{held}: {}",
            f.complexity, f.cost, f.formula
        );
    }
    match &l.chosen {
        Some(c) => {
            println!(
                "learned: {}\n  RMS {} → {}; held-out {} (known forces: {})",
                c.terms.text(),
                scale.fit_rms(&l.base),
                scale.fit_rms(&c.fit),
                scale.text(c.held_out_rms),
                l.held_out_rms_base
                    .map_or("n/a".to_string(), |h| scale.text(h))
            );
            for (n, (v, s)) in c
                .terms
                .nodes
                .iter()
                .zip(c.terms.coefficients.iter().zip(&c.terms.sigmas))
            {
                println!("  {n}: {v:.6e} ± {s:.2e} km/s² per unit");
            }
            let units = learned_forces::expr::units::constant_units(&c.terms.nodes);
            for (i, (v, s)) in c
                .terms
                .constants
                .iter()
                .zip(&c.terms.constant_sigmas)
                .enumerate()
            {
                let unit = match units.get(i).cloned().flatten() {
                    Some(u) if u != "1" => format!(" {u}"),
                    _ => String::new(),
                };
                if v.is_finite() {
                    println!("  k{i} = {v:.6e} ± {s:.2e}{unit}");
                }
            }
        }
        None => println!("learned: no terms"),
    }
    for n in &l.notes {
        println!("note: {n}");
    }
    println!("outcome: {}", outcome_sentence(l));
    println!("wrote {}", out.display());
}

/// The outcome in one plain sentence.
fn outcome_sentence(l: &Learned) -> String {
    let o = l.outcome();
    let detail = match o {
        Outcome::NoAnomaly => "the known forces explain the arc; nothing was learned".to_string(),
        Outcome::Explained => "the learned model explains the arc (it passes the anomaly test the known forces failed)".to_string(),
        Outcome::NotExplained => format!(
            "NOT EXPLAINED: with the learned model the arc still fails the anomaly test ({})",
            l.chosen.as_ref().map(|c| c.fit.verdict.reasons.join("; ")).unwrap_or_default()
        ),
        Outcome::NothingFound => "NOT EXPLAINED: the arc is anomalous and no candidate earned its place".to_string(),
    };
    format!("{} — {detail}", o.as_str())
}

fn report(a: &Args, l: &Learned, file: &LearnedFile) -> serde_json::Value {
    let chosen = l.chosen.as_ref();
    serde_json::json!({
        "command": "learn",
        "arcwise_version": env!("CARGO_PKG_VERSION"),
        "arc_file": a.arc.display().to_string(),
        "forces_file": a.forces.display().to_string(),
        "learned_file": a.out.display().to_string(),
        "checksum": file.checksum,
        "seed": a.seed,
        // `outcome`: no_anomaly | explained | not_explained | nothing_found (the verdict of
        // the model written, not of the base fit); `verdict_known_forces` is the base fit's.
        "outcome": l.outcome().as_str(),
        "explained": l.outcome().is_explained(),
        "outcome_sentence": outcome_sentence(l),
        "verdict_known_forces": if l.base.verdict.anomaly { "anomaly" } else { "no_anomaly" },
        "verdict_learned": chosen.map(|c| if c.fit.verdict.anomaly { "anomaly" } else { "no_anomaly" }),
        "base_fit": fit_json(&l.base),
        "model": chosen.map(|c| c.terms.text()),
        // `absorbed_by_initial_state`: the share of the term's signature on this arc that
        // a change of the initial state reproduces (near 1: degenerate with the orbit).
        "terms": file.terms.iter().enumerate().map(|(i, t)| serde_json::json!({
            "formula": t.formula, "coefficient": t.coefficient, "sigma": t.sigma,
            "absorbed_by_initial_state": chosen.and_then(|c| c.absorbed.get(i)).copied(),
        })).collect::<Vec<_>>(),
        "constants": file.constants.iter().map(|c| serde_json::json!({"name": c.name, "value": c.value, "sigma": c.sigma, "unit": c.unit})).collect::<Vec<_>>(),
        "rms_km_before": l.base.rms_km,
        "rms_km_after": chosen.map(|c| c.fit.rms_km).unwrap_or(l.base.rms_km),
        "held_out_rms_km": chosen.map(|c| c.held_out_rms),
        "held_out_rms_km_known_forces": l.held_out_rms_base,
        "pareto_front": l.front.iter().map(|f| serde_json::json!({
            "complexity": f.complexity, "cost": f.cost, "formula": f.formula, "held_out_rms_km": f.held_out_rms,
        })).collect::<Vec<_>>(),
        "search": l.search_stats.map(|s| serde_json::json!({
            "candidates": s.evaluations,
            "generations": s.generations,
            "seconds": s.seconds,
            "stopped_by": s.termination.as_str(),
        })),
        // One entry per search seed: what it chose and whether that is equivalent to
        // the reported model.
        "seeds": {
            "runs": l.seed_runs.len(),
            "agreeing": l.seed_runs.iter().filter(|r| r.agrees).count(),
            "per_seed": l.seed_runs.iter().map(|r| serde_json::json!({
                "seed": r.seed, "formula": r.formula, "held_out_rms_km": r.held_out_rms,
                "agrees": r.agrees,
            })).collect::<Vec<_>>(),
        },
        // The scans that seeded the periodic and switch-on blocks: per block, the best
        // trial period (s, with its phase, rad) and onset (s from the arc's start), and
        // how much each lowers the training χ² (empty when nothing was searched; a
        // block whose columns are not finite on the arc is left out).
        "timing_scan": l.timing.as_ref().map(|(t, base)| t.periods.iter().zip(&t.onsets).filter_map(|(p, o)| {
            let ((period, pc, phase), (onset, oc, _)) = (p.best()?, o.best()?);
            Some(serde_json::json!({
                "block": p.block,
                "best_period_s": period,
                "phase_rad": phase,
                "period_chi2_reduction": base - pc,
                "best_onset_s": onset,
                "onset_chi2_reduction": base - oc,
            }))
        }).collect::<Vec<_>>()).unwrap_or_default(),
        "notes": l.notes,
        "learned_fit": chosen.map(|c| fit_json(&c.fit)),
    })
}

/// The periodograms and the onset scans that seeded the search: per block, how much a
/// periodic or switched-on form of it lowers the training χ² at each trial.
fn plot_scans(dir: &Path, timing: &Timing, base_cost: f64) -> Result<(), CliError> {
    let panel = |scans: &[Scan], y: &str| Panel {
        y_label: y.into(),
        series: scans
            .iter()
            .map(|s| Series {
                name: s.block.clone(),
                points: s
                    .curve
                    .iter()
                    .map(|(x, c)| (x / 3600.0, base_cost - c))
                    .collect(),
                points_only: false,
            })
            .collect(),
        ..Panel::default()
    };
    write_panels(
        &dir.join(PLOT_FILES[3]),
        "Periodogram of the training residual, per block (sin and cos at each period)",
        "trial period (hours)",
        &[panel(&timing.periods, "χ² reduction")],
    )?;
    write_panels(
        &dir.join(PLOT_FILES[4]),
        "Onset scan of the training residual, per block (switched on at each epoch)",
        "trial onset (hours since the arc's start)",
        &[panel(&timing.onsets, "χ² reduction")],
    )
}

fn plots(
    dir: &Path,
    l: &Learned,
    arc: &learned_forces::arc::Arc,
    make: &(dyn Fn(propagator::Epoch) -> Result<propagator::ForceModel, String> + Sync),
    context: Context,
    options: &LearnOptions,
) -> Result<(), CliError> {
    let fit = &options.fit;
    // Where selection's held-out tail begins (the same cut as the learner's).
    let last = l.base.residuals.last().map(|r| r.t_s).unwrap_or(0.0);
    let held_out_from = Some((1.0 - options.holdout_fraction) * last);
    plot_fit_residuals(
        &dir.join(PLOT_FILES[0]),
        "Residuals with the known forces",
        &l.base,
        arc,
        held_out_from,
    )?;
    if let Some((timing, base_cost)) = &l.timing {
        plot_scans(dir, timing, *base_cost)?;
    }
    let Some(c) = &l.chosen else { return Ok(()) };
    plot_fit_residuals(
        &dir.join(PLOT_FILES[1]),
        "Residuals with the learned force",
        &c.fit,
        arc,
        held_out_from,
    )?;
    let times: Vec<f64> = c.fit.residuals.iter().map(|r| r.t_s).collect();
    let model = make(c.fit.epoch0).map_err(CliError::input)?;
    let states = trajectory(model, &c.fit, &c.terms.nodes, context.clone(), &times, fit)
        .map_err(|e| CliError::input(e.to_string()))?;
    let mut rtn: Vec<[f64; 3]> = Vec::new();
    for (t, x) in times.iter().zip(&states) {
        let p = learned_forces::expr::Terminals::of_state(*t, x, &context);
        let mut a = nalgebra::Vector3::zeros();
        for (n, ci) in c.terms.nodes.iter().zip(&c.terms.coefficients) {
            let v = n.eval(&p, &c.terms.constants).vector();
            a += nalgebra::Vector3::new(v[0], v[1], v[2]) * *ci;
        }
        let r = nalgebra::Vector3::new(x[0], x[1], x[2]);
        let v = nalgebra::Vector3::new(x[3], x[4], x[5]);
        let m = eci_to_rtn(&r, &v).unwrap_or_else(nalgebra::Matrix3::identity);
        let q = m * a;
        rtn.push([q[0], q[1], q[2]]);
    }
    let panels: Vec<Panel> = ["R", "T", "N"]
        .iter()
        .enumerate()
        .map(|(k, name)| Panel {
            y_label: format!("{name} (km/s²)"),
            series: vec![Series {
                name: format!("learned acceleration, {name}"),
                points: times
                    .iter()
                    .zip(&rtn)
                    .map(|(t, q)| (t / 3600.0, q[k]))
                    .collect(),
                points_only: false,
            }],
            ..Panel::default()
        })
        .collect();
    write_panels(
        &dir.join(PLOT_FILES[2]),
        "Learned acceleration in RTN",
        &format!("hours since {}", c.fit.epoch0),
        &panels,
    )
}
