//! The `STATE.yaml` file: an epoch and a Cartesian state or elements, checked for
//! plausibility.

use super::*;

/// `elements:` block of a state file (degrees in the file).
#[derive(Clone, Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ElementsSpec {
    /// Semi-major axis, km.
    #[serde(deserialize_with = "positive_sma")]
    pub sma_km: f64,
    /// Eccentricity.
    #[serde(deserialize_with = "finite_ecc")]
    pub ecc: f64,
    /// Inclination, deg.
    #[serde(deserialize_with = "finite_inc")]
    pub inc_deg: f64,
    /// Right ascension of the ascending node, deg.
    #[serde(deserialize_with = "finite_raan")]
    pub raan_deg: f64,
    /// Argument of perigee, deg.
    #[serde(deserialize_with = "finite_argp")]
    pub argp_deg: f64,
    /// True anomaly, deg.
    #[serde(deserialize_with = "finite_nu")]
    pub true_anomaly_deg: f64,
}

/// The contents of `STATE.yaml`: an epoch and either `r_km` + `v_km_s` or `elements`.
#[derive(Clone, Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct StateFile {
    /// ISO 8601 UTC.
    pub epoch_utc: String,
    /// ECI position, km.
    #[serde(default, deserialize_with = "finite3")]
    pub r_km: Option<[f64; 3]>,
    /// ECI velocity, km/s.
    #[serde(default, deserialize_with = "finite3")]
    pub v_km_s: Option<[f64; 3]>,
    /// Classical elements instead of r, v.
    #[serde(default)]
    pub elements: Option<ElementsSpec>,
    /// Name of the object (written to OEM `OBJECT_NAME`).
    #[serde(default)]
    pub object_name: Option<String>,
    /// Identifier of the object, e.g. its international designator `2031-042A`
    /// (written to OEM `OBJECT_ID`).
    #[serde(default)]
    pub object_id: Option<String>,
}

/// An initial condition: epoch and ECI state.
#[derive(Clone, Debug, PartialEq)]
pub struct InitialState {
    /// The epoch.
    pub epoch: Epoch,
    /// ECI state, km and km/s.
    pub state: StateVector,
    /// Name of the object, if the file gives one.
    pub object_name: Option<String>,
    /// Identifier of the object, if the file gives one.
    pub object_id: Option<String>,
}

impl StateFile {
    /// Reads a state file and converts it with the central body's μ.
    pub fn load(path: &Path, body: &CentralBody) -> Result<InitialState, ConfigError> {
        let text = crate::input::read_text(path, crate::input::MAX_CONFIG_BYTES)
            .map_err(|e| config_error(path, e))?;
        Self::parse(&text, path, body)
    }

    /// Parses state-file text; `path` is for messages.
    pub fn parse(text: &str, path: &Path, body: &CentralBody) -> Result<InitialState, ConfigError> {
        if text.trim().is_empty() {
            return Err(config_error(path, "the file is empty"));
        }
        let f: StateFile = crate::input::yaml_from_str(text).map_err(|e| config_error(path, e))?;
        let epoch = Epoch::parse_utc(&f.epoch_utc)
            .map_err(|e| config_error(path, format!("epoch_utc: {e}")))?;
        let state =
            match (&f.r_km, &f.v_km_s, &f.elements) {
                (Some(r), Some(v), None) => StateVector::new(r[0], r[1], r[2], v[0], v[1], v[2]),
                (None, None, Some(e)) => Elements {
                    sma_km: e.sma_km,
                    ecc: e.ecc,
                    inc_rad: e.inc_deg.to_radians(),
                    raan_rad: e.raan_deg.to_radians(),
                    argp_rad: e.argp_deg.to_radians(),
                    true_anomaly_rad: e.true_anomaly_deg.to_radians(),
                }
                .to_state(body.mu_km3_s2)
                .map_err(|e| config_error(path, format!("elements: {e}")))?,
                _ => return Err(config_error(
                    path,
                    "give either both `r_km` and `v_km_s`, or `elements`, not both and not neither",
                )),
            };
        check_state_plausible(&state, body).map_err(|m| config_error(path, m))?;
        for (field, v) in [("object_name", &f.object_name), ("object_id", &f.object_id)] {
            if let Some(n) = v {
                crate::text::check_name(field, n).map_err(|m| config_error(path, m))?;
            }
        }
        Ok(InitialState {
            epoch,
            state,
            object_name: f.object_name,
            object_id: f.object_id,
        })
    }
}

/// Rejects states that are inside the Earth, absurdly far, or look like metres.
pub fn check_state_plausible(x: &StateVector, body: &CentralBody) -> Result<(), String> {
    let r = (x[0] * x[0] + x[1] * x[1] + x[2] * x[2]).sqrt();
    let v = (x[3] * x[3] + x[4] * x[4] + x[5] * x[5]).sqrt();
    if !(r.is_finite() && v.is_finite()) {
        return Err("the state has a non-finite component".into());
    }
    if r > 1.0e6 {
        return Err(format!(
            "|r| = {r:.6e} km is beyond 1e6 km: positions look like metres, not km"
        ));
    }
    if v > 100.0 {
        return Err(format!(
            "|v| = {v:.6e} km/s: velocities look like m/s, not km/s"
        ));
    }
    if r < body.radius_km {
        return Err(format!(
            "|r| = {r:.3} km is inside the Earth (radius {} km)",
            body.radius_km
        ));
    }
    Ok(())
}
