//! A tracking site on the Earth and what it sees: its Earth-fixed (ITRF) position from
//! geodetic coordinates on the WGS-84 ellipsoid, and the topocentric azimuth, elevation
//! and range of an object given in ITRF, and its topocentric right ascension and
//! declination from a GCRF position. Geometric: no refraction, no light time, no
//! aberration (the measurement models add light time where it matters).

use crate::earth::EarthRotation;
use nalgebra::{Matrix3, Vector3};

/// The WGS-84 ellipsoid the thermosphere's geodetic coordinates already use.
pub use crate::atmosphere::thermosphere::{WGS84_A_KM, WGS84_F};

/// A site fixed to the Earth.
#[derive(Clone, Debug, PartialEq)]
pub struct Site {
    /// Its name.
    pub name: String,
    /// Geodetic latitude, rad.
    pub lat_rad: f64,
    /// Longitude, east, rad.
    pub lon_rad: f64,
    /// Height above the ellipsoid, km.
    pub h_km: f64,
    /// Position in ITRF, km.
    pub itrf_km: Vector3<f64>,
    /// ITRF → local east, north, up (rows).
    enu: Matrix3<f64>,
}

/// Topocentric direction and distance of an object.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Look {
    /// Azimuth from north through east, rad, in [0, 2π).
    pub az_rad: f64,
    /// Elevation above the local horizontal (the ellipsoid's tangent plane), rad.
    pub el_rad: f64,
    /// Distance, km.
    pub range_km: f64,
}

impl Site {
    /// A site at geodetic latitude and longitude (degrees) and height (km) on WGS-84.
    /// Errors name the field that is out of range or not finite.
    pub fn geodetic(name: &str, lat_deg: f64, lon_deg: f64, h_km: f64) -> Result<Site, String> {
        if !(lat_deg.is_finite() && (-90.0..=90.0).contains(&lat_deg)) {
            return Err(format!("latitude {lat_deg}°: expected −90 to 90"));
        }
        if !(lon_deg.is_finite() && (-360.0..=360.0).contains(&lon_deg)) {
            return Err(format!("longitude {lon_deg}°: expected −360 to 360"));
        }
        // Below the deepest ocean trench or above any mountain is a unit error (metres?).
        if !(h_km.is_finite() && (-12.0..=10.0).contains(&h_km)) {
            return Err(format!(
                "height {h_km} km: expected −12 to 10 km (metres given as km?)"
            ));
        }
        crate::text::check_name("site name", name)?;
        let (lat, lon) = (lat_deg.to_radians(), lon_deg.to_radians());
        let (sl, cl) = lat.sin_cos();
        let (so, co) = lon.sin_cos();
        // Prime-vertical radius of curvature N = a / √(1 − e² sin²φ).
        let e2 = WGS84_F * (2.0 - WGS84_F);
        let n = WGS84_A_KM / (1.0 - e2 * sl * sl).sqrt();
        let itrf_km = Vector3::new(
            (n + h_km) * cl * co,
            (n + h_km) * cl * so,
            (n * (1.0 - e2) + h_km) * sl,
        );
        let enu = Matrix3::new(-so, co, 0.0, -sl * co, -sl * so, cl, cl * co, cl * so, sl);
        Ok(Site {
            name: name.to_string(),
            lat_rad: lat,
            lon_rad: lon,
            h_km,
            itrf_km,
            enu,
        })
    }

    /// Right ascension and declination (rad) and range (km) of the object at
    /// `r_gcrf_km` from the site, with the Earth's orientation `rotation` at that instant:
    /// topocentric and geometric (no light time, no aberration), in GCRF axes. RA in
    /// [0, 2π).
    pub fn radec(&self, r_gcrf_km: &Vector3<f64>, rotation: &EarthRotation) -> (f64, f64, f64) {
        let site_gcrf = rotation.gcrf_to_itrf().transpose() * self.itrf_km;
        let rho = r_gcrf_km - site_gcrf;
        let range = rho.norm();
        let ra = rho[1].atan2(rho[0]).rem_euclid(std::f64::consts::TAU);
        (ra, (rho[2] / range).asin(), range)
    }

    /// A site at an ITRF position (km), which must be within 12 km of the WGS-84
    /// ellipsoid (metres given as km are refused).
    pub fn itrf(name: &str, itrf_km: [f64; 3]) -> Result<Site, String> {
        if !itrf_km.iter().all(|v| v.is_finite()) {
            return Err("itrf_km: not finite".into());
        }
        let r = Vector3::from(itrf_km).norm();
        if !(6300.0..=6400.0).contains(&r) {
            return Err(format!(
                "itrf_km: {r:.1} km from the geocentre, not on the Earth's surface (metres given as km?)"
            ));
        }
        let (h, normal) = crate::atmosphere::ellipsoid_height(itrf_km, WGS84_A_KM, WGS84_F);
        let lat = normal[2].clamp(-1.0, 1.0).asin().to_degrees();
        let lon = normal[1].atan2(normal[0]).to_degrees();
        let mut site = Site::geodetic(name, lat, lon, h)?;
        // Exactly where the file says (the round trip through latitude is sub-millimetre).
        site.itrf_km = Vector3::from(itrf_km);
        Ok(site)
    }

    /// Local east, north, up → ITRF (columns: the local axes in ITRF).
    pub fn enu_to_itrf(&self) -> Matrix3<f64> {
        self.enu.transpose()
    }

    /// The object at `r_itrf_km` as seen from the site.
    pub fn look(&self, r_itrf_km: &Vector3<f64>) -> Look {
        let rho = r_itrf_km - self.itrf_km;
        let local = self.enu * rho;
        let range_km = rho.norm();
        let az = local[0].atan2(local[1]);
        let horizontal = local[0].hypot(local[1]);
        Look {
            az_rad: if az < 0.0 {
                az + std::f64::consts::TAU
            } else {
                az
            },
            el_rad: local[2].atan2(horizontal),
            range_km,
        }
    }
}

/// Partials of azimuth, elevation and range (rows; rad/km, rad/km, km/km) with respect to
/// a topocentric vector `rho` (columns), in whatever axes `rho` is given: the chain rule
/// through the site's ENU rotation is the caller's.
fn az_el_range_partials(e: f64, n: f64, u: f64) -> Matrix3<f64> {
    let h2 = e * e + n * n;
    let h = h2.sqrt();
    let r2 = h2 + u * u;
    let r = r2.sqrt();
    Matrix3::new(
        n / h2,
        -e / h2,
        0.0,
        -u * e / (r2 * h),
        -u * n / (r2 * h),
        h / r2,
        e / r,
        n / r,
        u / r,
    )
}

impl Site {
    /// ∂(azimuth, elevation, range)/∂r_ITRF of the object at `r_itrf_km` (rows: rad/km,
    /// rad/km, km/km). Undefined straight overhead (the azimuth is).
    pub fn look_partials(&self, r_itrf_km: &Vector3<f64>) -> Matrix3<f64> {
        let local = self.enu * (r_itrf_km - self.itrf_km);
        az_el_range_partials(local[0], local[1], local[2]) * self.enu
    }

    /// ∂(RA, Dec, range)/∂r_GCRF of the object at `r_gcrf_km` (rows: rad/km, rad/km,
    /// km/km), the Earth's orientation `rotation` at that instant.
    pub fn radec_partials(
        &self,
        r_gcrf_km: &Vector3<f64>,
        rotation: &EarthRotation,
    ) -> Matrix3<f64> {
        let rho = r_gcrf_km - rotation.gcrf_to_itrf().transpose() * self.itrf_km;
        // RA is to (x, y) what azimuth is to (north, east): the same partials with x and
        // y exchanged.
        let swap_xy = Matrix3::new(0.0, 1.0, 0.0, 1.0, 0.0, 0.0, 0.0, 0.0, 1.0);
        az_el_range_partials(rho[1], rho[0], rho[2]) * swap_xy
    }
}

/// The geometric range rate (km/s) between a site and an object, both given as GCRF
/// positions and velocities, and its partials with respect to the object's position
/// (1/s) and velocity (dimensionless).
pub fn range_rate(
    site: (&Vector3<f64>, &Vector3<f64>),
    object: (&Vector3<f64>, &Vector3<f64>),
) -> (f64, Vector3<f64>, Vector3<f64>) {
    let rho = object.0 - site.0;
    let dv = object.1 - site.1;
    let r = rho.norm();
    let unit = rho / r;
    let rate = unit.dot(&dv);
    // ∂(ρ̂·v)/∂ρ = (v − ρ̂ (ρ̂·v)) / |ρ|.
    let d_pos = (dv - unit * rate) / r;
    (rate, d_pos, unit)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Central differences of `f` (three outputs) at `x`, step `h` km.
    fn numeric(
        f: impl Fn(&Vector3<f64>) -> Vector3<f64>,
        x: &Vector3<f64>,
        h: f64,
    ) -> Matrix3<f64> {
        let mut m = Matrix3::zeros();
        for j in 0..3 {
            let mut up = *x;
            let mut down = *x;
            up[j] += h;
            down[j] -= h;
            m.set_column(j, &((f(&up) - f(&down)) / (2.0 * h)));
        }
        m
    }

    #[test]
    fn partials_match_central_differences() {
        let site = Site::geodetic("S", 35.0, 139.5, 0.05).unwrap();
        let rotation = crate::earth::EarthOrientation::shipped().unwrap().at(6.7e8);
        for r in [
            Vector3::new(-3000.0, 2500.0, 5800.0),
            Vector3::new(-30000.0, 28000.0, 9000.0),
        ] {
            let look = |x: &Vector3<f64>| {
                let l = site.look(x);
                Vector3::new(l.az_rad, l.el_rad, l.range_km)
            };
            let (a, b) = (site.look_partials(&r), numeric(look, &r, 1e-3));
            assert!((a - b).norm() <= 1e-7 * b.norm(), "{a} {b}");
            let radec = |x: &Vector3<f64>| {
                let (ra, dec, range) = site.radec(x, &rotation);
                Vector3::new(ra, dec, range)
            };
            let (a, b) = (site.radec_partials(&r, &rotation), numeric(radec, &r, 1e-3));
            assert!((a - b).norm() <= 1e-7 * b.norm(), "{a} {b}");
            // Range rate: position and velocity partials.
            let (sp, sv) = (site.itrf_km, Vector3::new(-0.3, 0.2, 0.0));
            let v = Vector3::new(1.0, -6.5, 3.0);
            let (_, dp, dv) = range_rate((&sp, &sv), (&r, &v));
            let rate_at = |x: &Vector3<f64>| Vector3::repeat(range_rate((&sp, &sv), (x, &v)).0);
            let rate_dv = |x: &Vector3<f64>| Vector3::repeat(range_rate((&sp, &sv), (&r, x)).0);
            let (np, nv) = (numeric(rate_at, &r, 1e-2), numeric(rate_dv, &v, 1e-5));
            assert!(
                (np.row(0).transpose() - dp).norm() <= 1e-8 * dp.norm(),
                "{np} {dp}"
            );
            assert!((nv.row(0).transpose() - dv).norm() <= 1e-8, "{nv} {dv}");
        }
    }

    #[test]
    fn a_site_on_the_equator_and_at_a_pole_sits_where_the_ellipsoid_says() {
        let eq = Site::geodetic("EQ", 0.0, 0.0, 0.0).unwrap();
        assert!((eq.itrf_km - Vector3::new(WGS84_A_KM, 0.0, 0.0)).norm() < 1e-9);
        let pole = Site::geodetic("NP", 90.0, 0.0, 0.0).unwrap();
        let b = WGS84_A_KM * (1.0 - WGS84_F);
        assert!((pole.itrf_km[2] - b).abs() < 1e-9 && pole.itrf_km.xy().norm() < 1e-9);
        // Straight up from the equator site is elevation 90°, due north at the horizon
        // azimuth 0, due east 90°.
        let up = eq.look(&Vector3::new(WGS84_A_KM + 500.0, 0.0, 0.0));
        assert!((up.el_rad.to_degrees() - 90.0).abs() < 1e-9 && (up.range_km - 500.0).abs() < 1e-9);
        let north = eq.look(&Vector3::new(WGS84_A_KM, 0.0, 100.0));
        assert!(north.az_rad.abs() < 1e-12 && north.el_rad.abs() < 1e-12);
        let east = eq.look(&Vector3::new(WGS84_A_KM, 100.0, 0.0));
        assert!((east.az_rad.to_degrees() - 90.0).abs() < 1e-9);
    }

    #[test]
    fn a_site_given_in_itrf_has_the_geodetic_coordinates_it_came_from() {
        let g = Site::geodetic("G", -31.87, 115.96, 0.024).unwrap();
        let x = Site::itrf("X", [g.itrf_km[0], g.itrf_km[1], g.itrf_km[2]]).unwrap();
        assert!((x.lat_rad - g.lat_rad).abs() < 1e-12 && (x.lon_rad - g.lon_rad).abs() < 1e-12);
        assert!((x.h_km - g.h_km).abs() < 1e-9);
        assert!(Site::itrf("M", [4852188.0, -314627.0, 4114870.0])
            .unwrap_err()
            .contains("metres"));
    }

    #[test]
    fn impossible_sites_are_refused_naming_the_field() {
        for (lat, lon, h, needle) in [
            (91.0, 0.0, 0.0, "latitude"),
            (f64::NAN, 0.0, 0.0, "latitude"),
            (0.0, 400.0, 0.0, "longitude"),
            (0.0, 0.0, 650.0, "metres given as km"),
        ] {
            let e = Site::geodetic("S", lat, lon, h).unwrap_err();
            assert!(e.contains(needle), "{e}");
        }
        assert!(Site::geodetic("bad\nname", 0.0, 0.0, 0.0).is_err());
    }
}
