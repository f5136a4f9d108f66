//! The real Earth: orientation in space (IERS Earth-orientation data and the IAU
//! 2006/2000A chain between GCRF and ITRF) the gravity field in spherical harmonics, and
//! the solid tides raised on it by the Sun and Moon.

pub mod eop;
pub mod gfc;
pub mod gravity;
pub mod orientation;
pub mod tides;

pub use eop::EopTable;
pub use gravity::{GravityField, Harmonics};
pub use orientation::{EarthOrientation, EarthRotation};
pub use tides::SolidTides;
