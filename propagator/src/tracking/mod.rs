//! Tracking data: what sensors measure of an object (ranges, range rates, angles), as
//! opposed to its positions. Read from CCSDS Tracking Data Messages ([`tdm`]).

pub mod tdm;
