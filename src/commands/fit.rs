//! `arcwise fit`: an arc + forces → fitted state, residuals in RTN, anomaly verdict.

use crate::error::CliError;
use crate::plot::{write_panels, Panel, Series};
use crate::progress::FitProgress;
use crate::report::{state_json, write_report};
use clap::Args as ClapArgs;
use learned_forces::arc::Arc;
use learned_forces::fit::model::{FitModel, Parameter};
use learned_forces::fit::{fit, FitOptions, FitResult};
use learned_forces::model_error::ModelError;
use propagator::config::ForcesFile;
use std::path::{Path, PathBuf};

/// Options of `arcwise fit`.
#[derive(ClapArgs, Debug)]
pub struct Args {
    /// Observation arc (.csv, .oem or .sp3), or tracking measurements (.tdm, or .csv in
    /// the measurement layout, with --sites).
    #[arg(long, value_name = "ARC.csv")]
    arc: PathBuf,
    /// Known force model.
    #[arg(long, value_name = "FORCES.yaml")]
    forces: PathBuf,
    /// Also estimate these, comma-separated: drag_scale, srp_scale (scale factors),
    /// emp_const_rtn, emp_1rev_rtn, emp_lin_rtn (constant, once-per-revolution and
    /// linearly drifting empirical RTN accelerations).
    #[arg(long, value_delimiter = ',', value_name = "LIST")]
    estimate: Vec<String>,
    #[command(flatten)]
    arc_options: super::ArcOptions,
    /// Observations beyond this many (robust) σ are edited out.
    #[arg(long, default_value_t = 5.0)]
    edit_sigma: f64,
    /// Size of the anomaly test (false-alarm probability).
    #[arg(long, default_value = "1e-3")]
    alpha: f64,
    /// Start the fit from this state (STATE.yaml, carried to the arc's first epoch with
    /// the known forces) instead of the initial orbit determined from the data.
    #[arg(long, value_name = "STATE.yaml")]
    initial: Option<PathBuf>,
    /// Write a JSON report here.
    #[arg(long, value_name = "R.json")]
    report: Option<PathBuf>,
    /// Draw the RTN residuals (SVG).
    #[arg(long, value_name = "residuals.svg")]
    plot: Option<PathBuf>,
}

/// Parses `--estimate` items.
pub fn parse_estimate(items: &[String]) -> Result<Vec<Parameter>, CliError> {
    let mut out = Vec::new();
    for item in items.iter().map(|s| s.trim()).filter(|s| !s.is_empty()) {
        let ps = Parameter::parse_list(item).ok_or_else(|| {
            CliError::input(format!(
                "--estimate {item}: expected one of {}",
                Parameter::ESTIMATE_WORDS.join(", ")
            ))
        })?;
        for p in ps {
            if !out.contains(&p) {
                out.push(p);
            }
        }
    }
    Ok(out)
}

/// The state of `path` carried to `start` under `model` (whose `t_s = 0` is `start`).
pub(crate) fn initial_at(
    path: &Path,
    spec: &ForcesFile,
    model: &propagator::ForceModel,
    start: &propagator::Epoch,
) -> Result<propagator::StateVector, CliError> {
    use propagator::propagation::{propagate, Options, Request, Silent};
    let given =
        propagator::config::StateFile::load(path, &spec.central_body).map_err(CliError::input)?;
    let t0 = given.epoch.seconds_since(start);
    if t0.abs() < 1e-6 {
        return Ok(given.state);
    }
    let request = Request {
        x0: given.state,
        t0_s: t0,
        t_end_s: 0.0,
        output_times_s: &[0.0],
        stop_times_s: &[],
    };
    let p = propagate(model, &request, &Options::default(), &mut Silent).map_err(|e| {
        CliError::input(format!(
            "{}: carrying the state to {start}: {e}",
            path.display()
        ))
    })?;
    p.samples.last().map(|(_, x)| *x).ok_or_else(|| {
        CliError::input(format!(
            "{}: the state does not reach {start}",
            path.display()
        ))
    })
}

/// Loads an arc and a force model on the arc's time axis, and fits it with the
/// `estimate` parameters, from `initial` (a state file) when given.
pub fn load_and_fit(
    arc_path: &Path,
    forces_path: &Path,
    arc_options: &super::ArcOptions,
    (estimate, options, initial): (&[Parameter], &FitOptions, Option<&Path>),
) -> Result<(Arc, ForcesFile, FitResult, ModelError), CliError> {
    let spec = ForcesFile::load(forces_path).map_err(CliError::input)?;
    let (arc, loaded, model_error) = arc_options.load(arc_path, &spec, forces_path)?;
    let mut options = options.clone();
    if let Some(path) = initial {
        options.initial_state = Some(initial_at(path, &spec, &loaded.model, &arc.start())?);
    }
    let options = &options;
    let model = FitModel::new(loaded.model, estimate, None)
        .map_err(|e| CliError::input(format!("{}: {e}", forces_path.display())))?;
    let mut progress = FitProgress::new("fit");
    let result = fit(&arc, model, options, &mut progress);
    progress.finish();
    let result = result.map_err(|e| CliError::input(format!("{}: {e}", arc_path.display())))?;
    Ok((arc, spec, result, model_error))
}

/// The JSON of a fit result (shared by `fit`, `learn` and `check`).
pub fn fit_json(r: &FitResult) -> serde_json::Value {
    let v = &r.verdict;
    let mut j = serde_json::json!({
        "verdict": if v.anomaly { "anomaly" } else { "no_anomaly" },
        "verdict_reasons": v.reasons,
        "rms_sigma": r.rms_sigma,
        "chi2": v.chi2,
        "dof": v.dof,
        "p_value": v.p_value,
        "alpha": v.alpha,
        "residual_structure": v.structure.iter().map(|s| serde_json::json!({
            "component": s.component, "ljung_box_q": s.q, "lags": s.lags, "p_value": s.p_value,
            "rms_sigma": s.rms_sigma, "counted_in_verdict": s.counted,
        })).collect::<Vec<_>>(),
        "edited": r.edited,
        "edited_observations": r.residuals.iter().filter(|x| !x.used).map(|x| serde_json::json!({
            "epoch_utc": x.epoch.to_utc_string(), "reason": x.edit_reason,
        })).collect::<Vec<_>>(),
        "observations": r.residuals.len(),
        "iterations": r.iterations,
        "converged": r.termination.converged(),
        "termination": r.termination.as_str(),
        "state_first": state_json(&r.epoch0, &r.x0),
        "state_first_sigma": { "r_km": &r.x0_sigma[..3], "v_km_s": &r.x0_sigma[3..] },
        "state_last": state_json(&r.epoch_last, &r.x_last),
        "parameters": r.estimates.iter().map(|e| serde_json::json!({
            "name": e.parameter.name(), "value": e.value, "sigma": e.sigma,
        })).collect::<Vec<_>>(),
    });
    if let Some(rms) = r.rms_km {
        j["rms_km"] = rms.into();
    }
    j
}

/// The per-site, per-kind residual summary of a tracking fit (report block).
pub fn tracking_json(r: &FitResult, arc: &Arc) -> serde_json::Value {
    serde_json::json!({
        "model": "two-way ranges with light time (site turning with the Earth); range rate at the down-leg instant; azimuth/elevation geometric, no refraction; RA/Dec astrometric (light time, no aberration), GCRF",
        "residuals": r.channels(arc).iter().map(|c| {
            let unit = c.kind.info().unit;
            serde_json::json!({
                "site": c.site, "measurement": c.kind.info().word, "unit": unit,
                "count": c.count, "used": c.used, "mean": c.mean, "rms": c.rms,
                "rms_sigma": c.rms_sigma,
            })
        }).collect::<Vec<_>>(),
    })
}

/// Draws a fit's residuals: R, T, N of a position arc, or each kind of measurement of a
/// tracking arc; with a line where the held-out part begins (`learn`).
pub fn plot_fit_residuals(
    path: &Path,
    title: &str,
    r: &FitResult,
    arc: &Arc,
    held_out_from_s: Option<f64>,
) -> Result<(), CliError> {
    if arc.tracking.is_some() {
        plot_tracking_residuals(path, title, r, arc, held_out_from_s)
    } else {
        plot_residuals(path, title, r, held_out_from_s)
    }
}

/// Draws a tracking fit's normalized residuals (residual / σ): one panel per kind of
/// measurement, one series per site.
fn plot_tracking_residuals(
    path: &Path,
    title: &str,
    r: &FitResult,
    arc: &Arc,
    held_out_from_s: Option<f64>,
) -> Result<(), CliError> {
    use learned_forces::fit::ResidualValue;
    let Some(t) = &arc.tracking else {
        return Ok(());
    };
    let mut panels = Vec::new();
    for info in propagator::tracking::measurement::Kind::TABLE {
        let series: Vec<Series> = t
            .sites
            .iter()
            .enumerate()
            .filter_map(|(si, entry)| {
                let points: Vec<(f64, f64)> = r
                    .residuals
                    .iter()
                    .filter(|x| x.used)
                    .filter_map(|x| match &x.value {
                        ResidualValue::Tracking {
                            site,
                            kind,
                            residual,
                            sigma,
                        } if *site == si && *kind == info.kind => {
                            Some((x.t_s / 3600.0, residual / sigma))
                        }
                        _ => None,
                    })
                    .collect();
                (!points.is_empty()).then(|| Series {
                    name: entry.site.name.clone(),
                    points,
                    points_only: true,
                })
            })
            .collect();
        if series.is_empty() {
            continue;
        }
        panels.push(Panel {
            y_label: format!("{} residual / σ", info.word),
            series,
            levels: vec![("±1σ".to_string(), 1.0), ("±1σ".to_string(), -1.0)],
            marks: held_out_from_s
                .map(|t| ("held-out part begins".to_string(), t / 3600.0))
                .into_iter()
                .collect(),
        });
    }
    write_panels(path, title, &format!("hours since {}", r.epoch0), &panels)
}

/// Draws R, T, N residuals (m) against hours from the first observation.
/// The R, T, N residuals against time, with the ±1σ band of the observations' stated
/// noise and, for `learn`, a line where the held-out part begins (`held_out_from_s`,
/// seconds from the fit's first observation).
fn plot_residuals(
    path: &Path,
    title: &str,
    r: &FitResult,
    held_out_from_s: Option<f64>,
) -> Result<(), CliError> {
    let sigmas: Vec<f64> = r
        .residuals
        .iter()
        .filter(|x| x.used)
        .filter_map(|x| match &x.value {
            learned_forces::fit::ResidualValue::State { sigma_km, .. } => Some(*sigma_km),
            learned_forces::fit::ResidualValue::Tracking { .. } => None,
        })
        .collect();
    let sigma_m = sigmas.iter().sum::<f64>() / sigmas.len().max(1) as f64 * 1e3;
    let panels: Vec<Panel> = ["R", "T", "N"]
        .iter()
        .enumerate()
        .map(|(c, name)| Panel {
            y_label: format!("{name} residual (m)"),
            series: vec![Series {
                name: format!("{name}, observed − fitted"),
                points: r
                    .residuals
                    .iter()
                    .filter(|x| x.used)
                    .filter_map(|x| Some((x.t_s / 3600.0, x.rtn_km()?[c] * 1e3)))
                    .collect(),
                points_only: true,
            }],
            levels: vec![
                (format!("±1σ stated noise ({sigma_m:.2} m)"), sigma_m),
                (format!("±1σ stated noise ({sigma_m:.2} m)"), -sigma_m),
            ],
            marks: held_out_from_s
                .map(|t| ("held-out part begins".to_string(), t / 3600.0))
                .into_iter()
                .collect(),
        })
        .collect();
    write_panels(path, title, &format!("hours since {}", r.epoch0), &panels)
}

/// Runs the command.
pub fn run(a: Args) -> Result<(), CliError> {
    crate::paths::check_distinct(
        &a.arc_options.inputs(
            &[("--arc", &a.arc), ("--forces", &a.forces)],
            &[("--initial", a.initial.as_deref())],
        ),
        &crate::paths::given(&[
            ("--report", a.report.as_deref()),
            ("--plot", a.plot.as_deref()),
        ]),
    )?;
    let estimate = parse_estimate(&a.estimate)?;
    let options = FitOptions {
        edit_sigma: a.edit_sigma,
        alpha: a.alpha,
        ..FitOptions::default()
    };
    if !(a.edit_sigma.is_finite() && a.edit_sigma >= 2.0) {
        return Err(CliError::input("--edit-sigma must be at least 2"));
    }
    if !(a.alpha > 0.0 && a.alpha < 0.5) {
        return Err(CliError::input("--alpha must be between 0 and 0.5"));
    }
    let (arc, _, r, model_error) = load_and_fit(
        &a.arc,
        &a.forces,
        &a.arc_options,
        (&estimate, &options, a.initial.as_deref()),
    )?;
    let v = &r.verdict;
    if model_error.floor_km > 0.0 {
        println!(
            "model error: {:.3} m added in quadrature to each σ ({})",
            model_error.floor_km * 1e3,
            model_error.basis
        );
    }
    let rms = match r.rms_km {
        Some(km) => format!("RMS {:.2} m", km * 1e3),
        None => format!("RMS {:.2} σ", r.rms_sigma),
    };
    println!(
        "fit of {} observations: {rms}, χ² {:.1} on {} dof (p = {:.3}), {} edited, {} iterations{}",
        r.residuals.len(),
        v.chi2,
        v.dof,
        v.p_value,
        r.edited,
        r.iterations,
        if r.termination.converged() {
            String::new()
        } else {
            format!(" (not converged: {})", r.termination.as_str())
        }
    );
    for e in &r.estimates {
        println!(
            "  {} = {:.6e} ± {:.2e}",
            e.parameter.name(),
            e.value,
            e.sigma
        );
    }
    for c in r.channels(&arc) {
        println!(
            "  {} {}: {} used of {}, mean {:+.3e}, RMS {:.3e} {} ({:.2} σ)",
            c.site,
            c.kind.info().word,
            c.used,
            c.count,
            c.mean,
            c.rms,
            c.kind.info().unit,
            c.rms_sigma
        );
    }
    if v.anomaly {
        println!("verdict: anomaly — the known forces do not explain this arc:");
        for reason in &v.reasons {
            println!("  {reason}");
        }
    } else {
        println!("verdict: no_anomaly — the residuals are consistent with the stated noise");
    }
    if let Some(p) = &a.plot {
        let title = format!("Fit residuals, {}", a.arc.display());
        plot_fit_residuals(p, &title, &r, &arc, None)?;
    }
    if let Some(path) = &a.report {
        let mut j = fit_json(&r);
        j["command"] = "fit".into();
        j["arcwise_version"] = env!("CARGO_PKG_VERSION").into();
        j["arc_file"] = a.arc.display().to_string().into();
        j["forces_file"] = a.forces.display().to_string().into();
        j["model_error"] = super::model_error_json(&model_error);
        if arc.tracking.is_some() {
            j["tracking"] = tracking_json(&r, &arc);
        }
        write_report(path, &j)?;
    }
    Ok(())
}
