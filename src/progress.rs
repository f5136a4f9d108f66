//! Progress bars for long work, shown only when stderr is a terminal.

use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};
use propagator::propagation::Observer;
use std::io::IsTerminal;
use std::time::{Duration, Instant};

/// A propagation progress bar over simulated time (hidden when not a terminal).
pub struct PropagationProgress {
    bar: Option<ProgressBar>,
    last: Instant,
}

impl PropagationProgress {
    /// A bar labelled `label`; nothing is drawn unless stderr is a terminal.
    pub fn new(label: &str) -> Self {
        let bar = std::io::stderr().is_terminal().then(|| {
            let b = ProgressBar::with_draw_target(Some(1000), ProgressDrawTarget::stderr());
            b.set_style(
                ProgressStyle::with_template("{prefix} [{bar:40}] {percent:>3}% {msg}")
                    .unwrap_or_else(|_| ProgressStyle::default_bar())
                    .progress_chars("=> "),
            );
            b.set_prefix(label.to_string());
            b
        });
        Self {
            bar,
            last: Instant::now(),
        }
    }

    /// Removes the bar.
    pub fn finish(&self) {
        if let Some(b) = &self.bar {
            b.finish_and_clear();
        }
    }
}

impl Observer for PropagationProgress {
    fn on_step(&mut self, t_s: f64, t_start_s: f64, t_end_s: f64) {
        let Some(bar) = &self.bar else { return };
        if self.last.elapsed() < Duration::from_millis(100) {
            return;
        }
        self.last = Instant::now();
        let span = (t_end_s - t_start_s).abs().max(1e-9);
        let done = ((t_s - t_start_s).abs() / span * 1000.0).clamp(0.0, 1000.0);
        bar.set_position(done as u64);
        bar.set_message(format!(
            "{:.2} of {:.2} days",
            (t_s - t_start_s).abs() / 86400.0,
            span / 86400.0
        ));
    }
}

/// A spinner for the fit: stage, iteration, weighted RMS (hidden when not a terminal).
pub struct FitProgress {
    bar: Option<ProgressBar>,
}

impl FitProgress {
    /// A spinner labelled `label`.
    pub fn new(label: &str) -> Self {
        let bar = std::io::stderr().is_terminal().then(|| {
            let b = ProgressBar::with_draw_target(None, ProgressDrawTarget::stderr());
            b.set_style(
                ProgressStyle::with_template("{prefix} {spinner} {msg}")
                    .unwrap_or_else(|_| ProgressStyle::default_spinner()),
            );
            b.set_prefix(label.to_string());
            b.enable_steady_tick(Duration::from_millis(120));
            b
        });
        Self { bar }
    }

    /// Removes the spinner.
    pub fn finish(&self) {
        if let Some(b) = &self.bar {
            b.finish_and_clear();
        }
    }
}

impl learned_forces::fit::FitObserver for FitProgress {
    fn on_iteration(&mut self, stage: usize, stages: usize, iteration: usize, weighted_rms: f64) {
        if let Some(b) = &self.bar {
            b.set_message(format!(
                "stage {stage}/{stages}, iteration {iteration}, weighted RMS {weighted_rms:.3}"
            ));
        }
    }
}

/// A bar over search generations: best cost, front size, candidates per second.
pub struct SearchProgress {
    bar: Option<ProgressBar>,
}

impl SearchProgress {
    /// A bar labelled `label` over `generations`.
    pub fn new(label: &str, generations: usize) -> Self {
        let bar = std::io::stderr().is_terminal().then(|| {
            let b = ProgressBar::with_draw_target(
                Some(generations as u64),
                ProgressDrawTarget::stderr(),
            );
            b.set_style(
                ProgressStyle::with_template("{prefix} [{bar:30}] generation {pos}/{len} {msg}")
                    .unwrap_or_else(|_| ProgressStyle::default_bar())
                    .progress_chars("=> "),
            );
            b.set_prefix(label.to_string());
            b
        });
        Self { bar }
    }

    /// Removes the bar.
    pub fn finish(&self) {
        if let Some(b) = &self.bar {
            b.finish_and_clear();
        }
    }
}

impl learned_forces::learn::search::SearchObserver for SearchProgress {
    fn on_generation(
        &self,
        generation: usize,
        _generations: usize,
        best_cost: f64,
        front: usize,
        evals_per_s: f64,
    ) {
        if let Some(b) = &self.bar {
            b.set_position(generation as u64);
            b.set_message(format!(
                "best cost {best_cost:.1}, front {front}, {evals_per_s:.0} candidates/s"
            ));
        }
    }
}
