//! Real precise orbits: every GPS satellite of a CODE final SP3 file (6 h, stated accuracy a
//! few cm; tests/data/real/README.md), read by the SP3 reader, rotated ITRF → GCRF with
//! the shipped IERS data, and fitted with EGM2008 12×12, Sun, Moon and an SRP scale. These
//! satellites had no anomaly; the fit must leave decimetres, not the metres the zonal
//! model left.

mod common;
use common::arcwise;

const COD: &str = concat!(
    env!("CARGO_MANIFEST_DIR"),
    "/tests/data/real/COD0MGXFIN_20211180000_01D_05M_ORB_18h-24h.SP3"
);

/// Fitted RMS (m) of satellite `id` with `gravity` (a forces.yaml `gravity:` value).
fn fit_rms_m(dir: &std::path::Path, id: &str, gravity: &str, file: &str) -> f64 {
    fit(dir, id, gravity, file, "0.02")["rms_km"]
        .as_f64()
        .unwrap()
        * 1e3
}

/// The fit report of satellite `id` with `gravity`, observations at σ `sigma_km`.
fn fit(
    dir: &std::path::Path,
    id: &str,
    gravity: &str,
    file: &str,
    sigma_km: &str,
) -> serde_json::Value {
    // GPS IIF/IIR: ~1600 kg, ~20 m² to the Sun (public mission facts, from memory); the
    // scale is estimated, so the nominal A/m only sets its starting value.
    let forces = dir.join(format!("forces-{}.yaml", gravity.len()));
    std::fs::write(
        &forces,
        format!("gravity: {gravity}\nthird_body: [sun, moon]\nsrp: {{ cr: 1.3, area_m2: 20.0, mass_kg: 1600.0, shadow: conical }}\n"),
    )
    .unwrap();
    let report = dir.join(format!(
        "{id}-{}.json",
        std::path::Path::new(file)
            .file_name()
            .unwrap()
            .to_string_lossy()
    ));
    let (code, out, err) = arcwise(&[
        "fit",
        "--arc",
        file,
        "--object",
        id,
        "--forces",
        forces.to_str().unwrap(),
        "--estimate",
        "srp_scale",
        "--sigma-km",
        sigma_km,
        "--report",
        report.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{id}: {out}{err}");
    serde_json::from_str(&std::fs::read_to_string(&report).unwrap()).unwrap()
}

fn gps_ids() -> Vec<String> {
    let text = std::fs::read_to_string(COD).unwrap();
    let sp3 = propagator::ephemeris::sp3::Sp3::parse(&text, std::path::Path::new(COD)).unwrap();
    sp3.satellites()
        .into_iter()
        .filter(|s| s.starts_with('G'))
        .map(String::from)
        .collect()
}

fn median(mut v: Vec<f64>) -> f64 {
    v.sort_by(f64::total_cmp);
    v[v.len() / 2]
}

#[test]
fn every_gps_satellite_fits_to_decimetres_with_the_real_earth_model() {
    let dir = tempfile::tempdir().unwrap();
    let ids = gps_ids();
    assert_eq!(ids.len(), 31, "GPS satellites in the CODE file");
    let rms: Vec<f64> = ids
        .iter()
        .map(|id| fit_rms_m(dir.path(), id, "{ field: egm2008, degree: 12 }", COD))
        .collect();
    let worst = rms.iter().cloned().fold(0.0, f64::max);
    let med = median(rms.clone());
    eprintln!(
        "GPS, CODE 6 h, 12x12 + Sun + Moon + SRP scale: median RMS {med:.3} m, worst {worst:.3} m"
    );
    // Issue target: median ≤ 1 m (an independent reference reaches ~0.8 m on a similar
    // Galileo arc with a spherical SRP model).
    assert!(med <= 1.0, "median {med} m");
    assert!(worst <= 2.0, "worst {worst} m");
}

#[test]
fn the_zonal_model_with_the_pole_on_the_z_axis_cannot_fit_them() {
    // The gate must be able to fail: the old model (J2–J6, no Earth orientation) leaves
    // metres on the same arcs.
    let dir = tempfile::tempdir().unwrap();
    let ids = gps_ids();
    let rms: Vec<f64> = ids
        .iter()
        .take(8)
        .map(|id| fit_rms_m(dir.path(), id, "{ zonal_degree: 6 }", COD))
        .collect();
    let med = median(rms);
    eprintln!("GPS, zonal J2–J6 model: median RMS {med:.3} m");
    assert!(med > 1.0, "median {med} m");
}

const GRG: &str = concat!(
    env!("CARGO_MANIFEST_DIR"),
    "/tests/data/real/grg21553_18h-22h30.sp3"
);

#[test]
fn another_analysis_centre_gives_the_same_srp_scale_within_its_sigma() {
    // The GRGS file (4.5 h of the same afternoon, another centre's processing) against
    // CODE's: the fitted SRP scale of each GPS satellite in both must agree within 3σ
    // combined, σ from a fit at 10 cm (the RMS level of these fits).
    let dir = tempfile::tempdir().unwrap();
    let g = "{ field: egm2008, degree: 12 }";
    let mut worst: f64 = 0.0;
    let mut within_1: usize = 0;
    let ids = gps_ids();
    for id in &ids {
        let a = fit(dir.path(), id, g, COD, "0.0001");
        let b = fit(dir.path(), id, g, GRG, "0.0001");
        let (pa, pb) = (&a["parameters"][0], &b["parameters"][0]);
        let d = (pa["value"].as_f64().unwrap() - pb["value"].as_f64().unwrap()).abs();
        let s = pa["sigma"]
            .as_f64()
            .unwrap()
            .hypot(pb["sigma"].as_f64().unwrap());
        worst = worst.max(d / s);
        within_1 += usize::from(d <= s);
    }
    eprintln!(
        "SRP scale CODE vs GRGS: {within_1} of {} within 1σ, worst {worst:.2}σ",
        ids.len()
    );
    assert!(worst <= 3.0, "worst {worst}σ");
}
