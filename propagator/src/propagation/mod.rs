//! Propagating an orbit: the driver that turns a stepper into an ephemeris.
//!
//! One integration produces states at any requested times (continuous output), stops
//! exactly at requested stop times (where the step control restarts, e.g. at a
//! maneuver), and ends cleanly at an altitude floor with a "decayed" result.
//! Progress goes to an [`Observer`], so the numerics know nothing of terminals.

use crate::atmosphere::AltitudeModel;
use crate::body::CentralBody;
use crate::force::{ForceError, ForceModel, Segment};
use crate::integrator::{AnyStepper, IntegrationError, OdeSystem, Settings, Stats};
use crate::state::StateVector;

mod events;
use events::{locate_crossing, Switching};

/// The orbit equations r′ = v, v′ = a(t, r, v) for a force model, inside one
/// integration segment (between two discontinuities of the dynamics).
pub struct OrbitSystem<'a> {
    model: &'a ForceModel,
    /// The segment being integrated.
    pub segment: Segment,
}

impl<'a> OrbitSystem<'a> {
    /// The equations of motion under `model`.
    pub fn new(model: &'a ForceModel) -> Self {
        Self {
            model,
            segment: Segment::UNBOUNDED,
        }
    }
}

impl OdeSystem for OrbitSystem<'_> {
    fn dim(&self) -> usize {
        6
    }

    #[inline]
    fn rhs(&mut self, t: f64, y: &[f64], dy: &mut [f64]) -> Result<(), ForceError> {
        let x = StateVector::from_column_slice(y);
        let a = self.model.acceleration_in(t, &x, self.segment)?;
        dy[0] = y[3];
        dy[1] = y[4];
        dy[2] = y[5];
        dy[3] = a[0];
        dy[4] = a[1];
        dy[5] = a[2];
        Ok(())
    }
}

/// Receives progress while an integration runs (a progress bar, a log, nothing).
pub trait Observer {
    /// Called after every accepted step: `t_s` now, between `t_start_s` and `t_end_s`.
    fn on_step(&mut self, _t_s: f64, _t_start_s: f64, _t_end_s: f64) {}
}

/// An observer that ignores everything.
pub struct Silent;
impl Observer for Silent {}

/// How a propagation ended.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Termination {
    /// Reached the requested end.
    Completed,
    /// The altitude fell below the floor at `t_s` (seconds on the time axis).
    Decayed {
        /// When, seconds from the time axis reference.
        t_s: f64,
        /// The floor that was crossed, km.
        floor_km: f64,
    },
}

/// Options of a propagation beyond the integrator settings.
#[derive(Clone, Copy, Debug)]
pub struct Options {
    /// Integrator, tolerances and step limits.
    pub settings: Settings,
    /// The propagation ends, as "decayed", when the altitude falls below this, km.
    pub altitude_floor_km: f64,
    /// Constants used for the altitude test.
    pub body: CentralBody,
    /// How the altitude for the floor is measured.
    pub altitude: AltitudeModel,
}

impl Default for Options {
    fn default() -> Self {
        Self {
            settings: Settings::default(),
            altitude_floor_km: 100.0,
            body: CentralBody::EARTH_EGM96,
            altitude: AltitudeModel::Spherical,
        }
    }
}

impl Options {
    /// The defaults with `method` at relative and absolute tolerances `rtol`, `atol`
    /// (km and km/s alike).
    pub fn with_method(method: crate::integrator::Method, rtol: f64, atol: f64) -> Self {
        Self {
            settings: Settings {
                method,
                rtol,
                atol,
                ..Settings::default()
            },
            ..Self::default()
        }
    }
}

/// Why a propagation could not be done (as opposed to ending in a decay).
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum PropagationError {
    /// The integrator or a force failed.
    #[error(transparent)]
    Integration(#[from] IntegrationError),
    /// The request itself is wrong.
    #[error("{0}")]
    BadRequest(String),
}

impl PropagationError {
    /// The message with the time in UTC as well, for a model whose `t_s = 0` is
    /// `reference` (a relative `t = 86402.55 s` alone tells a user nothing).
    pub fn with_utc(&self, reference: &crate::time::Epoch) -> String {
        match self {
            PropagationError::Integration(e) => {
                format!("{self} [at {}]", reference.plus_seconds(e.t_s()))
            }
            PropagationError::BadRequest(_) => self.to_string(),
        }
    }
}

/// An impulsive maneuver as applied during a propagation.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct AppliedImpulse {
    /// When, s on the time axis.
    pub t_s: f64,
    /// State just before the burn.
    pub before: StateVector,
    /// State just after the burn.
    pub after: StateVector,
}

/// States at the requested times, and how the propagation ended.
///
/// An output at exactly an impulse's epoch is the state just before the impulse.
#[derive(Clone, Debug)]
pub struct Propagated {
    /// The impulses applied, in the order met.
    pub maneuvers: Vec<AppliedImpulse>,
    /// `(t_s, state)` at each requested output time reached, in request order.
    pub samples: Vec<(f64, StateVector)>,
    /// Completed, or decayed (then `samples` stops before the decay time).
    pub termination: Termination,
    /// The state at the end (the end time, or the decay point).
    pub final_state: (f64, StateVector),
    /// Integrator work.
    pub stats: Stats,
}

/// What to propagate: from where, to when, and which states to return.
#[derive(Clone, Copy, Debug)]
pub struct Request<'a> {
    /// Initial ECI state, km and km/s.
    pub x0: StateVector,
    /// Initial time, s on the model's time axis.
    pub t0_s: f64,
    /// Final time, s (earlier than `t0_s` to propagate backward).
    pub t_end_s: f64,
    /// Times of the returned states, monotone in the direction of integration and
    /// inside `[t0_s, t_end_s]`.
    pub output_times_s: &'a [f64],
    /// Times where integration stops exactly and restarts its step control (for
    /// discontinuities in the dynamics).
    pub stop_times_s: &'a [f64],
}

/// Propagates under `model` as `request` says, reporting progress to `observer`.
pub fn propagate(
    model: &ForceModel,
    request: &Request,
    options: &Options,
    observer: &mut dyn Observer,
) -> Result<Propagated, PropagationError> {
    let mut sys = OrbitSystem::new(model);
    let raw = drive(
        &mut sys,
        model,
        request,
        request.x0.as_slice(),
        options,
        observer,
    )?;
    let to_state = |y: &[f64]| StateVector::from_column_slice(&y[..6]);
    Ok(Propagated {
        maneuvers: raw.maneuvers,
        samples: raw.samples.iter().map(|(t, y)| (*t, to_state(y))).collect(),
        termination: raw.termination,
        final_state: (raw.final_y.0, to_state(&raw.final_y.1)),
        stats: raw.stats,
    })
}

/// What [`drive`] returns: full system vectors (state first) at the output times.
pub struct DriveResult {
    /// Impulses applied.
    pub maneuvers: Vec<AppliedImpulse>,
    /// `(t_s, y)` at each output time reached.
    pub samples: Vec<(f64, Vec<f64>)>,
    /// Completed or decayed.
    pub termination: Termination,
    /// `(t_s, y)` at the end.
    pub final_y: (f64, Vec<f64>),
    /// Integrator work.
    pub stats: Stats,
}

/// The generic driver behind [`propagate`] and the variational equations: integrates
/// any system whose first six components are the orbit state, splitting at `model`'s
/// discontinuities and the request's stops, applying `model`'s impulses to the state
/// part, and ending at the altitude floor. `request.x0` is ignored in favour of `y0`.
pub fn drive<S: OdeSystem + SegmentAware>(
    sys: &mut S,
    model: &ForceModel,
    request: &Request,
    y0: &[f64],
    options: &Options,
    observer: &mut dyn Observer,
) -> Result<DriveResult, PropagationError> {
    let Request {
        t0_s,
        t_end_s,
        output_times_s,
        stop_times_s,
        ..
    } = *request;
    let n = sys.dim();
    let dir = check_request(request, y0, n, options)?;
    let floor = options.altitude_floor_km;
    let altitude = |y: &[f64]| altitude_of(y, options);
    let mut stepper = AnyStepper::new(&options.settings, n);
    let mut out = Outputs::new(output_times_s, dir, n);
    // Outputs at the start itself.
    while out.next < output_times_s.len() && output_times_s[out.next] == t0_s {
        out.samples.push((t0_s, y0.to_vec()));
        out.next += 1;
    }
    let mut segment_start = t0_s;
    let mut y_start = y0.to_vec();
    let mut maneuvers = Vec::new();
    // An impulse at the very start (forward) acts on the given state.
    if dir > 0.0 {
        for imp in model.impulses().iter().filter(|i| i.t_s == t0_s) {
            apply_impulse(imp, &mut y_start, dir, &mut maneuvers)?;
        }
    }
    let stops = segment_ends(model, stop_times_s, (t0_s, t_end_s), dir);
    let mut switching = Switching::new(model, n);
    for &seg_end in &stops {
        let segment = Segment {
            start_s: segment_start.min(seg_end),
            end_s: segment_start.max(seg_end),
            sides: None,
        };
        switching.reset(sys, segment, segment_start, &y_start);
        stepper.start(sys, segment_start, &y_start, seg_end)?;
        // Where the steps head: the segment's end, or a switching root being reached
        // again from the start of the step that straddled it.
        let mut target = seg_end;
        loop {
            if (target - stepper.t()) * dir <= 0.0 {
                if target == seg_end {
                    break;
                }
                switching.arrive(&mut stepper, sys, seg_end)?;
                target = seg_end;
                continue;
            }
            let t_prev = stepper.t();
            switching.remember(stepper.y());
            let t = stepper.step(sys, target)?;
            observer.on_step(t, t0_s, t_end_s);
            // Altitude floor: locate the crossing on the dense output.
            if altitude(stepper.y()) < floor {
                let t_hit =
                    locate_crossing(&mut stepper, sys, t_prev, t, |_, y| altitude(y) - floor)?;
                out.up_to(&mut stepper, sys, t_hit, false)?;
                let mut buf = vec![0.0; n];
                stepper.dense_at(sys, t_hit, &mut buf)?;
                return Ok(DriveResult {
                    maneuvers,
                    samples: out.samples,
                    termination: Termination::Decayed {
                        t_s: t_hit,
                        floor_km: floor,
                    },
                    final_y: (t_hit, buf),
                    stats: stepper.stats(),
                });
            }
            // A switching function changed sign inside the step: redo it, ending at the root.
            if target == seg_end {
                if let Some(t_root) = switching.first_root(&mut stepper, sys, t_prev, t, dir)? {
                    switching.rewind(&mut stepper, sys, t_prev, t_root)?;
                    target = t_root;
                    continue;
                }
            }
            out.up_to(&mut stepper, sys, t, true)?;
        }
        segment_start = seg_end;
        y_start.copy_from_slice(stepper.y());
        if seg_end != t_end_s {
            for imp in model.impulses().iter().filter(|i| i.t_s == seg_end) {
                apply_impulse(imp, &mut y_start, dir, &mut maneuvers)?;
            }
        }
    }
    Ok(DriveResult {
        maneuvers,
        samples: out.samples,
        termination: Termination::Completed,
        final_y: (t_end_s, y_start),
        stats: stepper.stats(),
    })
}

/// Checks a request against the system's dimension `n` and the options: valid settings,
/// a state vector of the system's size (orbit first), output and stop times inside and
/// ordered, a finite start above the altitude floor. Returns the direction of time.
fn check_request(
    request: &Request,
    y0: &[f64],
    n: usize,
    options: &Options,
) -> Result<f64, PropagationError> {
    let (t0_s, t_end_s) = (request.t0_s, request.t_end_s);
    options
        .settings
        .validate()
        .map_err(PropagationError::BadRequest)?;
    if y0.len() != n || n < 6 {
        return Err(PropagationError::BadRequest(format!(
            "initial vector has {} components, the system {n}",
            y0.len()
        )));
    }
    let dir = if t_end_s >= t0_s { 1.0 } else { -1.0 };
    check_times(request.output_times_s, t0_s, t_end_s, dir, "output")?;
    check_times(request.stop_times_s, t0_s, t_end_s, dir, "stop")?;
    if !y0.iter().all(|v| v.is_finite()) {
        return Err(PropagationError::BadRequest(format!(
            "initial state is not finite: {:?}",
            &y0[..6]
        )));
    }
    let floor = options.altitude_floor_km;
    let h0 = altitude_of(y0, options);
    if h0 < floor {
        return Err(PropagationError::BadRequest(format!(
            "initial altitude {h0:.3} km is below the altitude floor {floor} km (is the state inside the Earth, or in metres?)"
        )));
    }
    Ok(dir)
}

/// Altitude (km) of the orbit state at the head of `y`, by the options' altitude model.
fn altitude_of(y: &[f64], options: &Options) -> f64 {
    let r = nalgebra::Vector3::new(y[0], y[1], y[2]);
    options.altitude.altitude_km(&r, &options.body)
}

/// Where the integration segments end, in the direction of time: the requested stops and
/// the model's discontinuities strictly inside `(t0, t_end)`, then `t_end`.
fn segment_ends(
    model: &ForceModel,
    stop_times_s: &[f64],
    (t0_s, t_end_s): (f64, f64),
    dir: f64,
) -> Vec<f64> {
    let mut stops: Vec<f64> = stop_times_s
        .iter()
        .copied()
        .chain(model.discontinuities_s())
        .filter(|&t| (t - t0_s) * dir > 0.0 && (t_end_s - t) * dir > 0.0)
        .collect();
    stops.sort_by(|a, b| (a * dir).total_cmp(&(b * dir)));
    stops.dedup();
    stops.push(t_end_s);
    stops
}

/// The requested outputs, filled in as the steps pass them.
struct Outputs<'a> {
    times: &'a [f64],
    dir: f64,
    /// The next output not yet filled.
    next: usize,
    samples: Vec<(f64, Vec<f64>)>,
    buf: Vec<f64>,
}

impl<'a> Outputs<'a> {
    fn new(times: &'a [f64], dir: f64, n: usize) -> Self {
        Self {
            times,
            dir,
            next: 0,
            samples: Vec::with_capacity(times.len()),
            buf: vec![0.0; n],
        }
    }

    /// Every output up to `t` (inclusive) from the last step's dense output; with
    /// `at_step`, one exactly at `t` (the step's end) takes the step's own state.
    fn up_to<S: OdeSystem>(
        &mut self,
        stepper: &mut AnyStepper,
        sys: &mut S,
        t: f64,
        at_step: bool,
    ) -> Result<(), IntegrationError> {
        while self.next < self.times.len() && (t - self.times[self.next]) * self.dir >= 0.0 {
            let to = self.times[self.next];
            if at_step && to == t {
                self.samples.push((to, stepper.y().to_vec()));
            } else {
                stepper.dense_at(sys, to, &mut self.buf)?;
                self.samples.push((to, self.buf.clone()));
            }
            self.next += 1;
        }
        Ok(())
    }
}

/// Systems that can be told which integration segment they are in (see [`Segment`]).
pub trait SegmentAware {
    /// Called before each segment is integrated.
    fn set_segment(&mut self, segment: Segment);
}

impl SegmentAware for OrbitSystem<'_> {
    fn set_segment(&mut self, segment: Segment) {
        self.segment = segment;
    }
}

/// Applies an impulse to the state part (first six components) of `y`. The rest (a
/// transition matrix, say) is left as it is: the jump's Jacobian is taken as the identity.
fn apply_impulse(
    imp: &crate::force::maneuver::Impulse,
    y: &mut [f64],
    dir: f64,
    log: &mut Vec<AppliedImpulse>,
) -> Result<(), PropagationError> {
    let undefined = || {
        PropagationError::BadRequest(format!(
            "impulse at t = {} s: the RTN frame is undefined for the state there",
            imp.t_s
        ))
    };
    let x = StateVector::from_column_slice(&y[..6]);
    let (before, after) = if dir > 0.0 {
        (x, imp.apply(&x).ok_or_else(undefined)?)
    } else {
        (imp.unapply(&x).ok_or_else(undefined)?, x)
    };
    log.push(AppliedImpulse {
        t_s: imp.t_s,
        before,
        after,
    });
    let new = if dir > 0.0 { after } else { before };
    y[..6].copy_from_slice(new.as_slice());
    Ok(())
}

fn check_times(
    times: &[f64],
    t0: f64,
    t1: f64,
    dir: f64,
    what: &str,
) -> Result<(), PropagationError> {
    let (lo, hi) = if dir > 0.0 { (t0, t1) } else { (t1, t0) };
    for (i, &t) in times.iter().enumerate() {
        if !t.is_finite() || t < lo || t > hi {
            return Err(PropagationError::BadRequest(format!(
                "{what} time {t} s (index {i}) is outside the propagation span [{lo}, {hi}] s"
            )));
        }
        if i > 0 && (t - times[i - 1]) * dir < 0.0 {
            return Err(PropagationError::BadRequest(format!(
                "{what} times are not in order at index {i}"
            )));
        }
    }
    Ok(())
}

/// The most output states one request may ask for (a 10-million-line CSV is ~1.5 GB).
pub const MAX_OUTPUT_STATES: f64 = 1.0e7;
/// The smallest output spacing, s: files carry epochs to the microsecond, and anything
/// finer than a millisecond writes epochs that round together.
pub const MIN_OUTPUT_STEP_S: f64 = 1.0e-3;

/// [`output_grid`] for a user's request: refuses a step that is not finite, below
/// [`MIN_OUTPUT_STEP_S`], or that would ask for more than [`MAX_OUTPUT_STATES`] states —
/// before anything is allocated (`--step 1e-9` over a day asked for 28 TB).
pub fn checked_output_grid(t0_s: f64, t_end_s: f64, step_s: f64) -> Result<Vec<f64>, String> {
    if !(step_s.is_finite() && step_s >= MIN_OUTPUT_STEP_S) {
        return Err(format!(
            "step {step_s} s: must be at least {MIN_OUTPUT_STEP_S} s (epochs are written to the microsecond)"
        ));
    }
    let span = (t_end_s - t0_s).abs();
    if !span.is_finite() {
        return Err("the span is not finite".into());
    }
    let n = span / step_s + 2.0;
    if n > MAX_OUTPUT_STATES {
        return Err(format!(
            "a {span} s span at {step_s} s asks for {n:.3e} states, more than {MAX_OUTPUT_STATES:.0e}: use a larger step or a shorter span"
        ));
    }
    Ok(output_grid(t0_s, t_end_s, step_s))
}

/// Output times `t0, t0 ± step, …` up to and including `t_end` (the end is always
/// included, even when the span is not a whole number of steps). `step_s` > 0; for a
/// user's request use [`checked_output_grid`].
pub fn output_grid(t0_s: f64, t_end_s: f64, step_s: f64) -> Vec<f64> {
    let dir = if t_end_s >= t0_s { 1.0 } else { -1.0 };
    let span = (t_end_s - t0_s).abs();
    let n = (span / step_s).floor() as usize;
    let mut v: Vec<f64> = (0..=n).map(|k| t0_s + dir * step_s * k as f64).collect();
    // Computing each time from the index (not by accumulation) keeps them exact.
    if let Some(&last) = v.last() {
        if (t_end_s - last).abs() > 1e-9 * step_s.max(1.0) {
            v.push(t_end_s);
        } else if let Some(l) = v.last_mut() {
            *l = t_end_s;
        }
    }
    v
}
