//! Atmospheric drag with a co-rotating atmosphere.
//!
//! a = −½ · Cd · (A/m) · ρ · |v_rel| · v_rel, with v_rel = v − ω⊕ ẑ × r.
//! Units: ρ kg/m³, A m², m kg, v km/s. In SI the product ρ (A/m) |v|² is m/s² when
//! v is in m/s; with v in km/s it carries a factor 10⁶ m²/s² per km²/s², and the result
//! in km/s² a factor 10⁻³: hence [`DRAG_UNIT_FACTOR`] = 10³, applied once, here.

use super::{Force, ForceError};
use crate::atmosphere::{AltitudeModel, Atmosphere};
use crate::body::CentralBody;
use crate::state::StateVector;
use nalgebra::{Matrix3, Matrix3x6, Vector3};
use std::sync::Arc;

/// (kg/m³ · m²/kg · km²/s²) → km/s²: 10⁶ (km²→m²) × 10⁻³ (m→km) × 1/m… = 10³.
pub const DRAG_UNIT_FACTOR: f64 = 1.0e3;

/// Drag on a cannonball (constant Cd·A/m).
#[derive(Clone)]
pub struct Drag {
    /// Drag coefficient Cd, dimensionless.
    pub cd: f64,
    /// Cross-section area, m².
    pub area_m2: f64,
    /// Mass, kg.
    pub mass_kg: f64,
    /// Multiplier on the whole drag acceleration (1 = nominal); the fit estimates it.
    pub scale: f64,
    /// The density model.
    pub atmosphere: Arc<dyn Atmosphere>,
    /// Constants for the co-rotation and the altitude.
    pub body: CentralBody,
    /// Spherical or geodetic altitude.
    pub altitude: AltitudeModel,
}

impl Drag {
    /// ½ Cd A/m · scale, m²/kg.
    pub fn half_ballistic(&self) -> f64 {
        0.5 * self.cd * self.area_m2 / self.mass_kg * self.scale
    }

    /// Density (kg/m³) at `t_s` and ECI position `r` (km).
    pub fn density(&self, t_s: f64, r: &Vector3<f64>) -> Result<f64, ForceError> {
        let h = self.altitude.altitude_km(r, &self.body);
        self.atmosphere
            .density_at(t_s, r, h)
            .map_err(|reason| ForceError {
                force: "drag".into(),
                t_s,
                reason,
            })
    }

    /// Density (kg/m³) and its gradient with respect to the ECI position (kg/m³ per
    /// km), as the atmosphere gives them ([`Atmosphere::density_and_gradient_at`]).
    pub fn density_and_gradient(
        &self,
        t_s: f64,
        r: &Vector3<f64>,
    ) -> Result<(f64, Vector3<f64>), ForceError> {
        let altitude = |p: &Vector3<f64>| self.altitude.altitude_km(p, &self.body);
        self.atmosphere
            .density_and_gradient_at(t_s, r, &altitude)
            .map_err(|reason| ForceError {
                force: "drag".into(),
                t_s,
                reason,
            })
    }

    /// Velocity relative to the co-rotating atmosphere, km/s.
    pub fn relative_velocity(&self, x: &StateVector) -> Vector3<f64> {
        let w = self.body.rotation_rad_s;
        Vector3::new(x[3] + w * x[1], x[4] - w * x[0], x[5])
    }
}

impl Force for Drag {
    fn name(&self) -> &str {
        "drag"
    }

    fn scale(&self) -> Option<super::ScaleKind> {
        Some(super::ScaleKind::Drag)
    }

    fn acceleration(&self, t_s: f64, x: &StateVector) -> Result<Vector3<f64>, ForceError> {
        let rho = self.density(t_s, &Vector3::new(x[0], x[1], x[2]))?;
        let vr = self.relative_velocity(x);
        Ok(vr * (-self.half_ballistic() * rho * vr.norm() * DRAG_UNIT_FACTOR))
    }

    /// Analytic in velocity; in position the density's gradient
    /// ([`Drag::density_and_gradient`], a few density calls instead of the twelve force
    /// calls of the default), plus the co-rotation term. With a = −k ρ |v_r| v_r and v_r = v − W r:
    /// ∂a/∂v = −k ρ M, M = |v_r| I + v_r v_rᵀ/|v_r|; ∂a/∂r = −k |v_r| v_r ∇ρᵀ + k ρ M W.
    fn partials(&self, t_s: f64, x: &StateVector) -> Result<Matrix3x6<f64>, ForceError> {
        let r = Vector3::new(x[0], x[1], x[2]);
        let (rho, grad) = self.density_and_gradient(t_s, &r)?;
        let vr = self.relative_velocity(x);
        let speed = vr.norm();
        let k = self.half_ballistic() * DRAG_UNIT_FACTOR;
        let m = Matrix3::identity() * speed + vr * vr.transpose() / speed.max(1e-12);
        let w = self.body.rotation_rad_s;
        let spin = Matrix3::new(0.0, -w, 0.0, w, 0.0, 0.0, 0.0, 0.0, 0.0);
        let dr = -k * speed * vr * grad.transpose() + k * rho * m * spin;
        let dv = -k * rho * m;
        let mut out = Matrix3x6::zeros();
        out.fixed_view_mut::<3, 3>(0, 0).copy_from(&dr);
        out.fixed_view_mut::<3, 3>(0, 3).copy_from(&dv);
        Ok(out)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::atmosphere::Exponential;
    use approx::assert_relative_eq;

    #[test]
    fn unit_conversion_done_once_and_right() {
        // Hand computation in SI: Cd 2.2, A 0.1 m², m 10 kg, ρ 1e-12 kg/m³,
        // |v_rel| 7600 m/s → a = ½·2.2·0.01·1e-12·7600² = 6.3536e-7 m/s² = 6.3536e-10 km/s².
        let drag = Drag {
            cd: 2.2,
            area_m2: 0.1,
            mass_kg: 10.0,
            scale: 1.0,
            atmosphere: Arc::new(Exponential {
                rho0_kg_m3: 1e-12,
                h0_km: 400.0,
                scale_height_km: 1e9,
            }),
            body: CentralBody {
                rotation_rad_s: 0.0,
                ..CentralBody::EARTH_EGM96
            },
            altitude: AltitudeModel::Spherical,
        };
        let x = StateVector::new(6778.1363, 0.0, 0.0, 0.0, 7.6, 0.0);
        let a = drag.acceleration(0.0, &x).unwrap();
        assert_relative_eq!(a[1], -6.3536e-10, max_relative = 1e-9);
        assert_eq!(a[0], 0.0);
    }

    #[test]
    fn partials_match_central_differences_of_the_force() {
        // The analytic form against the generic central difference of the whole force
        // (propagator::force::central_difference_partials), on an inclined LEO state.
        let drag = Drag {
            cd: 2.2,
            area_m2: 1.0,
            mass_kg: 50.0,
            scale: 1.3,
            atmosphere: Arc::new(Exponential {
                rho0_kg_m3: 3.7e-12,
                h0_km: 400.0,
                scale_height_km: 58.5,
            }),
            body: CentralBody::EARTH_EGM96,
            altitude: AltitudeModel::Geodetic,
        };
        let x = StateVector::new(4100.0, -3900.0, 3800.0, 4.1, 5.2, -2.3);
        let ours = drag.partials(0.0, &x).unwrap();
        let reference = crate::force::central_difference_partials(&drag, 0.0, &x).unwrap();
        let scale = reference.abs().max();
        assert!(
            (ours - reference).abs().max() < 1e-6 * scale,
            "{ours} vs {reference}"
        );
        // A wrong sign of the co-rotation term would show.
        assert!(scale > 0.0);
    }

    #[test]
    fn atmosphere_co_rotates() {
        // On an equatorial prograde orbit the wind ω r reduces |v_rel| (common practice).
        let drag = Drag {
            cd: 2.0,
            area_m2: 1.0,
            mass_kg: 1.0,
            scale: 1.0,
            atmosphere: Arc::new(Exponential {
                rho0_kg_m3: 1e-12,
                h0_km: 400.0,
                scale_height_km: 60.0,
            }),
            body: CentralBody::EARTH_EGM96,
            altitude: AltitudeModel::Spherical,
        };
        let x = StateVector::new(6778.0, 0.0, 0.0, 0.0, 7.67, 0.0);
        let vr = drag.relative_velocity(&x);
        assert_relative_eq!(vr[1], 7.67 - 7.292115e-5 * 6778.0, max_relative = 1e-15);
    }
}
