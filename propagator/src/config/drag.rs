//! The `drag:` block: coefficient, area, mass, altitude model and the atmosphere
//! (exponential, handbook table, USSA1976, NRLMSISE-00 with its space weather).

use super::*;

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
