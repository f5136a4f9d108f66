//! The file's entries: one serde type per block (terms, constants, validity, fit,
//! provenance, states, Earth, environment), each checked where it is read.

use super::*;

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
    /// Its unit as the formulas use it (`s`, `km`, `rad`, …; see
    /// [`crate::expr::units`]). Absent where the formulas do not pin it down, and in
    /// files written before it existed (their checksum does not cover it).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub unit: Option<String>,
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
    /// Position RMS with the known forces only, km (a position arc).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub rms_km_before: Option<f64>,
    /// Position RMS with the learned force, km (a position arc).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub rms_km_after: Option<f64>,
    /// Position RMS on the held-out tail, km (a position arc).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub held_out_rms_km: Option<f64>,
    /// RMS of the normalized residuals with the known forces only (a tracking arc).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub rms_sigma_before: Option<f64>,
    /// RMS of the normalized residuals with the learned force (a tracking arc).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub rms_sigma_after: Option<f64>,
    /// RMS of the normalized residuals on the held-out tail (a tracking arc).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub held_out_rms_sigma: Option<f64>,
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
