//! The dynamics of an orbit fit: a force model plus estimated classical parameters
//! (drag and SRP scale factors, empirical RTN accelerations).

use nalgebra::{Matrix3, Matrix3x6, Vector3};
use propagator::force::{central_difference_partials, Force, ForceError, ScaleKind, Segment};
use propagator::frames::eci_to_rtn;
use propagator::variational::Dynamics;
use propagator::{ForceModel, StateVector};

/// A parameter the fit can estimate besides the initial state.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub enum Parameter {
    /// Linear coefficient of extra term `i` (km/s² per unit of the formula).
    TermCoefficient(usize),
    /// Nonlinear constant `k<i>` of the extra terms.
    TermConstant(usize),
    /// Multiplier on the `drag` force (1 = as configured).
    DragScale,
    /// Multiplier on the `srp` force.
    SrpScale,
    /// Constant empirical acceleration along R (0), T (1) or N (2), km/s².
    EmpiricalConstant(usize),
    /// Once-per-revolution empirical acceleration ∝ cos u along R, T or N, km/s².
    EmpiricalCos(usize),
    /// Once-per-revolution empirical acceleration ∝ sin u along R, T or N, km/s².
    EmpiricalSin(usize),
}

const AXES: [&str; 3] = ["r", "t", "n"];

impl Parameter {
    /// Report name, with its unit.
    pub fn name(&self) -> String {
        match self {
            Parameter::DragScale => "drag_scale".into(),
            Parameter::SrpScale => "srp_scale".into(),
            Parameter::EmpiricalConstant(a) => format!("emp_const_{}_km_s2", AXES[*a]),
            Parameter::EmpiricalCos(a) => format!("emp_cos_{}_km_s2", AXES[*a]),
            Parameter::EmpiricalSin(a) => format!("emp_sin_{}_km_s2", AXES[*a]),
            Parameter::TermCoefficient(i) => format!("term{i}_coefficient"),
            Parameter::TermConstant(i) => format!("k{i}"),
        }
    }

    /// Value before the fit (scales 1, accelerations 0).
    pub fn initial_value(&self) -> f64 {
        match self {
            Parameter::DragScale | Parameter::SrpScale => 1.0,
            _ => 0.0,
        }
    }

    /// Expands an `--estimate` item: `drag_scale`, `srp_scale`, `emp_const_rtn`,
    /// `emp_1rev_rtn` (cos and sin terms on all three axes).
    pub fn parse_list(item: &str) -> Option<Vec<Parameter>> {
        match item {
            "drag_scale" => Some(vec![Parameter::DragScale]),
            "srp_scale" => Some(vec![Parameter::SrpScale]),
            "emp_const_rtn" => Some((0..3).map(Parameter::EmpiricalConstant).collect()),
            "emp_1rev_rtn" => Some(
                (0..3)
                    .flat_map(|a| [Parameter::EmpiricalCos(a), Parameter::EmpiricalSin(a)])
                    .collect(),
            ),
            _ => None,
        }
    }
}

/// Argument of latitude u (rad) of a state: the angle from the ascending node to r,
/// measured in the orbit plane (from the x axis for an equatorial orbit).
pub fn argument_of_latitude(x: &StateVector) -> f64 {
    let r = Vector3::new(x[0], x[1], x[2]);
    let v = Vector3::new(x[3], x[4], x[5]);
    let h = r.cross(&v).normalize();
    let node = Vector3::z().cross(&h);
    let n = if node.norm() < 1e-10 {
        Vector3::x()
    } else {
        node.normalize()
    };
    h.dot(&n.cross(&r)).atan2(n.dot(&r))
}

/// A force model with multipliers and empirical accelerations that a fit adjusts.
pub struct FitModel {
    model: ForceModel,
    /// Extra formula terms Σ c_i g_i(t, x; k) whose coefficients and constants are
    /// `TermCoefficient`/`TermConstant` parameters (the learner's refinement).
    pub extra: Option<ExtraTerms>,
    /// The estimated parameters, in order.
    pub parameters: Vec<Parameter>,
    /// Their current values.
    pub values: Vec<f64>,
    drag_index: Option<usize>,
    srp_index: Option<usize>,
}

impl FitModel {
    /// Wraps `model`; `parameters` start at their initial values. A scale of a force the
    /// model does not have is an error.
    pub fn new(model: ForceModel, parameters: Vec<Parameter>) -> Result<Self, String> {
        let find = |kind: ScaleKind| model.forces().iter().position(|f| f.scale() == Some(kind));
        let drag_index = find(ScaleKind::Drag);
        let srp_index = find(ScaleKind::Srp);
        for p in &parameters {
            match p {
                Parameter::DragScale if drag_index.is_none() => {
                    return Err("cannot estimate drag_scale: the force model has no drag".into())
                }
                Parameter::SrpScale if srp_index.is_none() => {
                    return Err("cannot estimate srp_scale: the force model has no srp".into())
                }
                _ => {}
            }
        }
        let values = parameters.iter().map(|p| p.initial_value()).collect();
        Ok(Self {
            model,
            extra: None,
            parameters,
            values,
            drag_index,
            srp_index,
        })
    }

    /// The underlying force model.
    pub fn force_model(&self) -> &ForceModel {
        &self.model
    }

    fn multiplier(&self, force_index: usize) -> f64 {
        for (p, v) in self.parameters.iter().zip(&self.values) {
            match p {
                Parameter::DragScale if Some(force_index) == self.drag_index => return *v,
                Parameter::SrpScale if Some(force_index) == self.srp_index => return *v,
                _ => {}
            }
        }
        1.0
    }

    /// The unscaled acceleration of the force at `index` (the partial with respect to its
    /// scale), seen in its own segment.
    fn scaled_force(
        &self,
        index: Option<usize>,
        t_s: f64,
        x: &StateVector,
        segment: Segment,
    ) -> Result<Vector3<f64>, ForceError> {
        let k = index.unwrap_or(0);
        self.model.forces()[k].acceleration_in(t_s, x, self.model.segment_for(k, segment))
    }

    fn has_empirical(&self) -> bool {
        self.parameters.iter().zip(&self.values).any(|(p, v)| {
            matches!(
                p,
                Parameter::EmpiricalConstant(_)
                    | Parameter::EmpiricalCos(_)
                    | Parameter::EmpiricalSin(_)
            ) && *v != 0.0
        })
    }

    /// Current coefficients and constants of the extra terms (parameters override the
    /// values stored in `extra`).
    fn extra_values(&self) -> Option<(&ExtraTerms, Vec<f64>, Vec<f64>)> {
        let e = self.extra.as_ref()?;
        let mut c = e.coefficients.clone();
        let mut k = e.constants.clone();
        for (p, v) in self.parameters.iter().zip(&self.values) {
            match p {
                Parameter::TermCoefficient(i) if *i < c.len() => c[*i] = *v,
                Parameter::TermConstant(i) if *i < k.len() => k[*i] = *v,
                _ => {}
            }
        }
        Some((e, c, k))
    }

    /// The empirical acceleration (ECI, km/s²) at state `x`.
    fn empirical(&self, x: &StateVector) -> Vector3<f64> {
        if !self.has_empirical() {
            return Vector3::zeros();
        }
        let u = argument_of_latitude(x);
        let (su, cu) = u.sin_cos();
        let mut rtn = Vector3::zeros();
        for (p, v) in self.parameters.iter().zip(&self.values) {
            match p {
                Parameter::EmpiricalConstant(a) => rtn[*a] += v,
                Parameter::EmpiricalCos(a) => rtn[*a] += v * cu,
                Parameter::EmpiricalSin(a) => rtn[*a] += v * su,
                _ => {}
            }
        }
        rtn_matrix(x).transpose() * rtn
    }
}

fn rtn_matrix(x: &StateVector) -> Matrix3<f64> {
    let r = Vector3::new(x[0], x[1], x[2]);
    let v = Vector3::new(x[3], x[4], x[5]);
    eci_to_rtn(&r, &v).unwrap_or_else(Matrix3::identity)
}

/// The empirical term alone, as a force, so its state partials come from the shared
/// central difference.
struct EmpiricalTerm<'a>(&'a FitModel);

impl Force for EmpiricalTerm<'_> {
    fn name(&self) -> &str {
        "empirical"
    }
    fn acceleration(&self, _t: f64, x: &StateVector) -> Result<Vector3<f64>, ForceError> {
        Ok(self.0.empirical(x))
    }
}

impl Dynamics for FitModel {
    fn model(&self) -> &ForceModel {
        &self.model
    }

    fn n_params(&self) -> usize {
        self.parameters.len()
    }

    fn acceleration(
        &self,
        t_s: f64,
        x: &StateVector,
        segment: Segment,
    ) -> Result<Vector3<f64>, ForceError> {
        let mut a = Vector3::zeros();
        for (i, f) in self.model.forces().iter().enumerate() {
            a +=
                f.acceleration_in(t_s, x, self.model.segment_for(i, segment))? * self.multiplier(i);
        }
        if let Some((e, c, k)) = self.extra_values() {
            a += e.acceleration(t_s, x, &c, &k);
        }
        Ok(a + self.empirical(x))
    }

    fn state_partials(
        &self,
        t_s: f64,
        x: &StateVector,
        _segment: Segment,
    ) -> Result<Matrix3x6<f64>, ForceError> {
        let mut p = Matrix3x6::zeros();
        for (i, f) in self.model.forces().iter().enumerate() {
            p += f.partials(t_s, x)? * self.multiplier(i);
        }
        if self.has_empirical() {
            p += central_difference_partials(&EmpiricalTerm(self), t_s, x)?;
        }
        if let Some((e, c, k)) = self.extra_values() {
            p += e.partials(t_s, x, &c, &k);
        }
        Ok(p)
    }

    fn param_partials(
        &self,
        t_s: f64,
        x: &StateVector,
        segment: Segment,
        out: &mut [Vector3<f64>],
    ) -> Result<(), ForceError> {
        let mut frame: Option<(Matrix3<f64>, f64, f64)> = None;
        // The extra terms' current values, resolved once for every parameter below.
        let extra = self.extra_values();
        for (k, p) in self.parameters.iter().enumerate() {
            out[k] = match p {
                Parameter::DragScale => self.scaled_force(self.drag_index, t_s, x, segment)?,
                Parameter::SrpScale => self.scaled_force(self.srp_index, t_s, x, segment)?,
                Parameter::TermCoefficient(i) => match &extra {
                    Some((e, _, kv)) => e.term(*i, t_s, x, kv),
                    None => Vector3::zeros(),
                },
                Parameter::TermConstant(j) => match &extra {
                    Some((e, c, kv)) => {
                        let h = 1e-6 * kv[*j].abs().max(1e-12);
                        let (mut kp, mut km) = (kv.clone(), kv.clone());
                        kp[*j] += h;
                        km[*j] -= h;
                        (e.acceleration(t_s, x, c, &kp) - e.acceleration(t_s, x, c, &km))
                            / (2.0 * h)
                    }
                    None => Vector3::zeros(),
                },
                Parameter::EmpiricalConstant(a)
                | Parameter::EmpiricalCos(a)
                | Parameter::EmpiricalSin(a) => {
                    let (m, cu, su) = *frame.get_or_insert_with(|| {
                        let (s, c) = argument_of_latitude(x).sin_cos();
                        (rtn_matrix(x), c, s)
                    });
                    let w = match p {
                        Parameter::EmpiricalConstant(_) => 1.0,
                        Parameter::EmpiricalCos(_) => cu,
                        _ => su,
                    };
                    m.row(*a).transpose() * w
                }
            };
        }
        Ok(())
    }
}

/// Formula terms added to a fit's dynamics: Σ c_i g_i(t, x; k).
#[derive(Clone, Debug)]
pub struct ExtraTerms {
    /// The formulas (vector-valued, ECI).
    pub nodes: Vec<crate::expr::Node>,
    /// Coefficients, km/s² per unit of g_i.
    pub coefficients: Vec<f64>,
    /// Values of k0, k1, …
    pub constants: Vec<f64>,
    /// Terminal constants; `t` of the formulas is the fit's `t_s`.
    pub context: crate::expr::Context,
}

impl ExtraTerms {
    /// g_i at (t, x) with constants `k`.
    pub fn term(&self, i: usize, t_s: f64, x: &StateVector, k: &[f64]) -> Vector3<f64> {
        let p = crate::expr::Terminals::of_state(t_s, x, &self.context);
        let v = self.nodes[i].eval(&p, k).vector();
        Vector3::new(v[0], v[1], v[2])
    }

    /// Σ c_i g_i.
    pub fn acceleration(&self, t_s: f64, x: &StateVector, c: &[f64], k: &[f64]) -> Vector3<f64> {
        let p = crate::expr::Terminals::of_state(t_s, x, &self.context);
        let mut a = Vector3::zeros();
        for (n, ci) in self.nodes.iter().zip(c) {
            let v = n.eval(&p, k).vector();
            a += Vector3::new(v[0], v[1], v[2]) * *ci;
        }
        a
    }

    /// ∂(Σ c_i g_i)/∂x by dual numbers.
    pub fn partials(&self, t_s: f64, x: &StateVector, c: &[f64], k: &[f64]) -> Matrix3x6<f64> {
        let p = crate::expr::Terminals::of_state_dual(t_s, x, &self.context);
        let mut m = Matrix3x6::zeros();
        for (n, ci) in self.nodes.iter().zip(c) {
            let v = n.eval(&p, k).vector();
            for i in 0..3 {
                for j in 0..6 {
                    m[(i, j)] += ci * v[i].d[j];
                }
            }
        }
        m
    }
}
