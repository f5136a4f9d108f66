//! Observation arcs: epoch-tagged ECI positions (optionally velocities), each with a σ.
//!
//! Read from CSV (`epoch_utc,x_km,y_km,z_km[,vx_km_s,vy_km_s,vz_km_s][,sigma_km]`),
//! CCSDS OEM, or one satellite of an SP3-c/d file (Earth-fixed, rotated to GCRF). Checked on the way in: epochs strictly increasing, values finite, radius
//! above the surface and below 1e6 km (larger looks like metres), σ positive.

use nalgebra::Vector3;
use propagator::earth::EarthOrientation;
use propagator::ephemeris::sp3::Sp3;
use propagator::ephemeris::{csv, file_error_at, oem, FileError};
use propagator::frames::{Frame, ToGcrf};
use propagator::tracking::light_time::Tag;
use propagator::tracking::measurement::Kind;
use propagator::tracking::sites_file::SiteEntry;
use propagator::{CentralBody, Epoch};
use std::path::Path;

/// One observation: a state, or one tracking measurement.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Observation {
    /// When (for a measurement: its time tag).
    pub epoch: Epoch,
    /// What was observed.
    pub observed: Observed,
    /// 1-based line in the source file (0 if not from a file).
    pub line: usize,
}

/// What an observation saw.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Observed {
    /// A GCRF position (and perhaps velocity).
    State(StateObs),
    /// One tracking measurement by a site of the arc's [`Tracking`].
    Tracking(Tracked),
}

/// An observed position (and perhaps velocity), GCRF.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct StateObs {
    /// Position, km.
    pub r_km: Vector3<f64>,
    /// Velocity, km/s, if observed.
    pub v_km_s: Option<Vector3<f64>>,
    /// 1σ per position axis, km.
    pub sigma_km: f64,
    /// 1σ per velocity axis, km/s (used only when `v_km_s` is present).
    pub sigma_km_s: f64,
}

/// One tracking measurement.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Tracked {
    /// Index of the site in the arc's [`Tracking::sites`].
    pub site: usize,
    /// What it measures.
    pub kind: Kind,
    /// Which end of the signal path the epoch tags (ranges).
    pub tag: Tag,
    /// The measured value, model units (km, km/s, rad).
    pub value: f64,
    /// 1σ, model units.
    pub sigma: f64,
    /// The site's constant bias for this kind, model units (subtracted before fitting).
    pub bias: f64,
}

impl Observation {
    /// A state observation.
    pub fn state(
        epoch: Epoch,
        r_km: Vector3<f64>,
        v_km_s: Option<Vector3<f64>>,
        sigma_km: f64,
        sigma_km_s: f64,
        line: usize,
    ) -> Observation {
        Observation {
            epoch,
            observed: Observed::State(StateObs {
                r_km,
                v_km_s,
                sigma_km,
                sigma_km_s,
            }),
            line,
        }
    }

    /// The observed state, if this is one.
    pub fn as_state(&self) -> Option<&StateObs> {
        match &self.observed {
            Observed::State(s) => Some(s),
            Observed::Tracking(_) => None,
        }
    }

    /// The observed state to change, if this is one.
    pub fn as_state_mut(&mut self) -> Option<&mut StateObs> {
        match &mut self.observed {
            Observed::State(s) => Some(s),
            Observed::Tracking(_) => None,
        }
    }

    /// The measurement, if this is one.
    pub fn as_tracked(&self) -> Option<&Tracked> {
        match &self.observed {
            Observed::Tracking(m) => Some(m),
            Observed::State(_) => None,
        }
    }
}

/// What measurements need besides themselves: the sites, and the Earth they turn with.
#[derive(Clone, Debug)]
pub struct Tracking {
    /// The sites, as read from the sites file.
    pub sites: Vec<SiteEntry>,
    /// GCRF ↔ ITRF for the sites.
    pub earth: EarthOrientation,
}

impl PartialEq for Tracking {
    fn eq(&self, other: &Self) -> bool {
        self.sites == other.sites && self.earth.eop().source() == other.earth.eop().source()
    }
}

/// A time-ordered set of observations of one object: states, or tracking measurements
/// (never both).
#[derive(Clone, Debug, PartialEq, Default)]
pub struct Arc {
    /// The observations, in time order (states strictly increasing; measurements may
    /// share an epoch).
    pub observations: Vec<Observation>,
    /// The sites and Earth orientation of a tracking arc (`None` for states).
    pub tracking: Option<std::sync::Arc<Tracking>>,
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
    /// The sites of a tracking arc (a TDM or a measurement CSV), from the sites file.
    pub sites: Option<Vec<SiteEntry>>,
}

impl Default for ArcDefaults {
    fn default() -> Self {
        Self {
            sigma_km: 0.01,
            sigma_km_s: 1e-5,
            object: None,
            csv_frame: Frame::Gcrf,
            earth: None,
            sites: None,
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
            Some("csv") if crate::tracking_arc::is_measurement_csv(text) => {
                crate::tracking_arc::from_csv(text, path, &defaults)?
            }
            Some("tdm") => crate::tracking_arc::from_tdm(text, path, &defaults)?,
            Some("csv") => {
                let recs = csv::parse_records(text, path)?;
                let mut arc = Arc {
                    observations: recs
                        .into_iter()
                        .map(|r| {
                            Observation::state(
                                r.epoch,
                                r.r_km,
                                r.v_km_s,
                                r.sigma_km.unwrap_or(defaults.sigma_km),
                                defaults.sigma_km_s,
                                r.line,
                            )
                        })
                        .collect(),
                    tracking: None,
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
                        .map(|(_, (p, line))| {
                            Observation::state(
                                p.epoch,
                                Vector3::new(p.state[0], p.state[1], p.state[2]),
                                Some(Vector3::new(p.state[3], p.state[4], p.state[5])),
                                defaults.sigma_km,
                                defaults.sigma_km_s,
                                line,
                            )
                        })
                        .collect(),
                    tracking: None,
                }
            }
            Some("sp3") => Self::from_sp3(text, path, &defaults)?,
            _ => {
                return Err(file_error_at(
                    path,
                    None,
                    "unknown arc format: the file name must end in .csv, .oem, .sp3 or .tdm",
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
            .map(|p| {
                Observation::state(
                    p.epoch,
                    p.r_km,
                    None,
                    defaults.sigma_km,
                    defaults.sigma_km_s,
                    p.line,
                )
            })
            .collect();
        let mut arc = Arc {
            observations,
            tracking: None,
        };
        arc.rotate_to_gcrf(Frame::Itrf, defaults)
            .map_err(|e| file_error_at(path, None, e))?;
        Ok(arc)
    }

    /// Rotates positions (and velocities, if observed) from `frame` to GCRF.
    fn rotate_to_gcrf(&mut self, frame: Frame, defaults: &ArcDefaults) -> Result<(), String> {
        let rotate = ToGcrf::with_earth(frame, defaults.earth.as_ref())?;
        for o in &mut self.observations {
            if let Observed::State(s) = &mut o.observed {
                (s.r_km, s.v_km_s) = rotate.apply(&o.epoch, s.r_km, s.v_km_s);
            }
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
            match (&o.observed, &self.tracking) {
                (Observed::State(s), None) => check_state(s, body).map_err(at)?,
                (Observed::Tracking(m), Some(t)) => check_tracked(m, t).map_err(at)?,
                _ => return Err(at("an arc holds states or measurements, not both".into())),
            }
            if i > 0 {
                let prev = &self.observations[i - 1];
                let dt = o.epoch.seconds_since(&prev.epoch);
                if dt < 0.0 {
                    return Err(at(format!(
                        "epoch {} is earlier than the one before it: epochs must increase",
                        o.epoch
                    )));
                }
                if dt == 0.0 && self.tracking.is_none() {
                    return Err(at(format!(
                        "duplicate epoch {} (also on line {})",
                        o.epoch, prev.line
                    )));
                }
            }
        }
        if let Some(t) = &self.tracking {
            self.check_tracking_times(t)
                .map_err(|(line, m)| file_error_at(path, Some(line), m))?;
        }
        Ok(())
    }

    /// A tracking arc: no measurement repeated (same epoch, site and kind), and every
    /// epoch inside the Earth-orientation table (outside it the rotation would be a
    /// silent extrapolation).
    fn check_tracking_times(&self, t: &Tracking) -> Result<(), (usize, String)> {
        let (first, last) = t.earth.eop().span_mjd();
        let mut seen = std::collections::HashMap::new();
        for o in &self.observations {
            let Some(m) = o.as_tracked() else { continue };
            let (mjd, _) = o.epoch.utc_mjd_and_seconds();
            if mjd < first || mjd >= last {
                return Err((
                    o.line,
                    format!(
                        "epoch {} is outside the Earth-orientation table ({}: MJD {first} to {last}): give a table that covers the measurements",
                        o.epoch,
                        t.earth.eop().source()
                    ),
                ));
            }
            let key = (o.epoch.tai_seconds_j1900().to_bits(), m.site, m.kind);
            if let Some(line) = seen.insert(key, o.line) {
                return Err((
                    o.line,
                    format!(
                        "the same {} by {} at {} is also on line {line}",
                        m.kind.info().word,
                        t.sites[m.site].site.name,
                        o.epoch
                    ),
                ));
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
        self.observations
            .iter()
            .any(|o| o.as_state().is_some_and(|s| s.v_km_s.is_some()))
    }

    /// Writes the arc as CSV: states with `sigma_km` (and velocities if every row has
    /// them), or measurements in the measurement layout ([`crate::tracking_arc`]).
    pub fn to_csv(&self) -> String {
        if let Some(t) = &self.tracking {
            return crate::tracking_arc::to_csv(self, t);
        }
        let states: Vec<(&Epoch, &StateObs)> = self
            .observations
            .iter()
            .filter_map(|o| o.as_state().map(|s| (&o.epoch, s)))
            .collect();
        let with_v = states.iter().all(|(_, o)| o.v_km_s.is_some());
        let mut s = String::from(if with_v {
            "epoch_utc,x_km,y_km,z_km,vx_km_s,vy_km_s,vz_km_s,sigma_km\n"
        } else {
            "epoch_utc,x_km,y_km,z_km,sigma_km\n"
        });
        for (epoch, o) in states {
            s.push_str(&format!(
                "{},{},{},{}",
                epoch.to_utc_string(),
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

/// A state observation's plausibility (finite, above the surface, units, σ).
fn check_state(o: &StateObs, body: &CentralBody) -> Result<(), String> {
    let r = o.r_km.norm();
    if !o.r_km.iter().all(|c| c.is_finite()) {
        return Err("position is not finite".into());
    }
    if r > 1.0e6 {
        return Err(format!(
            "|r| = {r:.6e} km is beyond 1e6 km: the positions look like metres, not km"
        ));
    }
    if r < body.radius_km {
        return Err(format!(
            "|r| = {r:.3} km is below the Earth's surface (radius {} km)",
            body.radius_km
        ));
    }
    if let Some(v) = o.v_km_s {
        if !v.iter().all(|c| c.is_finite()) {
            return Err("velocity is not finite".into());
        }
        if v.norm() > 100.0 {
            return Err(format!(
                "|v| = {:.6e} km/s: the velocities look like m/s, not km/s",
                v.norm()
            ));
        }
    }
    let sigma_ok = o.sigma_km.is_finite()
        && o.sigma_km > 0.0
        && o.sigma_km_s.is_finite()
        && o.sigma_km_s > 0.0;
    if !sigma_ok {
        return Err(format!("σ = {} km must be positive and finite", o.sigma_km));
    }
    if o.sigma_km > 1000.0 {
        return Err(format!(
            "σ = {} km is implausible (the unit is km: metres?)",
            o.sigma_km
        ));
    }
    Ok(())
}

/// A measurement's plausibility: its site, its value's range for its kind (in the file's
/// unit in messages), its σ, and an elevation not below the site's mask.
fn check_tracked(m: &Tracked, t: &Tracking) -> Result<(), String> {
    let Some(site) = t.sites.get(m.site) else {
        return Err(format!("site index {} is not in the sites file", m.site));
    };
    let info = m.kind.info();
    let shown = m.value / info.to_model;
    let (lo, hi) = match m.kind {
        Kind::Range | Kind::OneWayRange => (0.0, 1.0e6),
        Kind::RangeRate => (-20.0, 20.0),
        Kind::Azimuth | Kind::RightAscension => (0.0, 360.0),
        Kind::Elevation | Kind::Declination => (-90.0, 90.0),
    };
    if !(shown.is_finite() && shown >= lo && shown <= hi) {
        return Err(format!(
            "{} = {shown} {}: expected {lo} to {hi}{}",
            info.word,
            info.unit,
            match m.kind {
                Kind::Range | Kind::OneWayRange => " km (metres given as km?)",
                Kind::RangeRate => " km/s (m/s given as km/s?)",
                _ => "",
            }
        ));
    }
    if !(m.sigma.is_finite() && m.sigma > 0.0 && m.bias.is_finite()) {
        return Err(format!("{}: σ must be positive and finite", info.word));
    }
    // Noise may carry a measured elevation a little below the mask; 5σ below is not noise.
    if m.kind == Kind::Elevation && m.value - m.bias < site.elevation_mask_rad - 5.0 * m.sigma {
        return Err(format!(
            "elevation {shown:.4}° is below {}'s mask of {:.2}°: no sensor reports there (wrong site or angle?)",
            site.site.name,
            site.elevation_mask_rad.to_degrees()
        ));
    }
    Ok(())
}
