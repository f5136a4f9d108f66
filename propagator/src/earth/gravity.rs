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
    /// The file's `tide_system` (`tide_free`, `zero_tide`, `mean_tide`), `unknown` if not
    /// stated.
    pub tide_system: String,
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
            tide_system: "unknown".into(),
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

/// A field truncated to degree `n` and order `m`, ready to evaluate.
///
/// The potential U = GM/R Σ (C̄ₙₘ V̄ₙₘ + S̄ₙₘ W̄ₙₘ) is a linear functional on the solid
/// harmonics, and so are its derivatives: R ∂/∂x of a solid harmonic of degree n is a
/// combination of those of degree n + 1 (Cunningham's rules). The acceleration and its
/// gradient are therefore fixed weights on V̄, W̄ of degree ≤ n + 1 and ≤ n + 2, found
/// once here by applying the rules to the coefficients; an evaluation runs the recursion
/// for V̄, W̄ by degree rows (each row's orders are independent, so the loop vectorizes)
/// and contracts them with the weights.
#[derive(Clone, Debug)]
pub struct Harmonics {
    field: Arc<GravityField>,
    degree: usize,
    order: usize,
    rows: Rows,
    /// Row recursion factors a, b (V̄ₙₘ = a z V̄ₙ₋₁ₘ − b ρ V̄ₙ₋₂ₘ), in the rows' layout.
    a: Vec<f64>,
    b: Vec<f64>,
    /// Diagonal factors for V̄ₘₘ from V̄ₘ₋₁ₘ₋₁, W̄ₘ₋₁ₘ₋₁.
    diag: Vec<f64>,
    /// R ∂U/∂(x, y, z) as weights on V̄, W̄ of degree ≤ degree + 1.
    acceleration: Contraction<3>,
    /// R² ∂²U/∂(xx, xy, xz, yy, yz, zz) on V̄, W̄ of degree ≤ degree + 2.
    gradient: Contraction<6>,
}

/// Accumulator lanes of the contractions: eight independent sums per component keep the
/// adders busy and map onto two AVX2 or four SSE2 registers. The order of the additions
/// is the same on either, so the result is the same bit for bit.
const L: usize = 8;

/// Solid harmonics stored by degree rows: row n holds orders 0 … min(n, mtop).
#[derive(Clone, Debug)]
struct Rows {
    /// Start of row n; `start[top + 1]` is the length.
    start: Vec<usize>,
    mtop: usize,
}

impl Rows {
    fn new(top: usize, mtop: usize) -> Self {
        let mut start = Vec::with_capacity(top + 2);
        let mut at = 0;
        for n in 0..=top {
            start.push(at);
            at += n.min(mtop) + 1;
        }
        start.push(at);
        Self { start, mtop }
    }

    fn top(&self) -> usize {
        self.start.len() - 2
    }

    /// Orders held in row n.
    fn width(&self, n: usize) -> usize {
        n.min(self.mtop) + 1
    }

    fn at(&self, n: usize, m: usize) -> usize {
        self.start[n] + m
    }

    /// Entries in rows 0 … n.
    fn through(&self, n: usize) -> usize {
        self.start[n + 1]
    }
}

/// Which of a degree-and-order pair's two solid harmonics: V̄ (cos mλ) or W̄ (sin mλ).
#[derive(Clone, Copy, Debug, PartialEq)]
enum Kind {
    V,
    W,
}

/// Weights on V̄, W̄ in the rows' layout: the functional Σ v·V̄ + w·W̄.
#[derive(Clone, Debug)]
struct Functional {
    v: Vec<f64>,
    w: Vec<f64>,
}

impl Functional {
    /// The potential's weights, C̄ₙₘ and S̄ₙₘ for 2 ≤ n ≤ degree, m ≤ order.
    fn potential(field: &GravityField, degree: usize, order: usize, rows: &Rows) -> Self {
        let len = rows.through(rows.top());
        let mut f = Self {
            v: vec![0.0; len],
            w: vec![0.0; len],
        };
        for n in 2..=degree {
            for m in 0..=n.min(order) {
                let (c, s) = field.coefficient(n, m);
                f.v[rows.at(n, m)] = c;
                f.w[rows.at(n, m)] = s;
            }
        }
        f
    }

    /// R ∂/∂x_axis of this functional, its weights on rows 0 … `below` moved one degree
    /// up (the caller keeps the highest order reached within the rows' width).
    fn derive(&self, axis: Axis, rows: &Rows, below: usize) -> Self {
        let len = self.v.len();
        let mut out = Self {
            v: vec![0.0; len],
            w: vec![0.0; len],
        };
        for n in 0..=below {
            for m in 0..rows.width(n) {
                let i = rows.at(n, m);
                for (kind, weight) in [(Kind::V, self.v[i]), (Kind::W, self.w[i])] {
                    if weight == 0.0 {
                        continue;
                    }
                    for (factor, m1, kind1) in derivative_rule(axis, n, m, kind) {
                        let j = rows.at(n + 1, m1);
                        let k = weight * factor * norm_ratio(n, m, m1);
                        match kind1 {
                            Kind::V => out.v[j] += k,
                            Kind::W => out.w[j] += k,
                        }
                    }
                }
            }
        }
        out
    }
}

/// R ∂/∂x_axis of Cunningham's unnormalized solid harmonic (n, m, kind) as terms
/// (factor, m′, kind′) of degree n + 1 (Montenbruck & Gill, Satellite Orbits, eq. 3.33,
/// read as derivative rules; W̄ₙ₀ = 0 has no terms).
fn derivative_rule(axis: Axis, n: usize, m: usize, kind: Kind) -> Vec<(f64, usize, Kind)> {
    use Axis::{X, Y, Z};
    use Kind::{V, W};
    let down = 0.5 * ((n + 2 - m) * (n + 1 - m)) as f64;
    match (axis, kind, m) {
        (Z, _, _) => vec![(-((n + 1 - m) as f64), m, kind)],
        (X | Y, W, 0) => vec![],
        (X, V, 0) => vec![(-1.0, 1, V)],
        (Y, V, 0) => vec![(-1.0, 1, W)],
        (X, V, _) => vec![(-0.5, m + 1, V), (down, m - 1, V)],
        (X, W, _) => vec![(-0.5, m + 1, W), (down, m - 1, W)],
        (Y, V, _) => vec![(-0.5, m + 1, W), (-down, m - 1, W)],
        (Y, W, _) => vec![(0.5, m + 1, V), (down, m - 1, V)],
    }
}

/// An Earth-fixed axis.
#[derive(Clone, Copy, Debug)]
enum Axis {
    X,
    Y,
    Z,
}

/// Nₙₘ / Nₙ₊₁ₘ′ for the normalization Nₙₘ = √((2 − δₘ₀)(2n + 1)(n − m)!/(n + m)!), m′
/// within one of m.
fn norm_ratio(n: usize, m: usize, m1: usize) -> f64 {
    let delta = |m: usize| if m == 0 { 1.0 } else { 2.0 };
    // a!/b! for a, b at most two apart.
    let fact_ratio = |a: usize, b: usize| -> f64 {
        let (lo, hi) = (a.min(b), a.max(b));
        let p: f64 = (lo + 1..=hi).map(|k| k as f64).product();
        if a >= b {
            p
        } else {
            1.0 / p
        }
    };
    let sq = delta(m) / delta(m1) * (2 * n + 1) as f64 / (2 * n + 3) as f64
        * fact_ratio(n - m, n + 1 - m1)
        * fact_ratio(n + 1 + m1, n + m);
    sq.sqrt()
}

/// K functionals' weights, each padded to whole blocks of L entries, ready to contract
/// with V̄, W̄.
#[derive(Clone, Debug)]
struct Contraction<const K: usize> {
    v: [Vec<f64>; K],
    w: [Vec<f64>; K],
}

impl<const K: usize> Contraction<K> {
    /// The first `len` weights of each functional.
    fn new(fs: [&Functional; K], len: usize) -> Self {
        let padded = len.div_ceil(L) * L;
        let take = |x: &[f64]| {
            let mut out = x[..len].to_vec();
            out.resize(padded, 0.0);
            out
        };
        Self {
            v: fs.map(|f| take(&f.v)),
            w: fs.map(|f| take(&f.w)),
        }
    }

    /// Entries read (a multiple of L).
    fn len(&self) -> usize {
        self.v.first().map_or(0, Vec::len)
    }

    /// Σ v·V̄ + w·W̄ for each functional, one pass each: a pass streams through one
    /// functional's weights in L-wide blocks, with the lanes as independent sums.
    #[inline(always)]
    fn apply(&self, v: &[f64], w: &[f64]) -> [f64; K] {
        let mut out = [0.0; K];
        for (o, (pv, pw)) in out.iter_mut().zip(self.v.iter().zip(&self.w)) {
            let mut acc = [0.0; L];
            for ((p, x), (q, y)) in pv
                .chunks_exact(L)
                .zip(v.chunks_exact(L))
                .zip(pw.chunks_exact(L).zip(w.chunks_exact(L)))
            {
                for l in 0..L {
                    acc[l] += p[l] * x[l] + q[l] * y[l];
                }
            }
            *o = acc.iter().sum();
        }
        out
    }
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
        // Two derivatives raise the degree by two and the order by up to two.
        let top = degree + 2;
        let rows = Rows::new(top, (order + 2).min(top));
        let len = rows.through(top);
        let (mut a, mut b) = (vec![0.0; len], vec![0.0; len]);
        for n in 1..=top {
            for m in 0..rows.width(n).min(n) {
                let (nf, mf) = (n as f64, m as f64);
                let i = rows.at(n, m);
                a[i] = ((2.0 * nf + 1.0) * (2.0 * nf - 1.0) / ((nf - mf) * (nf + mf))).sqrt();
                if n >= m + 2 {
                    b[i] = ((2.0 * nf + 1.0) * (nf + mf - 1.0) * (nf - mf - 1.0)
                        / ((2.0 * nf - 3.0) * (nf + mf) * (nf - mf)))
                        .sqrt();
                }
            }
        }
        let diag = (0..=rows.mtop)
            .map(|m| match m {
                0 => 1.0,
                1 => 3f64.sqrt(),
                _ => ((2.0 * m as f64 + 1.0) / (2.0 * m as f64)).sqrt(),
            })
            .collect();
        let u = Functional::potential(&field, degree, order, &rows);
        let du = [Axis::X, Axis::Y, Axis::Z].map(|i| u.derive(i, &rows, degree));
        let ddu = [
            (0, Axis::X),
            (0, Axis::Y),
            (0, Axis::Z),
            (1, Axis::Y),
            (1, Axis::Z),
            (2, Axis::Z),
        ]
        .map(|(i, j)| du[i].derive(j, &rows, degree + 1));
        let acceleration = Contraction::new([&du[0], &du[1], &du[2]], rows.through(degree + 1));
        let gradient =
            Contraction::new([&ddu[0], &ddu[1], &ddu[2], &ddu[3], &ddu[4], &ddu[5]], len);
        Ok(Self {
            field,
            degree,
            order,
            rows,
            a,
            b,
            diag,
            acceleration,
            gradient,
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

    /// Acceleration of degrees 2…degree, orders 0…order, km/s², at the Earth-fixed
    /// position `r` (km).
    pub fn acceleration(&self, r: &Vector3<f64>) -> Vector3<f64> {
        self.evaluate(r, false).0
    }

    /// ∂a/∂r (1/s²) in the Earth-fixed frame, analytic.
    pub fn gradient(&self, r: &Vector3<f64>) -> Matrix3<f64> {
        self.acceleration_and_gradient(r).1
    }

    /// The acceleration (km/s²) and its gradient (1/s²) from one recursion.
    pub fn acceleration_and_gradient(&self, r: &Vector3<f64>) -> (Vector3<f64>, Matrix3<f64>) {
        let (a, g) = self.evaluate(r, true);
        (a, g.unwrap_or_else(Matrix3::zeros))
    }

    /// The recursion and contractions, on AVX2 where the CPU has it (same results: no
    /// fused operations, same order of additions).
    fn evaluate(&self, r: &Vector3<f64>, gradient: bool) -> (Vector3<f64>, Option<Matrix3<f64>>) {
        SCRATCH.with(|s| {
            let (v, w) = &mut *s.borrow_mut();
            let len = self.gradient.len();
            if v.len() < len {
                v.resize(len, 0.0);
                w.resize(len, 0.0);
            }
            #[cfg(target_arch = "x86_64")]
            if std::arch::is_x86_feature_detected!("avx2") {
                // SAFETY: the CPU has AVX2, checked just above.
                return unsafe { self.evaluate_avx2(r, gradient, v, w) };
            }
            self.evaluate_in(r, gradient, v, w)
        })
    }

    #[cfg(target_arch = "x86_64")]
    #[target_feature(enable = "avx2")]
    fn evaluate_avx2(
        &self,
        r: &Vector3<f64>,
        gradient: bool,
        v: &mut [f64],
        w: &mut [f64],
    ) -> (Vector3<f64>, Option<Matrix3<f64>>) {
        self.evaluate_in(r, gradient, v, w)
    }

    #[inline(always)]
    fn evaluate_in(
        &self,
        r: &Vector3<f64>,
        gradient: bool,
        v: &mut [f64],
        w: &mut [f64],
    ) -> (Vector3<f64>, Option<Matrix3<f64>>) {
        let re = self.field.radius_km;
        let top = if gradient {
            self.degree + 2
        } else {
            self.degree + 1
        };
        self.solid_harmonics(r, top, v, w);
        // The contraction reads whole blocks: the entries past the recursion's must be
        // zero (the weights there are, but a stale NaN times zero is not).
        let filled = self.rows.through(top);
        let read = if gradient {
            self.gradient.len()
        } else {
            self.acceleration.len()
        };
        v[filled..read].fill(0.0);
        w[filled..read].fill(0.0);
        let k = self.field.gm_km3_s2 / (re * re);
        let a = self.acceleration.apply(v, w);
        let acc = Vector3::new(a[0], a[1], a[2]) * k;
        if !gradient {
            return (acc, None);
        }
        let [xx, xy, xz, yy, yz, zz] = self.gradient.apply(v, w).map(|g| g * k / re);
        (acc, Some(Matrix3::new(xx, xy, xz, xy, yy, yz, xz, yz, zz)))
    }

    /// V̄ₙₘ, W̄ₙₘ at Earth-fixed `r` (km) for rows n ≤ `top`, into `v`, `w`.
    #[inline(always)]
    fn solid_harmonics(&self, r: &Vector3<f64>, top: usize, v: &mut [f64], w: &mut [f64]) {
        let rows = &self.rows;
        let re = self.field.radius_km;
        let r2 = r.norm_squared();
        let rho = re / r2;
        let (x0, y0, z0, rr) = (r[0] * rho, r[1] * rho, r[2] * rho, re * rho);
        v[0] = re / r2.sqrt();
        w[0] = 0.0;
        for n in 1..=top {
            let (s2, s1, s0, end) = (
                rows.start[n.saturating_sub(2)],
                rows.start[n - 1],
                rows.start[n],
                rows.start[n + 1],
            );
            let (v_lo, v_row) = v[..end].split_at_mut(s0);
            let (w_lo, w_row) = w[..end].split_at_mut(s0);
            let (vp, wp) = (&v_lo[s1..], &w_lo[s1..]);
            let (a, b) = (&self.a[s0..end], &self.b[s0..end]);
            // Orders below n − 1: the three-term recursion, independent across orders.
            let three = if n >= 2 { s1 - s2 } else { 0 };
            let (vpp, wpp) = (&v_lo[s2..s2 + three], &w_lo[s2..s2 + three]);
            for m in 0..three {
                let (az, br) = (a[m] * z0, b[m] * rr);
                v_row[m] = az * vp[m] - br * vpp[m];
                w_row[m] = az * wp[m] - br * wpp[m];
            }
            // Order n − 1 (no degree n − 2 term) and the diagonal, when held.
            let width = rows.width(n);
            if n - 1 < width {
                let az = a[n - 1] * z0;
                v_row[n - 1] = az * vp[n - 1];
                w_row[n - 1] = az * wp[n - 1];
            }
            if n < width {
                let d = self.diag[n];
                v_row[n] = d * (x0 * vp[n - 1] - y0 * wp[n - 1]);
                w_row[n] = d * (x0 * wp[n - 1] + y0 * vp[n - 1]);
            }
        }
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

    #[test]
    fn the_vectorized_path_gives_the_portable_paths_bits() {
        // Results must not depend on the machine's SIMD width: the AVX2 path (taken here
        // when the CPU has it) against the portable one, bit for bit, acceleration and
        // gradient, at points from LEO to GEO.
        let h = Harmonics::new(GravityField::egm2008().unwrap(), 70, 70).unwrap();
        let len = h.gradient.len();
        let (mut v, mut w) = (vec![0.0; len], vec![0.0; len]);
        for k in 0..50 {
            let a = k as f64 * 0.7;
            let rn = 6700.0 + 700.0 * k as f64;
            let r = Vector3::new(
                rn * a.cos() * 0.6,
                rn * a.sin() * 0.6,
                rn * 0.8 * (0.3 * a).cos(),
            );
            let portable = h.evaluate_in(&r, true, &mut v, &mut w);
            let dispatched = h.evaluate(&r, true);
            assert_eq!(portable, dispatched, "at {r}");
        }
    }
}
