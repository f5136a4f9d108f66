//! Two-way (either time tag) and one-way ranges with light time against an independent
//! reference: `tools/reference/light_time.py` solves each leg by bracketing root finding
//! (scipy brentq) where arcwise iterates a fixed point; the geometry (a WGS-84 site
//! turning with the Earth, circular LEO and GEO orbits) is closed form on both sides.

use nalgebra::Vector3;
use propagator::tracking::light_time::{one_way, two_way, Tag};
use propagator::tracking::site::Site;
use serde::Deserialize;
use std::collections::HashMap;

#[derive(Deserialize)]
struct SiteRef {
    lat_deg: f64,
    lon_deg: f64,
    h_km: f64,
    theta0_rad: f64,
    omega_rad_s: f64,
}

#[derive(Deserialize)]
struct OrbitRef {
    radius_km: f64,
    inc_deg: f64,
    phase_deg: f64,
}

#[derive(Deserialize)]
struct Case {
    orbit: String,
    tag: String,
    tag_s: f64,
    range_km: f64,
    transmit_s: f64,
    receive_s: f64,
}

#[derive(Deserialize)]
struct RefFile {
    source: String,
    site: SiteRef,
    orbits: HashMap<String, OrbitRef>,
    cases: Vec<Case>,
}

#[test]
fn ranges_with_light_time_agree_with_an_independent_root_finder() {
    let text = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/data/reference/light_time.json"
    ))
    .unwrap();
    let r: RefFile = serde_json::from_str(&text).unwrap();
    let s = &r.site;
    let fixed = Site::geodetic("S", s.lat_deg, s.lon_deg, s.h_km)
        .unwrap()
        .itrf_km;
    let site = move |t: f64| {
        let (sn, c) = (s.theta0_rad + s.omega_rad_s * t).sin_cos();
        Vector3::new(
            c * fixed[0] - sn * fixed[1],
            sn * fixed[0] + c * fixed[1],
            fixed[2],
        )
    };
    let mut worst_mm: f64 = 0.0;
    let mut worst_s: f64 = 0.0;
    for c in &r.cases {
        let o = &r.orbits[&c.orbit];
        let n = (398600.4418 / o.radius_km.powi(3)).sqrt();
        let (inc, phase) = (o.inc_deg.to_radians(), o.phase_deg.to_radians());
        let object = move |t: f64| {
            let u = phase + n * t;
            o.radius_km * Vector3::new(u.cos(), u.sin() * inc.cos(), u.sin() * inc.sin())
        };
        let (range, transmit, receive) = match c.tag.as_str() {
            "one_way" => {
                let (d, sent) = one_way(c.tag_s, &site, &object).unwrap();
                (d, sent, c.tag_s)
            }
            tag => {
                let tag = if tag == "receive" {
                    Tag::Receive
                } else {
                    Tag::Transmit
                };
                let w = two_way(c.tag_s, tag, &site, &object).unwrap();
                (w.range_km, w.transmit_s, w.receive_s)
            }
        };
        worst_mm = worst_mm.max((range - c.range_km).abs() * 1e6);
        worst_s = worst_s
            .max((transmit - c.transmit_s).abs())
            .max((receive - c.receive_s).abs());
    }
    eprintln!(
        "{}: {} cases, range {worst_mm:.2e} mm, instants {worst_s:.2e} s",
        r.source,
        r.cases.len()
    );
    // Target 1 mm (the issue's); the same physics, so far below.
    assert!(worst_mm < 1.0, "{worst_mm} mm");
    assert!(worst_s < 1e-11, "{worst_s} s");
    // Light time matters: the receive-tagged and transmit-tagged two-way ranges of the
    // LEO pass at one tag differ by far more than the tolerance (the object moved).
    let pair: Vec<f64> = r
        .cases
        .iter()
        .filter(|c| c.orbit == "leo" && c.tag_s == 0.0 && c.tag != "one_way")
        .map(|c| c.range_km)
        .collect();
    assert!((pair[0] - pair[1]).abs() > 0.1, "{pair:?}");
}
