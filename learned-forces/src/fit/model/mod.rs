//! The dynamics of an orbit fit: a force model plus parametrized forces — drag and SRP
//! scale factors, empirical RTN accelerations, learned formula terms — whose parameters
//! the fit estimates.

use nalgebra::{Matrix3, Matrix3x6, Vector3};
use propagator::force::{central_difference_partials, Force, ForceError, ScaleKind, Segment};
use propagator::frames::eci_to_rtn;
use propagator::variational::Dynamics;
use propagator::{ForceModel, StateVector};

mod parametrized;
pub use parametrized::*;

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
    /// Empirical acceleration growing linearly in time (0 at the fit's start) along R, T
    /// or N, km/s² per day.
    EmpiricalLinear(usize),
}

const AXES: [&str; 3] = ["r", "t", "n"];

/// The time unit of a linear empirical drift, s.
const DAY_S: f64 = 86_400.0;

impl Parameter {
    /// Report name, with its unit.
    pub fn name(&self) -> String {
        match self {
            Parameter::DragScale => "drag_scale".into(),
            Parameter::SrpScale => "srp_scale".into(),
            Parameter::EmpiricalConstant(a) => format!("emp_const_{}_km_s2", AXES[*a]),
            Parameter::EmpiricalCos(a) => format!("emp_cos_{}_km_s2", AXES[*a]),
            Parameter::EmpiricalSin(a) => format!("emp_sin_{}_km_s2", AXES[*a]),
            Parameter::EmpiricalLinear(a) => format!("emp_lin_{}_km_s2_per_day", AXES[*a]),
            Parameter::TermCoefficient(i) => format!("term{i}_coefficient"),
            Parameter::TermConstant(i) => format!("k{i}"),
        }
    }

    /// Whether it is a learned term's coefficient or constant.
    pub fn is_term(&self) -> bool {
        matches!(
            self,
            Parameter::TermCoefficient(_) | Parameter::TermConstant(_)
        )
    }

    /// Value before the fit (scales 1, accelerations 0).
    pub fn initial_value(&self) -> f64 {
        match self {
            Parameter::DragScale | Parameter::SrpScale => 1.0,
            _ => 0.0,
        }
    }

    /// The `--estimate` words, in the order of [`Parameter::parse_list`].
    pub const ESTIMATE_WORDS: [&'static str; 5] = [
        "drag_scale",
        "srp_scale",
        "emp_const_rtn",
        "emp_1rev_rtn",
        "emp_lin_rtn",
    ];

    /// Expands an `--estimate` item: `drag_scale`, `srp_scale`, `emp_const_rtn`,
    /// `emp_1rev_rtn` (cos and sin terms on all three axes), `emp_lin_rtn` (a linear drift
    /// on all three axes).
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
            "emp_lin_rtn" => Some((0..3).map(Parameter::EmpiricalLinear).collect()),
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

/// A force whose parameters a fit can estimate: what it adds to the known model, and its
/// partials with respect to the state and to its parameters. Drag and SRP scales
/// ([`ScaleFactor`]), empirical RTN accelerations ([`EmpiricalRtn`]) and learned formula
/// terms ([`LearnedTerms`]) implement it; the fit sees only this trait.
///
/// `values` are the force's own parameters, in the order of [`Parametrized::parameters`];
/// `None` means the force is not estimated at this stage of the fit and sits at rest
/// (a scale at 1, an empirical term at 0, learned terms at their stored values).
pub trait Parametrized: Send + Sync {
    /// Its parameters, in order (named by [`Parameter::name`]).
    fn parameters(&self) -> &[Parameter];

    /// A parameter's value at rest, where the fit starts it.
    fn start_value(&self, p: Parameter) -> f64 {
        p.initial_value()
    }

    /// The factor it puts on the known model's force number `index`, if any.
    fn scale_of(&self, _index: usize, _values: Option<&[f64]>) -> Option<f64> {
        None
    }

    /// The acceleration it adds, km/s², ECI.
    fn acceleration(&self, t_s: f64, x: &StateVector, values: Option<&[f64]>) -> Vector3<f64>;

    /// ∂(that acceleration)/∂(r, v); `None` when it adds nothing that depends on the state.
    fn state_partials(
        &self,
        t_s: f64,
        x: &StateVector,
        values: Option<&[f64]>,
    ) -> Result<Option<Matrix3x6<f64>>, ForceError>;

    /// ∂a/∂(each parameter) into `out` (one vector per parameter), at `values`, where
    /// `model` is the known force model (a scale's partial is its force).
    fn param_partials(
        &self,
        model: &ForceModel,
        t_s: f64,
        x: &StateVector,
        segment: Segment,
        values: &[f64],
        out: &mut [Vector3<f64>],
    ) -> Result<(), ForceError>;
}

/// The dynamics a fit adjusts: the known force model and the parametrized forces on
/// top, with the values of all their parameters (concatenated in the forces' order).
pub struct FitModel {
    model: ForceModel,
    parts: Vec<Box<dyn Parametrized>>,
    /// Values of every parameter, in the order of [`FitModel::parameters`].
    pub values: Vec<f64>,
    /// False while a fit estimates the state alone (its early stages): every force then
    /// sits at rest.
    estimating: bool,
}

impl FitModel {
    /// The known `model` with forces estimating `parameters` (in that order) and the
    /// learned `terms`, which carry the term parameters. Values start at rest (scales 1,
    /// accelerations 0, learned terms at their stored coefficients and constants). A
    /// scale of a force the model does not have, or term parameters without terms (or
    /// not in one run), is an error.
    pub fn new(
        model: ForceModel,
        parameters: &[Parameter],
        terms: Option<ExtraTerms>,
    ) -> Result<Self, String> {
        let mut parts: Vec<Box<dyn Parametrized>> = Vec::new();
        let mut terms = terms;
        // Consecutive empirical, or term, parameters make one force.
        let mut run: Vec<Parameter> = Vec::new();
        for &p in parameters {
            let scale = match p {
                Parameter::DragScale => Some((ScaleKind::Drag, "drag")),
                Parameter::SrpScale => Some((ScaleKind::Srp, "srp")),
                _ => None,
            };
            let breaks = scale.is_some() || run.first().is_some_and(|q| q.is_term() != p.is_term());
            if breaks {
                close_run(&mut run, &mut parts, &mut terms)?;
            }
            match scale {
                Some((kind, name)) => {
                    let index = model
                        .forces()
                        .iter()
                        .position(|f| f.scale() == Some(kind))
                        .ok_or_else(|| {
                            format!(
                                "cannot estimate {}: the force model has no {name}",
                                p.name()
                            )
                        })?;
                    parts.push(Box::new(ScaleFactor {
                        parameter: [p],
                        index,
                    }));
                }
                None => run.push(p),
            }
        }
        close_run(&mut run, &mut parts, &mut terms)?;
        // Terms with no estimated parameter are still part of the dynamics.
        if let Some(terms) = terms {
            parts.push(Box::new(LearnedTerms {
                terms,
                parameters: vec![],
            }));
        }
        let values = parts
            .iter()
            .flat_map(|f| f.parameters().iter().map(|p| f.start_value(*p)))
            .collect();
        Ok(Self {
            model,
            parts,
            values,
            estimating: true,
        })
    }

    /// The underlying force model.
    pub fn force_model(&self) -> &ForceModel {
        &self.model
    }

    /// Every parameter, in order.
    pub fn parameters(&self) -> Vec<Parameter> {
        self.parts
            .iter()
            .flat_map(|f| f.parameters().iter().copied())
            .collect()
    }

    /// Whether the parameters are estimated (false: the forces sit at rest).
    pub fn set_estimating(&mut self, on: bool) {
        self.estimating = on;
    }

    /// Each force with its slice of the values (`None` while not estimating).
    fn with_values(&self) -> impl Iterator<Item = (&dyn Parametrized, Option<&[f64]>)> {
        let mut offset = 0;
        self.parts.iter().map(move |f| {
            let n = f.parameters().len();
            let v = self.estimating.then(|| &self.values[offset..offset + n]);
            offset += n;
            (f.as_ref(), v)
        })
    }

    /// The factor on the known model's force `index` (1 when nothing scales it).
    fn multiplier(&self, index: usize) -> f64 {
        self.with_values()
            .find_map(|(f, v)| f.scale_of(index, v))
            .unwrap_or(1.0)
    }
}

/// The known forces alone, nothing estimated but the state.
impl From<ForceModel> for FitModel {
    fn from(model: ForceModel) -> Self {
        Self {
            model,
            parts: vec![],
            values: vec![],
            estimating: true,
        }
    }
}

/// Ends a run of consecutive empirical or term parameters: one force for it.
fn close_run(
    run: &mut Vec<Parameter>,
    parts: &mut Vec<Box<dyn Parametrized>>,
    terms: &mut Option<ExtraTerms>,
) -> Result<(), String> {
    let Some(first) = run.first().copied() else {
        return Ok(());
    };
    let parameters = std::mem::take(run);
    if first.is_term() {
        let terms = terms
            .take()
            .ok_or("term parameters need learned terms, given once and in one run")?;
        parts.push(Box::new(LearnedTerms { terms, parameters }));
    } else {
        parts.push(Box::new(EmpiricalRtn { parameters }));
    }
    Ok(())
}

fn rtn_matrix(x: &StateVector) -> Matrix3<f64> {
    let r = Vector3::new(x[0], x[1], x[2]);
    let v = Vector3::new(x[3], x[4], x[5]);
    eci_to_rtn(&r, &v).unwrap_or_else(Matrix3::identity)
}

impl Dynamics for FitModel {
    fn model(&self) -> &ForceModel {
        &self.model
    }

    fn n_params(&self) -> usize {
        if self.estimating {
            self.values.len()
        } else {
            0
        }
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
        for (f, v) in self.with_values() {
            a += f.acceleration(t_s, x, v);
        }
        Ok(a)
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
        for (f, v) in self.with_values() {
            if let Some(q) = f.state_partials(t_s, x, v)? {
                p += q;
            }
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
        let mut offset = 0;
        for f in &self.parts {
            let n = f.parameters().len();
            let values = &self.values[offset..offset + n];
            f.param_partials(
                &self.model,
                t_s,
                x,
                segment,
                values,
                &mut out[offset..offset + n],
            )?;
            offset += n;
        }
        Ok(())
    }
}

/// Learned terms in a fit's dynamics: their formulas, coefficients and constants (the
/// stored values, which estimated parameters override), and the terminals' constants;
/// `t` of the formulas is the fit's `t_s`.
#[derive(Clone, Debug)]
pub struct ExtraTerms {
    /// The terms.
    pub terms: crate::terms::Terms,
    /// Terminal constants.
    pub context: crate::expr::Context,
}

impl ExtraTerms {
    /// g_i at (t, x) with constants `k`.
    pub fn term(&self, i: usize, t_s: f64, x: &StateVector, k: &[f64]) -> Vector3<f64> {
        let p = crate::expr::Terminals::of_state(t_s, x, &self.context);
        let v = self.terms.nodes[i].eval(&p, k).vector();
        Vector3::new(v[0], v[1], v[2])
    }

    /// Σ c_i g_i.
    pub fn acceleration(&self, t_s: f64, x: &StateVector, c: &[f64], k: &[f64]) -> Vector3<f64> {
        let p = crate::expr::Terminals::of_state(t_s, x, &self.context);
        let mut a = Vector3::zeros();
        for (n, ci) in self.terms.nodes.iter().zip(c) {
            let v = n.eval(&p, k).vector();
            a += Vector3::new(v[0], v[1], v[2]) * *ci;
        }
        a
    }

    /// ∂(Σ c_i g_i)/∂x by dual numbers.
    pub fn partials(&self, t_s: f64, x: &StateVector, c: &[f64], k: &[f64]) -> Matrix3x6<f64> {
        let p = crate::expr::Terminals::of_state_dual(t_s, x, &self.context);
        let mut m = Matrix3x6::zeros();
        for (n, ci) in self.terms.nodes.iter().zip(c) {
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
