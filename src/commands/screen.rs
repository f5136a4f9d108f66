//! `arcwise screen`: a primary against secondaries over a window → close approaches.

use crate::error::CliError;
use crate::report::write_report;
use clap::Args as ClapArgs;
use learned_forces::learned_file::{LearnedFile, LearnedResolver};
use propagator::config::{ForcesFile, StateFile};
use propagator::ephemeris::{Ephemeris, Format};
use propagator::propagation::{
    checked_output_grid, propagate, Options, Request, Silent, Termination,
};
use propagator::screening::{approaches, Approach, Track};
use propagator::{Epoch, ForceModel, StateVector, TimeAxis};
use rayon::prelude::*;
use std::path::{Path, PathBuf};

/// The disclaimer printed with every screening.
pub const SCREENING_NOTICE: &str = "Covariance-free screening: a screening aid only. Collision-avoidance decisions follow the operator's own procedures and the applicable space-safety rules.";

/// Options of `arcwise screen`.
#[derive(ClapArgs, Debug)]
pub struct Args {
    /// Primary: a state file, an ephemeris (.oem/.csv), or a learned-force file (its end
    /// state, propagated with --forces plus the learned force).
    #[arg(long, value_name = "FILE")]
    primary: PathBuf,
    /// Secondaries: state files (propagated with --forces) or ephemerides (.oem/.csv).
    #[arg(long, num_args = 1.., value_name = "FILE")]
    secondaries: Vec<PathBuf>,
    /// Force model for every propagated object.
    #[arg(long, value_name = "FORCES.yaml")]
    forces: Option<PathBuf>,
    /// Start of the window, ISO 8601 UTC.
    #[arg(long, value_name = "EPOCH")]
    from: String,
    /// End of the window, ISO 8601 UTC.
    #[arg(long, value_name = "EPOCH")]
    to: String,
    /// Report approaches closer than this, km.
    #[arg(long, value_name = "KM")]
    threshold_km: f64,
    /// Sampling of the trajectories, s (Hermite interpolation between samples).
    #[arg(long, default_value_t = 20.0, value_name = "SECONDS")]
    step: f64,
    /// Write a JSON report here.
    #[arg(long, value_name = "R.json")]
    report: Option<PathBuf>,
}

struct Ctx<'a> {
    axis: TimeAxis,
    grid: &'a [f64],
    forces: Option<(&'a ForcesFile, &'a Path)>,
}

fn sampled(
    model: &ForceModel,
    epoch: Epoch,
    x: StateVector,
    ctx: &Ctx,
    name: &Path,
) -> Result<Track, String> {
    let t_state = ctx.axis.seconds(&epoch);
    let end = *ctx.grid.last().unwrap_or(&0.0);
    // To the window start first (forward or backward), then across the window.
    let x0 = if t_state == 0.0 {
        x
    } else {
        let req = Request {
            x0: x,
            t0_s: t_state,
            t_end_s: 0.0,
            output_times_s: &[0.0],
            stop_times_s: &[],
        };
        let p = propagate(model, &req, &Options::default(), &mut Silent)
            .map_err(|e| format!("{}: {e}", name.display()))?;
        p.samples
            .first()
            .map(|s| s.1)
            .ok_or_else(|| format!("{}: decays before the window", name.display()))?
    };
    let req = Request {
        x0,
        t0_s: 0.0,
        t_end_s: end,
        output_times_s: ctx.grid,
        stop_times_s: &[],
    };
    let p = propagate(model, &req, &Options::default(), &mut Silent)
        .map_err(|e| format!("{}: {e}", name.display()))?;
    if let Termination::Decayed { t_s, .. } = p.termination {
        return Err(format!(
            "{}: decays inside the window at {}",
            name.display(),
            ctx.axis.epoch(t_s)
        ));
    }
    Ok(Track {
        times: ctx.grid.to_vec(),
        states: p.samples.into_iter().map(|s| s.1).collect(),
    })
}

fn model_for(ctx: &Ctx, epoch: Epoch, name: &Path) -> Result<ForceModel, String> {
    let (spec, path) = ctx
        .forces
        .ok_or_else(|| format!("{}: a propagated object needs --forces", name.display()))?;
    spec.build_with(path, epoch, &LearnedResolver)
        .map(|l| l.model)
        .map_err(|e| e.to_string())
}

fn load_track(path: &Path, ctx: &Ctx) -> Result<Track, String> {
    if Format::from_path(path).is_ok() {
        let body = ctx.forces.map(|f| f.0.central_body).unwrap_or_default();
        let eph = Ephemeris::load(path, &body).map_err(|e| e.to_string())?;
        let times: Vec<f64> = eph
            .points
            .iter()
            .map(|p| ctx.axis.seconds(&p.epoch))
            .collect();
        let end = *ctx.grid.last().unwrap_or(&0.0);
        if times.first().is_none_or(|t| *t > 0.0) || times.last().is_none_or(|t| *t < end) {
            return Err(format!(
                "{}: the ephemeris does not cover the window",
                path.display()
            ));
        }
        let raw = Track {
            times,
            states: eph.points.iter().map(|p| p.state).collect(),
        };
        let states = ctx
            .grid
            .iter()
            .map(|t| {
                let (r, v) = raw.at(*t);
                StateVector::new(r[0], r[1], r[2], v[0], v[1], v[2])
            })
            .collect();
        return Ok(Track {
            times: ctx.grid.to_vec(),
            states,
        });
    }
    let text = propagator::input::read_text(path, propagator::input::MAX_DATA_BYTES)
        .map_err(|e| format!("{}: {e}", path.display()))?;
    if text.contains("format_version:") {
        let f = LearnedFile::load(path).map_err(|e| e.to_string())?;
        let s = &f.state_at_end;
        let epoch =
            Epoch::parse_utc(&s.epoch_utc).map_err(|e| format!("{}: {e}", path.display()))?;
        let mut model = model_for(ctx, epoch, path)?;
        model.push(Box::new(
            f.force(&epoch)
                .map_err(|e| format!("{}: {e}", path.display()))?,
        ));
        let x = StateVector::new(
            s.r_km[0],
            s.r_km[1],
            s.r_km[2],
            s.v_km_s[0],
            s.v_km_s[1],
            s.v_km_s[2],
        );
        return sampled(&model, epoch, x, ctx, path);
    }
    let body = ctx.forces.map(|f| f.0.central_body).unwrap_or_default();
    let st = StateFile::parse(&text, path, &body).map_err(|e| e.to_string())?;
    let model = model_for(ctx, st.epoch, path)?;
    sampled(&model, st.epoch, st.state, ctx, path)
}

/// Runs the command.
pub fn run(a: Args) -> Result<(), CliError> {
    let mut inputs: Vec<(&str, &std::path::Path)> = vec![("--primary", &a.primary)];
    inputs.extend(a.secondaries.iter().map(|p| ("--secondaries", p.as_path())));
    inputs.extend(a.forces.as_deref().map(|p| ("--forces", p)));
    crate::paths::check_distinct(
        &inputs,
        &a.report
            .as_deref()
            .map(|p| ("--report", p))
            .into_iter()
            .collect::<Vec<_>>(),
    )?;
    if !(a.threshold_km.is_finite() && a.threshold_km > 0.0) {
        return Err(CliError::input(
            "--threshold-km must be a positive number of km",
        ));
    }
    if !(a.step.is_finite() && (1.0..=120.0).contains(&a.step)) {
        return Err(CliError::input("--step must be between 1 and 120 s"));
    }
    if a.secondaries.is_empty() {
        return Err(CliError::input("give at least one --secondaries file"));
    }
    let from = Epoch::parse_utc(&a.from).map_err(|e| CliError::input(format!("--from: {e}")))?;
    let to = Epoch::parse_utc(&a.to).map_err(|e| CliError::input(format!("--to: {e}")))?;
    let span = to.seconds_since(&from);
    if span <= 0.0 {
        return Err(CliError::input("--to must be after --from"));
    }
    let spec = match &a.forces {
        Some(p) => Some(ForcesFile::load(p).map_err(CliError::input)?),
        None => None,
    };
    let grid = checked_output_grid(0.0, span, a.step)
        .map_err(|e| CliError::input(format!("--step: {e}")))?;
    let ctx = Ctx {
        axis: TimeAxis::new(from),
        grid: &grid,
        forces: spec.as_ref().zip(a.forces.as_deref()),
    };
    let primary = load_track(&a.primary, &ctx).map_err(CliError::input)?;
    let results: Vec<Result<Vec<Approach>, String>> = a
        .secondaries
        .par_iter()
        .map(|s| load_track(s, &ctx).map(|t| approaches(&primary, &t, a.threshold_km)))
        .collect();
    let mut rows = Vec::new();
    for (path, r) in a.secondaries.iter().zip(results) {
        for ap in r.map_err(CliError::input)? {
            rows.push((path.clone(), ap));
        }
    }
    rows.sort_by(|x, y| x.1.tca_s.total_cmp(&y.1.tca_s));
    println!("{SCREENING_NOTICE}");
    println!(
        "screened {} against {} secondaries, {} → {}, threshold {} km: {} close approaches",
        a.primary.display(),
        a.secondaries.len(),
        from,
        to,
        a.threshold_km,
        rows.len()
    );
    for (p, ap) in &rows {
        println!(
            "  TCA {}  miss {:.3} km  rel. speed {:.3} km/s  RTN [{:.3}, {:.3}, {:.3}] km  {}",
            ctx.axis.epoch(ap.tca_s),
            ap.miss_km,
            ap.relative_speed_km_s,
            ap.miss_rtn_km[0],
            ap.miss_rtn_km[1],
            ap.miss_rtn_km[2],
            p.display()
        );
    }
    if let Some(path) = &a.report {
        let report = serde_json::json!({
            "command": "screen",
            "arcwise_version": env!("CARGO_PKG_VERSION"),
            "notice": SCREENING_NOTICE,
            "primary": a.primary.display().to_string(),
            "secondaries": a.secondaries.len(),
            "from_utc": from.to_utc_string(),
            "to_utc": to.to_utc_string(),
            "threshold_km": a.threshold_km,
            "approaches": rows.iter().map(|(p, ap)| serde_json::json!({
                "secondary": p.display().to_string(),
                "tca_utc": ctx.axis.epoch(ap.tca_s).to_utc_string(),
                "miss_km": ap.miss_km,
                "relative_speed_km_s": ap.relative_speed_km_s,
                "miss_rtn_km": [ap.miss_rtn_km[0], ap.miss_rtn_km[1], ap.miss_rtn_km[2]],
            })).collect::<Vec<_>>(),
        });
        write_report(path, &report)?;
    }
    Ok(())
}
