//! Zonal harmonics J2…J6 of the Earth's gravity field.
//!
//! The pole is the ECI z axis: precession and nutation are ignored, which is adequate
//! over arcs of days (the pole moves about 20″ per year).

use super::{Force, ForceError};
use crate::state::StateVector;
use nalgebra::Vector3;

/// EGM96 fully normalised zonal coefficients C̄(n,0), n = 2…6 (Lemoine et al. 1998,
/// NASA/TP-1998-206861, from memory). Unnormalised J_n = −√(2n+1) · C̄(n,0).
pub const EGM96_CBAR_N0: [f64; 5] = [
    -0.484_165_371_736e-3,
    0.957_254_173_792e-6,
    0.539_873_863_789e-6,
    0.685_323_475_630e-7,
    -0.149_957_994_714e-6,
];

/// Unnormalised EGM96 J2…J6 (index 0 is J2).
pub fn egm96_j() -> [f64; 5] {
    let mut j = [0.0; 5];
    for (k, c) in EGM96_CBAR_N0.iter().enumerate() {
        let n = (k + 2) as f64;
        j[k] = -(2.0 * n + 1.0).sqrt() * c;
    }
    j
}

/// Zonal gravity from J2 up to J_degree (degree 2…6). Acceleration of the term n:
/// a = μ J_n R^n / r^(n+2) · [ (n+1) P_n(u) r̂ + P_n′(u) (u r̂ − ẑ) ], u = z/r,
/// the gradient of U_n = −μ J_n R^n P_n(u) / r^(n+1).
#[derive(Clone, Debug)]
pub struct Zonal {
    /// Gravitational parameter, km³/s².
    pub mu_km3_s2: f64,
    /// Reference radius of the harmonics, km.
    pub radius_km: f64,
    /// J2…J_degree, unnormalised (index 0 is J2).
    pub j: Vec<f64>,
    name: String,
}

impl Zonal {
    /// J2…J_degree with the EGM96 values. `degree` must be 2…6.
    pub fn egm96(mu_km3_s2: f64, radius_km: f64, degree: usize) -> Result<Self, String> {
        if !(2..=6).contains(&degree) {
            return Err(format!(
                "gravity.zonal_degree must be 0 or 2..6, got {degree}"
            ));
        }
        let j = egm96_j()[..degree - 1].to_vec();
        Ok(Self::with_coefficients(mu_km3_s2, radius_km, j))
    }

    /// Zonal gravity with explicit J2…J_n (index 0 is J2).
    pub fn with_coefficients(mu_km3_s2: f64, radius_km: f64, j: Vec<f64>) -> Self {
        let name = if j.len() == 1 {
            "zonal_j2".to_string()
        } else {
            format!("zonal_j2_j{}", j.len() + 1)
        };
        Self {
            mu_km3_s2,
            radius_km,
            j,
            name,
        }
    }
}

impl Force for Zonal {
    fn name(&self) -> &str {
        &self.name
    }

    fn acceleration(&self, t_s: f64, x: &StateVector) -> Result<Vector3<f64>, ForceError> {
        let r = Vector3::new(x[0], x[1], x[2]);
        let rn = r.norm();
        if !(rn > 0.0 && rn.is_finite()) {
            return Err(ForceError {
                force: self.name.clone(),
                t_s,
                reason: "position at the centre or not finite".into(),
            });
        }
        let rh = r / rn;
        let u = rh[2];
        let q = self.radius_km / rn;
        // Legendre P_n(u) and P_n'(u) by the three-term recursions.
        let (mut p_prev, mut p) = (1.0, u);
        let (mut dp_prev, mut dp) = (0.0, 1.0);
        let mut qn = q; // (R/r)^n, n = 1
        let mut radial = 0.0; // coefficient of r̂
        let mut polar = 0.0; // coefficient of (u r̂ − ẑ)
        for (k, jn) in self.j.iter().enumerate() {
            let n = (k + 1) as f64; // step from degree n to n+1
            let p_next = ((2.0 * n + 1.0) * u * p - n * p_prev) / (n + 1.0);
            let dp_next = dp_prev + (2.0 * n + 1.0) * p;
            p_prev = p;
            p = p_next;
            dp_prev = dp;
            dp = dp_next;
            qn *= q;
            let deg = n + 1.0;
            radial += jn * qn * (deg + 1.0) * p;
            polar += jn * qn * dp;
        }
        let scale = self.mu_km3_s2 / (rn * rn);
        let a = (rh * (radial + polar * u) - Vector3::z() * polar) * scale;
        Ok(a)
    }

    fn depends_on_velocity(&self) -> bool {
        false
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn egm96_j_values_match_the_handbook_table() {
        // Vallado, Fundamentals of Astrodynamics and Applications, EGM-96 zonal table
        // (from memory): J2 0.0010826267, J3 −0.0000025327, J4 −0.0000016196,
        // J5 −0.00000022730, J6 0.00000054068.
        let j = egm96_j();
        assert_relative_eq!(j[0], 1.082_626_7e-3, max_relative = 1e-7);
        assert_relative_eq!(j[1], -2.532_7e-6, max_relative = 1e-4);
        assert_relative_eq!(j[2], -1.619_6e-6, max_relative = 1e-4);
        assert_relative_eq!(j[3], -2.273_0e-7, max_relative = 1e-4);
        assert_relative_eq!(j[4], 5.406_8e-7, max_relative = 1e-4);
    }

    #[test]
    fn j2_matches_the_closed_form() {
        // Closed-form J2 acceleration (common practice, e.g. Vallado eq. 8-30):
        // a_x = −3/2 J2 μ R² x / r⁵ (1 − 5 z²/r²), a_z = −3/2 J2 μ R² z / r⁵ (3 − 5 z²/r²).
        let (mu, re, j2) = (398_600.441_8, 6378.1363, 1.082_626_68e-3);
        let z = Zonal::with_coefficients(mu, re, vec![j2]);
        let x = StateVector::new(5000.0, -3000.0, 4000.0, 0.0, 0.0, 0.0);
        let a = z.acceleration(0.0, &x).unwrap();
        let r: f64 = (5000.0f64.powi(2) + 3000.0f64.powi(2) + 4000.0f64.powi(2)).sqrt();
        let k = -1.5 * j2 * mu * re * re / r.powi(5);
        let s = 5.0 * 4000.0 * 4000.0 / (r * r);
        assert_relative_eq!(a[0], k * 5000.0 * (1.0 - s), max_relative = 1e-13);
        assert_relative_eq!(a[1], k * -3000.0 * (1.0 - s), max_relative = 1e-13);
        assert_relative_eq!(a[2], k * 4000.0 * (3.0 - s), max_relative = 1e-13);
    }

    #[test]
    fn higher_zonals_are_the_gradient_of_the_potential() {
        // Numerical gradient of U = −μ/r Σ J_n (R/r)^n P_n(z/r) with explicit Legendre
        // polynomials (Abramowitz & Stegun 22.3), checked against the recursion.
        let (mu, re) = (398_600.441_8, 6378.1363);
        let j = egm96_j().to_vec();
        let zf = Zonal::with_coefficients(mu, re, j.clone());
        let pot = |p: &Vector3<f64>| -> f64 {
            let r = p.norm();
            let u = p[2] / r;
            let pn = [
                (3.0 * u * u - 1.0) / 2.0,
                (5.0 * u.powi(3) - 3.0 * u) / 2.0,
                (35.0 * u.powi(4) - 30.0 * u * u + 3.0) / 8.0,
                (63.0 * u.powi(5) - 70.0 * u.powi(3) + 15.0 * u) / 8.0,
                (231.0 * u.powi(6) - 315.0 * u.powi(4) + 105.0 * u * u - 5.0) / 16.0,
            ];
            let mut s = 0.0;
            for k in 0..5 {
                s += j[k] * (re / r).powi(k as i32 + 2) * pn[k];
            }
            -mu / r * s
        };
        let p = Vector3::new(-2100.0, 4300.0, 5100.0);
        let a = zf
            .acceleration(0.0, &StateVector::new(p[0], p[1], p[2], 0.0, 0.0, 0.0))
            .unwrap();
        for i in 0..3 {
            let h = 1e-3;
            let mut pp = p;
            let mut pm = p;
            pp[i] += h;
            pm[i] -= h;
            let g = (pot(&pp) - pot(&pm)) / (2.0 * h);
            assert_relative_eq!(a[i], g, max_relative = 1e-7);
        }
    }
}
