//! What learning returns: the chosen model, the front, the search's statistics and the
//! outcome (explained or not: the written model's verdict).

use super::*;

/// One entry of the reported front.
#[derive(Clone, Debug, PartialEq)]
pub struct FrontEntry {
    /// Complexity (nodes plus coefficients).
    pub complexity: usize,
    /// The model as text: `c0 * (g0) + c1 * (g1)` with the constants substituted.
    pub formula: String,
    /// Weighted cost left on the training arc, linearized.
    pub cost: f64,
    /// Held-out position RMS after refinement, km (refined candidates only).
    pub held_out_rms: Option<f64>,
}

/// The chosen model, fitted on the whole arc.
#[derive(Clone, Debug)]
pub struct Chosen {
    /// The terms, with their σ (unused constants are NaN).
    pub terms: Terms,
    /// The fit of the whole arc with the learned force in the dynamics.
    pub fit: FitResult,
    /// Held-out RMS of this model (trained on the early part), km.
    pub held_out_rms: f64,
    /// Fraction of each term's signature absorbed by the initial-state directions.
    pub absorbed: Vec<f64>,
}

/// Everything the learner found.
#[derive(Clone, Debug)]
pub struct Learned {
    /// Base fit of the whole arc with the known forces.
    pub base: FitResult,
    /// The chosen model; `None` when nothing is anomalous or nothing helps.
    pub chosen: Option<Chosen>,
    /// The front, simplest first.
    pub front: Vec<FrontEntry>,
    /// Held-out RMS of the base model, km.
    pub held_out_rms_base: Option<f64>,
    /// Sentences for the report.
    pub notes: Vec<String>,
    /// Candidate evaluations, generations, seconds of the search.
    pub search_stats: Option<SearchStats>,
    /// What each search seed chose (empty when nothing was searched).
    pub seed_runs: Vec<SeedRun>,
    /// The periodograms and onset scans that seeded the search (empty when nothing was
    /// searched), with the training residual's χ² before any term.
    pub timing: Option<(timing::Timing, f64)>,
}

/// How the search went: its size, its time and why it stopped (summed over the seeds).
#[derive(Clone, Copy, Debug)]
pub struct SearchStats {
    /// Searches run (one per seed).
    pub runs: usize,
    /// Candidate evaluations.
    pub evaluations: usize,
    /// Generations run.
    pub generations: usize,
    /// Wall time, s.
    pub seconds: f64,
    /// Why the last search stopped.
    pub termination: crate::termination::Termination,
}

impl SearchStats {
    /// The statistics of several seeds' searches, summed.
    pub fn of(searches: &[search::SearchResult]) -> SearchStats {
        SearchStats {
            runs: searches.len(),
            evaluations: searches.iter().map(|s| s.evaluations).sum(),
            generations: searches.iter().map(|s| s.generations).sum(),
            seconds: searches.iter().map(|s| s.seconds).sum(),
            termination: searches
                .last()
                .map_or(crate::termination::Termination::Generations, |s| {
                    s.termination
                }),
        }
    }
}

/// What learning concluded about the arc.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Outcome {
    /// The known forces explain the arc: nothing was learned.
    NoAnomaly,
    /// The arc is anomalous and the learned model passes the same anomaly test.
    Explained,
    /// A model was learned but the arc still fails the anomaly test with it.
    NotExplained,
    /// The arc is anomalous and no candidate earned its place.
    NothingFound,
}

impl Outcome {
    /// The report's name of the outcome.
    pub fn as_str(self) -> &'static str {
        match self {
            Outcome::NoAnomaly => "no_anomaly",
            Outcome::Explained => "explained",
            Outcome::NotExplained => "not_explained",
            Outcome::NothingFound => "nothing_found",
        }
    }

    /// Whether the arc ends up explained (by the known forces or the learned model).
    pub fn is_explained(self) -> bool {
        matches!(self, Outcome::NoAnomaly | Outcome::Explained)
    }
}

impl Outcome {
    /// From the base fit's verdict and the learned model's (`None`: nothing learned).
    pub fn from_verdicts(base_anomaly: bool, learned_anomaly: Option<bool>) -> Outcome {
        match (base_anomaly, learned_anomaly) {
            (false, _) => Outcome::NoAnomaly,
            (true, Some(false)) => Outcome::Explained,
            (true, Some(true)) => Outcome::NotExplained,
            (true, None) => Outcome::NothingFound,
        }
    }
}

impl Learned {
    /// The outcome: the verdict of the model that was written, not of the base fit.
    pub fn outcome(&self) -> Outcome {
        Outcome::from_verdicts(
            self.base.verdict.anomaly,
            self.chosen.as_ref().map(|c| c.fit.verdict.anomaly),
        )
    }
}

/// Why learning could not be done.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum LearnError {
    /// A fit failed.
    #[error(transparent)]
    Fit(#[from] FitError),
    /// The inputs cannot support learning.
    #[error("{0}")]
    Unfit(String),
}
