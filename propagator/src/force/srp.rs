//! Solar radiation pressure on a cannonball, with an Earth shadow model.
//!
//! a = ν · P⊙ · (AU/|r − s|)² · Cr · (A/m) · (r − s)/|r − s|, P⊙ = 4.56e-6 N/m² at 1 AU
//! (Montenbruck & Gill §3.4; Vallado §8.6.4), ν the fraction of the Sun's disc visible.
//! N/m² · m²/kg = m/s², divided by 10³ for km/s².

use super::{Force, ForceError, Segment};
use crate::solar_system::{sun_position_km, CenturyClock, AU_KM, SUN_RADIUS_KM};
use crate::state::StateVector;
use nalgebra::Vector3;

/// Solar radiation pressure at 1 AU, N/m².
pub const SOLAR_PRESSURE_1AU_N_M2: f64 = 4.56e-6;

/// How the Earth's shadow is modelled.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Shadow {
    /// Always sunlit.
    None,
    /// A cylinder of the Earth's radius behind the Earth: lit or dark.
    Cylindrical,
    /// Umbra and penumbra from the apparent discs of the Sun and the Earth.
    Conical,
}

impl Shadow {
    /// Parses `none`, `cylindrical`, `conical`.
    pub fn parse(s: &str) -> Option<Shadow> {
        match s {
            "none" => Some(Shadow::None),
            "cylindrical" => Some(Shadow::Cylindrical),
            "conical" => Some(Shadow::Conical),
            _ => None,
        }
    }
}

/// Fraction of the Sun's disc visible (0 = umbra, 1 = full sun) from the satellite at
/// `r` (km, geocentric) with the Sun at `s` (km), Earth radius `re_km`.
///
/// Conical: Montenbruck & Gill §3.4.2 — apparent radii a (Sun) and b (Earth), their
/// separation c, and the area of overlap of two discs.
pub fn sunlit_fraction(r: &Vector3<f64>, s: &Vector3<f64>, re_km: f64, model: Shadow) -> f64 {
    match model {
        Shadow::None => 1.0,
        Shadow::Cylindrical => {
            let u = s.normalize();
            let along = r.dot(&u);
            if along >= 0.0 {
                return 1.0;
            }
            let perp = (r - u * along).norm();
            if perp < re_km {
                0.0
            } else {
                1.0
            }
        }
        Shadow::Conical => {
            let to_sun = s - r;
            let a = (SUN_RADIUS_KM / to_sun.norm()).asin();
            let b = (re_km / r.norm()).asin();
            let c = (-r).angle(&to_sun);
            if c >= a + b {
                1.0
            } else if c <= b - a {
                0.0
            } else if c <= a - b {
                // Annular: the Earth's disc inside the Sun's.
                1.0 - (b * b) / (a * a)
            } else {
                let x = (c * c + a * a - b * b) / (2.0 * c);
                let y = (a * a - x * x).max(0.0).sqrt();
                let area = a * a * (x / a).clamp(-1.0, 1.0).acos()
                    + b * b * ((c - x) / b).clamp(-1.0, 1.0).acos()
                    - c * y;
                (1.0 - area / (std::f64::consts::PI * a * a)).clamp(0.0, 1.0)
            }
        }
    }
}

/// Appends the shadow boundaries of `model` as switching functions (see
/// [`Force::switching`]): each changes sign where the sunlit fraction stops being smooth.
///
/// Conical: c − (a + b) (penumbra entry/exit) and c − |b − a| (umbra, or annular, entry/exit),
/// in radians, with a, b, c as in [`sunlit_fraction`]. Cylindrical: the distance from
/// the shadow axis less the Earth radius behind the Earth, and |r| − R in front (equal on the
/// terminator plane, so the function is continuous), km. None: no function.
pub fn shadow_boundaries(
    r: &Vector3<f64>,
    s: &Vector3<f64>,
    re_km: f64,
    model: Shadow,
    out: &mut Vec<f64>,
) {
    match model {
        Shadow::None => {}
        Shadow::Cylindrical => {
            let u = s.normalize();
            let along = r.dot(&u);
            let off_axis = if along < 0.0 {
                (r - u * along).norm()
            } else {
                r.norm()
            };
            out.push(off_axis - re_km);
        }
        Shadow::Conical => {
            let to_sun = s - r;
            let a = (SUN_RADIUS_KM / to_sun.norm()).asin();
            let b = (re_km / r.norm()).asin();
            let c = (-r).angle(&to_sun);
            out.push(c - (a + b));
            out.push(c - (b - a).abs());
        }
    }
}

/// Cannonball solar radiation pressure.
#[derive(Clone, Debug)]
pub struct SolarPressure {
    /// Radiation-pressure coefficient Cr (1 = absorbing, 2 = mirror), dimensionless.
    pub cr: f64,
    /// Area facing the Sun, m².
    pub area_m2: f64,
    /// Mass, kg.
    pub mass_kg: f64,
    /// Multiplier on the acceleration (1 = nominal); the fit estimates it.
    pub scale: f64,
    /// Shadow model.
    pub shadow: Shadow,
    /// Radius of the shadowing Earth, km.
    pub earth_radius_km: f64,
    /// Time argument of the Sun series.
    pub clock: CenturyClock,
}

/// Full-Sun acceleration, km/s², at `r` with the Sun at `s` (km), for Cr·A/m (times a
/// scale) `cr_area_per_mass_m2_kg`, m²/kg.
fn full_sun(r: &Vector3<f64>, s: &Vector3<f64>, cr_area_per_mass_m2_kg: f64) -> Vector3<f64> {
    let d = r - s;
    let dn = d.norm();
    let p = SOLAR_PRESSURE_1AU_N_M2 * (AU_KM / dn).powi(2);
    d * (p * cr_area_per_mass_m2_kg * 1e-3 / dn)
}

impl SolarPressure {
    /// The acceleration in full Sun at `t_s`, state `x`, km/s².
    fn lit_acceleration(&self, t_s: f64, x: &StateVector) -> Vector3<f64> {
        let r = Vector3::new(x[0], x[1], x[2]);
        let s = sun_position_km(self.clock.centuries(t_s));
        full_sun(&r, &s, self.cr * self.area_m2 / self.mass_kg * self.scale)
    }

    /// Sunlit fraction at `t_s`, state `x`.
    pub fn sunlit(&self, t_s: f64, x: &StateVector) -> f64 {
        let s = sun_position_km(self.clock.centuries(t_s));
        sunlit_fraction(
            &Vector3::new(x[0], x[1], x[2]),
            &s,
            self.earth_radius_km,
            self.shadow,
        )
    }
}

impl Force for SolarPressure {
    fn name(&self) -> &str {
        "srp"
    }

    fn scale(&self) -> Option<super::ScaleKind> {
        Some(super::ScaleKind::Srp)
    }

    fn acceleration(&self, t_s: f64, x: &StateVector) -> Result<Vector3<f64>, ForceError> {
        let r = Vector3::new(x[0], x[1], x[2]);
        let s = sun_position_km(self.clock.centuries(t_s));
        let nu = sunlit_fraction(&r, &s, self.earth_radius_km, self.shadow);
        if nu == 0.0 {
            return Ok(Vector3::zeros());
        }
        Ok(full_sun(&r, &s, self.cr * self.area_m2 / self.mass_kg * self.scale) * nu)
    }

    fn acceleration_in(
        &self,
        t_s: f64,
        x: &StateVector,
        segment: Segment,
    ) -> Result<Vector3<f64>, ForceError> {
        // The cylindrical shadow jumps: over a segment the driver holds the side it
        // started on, so no stage on the boundary lands on the wrong side.
        match (self.shadow, segment.sides) {
            (Shadow::Cylindrical, Some(bits)) => {
                let lit = if bits & 1 == 1 { 1.0 } else { 0.0 };
                Ok(self.lit_acceleration(t_s, x) * lit)
            }
            _ => self.acceleration(t_s, x),
        }
    }

    fn depends_on_velocity(&self) -> bool {
        false
    }

    fn switching(&self, t_s: f64, x: &StateVector, out: &mut Vec<f64>) {
        let s = sun_position_km(self.clock.centuries(t_s));
        let r = Vector3::new(x[0], x[1], x[2]);
        shadow_boundaries(&r, &s, self.earth_radius_km, self.shadow, out);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn magnitude_at_one_au() {
        // Cr 1.3, A/m 0.01 m²/kg at 1 AU: 1.3·0.01·4.56e-6 = 5.928e-8 m/s² (hand check).
        let f = SolarPressure {
            cr: 1.3,
            area_m2: 0.1,
            mass_kg: 10.0,
            scale: 1.0,
            shadow: Shadow::None,
            earth_radius_km: 6378.1363,
            clock: CenturyClock { t0_centuries: 0.3 },
        };
        let s = sun_position_km(0.3);
        // Put the satellite where its distance to the Sun is exactly 1 AU.
        let r = s - s.normalize() * AU_KM;
        let a = f
            .acceleration(0.0, &StateVector::new(r[0], r[1], r[2], 0.0, 0.0, 0.0))
            .unwrap();
        assert!((a.norm() - 5.928e-11).abs() < 1e-15, "{}", a.norm());
        // Pointing away from the Sun.
        assert!(a.dot(&s) < 0.0);
    }

    #[test]
    fn shadow_models_agree_deep_in_shadow_and_in_sunlight() {
        let s = Vector3::new(AU_KM, 0.0, 0.0);
        let behind = Vector3::new(-7000.0, 100.0, 0.0);
        let front = Vector3::new(7000.0, 0.0, 0.0);
        for m in [Shadow::Cylindrical, Shadow::Conical] {
            assert_eq!(sunlit_fraction(&behind, &s, 6378.0, m), 0.0);
            assert_eq!(sunlit_fraction(&front, &s, 6378.0, m), 1.0);
        }
        // Penumbra: partially lit, between the conical umbra and penumbra cones.
        let edge = Vector3::new(-7000.0, 6378.0, 0.0);
        let nu = sunlit_fraction(&edge, &s, 6378.0, Shadow::Conical);
        assert!(nu > 0.0 && nu < 1.0, "{nu}");
    }

    #[test]
    fn shadow_boundaries_change_sign_exactly_where_the_sunlit_fraction_stops_being_smooth() {
        // Walk across the shadow in 1 km steps: each switching function changes sign once on
        // each edge, and between its roots the sunlit fraction is constant (1 or 0) or
        // strictly inside (0, 1), the penumbra.
        let s = Vector3::new(AU_KM, 0.0, 0.0);
        for m in [Shadow::Cylindrical, Shadow::Conical] {
            let (mut prev, mut flips) = (Vec::new(), 0);
            for k in 0..=15_000 {
                let r = Vector3::new(-7000.0, -7500.0 + k as f64, 0.0);
                let mut g = Vec::new();
                shadow_boundaries(&r, &s, 6378.0, m, &mut g);
                let nu = sunlit_fraction(&r, &s, 6378.0, m);
                let outside_penumbra = g[0] >= 0.0;
                let in_umbra = g.iter().all(|&v| v < 0.0);
                assert_eq!(
                    nu == 1.0,
                    outside_penumbra,
                    "{m:?} at {r:?}: ν {nu}, g {g:?}"
                );
                assert_eq!(nu == 0.0, in_umbra, "{m:?} at {r:?}: ν {nu}, g {g:?}");
                if !prev.is_empty() {
                    flips += g
                        .iter()
                        .zip(&prev)
                        .filter(|(a, b): &(&f64, &f64)| (**a >= 0.0) != (**b >= 0.0))
                        .count();
                }
                prev = g;
            }
            let expected = if m == Shadow::Conical { 4 } else { 2 };
            assert_eq!(flips, expected, "{m:?}");
        }
    }
}
