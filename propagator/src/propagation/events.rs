//! Events inside a step: the force model's switching functions (a root redoes the step
//! to end on it) and the crossing of a threshold located on the dense output.

use super::*;

/// The force model's switching functions along the integration (see
/// [`crate::force::Force::switching`]): their signs at the start of the current step,
/// held by the forces over it, and the state there, so that a step straddling a root can
/// be redone to end on it.
pub(super) struct Switching<'m> {
    model: &'m ForceModel,
    /// The integration segment the signs are held over.
    segment: Segment,
    /// Sign of each function (true: ≥ 0) at the start of the current step.
    positive: Vec<bool>,
    /// Scratch for the functions' values.
    values: Vec<f64>,
    /// State at the start of the current step (left empty when there are no functions).
    y_prev: Vec<f64>,
    /// While a root is being reached again: which function, and its sign past the root.
    pending: Option<(usize, bool)>,
}

impl<'m> Switching<'m> {
    pub(super) fn new(model: &'m ForceModel, dim: usize) -> Self {
        let y_prev = if model.n_switching() == 0 {
            Vec::new()
        } else {
            vec![0.0; dim]
        };
        Self {
            model,
            segment: Segment::UNBOUNDED,
            positive: Vec::new(),
            values: Vec::new(),
            y_prev,
            pending: None,
        }
    }

    fn active(&self) -> bool {
        !self.y_prev.is_empty()
    }

    /// Signs at a fresh start (a segment's, or a root's), handed to the system to hold.
    pub(super) fn reset<S: SegmentAware>(
        &mut self,
        sys: &mut S,
        segment: Segment,
        t: f64,
        y: &[f64],
    ) {
        self.segment = segment;
        if self.active() {
            self.model.switching(
                t,
                &StateVector::from_column_slice(&y[..6]),
                &mut self.values,
            );
            self.positive = self.values.iter().map(|&g| g >= 0.0).collect();
            if let Some((i, past)) = self.pending.take() {
                self.positive[i] = past;
            }
        }
        self.hold(sys);
    }

    fn hold<S: SegmentAware>(&self, sys: &mut S) {
        let sides = (self.active() && self.positive.len() <= 64).then(|| {
            self.positive
                .iter()
                .enumerate()
                .fold(0u64, |bits, (i, &p)| bits | (u64::from(p) << i))
        });
        sys.set_segment(Segment {
            sides,
            ..self.segment
        });
    }

    /// Keeps the state at the start of the step about to be taken.
    pub(super) fn remember(&mut self, y: &[f64]) {
        if self.active() {
            self.y_prev.copy_from_slice(y);
        }
    }

    /// The earliest root (in the direction `dir`) of a function that changed sign over the
    /// last step `[t_prev, t]`, located on the dense output; `None` when none did.
    pub(super) fn first_root<S: OdeSystem>(
        &mut self,
        stepper: &mut AnyStepper,
        sys: &mut S,
        t_prev: f64,
        t: f64,
        dir: f64,
    ) -> Result<Option<f64>, IntegrationError> {
        if !self.active() {
            return Ok(None);
        }
        let x = StateVector::from_column_slice(&stepper.y()[..6]);
        self.model.switching(t, &x, &mut self.values);
        let mut first: Option<(f64, usize)> = None;
        for i in 0..self.values.len() {
            if (self.values[i] >= 0.0) == self.positive[i] {
                continue;
            }
            let sign = if self.positive[i] { 1.0 } else { -1.0 };
            let model = self.model;
            let mut scratch = Vec::with_capacity(self.values.len());
            let root = locate_crossing(stepper, sys, t_prev, t, |tm, y| {
                model.switching(tm, &StateVector::from_column_slice(&y[..6]), &mut scratch);
                sign * scratch[i]
            })?;
            if first.is_none_or(|(r, _)| (root - r) * dir < 0.0) {
                first = Some((root, i));
            }
        }
        Ok(first.map(|(root, i)| {
            self.pending = Some((i, !self.positive[i]));
            root
        }))
    }

    /// Restarts the stepper at the start of the last step, heading for the root; the
    /// signs held are still those of the step's start.
    pub(super) fn rewind<S: OdeSystem>(
        &mut self,
        stepper: &mut AnyStepper,
        sys: &mut S,
        t_prev: f64,
        t_root: f64,
    ) -> Result<(), IntegrationError> {
        stepper.resume(sys, t_prev, &self.y_prev, t_root)
    }

    /// At the root: the crossed function's sign set to its side past the root (its value
    /// there is zero to rounding), the stepper restarted there toward `seg_end`.
    pub(super) fn arrive<S: OdeSystem + SegmentAware>(
        &mut self,
        stepper: &mut AnyStepper,
        sys: &mut S,
        seg_end: f64,
    ) -> Result<(), IntegrationError> {
        let (t, y) = (stepper.t(), stepper.y().to_vec());
        self.reset(sys, self.segment, t, &y);
        stepper.resume(sys, t, &y, seg_end)
    }
}

/// Finds where `g` changes sign inside the last step, by bisection on the dense
/// output (to 1 µs; g(t, y) is positive at `t_a`, negative at `t_b`).
pub(super) fn locate_crossing<S: OdeSystem>(
    stepper: &mut AnyStepper,
    sys: &mut S,
    t_a: f64,
    t_b: f64,
    mut g: impl FnMut(f64, &[f64]) -> f64,
) -> Result<f64, IntegrationError> {
    let mut buf = vec![0.0; sys.dim()];
    let (mut a, mut b) = (t_a, t_b);
    for _ in 0..200 {
        if (b - a).abs() < 1e-6 {
            break;
        }
        let m = 0.5 * (a + b);
        stepper.dense_at(sys, m, &mut buf)?;
        if g(m, &buf) >= 0.0 {
            a = m;
        } else {
            b = m;
        }
    }
    Ok(b)
}
