//! What a fit returns: the residuals, the estimates with their σ, the anomaly verdict and
//! the solution.

use super::*;

/// One observation's residual (observed − computed).
#[derive(Clone, Debug, PartialEq)]
pub struct Residual {
    /// Epoch.
    pub epoch: Epoch,
    /// Seconds from the first observation.
    pub t_s: f64,
    /// Position residual in RTN of the fitted state, km.
    pub rtn_km: Vector3<f64>,
    /// Velocity residual in ECI, km/s, when velocity was observed.
    pub velocity_km_s: Option<Vector3<f64>>,
    /// σ of the position, km.
    pub sigma_km: f64,
    /// Used in the fit (false: edited out).
    pub used: bool,
    /// Why it was edited.
    pub edit_reason: Option<String>,
}

/// A fitted parameter.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Estimate {
    /// Which.
    pub parameter: Parameter,
    /// Value.
    pub value: f64,
    /// Formal 1σ.
    pub sigma: f64,
}

/// The Ljung–Box test on one residual component.
#[derive(Clone, Debug, PartialEq)]
pub struct StructureTest {
    /// `R`, `T` or `N`.
    pub component: &'static str,
    /// Q statistic.
    pub q: f64,
    /// Lags (the χ² degrees of freedom of Q).
    pub lags: usize,
    /// p-value.
    pub p_value: f64,
    /// RMS of the component's normalized residuals (residual / σ).
    pub rms_sigma: f64,
    /// Whether the test counted towards the verdict (`rms_sigma` at or above
    /// [`FitOptions::structure_floor_sigma`]).
    pub counted: bool,
}

/// The anomaly verdict and the numbers behind it.
#[derive(Clone, Debug, PartialEq)]
pub struct Verdict {
    /// True when the residuals are not consistent with noise.
    pub anomaly: bool,
    /// Weighted sum of squared residuals.
    pub chi2: f64,
    /// Degrees of freedom (observations − estimated quantities).
    pub dof: usize,
    /// P(χ² ≥ observed) under the noise model.
    pub p_value: f64,
    /// Residual structure per RTN component.
    pub structure: Vec<StructureTest>,
    /// Test size; each of the four tests is run at α/4 (Bonferroni).
    pub alpha: f64,
    /// Sentences saying which tests failed.
    pub reasons: Vec<String>,
}

/// The outcome of a fit.
#[derive(Clone, Debug)]
pub struct FitResult {
    /// Epoch of the first observation (the fit's `t_s = 0`).
    pub epoch0: Epoch,
    /// Fitted state at the first observation.
    pub x0: StateVector,
    /// Formal 1σ of the six state components (km, km/s).
    pub x0_sigma: [f64; 6],
    /// Epoch of the last observation.
    pub epoch_last: Epoch,
    /// Fitted state at the last observation.
    pub x_last: StateVector,
    /// Fitted parameters.
    pub estimates: Vec<Estimate>,
    /// Formal covariance of (x0, parameters).
    pub covariance: DMatrix<f64>,
    /// Residuals of every observation.
    pub residuals: Vec<Residual>,
    /// RMS of the 3-D position residuals of the used observations, km.
    pub rms_km: f64,
    /// Observations edited out.
    pub edited: usize,
    /// Gauss–Newton iterations in all.
    pub iterations: usize,
    /// Why the last stage's iterations stopped.
    pub termination: Termination,
    /// The verdict.
    pub verdict: Verdict,
    /// Weighted Jacobian of the used measurements at the solution (rows as the stacked
    /// residual; columns x0 then parameters).
    pub jacobian: DMatrix<f64>,
    /// Weighted residual (observed − computed)/σ of the used measurements.
    pub weighted_residual: DVector<f64>,
    /// Final values of the estimated parameters (same order as `estimates`).
    pub values: Vec<f64>,
}

impl FitResult {
    /// The estimate of `parameter`, if it was estimated.
    pub fn estimate(&self, parameter: Parameter) -> Option<&Estimate> {
        self.estimates.iter().find(|e| e.parameter == parameter)
    }

    /// The estimates of the extra terms' coefficients, term `i` at index `i` (`n` terms;
    /// a term without an estimate has a NaN value and σ).
    pub fn term_coefficients(&self, n: usize) -> Vec<Estimate> {
        (0..n)
            .map(|i| {
                let p = Parameter::TermCoefficient(i);
                self.estimate(p).copied().unwrap_or(Estimate {
                    parameter: p,
                    value: f64::NAN,
                    sigma: f64::NAN,
                })
            })
            .collect()
    }
}
