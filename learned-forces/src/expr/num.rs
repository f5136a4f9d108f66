//! Numbers an expression can be evaluated in: plain `f64`, or [`Dual`] — a value with
//! its derivatives with respect to the six state components, so that the partials of a
//! learned force come out of the same evaluation, exactly.

// One implementation serves the library and every generated plugin: the runtime.
pub use crate::codegen::runtime::{add3, cross3, dot3, logistic, norm3, scale3, sub3, Dual, Num};

/// A 3-vector of numbers.
pub type V3<N> = [N; 3];

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
