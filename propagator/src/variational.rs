//! Variational equations: the state transition matrix Φ(t, t0) = ∂x(t)/∂x(t0) and the
//! sensitivities S(t) = ∂x(t)/∂p to force parameters, integrated with the state.
//!
//! With A = [[0, I], [∂a/∂r, ∂a/∂v]]: Φ′ = A Φ, Φ(t0) = I; S′ = A S + [0; ∂a/∂p], S(t0) = 0.
//! The system vector is `[x (6), Φ column-major (36), S column-major (6 n_p)]`.

use crate::force::{ForceError, ForceModel, Segment};
use crate::integrator::OdeSystem;
use crate::propagation::{
    drive, Observer, Options, PropagationError, Request, SegmentAware, Termination,
};
use crate::state::StateVector;
use nalgebra::{DMatrix, Matrix3x6, Matrix6, Vector3};

/// Dynamics with parameters: what the variational equations need.
pub trait Dynamics {
    /// The force model underneath (for its discontinuities and impulses).
    fn model(&self) -> &ForceModel;
    /// Number of parameters p.
    fn n_params(&self) -> usize;
    /// Acceleration, km/s², ECI.
    fn acceleration(
        &self,
        t_s: f64,
        x: &StateVector,
        segment: Segment,
    ) -> Result<Vector3<f64>, ForceError>;
    /// ∂a/∂(r, v) (1/s², 1/s).
    fn state_partials(
        &self,
        t_s: f64,
        x: &StateVector,
        segment: Segment,
    ) -> Result<Matrix3x6<f64>, ForceError>;
    /// ∂a/∂p_k into `out[k]`, km/s² per unit of p_k.
    fn param_partials(
        &self,
        t_s: f64,
        x: &StateVector,
        segment: Segment,
        out: &mut [Vector3<f64>],
    ) -> Result<(), ForceError>;
}

/// A plain force model has no parameters.
impl Dynamics for ForceModel {
    fn model(&self) -> &ForceModel {
        self
    }
    fn n_params(&self) -> usize {
        0
    }
    fn acceleration(
        &self,
        t_s: f64,
        x: &StateVector,
        segment: Segment,
    ) -> Result<Vector3<f64>, ForceError> {
        self.acceleration_in(t_s, x, segment)
    }
    fn state_partials(
        &self,
        t_s: f64,
        x: &StateVector,
        _segment: Segment,
    ) -> Result<Matrix3x6<f64>, ForceError> {
        self.partials(t_s, x)
    }
    fn param_partials(
        &self,
        _t: f64,
        _x: &StateVector,
        _s: Segment,
        _out: &mut [Vector3<f64>],
    ) -> Result<(), ForceError> {
        Ok(())
    }
}

/// The state plus its variational equations, as one ODE system.
pub struct VariationalSystem<'a, D: Dynamics + ?Sized> {
    dynamics: &'a D,
    np: usize,
    segment: Segment,
    dadp: Vec<Vector3<f64>>,
}

impl<'a, D: Dynamics + ?Sized> VariationalSystem<'a, D> {
    /// The variational system of `dynamics`.
    pub fn new(dynamics: &'a D) -> Self {
        let np = dynamics.n_params();
        Self {
            dynamics,
            np,
            segment: Segment::UNBOUNDED,
            dadp: vec![Vector3::zeros(); np],
        }
    }

    /// The initial system vector: x0, Φ = I, S = 0.
    pub fn initial(&self, x0: &StateVector) -> Vec<f64> {
        let mut y = vec![0.0; 42 + 6 * self.np];
        y[..6].copy_from_slice(x0.as_slice());
        for i in 0..6 {
            y[6 + i * 6 + i] = 1.0;
        }
        y
    }
}

impl<D: Dynamics + ?Sized> SegmentAware for VariationalSystem<'_, D> {
    fn set_segment(&mut self, segment: Segment) {
        self.segment = segment;
    }
}

impl<D: Dynamics + ?Sized> OdeSystem for VariationalSystem<'_, D> {
    fn dim(&self) -> usize {
        42 + 6 * self.np
    }

    fn rhs(&mut self, t: f64, y: &[f64], dy: &mut [f64]) -> Result<(), ForceError> {
        let x = StateVector::from_column_slice(&y[..6]);
        let a = self.dynamics.acceleration(t, &x, self.segment)?;
        let p = self.dynamics.state_partials(t, &x, self.segment)?;
        dy[..3].copy_from_slice(&y[3..6]);
        dy[3] = a[0];
        dy[4] = a[1];
        dy[5] = a[2];
        if self.np > 0 {
            self.dynamics
                .param_partials(t, &x, self.segment, &mut self.dadp)?;
        }
        // Columns of Φ, then of S: (c_r, c_v)′ = (c_v, G c_r + H c_v [+ ∂a/∂p]).
        for col in 0..(6 + self.np) {
            let o = 6 + col * 6;
            let c = &y[o..o + 6];
            dy[o..o + 3].copy_from_slice(&c[3..6]);
            for i in 0..3 {
                let mut acc = 0.0;
                for j in 0..6 {
                    acc += p[(i, j)] * c[j];
                }
                if col >= 6 {
                    acc += self.dadp[col - 6][i];
                }
                dy[o + 3 + i] = acc;
            }
        }
        Ok(())
    }
}

/// State, transition matrix and parameter sensitivities at one time.
#[derive(Clone, Debug, PartialEq)]
pub struct VariationalSample {
    /// Seconds on the time axis.
    pub t_s: f64,
    /// ECI state, km and km/s.
    pub state: StateVector,
    /// Φ(t, t0).
    pub phi: Matrix6<f64>,
    /// ∂x(t)/∂p, 6 × n_p.
    pub sensitivity: DMatrix<f64>,
}

/// Unpacks a system vector into a sample.
pub fn unpack(t_s: f64, y: &[f64], np: usize) -> VariationalSample {
    VariationalSample {
        t_s,
        state: StateVector::from_column_slice(&y[..6]),
        phi: Matrix6::from_column_slice(&y[6..42]),
        sensitivity: DMatrix::from_column_slice(6, np, &y[42..42 + 6 * np]),
    }
}

/// Propagates `x0` with its variational equations; samples at the request's output
/// times. Unless the settings say otherwise, only the state enters the step control
/// (common practice in orbit determination). A decay is an error here: a fit needs the
/// whole arc.
pub fn propagate_with_partials<D: Dynamics + ?Sized>(
    dynamics: &D,
    request: &Request,
    options: &Options,
    observer: &mut dyn Observer,
) -> Result<Vec<VariationalSample>, PropagationError> {
    let mut sys = VariationalSystem::new(dynamics);
    let y0 = sys.initial(&request.x0);
    let np = sys.np;
    let mut opts = *options;
    if opts.settings.error_dims.is_none() {
        opts.settings.error_dims = Some(6);
    }
    let raw = drive(&mut sys, dynamics.model(), request, &y0, &opts, observer)?;
    if let Termination::Decayed { t_s, floor_km } = raw.termination {
        return Err(PropagationError::BadRequest(format!(
            "the orbit decays below {floor_km} km at t = {t_s:.1} s, inside the arc"
        )));
    }
    Ok(raw.samples.iter().map(|(t, y)| unpack(*t, y, np)).collect())
}
