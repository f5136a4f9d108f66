//! Simulated scenarios: an invented object, its true forces (the known model plus an
//! unmodelled extra), a tracking schedule and noise → a training arc, the next arc and
//! the truth ephemeris. For demos and tests; real arcs come from tracking.

use crate::arc::{Arc, Observation};
use nalgebra::Vector3;
use propagator::config::{ForcesFile, InitialState, ManeuverSpec, StateFile};
use propagator::ephemeris::{Ephemeris, EphemerisPoint};
use propagator::force::drag::Drag;
use propagator::force::{Force, ForceError, Segment};
use propagator::frames::eci_to_rtn;
use propagator::integrator::{Method, Settings};
use propagator::propagation::{propagate, Options, Request, Silent, Termination};
use propagator::{Epoch, ForceModel, StateVector, TimeAxis};
use rand_chacha::ChaCha8Rng;
use rand_core::{Rng, SeedableRng};
use serde::Deserialize;
use std::path::Path;

mod sensing;
mod truth;
pub use truth::*;

/// A scenario file that is wrong, with the file named.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("{file}: {message}")]
pub struct ScenarioError {
    /// The file.
    pub file: String,
    /// What is wrong.
    pub message: String,
}

/// The contents of a scenario file.
#[derive(Clone, Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ScenarioSpec {
    /// Invented object name.
    pub object_name: String,
    /// Epoch of the initial state, ISO 8601 UTC.
    pub epoch_utc: String,
    /// `r_km` + `v_km_s`, or `elements`, as in a state file.
    pub initial: serde_yaml::Value,
    /// The known force model (written out as `forces.yaml`).
    pub forces: serde_yaml::Value,
    /// What acts besides the known forces.
    #[serde(default, with = "serde_yaml::with::singleton_map_recursive")]
    pub truth: Vec<TruthTerm>,
    /// Sampling, noise and seed.
    pub tracking: Tracking,
}

/// An unmodelled force of the truth.
#[derive(Clone, Debug, Deserialize, PartialEq)]
#[serde(rename_all = "snake_case", deny_unknown_fields)]
pub enum TruthTerm {
    /// An RTN push decaying exponentially from a start epoch (venting gas).
    DecayingPush {
        /// Start, ISO 8601 UTC.
        start_utc: String,
        /// Acceleration at the start, RTN, km/s².
        accel_rtn_km_s2: [f64; 3],
        /// e-folding time, s.
        time_constant_s: f64,
    },
    /// Drag multiplied by 1 + (peak_factor − 1)·exp(−((t − peak)/width)²) (a storm).
    DensityBump {
        /// Time of the peak, ISO 8601 UTC.
        peak_utc: String,
        /// Gaussian width, s.
        width_s: f64,
        /// Drag multiplier at the peak.
        peak_factor: f64,
    },
    /// Drag multiplied by a constant factor (the atmosphere denser than modelled).
    DragFactor {
        /// The multiplier.
        factor: f64,
    },
    /// Drag multiplied by 1 + amplitude·sin(2π t/period + phase), t from the scenario
    /// epoch (the cross-section of a tumbling body).
    DragPeriodic {
        /// Relative amplitude.
        amplitude: f64,
        /// Period, s.
        period_s: f64,
        /// Phase at the epoch, deg.
        phase_deg: f64,
    },
    /// Drag multiplied by `factor` from an epoch on (a panel deploying).
    DragStep {
        /// The epoch, ISO 8601 UTC.
        at_utc: String,
        /// The multiplier after it.
        factor: f64,
    },
    /// A constant RTN acceleration from an epoch on (a thruster switched on).
    ThrustFrom {
        /// Start, ISO 8601 UTC.
        start_utc: String,
        /// Acceleration, RTN, km/s².
        accel_rtn_km_s2: [f64; 3],
    },
    /// Solar radiation pressure the known forces leave out (as forces.yaml's `srp`).
    Srp(propagator::config::SrpSpec),
    /// The truth's drag sees this atmosphere instead of the known model's (as
    /// forces.yaml's `drag.atmosphere`): a density model wrong in shape.
    Atmosphere(
        #[serde(with = "serde_yaml::with::singleton_map")] propagator::config::AtmosphereSpec,
    ),
    /// A once-per-revolution RTN acceleration A·cos(u + phase), u the argument of latitude.
    OncePerRev {
        /// Amplitudes along R, T, N, km/s².
        amplitude_rtn_km_s2: [f64; 3],
        /// Phase, deg.
        phase_deg: f64,
    },
    /// A maneuver (`impulsive` or `finite`, as in forces.yaml).
    Maneuver(ManeuverSpec),
    /// The truth's NRLMSISE-00 sees this space weather (constants or a table, as in
    /// forces.yaml's `nrlmsise00`) instead of the known model's: a storm as an Ap series.
    Thermosphere(propagator::config::Nrlmsise00Spec),
    /// Any extra force written in the formula text (km/s², ECI; `t` from the scenario
    /// epoch), e.g. `2e-9 * exp(-t / 21600) * T`.
    Formula {
        /// The formula.
        text: String,
    },
}

/// Makes the file paths a scenario's forces name (Earth orientation, gravity field,
/// space weather) absolute from the scenario's folder `base`, so the forces.yaml that
/// `simulate` writes elsewhere still finds them.
fn anchor_paths(forces: &mut serde_yaml::Value, base: &Path) {
    let absolute = |v: &mut serde_yaml::Value| {
        if let Some(text) = v.as_str() {
            let p = Path::new(text);
            if p.is_relative() && text != "egm2008" {
                let joined = base.join(p);
                let joined = joined.canonicalize().unwrap_or(joined);
                *v = serde_yaml::Value::String(joined.display().to_string());
            }
        }
    };
    for keys in [
        &["earth_orientation", "file"][..],
        &["gravity", "field"],
        &["drag", "atmosphere", "nrlmsise00", "space_weather"],
    ] {
        let mut node = Some(&mut *forces);
        for k in keys {
            node = node.and_then(|n| n.get_mut(*k));
        }
        if let Some(v) = node {
            absolute(v);
        }
    }
}

/// Tracking schedule and noise.
#[derive(Clone, Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Tracking {
    /// Length of the training arc, days.
    pub train_days: f64,
    /// Length of the next arc, days.
    pub next_days: f64,
    /// Sampling interval, s.
    pub step_s: f64,
    /// Length of a tracking pass, s (0 = continuous tracking).
    #[serde(default)]
    pub pass_s: f64,
    /// Gap between passes, s.
    #[serde(default)]
    pub gap_s: f64,
    /// 1σ position noise per axis, km.
    pub sigma_km: f64,
    /// Also observe velocity (with `sigma_km_s`).
    #[serde(default)]
    pub velocity: bool,
    /// 1σ velocity noise per axis, km/s.
    #[serde(default = "default_sigma_v")]
    pub sigma_km_s: f64,
    /// Seed of the noise.
    #[serde(default)]
    pub seed: u64,
}

fn default_sigma_v() -> f64 {
    1e-5
}

/// What a simulation produces.
pub struct Simulated {
    /// Training arc.
    pub train: Arc,
    /// The arc after it.
    pub next: Arc,
    /// Truth at every sampling step over both arcs.
    pub truth: Ephemeris,
    /// The known forces, as YAML text for `forces.yaml`.
    pub forces_yaml: String,
    /// The initial condition.
    pub initial: InitialState,
    /// Whether the truth decayed inside the span.
    pub decayed: bool,
}

/// The initial state and the known and true force models of a scenario.
pub struct ScenarioModels {
    /// Initial condition.
    pub initial: InitialState,
    /// The known model (what `forces.yaml` says), on the time axis of the initial epoch.
    pub known: ForcesFile,
    /// The truth: known + extras.
    pub truth: ForceModel,
    /// The known forces as YAML.
    pub forces_yaml: String,
}

impl ScenarioSpec {
    /// Reads a scenario file.
    pub fn load(path: &Path) -> Result<ScenarioSpec, ScenarioError> {
        let err = |m: String| ScenarioError {
            file: path.display().to_string(),
            message: m,
        };
        let text =
            propagator::input::read_text(path, propagator::input::MAX_CONFIG_BYTES).map_err(err)?;
        Self::parse(&text, path)
    }

    /// Parses scenario text; `path` names it in messages.
    pub fn parse(text: &str, path: &Path) -> Result<ScenarioSpec, ScenarioError> {
        let err = |m: String| ScenarioError {
            file: path.display().to_string(),
            message: m,
        };
        if text.trim().is_empty() {
            return Err(err("the file is empty".into()));
        }
        let s: ScenarioSpec = propagator::input::yaml_from_str(text).map_err(err)?;
        propagator::text::check_name("object_name", &s.object_name).map_err(err)?;
        let t = &s.tracking;
        for (name, v, ok) in [
            (
                "tracking.train_days",
                t.train_days,
                t.train_days > 0.0 && t.train_days <= 60.0,
            ),
            (
                "tracking.next_days",
                t.next_days,
                t.next_days >= 0.0 && t.next_days <= 60.0,
            ),
            ("tracking.step_s", t.step_s, t.step_s >= 0.1),
            ("tracking.pass_s", t.pass_s, t.pass_s >= 0.0),
            ("tracking.gap_s", t.gap_s, t.gap_s >= 0.0),
            (
                "tracking.sigma_km",
                t.sigma_km,
                t.sigma_km >= 0.0 && t.sigma_km < 100.0,
            ),
            ("tracking.sigma_km_s", t.sigma_km_s, t.sigma_km_s >= 0.0),
        ] {
            if !(v.is_finite() && ok) {
                return Err(err(format!("{name} = {v} is out of range")));
            }
        }
        Ok(s)
    }

    /// The initial state: `initial` with the scenario's epoch and object name.
    fn initial_state(
        &self,
        body: &propagator::CentralBody,
    ) -> Result<propagator::config::InitialState, String> {
        let mut state_map = match &self.initial {
            serde_yaml::Value::Mapping(m) => m.clone(),
            _ => return Err("initial: expected r_km + v_km_s or elements".into()),
        };
        state_map.insert("epoch_utc".into(), self.epoch_utc.clone().into());
        state_map.insert("object_name".into(), self.object_name.clone().into());
        let state_text = serde_yaml::to_string(&state_map).map_err(|e| e.to_string())?;
        StateFile::parse(&state_text, Path::new("initial"), body).map_err(|e| e.to_string())
    }

    /// The truth's forces file: the known one with the truth's maneuvers added and its
    /// thermosphere's space weather replaced.
    fn truth_spec(&self, known: &ForcesFile) -> Result<ForcesFile, String> {
        use propagator::config::AtmosphereSpec;
        let mut truth_spec = known.clone();
        for t in &self.truth {
            match t {
                TruthTerm::Maneuver(m) => truth_spec.maneuvers.push(m.clone()),
                TruthTerm::Srp(srp) => {
                    if truth_spec.srp.is_some() {
                        return Err("truth.srp: the known forces already have srp".into());
                    }
                    truth_spec.srp = Some(srp.clone());
                }
                TruthTerm::Atmosphere(atmosphere) => match truth_spec.drag.as_mut() {
                    Some(d) => d.atmosphere = atmosphere.clone(),
                    None => return Err("truth.atmosphere needs drag in forces".into()),
                },
                TruthTerm::Thermosphere(weather) => {
                    weather
                        .validate()
                        .map_err(|e| format!("truth.thermosphere: {e}"))?;
                    match truth_spec.drag.as_mut() {
                        Some(d) if matches!(d.atmosphere, AtmosphereSpec::Nrlmsise00(_)) => {
                            d.atmosphere = AtmosphereSpec::Nrlmsise00(weather.clone())
                        }
                        _ => return Err(
                            "truth.thermosphere needs drag with atmosphere nrlmsise00 in forces"
                                .into(),
                        ),
                    }
                }
                _ => {}
            }
        }
        Ok(truth_spec)
    }

    /// Builds the initial state and the known and true models.
    pub fn models(&self, path: &Path) -> Result<ScenarioModels, ScenarioError> {
        let err = |m: String| ScenarioError {
            file: path.display().to_string(),
            message: m,
        };
        let mut forces = self.forces.clone();
        anchor_paths(&mut forces, path.parent().unwrap_or(Path::new(".")));
        let forces_yaml = serde_yaml::to_string(&forces).map_err(|e| err(e.to_string()))?;
        let known =
            ForcesFile::parse(&forces_yaml, Path::new("forces")).map_err(|e| err(e.to_string()))?;
        let initial = self.initial_state(&known.central_body).map_err(err)?;
        let axis = TimeAxis::new(initial.epoch);
        // The truth: the known forces, their maneuvers plus the truth's, and the extras.
        let truth_spec = self.truth_spec(&known).map_err(err)?;
        let mut truth = truth_spec
            .build(path, initial.epoch)
            .map_err(|e| err(e.to_string()))?
            .model;
        let place = TruthPlace {
            known: &known,
            path,
            epoch: initial.epoch,
            axis,
        };
        for t in &self.truth {
            if let Some(force) = place.extra_force(t).map_err(err)? {
                truth.push(force);
            }
        }
        Ok(ScenarioModels {
            initial,
            known,
            truth,
            forces_yaml,
        })
    }

    /// Runs the scenario: truth propagation, sampling, noise.
    pub fn simulate(&self, path: &Path) -> Result<Simulated, ScenarioError> {
        self.simulate_with(path, None)
    }

    /// Runs the scenario; with `sensors`, the arcs are what those sites measure at each
    /// sampling epoch they see the object (`sensing.rs`; the pass schedule and the
    /// position σ are then unused) instead of noisy positions.
    pub fn simulate_with(
        &self,
        path: &Path,
        sensors: Option<&std::sync::Arc<crate::arc::Tracking>>,
    ) -> Result<Simulated, ScenarioError> {
        let err = |m: String| ScenarioError {
            file: path.display().to_string(),
            message: m,
        };
        let m = self.models(path)?;
        let t = &self.tracking;
        let train_end = t.train_days * 86400.0;
        let end = train_end + t.next_days * 86400.0;
        let grid = propagator::propagation::checked_output_grid(0.0, end, t.step_s)
            .map_err(|e| err(format!("tracking.step_s: {e}")))?;
        let options = Options {
            settings: Settings {
                method: Method::Dp853,
                rtol: 1e-13,
                atol: 1e-13,
                ..Settings::default()
            },
            body: m.known.central_body,
            ..Options::default()
        };
        let req = Request {
            x0: m.initial.state,
            t0_s: 0.0,
            t_end_s: end,
            output_times_s: &grid,
            stop_times_s: &[],
        };
        let p = propagate(&m.truth, &req, &options, &mut Silent)
            .map_err(|e| err(format!("truth propagation failed: {e}")))?;
        let axis = TimeAxis::new(m.initial.epoch);
        let mut rng = ChaCha8Rng::seed_from_u64(t.seed);
        let mut gauss = move || {
            // Box–Muller from two uniform doubles in (0, 1].
            let u1 = ((rng.next_u64() >> 11) as f64 + 1.0) / (1u64 << 53) as f64;
            let u2 = (rng.next_u64() >> 11) as f64 / (1u64 << 53) as f64;
            (-2.0 * u1.ln()).sqrt() * (std::f64::consts::TAU * u2).cos()
        };
        let tracked = |ts: f64| {
            sensors.is_none() && (t.pass_s <= 0.0 || ts.rem_euclid(t.pass_s + t.gap_s) < t.pass_s)
        };
        let (mut train, mut next) = (Arc::default(), Arc::default());
        if let Some(sites) = sensors {
            let seen = sensing::measure(
                &p.samples,
                &axis,
                sites,
                m.known.central_body.mu_km3_s2,
                &mut gauss,
            )
            .map_err(|e| err(format!("simulated tracking: {e}")))?;
            for o in seen {
                let arc = if o.epoch.seconds_since(&axis.epoch(train_end)) <= 0.0 {
                    &mut train
                } else {
                    &mut next
                };
                arc.observations.push(o);
            }
            train.tracking = Some(sites.clone());
            next.tracking = Some(sites.clone());
            // The same checks a reader makes (the Earth-orientation table's span above all).
            for arc in [&train, &next] {
                if !arc.observations.is_empty() {
                    arc.validate(path, &m.known.central_body)
                        .map_err(|e| err(format!("simulated tracking: {e}")))?;
                }
            }
        }
        let mut truth = Ephemeris {
            object_name: self.object_name.clone(),
            object_id: String::new(),
            points: Vec::new(),
            segment_starts: vec![],
            frame: Default::default(),
        };
        for (ts, x) in &p.samples {
            truth.points.push(EphemerisPoint {
                epoch: axis.epoch(*ts),
                state: *x,
            });
            if !tracked(*ts) {
                continue;
            }
            let noise = Vector3::new(gauss(), gauss(), gauss()) * t.sigma_km;
            let r = Vector3::new(x[0], x[1], x[2]) + noise;
            let v = if t.velocity {
                Some(
                    Vector3::new(x[3], x[4], x[5])
                        + Vector3::new(gauss(), gauss(), gauss()) * t.sigma_km_s,
                )
            } else {
                None
            };
            let o = Observation::state(
                axis.epoch(*ts),
                r,
                v,
                t.sigma_km.max(1e-9),
                t.sigma_km_s.max(1e-12),
                0,
            );
            if *ts <= train_end {
                train.observations.push(o);
            } else {
                next.observations.push(o);
            }
        }
        Ok(Simulated {
            train,
            next,
            truth,
            forces_yaml: m.forces_yaml,
            initial: m.initial,
            decayed: !matches!(p.termination, Termination::Completed),
        })
    }
}
