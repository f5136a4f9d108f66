//! Simulated tracking: what sites measure of the true trajectory — every kind each site
//! has a σ for, at each sampling epoch it can see the object, with its bias and seeded
//! Gaussian noise.
//!
//! Visibility: the object's (noise-free) elevation at or above the site's mask; for a
//! site that measures right ascension and declination (a telescope) also the site in
//! darkness (the Sun 12° or more below its horizon: nautical twilight, common practice)
//! and the object in sunlight (outside the Earth's conical shadow).

use crate::arc::{Observation, Observed, Tracked, Tracking};
use crate::tracking_arc::noise_of;
use propagator::force::srp::{sunlit_fraction, Shadow};
use propagator::solar_system::sun_position_km;
use propagator::tracking::light_time::Tag;
use propagator::tracking::measurement::{self, Kind};
use propagator::tracking::sites_file::SiteEntry;
use propagator::{StateVector, TimeAxis};

/// The Sun's elevation below which a telescope site is dark enough, rad (−12°).
const DARK_SUN_ELEVATION_RAD: f64 = -12.0 * std::f64::consts::PI / 180.0;

/// The kinds a site measures (those it has a σ for in the sites file).
fn kinds_of(entry: &SiteEntry) -> Vec<Kind> {
    [
        Kind::Range,
        Kind::RangeRate,
        Kind::Azimuth,
        Kind::Elevation,
        Kind::RightAscension,
        Kind::Declination,
    ]
    .into_iter()
    .filter(|k| noise_of(entry, *k).is_some())
    .collect()
}

/// Whether the site sees the object `x` (GCRF) at `t_s` on `axis`.
fn visible(
    entry: &SiteEntry,
    x: &StateVector,
    rotation: &propagator::earth::EarthRotation,
    sun_gcrf_km: &nalgebra::Vector3<f64>,
    mu: f64,
) -> Result<bool, String> {
    let el = measurement::model(Kind::Elevation, Tag::Receive, &entry.site, x, mu, rotation)?;
    if el.value < entry.elevation_mask_rad {
        return Ok(false);
    }
    if entry.radec.is_none() {
        return Ok(true);
    }
    let sun_itrf = rotation.gcrf_to_itrf() * sun_gcrf_km;
    if entry.site.look(&sun_itrf).el_rad > DARK_SUN_ELEVATION_RAD {
        return Ok(false);
    }
    let r = nalgebra::Vector3::new(x[0], x[1], x[2]);
    Ok(sunlit_fraction(
        &r,
        sun_gcrf_km,
        propagator::CentralBody::EARTH_EGM96.radius_km,
        Shadow::Conical,
    ) > 0.5)
}

/// The measurements of the true states `samples` (`(t_s, x)` on `axis`) by the sites of
/// `tracking`, noise from `gauss` (standard normal draws, consumed in a fixed order).
pub fn measure(
    samples: &[(f64, StateVector)],
    axis: &TimeAxis,
    tracking: &Tracking,
    mu: f64,
    gauss: &mut dyn FnMut() -> f64,
) -> Result<Vec<Observation>, String> {
    let kinds: Vec<Vec<Kind>> = tracking.sites.iter().map(kinds_of).collect();
    let mut out = Vec::new();
    for (t_s, x) in samples {
        let epoch = axis.epoch(*t_s);
        let rotation = tracking.earth.at(epoch.tt_seconds_since_j2000());
        let sun = sun_position_km(epoch.tt_centuries_since_j2000());
        for (si, entry) in tracking.sites.iter().enumerate() {
            if !visible(entry, x, &rotation, &sun, mu)? {
                continue;
            }
            for &kind in &kinds[si] {
                let Some(noise) = noise_of(entry, kind) else {
                    continue;
                };
                let m = measurement::model(kind, Tag::Receive, &entry.site, x, mu, &rotation)?;
                let mut value = m.value + noise.bias + noise.sigma * m.sigma_scale * gauss();
                if kind.wraps() {
                    value = value.rem_euclid(std::f64::consts::TAU);
                }
                // Noise cannot carry an angle past the pole (a measured elevation may
                // fall below the mask by noise; readers allow 5σ for that).
                if matches!(kind, Kind::Elevation | Kind::Declination) {
                    value = value.clamp(-std::f64::consts::FRAC_PI_2, std::f64::consts::FRAC_PI_2);
                }
                out.push(Observation {
                    epoch,
                    observed: Observed::Tracking(Tracked {
                        site: si,
                        kind,
                        tag: Tag::Receive,
                        value,
                        sigma: noise.sigma,
                        bias: noise.bias,
                    }),
                    line: 0,
                });
            }
        }
    }
    Ok(out)
}
