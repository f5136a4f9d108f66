//! `arcwise screen`: a primary against secondaries over a window → close approaches.

use crate::error::CliError;
use crate::plot::{write_panels, Panel, Series};
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
use std::collections::HashMap;
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
    /// Draw the range against time around each TCA (the first six) (SVG).
    #[arg(long, value_name = "P.svg")]
    plot: Option<PathBuf>,
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
            .map_err(|e| format!("{}: {}", name.display(), e.with_utc(&ctx.axis.reference)))?;
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
        .map_err(|e| format!("{}: {}", name.display(), e.with_utc(&ctx.axis.reference)))?;
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

/// The largest cubic-Hermite error accepted between two ephemeris states, km; beyond
/// it the grid is filled by propagating from the nearer state.
const HERMITE_TOLERANCE_KM: f64 = 1e-3;

/// An upper estimate of the cubic-Hermite position error over one interval of `h_s`
/// seconds at radius `r_km`: h⁴/384 · max|r⁗| (the interpolation remainder), with
/// |r⁗| ≈ 4 (μ/r³)² r for orbital motion (the factor 4 covers moderate eccentricity).
fn hermite_error_km(h_s: f64, r_km: f64, mu: f64) -> f64 {
    let n2 = mu / (r_km * r_km * r_km);
    h_s.powi(4) / 384.0 * 4.0 * n2 * n2 * r_km
}

/// States of an ephemeris on the screening grid, one OEM segment at a time: cubic
/// Hermite where its error bound is below [`HERMITE_TOLERANCE_KM`], otherwise the
/// nearer state propagated (with --forces, or two-body + J2); never across a segment
/// boundary, and an error where the window falls outside every segment.
fn track_from_ephemeris(eph: &Ephemeris, path: &Path, ctx: &Ctx) -> Result<Track, String> {
    let body = ctx.forces.map(|f| f.0.central_body).unwrap_or_default();
    let times: Vec<f64> = eph
        .points
        .iter()
        .map(|p| ctx.axis.seconds(&p.epoch))
        .collect();
    let segments = eph.segments();
    let model = match ctx.forces {
        Some(_) => model_for(ctx, ctx.axis.reference, path)?,
        None => ForcesFile::parse("gravity: { zonal_degree: 2 }\n", path)
            .and_then(|f| f.build(path, ctx.axis.reference))
            .map(|l| l.model)
            .map_err(|e| e.to_string())?,
    };
    let utc = |t: f64| ctx.axis.epoch(t).to_utc_string();
    let mut states = Vec::with_capacity(ctx.grid.len());
    let mut k = 0;
    while k < ctx.grid.len() {
        let t = ctx.grid[k];
        let Some(seg) = segments
            .iter()
            .find(|r| times[r.start] <= t && t <= times[r.end - 1])
        else {
            let before = segments.iter().rev().find(|r| times[r.end - 1] < t);
            let after = segments.iter().find(|r| times[r.start] > t);
            return Err(match (before, after) {
                (Some(b), Some(a)) => format!(
                    "{}: no states from {} to {} (between OEM segments) inside the window: screening never interpolates across a gap; give a complete ephemeris or a state to propagate",
                    path.display(), utc(times[b.end - 1]), utc(times[a.start])
                ),
                _ => format!(
                    "{}: the ephemeris ({} to {}) does not cover the window",
                    path.display(),
                    utc(times[0]),
                    utc(times[times.len() - 1])
                ),
            });
        };
        // The interval [i, i + 1] of this segment that holds t, and every grid time in it.
        let i = (seg.start + times[seg.clone()].partition_point(|s| *s <= t))
            .saturating_sub(1)
            .clamp(seg.start, (seg.end - 1).max(seg.start + 1) - 1);
        let j = (i + 1).min(seg.end - 1);
        let mut inside = vec![t];
        while k + inside.len() < ctx.grid.len() && ctx.grid[k + inside.len()] <= times[j] {
            inside.push(ctx.grid[k + inside.len()]);
        }
        let (x0, x1) = (eph.points[i].state, eph.points[j].state);
        let r = x0
            .fixed_rows::<3>(0)
            .norm()
            .min(x1.fixed_rows::<3>(0).norm());
        let h = times[j] - times[i];
        if j == i || hermite_error_km(h, r, body.mu_km3_s2) <= HERMITE_TOLERANCE_KM {
            let raw = Track {
                times: vec![times[i], times[j].max(times[i] + 1e-9)],
                states: vec![x0, x1],
            };
            for tt in &inside {
                let (p, v) = raw.at(*tt);
                states.push(StateVector::new(p[0], p[1], p[2], v[0], v[1], v[2]));
            }
        } else {
            let mid = 0.5 * (times[i] + times[j]);
            let (first, second): (Vec<f64>, Vec<f64>) = inside.iter().partition(|tt| **tt <= mid);
            let run = |x: StateVector, t0: f64, outs: &[f64]| -> Result<Vec<StateVector>, String> {
                if outs.is_empty() {
                    return Ok(vec![]);
                }
                let end = if outs[0] < t0 {
                    outs[0]
                } else {
                    outs[outs.len() - 1]
                };
                let req = Request {
                    x0: x,
                    t0_s: t0,
                    t_end_s: end,
                    output_times_s: outs,
                    stop_times_s: &[],
                };
                let p = propagate(&model, &req, &Options::default(), &mut Silent).map_err(|e| {
                    format!(
                        "{}: filling between states: {}",
                        path.display(),
                        e.with_utc(&ctx.axis.reference)
                    )
                })?;
                Ok(p.samples.into_iter().map(|s| s.1).collect())
            };
            states.extend(run(x0, times[i], &first)?);
            // Backward from the later state: outputs in decreasing time, then reversed.
            let back: Vec<f64> = second.iter().rev().copied().collect();
            let mut later = run(x1, times[j], &back)?;
            later.reverse();
            states.extend(later);
        }
        k += inside.len();
    }
    if states.len() != ctx.grid.len() {
        return Err(format!("{}: could not fill the window", path.display()));
    }
    Ok(Track {
        times: ctx.grid.to_vec(),
        states,
    })
}

/// A trajectory on the grid, the object's name for display (OEM `OBJECT_NAME`, the state
/// file's or learned file's name, or the file name), and the name that identifies the
/// object when the file states one (OEM `OBJECT_NAME`, a state file's `object_name`).
fn load_track(path: &Path, ctx: &Ctx) -> Result<(Track, String, Option<String>), String> {
    let stem = || {
        path.file_name()
            .map(|n| n.to_string_lossy().into_owned())
            .unwrap_or_default()
    };
    if Format::from_path(path).is_ok() {
        let body = ctx.forces.map(|f| f.0.central_body).unwrap_or_default();
        let eph = Ephemeris::load(path, &body).map_err(|e| e.to_string())?;
        let named = (!eph.object_name.is_empty() && eph.object_name != "UNNAMED")
            .then(|| eph.object_name.clone());
        let name = named.clone().unwrap_or_else(stem);
        return Ok((track_from_ephemeris(&eph, path, ctx)?, name, named));
    }
    let text = propagator::input::read_text(path, propagator::input::MAX_DATA_BYTES)
        .map_err(|e| format!("{}: {e}", path.display()))?;
    if text.contains("format_version:") {
        let f = LearnedFile::load(path).map_err(|e| e.to_string())?;
        let (epoch, x) = f
            .state_at_end
            .state("state_at_end")
            .map_err(|e| format!("{}: {e}", path.display()))?;
        let mut model = model_for(ctx, epoch, path)?;
        model.push(Box::new(
            f.force_in(&epoch, ctx.forces)
                .map_err(|e| format!("{}: {e}", path.display()))?,
        ));
        return Ok((sampled(&model, epoch, x, ctx, path)?, f.name.clone(), None));
    }
    let body = ctx.forces.map(|f| f.0.central_body).unwrap_or_default();
    let st = StateFile::parse(&text, path, &body).map_err(|e| e.to_string())?;
    let model = model_for(ctx, st.epoch, path)?;
    let name = st.object_name.clone().unwrap_or_else(stem);
    Ok((
        sampled(&model, st.epoch, st.state, ctx, path)?,
        name,
        st.object_name,
    ))
}

/// One close approach: the secondary's file, its object name, the approach.
type Row = (PathBuf, String, Approach);

/// Runs the command.
pub fn run(a: Args) -> Result<(), CliError> {
    let (from, to) = check_args(&a)?;
    let spec = match &a.forces {
        Some(p) => Some(ForcesFile::load(p).map_err(CliError::input)?),
        None => None,
    };
    let grid = checked_output_grid(0.0, to.seconds_since(&from), a.step)
        .map_err(|e| CliError::input(format!("--step: {e}")))?;
    let ctx = Ctx {
        axis: TimeAxis::new(from),
        grid: &grid,
        forces: spec.as_ref().zip(a.forces.as_deref()),
    };
    let (primary, primary_name, primary_id) =
        load_track(&a.primary, &ctx).map_err(CliError::input)?;
    let (rows, tracks) = screen_all(&a, &ctx, &primary, primary_id)?;
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
    for (p, name, ap) in &rows {
        println!(
            "  TCA {}  miss {:.3} km  rel. speed {:.3} km/s  RTN [{:.3}, {:.3}, {:.3}] km  {name} ({})",
            ctx.axis.epoch(ap.tca_s),
            ap.miss_km,
            ap.relative_speed_km_s,
            ap.miss_rtn_km[0],
            ap.miss_rtn_km[1],
            ap.miss_rtn_km[2],
            p.display()
        );
    }
    if let Some(path) = &a.plot {
        plot(path, &a, &ctx, (&primary, &primary_name), &rows, &tracks)?;
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
            "primary_object": primary_name,
            "approaches": rows.iter().map(|(p, name, ap)| serde_json::json!({
                "secondary": p.display().to_string(),
                "secondary_object": name,
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

/// The options checked: distinct inputs and outputs, a positive threshold, a step of
/// 1–120 s, at least one secondary, and an ordered window (returned).
fn check_args(a: &Args) -> Result<(Epoch, Epoch), CliError> {
    let mut inputs: Vec<(&str, &std::path::Path)> = vec![("--primary", &a.primary)];
    inputs.extend(a.secondaries.iter().map(|p| ("--secondaries", p.as_path())));
    inputs.extend(a.forces.as_deref().map(|p| ("--forces", p)));
    crate::paths::check_distinct(
        &inputs,
        &crate::paths::given(&[
            ("--report", a.report.as_deref()),
            ("--plot", a.plot.as_deref()),
        ]),
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
    if to.seconds_since(&from) <= 0.0 {
        return Err(CliError::input("--to must be after --from"));
    }
    Ok((from, to))
}

/// Every secondary against the primary (in parallel; a secondary that is the primary
/// is refused): the close approaches by TCA, and the tracks of the secondaries that
/// came close when a plot is asked for.
fn screen_all(
    a: &Args,
    ctx: &Ctx,
    primary: &Track,
    primary_id: Option<String>,
) -> Result<(Vec<Row>, HashMap<PathBuf, Track>), CliError> {
    let primary_file = std::fs::canonicalize(&a.primary).ok();
    let progress = crate::progress::CountProgress::new("screen", a.secondaries.len());
    type Found = (String, Vec<Approach>, Option<Track>);
    let results: Vec<Result<Found, String>> = a
        .secondaries
        .par_iter()
        .inspect(|_| progress.tick())
        .map(|s| {
            let (t, name, id) = load_track(s, ctx)?;
            let same_file = primary_file.is_some() && std::fs::canonicalize(s).ok() == primary_file;
            if same_file || (id.is_some() && id == primary_id) {
                return Err(format!(
                    "{}: the secondary is the primary object ({name}): screening an object against itself finds nothing real",
                    s.display()
                ));
            }
            let found = approaches(primary, &t, a.threshold_km);
            // The track is kept only for the plot of an object that comes close.
            let keep = (a.plot.is_some() && !found.is_empty()).then_some(t);
            Ok((name, found, keep))
        })
        .collect();
    progress.finish();
    let mut rows = Vec::new();
    let mut tracks = HashMap::new();
    for (path, r) in a.secondaries.iter().zip(results) {
        let (name, found, track) = r.map_err(CliError::input)?;
        if let Some(t) = track {
            tracks.insert(path.clone(), t);
        }
        for ap in found {
            rows.push((path.clone(), name.clone(), ap));
        }
    }
    rows.sort_by(|x, y| x.2.tca_s.total_cmp(&y.2.tca_s));
    Ok((rows, tracks))
}

/// Range to the primary ±10 min around each of the first six TCAs (clipped to the
/// window, every 5 s), one panel each.
fn plot(
    path: &Path,
    a: &Args,
    ctx: &Ctx,
    (primary, primary_name): (&Track, &str),
    rows: &[Row],
    tracks: &HashMap<PathBuf, Track>,
) -> Result<(), CliError> {
    let end = *ctx.grid.last().unwrap_or(&0.0);
    let panels: Vec<Panel> = rows
        .iter()
        .take(6)
        .filter_map(|(p, name, ap)| {
            let track = tracks.get(p)?;
            let (lo, hi) = ((ap.tca_s - 600.0).max(0.0), (ap.tca_s + 600.0).min(end));
            let n = ((hi - lo) / 5.0).ceil().max(1.0) as usize;
            let points = (0..=n)
                .map(|k| {
                    let t = lo + (hi - lo) * k as f64 / n as f64;
                    let d = track.at(t).0 - primary.at(t).0;
                    ((t - ap.tca_s) / 60.0, d.norm())
                })
                .collect();
            Some(Panel {
                y_label: "range (km)".into(),
                series: vec![Series {
                    name: format!("{name}: TCA {}", ctx.axis.epoch(ap.tca_s)),
                    points,
                    points_only: false,
                }],
                levels: vec![(format!("threshold {} km", a.threshold_km), a.threshold_km)],
                marks: vec![(format!("miss {:.3} km", ap.miss_km), 0.0)],
            })
        })
        .collect();
    if panels.is_empty() {
        return Ok(());
    }
    write_panels(
        path,
        &format!("Close approaches of {primary_name} (a screening aid)"),
        "minutes from TCA",
        &panels,
    )
}
