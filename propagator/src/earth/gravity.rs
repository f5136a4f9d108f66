//! The Earth's gravity field in spherical harmonics, evaluated in the Earth-fixed frame.
//!
//! U = GM/r Σₙ Σₘ (R/r)ⁿ P̄ₙₘ(sin φ) (C̄ₙₘ cos mλ + S̄ₙₘ sin mλ), fully normalized
//! (P̄ₙₘ = √((2 − δₘ₀)(2n + 1)(n − m)!/(n + m)!) Pₙₘ, no Condon–Shortley phase).
//!
//! The acceleration uses Cunningham's V, W functions (Montenbruck & Gill, Satellite Orbits,
//! §3.2.4–3.2.5) rewritten for normalized coefficients: V̄ₙₘ, W̄ₙₘ are the normalized
//! solid harmonics (R/r)ⁿ⁺¹ P̄ₙₘ(sin φ) (cos mλ, sin mλ), built from x, y, z by recursions
//! with no angle and no division by cos φ, so the poles are ordinary points; normalized
//! recursions stay in range far beyond degree 70. Only degrees ≥ 2 are summed here: the
//! central term is the two-body force, and degree 1 vanishes with the origin at the
//! centre of mass.

use nalgebra::{Matrix3, Vector3};
use std::cell::RefCell;
use std::sync::Arc;

/// Fully normalized coefficients of a static field.
#[derive(Clone, Debug, PartialEq)]
pub struct GravityField {
    /// Model name and origin, for reports.
    pub name: String,
    /// GM, km³/s².
    pub gm_km3_s2: f64,
    /// Reference radius, km.
    pub radius_km: f64,
    /// Highest degree held.
    pub max_degree: usize,
    c: Vec<f64>,
    s: Vec<f64>,
}

/// Index of (n, m) in a triangle stored by degree.
#[inline]
fn tri(n: usize, m: usize) -> usize {
    n * (n + 1) / 2 + m
}

impl GravityField {
    /// A field with every coefficient zero (C̄₀₀ = 1).
    pub fn zero(name: String, gm_km3_s2: f64, radius_km: f64, max_degree: usize) -> Self {
        let len = tri(max_degree, max_degree) + 1;
        let mut c = vec![0.0; len];
        c[0] = 1.0;
        Self {
            name,
            gm_km3_s2,
            radius_km,
            max_degree,
            c,
            s: vec![0.0; len],
        }
    }

    /// Sets C̄ₙₘ, S̄ₙₘ (ignored beyond the field's degree).
    pub fn set(&mut self, n: usize, m: usize, c: f64, s: f64) {
        if n <= self.max_degree && m <= n {
            self.c[tri(n, m)] = c;
            self.s[tri(n, m)] = s;
        }
    }

    /// C̄ₙₘ, S̄ₙₘ.
    pub fn coefficient(&self, n: usize, m: usize) -> (f64, f64) {
        (self.c[tri(n, m)], self.s[tri(n, m)])
    }

    /// EGM2008 to degree and order 70, shipped (see `propagator/data/README.md`).
    pub fn egm2008() -> Result<Arc<GravityField>, String> {
        static FIELD: std::sync::OnceLock<Result<Arc<GravityField>, String>> =
            std::sync::OnceLock::new();
        FIELD
            .get_or_init(|| {
                super::gfc::parse(
                    include_str!("../../data/egm2008_deg70.gfc"),
                    "the shipped egm2008_deg70.gfc",
                    None,
                )
                .map(Arc::new)
            })
            .clone()
    }
}

/// A field truncated to degree `n` and order `m`, with its recursion factors, ready to
/// evaluate.
#[derive(Clone, Debug)]
pub struct Harmonics {
    field: Arc<GravityField>,
    degree: usize,
    order: usize,
    /// Column recursion factors a, b for V̄ₙₘ up to degree + 1 (indexed by `tri`).
    a: Vec<f64>,
    b: Vec<f64>,
    /// Diagonal factors for V̄ₘₘ up to order + 1.
    diag: Vec<f64>,
    /// Acceleration factors per (n, m): along z, toward m + 1, toward m − 1.
    kz: Vec<f64>,
    kp: Vec<f64>,
    km: Vec<f64>,
}

thread_local! {
    static SCRATCH: RefCell<(Vec<f64>, Vec<f64>)> = const { RefCell::new((Vec::new(), Vec::new())) };
}

impl Harmonics {
    /// Degree `degree` and order `order` of `field` (order ≤ degree ≤ the field's).
    pub fn new(field: Arc<GravityField>, degree: usize, order: usize) -> Result<Self, String> {
        if degree > field.max_degree {
            return Err(format!(
                "gravity degree {degree} is above the field's maximum {} ({})",
                field.max_degree, field.name
            ));
        }
        if order > degree {
            return Err(format!(
                "gravity order {order} is above the degree {degree}"
            ));
        }
        let top = degree + 1;
        let len = tri(top, top) + 1;
        let (mut a, mut b) = (vec![0.0; len], vec![0.0; len]);
        for n in 1..=top {
            for m in 0..n {
                let (nf, mf) = (n as f64, m as f64);
                a[tri(n, m)] =
                    ((2.0 * nf + 1.0) * (2.0 * nf - 1.0) / ((nf - mf) * (nf + mf))).sqrt();
                if n >= 2 {
                    b[tri(n, m)] = ((2.0 * nf + 1.0) * (nf + mf - 1.0) * (nf - mf - 1.0)
                        / ((2.0 * nf - 3.0) * (nf + mf) * (nf - mf)))
                        .sqrt();
                }
            }
        }
        let diag = (0..=order + 1)
            .map(|m| match m {
                0 => 1.0,
                1 => 3f64.sqrt(),
                _ => ((2.0 * m as f64 + 1.0) / (2.0 * m as f64)).sqrt(),
            })
            .collect();
        let flen = tri(degree, degree) + 1;
        let (mut kz, mut kp, mut km) = (vec![0.0; flen], vec![0.0; flen], vec![0.0; flen]);
        for n in 2..=degree {
            let nf = n as f64;
            let q = (2.0 * nf + 1.0) / (2.0 * nf + 3.0);
            for m in 0..=n.min(order) {
                let mf = m as f64;
                let i = tri(n, m);
                kz[i] = (q * (nf + mf + 1.0) * (nf - mf + 1.0)).sqrt();
                kp[i] = if m == 0 {
                    (0.5 * q * (nf + 1.0) * (nf + 2.0)).sqrt()
                } else {
                    (q * (nf + mf + 1.0) * (nf + mf + 2.0)).sqrt()
                };
                km[i] = match m {
                    0 => 0.0,
                    1 => (2.0 * q * (nf + 1.0) * nf).sqrt(),
                    _ => (q * (nf - mf + 2.0) * (nf - mf + 1.0)).sqrt(),
                };
            }
        }
        Ok(Self {
            field,
            degree,
            order,
            a,
            b,
            diag,
            kz,
            kp,
            km,
        })
    }

    /// The field.
    pub fn field(&self) -> &GravityField {
        &self.field
    }

    /// (degree, order).
    pub fn size(&self) -> (usize, usize) {
        (self.degree, self.order)
    }

    /// V̄ₙₘ, W̄ₙₘ at Earth-fixed `r` (km) for n ≤ degree + 1, m ≤ order + 1, into `v`, `w`.
    fn solid_harmonics(&self, r: &Vector3<f64>, v: &mut [f64], w: &mut [f64]) {
        let re = self.field.radius_km;
        let r2 = r.norm_squared();
        let rho = re / r2;
        let (x0, y0, z0, rr) = (r[0] * rho, r[1] * rho, r[2] * rho, re * rho);
        let top = self.degree + 1;
        let mtop = (self.order + 1).min(top);
        v[0] = re / r2.sqrt();
        w[0] = 0.0;
        for m in 0..=mtop {
            let d = tri(m, m);
            if m > 0 {
                let p = tri(m - 1, m - 1);
                let k = self.diag[m];
                v[d] = k * (x0 * v[p] - y0 * w[p]);
                w[d] = k * (x0 * w[p] + y0 * v[p]);
            }
            if m < top {
                let i = tri(m + 1, m);
                v[i] = self.a[i] * z0 * v[d];
                w[i] = self.a[i] * z0 * w[d];
            }
            for n in m + 2..=top {
                let (i, i1, i2) = (tri(n, m), tri(n - 1, m), tri(n - 2, m));
                v[i] = self.a[i] * z0 * v[i1] - self.b[i] * rr * v[i2];
                w[i] = self.a[i] * z0 * w[i1] - self.b[i] * rr * w[i2];
            }
        }
    }

    /// Acceleration of degrees 2…degree, orders 0…order, km/s², at the Earth-fixed
    /// position `r` (km).
    pub fn acceleration(&self, r: &Vector3<f64>) -> Vector3<f64> {
        SCRATCH.with(|s| {
            let (v, w) = &mut *s.borrow_mut();
            let len = tri(self.degree + 1, self.degree + 1) + 1;
            if v.len() < len {
                v.resize(len, 0.0);
                w.resize(len, 0.0);
            }
            self.solid_harmonics(r, v, w);
            let (mut ax, mut ay, mut az) = (0.0, 0.0, 0.0);
            for n in 2..=self.degree {
                for m in 0..=n.min(self.order) {
                    let i = tri(n, m);
                    let (c, s) = (self.field.c[i], self.field.s[i]);
                    let up = tri(n + 1, m);
                    az += self.kz[i] * (-c * v[up] - s * w[up]);
                    let p = tri(n + 1, m + 1);
                    if m == 0 {
                        ax -= self.kp[i] * c * v[p];
                        ay -= self.kp[i] * c * w[p];
                    } else {
                        let q = tri(n + 1, m - 1);
                        ax += 0.5
                            * (self.kp[i] * (-c * v[p] - s * w[p])
                                + self.km[i] * (c * v[q] + s * w[q]));
                        ay += 0.5
                            * (self.kp[i] * (-c * w[p] + s * v[p])
                                + self.km[i] * (-c * w[q] + s * v[q]));
                    }
                }
            }
            let re = self.field.radius_km;
            Vector3::new(ax, ay, az) * (self.field.gm_km3_s2 / (re * re))
        })
    }

    /// ∂a/∂r (1/s²) in the Earth-fixed frame, by central differences of
    /// [`Self::acceleration`] with 1 m steps (the field's relative error from the step is
    /// ~1e-8 of the gradient; the STM needs 1e-6).
    pub fn gradient(&self, r: &Vector3<f64>) -> Matrix3<f64> {
        let h = 1e-3;
        let mut g = Matrix3::zeros();
        for j in 0..3 {
            let mut e = Vector3::zeros();
            e[j] = h;
            let d = (self.acceleration(&(r + e)) - self.acceleration(&(r - e))) / (2.0 * h);
            g.set_column(j, &d);
        }
        g
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn j2_alone_matches_the_closed_form() {
        // Zonal J2: a = −(3/2) J2 μ R²/r⁵ [x(1 − 5z²/r²), y(1 − 5z²/r²), z(3 − 5z²/r²)]
        // (Vallado §8.6.1), with J2 = −√5 C̄₂₀.
        let mut f = GravityField::zero("J2".into(), 398_600.441_5, 6378.1363, 2);
        let c20 = -4.841_651_437_908_15e-4;
        f.set(2, 0, c20, 0.0);
        let h = Harmonics::new(Arc::new(f), 2, 0).unwrap();
        let j2 = -(5f64).sqrt() * c20;
        for r in [
            Vector3::new(7000.0, 0.0, 0.0),
            Vector3::new(3000.0, -4000.0, 5000.0),
            Vector3::new(0.0, 0.0, 7100.0),
        ] {
            let rn: f64 = r.norm();
            let k = -1.5 * j2 * 398_600.441_5 * 6378.1363f64.powi(2) / rn.powi(5);
            let zz = 5.0 * r[2] * r[2] / (rn * rn);
            let want = Vector3::new(r[0] * (1.0 - zz), r[1] * (1.0 - zz), r[2] * (3.0 - zz)) * k;
            let got = h.acceleration(&r);
            assert!(
                (got - want).norm() < 1e-14 * want.norm().max(1e-12),
                "{got} vs {want}"
            );
        }
    }
}
