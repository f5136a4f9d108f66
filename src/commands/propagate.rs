//! `arcwise propagate`: a state + forces → an ephemeris (OEM or CSV).

use crate::error::CliError;
use crate::progress::PropagationProgress;
use crate::report::{state_json, write_report};
use clap::Args as ClapArgs;
use propagator::config::{ForcesFile, InitialState, StateFile};
use propagator::ephemeris::{Ephemeris, EphemerisPoint, Format};
use propagator::frames::Frame;
use propagator::integrator::{Method, Settings};
use propagator::propagation::{
    checked_output_grid, propagate, Options, Propagated, Request, Termination,
};
use propagator::{Epoch, TimeAxis};
use std::path::{Path, PathBuf};
use std::time::Instant;

/// Options of `arcwise propagate`.
#[derive(ClapArgs, Debug)]
pub struct Args {
    /// Force model (forces.yaml).
    #[arg(long, value_name = "FORCES.yaml")]
    forces: PathBuf,
    /// Initial state: a STATE.yaml (`epoch_utc` and `r_km` + `v_km_s`, or `elements`),
    /// or an ephemeris (.oem or .csv) to continue from its last state.
    #[arg(long, value_name = "STATE.yaml|EPH.oem|EPH.csv")]
    state: PathBuf,
    /// Final epoch, ISO 8601 UTC (earlier than the state's epoch propagates backward).
    #[arg(long, value_name = "EPOCH")]
    to: String,
    /// Spacing of the output states, seconds.
    #[arg(long, value_name = "SECONDS")]
    step: f64,
    /// Output ephemeris; the format follows the extension (.oem or .csv).
    #[arg(long, value_name = "FILE")]
    out: PathBuf,
    /// Frame of the written states: GCRF (default), EME2000 or ITRF (Earth-fixed, through
    /// the shipped IERS Earth-orientation data). An OEM names it in REF_FRAME; a CSV does
    /// not, so say it when the file is read back (`--frame`). A CSV --state is read as
    /// GCRF.
    #[arg(long, value_name = "FRAME", default_value = "GCRF")]
    frame: String,
    /// Integrator: rk4 (fixed step), dp54 or dp853 (adaptive).
    #[arg(long, default_value = "dp853", value_name = "NAME")]
    integrator: String,
    /// Relative tolerance of the adaptive integrators.
    #[arg(long, default_value = "1e-11")]
    rtol: f64,
    /// Absolute tolerance of the adaptive integrators (km, km/s).
    #[arg(long, default_value = "1e-11")]
    atol: f64,
    /// Largest integration step, seconds.
    #[arg(long, default_value_t = 3600.0, value_name = "SECONDS")]
    max_step: f64,
    /// Smallest integration step before giving up, seconds.
    #[arg(long, default_value = "1e-6", value_name = "SECONDS")]
    min_step: f64,
    /// Fixed integration step of rk4, seconds.
    #[arg(long, default_value_t = 10.0, value_name = "SECONDS")]
    rk4_step: f64,
    /// The propagation ends as "decayed" below this altitude, km.
    #[arg(long, default_value_t = 100.0, value_name = "KM")]
    floor_km: f64,
    /// Write a JSON report here.
    #[arg(long, value_name = "R.json")]
    report: Option<PathBuf>,
}

/// The initial state from a state file, the last state of an ephemeris, or a learned
/// file's fitted end state (`state_at_end`).
fn load_initial(
    path: &std::path::Path,
    body: &propagator::CentralBody,
    earth: Option<&propagator::earth::EarthOrientation>,
) -> Result<InitialState, CliError> {
    match Format::from_path(path) {
        Ok(_) => {
            let eph = Ephemeris::load_with(path, body, earth).map_err(CliError::input)?;
            let last = eph
                .points
                .last()
                .ok_or_else(|| CliError::input(format!("{}: no states", path.display())))?;
            Ok(InitialState {
                epoch: last.epoch,
                state: last.state,
                object_name: (!eph.object_name.is_empty()).then(|| eph.object_name.clone()),
                object_id: (!eph.object_id.is_empty() && eph.object_id != "UNKNOWN")
                    .then(|| eph.object_id.clone()),
            })
        }
        Err(_) => {
            let text = propagator::input::read_text(path, propagator::input::MAX_CONFIG_BYTES)
                .map_err(|e| CliError::input(format!("{}: {e}", path.display())))?;
            if text.contains("format_version:") && text.contains("state_at_end:") {
                let f = learned_forces::learned_file::LearnedFile::load(path)
                    .map_err(CliError::input)?;
                let (epoch, state) = f
                    .state_at_end
                    .state("state_at_end")
                    .map_err(|e| CliError::input(format!("{}: {e}", path.display())))?;
                propagator::config::check_state_plausible(&state, body)
                    .map_err(|e| CliError::input(format!("{}: {e}", path.display())))?;
                return Ok(InitialState {
                    epoch,
                    state,
                    object_name: Some(f.name.clone()),
                    object_id: None,
                });
            }
            StateFile::parse(&text, path, body).map_err(CliError::input)
        }
    }
}

/// The output states in increasing time. For an OEM of a forward propagation, a new
/// segment starts at each impulsive maneuver with the state just after it (the previous
/// segment ends with the state just before), as the OEM standard intends: interpolation
/// must never run across a burn. CSV has no segments and keeps the plain grid.
fn ephemeris_points(
    result: &propagator::propagation::Propagated,
    axis: &TimeAxis,
    t_end: f64,
    segmented: bool,
) -> (Vec<EphemerisPoint>, Vec<usize>) {
    let point = |t: f64, x: propagator::StateVector| EphemerisPoint {
        epoch: axis.epoch(t),
        state: x,
    };
    let mut points: Vec<EphemerisPoint> = Vec::new();
    let mut starts = Vec::new();
    if !segmented || t_end < 0.0 || result.maneuvers.is_empty() {
        points = result.samples.iter().map(|(t, x)| point(*t, *x)).collect();
        // Ephemeris files are in increasing time, whichever way we propagated.
        if t_end < 0.0 {
            points.reverse();
        }
        return (points, starts);
    }
    let mut burns = result.maneuvers.iter().peekable();
    for (t, x) in &result.samples {
        while let Some(b) = burns.peek() {
            if b.t_s > *t {
                break;
            }
            // Close the segment at the burn (unless the grid already holds that epoch,
            // whose sample is the pre-burn state), and open the next just after it.
            if b.t_s < *t {
                points.push(point(b.t_s, b.before));
            }
            if b.t_s == *t {
                points.push(point(*t, *x));
            }
            starts.push(points.len());
            points.push(point(b.t_s, b.after));
            burns.next();
        }
        if points.last().is_some_and(|p| p.epoch == axis.epoch(*t)) {
            continue;
        }
        points.push(point(*t, *x));
    }
    (points, starts)
}

/// Runs the command.
pub fn run(a: Args) -> Result<(), CliError> {
    crate::paths::check_distinct(
        &[("--forces", &a.forces), ("--state", &a.state)],
        &crate::paths::given(&[
            ("--out", Some(a.out.as_path())),
            ("--report", a.report.as_deref()),
        ]),
    )?;
    let frame = super::frame_option(&a.frame)?;
    let settings = checked_settings(&a)?;
    let method = settings.method;
    Format::from_path(&a.out).map_err(CliError::input)?;
    let to = Epoch::parse_utc(&a.to).map_err(|e| CliError::input(format!("--to: {e}")))?;
    let spec = ForcesFile::load(&a.forces).map_err(CliError::input)?;
    // An Earth-fixed output through the same Earth-orientation data as the field.
    let earth = spec.earth_orientation(&a.forces).map_err(CliError::input)?;
    let initial = load_initial(&a.state, &spec.central_body, earth.as_ref())?;
    let axis = TimeAxis::new(initial.epoch);
    let loaded = spec
        .build_with(
            &a.forces,
            initial.epoch,
            &learned_forces::learned_file::LearnedResolver,
        )
        .map_err(CliError::input)?;
    let t_end = axis.seconds(&to);
    if t_end == 0.0 {
        return Err(CliError::input(
            "--to equals the state's epoch: nothing to propagate",
        ));
    }
    let options = Options {
        settings,
        altitude_floor_km: a.floor_km,
        body: loaded.body,
        altitude: loaded.altitude,
    };
    let grid = checked_output_grid(0.0, t_end, a.step)
        .map_err(|e| CliError::input(format!("--step: {e}")))?;
    let request = Request {
        x0: initial.state,
        t0_s: 0.0,
        t_end_s: t_end,
        output_times_s: &grid,
        stop_times_s: &[],
    };
    let mut progress = PropagationProgress::new("propagate");
    let started = Instant::now();
    let result = propagate(&loaded.model, &request, &options, &mut progress);
    progress.finish();
    let result = result.map_err(|e| {
        CliError::input(format!(
            "propagation failed: {}",
            e.with_utc(&initial.epoch)
        ))
    })?;
    let wall_s = started.elapsed().as_secs_f64();

    let oem = matches!(Format::from_path(&a.out), Ok(Format::Oem));
    let (points, segment_starts) = ephemeris_points(&result, &axis, t_end, oem);
    let eph = Ephemeris {
        object_name: initial.object_name.clone().unwrap_or_default(),
        object_id: initial.object_id.clone().unwrap_or_default(),
        points,
        segment_starts,
        frame: Frame::Gcrf,
    }
    .in_frame(frame, earth.as_ref())
    .map_err(CliError::input)?;
    eph.save(&a.out).map_err(CliError::input)?;

    let end_epoch = axis.epoch(result.final_state.0);
    match result.termination {
        Termination::Completed => println!(
            "propagated {} → {} with {} ({}); {} states written to {}",
            initial.epoch,
            end_epoch,
            method.name(),
            loaded.model.names().join(" + "),
            eph.points.len(),
            a.out.display()
        ),
        Termination::Decayed { t_s, floor_km } => println!(
            "decayed: the altitude fell below {floor_km} km at {}; the ephemeris ({} states, {}) ends there",
            axis.epoch(t_s),
            eph.points.len(),
            a.out.display()
        ),
    }
    if let Some(path) = &a.report {
        let run = Run {
            method,
            start: &initial.epoch,
            to: &to,
            axis: &axis,
            wall_s,
            states_written: eph.points.len(),
            frame,
        };
        report(path, &a, &loaded.model.names(), &result, &run)?;
    }
    Ok(())
}

/// The integrator settings the options ask for, checked.
fn checked_settings(a: &Args) -> Result<Settings, CliError> {
    let method = Method::parse(&a.integrator).ok_or_else(|| {
        CliError::input(format!(
            "--integrator {}: expected rk4, dp54 or dp853",
            a.integrator
        ))
    })?;
    if !(a.step.is_finite() && a.step > 0.0) {
        return Err(CliError::input(format!(
            "--step {}: must be a positive number of seconds",
            a.step
        )));
    }
    if !a.floor_km.is_finite() {
        return Err(CliError::input("--floor-km must be finite"));
    }
    let settings = Settings {
        method,
        rtol: a.rtol,
        atol: a.atol,
        fixed_step_s: a.rk4_step,
        max_step_s: a.max_step,
        min_step_s: a.min_step,
        ..Settings::default()
    };
    settings.validate().map_err(CliError::input)?;
    Ok(settings)
}

/// What the report says of the run besides the propagation's own result.
struct Run<'a> {
    method: Method,
    start: &'a Epoch,
    to: &'a Epoch,
    axis: &'a TimeAxis,
    wall_s: f64,
    states_written: usize,
    frame: Frame,
}

/// The JSON report of a propagation.
fn report(
    path: &Path,
    a: &Args,
    forces: &[String],
    result: &Propagated,
    run: &Run,
) -> Result<(), CliError> {
    let axis = run.axis;
    let (t_fin, x_fin) = result.final_state;
    let end_epoch = axis.epoch(t_fin);
    let (termination, decay) = match result.termination {
        Termination::Completed => ("completed", serde_json::Value::Null),
        Termination::Decayed { t_s, floor_km } => (
            "decayed",
            serde_json::json!({ "epoch_utc": axis.epoch(t_s).to_utc_string(), "floor_km": floor_km }),
        ),
    };
    let stats = result.stats;
    let report = serde_json::json!({
        "command": "propagate",
        "arcwise_version": env!("CARGO_PKG_VERSION"),
        "forces_file": a.forces.display().to_string(),
        "forces": forces,
        "integrator": run.method.name(),
        "rtol": a.rtol,
        "atol": a.atol,
        "start_utc": run.start.to_utc_string(),
        "requested_end_utc": run.to.to_utc_string(),
        "termination": termination,
        "decay": decay,
        "final_state": state_json(&end_epoch, &x_fin),
        "states_written": run.states_written,
        "maneuvers_applied": result.maneuvers.iter().map(|m| serde_json::json!({
            "epoch_utc": axis.epoch(m.t_s).to_utc_string(),
            "dv_eci_km_s": [m.after[3] - m.before[3], m.after[4] - m.before[4], m.after[5] - m.before[5]],
        })).collect::<Vec<_>>(),
        "output_step_s": a.step,
        "steps_accepted": stats.accepted,
        "steps_rejected": stats.rejected,
        "force_evaluations": stats.evaluations,
        "wall_s": run.wall_s,
        "output_file": a.out.display().to_string(),
        "output_frame": run.frame.keyword(),
    });
    write_report(path, &report)
}
