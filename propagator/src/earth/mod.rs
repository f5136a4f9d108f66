//! The real Earth: orientation in space (IERS Earth-orientation data and the IAU
//! 2006/2000A chain between GCRF and ITRF) and the gravity field in spherical harmonics.

pub mod eop;
pub mod gfc;
pub mod gravity;
pub mod orientation;

pub use eop::EopTable;
pub use gravity::{GravityField, Harmonics};
pub use orientation::{EarthOrientation, EarthRotation};
