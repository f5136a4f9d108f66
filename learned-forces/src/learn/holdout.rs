//! Stage 2: the hold-out split — train on the early part of the arc, keep the tail to
//! choose between candidates by how well they predict it.

use super::{FitObserver, FitOptions, FitResult, LearnError, Learner};
use crate::arc::Arc;
use crate::fit::fit;

/// The arc cut in two.
pub(super) struct HoldOut {
    /// Observations up to the cut.
    pub(super) train: Arc,
    /// Observations after it.
    pub(super) held: Arc,
    /// The cut, s from the arc's start.
    pub(super) cut_s: f64,
}

impl HoldOut {
    /// The last `fraction` of the arc's span held out; refused when too little is left
    /// on either side.
    pub(super) fn split(arc: &Arc, fraction: f64) -> Result<Self, LearnError> {
        let span = arc.end().seconds_since(&arc.start());
        let cut_s = (1.0 - fraction) * span;
        let (train_obs, held_obs): (Vec<_>, Vec<_>) = arc
            .observations
            .iter()
            .partition(|o| o.epoch.seconds_since(&arc.start()) <= cut_s);
        let train = Arc {
            observations: train_obs.into_iter().copied().collect(),
            tracking: arc.tracking.clone(),
        };
        let held = Arc {
            observations: held_obs.into_iter().copied().collect(),
            tracking: arc.tracking.clone(),
        };
        if train.observations.len() < 10 || held.observations.is_empty() {
            return Err(LearnError::Unfit(
                "the arc is too short to hold out a part for selection".into(),
            ));
        }
        Ok(Self { train, held, cut_s })
    }
}

impl Learner<'_> {
    /// The known forces fitted to the training part, from the base fit's state.
    pub(super) fn train_fit(
        &self,
        split: &HoldOut,
        base: &FitResult,
        observer: &mut dyn FitObserver,
    ) -> Result<FitResult, LearnError> {
        Ok(fit(
            &split.train,
            self.fit_model(&self.options.estimate, None)?,
            &FitOptions {
                initial_state: Some(base.x0),
                ..self.options.fit.clone()
            },
            observer,
        )?)
    }
}
