//! Point-mass (two-body) gravity.

use super::{Force, ForceError};
use crate::state::StateVector;
use nalgebra::{Matrix3, Matrix3x6, Vector3};

/// Point-mass gravity −μ r / |r|³.
#[derive(Clone, Copy, Debug)]
pub struct TwoBody {
    /// Gravitational parameter, km³/s².
    pub mu_km3_s2: f64,
}

impl Force for TwoBody {
    fn name(&self) -> &str {
        "two_body"
    }

    fn acceleration(&self, t_s: f64, x: &StateVector) -> Result<Vector3<f64>, ForceError> {
        let r = Vector3::new(x[0], x[1], x[2]);
        let r2 = r.norm_squared();
        if r2 <= 0.0 || !r2.is_finite() {
            return Err(ForceError {
                force: self.name().into(),
                t_s,
                reason: format!("position {r:?} is at the centre or not finite"),
            });
        }
        let rn = r2.sqrt();
        Ok(r * (-self.mu_km3_s2 / (r2 * rn)))
    }

    /// Analytic: ∂a/∂r = −μ/r³ (I − 3 r̂ r̂ᵀ), ∂a/∂v = 0.
    fn partials(&self, _t_s: f64, x: &StateVector) -> Result<Matrix3x6<f64>, ForceError> {
        let r = Vector3::new(x[0], x[1], x[2]);
        let rn = r.norm();
        let rh = r / rn;
        let g = (Matrix3::identity() - 3.0 * rh * rh.transpose()) * (-self.mu_km3_s2 / rn.powi(3));
        let mut p = Matrix3x6::zeros();
        p.fixed_view_mut::<3, 3>(0, 0).copy_from(&g);
        Ok(p)
    }

    fn depends_on_velocity(&self) -> bool {
        false
    }
}
