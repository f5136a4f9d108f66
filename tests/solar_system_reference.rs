//! Sun and Moon series against JPL DE421 (tools/reference/sun_moon.py, packages
//! jplephem + de421), 64 epochs over 2020–2040.

use propagator::solar_system::{moon_position_km, sun_position_km};
use propagator::Epoch;

#[derive(serde::Deserialize)]
struct Row {
    epoch_utc: String,
    sun_km: [f64; 3],
    moon_km: [f64; 3],
}

#[derive(serde::Deserialize)]
struct Ref {
    source: String,
    epochs: Vec<Row>,
}

fn angle_deg(a: &nalgebra::Vector3<f64>, b: &nalgebra::Vector3<f64>) -> f64 {
    (a.cross(b).norm()).atan2(a.dot(b)).to_degrees()
}

#[test]
fn sun_and_moon_agree_with_de421() {
    let text = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/data/reference/sun_moon_de421.json"
    ))
    .unwrap();
    let r: Ref = serde_json::from_str(&text).unwrap();
    assert!(r.source.contains("DE421"));
    assert!(r.epochs.len() >= 50);
    let (mut sun_ang, mut sun_dist, mut moon_ang, mut moon_dist) = (0.0f64, 0.0f64, 0.0f64, 0.0f64);
    for row in &r.epochs {
        let t = Epoch::parse_utc(&row.epoch_utc)
            .unwrap()
            .tt_centuries_since_j2000();
        let s = sun_position_km(t);
        let m = moon_position_km(t);
        let sr = nalgebra::Vector3::from(row.sun_km);
        let mr = nalgebra::Vector3::from(row.moon_km);
        sun_ang = sun_ang.max(angle_deg(&s, &sr));
        sun_dist = sun_dist.max((s.norm() / sr.norm() - 1.0).abs());
        moon_ang = moon_ang.max(angle_deg(&m, &mr));
        moon_dist = moon_dist.max((m.norm() / mr.norm() - 1.0).abs());
    }
    eprintln!(
        "worst: Sun {sun_ang:.4}° {:.4}%, Moon {moon_ang:.4}° {:.4}%",
        sun_dist * 100.0,
        moon_dist * 100.0
    );
    assert!(sun_ang < 0.05, "Sun direction off by {sun_ang}°");
    assert!(sun_dist < 1e-3, "Sun distance off by {sun_dist}");
    assert!(moon_ang < 0.5, "Moon direction off by {moon_ang}°");
    assert!(moon_dist < 1e-2, "Moon distance off by {moon_dist}");
}
