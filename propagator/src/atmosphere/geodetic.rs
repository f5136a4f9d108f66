// Height above an ellipsoid, and the ellipsoid's outward normal at the foot point.
//
// Included verbatim by the propagator (`atmosphere::geodetic_height_km`) and by the
// learned-force plugin runtime, so the host's drag and a learned formula's `h` terminal
// measure the same height: keep it free of `use` and of anything but core arithmetic.

/// Height (km) of `r` (km, Earth-fixed or with the pole on z) above the ellipsoid of
/// equatorial radius `a_km` and flattening `f`, and the unit normal there (∂h/∂r), by
/// Bowring's iteration (Bowring 1976, Survey Review 23; < 1 mm in three steps).
pub fn ellipsoid_height(r: [f64; 3], a_km: f64, f: f64) -> (f64, [f64; 3]) {
    ellipsoid_height_in(r, a_km, f, 5)
}

/// As [`ellipsoid_height`] with `iterations` of Bowring's step (each gains about three
/// orders of magnitude in latitude: two already give < 1e-12 rad below 1000 km).
pub fn ellipsoid_height_in(r: [f64; 3], a_km: f64, f: f64, iterations: usize) -> (f64, [f64; 3]) {
    let p = (r[0] * r[0] + r[1] * r[1]).sqrt();
    let z = r[2];
    let e2 = f * (2.0 - f);
    let b = a_km * (1.0 - f);
    if p < 1e-9 {
        return (z.abs() - b, [0.0, 0.0, if z < 0.0 { -1.0 } else { 1.0 }]);
    }
    let ep2 = e2 / (1.0 - e2);
    let mut beta = (z / ((1.0 - f) * p)).atan();
    let mut lat = 0.0;
    for _ in 0..iterations {
        let (sb, cb) = beta.sin_cos();
        lat = (z + ep2 * b * sb.powi(3)).atan2(p - e2 * a_km * cb.powi(3));
        beta = ((1.0 - f) * lat.tan()).atan();
    }
    let (sl, cl) = lat.sin_cos();
    let n = a_km / (1.0 - e2 * sl * sl).sqrt();
    let h = if cl.abs() > 1e-3 {
        p / cl - n
    } else {
        z / sl - n * (1.0 - e2)
    };
    (h, [cl * r[0] / p, cl * r[1] / p, sl])
}
