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
    /// The residual itself.
    pub value: ResidualValue,
    /// Used in the fit (false: edited out).
    pub used: bool,
    /// Why it was edited.
    pub edit_reason: Option<String>,
}

/// The residual of a state or of a measurement.
#[derive(Clone, Debug, PartialEq)]
pub enum ResidualValue {
    /// A state observation's.
    State {
        /// Position residual in RTN of the fitted state, km.
        rtn_km: Vector3<f64>,
        /// Velocity residual in ECI, km/s, when velocity was observed.
        velocity_km_s: Option<Vector3<f64>>,
        /// σ of the position, km.
        sigma_km: f64,
    },
    /// A tracking measurement's (bias removed).
    Tracking {
        /// The site's index in the arc's sites.
        site: usize,
        /// What was measured.
        kind: propagator::tracking::measurement::Kind,
        /// Observed − modelled, model units (km, km/s, rad).
        residual: f64,
        /// Its σ, model units (a right ascension's: the site's σ on the sky / cos δ).
        sigma: f64,
    },
}

impl Residual {
    /// The RTN position residual (km) of a state observation.
    pub fn rtn_km(&self) -> Option<&Vector3<f64>> {
        match &self.value {
            ResidualValue::State { rtn_km, .. } => Some(rtn_km),
            ResidualValue::Tracking { .. } => None,
        }
    }
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

/// The Ljung–Box test on one residual series.
#[derive(Clone, Debug, PartialEq)]
pub struct StructureTest {
    /// `R`, `T` or `N` for a state arc; the site and kind (`ALPHA range_km`) for a
    /// tracking arc.
    pub component: String,
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
    /// Residual structure per RTN component (state arcs) or per site and kind (tracking).
    pub structure: Vec<StructureTest>,
    /// Test size; each of the tests (χ² and one per structure series) is run at α over
    /// their number (Bonferroni).
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
    /// RMS of the 3-D position residuals of the used observations, km (state arcs; a
    /// tracking arc has no positions).
    pub rms_km: Option<f64>,
    /// RMS of the used normalized residuals (residual / σ), every row.
    pub rms_sigma: f64,
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
    /// Smallest and largest geocentric distance of the fitted trajectory at the
    /// observations' epochs, km (where a tracking arc's object was: it gives no positions).
    pub radius_range_km: (f64, f64),
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

/// The residuals of one site's kind of measurement (a tracking fit's summary line).
#[derive(Clone, Debug, PartialEq)]
pub struct ChannelSummary {
    /// The site's name.
    pub site: String,
    /// What it measured.
    pub kind: propagator::tracking::measurement::Kind,
    /// Measurements in all.
    pub count: usize,
    /// Measurements used (not edited).
    pub used: usize,
    /// Mean of the used residuals, in the kind's file unit (km, km/s, deg).
    pub mean: f64,
    /// RMS of the used residuals, file unit.
    pub rms: f64,
    /// RMS of the used normalized residuals (residual / σ).
    pub rms_sigma: f64,
}

impl FitResult {
    /// Per site and kind, the residuals of a tracking fit of `arc` (empty for states).
    pub fn channels(&self, arc: &Arc) -> Vec<ChannelSummary> {
        let Some(t) = &arc.tracking else {
            return vec![];
        };
        let mut out: Vec<ChannelSummary> = Vec::new();
        let mut sums: Vec<(f64, f64, f64)> = Vec::new();
        for r in &self.residuals {
            let ResidualValue::Tracking {
                site,
                kind,
                residual,
                sigma,
            } = &r.value
            else {
                continue;
            };
            let name = &t.sites[*site].site.name;
            let k = match out.iter().position(|c| &c.site == name && c.kind == *kind) {
                Some(k) => k,
                None => {
                    out.push(ChannelSummary {
                        site: name.clone(),
                        kind: *kind,
                        count: 0,
                        used: 0,
                        mean: 0.0,
                        rms: 0.0,
                        rms_sigma: 0.0,
                    });
                    sums.push((0.0, 0.0, 0.0));
                    out.len() - 1
                }
            };
            out[k].count += 1;
            if r.used {
                let v = residual / kind.info().to_model;
                out[k].used += 1;
                sums[k].0 += v;
                sums[k].1 += v * v;
                sums[k].2 += (residual / sigma).powi(2);
            }
        }
        for (c, (s, ss, zz)) in out.iter_mut().zip(sums) {
            let n = c.used.max(1) as f64;
            (c.mean, c.rms, c.rms_sigma) = (s / n, (ss / n).sqrt(), (zz / n).sqrt());
        }
        out.sort_by(|a, b| a.site.cmp(&b.site).then(a.kind.cmp(&b.kind)));
        out
    }
}
