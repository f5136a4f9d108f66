//! One tracking measurement and its model: the value a site would measure of an object
//! whose GCRF state at the time tag is known, and the partials of that value with
//! respect to the state.
//!
//! What is modelled (say it in every report that uses it):
//! - Ranges: two-way (radar: out from the site and back, tagged at either end) or one-way
//!   (the object transmits, the site receives), with the light time iterated and the
//!   site turning with the Earth during the flight.
//! - Range rate: the geometric rate of the site-to-object distance at the instant the
//!   received signal left the object (down-leg light time applied).
//! - Azimuth and elevation: topocentric, from the WGS-84 normal, geometric (no
//!   refraction), of where the object was when the received light left it.
//! - Right ascension and declination: topocentric, GCRF axes, astrometric: light time
//!   applied, aberration not (angles reduced against a star catalogue carry the stars'
//!   aberration, which cancels the object's).
//!
//! Near the tag the object moves on a second-order track (its state there and the
//! central-body acceleration): over the ≤ 0.3 s light times of Earth orbits the neglected
//! third-order term is below a micrometre. The partials are those of the geometry at the
//! light-time-corrected instant; the light time's own dependence on the state (relative
//! size v/c; about 1e-3 for the range rate) is left out: it slows no fit.

use super::light_time::{self, Tag};
use super::site::Site;
use crate::earth::orientation::EARTH_ROTATION_RAD_S;
use crate::earth::EarthRotation;
use crate::StateVector;
use nalgebra::Vector3;

/// What one measurement measures.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Kind {
    /// Two-way range (site → object → site), km.
    Range,
    /// One-way range (object → site), km.
    OneWayRange,
    /// Range rate, km/s.
    RangeRate,
    /// Azimuth from north through east, rad.
    Azimuth,
    /// Elevation, rad.
    Elevation,
    /// Right ascension (GCRF), rad.
    RightAscension,
    /// Declination (GCRF), rad.
    Declination,
}

/// How a kind is named and written.
#[derive(Clone, Copy, Debug)]
pub struct KindInfo {
    /// The kind.
    pub kind: Kind,
    /// Its word in measurement CSV files and reports (the unit in the word).
    pub word: &'static str,
    /// Its unit in files and reports.
    pub unit: &'static str,
    /// File unit → model unit (degrees → rad; 1 for km and km/s).
    pub to_model: f64,
}

const DEG: f64 = std::f64::consts::PI / 180.0;

impl Kind {
    /// Every kind: its file word, unit and conversion (one table for reading, writing
    /// and reports).
    pub const TABLE: [KindInfo; 7] = [
        KindInfo {
            kind: Kind::Range,
            word: "range_km",
            unit: "km",
            to_model: 1.0,
        },
        KindInfo {
            kind: Kind::OneWayRange,
            word: "one_way_range_km",
            unit: "km",
            to_model: 1.0,
        },
        KindInfo {
            kind: Kind::RangeRate,
            word: "range_rate_km_s",
            unit: "km/s",
            to_model: 1.0,
        },
        KindInfo {
            kind: Kind::Azimuth,
            word: "azimuth_deg",
            unit: "deg",
            to_model: DEG,
        },
        KindInfo {
            kind: Kind::Elevation,
            word: "elevation_deg",
            unit: "deg",
            to_model: DEG,
        },
        KindInfo {
            kind: Kind::RightAscension,
            word: "ra_deg",
            unit: "deg",
            to_model: DEG,
        },
        KindInfo {
            kind: Kind::Declination,
            word: "dec_deg",
            unit: "deg",
            to_model: DEG,
        },
    ];

    /// This kind's row of [`Kind::TABLE`].
    pub fn info(self) -> &'static KindInfo {
        // Every variant has its row (checked by a test).
        Self::TABLE
            .iter()
            .find(|i| i.kind == self)
            .unwrap_or(&Self::TABLE[0])
    }

    /// The kind written `word`, if any.
    pub fn from_word(word: &str) -> Option<Kind> {
        Self::TABLE.iter().find(|i| i.word == word).map(|i| i.kind)
    }

    /// Whether the value is an angle that wraps at 2π (its residual is wrapped).
    pub fn wraps(self) -> bool {
        matches!(self, Kind::Azimuth | Kind::RightAscension)
    }
}

/// The modelled value of a measurement and its partials.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Modelled {
    /// The value, model units (km, km/s, rad), bias not included.
    pub value: f64,
    /// ∂value/∂(r, v) of the object's GCRF state at the tag (1/1, 1/s, rad/km, …).
    pub partials: [f64; 6],
    /// Elevation of the object at the site when the signal met it, rad.
    pub elevation_rad: f64,
    /// The factor on a site's σ for this measurement: 1/cos δ for right ascension (a
    /// telescope's σ is an angle on the sky, a right-ascension difference shrinks by
    /// cos δ on it; capped at 1000 near the poles), 1 otherwise.
    pub sigma_scale: f64,
}

/// The object's track near the tag: its GCRF state at the tag and the central body's
/// acceleration, as positions at `dt` seconds from the tag.
struct Near {
    r: Vector3<f64>,
    v: Vector3<f64>,
    a: Vector3<f64>,
}

impl Near {
    fn new(x: &StateVector, mu_km3_s2: f64) -> Near {
        let r = Vector3::new(x[0], x[1], x[2]);
        let v = Vector3::new(x[3], x[4], x[5]);
        let a = -mu_km3_s2 * r / r.norm().powi(3);
        Near { r, v, a }
    }
    fn at(&self, dt: f64) -> Vector3<f64> {
        self.r + self.v * dt + 0.5 * self.a * dt * dt
    }
    fn velocity(&self, dt: f64) -> Vector3<f64> {
        self.v + self.a * dt
    }
}

/// The site's GCRF track near the tag: turning about the pole at the Earth's rate.
struct SiteTrack {
    r: Vector3<f64>,
    v: Vector3<f64>,
    a: Vector3<f64>,
}

impl SiteTrack {
    fn new(site: &Site, rotation: &EarthRotation) -> SiteTrack {
        let (r, v) = rotation.state_to_gcrf(&site.itrf_km, &Vector3::zeros());
        // Centripetal acceleration about the (nearly GCRF-z) rotation axis.
        let w2 = EARTH_ROTATION_RAD_S * EARTH_ROTATION_RAD_S;
        let a = Vector3::new(-w2 * r[0], -w2 * r[1], 0.0);
        SiteTrack { r, v, a }
    }
    fn at(&self, dt: f64) -> Vector3<f64> {
        self.r + self.v * dt + 0.5 * self.a * dt * dt
    }
}

/// Models a measurement of `kind` by `site` tagged at the end `tag` names, of an object
/// whose GCRF state at the tag is `x` (central body `mu_km3_s2`), the Earth's orientation
/// at the tag being `rotation`.
pub fn model(
    kind: Kind,
    tag: Tag,
    site: &Site,
    x: &StateVector,
    mu_km3_s2: f64,
    rotation: &EarthRotation,
) -> Result<Modelled, String> {
    let object = Near::new(x, mu_km3_s2);
    let station = SiteTrack::new(site, rotation);
    let (obj_fn, site_fn) = (|t: f64| object.at(t), |t: f64| station.at(t));
    // When the signal met the object (s from the tag), and the range.
    let (met, range) = match kind {
        Kind::Range => {
            let w = light_time::two_way(0.0, tag, &site_fn, &obj_fn)?;
            (w.bounce_s, w.range_km)
        }
        _ => {
            let (range, sent) = light_time::one_way(0.0, &site_fn, &obj_fn)?;
            (sent, range)
        }
    };
    let r_obj = object.at(met);
    let gcrf_to_itrf = rotation.gcrf_to_itrf();
    let r_itrf = gcrf_to_itrf * r_obj;
    let look = site.look(&r_itrf);
    let mut partials = [0.0; 6];
    let mut sigma_scale = 1.0;
    let mut put = |d_pos: Vector3<f64>, d_vel: Vector3<f64>| {
        // The position at `met` moves with the tag state's velocity by `met` seconds.
        for j in 0..3 {
            partials[j] = d_pos[j];
            partials[3 + j] = d_vel[j] + d_pos[j] * met;
        }
    };
    let value = match kind {
        Kind::Range | Kind::OneWayRange => {
            let unit = (r_obj - station.at(met)).normalize();
            put(unit, Vector3::zeros());
            range
        }
        Kind::RangeRate => {
            let site_v = station.v + station.a * met;
            let (rate, d_pos, d_vel) = super::site::range_rate(
                (&station.at(met), &site_v),
                (&r_obj, &object.velocity(met)),
            );
            put(d_pos, d_vel);
            rate
        }
        Kind::Azimuth | Kind::Elevation => {
            let p = site.look_partials(&r_itrf) * gcrf_to_itrf;
            let row = if kind == Kind::Azimuth { 0 } else { 1 };
            put(p.row(row).transpose(), Vector3::zeros());
            if kind == Kind::Azimuth {
                look.az_rad
            } else {
                look.el_rad
            }
        }
        Kind::RightAscension | Kind::Declination => {
            let (ra, dec, _) = site.radec(&r_obj, rotation);
            if kind == Kind::RightAscension {
                sigma_scale = 1.0 / dec.cos().max(1e-3);
            }
            let p = site.radec_partials(&r_obj, rotation);
            let row = if kind == Kind::RightAscension { 0 } else { 1 };
            put(p.row(row).transpose(), Vector3::zeros());
            if kind == Kind::RightAscension {
                ra
            } else {
                dec
            }
        }
    };
    if !(value.is_finite() && partials.iter().all(|p| p.is_finite())) {
        return Err(format!(
            "the {} from {} is not finite (the object at the site?)",
            kind.info().word,
            site.name
        ));
    }
    Ok(Modelled {
        value,
        partials,
        elevation_rad: look.el_rad,
        sigma_scale,
    })
}

/// Observed − modelled, with angles that wrap brought into (−π, π].
pub fn residual(kind: Kind, observed: f64, modelled: f64) -> f64 {
    let d = observed - modelled;
    if kind.wraps() {
        let tau = std::f64::consts::TAU;
        let w = d.rem_euclid(tau);
        if w > std::f64::consts::PI {
            w - tau
        } else {
            w
        }
    } else {
        d
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::earth::EarthOrientation;

    fn setup() -> (Site, EarthRotation, StateVector) {
        let site = Site::geodetic("S", 40.0, -3.7, 0.6).unwrap();
        let rot = EarthOrientation::shipped().unwrap().at(8.0e8);
        // An object about 1000 km over the site, moving at LEO speed.
        let (rs, _) = rot.state_to_gcrf(&site.itrf_km, &Vector3::zeros());
        let r = rs * (1.0 + 1000.0 / rs.norm()) + Vector3::new(300.0, -200.0, 100.0);
        let x = StateVector::new(r[0], r[1], r[2], -2.0, 6.5, 3.1);
        (site, rot, x)
    }

    #[test]
    fn every_kind_has_its_row_and_words_are_distinct() {
        for k in [
            Kind::Range,
            Kind::OneWayRange,
            Kind::RangeRate,
            Kind::Azimuth,
            Kind::Elevation,
            Kind::RightAscension,
            Kind::Declination,
        ] {
            assert_eq!(k.info().kind, k);
            assert_eq!(Kind::from_word(k.info().word), Some(k));
        }
    }

    #[test]
    fn partials_match_central_differences_of_the_whole_model() {
        let (site, rot, x) = setup();
        let mu = 398_600.441_8;
        for kind in Kind::TABLE.map(|i| i.kind) {
            let m = model(kind, Tag::Receive, &site, &x, mu, &rot).unwrap();
            for j in 0..6 {
                let h = 1e-3;
                let (mut xp, mut xm) = (x, x);
                xp[j] += h;
                xm[j] -= h;
                let vp = model(kind, Tag::Receive, &site, &xp, mu, &rot)
                    .unwrap()
                    .value;
                let vm = model(kind, Tag::Receive, &site, &xm, mu, &rot)
                    .unwrap()
                    .value;
                let numeric = residual(kind, vp, vm) / (2.0 * h);
                // The light time's own dependence is left out: relative v/c ≈ 3e-5 for
                // ranges and angles; for the range rate the range acceleration over the
                // light time's change, ≈ (v²/ρ)/c against v/ρ: about 1e-3.
                let rel = if kind == Kind::RangeRate { 2e-3 } else { 1e-4 };
                let size = if j < 3 {
                    &m.partials[..3]
                } else {
                    &m.partials[3..]
                }
                .iter()
                .fold(0.0f64, |a, p| a.max(p.abs()));
                let tol = rel * size + 1e-12;
                assert!(
                    (m.partials[j] - numeric).abs() < tol,
                    "{kind:?} ∂/∂x{j}: {} vs {numeric}",
                    m.partials[j]
                );
            }
        }
    }

    #[test]
    fn light_time_moves_the_angles_by_the_object_motion() {
        // Seen with light time, the object is where it was ~3.5 ms earlier: at 7 km/s
        // about 25 m back along its track (common knowledge: light time × speed).
        let (site, rot, x) = setup();
        let m = model(Kind::Azimuth, Tag::Receive, &site, &x, 398_600.441_8, &rot).unwrap();
        let look = site.look(&(rot.gcrf_to_itrf() * Vector3::new(x[0], x[1], x[2])));
        let shift_km = (m.value - look.az_rad).abs() * look.range_km * look.el_rad.cos();
        assert!(shift_km > 1e-3 && shift_km < 0.05, "{shift_km} km");
        // Residuals of wrapping angles are brought into (−π, π].
        assert!(
            (residual(Kind::Azimuth, 0.01, 6.27) - (0.01 + std::f64::consts::TAU - 6.27)).abs()
                < 1e-12
        );
        assert_eq!(residual(Kind::Elevation, 0.5, 0.25), 0.25);
    }
}
