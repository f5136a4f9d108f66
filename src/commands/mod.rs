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
    /// The known model's own error: a position floor added in quadrature to every σ, km.
    /// Default: none for the zonal model; from the model and the arc's span for a full
    /// gravity field (see the README, "Model error").
    #[arg(long, value_name = "KM")]
    pub model_error_km: Option<f64>,
    /// The frame of a CSV arc's positions: GCRF (default), EME2000 or ITRF. (OEM files
    /// name their own frame; SP3 files are Earth-fixed.)
    #[arg(long, value_name = "FRAME", default_value = "GCRF")]
    pub frame: String,
    /// The sensors of a tracking arc (a .tdm, or a .csv in the measurement layout): their
    /// places, masks, σ and biases (YAML; see examples/sites/).
    #[arg(long, value_name = "SITES.yaml")]
    pub sites: Option<std::path::PathBuf>,
}

/// The sensors of a sites file (`--sites`).
pub fn load_sites(
    path: &std::path::Path,
) -> Result<Vec<propagator::tracking::sites_file::SiteEntry>, CliError> {
    let text = propagator::input::read_text(path, propagator::input::MAX_CONFIG_BYTES)
        .map_err(|e| CliError::input(format!("{}: {e}", path.display())))?;
    propagator::tracking::sites_file::parse(&text, path).map_err(CliError::input)
}

/// The frame a `--frame` value names, or an error saying which are known.
pub fn frame_option(value: &str) -> Result<propagator::frames::Frame, CliError> {
    propagator::frames::Frame::from_keyword(value).ok_or_else(|| {
        CliError::input(format!(
            "--frame {}: GCRF, EME2000 or ITRF",
            propagator::text::sanitized(value)
        ))
    })
}

impl ArcOptions {
    /// `inputs`, the `optional` ones given, and the sites file if given: every path the
    /// command reads.
    pub fn inputs<'a>(
        &'a self,
        inputs: &[(&'a str, &'a std::path::Path)],
        optional: &[(&'a str, Option<&'a std::path::Path>)],
    ) -> Vec<(&'a str, &'a std::path::Path)> {
        let mut all = inputs.to_vec();
        all.extend(crate::paths::given(optional));
        all.extend(crate::paths::given(&[("--sites", self.sites.as_deref())]));
        all
    }

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
        let frame = frame_option(&self.frame)?;
        let sites = self.sites.as_deref().map(load_sites).transpose()?;
        Ok(ArcDefaults {
            sigma_km: self.sigma_km,
            object: self.object.clone(),
            csv_frame: frame,
            sites,
            ..ArcDefaults::default()
        })
    }

    /// The model-error floor for `arc` under `loaded` (given or default), applied to the
    /// arc's σ; the value in use is returned for the report.
    fn apply_model_error(
        &self,
        arc: &mut learned_forces::arc::Arc,
        loaded: &propagator::config::LoadedForces,
    ) -> Result<learned_forces::model_error::ModelError, CliError> {
        use learned_forces::model_error;
        let e = match self.model_error_km {
            Some(k) if k.is_finite() && k >= 0.0 => model_error::given(k),
            Some(k) => {
                return Err(CliError::input(format!(
                    "--model-error-km {k}: must be a finite distance ≥ 0 (km)"
                )))
            }
            None => model_error::default_for(arc, loaded),
        };
        model_error::apply(arc, &e);
        Ok(e)
    }

    /// Reads the arc at `path`, builds the known forces of `spec` (from `forces_path`) on
    /// its time axis, and applies the model-error floor: what every arc-reading command
    /// starts with.
    pub fn load(
        &self,
        path: &std::path::Path,
        spec: &propagator::config::ForcesFile,
        forces_path: &std::path::Path,
    ) -> Result<
        (
            learned_forces::arc::Arc,
            propagator::config::LoadedForces,
            learned_forces::model_error::ModelError,
        ),
        CliError,
    > {
        let mut defaults = self.defaults()?;
        // The arc's Earth-fixed inputs through the same Earth-orientation data as the field.
        defaults.earth = spec
            .earth_orientation(forces_path)
            .map_err(CliError::input)?;
        let mut arc = learned_forces::arc::Arc::load(path, defaults, &spec.central_body)
            .map_err(CliError::input)?;
        let loaded = spec
            .build_with(
                forces_path,
                arc.start(),
                &learned_forces::learned_file::LearnedResolver,
            )
            .map_err(CliError::input)?;
        let model_error = self.apply_model_error(&mut arc, &loaded)?;
        Ok((arc, loaded, model_error))
    }
}

/// The report block of a model-error floor.
pub fn model_error_json(e: &learned_forces::model_error::ModelError) -> serde_json::Value {
    let mut j = serde_json::json!({ "floor_km": e.floor_km, "basis": e.basis });
    if let Some(a) = e.acceleration_km_s2 {
        j["acceleration_km_s2"] = a.into();
    }
    j
}
