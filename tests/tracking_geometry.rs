//! Site positions and topocentric azimuth, elevation and range against astropy
//! (`tools/reference/tracking_geometry.py` writes
//! tests/data/reference/tracking_geometry_astropy.json: WGS-84 geodetic sites by ERFA
//! gd2gc, ITRS → AltAz geometric for 8 LEO and 4 GEO positions per site; topocentric
//! geometric RA/Dec from the site's GCRS position by astropy).

use nalgebra::Vector3;
use propagator::tracking::site::Site;
use serde::Deserialize;

#[derive(Deserialize)]
struct RefSite {
    lat_deg: f64,
    lon_deg: f64,
    h_km: f64,
    itrf_km: [f64; 3],
}

#[derive(Deserialize)]
struct Case {
    site: usize,
    r_itrf_km: [f64; 3],
    az_deg: f64,
    el_deg: f64,
    range_km: f64,
}

#[derive(Deserialize)]
struct RaDecCase {
    site: usize,
    r_gcrf_km: [f64; 3],
    ra_deg: f64,
    dec_deg: f64,
}

#[derive(Deserialize)]
struct RefFile {
    source: String,
    radec_epoch_utc: String,
    sites: Vec<RefSite>,
    cases: Vec<Case>,
    radec: Vec<RaDecCase>,
}

fn reference() -> RefFile {
    let text = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/data/reference/tracking_geometry_astropy.json"
    ))
    .unwrap();
    serde_json::from_str(&text).unwrap()
}

fn sites(r: &RefFile) -> Vec<Site> {
    r.sites
        .iter()
        .enumerate()
        .map(|(i, s)| Site::geodetic(&format!("S{i}"), s.lat_deg, s.lon_deg, s.h_km).unwrap())
        .collect()
}

#[test]
fn topocentric_right_ascension_and_declination_agree_with_astropy() {
    // The site carried to GCRF by arcwise's IAU 2006/2000A chain and shipped IERS table;
    // astropy by its own transforms and the IERS data it ships.
    let r = reference();
    let sites = sites(&r);
    let epoch = propagator::Epoch::parse_utc(&format!("{}Z", r.radec_epoch_utc)).unwrap();
    let rotation = propagator::earth::EarthOrientation::shipped()
        .unwrap()
        .at(epoch.tt_seconds_since_j2000());
    let mut worst_as: f64 = 0.0;
    for c in &r.radec {
        let (ra, dec, _) = sites[c.site].radec(&Vector3::from(c.r_gcrf_km), &rotation);
        let mut dra = (ra.to_degrees() - c.ra_deg).rem_euclid(360.0);
        if dra > 180.0 {
            dra -= 360.0;
        }
        let on_sky = (dra * c.dec_deg.to_radians().cos())
            .abs()
            .max((dec.to_degrees() - c.dec_deg).abs());
        worst_as = worst_as.max(on_sky * 3600.0);
    }
    eprintln!(
        "{}: topocentric RA/Dec worst {worst_as:.2e} arcsec over {} cases",
        r.source,
        r.radec.len()
    );
    assert!(worst_as < 0.1, "{worst_as} arcsec");
}

#[test]
fn sites_and_azimuth_elevation_range_agree_with_astropy() {
    let r = reference();
    let sites = sites(&r);
    let mut worst_site_m: f64 = 0.0;
    for (s, want) in sites.iter().zip(&r.sites) {
        worst_site_m = worst_site_m.max((s.itrf_km - Vector3::from(want.itrf_km)).norm() * 1e3);
    }
    let (mut worst_angle_as, mut worst_range_mm, mut above): (f64, f64, usize) = (0.0, 0.0, 0);
    for c in &r.cases {
        let look = sites[c.site].look(&Vector3::from(c.r_itrf_km));
        // Azimuth difference on the circle, weighted by cos(el) (the angle on the sky).
        let mut daz = (look.az_rad.to_degrees() - c.az_deg).rem_euclid(360.0);
        if daz > 180.0 {
            daz -= 360.0;
        }
        let on_sky = (daz * c.el_deg.to_radians().cos())
            .abs()
            .max((look.el_rad.to_degrees() - c.el_deg).abs());
        worst_angle_as = worst_angle_as.max(on_sky * 3600.0);
        worst_range_mm = worst_range_mm.max((look.range_km - c.range_km).abs() * 1e6);
        above += usize::from(c.el_deg > 0.0);
    }
    eprintln!(
        "{}: sites {worst_site_m:.2e} m, angles {worst_angle_as:.2e} arcsec, range {worst_range_mm:.2e} mm over {} cases ({above} above the horizon)",
        r.source,
        r.cases.len()
    );
    // Targets: 0.1 arcsec and 1 mm (the issue's); the geometry is the same, so far below.
    assert!(worst_site_m < 1e-3, "{worst_site_m} m");
    assert!(worst_angle_as < 0.1, "{worst_angle_as} arcsec");
    assert!(worst_range_mm < 1.0, "{worst_range_mm} mm");
    assert!(above >= 10 && above < r.cases.len(), "{above}");
}
