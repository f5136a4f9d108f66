//! # learned_forces
//!
//! arcwise's learner: observation arcs ([`arc`]), the orbit fit and anomaly verdict
//! ([`fit`]), and simulated scenarios ([`scenario`]). It depends on `propagator` and
//! reaches the dynamics only through its `Force` and `Dynamics` traits.

#![cfg_attr(not(test), deny(clippy::unwrap_used, clippy::expect_used))]

pub mod arc;
pub mod codegen;
pub mod fit;
pub mod scenario;

pub use propagator;
pub mod expr;
pub mod learn;
pub mod learned_file;
pub mod model_error;
pub mod next_arc;
pub mod termination;
pub mod terms;
pub mod tracking_arc;
