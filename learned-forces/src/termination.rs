//! Why an iterative stage stopped: one type for the fit's Gauss–Newton iterations and the
//! learner's search, so reports say the reason, not a bare "converged".

/// The reason an iteration or a search ended.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Termination {
    /// Converged: the last step was below 1e-4 of every parameter's formal σ.
    StepBelowSigma,
    /// Converged: the cost stopped improving (relative change below 1e-12).
    NoImprovement,
    /// Converged: no downhill step at any damping (at the minimum to numerical precision).
    NoDownhillStep,
    /// Not converged: the iteration limit was reached.
    IterationLimit,
    /// Not converged: the cost is not finite.
    NotFinite,
    /// The search ran all its generations.
    Generations,
    /// The search reached its wall-clock limit (`--time-limit`).
    TimeLimit,
    /// The search had no survivors to breed from.
    NoSurvivors,
}

impl Termination {
    /// Whether an iteration ended at a solution (a search always counts as ended well).
    pub fn converged(self) -> bool {
        !matches!(self, Termination::IterationLimit | Termination::NotFinite)
    }

    /// The report's word.
    pub fn as_str(self) -> &'static str {
        match self {
            Termination::StepBelowSigma => "step_below_sigma",
            Termination::NoImprovement => "no_improvement",
            Termination::NoDownhillStep => "no_downhill_step",
            Termination::IterationLimit => "iteration_limit",
            Termination::NotFinite => "not_finite",
            Termination::Generations => "generations",
            Termination::TimeLimit => "time_limit",
            Termination::NoSurvivors => "no_survivors",
        }
    }
}
