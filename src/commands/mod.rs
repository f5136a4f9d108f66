//! One module per command; each parses its options into library calls.

pub mod build;
pub mod check;
pub mod demo;
pub mod fit;
pub mod learn;
pub mod propagate;
pub mod rank;
pub mod screen;
pub mod simulate;
