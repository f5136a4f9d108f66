//! The force interface and the force model (an ordered set of forces).
//!
//! A [`Force`] answers one question: at time `t_s` (SI seconds, TAI, from the model's
//! reference epoch) and ECI state `x` (km, km/s), what acceleration (km/s², ECI) does
//! it exert? Everything the propagator integrates — gravity, drag, learned forces,
//! native plugins — goes through this trait.

pub mod drag;
pub mod field;
pub mod maneuver;
pub mod srp;
pub mod third_body;
pub mod two_body;
pub mod zonal;

use crate::state::StateVector;
use maneuver::Impulse;
use nalgebra::{Matrix3x6, Vector3};

/// The integration segment a force is being evaluated in: the propagator splits the
/// integration at every discontinuity and at every root of a switching function, so a
/// force that switches at an epoch or at a boundary in space can tell which side of it a
/// stage on the boundary belongs to.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Segment {
    /// Segment start, s on the time axis.
    pub start_s: f64,
    /// Segment end, s on the time axis.
    pub end_s: f64,
    /// The side of each of the force's own switching functions (see [`Force::switching`])
    /// held over the segment: bit i set when function i is ≥ 0. `None` when the caller
    /// does not track them; the force then decides from the geometry.
    pub sides: Option<u64>,
}

impl Segment {
    /// The whole time axis, no sides held.
    pub const UNBOUNDED: Segment = Segment {
        start_s: f64::NEG_INFINITY,
        end_s: f64::INFINITY,
        sides: None,
    };

    /// The middle of the segment: a force that switches only at segment boundaries is on
    /// for the whole segment exactly when it is on here.
    pub fn mid_s(&self) -> f64 {
        0.5 * (self.start_s + self.end_s)
    }
}

/// A force that failed to evaluate (a plugin status, a non-finite result, a density
/// model asked about an altitude it cannot answer for). Never silently a zero.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("force `{force}` failed at t = {t_s} s: {reason}")]
pub struct ForceError {
    /// The force's name.
    pub force: String,
    /// Seconds from the model's reference epoch.
    pub t_s: f64,
    /// What went wrong.
    pub reason: String,
}

/// One term of the dynamics.
///
/// Implementations must be pure functions of `(t_s, x)` (no hidden state), so that
/// they can be called from several threads and in any order.
pub trait Force: Send + Sync {
    /// A short name for messages and reports (`two_body`, `zonal_j2_j6`, `drag`, …).
    fn name(&self) -> &str;

    /// Acceleration in ECI, km/s², at `t_s` seconds (TAI) from the model's reference
    /// epoch and state `x` (km, km/s, ECI).
    fn acceleration(&self, t_s: f64, x: &StateVector) -> Result<Vector3<f64>, ForceError>;

    /// Partials of the acceleration with respect to the state, ∂a/∂(r, v):
    /// columns 0–2 in 1/s², columns 3–5 in 1/s.
    ///
    /// The default is a central difference with steps scaled to the state (1e-4 km in
    /// position and 1e-7 km/s in velocity at LEO scale); forces for which the analytic
    /// form is cheap override it.
    fn partials(&self, t_s: f64, x: &StateVector) -> Result<Matrix3x6<f64>, ForceError> {
        central_difference_partials(self, t_s, x)
    }

    /// Whether the acceleration depends on velocity (drag does, gravity does not);
    /// lets variational equations skip work.
    fn depends_on_velocity(&self) -> bool {
        true
    }

    /// Acceleration when the propagator knows the integration segment; forces with
    /// discontinuities override it, the rest keep this default.
    fn acceleration_in(
        &self,
        t_s: f64,
        x: &StateVector,
        _segment: Segment,
    ) -> Result<Vector3<f64>, ForceError> {
        self.acceleration(t_s, x)
    }

    /// Epochs (s on the time axis) where the force jumps; the integrator stops there.
    fn discontinuities_s(&self) -> Vec<f64> {
        Vec::new()
    }

    /// Switching functions: functions of `(t_s, x)` whose sign changes where the force
    /// stops being smooth along the orbit (a shadow boundary, say). Appends one value per
    /// function to `out`, always the same number in the same order. The driver ends a step
    /// at every sign change, so that no step straddles a kink: an adaptive step across one
    /// keeps the kink's error (2.7 m a day at the default tolerance for a conical shadow).
    fn switching(&self, _t_s: f64, _x: &StateVector, _out: &mut Vec<f64>) {}

    /// Which overall scale of this force a fit may estimate, if any (drag's and SRP's):
    /// the fit finds the force by this, never by its name, which a plugin could share.
    fn scale(&self) -> Option<ScaleKind> {
        None
    }
}

/// A force's overall multiplier a fit can estimate.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum ScaleKind {
    /// Atmospheric drag (`drag_scale`).
    Drag,
    /// Solar radiation pressure (`srp_scale`).
    Srp,
}

/// Central-difference ∂a/∂x of any force; steps relative to |r| and |v|.
pub fn central_difference_partials<F: Force + ?Sized>(
    force: &F,
    t_s: f64,
    x: &StateVector,
) -> Result<Matrix3x6<f64>, ForceError> {
    let rn = (x[0] * x[0] + x[1] * x[1] + x[2] * x[2]).sqrt().max(1.0);
    let vn = (x[3] * x[3] + x[4] * x[4] + x[5] * x[5]).sqrt().max(1e-3);
    let mut out = Matrix3x6::zeros();
    for j in 0..6 {
        let h = if j < 3 { 1.5e-8 * rn } else { 1.5e-8 * vn };
        let mut xp = *x;
        let mut xm = *x;
        xp[j] += h;
        xm[j] -= h;
        let d = (force.acceleration(t_s, &xp)? - force.acceleration(t_s, &xm)?) / (2.0 * h);
        out.set_column(j, &d);
    }
    Ok(out)
}

/// Checks a force's output: a non-finite acceleration is an error naming the force.
/// Inlined with the error built out of line: it sits on every call of some forces.
#[inline]
pub fn finite_or_error(name: &str, t_s: f64, a: Vector3<f64>) -> Result<Vector3<f64>, ForceError> {
    if crate::plugin::all_finite(a.as_slice()) {
        Ok(a)
    } else {
        Err(non_finite_acceleration(name, t_s, a))
    }
}

#[cold]
#[inline(never)]
fn non_finite_acceleration(name: &str, t_s: f64, a: Vector3<f64>) -> ForceError {
    ForceError {
        force: name.to_string(),
        t_s,
        reason: format!("non-finite acceleration {a:?}"),
    }
}

/// The largest acceleration any force may return, km/s²: about 100 g, far beyond every
/// force on an orbiting object (gravity at the surface is 0.0098 km/s²). Larger values
/// are a broken force, not physics.
pub const MAX_PLAUSIBLE_KM_S2: f64 = 1.0;

/// Whether an acceleration is finite and within [`MAX_PLAUSIBLE_KM_S2`].
#[inline(always)]
pub fn plausible(a: &Vector3<f64>) -> bool {
    // NaN fails the comparison.
    a.norm_squared() <= MAX_PLAUSIBLE_KM_S2 * MAX_PLAUSIBLE_KM_S2
}

#[cold]
#[inline(never)]
fn implausible(name: &str, t_s: f64, a: Vector3<f64>) -> ForceError {
    if !crate::plugin::all_finite(a.as_slice()) {
        return non_finite_acceleration(name, t_s, a);
    }
    ForceError {
        force: name.to_string(),
        t_s,
        reason: format!(
            "returned |a| = {:.3e} km/s², beyond any physical acceleration (> {MAX_PLAUSIBLE_KM_S2} km/s²): the force is broken",
            a.norm()
        ),
    }
}

/// An ordered set of forces; the acceleration is their sum, added in order (so results
/// do not depend on anything but the list).
///
/// Impulsive maneuvers are part of the model too, though not forces: the propagator
/// applies them exactly at their epochs.
#[derive(Default)]
pub struct ForceModel {
    forces: Vec<Box<dyn Force>>,
    /// Index of each force's first switching function in the model's list.
    switch_offsets: Vec<usize>,
    /// How many switching functions the forces have in all.
    n_switching: usize,
    impulses: Vec<Impulse>,
}

impl ForceModel {
    /// An empty model (no acceleration at all).
    pub fn new() -> Self {
        Self::default()
    }

    /// Adds an impulsive maneuver.
    pub fn push_impulse(&mut self, impulse: Impulse) {
        self.impulses.push(impulse);
        self.impulses.sort_by(|a, b| a.t_s.total_cmp(&b.t_s));
    }

    /// The impulsive maneuvers, in time order.
    pub fn impulses(&self) -> &[Impulse] {
        &self.impulses
    }

    /// Every epoch where the dynamics jump (impulses and force discontinuities),
    /// sorted, without repeats.
    pub fn discontinuities_s(&self) -> Vec<f64> {
        let mut v: Vec<f64> = self.impulses.iter().map(|i| i.t_s).collect();
        for f in &self.forces {
            v.extend(f.discontinuities_s());
        }
        v.retain(|t| t.is_finite());
        v.sort_by(|a, b| a.total_cmp(b));
        v.dedup();
        v
    }

    /// Every force's switching functions at `(t_s, x)`, in force order, into `out`
    /// (cleared first); see [`Force::switching`].
    pub fn switching(&self, t_s: f64, x: &StateVector, out: &mut Vec<f64>) {
        out.clear();
        for f in &self.forces {
            f.switching(t_s, x, out);
        }
    }

    /// How many switching functions the model has (the length of
    /// [`ForceModel::switching`]'s output).
    pub fn n_switching(&self) -> usize {
        self.n_switching
    }

    /// The segment as force `k` sees it: the held sides shifted to its own functions
    /// (none held when the model has more than 64 functions).
    pub fn segment_for(&self, k: usize, segment: Segment) -> Segment {
        let sides = match (segment.sides, self.switch_offsets.get(k)) {
            (Some(bits), Some(&o)) if self.n_switching <= 64 => Some(bits >> o),
            _ => None,
        };
        Segment { sides, ..segment }
    }

    /// Appends a force.
    pub fn push(&mut self, force: Box<dyn Force>) {
        // The count is fixed by the trait's contract; any state tells it.
        let mut probe = Vec::new();
        force.switching(
            0.0,
            &StateVector::new(7000.0, 0.0, 0.0, 0.0, 7.5, 0.0),
            &mut probe,
        );
        self.switch_offsets.push(self.n_switching);
        self.n_switching += probe.len();
        self.forces.push(force);
    }

    /// Builder form of [`ForceModel::push`].
    pub fn with(mut self, force: impl Force + 'static) -> Self {
        self.push(Box::new(force));
        self
    }

    /// The forces, in order.
    pub fn forces(&self) -> &[Box<dyn Force>] {
        &self.forces
    }

    /// The names of the forces, in order.
    pub fn names(&self) -> Vec<String> {
        self.forces.iter().map(|f| f.name().to_string()).collect()
    }

    /// Total acceleration, km/s² ECI; the first failing force's error otherwise. A total
    /// that is not finite or beyond [`MAX_PLAUSIBLE_KM_S2`] is an error naming the force
    /// that produced it (a plugin returning 1e300 used to surface as a tolerance failure
    /// nobody could trace).
    pub fn acceleration(&self, t_s: f64, x: &StateVector) -> Result<Vector3<f64>, ForceError> {
        let mut a = Vector3::zeros();
        for f in &self.forces {
            a += f.acceleration(t_s, x)?;
        }
        if plausible(&a) {
            Ok(a)
        } else {
            Err(self.culprit(t_s, x, a, None))
        }
    }

    /// The force whose output makes the total implausible (cold path).
    #[cold]
    #[inline(never)]
    fn culprit(
        &self,
        t_s: f64,
        x: &StateVector,
        total: Vector3<f64>,
        segment: Option<Segment>,
    ) -> ForceError {
        for (k, f) in self.forces.iter().enumerate() {
            let a = match segment {
                Some(s) => f.acceleration_in(t_s, x, self.segment_for(k, s)),
                None => f.acceleration(t_s, x),
            };
            if let Ok(a) = a {
                if !plausible(&a) {
                    return implausible(f.name(), t_s, a);
                }
            }
        }
        implausible("force model", t_s, total)
    }

    /// Total acceleration inside an integration segment (see [`Segment`]).
    pub fn acceleration_in(
        &self,
        t_s: f64,
        x: &StateVector,
        segment: Segment,
    ) -> Result<Vector3<f64>, ForceError> {
        let mut a = Vector3::zeros();
        for (k, f) in self.forces.iter().enumerate() {
            a += f.acceleration_in(t_s, x, self.segment_for(k, segment))?;
        }
        if plausible(&a) {
            Ok(a)
        } else {
            Err(self.culprit(t_s, x, a, Some(segment)))
        }
    }

    /// Sum of the forces' partials ∂a/∂(r, v).
    pub fn partials(&self, t_s: f64, x: &StateVector) -> Result<Matrix3x6<f64>, ForceError> {
        let mut p = Matrix3x6::zeros();
        for f in &self.forces {
            p += f.partials(t_s, x)?;
        }
        Ok(p)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::force::two_body::TwoBody;

    #[test]
    fn central_difference_matches_analytic_two_body_partials() {
        let f = TwoBody {
            mu_km3_s2: 398_600.441_8,
        };
        let x = StateVector::new(5000.0, -4000.0, 3000.0, 1.0, 6.0, -3.0);
        let analytic = f.partials(0.0, &x).unwrap();
        let numeric = central_difference_partials(&f, 0.0, &x).unwrap();
        let scale = analytic.abs().max();
        assert!(
            (analytic - numeric).abs().max() < 1e-7 * scale,
            "{analytic} vs {numeric}"
        );
    }

    #[test]
    fn a_failing_force_stops_the_sum() {
        struct Broken;
        impl Force for Broken {
            fn name(&self) -> &str {
                "broken"
            }
            fn acceleration(&self, t_s: f64, _x: &StateVector) -> Result<Vector3<f64>, ForceError> {
                finite_or_error("broken", t_s, Vector3::new(f64::NAN, 0.0, 0.0))
            }
        }
        let m = ForceModel::new()
            .with(TwoBody { mu_km3_s2: 1.0 })
            .with(Broken);
        let e = m
            .acceleration(3.0, &StateVector::new(1.0, 0.0, 0.0, 0.0, 1.0, 0.0))
            .unwrap_err();
        assert_eq!(e.force, "broken");
        assert!(e.to_string().contains("non-finite"));
    }
}
