//! Close-approach screening between two trajectories (covariance-free: a screening aid).
//!
//! Each trajectory is a list of states at known times; between them, positions and
//! velocities come from cubic Hermite interpolation on (r, v) (for a LEO orbit sampled
//! every 20 s the interpolation error is a few mm). The search: the radial-shell filter
//! (the published perigee/apogee filter, applied to the sampled radii), then local minima
//! of the sampled range, then the root of the range rate Δr·Δv by bisection on the
//! interpolant, to 1 µs.

use crate::frames::eci_to_rtn;
use crate::state::StateVector;
use nalgebra::Vector3;

/// States of one object at increasing times (s on a shared axis).
#[derive(Clone, Debug, PartialEq)]
pub struct Track {
    /// Sample times, s, strictly increasing.
    pub times: Vec<f64>,
    /// ECI states at those times, km and km/s.
    pub states: Vec<StateVector>,
}

/// One close approach.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Approach {
    /// Time of closest approach, s on the axis.
    pub tca_s: f64,
    /// Miss distance, km.
    pub miss_km: f64,
    /// Relative speed at TCA, km/s.
    pub relative_speed_km_s: f64,
    /// Secondary minus primary position at TCA in the primary's RTN frame, km.
    pub miss_rtn_km: Vector3<f64>,
}

impl Track {
    /// Smallest and largest radius over the samples, km.
    pub fn radius_range(&self) -> (f64, f64) {
        let mut lo = f64::INFINITY;
        let mut hi: f64 = 0.0;
        for x in &self.states {
            let r = (x[0] * x[0] + x[1] * x[1] + x[2] * x[2]).sqrt();
            lo = lo.min(r);
            hi = hi.max(r);
        }
        (lo, hi)
    }

    /// Interpolated position and velocity at `t` (inside the sampled span).
    pub fn at(&self, t: f64) -> (Vector3<f64>, Vector3<f64>) {
        let n = self.times.len();
        let i = self.times.partition_point(|s| *s <= t).clamp(1, n - 1) - 1;
        let (t0, t1) = (self.times[i], self.times[i + 1]);
        let h = t1 - t0;
        let s = ((t - t0) / h).clamp(0.0, 1.0);
        let (x0, x1) = (&self.states[i], &self.states[i + 1]);
        let p = |x: &StateVector| Vector3::new(x[0], x[1], x[2]);
        let v = |x: &StateVector| Vector3::new(x[3], x[4], x[5]);
        let (s2, s3) = (s * s, s * s * s);
        let h00 = 2.0 * s3 - 3.0 * s2 + 1.0;
        let h10 = s3 - 2.0 * s2 + s;
        let h01 = -2.0 * s3 + 3.0 * s2;
        let h11 = s3 - s2;
        let pos = p(x0) * h00 + v(x0) * (h10 * h) + p(x1) * h01 + v(x1) * (h11 * h);
        // Derivatives of the Hermite basis, divided by h.
        let d00 = (6.0 * s2 - 6.0 * s) / h;
        let d10 = 3.0 * s2 - 4.0 * s + 1.0;
        let d01 = (-6.0 * s2 + 6.0 * s) / h;
        let d11 = 3.0 * s2 - 2.0 * s;
        let vel = p(x0) * d00 + v(x0) * d10 + p(x1) * d01 + v(x1) * d11;
        (pos, vel)
    }
}

/// Whether the radial shells of two tracks come within `threshold_km` of each other
/// (if not, no approach below the threshold is possible).
pub fn shells_overlap(a: &Track, b: &Track, threshold_km: f64) -> bool {
    let (alo, ahi) = a.radius_range();
    let (blo, bhi) = b.radius_range();
    !(alo > bhi + threshold_km || blo > ahi + threshold_km)
}

/// Every close approach below `threshold_km` between `primary` and `secondary`, which
/// must be sampled at the same times.
pub fn approaches(primary: &Track, secondary: &Track, threshold_km: f64) -> Vec<Approach> {
    let n = primary.times.len().min(secondary.times.len());
    if n < 3 || !shells_overlap(primary, secondary, threshold_km) {
        return Vec::new();
    }
    let range = |k: usize| {
        let (a, b) = (&primary.states[k], &secondary.states[k]);
        ((b[0] - a[0]).powi(2) + (b[1] - a[1]).powi(2) + (b[2] - a[2]).powi(2)).sqrt()
    };
    let rel_speed = |k: usize| {
        let (a, b) = (&primary.states[k], &secondary.states[k]);
        ((b[3] - a[3]).powi(2) + (b[4] - a[4]).powi(2) + (b[5] - a[5]).powi(2)).sqrt()
    };
    let rate = |t: f64| {
        let (r1, v1) = primary.at(t);
        let (r2, v2) = secondary.at(t);
        (r2 - r1).dot(&(v2 - v1))
    };
    let mut out = Vec::new();
    let mut prev = range(0);
    let mut cur = range(1);
    for k in 1..n - 1 {
        let next = range(k + 1);
        let step = primary.times[k + 1] - primary.times[k - 1];
        // A minimum between samples can be far below the sampled ones: allow the
        // relative motion over the bracket.
        let margin = rel_speed(k) * step;
        if cur <= prev && cur <= next && cur < threshold_km + margin {
            let (mut lo, mut hi) = (primary.times[k - 1], primary.times[k + 1]);
            let (flo, fhi) = (rate(lo), rate(hi));
            if flo <= 0.0 && fhi >= 0.0 {
                for _ in 0..80 {
                    if hi - lo < 1e-6 {
                        break;
                    }
                    let mid = 0.5 * (lo + hi);
                    if rate(mid) < 0.0 {
                        lo = mid;
                    } else {
                        hi = mid;
                    }
                }
                let tca = 0.5 * (lo + hi);
                let (r1, v1) = primary.at(tca);
                let (r2, v2) = secondary.at(tca);
                let d = r2 - r1;
                let miss = d.norm();
                let already = out
                    .last()
                    .is_some_and(|a: &Approach| (a.tca_s - tca).abs() < 1e-3);
                if miss <= threshold_km && !already {
                    out.push(Approach {
                        tca_s: tca,
                        miss_km: miss,
                        relative_speed_km_s: (v2 - v1).norm(),
                        miss_rtn_km: eci_to_rtn(&r1, &v1).map(|m| m * d).unwrap_or(d),
                    });
                }
            }
        }
        prev = cur;
        cur = next;
    }
    out
}
