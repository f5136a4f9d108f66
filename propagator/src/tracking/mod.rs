//! Tracking data: what sensors measure of an object (ranges, range rates, angles), as
//! opposed to its positions: read from CCSDS Tracking Data Messages ([`tdm`]), seen from
//! sites on the Earth ([`site`]).

pub mod light_time;
pub mod measurement;
pub mod site;
pub mod sites_file;
pub mod tdm;
