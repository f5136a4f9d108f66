//! The `gravity:` and `earth_orientation:` blocks: a zonal model or a full field, and the
//! Earth-orientation data it rotates with.

use super::*;

/// `gravity:` block: the simple zonal form, or a full field.
#[derive(Clone, Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct GravitySpec {
    /// 0 = two-body only; 2…6 = zonal harmonics J2…J_n (EGM96), pole on the GCRF z axis.
    #[serde(default)]
    pub zonal_degree: usize,
    /// A full field in ITRF: `egm2008` (shipped, to degree 70) or the path of an ICGEM
    /// `.gfc` file (relative to this file's folder).
    #[serde(default)]
    pub field: Option<String>,
    /// Degree of the full field (2 … the file's maximum).
    #[serde(default)]
    pub degree: Option<usize>,
    /// Order of the full field (≤ degree; the degree when absent).
    #[serde(default)]
    pub order: Option<usize>,
    /// Solid Earth tides raised by the Sun and Moon on the field's degree-2 coefficients
    /// (IERS Conventions 2010 §6.2.1, step 1).
    #[serde(default)]
    pub solid_tides: bool,
}

/// `earth_orientation:` block.
#[derive(Clone, Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct EarthOrientationSpec {
    /// An IERS `finals2000A` or EOP 20 C04 file (relative to this file's folder).
    pub file: String,
}

/// The Earth orientation `orientation` names (relative to `forces_path`'s folder), or the
/// shipped table.
pub(super) fn orientation_or_shipped(
    orientation: Option<&EarthOrientationSpec>,
    forces_path: &Path,
) -> Result<crate::earth::EarthOrientation, String> {
    match orientation {
        Some(o) => o.load(forces_path),
        None => crate::earth::EarthOrientation::shipped(),
    }
}

impl EarthOrientationSpec {
    /// The Earth orientation from this file (relative to `forces_path`'s folder).
    pub fn load(&self, forces_path: &Path) -> Result<crate::earth::EarthOrientation, String> {
        let base = forces_path.parent().unwrap_or(Path::new("."));
        Ok(crate::earth::EarthOrientation::new(
            crate::input::parsed_once(&base.join(&self.file), crate::earth::EopTable::read)?,
        ))
    }
}

impl GravitySpec {
    /// Checks the combination of keys.
    pub(super) fn validate(&self) -> Result<(), String> {
        if self.zonal_degree == 1 || self.zonal_degree > 6 {
            return Err(format!(
                "gravity.zonal_degree must be 0 (two-body) or 2..6, got {}",
                self.zonal_degree
            ));
        }
        match (&self.field, self.degree) {
            (Some(_), _) if self.zonal_degree != 0 => {
                Err("gravity: give either zonal_degree or field (with degree), not both".into())
            }
            (Some(_), None) => Err("gravity.field needs a degree (e.g. degree: 20)".into()),
            (Some(_), Some(n)) if n < 2 => {
                Err(format!("gravity.degree must be at least 2, got {n}"))
            }
            (None, Some(_)) => Err(
                "gravity.degree is for a full field: add field: egm2008 (or a .gfc path)".into(),
            ),
            (None, None) if self.order.is_some() => {
                Err("gravity.order is for a full field: add field and degree".into())
            }
            (None, _) if self.solid_tides => Err(
                "gravity.solid_tides is for a full field: add field: egm2008 and a degree".into(),
            ),
            _ => Ok(()),
        }
    }

    /// The central GM (km³/s²) and the non-central gravity force, if any: the field's own
    /// GM with a full field (EGM2008's differs from EGM96's by 7.5e-10 relative, ~0.7 m a
    /// day along track in LEO), the body's otherwise.
    pub(super) fn build(
        &self,
        path: &Path,
        body: &CentralBody,
        reference: &Epoch,
        orientation: Option<&EarthOrientationSpec>,
    ) -> Result<(f64, Option<Box<dyn crate::force::Force>>), String> {
        let base = path.parent().unwrap_or(Path::new("."));
        let Some(field) = &self.field else {
            if self.zonal_degree < 2 {
                return Ok((body.mu_km3_s2, None));
            }
            let z = Zonal::egm96(body.mu_km3_s2, body.radius_km, self.zonal_degree)?;
            return Ok((body.mu_km3_s2, Some(Box::new(z))));
        };
        let degree = self.degree.unwrap_or(2);
        let field = if field == "egm2008" {
            crate::earth::GravityField::egm2008()?
        } else {
            std::sync::Arc::new(crate::earth::gfc::read(&base.join(field), Some(degree))?)
        };
        let mu = field.gm_km3_s2;
        let tides = match self.solid_tides {
            true => Some(crate::earth::SolidTides::new(&field)?),
            false => None,
        };
        let harmonics = crate::earth::Harmonics::new(field, degree, self.order.unwrap_or(degree))?;
        let earth = orientation_or_shipped(orientation, path)?;
        let mut force = crate::force::field::FieldGravity::new(
            harmonics,
            earth,
            reference.tt_seconds_since_j2000(),
        );
        if let Some(tides) = tides {
            force =
                force.with_solid_tides(tides, crate::solar_system::CenturyClock::new(reference));
        }
        Ok((mu, Some(Box::new(force))))
    }
}
