//! Density models for drag, and how altitude is measured.
//!
//! Three profiles of altitude alone — a single exponential with explicit constants, the
//! piecewise exponential table of a handbook, and the U.S. Standard Atmosphere 1976 as a
//! log-interpolated table — and NRLMSISE-00 ([`thermosphere::Thermosphere`]), which
//! follows the position, the time and the space weather. All return kg/m³.

pub mod space_weather;
pub mod thermosphere;
mod ussa1976_table;

/// NRLMSISE-00 (Picone et al. 2002): density from position, time and space weather.
pub mod nrlmsise00 {
    // Both files are self-contained so the plugin runtime can include them verbatim.
    include!("nrlmsise00_tables.rs");
    include!("nrlmsise00_model.rs");
    include!("nrlmsise00_expansions.rs");
    include!("nrlmsise00_profiles.rs");
}

// Self-contained sources shared verbatim with the learned-force plugin runtime.
include!("geodetic.rs");

use crate::body::CentralBody;
use nalgebra::Vector3;

/// A static density model: ρ(h), kg/m³, for altitude h in km.
pub trait Atmosphere: Send + Sync {
    /// Density in kg/m³ at altitude `h_km`; an error (a sentence) where the model has
    /// no answer, e.g. below its lowest altitude.
    fn density_kg_m3(&self, h_km: f64) -> Result<f64, String>;

    /// A short name for reports.
    fn name(&self) -> &str;

    /// Density in kg/m³ at `t_s` (s on the force model's time axis), ECI position
    /// `r_km` (km) and altitude `h_km` (km, by the drag's altitude model): what drag
    /// reads. Profiles of altitude alone keep this default.
    fn density_at(&self, _t_s: f64, _r_km: &Vector3<f64>, h_km: f64) -> Result<f64, String> {
        self.density_kg_m3(h_km)
    }

    /// Density (kg/m³) and its gradient with respect to the ECI position (kg/m³ per km)
    /// at `t_s` and `r_km`, with `altitude` measuring the altitude (km) of a position:
    /// for Jacobians. The default takes forward differences of 1 m (relative error ~
    /// step / scale height ≈ 2e-5, ample for a Jacobian).
    fn density_and_gradient_at(
        &self,
        t_s: f64,
        r_km: &Vector3<f64>,
        altitude: &dyn Fn(&Vector3<f64>) -> f64,
    ) -> Result<(f64, Vector3<f64>), String> {
        const STEP_KM: f64 = 1e-3;
        let rho = self.density_at(t_s, r_km, altitude(r_km))?;
        let mut grad = Vector3::zeros();
        for j in 0..3 {
            let mut p = *r_km;
            p[j] += STEP_KM;
            grad[j] = (self.density_at(t_s, &p, altitude(&p))? - rho) / STEP_KM;
        }
        Ok((rho, grad))
    }
}

/// How altitude above the Earth is measured.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Default)]
pub enum AltitudeModel {
    /// |r| − R (a spherical Earth of the central body's radius).
    #[default]
    Spherical,
    /// Height above the WGS-84 ellipsoid (the central body's radius and flattening).
    Geodetic,
}

impl AltitudeModel {
    /// Altitude in km of ECI position `r` (km). The ellipsoid is symmetric about the
    /// z axis, so the geodetic height needs no Earth rotation angle.
    pub fn altitude_km(&self, r: &Vector3<f64>, body: &CentralBody) -> f64 {
        match self {
            AltitudeModel::Spherical => r.norm() - body.radius_km,
            AltitudeModel::Geodetic => geodetic_height_km(r, body.radius_km, body.flattening),
        }
    }
}

/// Height above an ellipsoid (equatorial radius `a_km`, flattening `f`) by Bowring's
/// iteration; the one implementation the plugin runtime shares (see `geodetic.rs`).
pub fn geodetic_height_km(r: &Vector3<f64>, a_km: f64, f: f64) -> f64 {
    ellipsoid_height([r[0], r[1], r[2]], a_km, f).0
}

/// ρ = ρ0 · exp(−(h − h0)/H).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Exponential {
    /// Density at the base altitude, kg/m³.
    pub rho0_kg_m3: f64,
    /// Base altitude, km.
    pub h0_km: f64,
    /// Scale height, km.
    pub scale_height_km: f64,
}

impl Atmosphere for Exponential {
    fn density_kg_m3(&self, h_km: f64) -> Result<f64, String> {
        Ok(self.rho0_kg_m3 * (-(h_km - self.h0_km) / self.scale_height_km).exp())
    }
    fn name(&self) -> &str {
        "exponential"
    }
}

/// One band of a piecewise-exponential table: from `base_km` up to the next band.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Band {
    /// Base altitude, km.
    pub base_km: f64,
    /// Nominal density at the base, kg/m³.
    pub rho_kg_m3: f64,
    /// Scale height, km.
    pub scale_height_km: f64,
}

/// Piecewise-exponential atmosphere of Vallado, *Fundamentals of Astrodynamics and
/// Applications*, Table 8-4 (from memory; derived from CIRA-72 / USSA76).
/// Valid 0–1000 km; above 1000 km the last band is extrapolated; below 0 km an error.
pub const HANDBOOK_TABLE: [Band; 28] = [
    Band {
        base_km: 0.0,
        rho_kg_m3: 1.225,
        scale_height_km: 7.249,
    },
    Band {
        base_km: 25.0,
        rho_kg_m3: 3.899e-2,
        scale_height_km: 6.349,
    },
    Band {
        base_km: 30.0,
        rho_kg_m3: 1.774e-2,
        scale_height_km: 6.682,
    },
    Band {
        base_km: 40.0,
        rho_kg_m3: 3.972e-3,
        scale_height_km: 7.554,
    },
    Band {
        base_km: 50.0,
        rho_kg_m3: 1.057e-3,
        scale_height_km: 8.382,
    },
    Band {
        base_km: 60.0,
        rho_kg_m3: 3.206e-4,
        scale_height_km: 7.714,
    },
    Band {
        base_km: 70.0,
        rho_kg_m3: 8.770e-5,
        scale_height_km: 6.549,
    },
    Band {
        base_km: 80.0,
        rho_kg_m3: 1.905e-5,
        scale_height_km: 5.799,
    },
    Band {
        base_km: 90.0,
        rho_kg_m3: 3.396e-6,
        scale_height_km: 5.382,
    },
    Band {
        base_km: 100.0,
        rho_kg_m3: 5.297e-7,
        scale_height_km: 5.877,
    },
    Band {
        base_km: 110.0,
        rho_kg_m3: 9.661e-8,
        scale_height_km: 7.263,
    },
    Band {
        base_km: 120.0,
        rho_kg_m3: 2.438e-8,
        scale_height_km: 9.473,
    },
    Band {
        base_km: 130.0,
        rho_kg_m3: 8.484e-9,
        scale_height_km: 12.636,
    },
    Band {
        base_km: 140.0,
        rho_kg_m3: 3.845e-9,
        scale_height_km: 16.149,
    },
    Band {
        base_km: 150.0,
        rho_kg_m3: 2.070e-9,
        scale_height_km: 22.523,
    },
    Band {
        base_km: 180.0,
        rho_kg_m3: 5.464e-10,
        scale_height_km: 29.740,
    },
    Band {
        base_km: 200.0,
        rho_kg_m3: 2.789e-10,
        scale_height_km: 37.105,
    },
    Band {
        base_km: 250.0,
        rho_kg_m3: 7.248e-11,
        scale_height_km: 45.546,
    },
    Band {
        base_km: 300.0,
        rho_kg_m3: 2.418e-11,
        scale_height_km: 53.628,
    },
    Band {
        base_km: 350.0,
        rho_kg_m3: 9.518e-12,
        scale_height_km: 53.298,
    },
    Band {
        base_km: 400.0,
        rho_kg_m3: 3.725e-12,
        scale_height_km: 58.515,
    },
    Band {
        base_km: 450.0,
        rho_kg_m3: 1.585e-12,
        scale_height_km: 60.828,
    },
    Band {
        base_km: 500.0,
        rho_kg_m3: 6.967e-13,
        scale_height_km: 63.822,
    },
    Band {
        base_km: 600.0,
        rho_kg_m3: 1.454e-13,
        scale_height_km: 71.835,
    },
    Band {
        base_km: 700.0,
        rho_kg_m3: 3.614e-14,
        scale_height_km: 88.667,
    },
    Band {
        base_km: 800.0,
        rho_kg_m3: 1.170e-14,
        scale_height_km: 124.64,
    },
    Band {
        base_km: 900.0,
        rho_kg_m3: 5.245e-15,
        scale_height_km: 181.05,
    },
    Band {
        base_km: 1000.0,
        rho_kg_m3: 3.019e-15,
        scale_height_km: 268.00,
    },
];

/// A piecewise-exponential table (bands sorted by base altitude).
#[derive(Clone, Debug, PartialEq)]
pub struct PiecewiseExponential {
    /// The bands, ascending.
    pub bands: Vec<Band>,
}

impl PiecewiseExponential {
    /// The handbook table ([`HANDBOOK_TABLE`]).
    pub fn handbook() -> Self {
        Self {
            bands: HANDBOOK_TABLE.to_vec(),
        }
    }
}

impl Atmosphere for PiecewiseExponential {
    fn density_kg_m3(&self, h_km: f64) -> Result<f64, String> {
        let first = self.bands.first().ok_or("empty atmosphere table")?;
        if h_km.is_nan() || h_km < first.base_km {
            return Err(format!(
                "altitude {h_km:.3} km is below the table's lowest altitude {} km",
                first.base_km
            ));
        }
        let i = self.bands.partition_point(|b| b.base_km <= h_km) - 1;
        let b = &self.bands[i];
        Ok(b.rho_kg_m3 * (-(h_km - b.base_km) / b.scale_height_km).exp())
    }
    fn name(&self) -> &str {
        "table"
    }
}

/// The U.S. Standard Atmosphere 1976, tabulated from the `ussa1976` Python package
/// (v0.3.4) by `tools/reference/ussa1976_table.py` and interpolated linearly in ln ρ.
///
/// Range: 0–1000 km (the model's own). Above 1000 km: exponential extrapolation with
/// the scale height of the last interval. Below 0 km: an error.
#[derive(Clone, Copy, Debug, Default)]
pub struct Ussa1976;

impl Ussa1976 {
    /// Lowest and highest tabulated altitude, km.
    pub const RANGE_KM: (f64, f64) = (0.0, 1000.0);
}

impl Atmosphere for Ussa1976 {
    fn density_kg_m3(&self, h_km: f64) -> Result<f64, String> {
        let t = &ussa1976_table::TABLE;
        if h_km.is_nan() || h_km < t[0].0 {
            return Err(format!(
                "altitude {h_km:.3} km is below the USSA1976 table's range (0–1000 km)"
            ));
        }
        let n = t.len();
        let i = if h_km >= t[n - 1].0 {
            n - 2
        } else {
            t.partition_point(|p| p.0 <= h_km) - 1
        };
        let (h0, l0) = (t[i].0, t[i].1);
        let (h1, l1) = (t[i + 1].0, t[i + 1].1);
        let s = (h_km - h0) / (h1 - h0);
        Ok((l0 + s * (l1 - l0)).exp())
    }
    fn name(&self) -> &str {
        "ussa1976"
    }
}

/// The tabulated nodes (altitude km, ln ρ) of [`Ussa1976`].
pub fn ussa1976_nodes() -> &'static [(f64, f64)] {
    &ussa1976_table::TABLE
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn handbook_table_values() {
        let t = PiecewiseExponential::handbook();
        // At a base altitude the nominal density itself (Vallado Table 8-4).
        assert_relative_eq!(
            t.density_kg_m3(400.0).unwrap(),
            3.725e-12,
            max_relative = 1e-12
        );
        // Vallado's Example 8-4 style evaluation at 450.0 km equals the band's base.
        assert_relative_eq!(
            t.density_kg_m3(450.0).unwrap(),
            1.585e-12,
            max_relative = 1e-12
        );
        // Within a band: ρ0 exp(−(h−h0)/H).
        let r = t.density_kg_m3(425.0).unwrap();
        assert_relative_eq!(
            r,
            3.725e-12 * (-25.0f64 / 58.515).exp(),
            max_relative = 1e-12
        );
        assert!(t.density_kg_m3(-1.0).is_err());
        assert!(t.density_kg_m3(f64::NAN).is_err());
        // Monotone decreasing across every band edge (a typo in the table would show).
        let mut prev = f64::INFINITY;
        for k in 0..2000 {
            let h = k as f64 * 0.6;
            let d = t.density_kg_m3(h).unwrap();
            assert!(d < prev, "density not decreasing at {h} km");
            prev = d;
        }
    }

    #[test]
    fn ussa1976_sea_level_and_range() {
        // USSA1976 sea-level density 1.225 kg/m³ (NOAA-S/T 76-1562, Table I).
        assert_relative_eq!(
            Ussa1976.density_kg_m3(0.0).unwrap(),
            1.225,
            max_relative = 1e-4
        );
        assert!(Ussa1976.density_kg_m3(-0.5).is_err());
        let top = Ussa1976.density_kg_m3(1000.0).unwrap();
        let above = Ussa1976.density_kg_m3(1100.0).unwrap();
        assert!(above < top && above > 0.0);
    }

    #[test]
    fn geodetic_height_of_known_points() {
        let (a, f) = (6378.137, 1.0 / 298.257_223_563);
        // On the equator the ellipsoid radius is a; at the pole it is b = a(1 − f).
        assert_relative_eq!(
            geodetic_height_km(&Vector3::new(a + 500.0, 0.0, 0.0), a, f),
            500.0,
            epsilon = 1e-9
        );
        let b = a * (1.0 - f);
        assert_relative_eq!(
            geodetic_height_km(&Vector3::new(0.0, 0.0, b + 300.0), a, f),
            300.0,
            epsilon = 1e-9
        );
        // A point 400 km above geodetic latitude 45° (built from the normal).
        let lat = 45f64.to_radians();
        let e2 = f * (2.0 - f);
        let n = a / (1.0 - e2 * lat.sin().powi(2)).sqrt();
        let h = 400.0;
        let p = Vector3::new((n + h) * lat.cos(), 0.0, (n * (1.0 - e2) + h) * lat.sin());
        assert_relative_eq!(geodetic_height_km(&p, a, f), 400.0, epsilon = 1e-7);
    }
}
