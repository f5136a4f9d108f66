//! The `srp:`, `third_body:` and `maneuvers:` blocks.

use super::*;

/// `srp:` block.
#[derive(Clone, Debug, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct SrpSpec {
    /// Radiation-pressure coefficient, dimensionless (1 absorbing … 2 mirror).
    #[serde(deserialize_with = "positive_cr")]
    pub cr: f64,
    /// Area, m².
    #[serde(deserialize_with = "positive_area")]
    pub area_m2: f64,
    /// Mass, kg.
    #[serde(deserialize_with = "positive_mass")]
    pub mass_kg: f64,
    /// `none`, `cylindrical` or `conical` (the default).
    #[serde(default)]
    pub shadow: ShadowKey,
    /// Multiplier on the SRP acceleration (default 1).
    #[serde(default = "scale_default", deserialize_with = "positive_scale")]
    pub scale: f64,
}

/// `shadow:` values.
#[derive(Clone, Copy, Debug, Default, Deserialize, PartialEq, Eq)]
#[serde(rename_all = "lowercase")]
pub enum ShadowKey {
    /// Always lit.
    None,
    /// Cylindrical shadow.
    Cylindrical,
    /// Umbra and penumbra.
    #[default]
    Conical,
}

/// `third_body:` entries.
#[derive(Clone, Copy, Debug, Deserialize, PartialEq, Eq)]
#[serde(rename_all = "lowercase")]
pub enum ThirdBodyKey {
    /// The Sun.
    Sun,
    /// The Moon.
    Moon,
}

/// One entry of `maneuvers:`.
#[derive(Clone, Debug, Deserialize, PartialEq)]
#[serde(rename_all = "lowercase")]
pub enum ManeuverSpec {
    /// An instantaneous Δv.
    Impulsive(ImpulsiveSpec),
    /// A constant RTN acceleration over an interval.
    Finite(FiniteSpec),
}

/// `impulsive:` — give exactly one of `dv_rtn_km_s` or `dv_eci_km_s`.
#[derive(Clone, Debug, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct ImpulsiveSpec {
    /// ISO 8601 UTC.
    pub epoch_utc: String,
    /// Δv in RTN, km/s.
    #[serde(default, deserialize_with = "finite3")]
    pub dv_rtn_km_s: Option<[f64; 3]>,
    /// Δv in ECI, km/s.
    #[serde(default, deserialize_with = "finite3")]
    pub dv_eci_km_s: Option<[f64; 3]>,
}

/// `finite:` burn.
#[derive(Clone, Debug, Deserialize, PartialEq)]
#[serde(deny_unknown_fields)]
pub struct FiniteSpec {
    /// Start, ISO 8601 UTC.
    pub start_utc: String,
    /// End, ISO 8601 UTC.
    pub end_utc: String,
    /// Acceleration in RTN, km/s².
    #[serde(deserialize_with = "finite3_required")]
    pub accel_rtn_km_s2: [f64; 3],
}
