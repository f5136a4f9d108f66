//! `arcwise check`: predict the next arc from a learned file's end state, with and
//! without the learned force, and gate on the result.

use crate::error::{CliError, EXIT_CHECK_FAILED};
use crate::plot::{write_panels, Panel, Series};
use crate::report::write_report;
use clap::Args as ClapArgs;
use learned_forces::arc::{Arc, ArcDefaults};
use learned_forces::learned_file::{LearnedFile, LearnedResolver};
use nalgebra::Vector3;
use propagator::config::ForcesFile;
use propagator::frames::eci_to_rtn;
use propagator::propagation::{propagate, Options, Request, Silent};
use propagator::{Epoch, ForceModel, StateVector, TimeAxis};
use std::path::PathBuf;

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
    /// Fail (exit 1) when the learned prediction's RMS exceeds this, km. Without it the
    /// check fails when the learned prediction is no better than the known forces'.
    #[arg(long, value_name = "KM")]
    max_rms_km: Option<f64>,
    /// σ of observations without a sigma_km column, km.
    #[arg(long, default_value_t = 0.01, value_name = "KM")]
    sigma_km: f64,
    /// Write a JSON report here.
    #[arg(long, value_name = "R.json")]
    report: Option<PathBuf>,
    /// Draw both predictions' errors against time (SVG).
    #[arg(long, value_name = "P.svg")]
    plot: Option<PathBuf>,
}

struct Prediction {
    errors_rtn_km: Vec<Vector3<f64>>,
    rms_km: f64,
    max_km: f64,
}

fn predict(
    model: &ForceModel,
    x0: StateVector,
    times: &[f64],
    arc: &Arc,
) -> Result<Prediction, CliError> {
    let end = *times.last().unwrap_or(&0.0);
    let req = Request {
        x0,
        t0_s: 0.0,
        t_end_s: end,
        output_times_s: times,
        stop_times_s: &[],
    };
    let p = propagate(model, &req, &Options::default(), &mut Silent)
        .map_err(|e| CliError::input(format!("prediction failed: {e}")))?;
    if p.samples.len() != times.len() {
        return Err(CliError::input(
            "the prediction decays before the end of the arc",
        ));
    }
    let mut errors = Vec::with_capacity(times.len());
    let (mut ss, mut mx) = (0.0, 0.0f64);
    for ((_, x), o) in p.samples.iter().zip(&arc.observations) {
        let r = Vector3::new(x[0], x[1], x[2]);
        let v = Vector3::new(x[3], x[4], x[5]);
        let d = o.r_km - r;
        ss += d.norm_squared();
        mx = mx.max(d.norm());
        errors.push(eci_to_rtn(&r, &v).map(|m| m * d).unwrap_or(d));
    }
    Ok(Prediction {
        errors_rtn_km: errors,
        rms_km: (ss / times.len().max(1) as f64).sqrt(),
        max_km: mx,
    })
}

fn rms_of(v: &[Vector3<f64>], c: usize) -> f64 {
    (v.iter().map(|e| e[c] * e[c]).sum::<f64>() / v.len().max(1) as f64).sqrt()
}

/// Runs the command.
pub fn run(a: Args) -> Result<(), CliError> {
    if let Some(m) = a.max_rms_km {
        if !(m.is_finite() && m > 0.0) {
            return Err(CliError::input(
                "--max-rms-km must be a positive number of km",
            ));
        }
    }
    let file = LearnedFile::load(&a.learned).map_err(CliError::input)?;
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
    let s = &file.state_at_end;
    let epoch = Epoch::parse_utc(&s.epoch_utc)
        .map_err(|e| CliError::input(format!("{}: state_at_end: {e}", a.learned.display())))?;
    let x0 = StateVector::new(
        s.r_km[0],
        s.r_km[1],
        s.r_km[2],
        s.v_km_s[0],
        s.v_km_s[1],
        s.v_km_s[2],
    );
    let axis = TimeAxis::new(epoch);
    let times: Vec<f64> = arc
        .observations
        .iter()
        .map(|o| axis.seconds(&o.epoch))
        .collect();
    if times[0] < 0.0 {
        return Err(CliError::input(format!(
            "{}: the arc starts at {}, before the learned file's end state ({epoch}): give the arc that follows the training arc",
            a.arc.display(),
            arc.start()
        )));
    }
    let base_model = spec
        .build_with(&a.forces, epoch, &LearnedResolver)
        .map_err(CliError::input)?
        .model;
    let mut learned_model = spec
        .build_with(&a.forces, epoch, &LearnedResolver)
        .map_err(CliError::input)?
        .model;
    learned_model
        .push(Box::new(file.force(&epoch).map_err(|e| {
            CliError::input(format!("{}: {e}", a.learned.display()))
        })?));
    let base = predict(&base_model, x0, &times, &arc)?;
    let learned = predict(&learned_model, x0, &times, &arc)?;
    let passed = match a.max_rms_km {
        Some(m) => learned.rms_km <= m,
        None => learned.rms_km < base.rms_km,
    };
    // Error growth: RMS per quarter of the arc.
    let quarters: Vec<f64> = (0..4)
        .map(|q| {
            let n = times.len();
            let (lo, hi) = (q * n / 4, ((q + 1) * n / 4).max(q * n / 4 + 1).min(n));
            let e = &learned.errors_rtn_km[lo..hi];
            (e.iter().map(|v| v.norm_squared()).sum::<f64>() / e.len().max(1) as f64).sqrt()
        })
        .collect();
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
        rms_of(&learned.errors_rtn_km, 0) * 1e3,
        rms_of(&learned.errors_rtn_km, 1) * 1e3,
        rms_of(&learned.errors_rtn_km, 2) * 1e3,
        quarters
            .iter()
            .map(|q| format!("{:.2} m", q * 1e3))
            .collect::<Vec<_>>()
            .join(", ")
    );
    println!("check {}", if passed { "passed" } else { "FAILED" });
    if let Some(p) = &a.plot {
        let series = |name: &str, pr: &Prediction| Series {
            name: name.into(),
            points: times
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
                    series("with the learned force", &learned),
                    series("known forces only", &base),
                ],
            }],
        )?;
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
            "rms_rtn_km_learned": [rms_of(&learned.errors_rtn_km, 0), rms_of(&learned.errors_rtn_km, 1), rms_of(&learned.errors_rtn_km, 2)],
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
