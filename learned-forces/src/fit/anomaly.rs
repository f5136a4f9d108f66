//! The anomaly verdict: χ² of the normalized residuals and Ljung–Box structure per
//! series (RTN components, or each site's kind of measurement).

use super::*;

/// The verdict on the normalized residuals `z` with `dof` degrees of freedom and the
/// normalized `series` (name, used residuals in time order) the structure is tested on.
pub(super) fn verdict(
    z: &DVector<f64>,
    dof: usize,
    series: &[(String, Vec<f64>)],
    options: &FitOptions,
) -> Verdict {
    let chi2 = z.norm_squared();
    let p_value = stats::chi2_sf(chi2, dof.max(1) as f64);
    let per_test = options.alpha / (1 + series.len()) as f64;
    let mut reasons = Vec::new();
    if p_value < per_test {
        reasons.push(format!(
            "χ² = {chi2:.1} on {dof} degrees of freedom (p = {p_value:.2e}): the residuals are larger than the stated noise"
        ));
    }
    let mut structure = Vec::new();
    for (name, series) in series {
        // Q's χ² law needs lags well below the series' length: a short series (one
        // telescope's few night passes) uses n/5 (common practice), long ones the option.
        let lags = options.ljung_box_lags.min(series.len() / 5).max(1);
        let (q, p) = stats::ljung_box(series, lags);
        let rms_sigma =
            (series.iter().map(|v| v * v).sum::<f64>() / series.len().max(1) as f64).sqrt();
        let counted = rms_sigma >= options.structure_floor_sigma;
        if p < per_test && counted {
            reasons.push(format!(
                "{name} residuals are correlated in time (Ljung–Box Q = {q:.1} on {lags} lags, p = {p:.2e}; RMS {rms_sigma:.2} σ)"
            ));
        }
        structure.push(StructureTest {
            component: name.clone(),
            q,
            lags,
            p_value: p,
            rms_sigma,
            counted,
        });
    }
    Verdict {
        anomaly: !reasons.is_empty(),
        chi2,
        dof,
        p_value,
        structure,
        alpha: options.alpha,
        reasons,
    }
}
