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

/// Index of (n, m) in a triangle stored by degree (the coefficients' layout).
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
///
/// Everything is stored by order (column) m, degrees n = m … in a row, so that the
/// recursion runs down contiguous memory and the sums read slices: columns are
/// independent once their diagonal term is known, so two are run side by side to keep
/// the floating-point units busy.
#[derive(Clone, Debug)]
pub struct Harmonics {
    field: Arc<GravityField>,
    degree: usize,
    order: usize,
    /// Highest order of V̄, W̄ (order + 1, capped at degree + 1; degrees go to degree + 1).
    mtop: usize,
    /// Start of column m in the V̄, W̄ and recursion arrays (n = m … top).
    col: Vec<usize>,
    /// Column recursion factors a, b (V̄ₙₘ = a z V̄ₙ₋₁ₘ − b ρ V̄ₙ₋₂ₘ), by column.
    a: Vec<f64>,
    b: Vec<f64>,
    /// Diagonal factors for V̄ₘₘ.
    diag: Vec<f64>,
    /// Per column m ≤ order, degrees n = max(2, m) … degree: the coefficients times the
    /// acceleration factors along z (kz), toward order m + 1 (kp) and m − 1 (km).
    terms: Vec<ColumnTerms>,
}

/// One column's coefficients, premultiplied by their acceleration factors: per degree
/// [C̄·kz, S̄·kz, C̄·kp, S̄·kp, C̄·km, S̄·km] (km = 0 for m = 0).
#[derive(Clone, Debug, Default)]
struct ColumnTerms {
    /// First degree of the column's sums.
    n0: usize,
    k: Vec<[f64; 6]>,
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
        let mtop = (order + 1).min(top);
        let mut col = Vec::with_capacity(mtop + 2);
        let mut at = 0;
        for m in 0..=mtop {
            col.push(at);
            at += top - m + 1;
        }
        col.push(at);
        let (mut a, mut b) = (vec![0.0; at], vec![0.0; at]);
        for (m, &start) in col.iter().enumerate().take(mtop + 1) {
            for n in m + 1..=top {
                let (nf, mf) = (n as f64, m as f64);
                let i = start + n - m;
                a[i] = ((2.0 * nf + 1.0) * (2.0 * nf - 1.0) / ((nf - mf) * (nf + mf))).sqrt();
                if n >= m + 2 {
                    b[i] = ((2.0 * nf + 1.0) * (nf + mf - 1.0) * (nf - mf - 1.0)
                        / ((2.0 * nf - 3.0) * (nf + mf) * (nf - mf)))
                        .sqrt();
                }
            }
        }
        let diag = (0..=mtop)
            .map(|m| match m {
                0 => 1.0,
                1 => 3f64.sqrt(),
                _ => ((2.0 * m as f64 + 1.0) / (2.0 * m as f64)).sqrt(),
            })
            .collect();
        let terms = (0..=order)
            .map(|m| column_terms(&field, degree, m))
            .collect();
        Ok(Self {
            field,
            degree,
            order,
            mtop,
            col,
            a,
            b,
            diag,
            terms,
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

    /// V̄ₙₘ, W̄ₙₘ at Earth-fixed `r` (km) for n ≤ degree + 1, m ≤ order + 1, into `v`, `w`
    /// (by column).
    fn solid_harmonics(&self, r: &Vector3<f64>, v: &mut [f64], w: &mut [f64]) {
        let re = self.field.radius_km;
        let r2 = r.norm_squared();
        let rho = re / r2;
        let (x0, y0, z0, rr) = (r[0] * rho, r[1] * rho, r[2] * rho, re * rho);
        // The diagonal, a short chain through the orders.
        v[0] = re / r2.sqrt();
        w[0] = 0.0;
        for m in 1..=self.mtop {
            let (p, d) = (self.col[m - 1], self.col[m]);
            let k = self.diag[m];
            v[d] = k * (x0 * v[p] - y0 * w[p]);
            w[d] = k * (x0 * w[p] + y0 * v[p]);
        }
        // Down each column from its diagonal, two columns side by side: each column is a
        // chain of dependent steps, and two chains of V̄ and W̄ keep the units busy.
        let mut m = 0;
        while m <= self.mtop {
            let (s0, s1) = (self.col[m], self.col[m + 1]);
            if m == self.mtop {
                let (a, b) = (&self.a[s0..s1], &self.b[s0..s1]);
                column_pair((a, b, &mut v[s0..s1], &mut w[s0..s1]), None, z0, rr);
                break;
            }
            let s2 = self.col[m + 2];
            let (v0, v1) = v[s0..s2].split_at_mut(s1 - s0);
            let (w0, w1) = w[s0..s2].split_at_mut(s1 - s0);
            column_pair(
                (&self.a[s0..s1], &self.b[s0..s1], v0, w0),
                Some((&self.a[s1..s2], &self.b[s1..s2], v1, w1)),
                z0,
                rr,
            );
            m += 2;
        }
    }

    /// Acceleration of degrees 2…degree, orders 0…order, km/s², at the Earth-fixed
    /// position `r` (km).
    pub fn acceleration(&self, r: &Vector3<f64>) -> Vector3<f64> {
        SCRATCH.with(|s| {
            let (v, w) = &mut *s.borrow_mut();
            let len = self.col[self.mtop + 1];
            if v.len() < len {
                v.resize(len, 0.0);
                w.resize(len, 0.0);
            }
            self.solid_harmonics(r, v, w);
            let (mut ax, mut ay, mut az) = (0.0, 0.0, 0.0);
            for (m, t) in self.terms.iter().enumerate() {
                let k = t.k.len();
                if k == 0 {
                    continue;
                }
                // V̄, W̄ at degree n + 1 for n = n0 … degree in columns m, m + 1, m − 1.
                let j = t.n0 + 1 - m;
                let at = |c: usize| (&v[c..][..k], &w[c..][..k]);
                let (v0, w0) = at(self.col[m] + j);
                let (vp, wp) = at(self.col[m + 1] + j - 1);
                let (vm, wm) = if m > 0 {
                    at(self.col[m - 1] + j + 1)
                } else {
                    (vp, wp)
                };
                let (mut sx, mut sy, mut sz) = (0.0, 0.0, 0.0);
                for (i, c) in t.k.iter().enumerate() {
                    let [cz, szc, cp, sp, cm, sm] = *c;
                    sz -= cz * v0[i] + szc * w0[i];
                    sx += cm * vm[i] + sm * wm[i] - cp * vp[i] - sp * wp[i];
                    sy += sm * vm[i] - cm * wm[i] + sp * vp[i] - cp * wp[i];
                }
                ax += sx;
                ay += sy;
                az += sz;
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

/// One column for the recursion: factors a, b and the V̄, W̄ it fills.
type Column<'a> = (&'a [f64], &'a [f64], &'a mut [f64], &'a mut [f64]);

/// The recursion down a column whose diagonal term `v[0]`, `w[0]` is in place (b is zero
/// on the first step, so one formula serves), and down the next column (one shorter)
/// alongside. The previous terms ride in registers: going through memory would add a
/// store-to-load delay to every step of the chain.
#[inline]
fn column_pair(first: Column<'_>, second: Option<Column<'_>>, z0: f64, rr: f64) {
    let (a0, b0, v0, w0) = first;
    let (mut p0, mut q0, mut pp0, mut qq0) = (v0[0], w0[0], 0.0, 0.0);
    let len0 = v0.len().min(w0.len()).min(a0.len()).min(b0.len());
    let mut j0 = 1;
    if let Some((a1, b1, v1, w1)) = second {
        let (mut p1, mut q1, mut pp1, mut qq1) = (v1[0], w1[0], 0.0, 0.0);
        let len1 = v1.len().min(w1.len()).min(a1.len()).min(b1.len()).min(len0);
        for j in 1..len1 {
            let (az0, br0) = (a0[j] * z0, b0[j] * rr);
            let (az1, br1) = (a1[j] * z0, b1[j] * rr);
            let (vn0, wn0) = (az0 * p0 - br0 * pp0, az0 * q0 - br0 * qq0);
            let (vn1, wn1) = (az1 * p1 - br1 * pp1, az1 * q1 - br1 * qq1);
            (v0[j], w0[j], v1[j], w1[j]) = (vn0, wn0, vn1, wn1);
            (pp0, qq0, p0, q0) = (p0, q0, vn0, wn0);
            (pp1, qq1, p1, q1) = (p1, q1, vn1, wn1);
        }
        j0 = len1.max(1);
    }
    for j in j0..len0 {
        let (az, br) = (a0[j] * z0, b0[j] * rr);
        let (vn, wn) = (az * p0 - br * pp0, az * q0 - br * qq0);
        (v0[j], w0[j]) = (vn, wn);
        (pp0, qq0, p0, q0) = (p0, q0, vn, wn);
    }
}

/// Column m's coefficients times their acceleration factors, degrees max(2, m) … degree.
fn column_terms(field: &GravityField, degree: usize, m: usize) -> ColumnTerms {
    let n0 = m.max(2);
    let mut t = ColumnTerms {
        n0,
        ..ColumnTerms::default()
    };
    let mf = m as f64;
    for n in n0..=degree {
        let nf = n as f64;
        let q = (2.0 * nf + 1.0) / (2.0 * nf + 3.0);
        let (c, s) = field.coefficient(n, m);
        let kz = (q * (nf + mf + 1.0) * (nf - mf + 1.0)).sqrt();
        // The x, y sums carry ½ for m > 0 (Montenbruck & Gill eq. 3.33); for m = 0 the
        // m + 1 term alone, without it.
        let (kp, km) = match m {
            0 => ((0.5 * q * (nf + 1.0) * (nf + 2.0)).sqrt(), 0.0),
            1 => (
                0.5 * (q * (nf + mf + 1.0) * (nf + mf + 2.0)).sqrt(),
                0.5 * (2.0 * q * (nf + 1.0) * nf).sqrt(),
            ),
            _ => (
                0.5 * (q * (nf + mf + 1.0) * (nf + mf + 2.0)).sqrt(),
                0.5 * (q * (nf - mf + 2.0) * (nf - mf + 1.0)).sqrt(),
            ),
        };
        t.k.push([kz * c, kz * s, kp * c, kp * s, km * c, km * s]);
    }
    t
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
