//! The parametrized forces a fit estimates: a scale on one known force, empirical RTN
//! accelerations, and learned formula terms.

use super::*;

/// A multiplier on one force of the known model (`drag_scale`, `srp_scale`).
pub struct ScaleFactor {
    pub(super) parameter: [Parameter; 1],
    /// The force it scales, by position in the known model.
    pub(super) index: usize,
}

impl Parametrized for ScaleFactor {
    fn parameters(&self) -> &[Parameter] {
        &self.parameter
    }

    fn scale_of(&self, index: usize, values: Option<&[f64]>) -> Option<f64> {
        match values {
            Some(v) if index == self.index => Some(v[0]),
            _ => None,
        }
    }

    fn acceleration(&self, _t: f64, _x: &StateVector, _v: Option<&[f64]>) -> Vector3<f64> {
        Vector3::zeros()
    }

    fn state_partials(
        &self,
        _t: f64,
        _x: &StateVector,
        _v: Option<&[f64]>,
    ) -> Result<Option<Matrix3x6<f64>>, ForceError> {
        Ok(None)
    }

    fn param_partials(
        &self,
        model: &ForceModel,
        t_s: f64,
        x: &StateVector,
        segment: Segment,
        _values: &[f64],
        out: &mut [Vector3<f64>],
    ) -> Result<(), ForceError> {
        // The unscaled force, seen in its own segment.
        let k = self.index;
        out[0] = model.forces()[k].acceleration_in(t_s, x, model.segment_for(k, segment))?;
        Ok(())
    }
}

/// Empirical accelerations along R, T, N: constants and once-per-revolution terms.
pub struct EmpiricalRtn {
    pub(super) parameters: Vec<Parameter>,
}

impl EmpiricalRtn {
    /// The acceleration, ECI, at time `t_s` (s from the fit's start) and `values`.
    fn at(&self, t_s: f64, x: &StateVector, values: &[f64]) -> Vector3<f64> {
        let u = argument_of_latitude(x);
        let (su, cu) = u.sin_cos();
        let mut rtn = Vector3::zeros();
        for (p, v) in self.parameters.iter().zip(values) {
            match p {
                Parameter::EmpiricalConstant(a) => rtn[*a] += v,
                Parameter::EmpiricalCos(a) => rtn[*a] += v * cu,
                Parameter::EmpiricalSin(a) => rtn[*a] += v * su,
                Parameter::EmpiricalLinear(a) => rtn[*a] += v * (t_s / DAY_S),
                Parameter::DragScale
                | Parameter::SrpScale
                | Parameter::TermCoefficient(_)
                | Parameter::TermConstant(_) => {}
            }
        }
        rtn_matrix(x).transpose() * rtn
    }

    /// The values when any is non-zero (zero terms add nothing, and cost nothing).
    fn active(values: Option<&[f64]>) -> Option<&[f64]> {
        values.filter(|v| v.iter().any(|x| *x != 0.0))
    }
}

/// The empirical term alone, as a force, so its state partials come from the shared
/// central difference.
struct EmpiricalForce<'a>(&'a EmpiricalRtn, &'a [f64]);

impl Force for EmpiricalForce<'_> {
    fn name(&self) -> &str {
        "empirical"
    }
    fn acceleration(&self, t_s: f64, x: &StateVector) -> Result<Vector3<f64>, ForceError> {
        Ok(self.0.at(t_s, x, self.1))
    }
}

impl Parametrized for EmpiricalRtn {
    fn parameters(&self) -> &[Parameter] {
        &self.parameters
    }

    fn acceleration(&self, t_s: f64, x: &StateVector, values: Option<&[f64]>) -> Vector3<f64> {
        match Self::active(values) {
            Some(v) => self.at(t_s, x, v),
            None => Vector3::zeros(),
        }
    }

    fn state_partials(
        &self,
        t_s: f64,
        x: &StateVector,
        values: Option<&[f64]>,
    ) -> Result<Option<Matrix3x6<f64>>, ForceError> {
        match Self::active(values) {
            Some(v) => central_difference_partials(&EmpiricalForce(self, v), t_s, x).map(Some),
            None => Ok(None),
        }
    }

    fn param_partials(
        &self,
        _model: &ForceModel,
        t_s: f64,
        x: &StateVector,
        _segment: Segment,
        _values: &[f64],
        out: &mut [Vector3<f64>],
    ) -> Result<(), ForceError> {
        let (su, cu) = argument_of_latitude(x).sin_cos();
        let m = rtn_matrix(x);
        for (k, p) in self.parameters.iter().enumerate() {
            let (a, w) = match p {
                Parameter::EmpiricalConstant(a) => (*a, 1.0),
                Parameter::EmpiricalCos(a) => (*a, cu),
                Parameter::EmpiricalSin(a) => (*a, su),
                Parameter::EmpiricalLinear(a) => (*a, t_s / DAY_S),
                Parameter::DragScale
                | Parameter::SrpScale
                | Parameter::TermCoefficient(_)
                | Parameter::TermConstant(_) => continue,
            };
            out[k] = m.row(a).transpose() * w;
        }
        Ok(())
    }
}

/// Learned formula terms Σ c_i g_i(t, x; k) whose coefficients and constants are
/// estimated (the learner's refinement and final fit).
pub struct LearnedTerms {
    pub(super) terms: ExtraTerms,
    pub(super) parameters: Vec<Parameter>,
}

impl LearnedTerms {
    /// Coefficients and constants: the stored ones, overridden by `values`.
    fn current(&self, values: Option<&[f64]>) -> (Vec<f64>, Vec<f64>) {
        let mut c = self.terms.terms.coefficients.clone();
        let mut k = self.terms.terms.constants.clone();
        for (p, v) in self.parameters.iter().zip(values.unwrap_or(&[])) {
            match p {
                Parameter::TermCoefficient(i) if *i < c.len() => c[*i] = *v,
                Parameter::TermConstant(i) if *i < k.len() => k[*i] = *v,
                _ => {}
            }
        }
        (c, k)
    }
}

impl Parametrized for LearnedTerms {
    fn parameters(&self) -> &[Parameter] {
        &self.parameters
    }

    fn start_value(&self, p: Parameter) -> f64 {
        match p {
            Parameter::TermCoefficient(i) => {
                self.terms.terms.coefficients.get(i).copied().unwrap_or(0.0)
            }
            Parameter::TermConstant(j) => self.terms.terms.constants.get(j).copied().unwrap_or(1.0),
            other => other.initial_value(),
        }
    }

    fn acceleration(&self, t_s: f64, x: &StateVector, values: Option<&[f64]>) -> Vector3<f64> {
        let (c, k) = self.current(values);
        self.terms.acceleration(t_s, x, &c, &k)
    }

    fn state_partials(
        &self,
        t_s: f64,
        x: &StateVector,
        values: Option<&[f64]>,
    ) -> Result<Option<Matrix3x6<f64>>, ForceError> {
        let (c, k) = self.current(values);
        Ok(Some(self.terms.partials(t_s, x, &c, &k)))
    }

    fn param_partials(
        &self,
        _model: &ForceModel,
        t_s: f64,
        x: &StateVector,
        _segment: Segment,
        values: &[f64],
        out: &mut [Vector3<f64>],
    ) -> Result<(), ForceError> {
        let (c, kv) = self.current(Some(values));
        let e = &self.terms;
        for (slot, p) in out.iter_mut().zip(&self.parameters) {
            *slot = match p {
                Parameter::TermCoefficient(i) => e.term(*i, t_s, x, &kv),
                Parameter::TermConstant(j) => {
                    let h = 1e-6 * kv[*j].abs().max(1e-12);
                    let (mut kp, mut km) = (kv.clone(), kv.clone());
                    kp[*j] += h;
                    km[*j] -= h;
                    (e.acceleration(t_s, x, &c, &kp) - e.acceleration(t_s, x, &c, &km)) / (2.0 * h)
                }
                Parameter::DragScale
                | Parameter::SrpScale
                | Parameter::EmpiricalConstant(_)
                | Parameter::EmpiricalCos(_)
                | Parameter::EmpiricalSin(_)
                | Parameter::EmpiricalLinear(_) => Vector3::zeros(),
            };
        }
        Ok(())
    }
}
