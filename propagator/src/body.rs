//! The central body's constants: gravitational parameter, radius, rotation, shape.

use serde::Deserialize;

/// Constants of the body the orbit is about (the Earth unless a file says otherwise).
#[derive(Clone, Copy, Debug, PartialEq, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct CentralBody {
    /// Gravitational parameter GM, km³/s².
    pub mu_km3_s2: f64,
    /// Equatorial radius, km (the reference radius of the zonal harmonics too).
    pub radius_km: f64,
    /// Rotation rate about the ECI z axis, rad/s (for the co-rotating atmosphere).
    pub rotation_rad_s: f64,
    /// Flattening of the reference ellipsoid (for geodetic altitude), dimensionless.
    #[serde(default = "wgs84_flattening")]
    pub flattening: f64,
}

fn wgs84_flattening() -> f64 {
    WGS84_FLATTENING
}

/// WGS-84 flattening 1/298.257223563 (NIMA TR8350.2).
pub const WGS84_FLATTENING: f64 = 1.0 / 298.257_223_563;

impl CentralBody {
    /// The Earth with EGM96 GM and radius (Lemoine et al. 1998, NASA/TP-1998-206861),
    /// the IERS mean rotation rate 7.292115e-5 rad/s and WGS-84 flattening.
    pub const EARTH_EGM96: CentralBody = CentralBody {
        mu_km3_s2: 398_600.441_8,
        radius_km: 6_378.136_3,
        rotation_rad_s: 7.292_115e-5,
        flattening: WGS84_FLATTENING,
    };

    /// Checks that every constant is finite and physically sensible; names the field.
    pub fn validate(&self) -> Result<(), String> {
        let checks = [
            ("mu_km3_s2", self.mu_km3_s2, self.mu_km3_s2 > 0.0),
            ("radius_km", self.radius_km, self.radius_km > 0.0),
            (
                "rotation_rad_s",
                self.rotation_rad_s,
                self.rotation_rad_s.abs() < 1e-2,
            ),
            (
                "flattening",
                self.flattening,
                (0.0..0.5).contains(&self.flattening),
            ),
        ];
        for (name, value, ok) in checks {
            if !value.is_finite() || !ok {
                return Err(format!("central_body.{name} = {value} is not valid"));
            }
        }
        if self.mu_km3_s2 > 1e9 || self.mu_km3_s2 < 1.0 {
            return Err(format!(
                "central_body.mu_km3_s2 = {} is implausible: the unit is km³/s² (the Earth's is 398600.4418; m³/s² would be 1e9 times larger)",
                self.mu_km3_s2
            ));
        }
        Ok(())
    }
}

impl Default for CentralBody {
    fn default() -> Self {
        Self::EARTH_EGM96
    }
}
