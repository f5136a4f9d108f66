//! Progress for long work: a bar on a terminal; otherwise (a log, a pipe, CI) one line on
//! stderr every few seconds, so a long run never sits silent for minutes.

use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};
use propagator::propagation::Observer;
use std::io::IsTerminal;
use std::sync::Mutex;
use std::time::{Duration, Instant};

/// Seconds between progress lines when stderr is not a terminal (default 5;
/// `ARCWISE_PROGRESS_EVERY_S` overrides it).
fn line_interval() -> Duration {
    std::env::var("ARCWISE_PROGRESS_EVERY_S")
        .ok()
        .and_then(|v| v.parse::<f64>().ok())
        .filter(|v| v.is_finite() && *v >= 0.0)
        .map(Duration::from_secs_f64)
        .unwrap_or(Duration::from_secs(5))
}

/// Where progress goes: a bar, or timed lines.
struct Sink {
    bar: Option<ProgressBar>,
    label: String,
    every: Duration,
    last_line: Mutex<Instant>,
}

impl Sink {
    /// `len` for a bar with a length, `None` for a spinner.
    fn new(label: &str, len: Option<u64>, template: &str) -> Self {
        let bar = std::io::stderr().is_terminal().then(|| {
            let b = ProgressBar::with_draw_target(len, ProgressDrawTarget::stderr());
            let style = ProgressStyle::with_template(template).unwrap_or_else(|_| {
                if len.is_some() {
                    ProgressStyle::default_bar()
                } else {
                    ProgressStyle::default_spinner()
                }
            });
            b.set_style(style.progress_chars("=> "));
            b.set_prefix(label.to_string());
            if len.is_none() {
                b.enable_steady_tick(Duration::from_millis(120));
            }
            b
        });
        Self {
            bar,
            label: label.to_string(),
            every: line_interval(),
            last_line: Mutex::new(Instant::now()),
        }
    }

    /// New position (bars) and message.
    fn update(&self, position: Option<u64>, message: impl FnOnce() -> String) {
        match &self.bar {
            Some(b) => {
                if let Some(p) = position {
                    b.set_position(p);
                }
                b.set_message(message());
            }
            None => {
                let mut last = self.last_line.lock().unwrap_or_else(|p| p.into_inner());
                if last.elapsed() >= self.every {
                    *last = Instant::now();
                    eprintln!("{}: {}", self.label, message());
                }
            }
        }
    }

    fn finish(&self) {
        if let Some(b) = &self.bar {
            b.finish_and_clear();
        }
    }
}

/// Propagation progress over simulated time.
pub struct PropagationProgress {
    sink: Sink,
    last: Instant,
}

impl PropagationProgress {
    /// Progress labelled `label`.
    pub fn new(label: &str) -> Self {
        Self {
            sink: Sink::new(label, Some(1000), "{prefix} [{bar:40}] {percent:>3}% {msg}"),
            last: Instant::now(),
        }
    }

    /// Removes the bar.
    pub fn finish(&self) {
        self.sink.finish();
    }
}

impl Observer for PropagationProgress {
    fn on_step(&mut self, t_s: f64, t_start_s: f64, t_end_s: f64) {
        if self.last.elapsed() < Duration::from_millis(100) {
            return;
        }
        self.last = Instant::now();
        let span = (t_end_s - t_start_s).abs().max(1e-9);
        let done = ((t_s - t_start_s).abs() / span * 1000.0).clamp(0.0, 1000.0);
        self.sink.update(Some(done as u64), || {
            format!(
                "{:.2} of {:.2} days",
                (t_s - t_start_s).abs() / 86400.0,
                span / 86400.0
            )
        });
    }
}

/// Fit progress: stage, iteration, weighted RMS.
pub struct FitProgress {
    sink: Sink,
}

impl FitProgress {
    /// Progress labelled `label`.
    pub fn new(label: &str) -> Self {
        Self {
            sink: Sink::new(label, None, "{prefix} {spinner} {msg}"),
        }
    }

    /// Removes the spinner.
    pub fn finish(&self) {
        self.sink.finish();
    }
}

impl learned_forces::fit::FitObserver for FitProgress {
    fn on_iteration(&mut self, stage: usize, stages: usize, iteration: usize, weighted_rms: f64) {
        self.sink.update(None, || {
            format!("stage {stage}/{stages}, iteration {iteration}, weighted RMS {weighted_rms:.3}")
        });
    }
}

/// Search progress over generations: best cost, front size, candidates per second.
pub struct SearchProgress {
    sink: Sink,
}

impl SearchProgress {
    /// Progress labelled `label` over `generations`.
    pub fn new(label: &str, generations: usize) -> Self {
        Self {
            sink: Sink::new(
                label,
                Some(generations as u64),
                "{prefix} [{bar:30}] generation {pos}/{len} {msg}",
            ),
        }
    }

    /// Removes the bar.
    pub fn finish(&self) {
        self.sink.finish();
    }
}

impl learned_forces::learn::search::SearchObserver for SearchProgress {
    fn on_generation(
        &self,
        generation: usize,
        generations: usize,
        best_cost: f64,
        front: usize,
        evals_per_s: f64,
    ) {
        self.sink.update(Some(generation as u64), || {
            format!(
                "generation {generation}/{generations}, best cost {best_cost:.1}, front {front}, {evals_per_s:.0} candidates/s"
            )
        });
    }
}

/// Progress over a count of items done in any order, from any thread (screening).
pub struct CountProgress {
    sink: Sink,
    done: std::sync::atomic::AtomicU64,
    total: u64,
}

impl CountProgress {
    /// Progress labelled `label` over `total` items.
    pub fn new(label: &str, total: usize) -> Self {
        Self {
            sink: Sink::new(
                label,
                Some(total as u64),
                "{prefix} [{bar:40}] {pos}/{len} {msg}",
            ),
            done: std::sync::atomic::AtomicU64::new(0),
            total: total as u64,
        }
    }

    /// One more item done.
    pub fn tick(&self) {
        let n = self.done.fetch_add(1, std::sync::atomic::Ordering::Relaxed) + 1;
        self.sink
            .update(Some(n), || format!("{n} of {} done", self.total));
    }

    /// Removes the bar.
    pub fn finish(&self) {
        self.sink.finish();
    }
}
