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

mod entries;
mod force;
pub use entries::*;
pub use force::*;

/// The format version this arcwise writes and reads.
pub const FORMAT_VERSION: u32 = 1;

/// The parts of a compiled learned force: formulas, coefficients, constants.
pub type Compiled = (Vec<Node>, Vec<f64>, Vec<f64>);

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
        let heights = validity_heights(arc, &l.base, r);
        let span = arc.end().seconds_since(&arc.start());
        let observations = arc.observations.len();
        let (terms, constants) = l
            .chosen
            .as_ref()
            .map_or((vec![], vec![]), |c| entries(&c.terms));
        let (after, held_out, end) = match &l.chosen {
            Some(c) => (
                &c.fit,
                Some(c.held_out_rms),
                StateEntry::new(&c.fit.epoch_last, &c.fit.x_last),
            ),
            None => (
                &l.base,
                l.held_out_rms_base,
                StateEntry::new(&l.base.epoch_last, &l.base.x_last),
            ),
        };
        // A tracking arc's RMS are in σ units, a position arc's in km.
        let held_out = held_out.filter(|v| v.is_finite()).unwrap_or(0.0).max(0.0);
        let (km, sigma) = (arc.tracking.is_none(), arc.tracking.is_some());
        let fit = FitEntry {
            observations,
            rms_km_before: l.base.rms_km,
            rms_km_after: after.rms_km,
            held_out_rms_km: km.then_some(held_out),
            rms_sigma_before: sigma.then_some(l.base.rms_sigma),
            rms_sigma_after: sigma.then_some(after.rms_sigma),
            held_out_rms_sigma: sigma.then_some(held_out),
            chi2: after.verdict.chi2,
            dof: after.verdict.dof,
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
    let units = crate::expr::units::constant_units(&terms.nodes);
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
            unit: units.get(i).cloned().flatten(),
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
            unit: None,
            name: e.parameter.name(),
            value: e.value,
            sigma: e.sigma,
        })
        .collect()
}

/// The altitudes (km) the learned force's validity covers: the observed positions' of a
/// position arc; of a tracking arc, the fitted trajectory's at the measurements' epochs
/// (the measurements give no positions).
fn validity_heights(
    arc: &crate::arc::Arc,
    base: &crate::fit::FitResult,
    radius_km: f64,
) -> Vec<f64> {
    if arc.tracking.is_none() {
        return arc
            .observations
            .iter()
            .filter_map(|o| o.as_state().map(|s| s.r_km.norm() - radius_km))
            .collect();
    }
    let (lo, hi) = base.radius_range_km;
    vec![lo - radius_km, hi - radius_km]
}
