//! Sun and Moon positions from published low-precision analytic series (from memory):
//!
//! * Sun: Meeus, *Astronomical Algorithms* (2nd ed., 1998), ch. 25, the low-accuracy
//!   geometric position (mean longitude, mean anomaly, equation of the centre), stated
//!   accuracy 0.01°; referred to the J2000 equinox by removing the general precession
//!   in longitude, 1.396 971° T (Meeus ch. 21).
//! * Moon: Montenbruck & Gill, *Satellite Orbits* (Springer 2000), §3.3.2, eq. (3.47),
//!   referred to the J2000 ecliptic and equinox; they state "several arcminutes" in
//!   direction and a few hundred km in distance.
//!
//! Both are rotated from the ecliptic by the J2000 obliquity into arcwise's ECI frame.
//! Measured against JPL DE421 over 2020–2040 (`tests/solar_system_reference.rs`):
//! see the numbers there and in the README.
//!
//! Time argument: Julian centuries of TT (≈ TDB to 2 ms) since J2000.0.

use nalgebra::Vector3;

/// GM of the Sun, km³/s² (DE421 / IAU 2009, from memory).
pub const MU_SUN_KM3_S2: f64 = 1.327_124_400_18e11;
/// GM of the Moon, km³/s² (DE421, from memory).
pub const MU_MOON_KM3_S2: f64 = 4_902.800_066;
/// Astronomical unit, km (IAU 2012).
pub const AU_KM: f64 = 149_597_870.7;
/// Radius of the Sun's photosphere, km (IAU 2015 nominal).
pub const SUN_RADIUS_KM: f64 = 695_700.0;
/// Obliquity of the ecliptic at J2000, rad (23°26′21.448″).
pub const OBLIQUITY_J2000_RAD: f64 = 23.439_291_11 * std::f64::consts::PI / 180.0;

const ARCSEC: f64 = std::f64::consts::PI / (180.0 * 3600.0);

fn deg(x: f64) -> f64 {
    x.to_radians()
}

/// Ecliptic (λ, β, r) → equatorial Cartesian, J2000.
fn from_ecliptic(lon: f64, lat: f64, r: f64) -> Vector3<f64> {
    let (sl, cl) = lon.sin_cos();
    let (sb, cb) = lat.sin_cos();
    let xe = r * cl * cb;
    let ye = r * sl * cb;
    let ze = r * sb;
    let (se, ce) = OBLIQUITY_J2000_RAD.sin_cos();
    Vector3::new(xe, ce * ye - se * ze, se * ye + ce * ze)
}

/// Geocentric position of the Sun, km, ECI (J2000), at `t_c` Julian centuries TT.
pub fn sun_position_km(t_c: f64) -> Vector3<f64> {
    let t = t_c;
    // Geometric mean longitude (equinox of date), mean anomaly, eccentricity.
    let l0 = 280.466_46 + 36_000.769_83 * t + 0.000_303_2 * t * t;
    let m = deg(357.529_11 + 35_999.050_29 * t - 0.000_153_7 * t * t);
    let e = 0.016_708_634 - 0.000_042_037 * t - 0.000_000_126_7 * t * t;
    let c = (1.914_602 - 0.004_817 * t - 0.000_014 * t * t) * m.sin()
        + (0.019_993 - 0.000_101 * t) * (2.0 * m).sin()
        + 0.000_289 * (3.0 * m).sin();
    // True longitude, moved from the equinox of date to J2000.
    let precession = 1.396_971 * t + 0.000_308_6 * t * t;
    let lon = deg(l0 + c - precession);
    let nu = m + deg(c);
    let r_au = 1.000_001_018 * (1.0 - e * e) / (1.0 + e * nu.cos());
    from_ecliptic(lon, 0.0, r_au * AU_KM)
}

/// Geocentric position of the Moon, km, ECI (J2000), at `t_c` Julian centuries TT.
pub fn moon_position_km(t_c: f64) -> Vector3<f64> {
    // Mean longitude (precession removed, −1.3972° T), anomalies, argument of
    // latitude and elongation.
    let l0 = deg(218.316_17 + 481_267.880_88 * t_c - 1.397_2 * t_c);
    let l = deg(134.962_92 + 477_198.867_53 * t_c);
    let lp = deg(357.525_43 + 35_999.049_44 * t_c);
    let f = deg(93.272_83 + 483_202.018_73 * t_c);
    let d = deg(297.850_27 + 445_267.111_35 * t_c);
    let lon = l0
        + ARCSEC
            * (22_640.0 * l.sin() + 769.0 * (2.0 * l).sin() - 4_586.0 * (l - 2.0 * d).sin()
                + 2_370.0 * (2.0 * d).sin()
                - 668.0 * lp.sin()
                - 412.0 * (2.0 * f).sin()
                - 212.0 * (2.0 * l - 2.0 * d).sin()
                - 206.0 * (l + lp - 2.0 * d).sin()
                + 192.0 * (l + 2.0 * d).sin()
                - 165.0 * (lp - 2.0 * d).sin()
                + 148.0 * (l - lp).sin()
                - 125.0 * d.sin()
                - 110.0 * (l + lp).sin()
                - 55.0 * (2.0 * f - 2.0 * d).sin());
    let lat = ARCSEC
        * (18_520.0 * (f + lon - l0 + ARCSEC * (412.0 * (2.0 * f).sin() + 541.0 * lp.sin())).sin()
            - 526.0 * (f - 2.0 * d).sin()
            + 44.0 * (l + f - 2.0 * d).sin()
            - 31.0 * (-l + f - 2.0 * d).sin()
            - 25.0 * (-2.0 * l + f).sin()
            - 23.0 * (lp + f - 2.0 * d).sin()
            + 21.0 * (-l + f).sin()
            + 11.0 * (-lp + f - 2.0 * d).sin());
    let r = 385_000.0
        - 20_905.0 * l.cos()
        - 3_699.0 * (2.0 * d - l).cos()
        - 2_956.0 * (2.0 * d).cos()
        - 570.0 * (2.0 * l).cos()
        + 246.0 * (2.0 * l - 2.0 * d).cos()
        - 205.0 * (lp - 2.0 * d).cos()
        - 171.0 * (l + 2.0 * d).cos()
        - 152.0 * (l + lp - 2.0 * d).cos();
    from_ecliptic(lon, lat, r)
}

/// Which third body.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Body {
    /// The Sun.
    Sun,
    /// The Moon.
    Moon,
}

impl Body {
    /// Geocentric ECI position, km, at `t_c` Julian centuries TT since J2000.
    pub fn position_km(&self, t_c: f64) -> Vector3<f64> {
        match self {
            Body::Sun => sun_position_km(t_c),
            Body::Moon => moon_position_km(t_c),
        }
    }

    /// Gravitational parameter, km³/s².
    pub fn mu_km3_s2(&self) -> f64 {
        match self {
            Body::Sun => MU_SUN_KM3_S2,
            Body::Moon => MU_MOON_KM3_S2,
        }
    }

    /// Lower-case name (`sun`, `moon`).
    pub fn name(&self) -> &'static str {
        match self {
            Body::Sun => "sun",
            Body::Moon => "moon",
        }
    }
}

/// Maps `t_s` (seconds on a time axis) to Julian centuries TT since J2000.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct CenturyClock {
    /// Julian centuries TT at `t_s = 0`.
    pub t0_centuries: f64,
}

impl CenturyClock {
    /// The clock for a time axis starting at `reference`.
    pub fn new(reference: &crate::time::Epoch) -> Self {
        Self {
            t0_centuries: reference.tt_centuries_since_j2000(),
        }
    }

    /// Julian centuries TT at `t_s`.
    #[inline]
    pub fn centuries(&self, t_s: f64) -> f64 {
        self.t0_centuries + t_s / (86_400.0 * 36_525.0)
    }
}
