//! # propagator
//!
//! arcwise's orbit propagator: epochs and time scales ([`time`]), frames ([`frames`],
//! [`elements`]), the force interface and the built-in forces ([`force`],
//! [`atmosphere`]), integrators with continuous output ([`integrator`]), the driver
//! that produces ephemerides ([`propagation`]), the `forces.yaml` and state files
//! ([`config`]) and ephemeris files ([`ephemeris`]).
//!
//! Units everywhere: km, km/s, km/s², seconds; mass kg and area m² (converted once,
//! in the drag force). Frame: ECI, the J2000 mean equator and equinox treated as GCRF;
//! zonal gravity takes the ECI z axis as the pole.
//!
//! This crate knows nothing about learning: a learned force reaches it only through
//! the [`force::Force`] trait, like every other force.

#![cfg_attr(not(test), deny(clippy::unwrap_used, clippy::expect_used))]

pub mod atmosphere;
pub mod body;
pub mod cleanup;
pub mod config;
pub mod earth;
pub mod elements;
pub mod ephemeris;
pub mod force;
pub mod frames;
pub mod input;
pub mod integrator;
pub mod notice;
pub mod plugin;
pub mod propagation;
pub mod screening;
pub mod solar_system;
pub mod state;
pub mod text;
pub mod time;
pub mod tracking;
pub mod variational;

pub use body::CentralBody;
pub use force::{Force, ForceError, ForceModel};
pub use state::StateVector;
pub use time::{Epoch, TimeAxis};
