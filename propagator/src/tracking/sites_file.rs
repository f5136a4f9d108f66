//! The sites file (YAML, our own layout): the sensors that track, each with its place,
//! its elevation mask and, per kind of measurement it makes, the noise (1σ) and an
//! optional constant bias, in the units the measurements are written in.
//!
//! ```yaml
//! sites:
//!   - name: ALPHA-RADAR
//!     geodetic: { lat_deg: 40.43, lon_deg: -3.71, h_km: 0.655 }   # WGS-84
//!     elevation_mask_deg: 10
//!     range: { sigma_km: 0.020, bias_km: 0.0 }
//!     range_rate: { sigma_km_s: 1.0e-5 }
//!     azel: { sigma_deg: 0.02 }
//!   - name: BETA-TELESCOPE
//!     itrf_km: [-2448.1, -4668.9, 3582.6]        # instead of geodetic
//!     elevation_mask_deg: 15
//!     radec: { sigma_arcsec: 1.0 }
//! ```

use super::site::Site;
use serde::Deserialize;
use std::path::Path;

/// Noise and bias of one kind of measurement, in its unit.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Noise {
    /// 1σ.
    pub sigma: f64,
    /// Constant bias, added to the modelled value.
    pub bias: f64,
}

/// A site of the file, with what it measures and how well.
#[derive(Clone, Debug, PartialEq)]
pub struct SiteEntry {
    /// The site.
    pub site: Site,
    /// Below this elevation nothing is seen, rad.
    pub elevation_mask_rad: f64,
    /// Range, km.
    pub range: Option<Noise>,
    /// Range rate, km/s.
    pub range_rate: Option<Noise>,
    /// Azimuth and elevation, rad.
    pub azel: Option<Noise>,
    /// Right ascension and declination, rad.
    pub radec: Option<Noise>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct FileSpec {
    sites: Vec<SiteSpec>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct Geodetic {
    lat_deg: f64,
    lon_deg: f64,
    h_km: f64,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct SiteSpec {
    name: String,
    geodetic: Option<Geodetic>,
    itrf_km: Option<[f64; 3]>,
    elevation_mask_deg: f64,
    range: Option<KmNoise>,
    range_rate: Option<KmSNoise>,
    azel: Option<DegNoise>,
    radec: Option<ArcsecNoise>,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct KmNoise {
    sigma_km: f64,
    #[serde(default)]
    bias_km: f64,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct KmSNoise {
    sigma_km_s: f64,
    #[serde(default)]
    bias_km_s: f64,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct DegNoise {
    sigma_deg: f64,
    #[serde(default)]
    bias_deg: f64,
}

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct ArcsecNoise {
    sigma_arcsec: f64,
    #[serde(default)]
    bias_arcsec: f64,
}

/// A noise block checked (σ positive, both finite, σ below `max_sigma` — larger is a unit
/// error) and converted by `scale` to the model's unit.
fn noise(what: &str, sigma: f64, bias: f64, max_sigma: f64, scale: f64) -> Result<Noise, String> {
    if !(sigma.is_finite() && sigma > 0.0 && sigma <= max_sigma) {
        return Err(format!(
            "{what}: σ {sigma} must be positive and at most {max_sigma} (a larger one is a unit error)"
        ));
    }
    if !(bias.is_finite() && bias.abs() <= 100.0 * max_sigma) {
        return Err(format!(
            "{what}: bias {bias} is not a plausible finite number"
        ));
    }
    Ok(Noise {
        sigma: sigma * scale,
        bias: bias * scale,
    })
}

/// Reads a sites file; errors start with `path` and name the site and the field.
pub fn parse(text: &str, path: &Path) -> Result<Vec<SiteEntry>, String> {
    let err = |m: String| format!("{}: {m}", path.display());
    if text.trim().is_empty() {
        return Err(err("the file is empty".into()));
    }
    let file: FileSpec = crate::input::yaml_from_str(text).map_err(err)?;
    if file.sites.is_empty() {
        return Err(err("no sites".into()));
    }
    let mut out: Vec<SiteEntry> = Vec::new();
    for (i, s) in file.sites.iter().enumerate() {
        let at = |m: String| {
            err(format!(
                "sites[{i}] ({}): {m}",
                crate::text::sanitized(&s.name)
            ))
        };
        // Names are fields of measurement CSV rows and values of TDM keyword lines.
        if s.name.trim() != s.name || s.name.is_empty() || s.name.contains([',', '=', '"']) {
            return Err(at(
                "a site name may not be empty, start or end with a space, or contain `,`, `=` or `\"` (it is a field of measurement files)".into(),
            ));
        }
        if out.iter().any(|e| e.site.name == s.name) {
            return Err(at("the name is given to two sites".into()));
        }
        out.push(entry(s).map_err(at)?);
    }
    Ok(out)
}

/// One site's entry.
fn entry(s: &SiteSpec) -> Result<SiteEntry, String> {
    let site = match (&s.geodetic, &s.itrf_km) {
        (Some(g), None) => Site::geodetic(&s.name, g.lat_deg, g.lon_deg, g.h_km)?,
        (None, Some(x)) => Site::itrf(&s.name, *x)?,
        _ => return Err("give the place as either `geodetic` or `itrf_km`".into()),
    };
    let m = s.elevation_mask_deg;
    if !(m.is_finite() && (-5.0..90.0).contains(&m)) {
        return Err(format!("elevation_mask_deg {m}: expected −5 to 90"));
    }
    let arcsec = std::f64::consts::PI / (180.0 * 3600.0);
    let e = SiteEntry {
        site,
        elevation_mask_rad: m.to_radians(),
        range: s
            .range
            .as_ref()
            .map(|n| noise("range", n.sigma_km, n.bias_km, 100.0, 1.0))
            .transpose()?,
        range_rate: s
            .range_rate
            .as_ref()
            .map(|n| noise("range_rate", n.sigma_km_s, n.bias_km_s, 1.0, 1.0))
            .transpose()?,
        azel: s
            .azel
            .as_ref()
            .map(|n| noise("azel", n.sigma_deg, n.bias_deg, 5.0, 1f64.to_radians()))
            .transpose()?,
        radec: s
            .radec
            .as_ref()
            .map(|n| noise("radec", n.sigma_arcsec, n.bias_arcsec, 3600.0, arcsec))
            .transpose()?,
    };
    if e.range.is_none() && e.range_rate.is_none() && e.azel.is_none() && e.radec.is_none() {
        return Err("no measurement kind (range, range_rate, azel, radec) given".into());
    }
    Ok(e)
}

#[cfg(test)]
mod tests {
    use super::*;

    const EXAMPLE: &str = include_str!(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/../examples/sites/three_sites.yaml"
    ));

    #[test]
    fn the_example_reads_with_its_units_converted() {
        let s = parse(EXAMPLE, Path::new("s.yaml")).unwrap();
        assert_eq!(s.len(), 3);
        assert_eq!(s[0].range.unwrap().sigma, 0.02);
        assert!((s[0].azel.unwrap().sigma - 0.02f64.to_radians()).abs() < 1e-18);
        assert!((s[0].elevation_mask_rad - 10f64.to_radians()).abs() < 1e-15);
        let radec = s[2].radec.unwrap();
        assert!((radec.sigma * 180.0 * 3600.0 / std::f64::consts::PI - 1.0).abs() < 1e-12);
        // A site given in ITRF is where it says, and near the surface.
        assert!((s[2].site.itrf_km.norm() - 6371.0).abs() < 30.0);
    }

    #[test]
    fn bad_sites_are_refused_naming_the_file_the_site_and_the_field() {
        let one = |body: &str| format!("sites:\n  - name: A\n{body}");
        for (text, needle) in [
            (String::new(), "empty"),
            ("sites: []\n".to_string(), "no sites"),
            (one("    geodetic: { lat_deg: 95, lon_deg: 0, h_km: 0 }\n    elevation_mask_deg: 10\n    range: { sigma_km: 0.02 }\n"), "latitude"),
            (one("    geodetic: { lat_deg: 45, lon_deg: 0, h_km: 120 }\n    elevation_mask_deg: 10\n    range: { sigma_km: 0.02 }\n"), "metres given as km"),
            (one("    itrf_km: [4852188.0, -314627.0, 4114870.0]\n    elevation_mask_deg: 10\n    range: { sigma_km: 0.02 }\n"), "metres"),
            (one("    elevation_mask_deg: 10\n    range: { sigma_km: 0.02 }\n"), "either `geodetic` or `itrf_km`"),
            (one("    geodetic: { lat_deg: 45, lon_deg: 0, h_km: 0 }\n    elevation_mask_deg: 95\n    range: { sigma_km: 0.02 }\n"), "elevation_mask_deg"),
            (one("    geodetic: { lat_deg: 45, lon_deg: 0, h_km: 0 }\n    elevation_mask_deg: 10\n    range: { sigma_km: 20.0e3 }\n"), "unit error"),
            (one("    geodetic: { lat_deg: 45, lon_deg: 0, h_km: 0 }\n    elevation_mask_deg: 10\n    range: { sigma_km: .nan }\n"), "range: σ"),
            (one("    geodetic: { lat_deg: 45, lon_deg: 0, h_km: 0 }\n    elevation_mask_deg: 10\n"), "no measurement kind"),
            (one("    geodetic: { lat_deg: 45, lon_deg: 0, h_km: 0 }\n    elevation_mask_deg: 10\n    range: { sigma_m: 20 }\n"), "unknown field"),
            ("sites:\n  - name: \"A,B\"\n    geodetic: { lat_deg: 45, lon_deg: 0, h_km: 0 }\n    elevation_mask_deg: 10\n    range: { sigma_km: 0.02 }\n".to_string(), "may not"),
            (format!("{}  - name: A\n    geodetic: {{ lat_deg: 1, lon_deg: 0, h_km: 0 }}\n    elevation_mask_deg: 10\n    azel: {{ sigma_deg: 0.1 }}\n", one("    geodetic: { lat_deg: 45, lon_deg: 0, h_km: 0 }\n    elevation_mask_deg: 10\n    azel: { sigma_deg: 0.1 }\n")), "two sites"),
        ] {
            let e = parse(&text, Path::new("s.yaml")).unwrap_err();
            assert!(e.starts_with("s.yaml: ") && e.contains(needle), "{text:?}: {e}");
        }
    }
}
