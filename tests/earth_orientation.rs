//! GCRF → ITRF against pyerfa (ERFA, the open SOFA equivalent) with the same IERS data:
//! tools/reference/gcrf_itrf.py writes tests/data/reference/gcrf_itrf_erfa.json.

use nalgebra::{Matrix3, Vector3};
use propagator::earth::EarthOrientation;
use propagator::Epoch;

#[derive(serde::Deserialize)]
struct RefFile {
    source: String,
    cases: Vec<RefCase>,
}

#[derive(serde::Deserialize)]
struct RefCase {
    utc: String,
    gcrf_to_itrf: [[f64; 3]; 3],
}

fn reference() -> RefFile {
    let text = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/data/reference/gcrf_itrf_erfa.json"
    ))
    .unwrap();
    serde_json::from_str(&text).unwrap()
}

/// Largest position difference (km) at 7000 km along the three axes and a diagonal.
fn worst_km(a: &Matrix3<f64>, b: &[[f64; 3]; 3]) -> f64 {
    let b = Matrix3::from_fn(|i, j| b[i][j]);
    let probes = [
        Vector3::x(),
        Vector3::y(),
        Vector3::z(),
        Vector3::new(1.0, 1.0, 1.0).normalize(),
    ];
    probes
        .iter()
        .map(|p| ((a - b) * (p * 7000.0)).norm())
        .fold(0.0, f64::max)
}

#[test]
fn gcrf_to_itrf_matches_erfa_within_a_millimetre_at_200_epochs_1990_2025() {
    let r = reference();
    assert_eq!(r.cases.len(), 200, "{}", r.source);
    let earth = EarthOrientation::shipped().unwrap();
    let (mut worst, mut worst_exact) = (0.0f64, 0.0f64);
    for c in &r.cases {
        let tt = Epoch::parse_utc(&c.utc).unwrap().tt_seconds_since_j2000();
        let fast = worst_km(&earth.at(tt).gcrf_to_itrf(), &c.gcrf_to_itrf);
        let exact = worst_km(&earth.at_exact(tt).gcrf_to_itrf(), &c.gcrf_to_itrf);
        assert!(fast < 1e-6, "{}: {:.3} mm", c.utc, fast * 1e6);
        worst = worst.max(fast);
        worst_exact = worst_exact.max(exact);
    }
    eprintln!(
        "GCRF→ITRF vs ERFA at 7000 km: worst {:.4} mm interpolated, {:.4} mm full series ({})",
        worst * 1e6,
        worst_exact * 1e6,
        r.source
    );
}

#[test]
fn a_wrong_chain_would_fail_the_comparison() {
    // The gate must be able to fail: leaving out polar motion (~0.3″, ~10 m at 7000 km)
    // or using UTC for UT1 (up to 0.9 s, ~400 m) is caught by a wide margin.
    let r = reference();
    let earth = EarthOrientation::shipped().unwrap();
    let c = &r.cases[0];
    let tt = Epoch::parse_utc(&c.utc).unwrap().tt_seconds_since_j2000();
    let mut rot = earth.at(tt);
    rot.w = Matrix3::identity();
    assert!(worst_km(&rot.gcrf_to_itrf(), &c.gcrf_to_itrf) > 1e-3);
}
