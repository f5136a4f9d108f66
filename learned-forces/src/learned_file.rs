//! The learned-force file (YAML, versioned) and the force it describes.
//!
//! A learned force is Σ_k c_k g_k(t, x; θ): formulas g_k in the formula text, linear
//! coefficients c_k (km/s² per unit of g_k) with 1σ, and nonlinear constants θ (`k0`…)
//! with 1σ. The file also carries where it is valid and what to do outside, the fit
//! statistics, provenance (hashes of the inputs, seed, tool version), the fitted state
//! at the end of the training arc, and a SHA-256 checksum of its canonical content.

use crate::expr::compiled::{Needs, Program};
use crate::expr::{parse, Altitude, Context, Density, Environment, Node, Terminals, HANDBOOK_ENV};
use nalgebra::{Matrix3x6, Vector3};
use propagator::force::{Force, ForceError};
use propagator::solar_system::CenturyClock;
use propagator::{Epoch, StateVector};
use serde::{Deserialize, Serialize};
use sha2::{Digest, Sha256};
use std::path::Path;
use std::sync::atomic::{AtomicBool, Ordering};

/// The format version this arcwise writes and reads.
pub const FORMAT_VERSION: u32 = 1;

/// The parts of a compiled learned force: formulas, coefficients, constants.
pub type Compiled = (Vec<Node>, Vec<f64>, Vec<f64>);

/// One term.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct TermEntry {
    /// The formula (a vector expression, ECI components).
    pub formula: String,
    /// Linear coefficient, km/s² per unit of the formula.
    pub coefficient: f64,
    /// Its 1σ.
    pub sigma: f64,
}

/// One nonlinear constant.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ConstantEntry {
    /// `k0`, `k1`, …
    pub name: String,
    /// Value (unit as the formula uses it: seconds for a time constant).
    pub value: f64,
    /// Its 1σ.
    pub sigma: f64,
}

/// Where the force was learned, and what to do outside.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ValidityEntry {
    /// Start of the training arc, ISO 8601 UTC.
    pub start_utc: String,
    /// End of the training arc, ISO 8601 UTC.
    pub end_utc: String,
    /// Lowest altitude seen, km.
    pub min_altitude_km: f64,
    /// Highest altitude seen, km.
    pub max_altitude_km: f64,
    /// `warn` (evaluate, and say so), `zero` (no acceleration) or `refuse` (an error).
    pub outside: OutsidePolicy,
    /// Extra time after the end still considered inside, s (prediction needs some).
    pub time_margin_s: f64,
    /// Extra altitude margin either side, km.
    pub altitude_margin_km: f64,
}

/// Behaviour outside the validity window.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum OutsidePolicy {
    /// Evaluate anyway; the caller reports that it happened.
    Warn,
    /// Contribute nothing.
    Zero,
    /// Stop with an error.
    Refuse,
}

/// Fit statistics of the learning.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct FitEntry {
    /// Observations in the training arc.
    pub observations: usize,
    /// Position RMS with the known forces only, km.
    pub rms_km_before: f64,
    /// Position RMS with the learned force, km.
    pub rms_km_after: f64,
    /// Position RMS on the held-out tail, km.
    pub held_out_rms_km: f64,
    /// χ² after.
    pub chi2: f64,
    /// Degrees of freedom after.
    pub dof: usize,
}

/// Where the file came from.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ProvenanceEntry {
    /// `sha256:` of the arc file.
    pub arc_sha256: String,
    /// `sha256:` of the forces file.
    pub forces_sha256: String,
    /// Search seed.
    pub seed: u64,
    /// arcwise version.
    pub tool_version: String,
}

/// A state (for `check` to predict from).
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct StateEntry {
    /// ISO 8601 UTC.
    pub epoch_utc: String,
    /// ECI position, km.
    pub r_km: [f64; 3],
    /// ECI velocity, km/s.
    pub v_km_s: [f64; 3],
}

impl StateEntry {
    /// A state entry from an epoch and an ECI state.
    pub fn new(epoch: &Epoch, x: &StateVector) -> Self {
        Self {
            epoch_utc: epoch.to_utc_string(),
            r_km: [x[0], x[1], x[2]],
            v_km_s: [x[3], x[4], x[5]],
        }
    }

    /// The epoch and ECI state, checked finite; `field` names the entry in errors.
    pub fn state(&self, field: &str) -> Result<(Epoch, StateVector), String> {
        let epoch =
            Epoch::parse_utc(&self.epoch_utc).map_err(|e| format!("{field}.epoch_utc: {e}"))?;
        if !self.r_km.iter().chain(&self.v_km_s).all(|x| x.is_finite()) {
            return Err(format!("{field}: r_km and v_km_s must be finite"));
        }
        let (r, v) = (self.r_km, self.v_km_s);
        Ok((epoch, StateVector::new(r[0], r[1], r[2], v[0], v[1], v[2])))
    }
}

/// Earth constants the terminals use.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct EarthEntry {
    /// km.
    pub radius_km: f64,
    /// rad/s.
    pub rotation_rad_s: f64,
}

/// What the `rho` and `h` terminals mean: the known model's atmosphere and altitude.
/// Absent in files written before it existed: the handbook table, spherical altitude.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct EnvironmentEntry {
    /// `table`, `ussa1976` or `{ exponential: { rho0_kg_m3, h0_km, scale_height_km } }`.
    #[serde(with = "serde_yaml::with::singleton_map")]
    pub density: DensityEntry,
    /// `spherical` (|r| − R) or `geodetic`.
    pub altitude: AltitudeEntry,
    /// The ellipsoid's flattening for geodetic altitude (0 for spherical).
    #[serde(default)]
    pub flattening: f64,
}

/// `environment.density` values.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase", deny_unknown_fields)]
pub enum DensityEntry {
    /// The handbook piecewise-exponential table.
    Table,
    /// U.S. Standard Atmosphere 1976.
    Ussa1976,
    /// ρ0·exp(−(h − h0)/H).
    Exponential {
        /// kg/m³.
        rho0_kg_m3: f64,
        /// km.
        h0_km: f64,
        /// km.
        scale_height_km: f64,
    },
    /// The host's NRLMSISE-00 drag density: the forces file the learned force is used
    /// with supplies it (its `drag` must be `nrlmsise00`).
    Nrlmsise00,
}

/// `environment.altitude` values.
#[derive(Clone, Copy, Debug, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum AltitudeEntry {
    /// |r| − R.
    Spherical,
    /// Height above the ellipsoid.
    Geodetic,
}

impl EnvironmentEntry {
    /// The entry for `env`; `None` for the handbook default (so older files' content and
    /// checksum are unchanged).
    pub fn of(env: &Environment) -> Option<Self> {
        if *env == HANDBOOK_ENV {
            return None;
        }
        let density = match env.density {
            Density::Table => DensityEntry::Table,
            Density::Ussa1976 => DensityEntry::Ussa1976,
            Density::Exponential {
                rho0_kg_m3,
                h0_km,
                scale_height_km,
            } => DensityEntry::Exponential {
                rho0_kg_m3,
                h0_km,
                scale_height_km,
            },
            Density::Host => DensityEntry::Nrlmsise00,
        };
        let (altitude, flattening) = match env.altitude {
            Altitude::Spherical => (AltitudeEntry::Spherical, 0.0),
            Altitude::Geodetic { flattening } => (AltitudeEntry::Geodetic, flattening),
        };
        Some(Self {
            density,
            altitude,
            flattening,
        })
    }

    /// The environment this entry names, checked.
    pub fn environment(&self) -> Result<Environment, String> {
        let positive = |v: f64, k: &str| {
            if v.is_finite() && v > 0.0 {
                Ok(v)
            } else {
                Err(format!(
                    "environment: {k} must be a positive number, got {v}"
                ))
            }
        };
        let density = match self.density {
            DensityEntry::Table => Density::Table,
            DensityEntry::Ussa1976 => Density::Ussa1976,
            DensityEntry::Exponential {
                rho0_kg_m3,
                h0_km,
                scale_height_km,
            } => Density::Exponential {
                rho0_kg_m3: positive(rho0_kg_m3, "rho0_kg_m3")?,
                h0_km: if h0_km.is_finite() {
                    h0_km
                } else {
                    return Err(format!("environment: h0_km must be finite, got {h0_km}"));
                },
                scale_height_km: positive(scale_height_km, "scale_height_km")?,
            },
            DensityEntry::Nrlmsise00 => Density::Host,
        };
        let altitude = match self.altitude {
            AltitudeEntry::Spherical => Altitude::Spherical,
            AltitudeEntry::Geodetic if (0.0..0.1).contains(&self.flattening) => {
                Altitude::Geodetic {
                    flattening: self.flattening,
                }
            }
            AltitudeEntry::Geodetic => {
                return Err(format!(
                    "environment: flattening {} is not an Earth-like ellipsoid's (0 ≤ f < 0.1)",
                    self.flattening
                ))
            }
        };
        Ok(Environment { density, altitude })
    }
}

/// The whole file.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct LearnedFile {
    /// [`FORMAT_VERSION`].
    pub format_version: u32,
    /// A name for the force.
    pub name: String,
    /// `ECI`: each formula gives ECI components (R, T, N inside them are RTN axes).
    pub frame: String,
    /// `t = 0` of the formulas, ISO 8601 UTC.
    pub epoch_utc: String,
    /// Earth constants of the terminals.
    pub earth: EarthEntry,
    /// The atmosphere and altitude of the terminals (absent: handbook table, spherical).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub environment: Option<EnvironmentEntry>,
    /// Terms (empty when nothing was learned).
    pub terms: Vec<TermEntry>,
    /// Nonlinear constants.
    pub constants: Vec<ConstantEntry>,
    /// Validity.
    pub validity: ValidityEntry,
    /// Fit statistics.
    pub fit: FitEntry,
    /// Provenance.
    pub provenance: ProvenanceEntry,
    /// Fitted state at the end of the training arc (with the learned force).
    pub state_at_end: StateEntry,
    /// Fitted state at the end of the training arc with the known forces only: where
    /// `check`'s baseline prediction starts. Absent in files written before it existed
    /// (their checksum does not cover it).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub state_at_end_known_forces: Option<StateEntry>,
    /// The known model's parameters estimated alongside the terms in the final fit
    /// (`drag_scale`, `srp_scale`, empirical accelerations), name, value and 1σ: the terms
    /// complement the known forces with these values, not with forces.yaml's own. Absent
    /// when none was estimated (and in older files: their checksum does not cover it).
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub known_parameters: Vec<ConstantEntry>,
    /// Notes for the reader (degenerate terms, verdicts).
    #[serde(default)]
    pub notes: Vec<String>,
    /// `sha256:<hex>` of the canonical content (everything but this field).
    #[serde(default)]
    pub checksum: String,
}

/// A learned file that cannot be used.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("{path}: {message}")]
pub struct LearnedFileError {
    /// The file.
    pub path: String,
    /// Why.
    pub message: String,
}

/// `sha256:<hex>` of bytes.
pub fn sha256_hex(bytes: &[u8]) -> String {
    let d = Sha256::digest(bytes);
    let mut s = String::from("sha256:");
    for b in d.iter() {
        s.push_str(&format!("{b:02x}"));
    }
    s
}

impl LearnedFile {
    /// The checksum of the canonical content: SHA-256 of the JSON of the file with an
    /// empty checksum field (field order fixed by the struct, numbers shortest round-trip).
    pub fn compute_checksum(&self) -> String {
        let mut c = self.clone();
        c.checksum.clear();
        let json = serde_json::to_string(&c).unwrap_or_default();
        sha256_hex(json.as_bytes())
    }

    /// Sets the checksum and returns the YAML text.
    pub fn to_yaml(&mut self) -> String {
        self.checksum = self.compute_checksum();
        let body = serde_yaml::to_string(&*self).unwrap_or_default();
        format!("# arcwise learned force (format {FORMAT_VERSION}). Edit nothing: the checksum covers the content.\n{body}")
    }

    /// Reads and checks a learned file: version, checksum, formulas, constants.
    pub fn load(path: &Path) -> Result<LearnedFile, LearnedFileError> {
        let err = |m: String| LearnedFileError {
            path: path.display().to_string(),
            message: m,
        };
        let text =
            propagator::input::read_text(path, propagator::input::MAX_CONFIG_BYTES).map_err(err)?;
        Self::parse(&text).map_err(err)
    }

    /// Parses and checks learned-file text.
    pub fn parse(text: &str) -> Result<LearnedFile, String> {
        if text.trim().is_empty() {
            return Err("the file is empty".into());
        }
        let f: LearnedFile = propagator::input::yaml_from_str(text)?;
        if f.format_version != FORMAT_VERSION {
            return Err(format!(
                "format_version {} is not supported (this arcwise reads {FORMAT_VERSION})",
                f.format_version
            ));
        }
        let want = f.compute_checksum();
        if f.checksum != want {
            return Err(format!("checksum {} does not match the content ({want}): the file was changed after it was written", f.checksum));
        }
        f.environment()?;
        f.compile().map(|_| f)
    }

    /// Parses the formulas and checks the constants; the compiled force's parts.
    pub fn compile(&self) -> Result<Compiled, String> {
        if self.frame != "ECI" {
            return Err(format!("frame `{}`: only ECI is supported", self.frame));
        }
        let mut nodes = Vec::new();
        let mut coefs = Vec::new();
        let mut n_params = 0;
        for (i, t) in self.terms.iter().enumerate() {
            let n = parse(&t.formula).map_err(|e| format!("terms[{i}]: {e}"))?;
            if !t.coefficient.is_finite() {
                return Err(format!("terms[{i}].coefficient is not finite"));
            }
            n_params = n_params.max(n.n_params());
            nodes.push(n);
            coefs.push(t.coefficient);
        }
        let mut params = vec![f64::NAN; n_params];
        for c in &self.constants {
            let idx = c
                .name
                .strip_prefix('k')
                .and_then(|d| d.parse::<usize>().ok())
                .filter(|i| *i < 10)
                .ok_or_else(|| format!("constant name `{}` must be k0…k9", c.name))?;
            if !c.value.is_finite() {
                return Err(format!("constant {} is not finite", c.name));
            }
            if idx < params.len() {
                params[idx] = c.value;
            }
        }
        if let Some(i) = params.iter().position(|v| v.is_nan()) {
            return Err(format!(
                "the formulas use k{i} but the constants do not give it"
            ));
        }
        Epoch::parse_utc(&self.epoch_utc).map_err(|e| format!("epoch_utc: {e}"))?;
        self.check_numbers()?;
        Ok((nodes, coefs, params))
    }

    /// The numbers outside the formulas: a file edited (and resealed) by hand must not
    /// give a silently wrong force, such as a validity window that nothing is inside.
    fn check_numbers(&self) -> Result<(), String> {
        propagator::text::check_name("name", &self.name)?;
        let e = &self.earth;
        if !(e.radius_km.is_finite() && (6000.0..7000.0).contains(&e.radius_km)) {
            return Err(format!(
                "earth.radius_km = {} km: expected the Earth's radius (about 6378 km)",
                e.radius_km
            ));
        }
        if !(e.rotation_rad_s.is_finite() && e.rotation_rad_s.abs() < 1e-3) {
            return Err(format!(
                "earth.rotation_rad_s = {}: expected about 7.29e-5 rad/s",
                e.rotation_rad_s
            ));
        }
        for (i, t) in self.terms.iter().enumerate() {
            if !(t.sigma.is_finite() && t.sigma >= 0.0) {
                return Err(format!("terms[{i}].sigma must be finite and ≥ 0"));
            }
        }
        for c in &self.constants {
            if !(c.sigma.is_finite() && c.sigma >= 0.0) {
                return Err(format!("constant {}: sigma must be finite and ≥ 0", c.name));
            }
        }
        let v = &self.validity;
        let start =
            Epoch::parse_utc(&v.start_utc).map_err(|e| format!("validity.start_utc: {e}"))?;
        let end = Epoch::parse_utc(&v.end_utc).map_err(|e| format!("validity.end_utc: {e}"))?;
        if end.seconds_since(&start) < 0.0 {
            return Err("validity.end_utc is before validity.start_utc".into());
        }
        if !(v.min_altitude_km.is_finite()
            && v.max_altitude_km.is_finite()
            && v.min_altitude_km <= v.max_altitude_km)
        {
            return Err(format!(
                "validity altitudes {} to {} km: need finite numbers, min ≤ max",
                v.min_altitude_km, v.max_altitude_km
            ));
        }
        for (name, x) in [
            ("validity.time_margin_s", v.time_margin_s),
            ("validity.altitude_margin_km", v.altitude_margin_km),
        ] {
            if !(x.is_finite() && x >= 0.0) {
                return Err(format!("{name} = {x}: must be finite and ≥ 0"));
            }
        }
        self.state_at_end.state("state_at_end")?;
        if let Some(k) = &self.state_at_end_known_forces {
            k.state("state_at_end_known_forces")?;
        }
        Ok(())
    }

    /// The file for what `learn` found on `arc` under the known model whose terminals
    /// are `context`: the chosen terms (none when nothing was learned), the validity
    /// window of the arc (altitude over a sphere of the context's radius, margins of the
    /// arc's span and 20 km), the fit statistics and both end states. The checksum is set
    /// by [`Self::to_yaml`].
    pub fn from_learned(
        learned: &crate::learn::Learned,
        arc: &crate::arc::Arc,
        context: &Context,
        name: &str,
        outside: OutsidePolicy,
        provenance: ProvenanceEntry,
    ) -> Self {
        let l = learned;
        let r = context.radius_km;
        let heights: Vec<f64> = arc.observations.iter().map(|o| o.r_km.norm() - r).collect();
        let span = arc.end().seconds_since(&arc.start());
        let observations = arc.observations.len();
        let (terms, constants) = l
            .chosen
            .as_ref()
            .map_or((vec![], vec![]), |c| entries(&c.terms));
        let (fit, end) = match &l.chosen {
            Some(c) => (
                FitEntry {
                    observations,
                    rms_km_before: l.base.rms_km,
                    rms_km_after: c.fit.rms_km,
                    held_out_rms_km: c.held_out_rms_km,
                    chi2: c.fit.verdict.chi2,
                    dof: c.fit.verdict.dof,
                },
                StateEntry::new(&c.fit.epoch_last, &c.fit.x_last),
            ),
            None => (
                FitEntry {
                    observations,
                    rms_km_before: l.base.rms_km,
                    rms_km_after: l.base.rms_km,
                    held_out_rms_km: l.held_out_rms_base_km.unwrap_or(f64::NAN).max(0.0),
                    chi2: l.base.verdict.chi2,
                    dof: l.base.verdict.dof,
                },
                StateEntry::new(&l.base.epoch_last, &l.base.x_last),
            ),
        };
        // The classical parameters of the fit the terms came with (the base fit's when
        // nothing was learned), and a note to use them with the file.
        let final_fit = l.chosen.as_ref().map_or(&l.base, |c| &c.fit);
        let known_parameters = known_parameters(final_fit);
        let mut notes = l.notes.clone();
        if !known_parameters.is_empty() && l.chosen.is_some() {
            notes.push(format!(
                "learned with {} estimated alongside: the terms complement the known forces with these values; use them (e.g. drag: {{ scale: … }}) wherever this file is used",
                known_parameters
                    .iter()
                    .map(|p| format!("{} = {:.4} ± {:.1e}", p.name, p.value, p.sigma))
                    .collect::<Vec<_>>()
                    .join(", ")
            ));
        }
        let fit = FitEntry {
            held_out_rms_km: if fit.held_out_rms_km.is_finite() {
                fit.held_out_rms_km
            } else {
                0.0
            },
            ..fit
        };
        Self {
            format_version: FORMAT_VERSION,
            name: name.to_string(),
            frame: "ECI".into(),
            epoch_utc: arc.start().to_utc_string(),
            earth: EarthEntry {
                radius_km: r,
                rotation_rad_s: context.rotation_rad_s,
            },
            environment: EnvironmentEntry::of(&context.environment),
            terms,
            constants,
            validity: ValidityEntry {
                start_utc: arc.start().to_utc_string(),
                end_utc: arc.end().to_utc_string(),
                min_altitude_km: heights.iter().copied().fold(f64::INFINITY, f64::min),
                max_altitude_km: heights.iter().copied().fold(f64::NEG_INFINITY, f64::max),
                outside,
                time_margin_s: span,
                altitude_margin_km: 20.0,
            },
            fit,
            provenance,
            state_at_end: end,
            state_at_end_known_forces: Some(StateEntry::new(&l.base.epoch_last, &l.base.x_last)),
            known_parameters,
            notes,
            checksum: String::new(),
        }
    }

    /// The atmosphere and altitude of the file's terminals.
    pub fn environment(&self) -> Result<Environment, String> {
        self.environment
            .as_ref()
            .map_or(Ok(HANDBOOK_ENV), EnvironmentEntry::environment)
    }

    /// The force, on a time axis whose `t_s = 0` is `reference`, for a file whose
    /// terminals need no host model ([`Self::force_in`] otherwise).
    pub fn force(&self, reference: &Epoch) -> Result<LearnedForce, String> {
        self.force_in(reference, None)
    }

    /// The force in the model of the forces file `host` (and its path): a file whose `rho`
    /// is the host's NRLMSISE-00 density takes it from there, and refuses a host whose
    /// drag is another atmosphere (its `rho` would silently mean something else).
    pub fn force_in(
        &self,
        reference: &Epoch,
        host: Option<(&propagator::config::ForcesFile, &Path)>,
    ) -> Result<LearnedForce, String> {
        let (nodes, coefs, params) = self.compile()?;
        let epoch = Epoch::parse_utc(&self.epoch_utc).map_err(|e| e.to_string())?;
        let start = Epoch::parse_utc(&self.validity.start_utc)
            .map_err(|e| format!("validity.start_utc: {e}"))?;
        let end = Epoch::parse_utc(&self.validity.end_utc)
            .map_err(|e| format!("validity.end_utc: {e}"))?;
        let program = Program::compile(&nodes, &coefs, &params);
        let needs = program.needs();
        let environment = self.environment()?;
        let host_density = if environment.density == Density::Host && needs.density {
            let (forces, forces_path) = host.ok_or(
                "this learned force reads rho, the NRLMSISE-00 density of the forces it is used with: give it a forces file (list it in that file's plugins:)",
            )?;
            let nrlmsise = matches!(
                forces.drag.as_ref().map(|d| &d.atmosphere),
                Some(propagator::config::AtmosphereSpec::Nrlmsise00(_))
            );
            if !nrlmsise {
                return Err(format!(
                    "this learned force reads rho of an nrlmsise00 atmosphere, but the drag of {} is not nrlmsise00: its rho would mean another density",
                    forces_path.display()
                ));
            }
            Some(crate::expr::HostDensity::of_model(
                forces,
                forces_path,
                &epoch,
            )?)
        } else {
            None
        };
        Ok(LearnedForce {
            name: format!("learned:{}", self.name),
            program,
            needs,
            context: Context {
                radius_km: self.earth.radius_km,
                rotation_rad_s: self.earth.rotation_rad_s,
                clock: CenturyClock::new(&epoch),
                environment,
                host: host_density,
            },
            offset_s: reference.seconds_since(&epoch),
            window_s: (
                start.seconds_since(&epoch),
                end.seconds_since(&epoch) + self.validity.time_margin_s,
            ),
            altitude_km: (
                self.validity.min_altitude_km - self.validity.altitude_margin_km,
                self.validity.max_altitude_km + self.validity.altitude_margin_km,
            ),
            policy: self.validity.outside,
            epoch,
            outside_seen: AtomicBool::new(false),
        })
    }
}

/// A learned force evaluated in process (tree evaluation).
pub struct LearnedForce {
    name: String,
    /// The compiled sum Σ c_k g_k (the in-process evaluator).
    pub program: Program,
    needs: Needs,
    /// Terminal constants.
    pub context: Context,
    /// Formula time = our `t_s` + this, s.
    pub offset_s: f64,
    /// Valid formula times, s.
    pub window_s: (f64, f64),
    /// Valid altitudes, km.
    pub altitude_km: (f64, f64),
    /// Outside policy.
    pub policy: OutsidePolicy,
    /// Formula time zero (the file's `epoch_utc`).
    epoch: Epoch,
    outside_seen: AtomicBool,
}

impl LearnedForce {
    /// Whether a `warn` force was evaluated outside its window at least once.
    pub fn was_used_outside(&self) -> bool {
        self.outside_seen.load(Ordering::Relaxed)
    }

    /// The warning recorded (once per run) when a `warn` force is used outside.
    fn outside_warning(&self) -> String {
        let utc = |s: f64| self.epoch.plus_seconds(s).to_utc_string();
        format!(
            "{} was used outside its validity window ({} to {}, {:.0} to {:.0} km altitude): the force there is an extrapolation of the training arc",
            self.name,
            utc(self.window_s.0),
            utc(self.window_s.1),
            self.altitude_km.0,
            self.altitude_km.1
        )
    }

    fn inside(&self, tf: f64, x: &StateVector) -> bool {
        let h = (x[0] * x[0] + x[1] * x[1] + x[2] * x[2]).sqrt() - self.context.radius_km;
        tf >= self.window_s.0
            && tf <= self.window_s.1
            && h >= self.altitude_km.0
            && h <= self.altitude_km.1
    }

    /// Applies the outside policy: `Ok(true)` evaluate, `Ok(false)` contribute zero.
    fn gate(&self, t_s: f64, tf: f64, x: &StateVector) -> Result<bool, ForceError> {
        if self.inside(tf, x) {
            return Ok(true);
        }
        // NaN fails every comparison of `inside`: refuse it rather than answer zero.
        if !(tf.is_finite() && x.iter().all(|c| c.is_finite())) {
            return Err(ForceError {
                force: self.name.clone(),
                t_s,
                reason: "non-finite time or state".into(),
            });
        }
        match self.policy {
            OutsidePolicy::Warn => {
                if !self.outside_seen.swap(true, Ordering::Relaxed) {
                    propagator::notice::warn_once(self.outside_warning());
                }
                Ok(true)
            }
            OutsidePolicy::Zero => Ok(false),
            OutsidePolicy::Refuse => Err(ForceError {
                force: self.name.clone(),
                t_s,
                reason: "outside the validity window of the learned force (time or altitude)"
                    .into(),
            }),
        }
    }
}

impl Force for LearnedForce {
    fn name(&self) -> &str {
        &self.name
    }

    fn acceleration(&self, t_s: f64, x: &StateVector) -> Result<Vector3<f64>, ForceError> {
        let tf = t_s + self.offset_s;
        if !self.gate(t_s, tf, x)? {
            return Ok(Vector3::zeros());
        }
        let p = Terminals::with_needs(
            tf,
            [x[0], x[1], x[2]],
            [x[3], x[4], x[5]],
            &self.context,
            &self.needs,
        );
        let v = self.program.eval(&p);
        propagator::force::finite_or_error(&self.name, t_s, Vector3::new(v[0], v[1], v[2]))
    }

    fn switching(&self, t_s: f64, x: &StateVector, out: &mut Vec<f64>) {
        if self.needs.lit {
            self.context.shadow_switching(t_s + self.offset_s, x, out);
        }
    }

    /// Exact partials by dual-number evaluation.
    fn partials(&self, t_s: f64, x: &StateVector) -> Result<Matrix3x6<f64>, ForceError> {
        let tf = t_s + self.offset_s;
        if !self.gate(t_s, tf, x)? {
            return Ok(Matrix3x6::zeros());
        }
        let d = |k: usize| crate::expr::num::Dual::var(x[k], k);
        let p = Terminals::with_needs(
            tf,
            [d(0), d(1), d(2)],
            [d(3), d(4), d(5)],
            &self.context,
            &self.needs,
        );
        let v = self.program.eval(&p);
        let mut m = Matrix3x6::zeros();
        for i in 0..3 {
            for j in 0..6 {
                m[(i, j)] = v[i].d[j];
            }
        }
        Ok(m)
    }
}

/// The file's term and constant entries of a learned model (unused constants, NaN, left
/// out).
fn entries(terms: &crate::terms::Terms) -> (Vec<TermEntry>, Vec<ConstantEntry>) {
    let t = terms
        .nodes
        .iter()
        .zip(terms.coefficients.iter().zip(&terms.sigmas))
        .map(|(n, (v, s))| TermEntry {
            formula: n.to_string(),
            coefficient: *v,
            sigma: *s,
        })
        .collect();
    let k = terms
        .constants
        .iter()
        .zip(&terms.constant_sigmas)
        .enumerate()
        .filter(|(_, (v, _))| v.is_finite())
        .map(|(i, (v, s))| ConstantEntry {
            name: format!("k{i}"),
            value: *v,
            sigma: *s,
        })
        .collect();
    (t, k)
}

/// The classical parameters a fit estimated (drag scale, empirical terms…), as entries.
fn known_parameters(fit: &crate::fit::FitResult) -> Vec<ConstantEntry> {
    fit.estimates
        .iter()
        .filter(|e| !e.parameter.is_term())
        .map(|e| ConstantEntry {
            name: e.parameter.name(),
            value: e.value,
            sigma: e.sigma,
        })
        .collect()
}

/// Lets `forces.yaml` `plugins:` name learned-force files (`.yaml`/`.yml`), evaluated in
/// process.
pub struct LearnedResolver;

impl propagator::config::PluginResolver for LearnedResolver {
    fn resolve(
        &self,
        path: &Path,
        checksum: Option<&str>,
        reference: &Epoch,
        host: (&propagator::config::ForcesFile, &Path),
    ) -> Option<Result<Box<dyn Force>, String>> {
        let ext = path
            .extension()
            .and_then(|e| e.to_str())?
            .to_ascii_lowercase();
        if ext != "yaml" && ext != "yml" {
            return None;
        }
        Some((|| {
            let f = LearnedFile::load(path).map_err(|e| e.to_string())?;
            if let Some(want) = checksum {
                if f.checksum != want {
                    return Err(format!(
                        "{}: checksum {} is not the expected {want}",
                        path.display(),
                        f.checksum
                    ));
                }
            }
            let force = f
                .force_in(reference, Some(host))
                .map_err(|e| format!("{}: {e}", path.display()))?;
            Ok(Box::new(force) as Box<dyn Force>)
        })())
    }
}
