//! # learned_forces
//!
//! arcwise's learner: observation arcs, the orbit fit, symbolic residual forces and
//! learned-force files. It depends on `propagator` and reaches it only through the
//! `Force` trait. (Built up by the later issues; nothing here yet but the crate.)

pub use propagator;
