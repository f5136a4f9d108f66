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

use crate::error::CliError;
use clap::Args as ClapArgs;
use learned_forces::arc::ArcDefaults;

/// How an arc file is read: shared by every command that reads one.
#[derive(ClapArgs, Debug, Clone)]
pub struct ArcOptions {
    /// σ of observations without a sigma_km column, km.
    #[arg(long, default_value_t = 0.01, value_name = "KM")]
    pub sigma_km: f64,
    /// The satellite to take from an SP3 file of many (e.g. G05).
    #[arg(long, value_name = "ID")]
    pub object: Option<String>,
}

impl ArcOptions {
    /// The arc reader's defaults, or an error naming the bad option.
    pub fn defaults(&self) -> Result<ArcDefaults, CliError> {
        if !(self.sigma_km.is_finite() && self.sigma_km > 0.0) {
            return Err(CliError::input(format!(
                "--sigma-km {}: must be positive (km)",
                self.sigma_km
            )));
        }
        if let Some(o) = &self.object {
            propagator::text::check_name("--object", o).map_err(CliError::input)?;
        }
        Ok(ArcDefaults {
            sigma_km: self.sigma_km,
            object: self.object.clone(),
            ..ArcDefaults::default()
        })
    }
}
