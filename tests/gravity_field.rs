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

/// The largest column difference between the analytic gradient and central differences
/// (10 cm steps) of the acceleration, relative to the gradient's size.
fn gradient_mismatch(h: &Harmonics, r: &Vector3<f64>) -> f64 {
    let g = h.gradient(r);
    (0..3)
        .map(|j| {
            let mut e = Vector3::zeros();
            e[j] = 1e-4;
            let d = (h.acceleration(&(r + e)) - h.acceleration(&(r - e))) / 2e-4;
            (g.column(j) - d).norm() / g.norm()
        })
        .fold(0.0, f64::max)
}

#[test]
fn the_analytic_gradient_matches_central_differences_of_the_acceleration() {
    // Agreement to 1e-6 of the gradient's size is what the state transition matrix needs;
    // the differences' own truncation and rounding error is far below that at 10 cm.
    let h = Harmonics::new(GravityField::egm2008().unwrap(), 70, 70).unwrap();
    let worst = reference()
        .points
        .iter()
        .take(100)
        .map(|p| gradient_mismatch(&h, &Vector3::from(p.r_km)))
        .fold(0.0, f64::max);
    eprintln!("analytic gradient vs central differences: worst {worst:.1e} of |G|");
    assert!(worst < 1e-6, "{worst:e}");
    // Symmetric, as the Hessian of a potential must be, and traceless outside the masses
    // (Laplace's equation).
    let r = Vector3::new(4100.0, -3900.0, 3800.0);
    let g = h.gradient(&r);
    assert!((g - g.transpose()).norm() < 1e-15 * g.norm());
    assert!(g.trace().abs() < 1e-12 * g.norm(), "trace {:e}", g.trace());
}

#[test]
fn the_gradient_check_fails_on_a_wrong_gradient() {
    // The gate must be able to fail: the acceleration of one field against the gradient
    // of another (C̄₂₂ sign flipped) differs by far more than 1e-6.
    let f = GravityField::egm2008().unwrap();
    let mut g = (*f).clone();
    let (c, s) = g.coefficient(2, 2);
    g.set(2, 2, -c, s);
    let (right, wrong) = (
        Harmonics::new(f, 20, 20).unwrap(),
        Harmonics::new(std::sync::Arc::new(g), 20, 20).unwrap(),
    );
    let r = Vector3::new(4100.0, -3900.0, 3800.0);
    let e = Vector3::new(1e-4, 0.0, 0.0);
    let d = (right.acceleration(&(r + e)) - right.acceleration(&(r - e))) / 2e-4;
    let mismatch = (wrong.gradient(&r).column(0) - d).norm() / right.gradient(&r).norm();
    assert!(mismatch > 1e-5, "{mismatch:e}");
}

#[test]
fn a_field_truncated_in_order_is_the_field_with_those_coefficients_zero() {
    // 12×4 against 12×12 of a copy whose orders above 4 are zero: the same acceleration
    // and gradient (the weights beyond the order must vanish, not be dropped mid-sum).
    let f = GravityField::egm2008().unwrap();
    let mut zeroed = (*f).clone();
    for n in 5..=12 {
        for m in 5..=n {
            zeroed.set(n, m, 0.0, 0.0);
        }
    }
    let (a, b) = (
        Harmonics::new(f, 12, 4).unwrap(),
        Harmonics::new(std::sync::Arc::new(zeroed), 12, 12).unwrap(),
    );
    for p in reference().points.iter().take(50) {
        let r = Vector3::from(p.r_km);
        let (aa, ga) = a.acceleration_and_gradient(&r);
        let (ab, gb) = b.acceleration_and_gradient(&r);
        assert!((aa - ab).norm() <= 1e-14 * ab.norm(), "{aa} vs {ab}");
        assert!((ga - gb).norm() <= 1e-13 * gb.norm(), "{ga} vs {gb}");
        assert!(gradient_mismatch(&a, &r) < 1e-6);
        // One recursion serves both: the acceleration is the same bit for bit.
        assert_eq!(aa, a.acceleration(&r));
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
