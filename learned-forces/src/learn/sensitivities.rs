//! Stage 3: the linearized sensitivities — Φ along the training fit on a grid, and the
//! problem every candidate is solved in without another integration.

use super::*;
use crate::fit::Observing;
use linearized::ObsRow;
use nalgebra::Matrix6;
use propagator::propagation::{output_grid, Options, Request, Silent};
use propagator::variational::propagate_with_partials;

impl Learner<'_> {
    /// The linearized problem around a fit of `train`.
    pub(super) fn problem(&self, train: &Arc, base: &FitResult) -> Result<Problem, LearnError> {
        let t_obs: Vec<f64> = train
            .observations
            .iter()
            .map(|o| o.epoch.seconds_since(&train.start()))
            .collect();
        let span = *t_obs.last().unwrap_or(&0.0);
        let mut grid = output_grid(0.0, span, self.options.grid_step_s);
        grid.extend(&t_obs);
        grid.sort_by(|a, b| a.total_cmp(b));
        grid.dedup_by(|a, b| (*a - *b).abs() < 1e-6);
        let parameters: Vec<Parameter> = base.estimates.iter().map(|e| e.parameter).collect();
        let mut fm = self.fit_model(&parameters, None)?;
        fm.values = base.values.clone();
        let options = Options {
            settings: self.options.fit.settings,
            altitude_floor_km: self.options.fit.altitude_floor_km,
            ..Options::default()
        };
        let req = Request {
            x0: base.x0,
            t0_s: 0.0,
            t_end_s: span,
            output_times_s: &grid,
            stop_times_s: &[],
        };
        let samples = propagate_with_partials(&fm, &req, &options, &mut Silent)
            .map_err(|e| LearnError::Unfit(e.to_string()))?;
        let states: Vec<_> = samples.iter().map(|s| s.state).collect();
        let phis: Vec<Matrix6<f64>> = samples.iter().map(|s| s.phi).collect();
        let observing = Observing::new(train);
        let mut rows = Vec::new();
        let mut row = 0;
        let mut scratch = Vec::new();
        for i in 0..train.observations.len() {
            if !base.residuals[i].used {
                continue;
            }
            let gi = grid.partition_point(|g| *g < t_obs[i] - 1e-6);
            scratch.clear();
            observing
                .rows(i, &states[gi], &mut scratch)
                .map_err(LearnError::Unfit)?;
            let h_phi: Vec<([f64; 6], f64)> = scratch
                .iter()
                .map(|r| {
                    let hp =
                        std::array::from_fn(|j| (0..6).map(|k| r.h[k] * phis[gi][(k, j)]).sum());
                    (hp, r.sigma)
                })
                .collect();
            let n = h_phi.len();
            rows.push(ObsRow {
                grid_index: gi,
                row,
                h_phi,
            });
            row += n;
        }
        if row != base.weighted_residual.len() {
            return Err(LearnError::Unfit(
                "internal: residual rows do not match".into(),
            ));
        }
        Problem::new(
            grid,
            &states,
            &phis,
            rows,
            &base.jacobian,
            base.weighted_residual.clone(),
            self.context.clone(),
        )
        .ok_or_else(|| LearnError::Unfit("the transition matrix is singular along the arc".into()))
    }
}
