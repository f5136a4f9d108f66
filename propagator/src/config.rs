//! The `forces.yaml` and `STATE.yaml` files.
//!
//! Unknown keys, wrong types and out-of-range values are errors that name the file,
//! the key and the line (serde_yaml reports the position; range checks run inside
//! deserialization so they get it too).

use crate::atmosphere::{AltitudeModel, Atmosphere, Exponential, PiecewiseExponential, Ussa1976};
use crate::body::CentralBody;
use crate::elements::Elements;
use crate::force::drag::Drag;
use crate::force::maneuver::{FiniteBurn, Impulse, ManeuverFrame};
use crate::force::srp::{Shadow, SolarPressure};
use crate::force::third_body::ThirdBody;
use crate::force::two_body::TwoBody;
use crate::force::zonal::Zonal;
use crate::force::ForceModel;
use crate::plugin::loader::PluginForce;
use crate::solar_system::{Body as SolarBody, CenturyClock};
use crate::state::StateVector;
use crate::time::Epoch;
use crate::time::TimeAxis;
use serde::de::{Deserializer, Error as _};
use serde::Deserialize;
use std::path::{Path, PathBuf};
use std::sync::Arc;

/// A configuration file that could not be read or is wrong.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("{}: {message}", path.display())]
pub struct ConfigError {
    /// The file.
    pub path: PathBuf,
    /// What is wrong, with the key and line where known.
    pub message: String,
}

fn config_error(path: &Path, message: impl Into<String>) -> ConfigError {
    ConfigError {
        path: path.to_path_buf(),
        message: message.into(),
    }
}

/// Range checks that run inside deserialization, so serde_yaml adds the position;
/// each names its key, since the position is that of the enclosing block.
macro_rules! checked_f64 {
    ($fn:ident, $key:literal, positive) => {
        checked_f64!($fn, $key, |v: f64| v > 0.0, "must be positive and finite");
    };
    ($fn:ident, $key:literal, finite) => {
        checked_f64!($fn, $key, |_v: f64| true, "must be finite");
    };
    ($fn:ident, $key:literal, $ok:expr, $what:literal) => {
        fn $fn<'de, D: Deserializer<'de>>(d: D) -> Result<f64, D::Error> {
            let v = f64::deserialize(d)?;
            if v.is_finite() && ($ok)(v) {
                Ok(v)
            } else {
                Err(D::Error::custom(format!("`{}` = {} {}", $key, v, $what)))
            }
        }
    };
}

checked_f64!(positive_cd, "cd", positive);
checked_f64!(positive_cr, "cr", positive);
checked_f64!(positive_area, "area_m2", positive);
checked_f64!(positive_mass, "mass_kg", positive);
checked_f64!(positive_scale, "scale", positive);
checked_f64!(positive_rho0, "rho0_kg_m3", positive);
checked_f64!(finite_h0, "h0_km", finite);
checked_f64!(positive_scale_height, "scale_height_km", positive);
checked_f64!(
    positive_sma,
    "sma_km",
    |v: f64| v > 0.0,
    "must be positive and finite (elements describe closed orbits: give a hyperbolic state as r_km and v_km_s)"
);
checked_f64!(finite_ecc, "ecc", finite);
checked_f64!(finite_inc, "inc_deg", finite);
checked_f64!(finite_raan, "raan_deg", finite);
checked_f64!(finite_argp, "argp_deg", finite);
checked_f64!(finite_nu, "true_anomaly_deg", finite);

fn finite3<'de, D: Deserializer<'de>>(d: D) -> Result<Option<[f64; 3]>, D::Error> {
    let v = Option::<[f64; 3]>::deserialize(d)?;
    if let Some(a) = v {
        if !a.iter().all(|c| c.is_finite()) {
            return Err(D::Error::custom(format!(
                "{a:?} has a non-finite component"
            )));
        }
    }
    Ok(v)
}

fn finite3_required<'de, D: Deserializer<'de>>(d: D) -> Result<[f64; 3], D::Error> {
    let a = <[f64; 3]>::deserialize(d)?;
    if !a.iter().all(|c| c.is_finite()) {
        return Err(D::Error::custom(format!(
            "{a:?} has a non-finite component"
        )));
    }
    Ok(a)
}

fn scale_default() -> f64 {
    1.0
}

/// The contents of `forces.yaml`.
#[derive(Clone, Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ForcesFile {
    /// Central-body constants (EGM96 Earth if absent).
    #[serde(default)]
    pub central_body: CentralBody,
    /// Gravity field.
    pub gravity: GravitySpec,
    /// Earth-orientation data for a full field (the shipped IERS table if absent).
    #[serde(default)]
    pub earth_orientation: Option<EarthOrientationSpec>,
    /// Atmospheric drag (none if absent).
    #[serde(default)]
    pub drag: Option<DragSpec>,
    /// Solar radiation pressure (none if absent).
    #[serde(default)]
    pub srp: Option<SrpSpec>,
    /// Third bodies: `sun`, `moon`.
    #[serde(default)]
    pub third_body: Vec<ThirdBodyKey>,
    /// Maneuvers: impulsive or finite.
    #[serde(default, with = "serde_yaml::with::singleton_map_recursive")]
    pub maneuvers: Vec<ManeuverSpec>,
    /// Force plugins: paths of native plugins (relative to this file's folder), or
    /// `{ path, source_checksum }` to insist on the learned file they came from.
    #[serde(default)]
    pub plugins: Vec<PluginSpec>,
}

/// Turns a `plugins:` entry into a force, for kinds other than native libraries.
pub trait PluginResolver {
    /// `None` when the entry is not of this resolver's kind (it is then loaded as a
    /// native plugin); otherwise the force or a sentence saying why not. `host` is the
    /// forces file the entry is listed in, and its path, for forces that use its models.
    fn resolve(
        &self,
        path: &Path,
        checksum: Option<&str>,
        reference: &Epoch,
        host: (&ForcesFile, &Path),
    ) -> Option<Result<Box<dyn crate::force::Force>, String>>;
}

/// Resolves nothing: every plugin entry is a native library.
pub struct NativeOnly;

impl PluginResolver for NativeOnly {
    fn resolve(
        &self,
        _p: &Path,
        _c: Option<&str>,
        _r: &Epoch,
        _h: (&ForcesFile, &Path),
    ) -> Option<Result<Box<dyn crate::force::Force>, String>> {
        None
    }
}

/// One entry of `plugins:`.
#[derive(Clone, Debug, Deserialize, PartialEq)]
#[serde(untagged)]
pub enum PluginSpec {
    /// Just a path.
    Path(String),
    /// A path and the checksum its metadata must carry.
    Checked {
        /// The plugin file.
        path: String,
        /// `sha256:<hex>` the plugin's `source_checksum` must equal.
        source_checksum: Option<String>,
    },
}

impl PluginSpec {
    /// The path as written.
    pub fn path(&self) -> &str {
        match self {
            PluginSpec::Path(p) => p,
            PluginSpec::Checked { path, .. } => path,
        }
    }

    /// The required checksum, if any.
    pub fn checksum(&self) -> Option<&str> {
        match self {
            PluginSpec::Path(_) => None,
            PluginSpec::Checked {
                source_checksum, ..
            } => source_checksum.as_deref(),
        }
    }
}

/// `srp:` block.
#[derive(Clone, Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SrpSpec {
    /// Radiation-pressure coefficient, dimensionless (1 absorbing … 2 mirror).
    #[serde(deserialize_with = "positive_cr")]
    pub cr: f64,
    /// Area, m².
    #[serde(deserialize_with = "positive_area")]
    pub area_m2: f64,
    /// Mass, kg.
    #[serde(deserialize_with = "positive_mass")]
    pub mass_kg: f64,
    /// `none`, `cylindrical` or `conical` (the default).
    #[serde(default)]
    pub shadow: ShadowKey,
    /// Multiplier on the SRP acceleration (default 1).
    #[serde(default = "scale_default", deserialize_with = "positive_scale")]
    pub scale: f64,
}

/// `shadow:` values.
#[derive(Clone, Copy, Debug, Default, Deserialize, PartialEq, Eq)]
#[serde(rename_all = "lowercase")]
pub enum ShadowKey {
    /// Always lit.
    None,
    /// Cylindrical shadow.
    Cylindrical,
    /// Umbra and penumbra.
    #[default]
    Conical,
}

/// `third_body:` entries.
#[derive(Clone, Copy, Debug, Deserialize, PartialEq, Eq)]
#[serde(rename_all = "lowercase")]
pub enum ThirdBodyKey {
    /// The Sun.
    Sun,
    /// The Moon.
    Moon,
}

/// One entry of `maneuvers:`.
#[derive(Clone, Debug, Deserialize, PartialEq)]
#[serde(rename_all = "lowercase")]
pub enum ManeuverSpec {
    /// An instantaneous Δv.
    Impulsive(ImpulsiveSpec),
    /// A constant RTN acceleration over an interval.
    Finite(FiniteSpec),
}

/// `impulsive:` — give exactly one of `dv_rtn_km_s` or `dv_eci_km_s`.
#[derive(Clone, Debug, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct ImpulsiveSpec {
    /// ISO 8601 UTC.
    pub epoch_utc: String,
    /// Δv in RTN, km/s.
    #[serde(default, deserialize_with = "finite3")]
    pub dv_rtn_km_s: Option<[f64; 3]>,
    /// Δv in ECI, km/s.
    #[serde(default, deserialize_with = "finite3")]
    pub dv_eci_km_s: Option<[f64; 3]>,
}

/// `finite:` burn.
#[derive(Clone, Debug, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct FiniteSpec {
    /// Start, ISO 8601 UTC.
    pub start_utc: String,
    /// End, ISO 8601 UTC.
    pub end_utc: String,
    /// Acceleration in RTN, km/s².
    #[serde(deserialize_with = "finite3_required")]
    pub accel_rtn_km_s2: [f64; 3],
}

/// `gravity:` block: the simple zonal form, or a full field.
#[derive(Clone, Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct GravitySpec {
    /// 0 = two-body only; 2…6 = zonal harmonics J2…J_n (EGM96), pole on the GCRF z axis.
    #[serde(default)]
    pub zonal_degree: usize,
    /// A full field in ITRF: `egm2008` (shipped, to degree 70) or the path of an ICGEM
    /// `.gfc` file (relative to this file's folder).
    #[serde(default)]
    pub field: Option<String>,
    /// Degree of the full field (2 … the file's maximum).
    #[serde(default)]
    pub degree: Option<usize>,
    /// Order of the full field (≤ degree; the degree when absent).
    #[serde(default)]
    pub order: Option<usize>,
    /// Solid Earth tides raised by the Sun and Moon on the field's degree-2 coefficients
    /// (IERS Conventions 2010 §6.2.1, step 1).
    #[serde(default)]
    pub solid_tides: bool,
}

/// `earth_orientation:` block.
#[derive(Clone, Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct EarthOrientationSpec {
    /// An IERS `finals2000A` or EOP 20 C04 file (relative to this file's folder).
    pub file: String,
}

/// The Earth orientation `orientation` names (relative to `forces_path`'s folder), or the
/// shipped table.
fn orientation_or_shipped(
    orientation: Option<&EarthOrientationSpec>,
    forces_path: &Path,
) -> Result<crate::earth::EarthOrientation, String> {
    match orientation {
        Some(o) => o.load(forces_path),
        None => crate::earth::EarthOrientation::shipped(),
    }
}

impl EarthOrientationSpec {
    /// The Earth orientation from this file (relative to `forces_path`'s folder).
    pub fn load(&self, forces_path: &Path) -> Result<crate::earth::EarthOrientation, String> {
        let base = forces_path.parent().unwrap_or(Path::new("."));
        Ok(crate::earth::EarthOrientation::new(
            crate::input::parsed_once(&base.join(&self.file), crate::earth::EopTable::read)?,
        ))
    }
}

impl GravitySpec {
    /// Checks the combination of keys.
    fn validate(&self) -> Result<(), String> {
        if self.zonal_degree == 1 || self.zonal_degree > 6 {
            return Err(format!(
                "gravity.zonal_degree must be 0 (two-body) or 2..6, got {}",
                self.zonal_degree
            ));
        }
        match (&self.field, self.degree) {
            (Some(_), _) if self.zonal_degree != 0 => {
                Err("gravity: give either zonal_degree or field (with degree), not both".into())
            }
            (Some(_), None) => Err("gravity.field needs a degree (e.g. degree: 20)".into()),
            (Some(_), Some(n)) if n < 2 => {
                Err(format!("gravity.degree must be at least 2, got {n}"))
            }
            (None, Some(_)) => Err(
                "gravity.degree is for a full field: add field: egm2008 (or a .gfc path)".into(),
            ),
            (None, None) if self.order.is_some() => {
                Err("gravity.order is for a full field: add field and degree".into())
            }
            (None, _) if self.solid_tides => Err(
                "gravity.solid_tides is for a full field: add field: egm2008 and a degree".into(),
            ),
            _ => Ok(()),
        }
    }

    /// The central GM (km³/s²) and the non-central gravity force, if any: the field's own
    /// GM with a full field (EGM2008's differs from EGM96's by 7.5e-10 relative, ~0.7 m a
    /// day along track in LEO), the body's otherwise.
    fn build(
        &self,
        path: &Path,
        body: &CentralBody,
        reference: &Epoch,
        orientation: Option<&EarthOrientationSpec>,
    ) -> Result<(f64, Option<Box<dyn crate::force::Force>>), String> {
        let base = path.parent().unwrap_or(Path::new("."));
        let Some(field) = &self.field else {
            if self.zonal_degree < 2 {
                return Ok((body.mu_km3_s2, None));
            }
            let z = Zonal::egm96(body.mu_km3_s2, body.radius_km, self.zonal_degree)?;
            return Ok((body.mu_km3_s2, Some(Box::new(z))));
        };
        let degree = self.degree.unwrap_or(2);
        let field = if field == "egm2008" {
            crate::earth::GravityField::egm2008()?
        } else {
            std::sync::Arc::new(crate::earth::gfc::read(&base.join(field), Some(degree))?)
        };
        let mu = field.gm_km3_s2;
        let tides = match self.solid_tides {
            true => Some(crate::earth::SolidTides::new(&field)?),
            false => None,
        };
        let harmonics = crate::earth::Harmonics::new(field, degree, self.order.unwrap_or(degree))?;
        let earth = orientation_or_shipped(orientation, path)?;
        let mut force = crate::force::field::FieldGravity::new(
            harmonics,
            earth,
            reference.tt_seconds_since_j2000(),
        );
        if let Some(tides) = tides {
            force =
                force.with_solid_tides(tides, crate::solar_system::CenturyClock::new(reference));
        }
        Ok((mu, Some(Box::new(force))))
    }
}

/// `drag:` block.
#[derive(Clone, Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DragSpec {
    /// Density model.
    #[serde(with = "serde_yaml::with::singleton_map")]
    pub atmosphere: AtmosphereSpec,
    /// Drag coefficient, dimensionless.
    #[serde(deserialize_with = "positive_cd")]
    pub cd: f64,
    /// Cross-section area, m².
    #[serde(deserialize_with = "positive_area")]
    pub area_m2: f64,
    /// Mass, kg.
    #[serde(deserialize_with = "positive_mass")]
    pub mass_kg: f64,
    /// `spherical` (|r| − R, the default) or `geodetic` (WGS-84).
    #[serde(default)]
    pub altitude: AltitudeKey,
    /// Multiplier on the drag acceleration (default 1).
    #[serde(default = "scale_default", deserialize_with = "positive_scale")]
    pub scale: f64,
}

impl DragSpec {
    /// The drag force this block describes, for central body `body`, in the forces file
    /// `path` (for relative paths), on a time axis starting at `reference`, with the
    /// Earth orientation `orientation` names (the shipped table if none).
    pub fn build(
        &self,
        body: &CentralBody,
        path: &Path,
        reference: &Epoch,
        orientation: Option<&EarthOrientationSpec>,
    ) -> Result<Drag, String> {
        let mut altitude = match self.altitude {
            AltitudeKey::Spherical => AltitudeModel::Spherical,
            AltitudeKey::Geodetic => AltitudeModel::Geodetic,
        };
        let atmosphere: Arc<dyn Atmosphere> = match &self.atmosphere {
            AtmosphereSpec::Exponential(e) => Arc::new(Exponential {
                rho0_kg_m3: e.rho0_kg_m3,
                h0_km: e.h0_km,
                scale_height_km: e.scale_height_km,
            }),
            AtmosphereSpec::Table => Arc::new(PiecewiseExponential::handbook()),
            AtmosphereSpec::Ussa1976 => Arc::new(Ussa1976),
            AtmosphereSpec::Nrlmsise00(n) => {
                // The model's altitude is geodetic on WGS-84, whatever `altitude` says.
                altitude = AltitudeModel::Geodetic;
                let earth = orientation_or_shipped(orientation, path)?;
                let weather = n.weather(path)?;
                // A table for another period fails here, before any propagation.
                let (mjd, seconds) = reference.utc_mjd_and_seconds();
                weather.drivers(mjd, seconds)?;
                Arc::new(crate::atmosphere::thermosphere::Thermosphere::new(
                    weather, earth, *reference,
                ))
            }
        };
        if self.area_m2 / self.mass_kg > 10.0 {
            return Err(format!(
                "drag: area/mass = {} m²/kg is implausible (area in m², mass in kg)",
                self.area_m2 / self.mass_kg
            ));
        }
        Ok(Drag {
            cd: self.cd,
            area_m2: self.area_m2,
            mass_kg: self.mass_kg,
            scale: self.scale,
            atmosphere,
            body: *body,
            altitude,
        })
    }
}

/// `altitude:` values.
#[derive(Clone, Copy, Debug, Default, Deserialize, PartialEq, Eq)]
#[serde(rename_all = "lowercase")]
pub enum AltitudeKey {
    /// |r| − R.
    #[default]
    Spherical,
    /// Height above the WGS-84 ellipsoid.
    Geodetic,
}

/// `atmosphere:` values: `table`, `ussa1976`, or `{ exponential: {...} }`.
#[derive(Clone, Debug, Deserialize, PartialEq)]
#[serde(rename_all = "lowercase")]
pub enum AtmosphereSpec {
    /// Single exponential with explicit constants.
    Exponential(ExponentialSpec),
    /// The handbook piecewise-exponential table.
    Table,
    /// U.S. Standard Atmosphere 1976.
    Ussa1976,
    /// NRLMSISE-00 driven by space weather.
    Nrlmsise00(Nrlmsise00Spec),
}

/// `nrlmsise00:` space weather: constants `{ f107, f107a, ap }` (daily-Ap mode), or
/// `{ space_weather: PATH }`, a daily table (storm-time mode; the layout is in
/// [`crate::atmosphere::space_weather`]), relative to this file's folder.
#[derive(Clone, Debug, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct Nrlmsise00Spec {
    /// F10.7 of the previous day, sfu.
    pub f107: Option<f64>,
    /// 81-day centred mean F10.7, sfu.
    pub f107a: Option<f64>,
    /// Daily Ap.
    pub ap: Option<f64>,
    /// A space-weather table.
    pub space_weather: Option<String>,
}

impl Nrlmsise00Spec {
    /// Checks the combination and the ranges of the keys.
    pub fn validate(&self) -> Result<(), String> {
        let key = "drag.atmosphere.nrlmsise00";
        match (self.f107, self.f107a, self.ap, &self.space_weather) {
            (Some(f), Some(fa), Some(ap), None) => {
                for (name, v) in [("f107", f), ("f107a", fa)] {
                    if !(v.is_finite() && v > 0.0 && v < 1000.0) {
                        return Err(format!("{key}.{name} = {v} sfu: F10.7 is a positive flux of order 70–300"));
                    }
                }
                if !(ap.is_finite() && (0.0..=400.0).contains(&ap)) {
                    return Err(format!("{key}.ap = {ap} is outside the Ap scale 0–400"));
                }
                Ok(())
            }
            (None, None, None, Some(_)) => Ok(()),
            _ => Err(format!(
                "{key}: give either f107, f107a and ap (constants) or space_weather (a table file), not a mix"
            )),
        }
    }

    /// The space weather this block describes; a table path is relative to `forces_path`'s folder.
    pub fn weather(
        &self,
        forces_path: &Path,
    ) -> Result<crate::atmosphere::space_weather::SpaceWeather, String> {
        use crate::atmosphere::space_weather::{Drivers, SpaceWeather, SpaceWeatherTable};
        self.validate()?;
        if let Some(file) = &self.space_weather {
            let base = forces_path.parent().unwrap_or(Path::new("."));
            let table = crate::input::parsed_once(&base.join(file), SpaceWeatherTable::read)?;
            return Ok(SpaceWeather::Table(table));
        }
        Ok(SpaceWeather::Constant(Drivers {
            f107: self.f107.unwrap_or_default(),
            f107a: self.f107a.unwrap_or_default(),
            geomagnetic: crate::atmosphere::nrlmsise00::Geomagnetic::Daily(
                self.ap.unwrap_or_default(),
            ),
        }))
    }
}

/// `exponential:` constants.
#[derive(Clone, Debug, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct ExponentialSpec {
    /// Density at `h0_km`, kg/m³.
    #[serde(deserialize_with = "positive_rho0")]
    pub rho0_kg_m3: f64,
    /// Base altitude, km.
    #[serde(deserialize_with = "finite_h0")]
    pub h0_km: f64,
    /// Scale height, km.
    #[serde(deserialize_with = "positive_scale_height")]
    pub scale_height_km: f64,
}

/// A force model ready to propagate, with the constants it was built from.
pub struct LoadedForces {
    /// The forces, in order: two-body, zonal, drag, SRP, third bodies, finite burns,
    /// plugins; impulsive maneuvers ride along in the model.
    pub model: ForceModel,
    /// Central-body constants.
    pub body: CentralBody,
    /// How drag measures altitude (also used for the altitude floor).
    pub altitude: AltitudeModel,
    /// The file as parsed.
    pub spec: ForcesFile,
}

impl ForcesFile {
    /// Reads and checks `forces.yaml`.
    pub fn load(path: &Path) -> Result<ForcesFile, ConfigError> {
        let text = crate::input::read_text(path, crate::input::MAX_CONFIG_BYTES)
            .map_err(|e| config_error(path, e))?;
        Self::parse(&text, path)
    }

    /// Parses `forces.yaml` text; `path` is for messages only.
    pub fn parse(text: &str, path: &Path) -> Result<ForcesFile, ConfigError> {
        if text.trim().is_empty() {
            return Err(config_error(path, "the file is empty"));
        }
        let spec: ForcesFile =
            crate::input::yaml_from_str(text).map_err(|e| config_error(path, e))?;
        spec.central_body
            .validate()
            .map_err(|m| config_error(path, m))?;
        spec.gravity.validate().map_err(|m| config_error(path, m))?;
        if let Some(DragSpec {
            atmosphere: AtmosphereSpec::Nrlmsise00(n),
            ..
        }) = &spec.drag
        {
            n.validate().map_err(|m| config_error(path, m))?;
        }
        Ok(spec)
    }

    /// The Earth-orientation data this file names (`None`: the shipped table), for
    /// Earth-fixed inputs and outputs to share with the field; `path` is this file's.
    pub fn earth_orientation(
        &self,
        path: &Path,
    ) -> Result<Option<crate::earth::EarthOrientation>, ConfigError> {
        self.earth_orientation
            .as_ref()
            .map(|o| o.load(path))
            .transpose()
            .map_err(|e| config_error(path, format!("earth_orientation: {e}")))
    }

    /// Builds the force model. `reference` is the epoch where the model's time axis
    /// starts (forces that depend on absolute time are placed on it). Plugins are loaded
    /// as native libraries; see [`ForcesFile::build_with`] for other kinds.
    pub fn build(&self, path: &Path, reference: Epoch) -> Result<LoadedForces, ConfigError> {
        self.build_with(path, reference, &NativeOnly)
    }

    /// `model` with this file's maneuvers: impulses on the model, finite burns as forces
    /// (epochs on `axis`; `path` for messages).
    fn add_maneuvers(
        &self,
        mut model: ForceModel,
        path: &Path,
        axis: &TimeAxis,
    ) -> Result<ForceModel, ConfigError> {
        for (k, m) in self.maneuvers.iter().enumerate() {
            let epoch = |key: &str, text: &str| {
                Epoch::parse_utc(text)
                    .map_err(|e| config_error(path, format!("maneuvers[{k}].{key}: {e}")))
            };
            match m {
                ManeuverSpec::Impulsive(i) => {
                    let t = axis.seconds(&epoch("epoch_utc", &i.epoch_utc)?);
                    let (dv, frame) = match (i.dv_rtn_km_s, i.dv_eci_km_s) {
                        (Some(v), None) => (v, ManeuverFrame::Rtn),
                        (None, Some(v)) => (v, ManeuverFrame::Eci),
                        _ => {
                            return Err(config_error(
                                path,
                                format!("maneuvers[{k}].impulsive: give exactly one of dv_rtn_km_s and dv_eci_km_s"),
                            ))
                        }
                    };
                    let dv = nalgebra::Vector3::from(dv);
                    if dv.norm() > 5.0 {
                        return Err(config_error(
                            path,
                            format!("maneuvers[{k}].impulsive: |Δv| = {} km/s is implausible: the unit is km/s, not m/s", dv.norm()),
                        ));
                    }
                    model.push_impulse(Impulse {
                        t_s: t,
                        dv_km_s: dv,
                        frame,
                    });
                }
                ManeuverSpec::Finite(f) => {
                    let start = axis.seconds(&epoch("start_utc", &f.start_utc)?);
                    let end = axis.seconds(&epoch("end_utc", &f.end_utc)?);
                    if end <= start {
                        return Err(config_error(
                            path,
                            format!("maneuvers[{k}].finite: end_utc is not after start_utc"),
                        ));
                    }
                    let a = nalgebra::Vector3::from(f.accel_rtn_km_s2);
                    if a.norm() > 0.1 {
                        return Err(config_error(
                            path,
                            format!("maneuvers[{k}].finite: |a| = {} km/s² is implausible: the unit is km/s², not m/s²", a.norm()),
                        ));
                    }
                    model = model.with(FiniteBurn {
                        start_s: start,
                        end_s: end,
                        accel_rtn_km_s2: a,
                    });
                }
            }
        }
        Ok(model)
    }

    /// As [`ForcesFile::build`], asking `resolver` first about each plugin entry (the
    /// learner registers learned-force files this way, keeping this crate unaware of it).
    pub fn build_with(
        &self,
        path: &Path,
        reference: Epoch,
        resolver: &dyn PluginResolver,
    ) -> Result<LoadedForces, ConfigError> {
        let body = self.central_body;
        let (mu_km3_s2, gravity) = self
            .gravity
            .build(path, &body, &reference, self.earth_orientation.as_ref())
            .map_err(|m| config_error(path, m))?;
        let mut model = ForceModel::new().with(TwoBody { mu_km3_s2 });
        if let Some(g) = gravity {
            model.push(g);
        }
        let mut altitude = AltitudeModel::Spherical;
        // The drag, shared (its atmosphere is behind an `Arc`) with plugins that read its
        // density.
        let mut host_drag = None;
        if let Some(d) = &self.drag {
            let drag = d
                .build(&body, path, &reference, self.earth_orientation.as_ref())
                .map_err(|m| config_error(path, m))?;
            altitude = drag.altitude;
            host_drag = Some(std::sync::Arc::new(drag.clone()));
            model = model.with(drag);
        }
        let clock = CenturyClock::new(&reference);
        let axis = TimeAxis::new(reference);
        if let Some(srp) = &self.srp {
            if srp.area_m2 / srp.mass_kg > 10.0 {
                return Err(config_error(
                    path,
                    format!(
                        "srp: area/mass = {} m²/kg is implausible (area in m², mass in kg)",
                        srp.area_m2 / srp.mass_kg
                    ),
                ));
            }
            model = model.with(SolarPressure {
                cr: srp.cr,
                area_m2: srp.area_m2,
                mass_kg: srp.mass_kg,
                scale: srp.scale,
                shadow: match srp.shadow {
                    ShadowKey::None => Shadow::None,
                    ShadowKey::Cylindrical => Shadow::Cylindrical,
                    ShadowKey::Conical => Shadow::Conical,
                },
                earth_radius_km: body.radius_km,
                clock,
            });
        }
        let mut seen = Vec::new();
        for b in &self.third_body {
            if seen.contains(b) {
                return Err(config_error(
                    path,
                    format!("third_body: {b:?} is listed twice"),
                ));
            }
            seen.push(*b);
            let body = match b {
                ThirdBodyKey::Sun => SolarBody::Sun,
                ThirdBodyKey::Moon => SolarBody::Moon,
            };
            model = model.with(ThirdBody::new(body, clock));
        }
        model = self.add_maneuvers(model, path, &axis)?;
        let base = path.parent().unwrap_or(Path::new("."));
        for spec in &self.plugins {
            let p = Path::new(spec.path());
            let resolved = if p.is_absolute() {
                p.to_path_buf()
            } else {
                base.join(p)
            };
            match resolver.resolve(&resolved, spec.checksum(), &reference, (self, path)) {
                Some(Ok(force)) => model.push(force),
                Some(Err(e)) => return Err(config_error(path, format!("plugins: {e}"))),
                None => {
                    let force = PluginForce::load_in(
                        &resolved,
                        &reference,
                        spec.checksum(),
                        host_drag.clone(),
                    )
                    .map_err(|e| config_error(path, format!("plugins: {e}")))?;
                    model.push(Box::new(force));
                }
            }
        }
        Ok(LoadedForces {
            model,
            body,
            altitude,
            spec: self.clone(),
        })
    }
}

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

#[cfg(test)]
mod tests {
    use super::*;

    fn p() -> &'static Path {
        Path::new("forces.yaml")
    }

    const FULL: &str = r#"
central_body: { mu_km3_s2: 398600.4418, radius_km: 6378.1363, rotation_rad_s: 7.292115e-5 }
gravity: { zonal_degree: 2 }
drag:
  atmosphere: { exponential: { rho0_kg_m3: 3.725e-12, h0_km: 400.0, scale_height_km: 58.515 } }
  cd: 2.2
  area_m2: 0.1
  mass_kg: 10.0
plugins: []
"#;

    #[test]
    fn the_documented_example_parses() {
        let f = ForcesFile::parse(FULL, p()).unwrap();
        assert_eq!(f.gravity.zonal_degree, 2);
        let d = f.drag.as_ref().unwrap();
        assert!(matches!(d.atmosphere, AtmosphereSpec::Exponential(_)));
        let loaded = f
            .build(p(), Epoch::parse_utc("2031-05-04T12:00:00Z").unwrap())
            .unwrap();
        assert_eq!(loaded.model.names(), vec!["two_body", "zonal_j2", "drag"]);
        for name in ["table", "ussa1976"] {
            let t = FULL.replace(
                "{ exponential: { rho0_kg_m3: 3.725e-12, h0_km: 400.0, scale_height_km: 58.515 } }",
                name,
            );
            let f = ForcesFile::parse(&t, p()).unwrap();
            assert!(f.drag.is_some());
        }
    }

    #[test]
    fn srp_third_bodies_and_maneuvers() {
        let t = format!(
            "{FULL}srp: {{ cr: 1.3, area_m2: 0.1, mass_kg: 10.0, shadow: conical }}\nthird_body: [sun, moon]\nmaneuvers:\n  - {{ impulsive: {{ epoch_utc: \"2031-05-04T15:00:00Z\", dv_rtn_km_s: [0.0, 0.0005, 0.0] }} }}\n  - {{ finite: {{ start_utc: \"2031-05-04T16:00:00Z\", end_utc: \"2031-05-04T16:10:00Z\", accel_rtn_km_s2: [0.0, 2.0e-9, 0.0] }} }}\n"
        );
        let f = ForcesFile::parse(&t, p()).unwrap();
        let l = f
            .build(p(), Epoch::parse_utc("2031-05-04T12:00:00Z").unwrap())
            .unwrap();
        assert_eq!(
            l.model.names(),
            vec![
                "two_body",
                "zonal_j2",
                "drag",
                "srp",
                "third_body_sun",
                "third_body_moon",
                "finite_burn"
            ]
        );
        assert_eq!(l.model.impulses().len(), 1);
        assert_eq!(l.model.impulses()[0].t_s, 3.0 * 3600.0);
        assert_eq!(l.model.discontinuities_s(), vec![10800.0, 14400.0, 15000.0]);
        let bad = t.replace(
            "dv_rtn_km_s: [0.0, 0.0005, 0.0]",
            "dv_rtn_km_s: [0.0, 500.0, 0.0]",
        );
        let e = ForcesFile::parse(&bad, p())
            .unwrap()
            .build(p(), Epoch::parse_utc("2031-05-04T12:00:00Z").unwrap())
            .err()
            .unwrap();
        assert!(e.to_string().contains("not m/s"), "{e}");
        let bad = t.replace("shadow: conical", "shadow: partial");
        assert!(ForcesFile::parse(&bad, p())
            .unwrap_err()
            .to_string()
            .contains("partial"));
    }

    #[test]
    fn unknown_key_is_named_with_its_line() {
        let t = FULL.replace("  cd: 2.2", "  cd: 2.2\n  c_d: 2.1");
        let e = ForcesFile::parse(&t, p()).unwrap_err().to_string();
        assert!(e.contains("c_d") && e.contains("line 7"), "{e}");
        assert!(e.starts_with("forces.yaml:"), "{e}");
    }

    #[test]
    fn wrong_type_and_bad_values_are_named() {
        let t = FULL.replace("cd: 2.2", "cd: two");
        let e = ForcesFile::parse(&t, p()).unwrap_err().to_string();
        assert!(e.contains("line 6"), "{e}");
        let t = FULL.replace("mass_kg: 10.0", "mass_kg: .nan");
        let e = ForcesFile::parse(&t, p()).unwrap_err().to_string();
        assert!(e.contains("mass_kg") || e.contains("line 8"), "{e}");
        let t = FULL.replace("zonal_degree: 2", "zonal_degree: 9");
        assert!(ForcesFile::parse(&t, p())
            .unwrap_err()
            .to_string()
            .contains("zonal_degree"));
        let e = ForcesFile::parse("gravity: [1, 2", p())
            .unwrap_err()
            .to_string();
        assert!(e.contains("forces.yaml"), "{e}");
        assert!(ForcesFile::parse("", p()).is_err());
    }

    #[test]
    fn state_files() {
        let body = CentralBody::EARTH_EGM96;
        let s = StateFile::parse(
            "epoch_utc: 2031-05-04T12:00:00Z\nr_km: [7000, 0, 0]\nv_km_s: [0, 7.5, 0]\n",
            Path::new("s.yaml"),
            &body,
        )
        .unwrap();
        assert_eq!(s.state[4], 7.5);
        let e = StateFile::parse(
            "epoch_utc: 2031-05-04T12:00:00Z\nelements: { sma_km: 7000, ecc: 0.001, inc_deg: 51.6, raan_deg: 10, argp_deg: 20, true_anomaly_deg: 30 }\n",
            Path::new("s.yaml"),
            &body,
        )
        .unwrap();
        assert!((e.state.fixed_rows::<3>(0).norm() - 7000.0).abs() < 10.0);
        for (bad, needle) in [
            (
                "epoch_utc: 2031-05-04T12:00:00Z\nr_km: [7000, 0, .nan]\nv_km_s: [0, 7.5, 0]\n",
                "non-finite",
            ),
            (
                "epoch_utc: 2031-05-04T12:00:00Z\nr_km: [7000000, 0, 0]\nv_km_s: [0, 7500, 0]\n",
                "metres",
            ),
            (
                "epoch_utc: 2031-05-04T12:00:00Z\nr_km: [6000, 0, 0]\nv_km_s: [0, 7.5, 0]\n",
                "inside the Earth",
            ),
            (
                "epoch_utc: 2031-05-04 noon\nr_km: [7000, 0, 0]\nv_km_s: [0, 7.5, 0]\n",
                "epoch_utc",
            ),
            (
                "epoch_utc: 2031-05-04T12:00:00Z\nr_km: [7000, 0, 0]\n",
                "either",
            ),
        ] {
            let e = StateFile::parse(bad, Path::new("s.yaml"), &body)
                .unwrap_err()
                .to_string();
            assert!(e.contains(needle), "{bad}: {e}");
        }
    }
}
