//! Stage 1: the base fit — the known forces alone on the whole arc, and whether the arc
//! spans a revolution (over less, only a quiet verdict can be given).

use super::{FitObserver, FitResult, LearnError, Learner};
use crate::fit::fit;

impl Learner<'_> {
    /// The base fit, and whether the arc is shorter than one revolution of the fitted
    /// orbit (its span and the period, s): over less than a revolution a small force and a
    /// change of the orbit itself cannot be told apart, so a term learned there would be
    /// unfounded — but a quiet verdict still says the known forces explain the arc.
    pub(super) fn base_fit(
        &self,
        fit_observer: &mut dyn FitObserver,
    ) -> Result<(FitResult, Option<ShortArc>), LearnError> {
        let model = self.fit_model(&self.options.estimate, None)?;
        let base = fit(self.arc, model, &self.options.fit, fit_observer)?;
        let span_s = self.arc.end().seconds_since(&self.arc.start());
        let mu = propagator::CentralBody::EARTH_EGM96.mu_km3_s2;
        let r = base.x0.fixed_rows::<3>(0).norm();
        let v2 = base.x0.fixed_rows::<3>(3).norm_squared();
        let energy = v2 / 2.0 - mu / r;
        if energy >= 0.0 {
            return Err(LearnError::Unfit(format!(
                "the fitted orbit is not closed (specific energy {energy:.3} km²/s² ≥ 0, hyperbolic or parabolic): learning needs a bound Earth orbit"
            )));
        }
        let a = -mu / (2.0 * energy);
        let period_s = std::f64::consts::TAU * (a * a * a / mu).sqrt();
        Ok((
            base,
            (span_s < period_s).then_some(ShortArc { span_s, period_s }),
        ))
    }
}

/// An arc shorter than one revolution of its fitted orbit.
pub(super) struct ShortArc {
    span_s: f64,
    period_s: f64,
}

impl ShortArc {
    pub(super) fn span(&self) -> String {
        format!(
            "the arc spans {:.1} min, less than one revolution ({:.1} min)",
            self.span_s / 60.0,
            self.period_s / 60.0
        )
    }

    /// Why nothing can be learned on it.
    pub(super) fn refusal(&self) -> LearnError {
        LearnError::Unfit(format!(
            "{}: too short to tell a force from a change of the orbit; give at least one revolution (a day or more is usual)",
            self.span()
        ))
    }
}
