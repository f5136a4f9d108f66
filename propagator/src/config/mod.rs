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

mod drag;
mod gravity;
mod plugins;
mod specs;
mod state;
pub use drag::*;
pub use gravity::*;
pub use plugins::*;
pub use specs::*;
pub use state::*;

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
