//! Solid Earth tides on the degree-2 coefficients: IERS Conventions (2010) §6.2.1, step 1
//! (frequency-independent Love numbers k₂ₘ), raised by the Sun and the Moon:
//!
//! ΔC̄₂ₘ − i ΔS̄₂ₘ = k₂ₘ/5 Σⱼ (GMⱼ/GM)(R/rⱼ)³ P̄₂ₘ(sin Φⱼ) e^{−imλⱼ}     (eq. 6.6)
//!
//! with Φⱼ, λⱼ the body's Earth-fixed geocentric latitude and longitude. Left out, and
//! said so in the README: the degree-4 terms from k⁽⁺⁾ (eq. 6.7, ~0.3% of the degree-2
//! change), degree 3 (k₃ₘ, the Moon's (R/r) ≈ 1/60 smaller again), and step 2's
//! frequency-dependent corrections (a few % of ΔC̄₂₀, ΔC̄₂₁). Only the acceleration is
//! corrected: the tides' gradient is ~1e-7 of J2's, below what the STM needs.

use super::{GravityField, Harmonics};
use nalgebra::Vector3;
use std::sync::Arc;

/// Love numbers k₂ₘ, m = 0, 1, 2, real and imaginary parts: IERS Conventions (2010)
/// Table 6.3, anelastic Earth (from memory). k₂₂ = 0.30102 is the table's value, not
/// log₁₀ 2.
#[allow(clippy::approx_constant)]
const LOVE_K2: [(f64, f64); 3] = [(0.30190, 0.0), (0.29830, -0.00144), (0.30102, -0.00130)];

/// The permanent part of ΔC̄₂₀ that step 1 contains, A₀H₀k₂₀ (IERS Conventions (2010)
/// eq. 6.13, A₀ = 4.4228e-8 m⁻¹, H₀ = −0.31460 m; from memory): a zero-tide field already
/// holds it, so it is taken out again for one.
const PERMANENT_C20: f64 = 4.4228e-8 * -0.31460 * 0.30190;

/// The tidal change of the degree-2 field and its acceleration.
#[derive(Clone, Debug)]
pub struct SolidTides {
    /// Degree-2 unit fields C̄₂₀, C̄₂₁, S̄₂₁, C̄₂₂, S̄₂₂ (the acceleration is linear in them).
    basis: [Harmonics; 5],
    /// Subtracted from ΔC̄₂₀ (zero-tide fields), else 0.
    permanent_c20: f64,
    gm_km3_s2: f64,
    radius_km: f64,
}

impl SolidTides {
    /// Tides on `field` (its GM and radius; its tide system decides the permanent part).
    /// A mean-tide field is refused: step 1 on it would need the permanent deformation
    /// put back, which arcwise does not model.
    pub fn new(field: &GravityField) -> Result<Self, String> {
        let permanent_c20 = match field.tide_system.as_str() {
            "zero_tide" => PERMANENT_C20,
            "tide_free" | "unknown" => 0.0,
            other => {
                return Err(format!(
                    "solid tides on a field in the `{other}` tide system are not supported (tide_free or zero_tide): {}",
                    field.name
                ))
            }
        };
        let unit = |m: usize, sine: bool| {
            let mut f = GravityField::zero(
                "unit degree-2 term".into(),
                field.gm_km3_s2,
                field.radius_km,
                2,
            );
            let (c, s) = if sine { (0.0, 1.0) } else { (1.0, 0.0) };
            f.set(2, m, c, s);
            Harmonics::new(Arc::new(f), 2, 2)
        };
        Ok(Self {
            basis: [
                unit(0, false)?,
                unit(1, false)?,
                unit(1, true)?,
                unit(2, false)?,
                unit(2, true)?,
            ],
            permanent_c20,
            gm_km3_s2: field.gm_km3_s2,
            radius_km: field.radius_km,
        })
    }

    /// ΔC̄₂₀, ΔC̄₂₁, ΔS̄₂₁, ΔC̄₂₂, ΔS̄₂₂ from the bodies' Earth-fixed positions (km) and
    /// GMs (km³/s²).
    pub fn coefficients(&self, bodies: &[(Vector3<f64>, f64)]) -> [f64; 5] {
        let mut d = [-self.permanent_c20, 0.0, 0.0, 0.0, 0.0];
        for (r, gm) in bodies {
            let rn = r.norm();
            let (sp, cp) = (r[2] / rn, r[0].hypot(r[1]) / rn);
            let lambda = r[1].atan2(r[0]);
            let k = gm / self.gm_km3_s2 * (self.radius_km / rn).powi(3) / 5.0;
            // Fully normalized P̄₂ₘ(sin Φ), no Condon–Shortley phase.
            let p = [
                5f64.sqrt() * (1.5 * sp * sp - 0.5),
                15f64.sqrt() * sp * cp,
                15f64.sqrt() / 2.0 * cp * cp,
            ];
            for (m, ((kr, ki), pm)) in LOVE_K2.iter().zip(p).enumerate() {
                let (sm, cm) = (m as f64 * lambda).sin_cos();
                // (kr + i ki)(cos mλ − i sin mλ) = (kr cos + ki sin) − i (kr sin − ki cos).
                let (dc, ds) = (k * pm * (kr * cm + ki * sm), k * pm * (kr * sm - ki * cm));
                match m {
                    0 => d[0] += dc,
                    _ => {
                        d[2 * m - 1] += dc;
                        d[2 * m] += ds;
                    }
                }
            }
        }
        d
    }

    /// The acceleration (km/s², Earth-fixed) at Earth-fixed `r` (km) of the tidal change
    /// raised by `bodies` (Earth-fixed positions, km, and GMs, km³/s²).
    pub fn acceleration(&self, r: &Vector3<f64>, bodies: &[(Vector3<f64>, f64)]) -> Vector3<f64> {
        self.coefficients(bodies)
            .iter()
            .zip(&self.basis)
            .map(|(d, h)| h.acceleration(r) * *d)
            .sum()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_moon_overhead_raises_c20_by_the_size_the_conventions_give() {
        // The Moon at its mean distance over the pole: ΔC̄₂₀ = k₂₀/5 (GMₘ/GM)(R/r)³ √5,
        // about 1.6e-8 (written out here, not through the code's P̄₂ₘ); S̄ and the m > 0
        // terms vanish on the axis.
        let field = GravityField::zero("t".into(), 398_600.441_5, 6378.1363, 2);
        let tides = SolidTides::new(&field).unwrap();
        let moon = Vector3::new(0.0, 0.0, 384_400.0);
        let d = tides.coefficients(&[(moon, 4_902.800_066)]);
        let want = 0.30190 / 5.0 * 4_902.800_066 / 398_600.441_5
            * (6378.1363f64 / 384_400.0).powi(3)
            * 5f64.sqrt();
        assert!((d[0] - want).abs() < 1e-15, "{} vs {want}", d[0]);
        assert!(d[1..].iter().all(|v| v.abs() < 1e-20), "{d:?}");
    }

    #[test]
    fn a_mean_tide_field_is_refused() {
        let mut field = GravityField::zero("t".into(), 398_600.441_5, 6378.1363, 2);
        field.tide_system = "mean_tide".into();
        let e = SolidTides::new(&field).unwrap_err();
        assert!(e.contains("mean_tide"), "{e}");
    }
}
