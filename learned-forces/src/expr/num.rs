//! Numbers an expression can be evaluated in: plain `f64`, or [`Dual`] — a value with
//! its derivatives with respect to the six state components, so that the partials of a
//! learned force come out of the same evaluation, exactly.

use std::ops::{Add, Div, Mul, Neg, Sub};

/// The arithmetic an expression needs.
pub trait Num:
    Copy
    + Add<Output = Self>
    + Sub<Output = Self>
    + Mul<Output = Self>
    + Div<Output = Self>
    + Neg<Output = Self>
{
    /// A constant (zero derivatives).
    fn cst(v: f64) -> Self;
    /// The value part.
    fn val(&self) -> f64;
    /// sin.
    fn sin(self) -> Self;
    /// cos.
    fn cos(self) -> Self;
    /// exp.
    fn exp(self) -> Self;
    /// sqrt.
    fn sqrt(self) -> Self;
    /// Integer power.
    fn powi(self, n: i32) -> Self;
    /// atan2(self, x).
    fn atan2(self, x: Self) -> Self;
}

impl Num for f64 {
    fn cst(v: f64) -> Self {
        v
    }
    fn val(&self) -> f64 {
        *self
    }
    fn sin(self) -> Self {
        f64::sin(self)
    }
    fn cos(self) -> Self {
        f64::cos(self)
    }
    fn exp(self) -> Self {
        f64::exp(self)
    }
    fn sqrt(self) -> Self {
        f64::sqrt(self)
    }
    fn powi(self, n: i32) -> Self {
        f64::powi(self, n)
    }
    fn atan2(self, x: Self) -> Self {
        f64::atan2(self, x)
    }
}

/// A value and its gradient with respect to (x, y, z, vx, vy, vz).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Dual {
    /// Value.
    pub v: f64,
    /// ∂/∂(r, v).
    pub d: [f64; 6],
}

impl Dual {
    /// The k-th state component with unit derivative.
    pub fn var(v: f64, k: usize) -> Dual {
        let mut d = [0.0; 6];
        d[k] = 1.0;
        Dual { v, d }
    }

    fn chain(self, f: f64, df: f64) -> Dual {
        let mut d = self.d;
        for x in &mut d {
            *x *= df;
        }
        Dual { v: f, d }
    }
}

impl Add for Dual {
    type Output = Dual;
    fn add(self, o: Dual) -> Dual {
        let mut d = self.d;
        for (a, b) in d.iter_mut().zip(o.d) {
            *a += b;
        }
        Dual { v: self.v + o.v, d }
    }
}

impl Sub for Dual {
    type Output = Dual;
    fn sub(self, o: Dual) -> Dual {
        let mut d = self.d;
        for (a, b) in d.iter_mut().zip(o.d) {
            *a -= b;
        }
        Dual { v: self.v - o.v, d }
    }
}

impl Mul for Dual {
    type Output = Dual;
    fn mul(self, o: Dual) -> Dual {
        let mut d = [0.0; 6];
        for (k, x) in d.iter_mut().enumerate() {
            *x = self.d[k] * o.v + self.v * o.d[k];
        }
        Dual { v: self.v * o.v, d }
    }
}

impl Div for Dual {
    type Output = Dual;
    fn div(self, o: Dual) -> Dual {
        let inv = 1.0 / o.v;
        let mut d = [0.0; 6];
        for (k, x) in d.iter_mut().enumerate() {
            *x = (self.d[k] - self.v * inv * o.d[k]) * inv;
        }
        Dual { v: self.v * inv, d }
    }
}

impl Neg for Dual {
    type Output = Dual;
    fn neg(self) -> Dual {
        self.chain(-self.v, -1.0)
    }
}

impl Num for Dual {
    fn cst(v: f64) -> Self {
        Dual { v, d: [0.0; 6] }
    }
    fn val(&self) -> f64 {
        self.v
    }
    fn sin(self) -> Self {
        self.chain(self.v.sin(), self.v.cos())
    }
    fn cos(self) -> Self {
        self.chain(self.v.cos(), -self.v.sin())
    }
    fn exp(self) -> Self {
        let e = self.v.exp();
        self.chain(e, e)
    }
    fn sqrt(self) -> Self {
        let s = self.v.sqrt();
        self.chain(s, 0.5 / s)
    }
    fn powi(self, n: i32) -> Self {
        self.chain(self.v.powi(n), n as f64 * self.v.powi(n - 1))
    }
    fn atan2(self, x: Self) -> Self {
        // d atan2(y, x) = (x dy − y dx)/(x² + y²)
        let r2 = self.v * self.v + x.v * x.v;
        let mut d = [0.0; 6];
        for (k, o) in d.iter_mut().enumerate() {
            *o = (x.v * self.d[k] - self.v * x.d[k]) / r2;
        }
        Dual {
            v: self.v.atan2(x.v),
            d,
        }
    }
}

/// A 3-vector of numbers.
pub type V3<N> = [N; 3];

/// Vector helpers.
pub fn add3<N: Num>(a: V3<N>, b: V3<N>) -> V3<N> {
    [a[0] + b[0], a[1] + b[1], a[2] + b[2]]
}
/// a − b.
pub fn sub3<N: Num>(a: V3<N>, b: V3<N>) -> V3<N> {
    [a[0] - b[0], a[1] - b[1], a[2] - b[2]]
}
/// s · a.
pub fn scale3<N: Num>(s: N, a: V3<N>) -> V3<N> {
    [s * a[0], s * a[1], s * a[2]]
}
/// a · b.
pub fn dot3<N: Num>(a: V3<N>, b: V3<N>) -> N {
    a[0] * b[0] + a[1] * b[1] + a[2] * b[2]
}
/// a × b.
pub fn cross3<N: Num>(a: V3<N>, b: V3<N>) -> V3<N> {
    [
        a[1] * b[2] - a[2] * b[1],
        a[2] * b[0] - a[0] * b[2],
        a[0] * b[1] - a[1] * b[0],
    ]
}
/// |a|.
pub fn norm3<N: Num>(a: V3<N>) -> N {
    dot3(a, a).sqrt()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn dual_derivatives_match_finite_differences() {
        let f = |x: Dual, y: Dual| ((x * y).sin() + (x / y).exp()).sqrt() * y.atan2(x) - x.powi(3);
        let (x0, y0) = (0.7, 1.3);
        let r = f(Dual::var(x0, 0), Dual::var(y0, 1));
        let g = |x: f64, y: f64| f(Dual::cst(x), Dual::cst(y)).v;
        let h = 1e-6;
        let dx = (g(x0 + h, y0) - g(x0 - h, y0)) / (2.0 * h);
        let dy = (g(x0, y0 + h) - g(x0, y0 - h)) / (2.0 * h);
        assert!(
            (r.d[0] - dx).abs() < 1e-8 && (r.d[1] - dy).abs() < 1e-8,
            "{r:?} vs {dx} {dy}"
        );
    }
}
