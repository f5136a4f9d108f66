//! Native force plugins: the versioned C ABI (`propagator/include/arcwise_force_plugin.h`),
//! a helper that exports any Rust [`Force`](crate::force::Force) through it
//! ([`export_force_plugin!`](crate::export_force_plugin)), and a loader that checks a
//! plugin before wrapping it as an ordinary `Force` ([`loader`]).
//!
//! A plugin is native code: it runs with the rights of the user who loads it. arcwise
//! loads plugins only by explicit path and refuses files that others can write.

pub mod export;
pub mod loader;

use serde::{Deserialize, Serialize};

/// The ABI version this arcwise implements (`ARCWISE_PLUGIN_ABI_VERSION`).
pub const ABI_VERSION: u32 = 1;

/// Status codes of the ABI.
pub mod status {
    /// Success.
    pub const OK: i32 = 0;
    /// The state or time is outside the plugin's validity window.
    pub const OUTSIDE_VALIDITY: i32 = 1;
    /// The computed acceleration is NaN or infinite.
    pub const NON_FINITE: i32 = 2;
    /// The implementation failed internally (a caught panic, an error).
    pub const FAILED: i32 = 3;
    /// A null pointer or a non-finite input.
    pub const BAD_ARGUMENT: i32 = 4;
    /// The plugin reads the host's environment (its metadata's `host_density`) and was
    /// called through an entry point that does not pass it.
    pub const NEEDS_HOST_INPUT: i32 = 5;
}

/// What the host passes to a plugin that reads its environment
/// (`arcwise_environment` in the header): the drag density at the call's time and
/// position, and its gradient with respect to the ECI position.
#[repr(C)]
#[derive(Clone, Copy, Debug, Default, PartialEq)]
pub struct Environment {
    /// Density, kg/m³.
    pub density_kg_m3: f64,
    /// ∂ρ/∂r, kg/m³ per km, ECI.
    pub density_gradient: [f64; 3],
}

/// True when every value is finite. x·0 is ±0 for finite x and NaN for NaN or ±∞, so one
/// comparison of the sum replaces a branch per value: on a call that costs ~10 ns the
/// per-value branches were measurable (benches/compiled.rs).
#[inline(always)]
pub fn all_finite(values: &[f64]) -> bool {
    values.iter().fold(0.0, |acc, x| acc + x * 0.0) == 0.0
}

/// A sentence for a status code.
pub fn status_text(code: i32) -> &'static str {
    match code {
        status::OK => "success",
        status::OUTSIDE_VALIDITY => "outside the validity window",
        status::NON_FINITE => "non-finite acceleration",
        status::FAILED => "the plugin failed internally",
        status::BAD_ARGUMENT => "bad argument (null pointer or non-finite input)",
        status::NEEDS_HOST_INPUT => "the plugin reads the host's density and was called without it",
        _ => "unknown status code",
    }
}

/// The JSON metadata a plugin returns from `arcwise_plugin_metadata`.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Metadata {
    /// Must equal the version function's answer.
    pub abi_version: u32,
    /// The force's name.
    pub name: String,
    /// `ECI` (the only frame of this ABI version).
    pub frame: String,
    /// ISO 8601 UTC epoch where the plugin's `t_s = 0`.
    pub reference_epoch_utc: String,
    /// `sha256:<hex>` of the learned-force file it was compiled from; `None` when
    /// hand-written.
    pub source_checksum: Option<String>,
    /// Where the force is valid, if it says.
    pub validity: Option<Validity>,
    /// Units, for the reader.
    pub units: Units,
    /// The atmosphere (by its drag `atmosphere:` key, e.g. `nrlmsise00`) whose density
    /// the host must pass through the `_in` entry points; `None` for a plugin that
    /// computes everything itself.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub host_density: Option<String>,
}

/// A plugin's validity window.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Validity {
    /// ISO 8601 UTC start.
    pub start_utc: String,
    /// ISO 8601 UTC end.
    pub end_utc: String,
    /// Lowest altitude, km.
    pub min_altitude_km: f64,
    /// Highest altitude, km.
    pub max_altitude_km: f64,
    /// What the plugin does outside: `warn`, `zero` or `refuse`.
    pub outside: String,
    /// Seconds after `end_utc` still inside (optional, default 0).
    #[serde(default)]
    pub time_margin_s: f64,
    /// Kilometres below the lowest and above the highest altitude still inside
    /// (optional, default 0).
    #[serde(default)]
    pub altitude_margin_km: f64,
    /// Earth radius of the altitudes, km (optional, default 6378.1363).
    #[serde(default)]
    pub radius_km: Option<f64>,
}

/// The units block of the metadata.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Units {
    /// `s`.
    pub time: String,
    /// `km, km/s`.
    pub state: String,
    /// `km/s^2`.
    pub acceleration: String,
}

impl Default for Units {
    fn default() -> Self {
        Self {
            time: "s".into(),
            state: "km, km/s".into(),
            acceleration: "km/s^2".into(),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::all_finite;

    #[test]
    fn all_finite_matches_is_finite_on_every_class_of_value() {
        let values = [
            0.0,
            -0.0,
            1.0,
            -7.5e300,
            f64::MAX,
            f64::MIN_POSITIVE,
            5e-324,
            f64::NAN,
            f64::INFINITY,
            f64::NEG_INFINITY,
        ];
        for &a in &values {
            for &b in &values {
                let v = [1.0, a, 2.0, b];
                assert_eq!(all_finite(&v), v.iter().all(|x| x.is_finite()), "{a} {b}");
            }
        }
        assert!(all_finite(&[]));
    }
}
