//! Observation arcs: epoch-tagged ECI positions (optionally velocities), each with a σ.
//!
//! Read from CSV (`epoch_utc,x_km,y_km,z_km[,vx_km_s,vy_km_s,vz_km_s][,sigma_km]`),
//! CCSDS OEM, or one satellite of an SP3-c/d file (Earth-fixed, rotated to GCRF). Checked on the way in: epochs strictly increasing, values finite, radius
//! above the surface and below 1e6 km (larger looks like metres), σ positive.

use nalgebra::Vector3;
use propagator::ephemeris::sp3::Sp3;
use propagator::ephemeris::{csv, file_error_at, oem, FileError};
use propagator::frames::{Frame, ToGcrf};
use propagator::{CentralBody, Epoch};
use std::path::Path;

/// One observation.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Observation {
    /// When.
    pub epoch: Epoch,
    /// ECI position, km.
    pub r_km: Vector3<f64>,
    /// ECI velocity, km/s, if observed.
    pub v_km_s: Option<Vector3<f64>>,
    /// 1σ per position axis, km.
    pub sigma_km: f64,
    /// 1σ per velocity axis, km/s (used only when `v_km_s` is present).
    pub sigma_km_s: f64,
    /// 1-based line in the source file (0 if not from a file).
    pub line: usize,
}

/// A time-ordered set of observations of one object.
#[derive(Clone, Debug, PartialEq, Default)]
pub struct Arc {
    /// The observations, strictly increasing in epoch.
    pub observations: Vec<Observation>,
}

/// Defaults for what a file may leave out.
#[derive(Clone, Debug)]
pub struct ArcDefaults {
    /// σ for rows without `sigma_km`, km.
    pub sigma_km: f64,
    /// σ of observed velocities, km/s.
    pub sigma_km_s: f64,
    /// The object to take from a file of many (an SP3 satellite id such as `G05`).
    pub object: Option<String>,
    /// The frame of a CSV arc's states (rotated to GCRF on reading).
    pub csv_frame: Frame,
    /// Earth-orientation data for Earth-fixed inputs (SP3, ITRF CSV or OEM): the force
    /// model's, so arc and field share one Earth; the shipped table if `None`.
    pub earth: Option<propagator::earth::EarthOrientation>,
}

impl Default for ArcDefaults {
    fn default() -> Self {
        Self {
            sigma_km: 0.01,
            sigma_km_s: 1e-5,
            object: None,
            csv_frame: Frame::Gcrf,
            earth: None,
        }
    }
}

impl Arc {
    /// Reads a CSV or OEM arc (by extension) and validates it.
    pub fn load(path: &Path, defaults: ArcDefaults, body: &CentralBody) -> Result<Arc, FileError> {
        let text = propagator::input::read_text(path, propagator::input::MAX_DATA_BYTES)
            .map_err(|e| file_error_at(path, None, e))?;
        Self::parse(&text, path, defaults, body)
    }

    /// Parses the text of a CSV or OEM arc (the format from `path`'s extension, which also
    /// names the file in errors) and validates it.
    pub fn parse(
        text: &str,
        path: &Path,
        defaults: ArcDefaults,
        body: &CentralBody,
    ) -> Result<Arc, FileError> {
        let ext = path
            .extension()
            .and_then(|e| e.to_str())
            .map(|e| e.to_ascii_lowercase());
        let arc = match ext.as_deref() {
            Some("csv") => {
                let recs = csv::parse_records(text, path)?;
                let mut arc = Arc {
                    observations: recs
                        .into_iter()
                        .map(|r| Observation {
                            epoch: r.epoch,
                            r_km: r.r_km,
                            v_km_s: r.v_km_s,
                            sigma_km: r.sigma_km.unwrap_or(defaults.sigma_km),
                            sigma_km_s: defaults.sigma_km_s,
                            line: r.line,
                        })
                        .collect(),
                };
                arc.rotate_to_gcrf(defaults.csv_frame, &defaults)
                    .map_err(|e| file_error_at(path, None, e))?;
                arc
            }
            Some("oem") => {
                let (eph, lines) = oem::parse_with(text, path, defaults.earth.as_ref())?;
                Arc {
                    observations: eph
                        .points
                        .iter()
                        .zip(lines)
                        .enumerate()
                        // A segment that starts where the previous ended (an impulsive
                        // maneuver) repeats the epoch: the position is observed once.
                        .filter(|(i, (p, _))| {
                            !(eph.segment_starts.contains(i) && eph.points[i - 1].epoch == p.epoch)
                        })
                        .map(|(_, (p, line))| Observation {
                            epoch: p.epoch,
                            r_km: Vector3::new(p.state[0], p.state[1], p.state[2]),
                            v_km_s: Some(Vector3::new(p.state[3], p.state[4], p.state[5])),
                            sigma_km: defaults.sigma_km,
                            sigma_km_s: defaults.sigma_km_s,
                            line,
                        })
                        .collect(),
                }
            }
            Some("sp3") => Self::from_sp3(text, path, &defaults)?,
            _ => {
                return Err(file_error_at(
                    path,
                    None,
                    "unknown arc format: the file name must end in .csv, .oem or .sp3",
                ))
            }
        };
        arc.validate(path, body)?;
        Ok(arc)
    }

    /// The positions of one satellite of an SP3 file (`defaults.object`), rotated from
    /// the file's Earth-fixed frame to GCRF with `defaults.earth`.
    fn from_sp3(text: &str, path: &Path, defaults: &ArcDefaults) -> Result<Arc, FileError> {
        let sp3 = Sp3::parse(text, path)?;
        let Some(id) = defaults.object.as_deref() else {
            let ids = sp3.satellites();
            return Err(file_error_at(
                path,
                None,
                format!(
                    "an SP3 file holds {} satellites: choose one with --object (e.g. --object {})",
                    ids.len(),
                    ids.first().copied().unwrap_or("G01")
                ),
            ));
        };
        let observations = sp3
            .of(id, path)?
            .into_iter()
            .map(|p| Observation {
                epoch: p.epoch,
                r_km: p.r_km,
                v_km_s: None,
                sigma_km: defaults.sigma_km,
                sigma_km_s: defaults.sigma_km_s,
                line: p.line,
            })
            .collect();
        let mut arc = Arc { observations };
        arc.rotate_to_gcrf(Frame::Itrf, defaults)
            .map_err(|e| file_error_at(path, None, e))?;
        Ok(arc)
    }

    /// Rotates positions (and velocities, if observed) from `frame` to GCRF.
    fn rotate_to_gcrf(&mut self, frame: Frame, defaults: &ArcDefaults) -> Result<(), String> {
        let rotate = ToGcrf::with_earth(frame, defaults.earth.as_ref())?;
        for o in &mut self.observations {
            (o.r_km, o.v_km_s) = rotate.apply(&o.epoch, o.r_km, o.v_km_s);
        }
        Ok(())
    }

    /// Checks order, finiteness, plausibility and σ; names the line.
    pub fn validate(&self, path: &Path, body: &CentralBody) -> Result<(), FileError> {
        if self.observations.is_empty() {
            return Err(file_error_at(path, None, "no observations in the file"));
        }
        for (i, o) in self.observations.iter().enumerate() {
            let at = |m: String| file_error_at(path, Some(o.line), m);
            let r = o.r_km.norm();
            if !o.r_km.iter().all(|c| c.is_finite()) {
                return Err(at("position is not finite".into()));
            }
            if r > 1.0e6 {
                return Err(at(format!(
                    "|r| = {r:.6e} km is beyond 1e6 km: the positions look like metres, not km"
                )));
            }
            if r < body.radius_km {
                return Err(at(format!(
                    "|r| = {r:.3} km is below the Earth's surface (radius {} km)",
                    body.radius_km
                )));
            }
            if let Some(v) = o.v_km_s {
                if !v.iter().all(|c| c.is_finite()) {
                    return Err(at("velocity is not finite".into()));
                }
                if v.norm() > 100.0 {
                    return Err(at(format!(
                        "|v| = {:.6e} km/s: the velocities look like m/s, not km/s",
                        v.norm()
                    )));
                }
            }
            let sigma_ok = o.sigma_km.is_finite()
                && o.sigma_km > 0.0
                && o.sigma_km_s.is_finite()
                && o.sigma_km_s > 0.0;
            if !sigma_ok {
                return Err(at(format!(
                    "σ = {} km must be positive and finite",
                    o.sigma_km
                )));
            }
            if o.sigma_km > 1000.0 {
                return Err(at(format!(
                    "σ = {} km is implausible (the unit is km: metres?)",
                    o.sigma_km
                )));
            }
            if i > 0 {
                let prev = &self.observations[i - 1];
                let dt = o.epoch.seconds_since(&prev.epoch);
                if dt == 0.0 {
                    return Err(at(format!(
                        "duplicate epoch {} (also on line {})",
                        o.epoch, prev.line
                    )));
                }
                if dt < 0.0 {
                    return Err(at(format!(
                        "epoch {} is earlier than the one before it: epochs must increase",
                        o.epoch
                    )));
                }
            }
        }
        Ok(())
    }

    /// First epoch.
    pub fn start(&self) -> Epoch {
        self.observations[0].epoch
    }

    /// Last epoch.
    pub fn end(&self) -> Epoch {
        self.observations[self.observations.len() - 1].epoch
    }

    /// Whether any observation has a velocity.
    pub fn has_velocity(&self) -> bool {
        self.observations.iter().any(|o| o.v_km_s.is_some())
    }

    /// Writes the arc as CSV (with `sigma_km`, and velocities if every row has them).
    pub fn to_csv(&self) -> String {
        let with_v = self.observations.iter().all(|o| o.v_km_s.is_some());
        let mut s = String::from(if with_v {
            "epoch_utc,x_km,y_km,z_km,vx_km_s,vy_km_s,vz_km_s,sigma_km\n"
        } else {
            "epoch_utc,x_km,y_km,z_km,sigma_km\n"
        });
        for o in &self.observations {
            s.push_str(&format!(
                "{},{},{},{}",
                o.epoch.to_utc_string(),
                o.r_km[0],
                o.r_km[1],
                o.r_km[2]
            ));
            if let (true, Some(v)) = (with_v, o.v_km_s) {
                s.push_str(&format!(",{},{},{}", v[0], v[1], v[2]));
            }
            s.push_str(&format!(",{}\n", o.sigma_km));
        }
        s
    }
}
