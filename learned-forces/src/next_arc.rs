//! The next-arc check: predict a new arc from the end of a training fit, with the
//! learned force and with the known forces only, and the rule that passes or fails it.
//!
//! The two predictions start from two different fits of the same training arc: the
//! learned one from the fit with the learned force (`state_at_end`), the baseline from
//! the known-forces fit (`state_at_end_known_forces`). Starting the baseline from the
//! learned fit's end state would hand it the learned force's work (on the demo: 30 m
//! instead of the known forces' real 1041 m).

use crate::arc::Arc;
use crate::fit::Observing;
use nalgebra::Vector3;
use propagator::frames::eci_to_rtn;
use propagator::propagation::{propagate, Options, Request, Silent};
use propagator::{Epoch, ForceModel, StateVector, TimeAxis};

/// What a prediction's errors are measured in.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Unit {
    /// Position error, km (an arc of positions).
    Km,
    /// Normalized residual, σ (an arc of tracking measurements).
    Sigma,
}

impl Unit {
    /// The unit of `arc`'s errors.
    pub fn of(arc: &Arc) -> Unit {
        if arc.tracking.is_some() {
            Unit::Sigma
        } else {
            Unit::Km
        }
    }

    /// A value in this unit as text (km shown in metres).
    pub fn text(self, v: f64) -> String {
        match self {
            Unit::Km => format!("{:.2} m", v * 1e3),
            Unit::Sigma => format!("{v:.2} σ"),
        }
    }

    /// A fit's overall RMS as text: its position RMS for a position arc, else the RMS of
    /// its normalized residuals.
    pub fn fit_rms(self, r: &crate::fit::FitResult) -> String {
        match (self, r.rms_km) {
            (Unit::Km, Some(km)) => self.text(km),
            _ => Unit::Sigma.text(r.rms_sigma),
        }
    }

    /// The unit's word in report keys.
    pub fn key(self) -> &'static str {
        match self {
            Unit::Km => "km",
            Unit::Sigma => "sigma",
        }
    }
}

/// A prediction of an arc compared with its observations.
#[derive(Clone, Debug)]
pub struct Prediction {
    /// Seconds of each observation from the prediction's start epoch.
    pub times_s: Vec<f64>,
    /// Observed − predicted position of each observation, RTN of the prediction, km (a
    /// position arc; empty for a tracking arc).
    pub errors_rtn_km: Vec<Vector3<f64>>,
    /// Each observation's error in `unit`: the 3-D position error, or |residual| / σ.
    pub errors: Vec<f64>,
    /// What the errors are in.
    pub unit: Unit,
    /// RMS of the errors.
    pub rms: f64,
    /// Largest error.
    pub max: f64,
}

impl Prediction {
    /// RMS of one RTN component (0 = R, 1 = T, 2 = N), km (a position arc).
    pub fn rms_component_km(&self, c: usize) -> f64 {
        let n = self.errors_rtn_km.len().max(1) as f64;
        (self.errors_rtn_km.iter().map(|e| e[c] * e[c]).sum::<f64>() / n).sqrt()
    }

    /// RMS of the errors in each quarter of the arc (how the error grows).
    pub fn rms_by_quarter(&self) -> [f64; 4] {
        let n = self.errors.len();
        std::array::from_fn(|q| {
            let (lo, hi) = (q * n / 4, ((q + 1) * n / 4).max(q * n / 4 + 1).min(n));
            let e = &self.errors[lo.min(hi)..hi];
            (e.iter().map(|v| v * v).sum::<f64>() / e.len().max(1) as f64).sqrt()
        })
    }
}

/// Predicts `arc` under `model` from `x0` at `start` (the model's `t_s = 0`).
///
/// Errors: the arc starts before `start`, the propagation fails, or the orbit decays
/// before the arc's end.
pub fn predict(
    model: &ForceModel,
    start: &Epoch,
    x0: StateVector,
    arc: &Arc,
) -> Result<Prediction, String> {
    let axis = TimeAxis::new(*start);
    let times: Vec<f64> = arc
        .observations
        .iter()
        .map(|o| axis.seconds(&o.epoch))
        .collect();
    let (Some(&first), Some(&end)) = (times.first(), times.last()) else {
        return Err("the arc has no observations".into());
    };
    if first < 0.0 {
        return Err(format!(
            "the arc starts at {}, before the prediction's start ({start}): give the arc that follows the training arc",
            arc.start()
        ));
    }
    let req = Request {
        x0,
        t0_s: 0.0,
        t_end_s: end,
        output_times_s: &times,
        stop_times_s: &[],
    };
    let p = propagate(model, &req, &Options::default(), &mut Silent)
        .map_err(|e| format!("prediction failed: {}", e.with_utc(start)))?;
    if p.samples.len() != times.len() {
        return Err("the prediction decays before the end of the arc".into());
    }
    let observing = Observing::new(arc);
    let (mut rtn, mut errors, mut rows) = (Vec::new(), Vec::with_capacity(times.len()), Vec::new());
    for (i, ((_, x), o)) in p.samples.iter().zip(&arc.observations).enumerate() {
        let r = Vector3::new(x[0], x[1], x[2]);
        let v = Vector3::new(x[3], x[4], x[5]);
        match o.as_state() {
            Some(s) => {
                let d = s.r_km - r;
                errors.push(d.norm());
                rtn.push(eci_to_rtn(&r, &v).map(|m| m * d).unwrap_or(d));
            }
            None => {
                rows.clear();
                observing.rows(i, x, &mut rows)?;
                errors.extend(rows.iter().map(|row| row.z.abs()));
            }
        }
    }
    let n = errors.len().max(1) as f64;
    Ok(Prediction {
        rms: (errors.iter().map(|e| e * e).sum::<f64>() / n).sqrt(),
        max: errors.iter().copied().fold(0.0, f64::max),
        times_s: times,
        errors_rtn_km: rtn,
        errors,
        unit: Unit::of(arc),
    })
}

/// The RMS that observation noise alone gives: √(mean 3σ²) km for positions, 1 σ for
/// measurements (normalized residuals of pure noise).
pub fn noise_rms(arc: &Arc) -> f64 {
    if arc.tracking.is_some() {
        return 1.0;
    }
    let n = arc.observations.len().max(1) as f64;
    (arc.observations
        .iter()
        .filter_map(|o| o.as_state().map(|s| 3.0 * s.sigma_km * s.sigma_km))
        .sum::<f64>()
        / n)
        .sqrt()
}

/// The pass rule of the next-arc check.
///
/// The learned prediction passes when it is at the noise level (RMS ≤ `noise_factor` ×
/// the noise RMS), or when it beats the known-forces prediction by at least
/// `improvement` × (the learned force still earns its place); and, when `max_rms_km` is
/// given, also stays under it. A prediction no better than the known forces', or one
/// that merely shaves a few metres off a kilometre, fails.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct GateRule {
    /// Multiple of the noise RMS that counts as "at the noise level".
    pub noise_factor: f64,
    /// Required ratio known-forces RMS / learned RMS when above the noise level.
    pub improvement: f64,
    /// An absolute cap on the learned RMS, km.
    pub max_rms_km: Option<f64>,
}

impl Default for GateRule {
    fn default() -> Self {
        Self {
            noise_factor: 2.0,
            improvement: 2.0,
            max_rms_km: None,
        }
    }
}

/// The gate's answer, with the sentences that justify it.
#[derive(Clone, Debug, PartialEq)]
pub struct GateOutcome {
    /// Whether the learned prediction passed.
    pub passed: bool,
    /// Why, one sentence per condition.
    pub reasons: Vec<String>,
}

impl GateRule {
    /// The rule in one sentence (for `--help` and reports).
    pub fn describe(&self) -> String {
        let mut s = format!(
            "passes when the learned prediction's RMS is at most {}× the noise RMS, or at least {}× smaller than the known-forces prediction's",
            self.noise_factor, self.improvement
        );
        if let Some(m) = self.max_rms_km {
            s.push_str(&format!(", and at most {m} km"));
        }
        s
    }

    /// Judges RMS values in `unit`: the learned and known-forces predictions, and the
    /// noise. The km cap applies to position arcs only (`check` refuses it otherwise).
    pub fn judge(&self, learned: f64, known: f64, noise: f64, unit: Unit) -> GateOutcome {
        let m = |x: f64| unit.text(x);
        let mut reasons = Vec::new();
        let at_noise = learned <= self.noise_factor * noise;
        let better = learned * self.improvement <= known;
        let mut passed = at_noise || better;
        reasons.push(if at_noise {
            format!(
                "learned RMS {} is at the noise level (≤ {}× the noise RMS {})",
                m(learned),
                self.noise_factor,
                m(noise)
            )
        } else if better {
            format!(
                "learned RMS {} is {:.1}× smaller than the known forces' {} (need {}×)",
                m(learned),
                known / learned.max(f64::MIN_POSITIVE),
                m(known),
                self.improvement
            )
        } else {
            format!(
                "learned RMS {} is above the noise level ({}× {}) and not {}× smaller than the known forces' {}",
                m(learned),
                self.noise_factor,
                m(noise),
                self.improvement,
                m(known)
            )
        });
        if let (Some(cap), Unit::Km) = (self.max_rms_km, unit) {
            if learned > cap || !learned.is_finite() {
                passed = false;
                reasons.push(format!(
                    "learned RMS {} exceeds --max-rms-km ({})",
                    m(learned),
                    m(cap)
                ));
            }
        }
        if !learned.is_finite() {
            passed = false;
        }
        GateOutcome { passed, reasons }
    }
}

/// Where a next-arc check failed: in the learned file, in building the known forces,
/// or in predicting the arc (the caller names the file).
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum CheckError {
    /// The learned file's end states or force.
    #[error("{0}")]
    Learned(String),
    /// The known force model.
    #[error("{0}")]
    Model(String),
    /// The arc (before the start, a failed or decayed propagation).
    #[error("{0}")]
    Arc(String),
}

/// Both predictions of a next arc and the gate's verdict on them.
#[derive(Clone, Debug)]
pub struct NextArcCheck {
    /// Where the learned prediction starts (the training fit's end).
    pub epoch: Epoch,
    /// With the learned force, from the learned fit's end state.
    pub learned: Prediction,
    /// With the known forces only, from the known-forces fit's end state.
    pub known: Prediction,
    /// The arc's noise RMS (in the predictions' unit).
    pub noise: f64,
    /// The verdict of `rule`.
    pub outcome: GateOutcome,
}

/// Predicts `arc` with the known forces plus the learned force of `file` (from its
/// `state_at_end`) and with the known forces alone (from `state_at_end_known_forces`),
/// and judges the two by `rule`; `known_forces(epoch)` builds the known model on a time
/// axis starting at `epoch`.
pub fn check(
    file: &crate::learned_file::LearnedFile,
    known_forces: &dyn Fn(Epoch) -> Result<ForceModel, String>,
    host: Option<(&propagator::config::ForcesFile, &std::path::Path)>,
    arc: &Arc,
    rule: &GateRule,
) -> Result<NextArcCheck, CheckError> {
    let (epoch, x0) = file
        .state_at_end
        .state("state_at_end")
        .map_err(CheckError::Learned)?;
    let (known_epoch, known_x0) = file
        .state_at_end_known_forces
        .as_ref()
        .ok_or_else(|| {
            CheckError::Learned(
                "no state_at_end_known_forces (written by an older arcwise): the known-forces baseline cannot be formed; run learn again".into(),
            )
        })?
        .state("state_at_end_known_forces")
        .map_err(CheckError::Learned)?;
    if !file.known_parameters.is_empty() {
        // Not silently: the terms were fitted with these values of the known model.
        propagator::notice::warn_once(format!(
            "the learned file was fitted with {} estimated; this check predicts with the known forces as forces.yaml gives them (set the values there for a like-for-like check)",
            file.known_parameters
                .iter()
                .map(|p| format!("{} = {:.4}", p.name, p.value))
                .collect::<Vec<_>>()
                .join(", ")
        ));
    }
    let known_model = known_forces(known_epoch).map_err(CheckError::Model)?;
    let mut learned_model = known_forces(epoch).map_err(CheckError::Model)?;
    learned_model.push(Box::new(
        file.force_in(&epoch, host).map_err(CheckError::Learned)?,
    ));
    let unit = Unit::of(arc);
    if unit == Unit::Sigma && rule.max_rms_km.is_some() {
        return Err(CheckError::Arc(
            "--max-rms-km caps a position error; a tracking arc's prediction is judged in σ units"
                .into(),
        ));
    }
    let known = predict(&known_model, &known_epoch, known_x0, arc).map_err(CheckError::Arc)?;
    let learned = predict(&learned_model, &epoch, x0, arc).map_err(CheckError::Arc)?;
    let noise = noise_rms(arc);
    let outcome = rule.judge(learned.rms, known.rms, noise, unit);
    Ok(NextArcCheck {
        epoch,
        learned,
        known,
        noise,
        outcome,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_gate_fails_what_it_must_and_passes_what_it_should() {
        let rule = GateRule::default();
        // Demo-like: 8.8 m learned, 1041 m known, noise 8.7 m: passes.
        let judge = |l, k, n| rule.judge(l, k, n, Unit::Km);
        assert!(judge(0.0088, 1.041, 0.0087).passed);
        // A prediction 1.4 km off that shaves 8 m off the known forces: fails.
        assert!(!judge(1.400, 1.408, 0.0087).passed);
        // A learned force that stopped being true (known forces at the noise, learned
        // far off): fails.
        assert!(!judge(0.200, 0.009, 0.0087).passed);
        // 3.3× better than the known forces but above the noise: passes.
        assert!(judge(0.300, 0.990, 0.0087).passed);
        // An absolute cap fails an otherwise good prediction.
        let capped = GateRule {
            max_rms_km: Some(0.005),
            ..rule
        };
        let o = capped.judge(0.0088, 1.041, 0.0087, Unit::Km);
        assert!(!o.passed && o.reasons.len() == 2, "{o:?}");
        // NaN never passes.
        assert!(!judge(f64::NAN, 1.0, 0.01).passed);
        // In σ units (a tracking arc): 1.3 σ against noise 1 passes, 5 σ against the
        // known forces' 6 σ fails.
        assert!(rule.judge(1.3, 40.0, 1.0, Unit::Sigma).passed);
        assert!(!rule.judge(5.0, 6.0, 1.0, Unit::Sigma).passed);
    }
}
