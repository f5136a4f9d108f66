//! The spherical-harmonic field against an independent Python reference
//! (tools/reference/gravity_field.py: scipy's normalized Legendre functions and the
//! gradient of the textbook potential in spherical coordinates).

use nalgebra::Vector3;
use propagator::earth::{GravityField, Harmonics};

#[derive(serde::Deserialize)]
struct RefFile {
    source: String,
    points: Vec<RefPoint>,
}

#[derive(serde::Deserialize)]
struct RefPoint {
    r_km: [f64; 3],
    a_km_s2: [f64; 3],
}

fn reference() -> RefFile {
    let text = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/data/reference/gravity_egm2008_deg70.json"
    ))
    .unwrap();
    serde_json::from_str(&text).unwrap()
}

#[test]
fn egm2008_degree_70_matches_the_scipy_reference_to_1e_10_at_1000_points() {
    let r = reference();
    let h = Harmonics::new(GravityField::egm2008().unwrap(), 70, 70).unwrap();
    let mut worst: f64 = 0.0;
    for p in &r.points {
        let want = Vector3::from(p.a_km_s2);
        let got = h.acceleration(&Vector3::from(p.r_km));
        let rel = (got - want).norm() / want.norm();
        assert!(rel < 1e-10, "at {:?}: {got} vs {want} ({rel:e})", p.r_km);
        worst = worst.max(rel);
    }
    eprintln!(
        "degree 70 vs scipy: worst relative difference {worst:.2e} ({})",
        r.source
    );
}

#[test]
fn a_wrong_coefficient_fails_the_reference_comparison() {
    // The gate must be able to fail: C̄₂₂ with the wrong sign moves the non-central
    // acceleration by far more than 1e-10 of itself almost everywhere.
    let r = reference();
    let mut f = (*GravityField::egm2008().unwrap()).clone();
    let (c, s) = f.coefficient(2, 2);
    f.set(2, 2, -c, s);
    let h = Harmonics::new(std::sync::Arc::new(f), 70, 70).unwrap();
    let failing = r.points.iter().filter(|p| {
        let want = Vector3::from(p.a_km_s2);
        (h.acceleration(&Vector3::from(p.r_km)) - want).norm() / want.norm() > 1e-10
    });
    assert!(failing.count() > 900);
}

#[test]
fn the_gradient_matches_central_differences_of_the_acceleration() {
    // 10 cm steps against the 1 m steps of `gradient`: agreement to 1e-6 of the
    // gradient's size is what the state transition matrix needs.
    let h = Harmonics::new(GravityField::egm2008().unwrap(), 70, 70).unwrap();
    for p in reference().points.iter().take(50) {
        let r = Vector3::from(p.r_km);
        let g = h.gradient(&r);
        for j in 0..3 {
            let mut e = Vector3::zeros();
            e[j] = 1e-4;
            let d = (h.acceleration(&(r + e)) - h.acceleration(&(r - e))) / 2e-4;
            assert!(
                (g.column(j) - d).norm() <= 1e-6 * g.norm(),
                "at {r}: column {j}: {} vs {d}",
                g.column(j)
            );
        }
    }
}

#[test]
fn the_poles_are_ordinary_points() {
    // No division by cos φ: exactly over a pole the acceleration is finite and close to
    // its value a metre away.
    let h = Harmonics::new(GravityField::egm2008().unwrap(), 70, 70).unwrap();
    for z in [7000.0, -7000.0] {
        let at = h.acceleration(&Vector3::new(0.0, 0.0, z));
        let near = h.acceleration(&Vector3::new(1e-3, 0.0, z));
        assert!(at.iter().all(|v| v.is_finite()));
        assert!((at - near).norm() < 1e-6 * at.norm(), "{at} vs {near}");
    }
}
