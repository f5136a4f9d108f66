//! The real Earth: orientation in space (IERS Earth-orientation data and the IAU
//! 2006/2000A chain between GCRF and ITRF).

pub mod eop;
pub mod orientation;

pub use eop::EopTable;
pub use orientation::{EarthOrientation, EarthRotation};
