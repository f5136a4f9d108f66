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
    fit(dir, id, gravity, file, "0.02", &[])["rms_km"]
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
    extra: &[&str],
) -> serde_json::Value {
    let (code, report, said) = invoke("fit", dir, id, gravity, file, sigma_km, extra);
    assert_eq!(code, 0, "{id}: {said}");
    report.unwrap()
}

/// Runs `command` (fit or learn) on satellite `id` of `file` with `gravity` (a
/// forces.yaml `gravity:` value), Sun, Moon and SRP, the SRP scale estimated:
/// (exit code, report if written, what was said).
fn invoke(
    command: &str,
    dir: &std::path::Path,
    id: &str,
    gravity: &str,
    file: &str,
    sigma_km: &str,
    extra: &[&str],
) -> (i32, Option<serde_json::Value>, String) {
    // GPS IIF/IIR: ~1600 kg, ~20 m² to the Sun (public mission facts, from memory); the
    // scale is estimated, so the nominal A/m only sets its starting value.
    let forces = dir.join(format!("forces-{}.yaml", gravity.len()));
    std::fs::write(
        &forces,
        format!("gravity: {gravity}\nthird_body: [sun, moon]\nsrp: {{ cr: 1.3, area_m2: 20.0, mass_kg: 1600.0, shadow: conical }}\n"),
    )
    .unwrap();
    let stem = format!(
        "{command}-{id}-{}",
        std::path::Path::new(file)
            .file_name()
            .unwrap()
            .to_string_lossy()
    );
    let (report, learned) = (
        dir.join(format!("{stem}.json")),
        dir.join(format!("{stem}.yaml")),
    );
    let _ = std::fs::remove_file(&report);
    let mut args = vec![
        command,
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
    ];
    if command == "learn" {
        args.extend_from_slice(&["--out", learned.to_str().unwrap()]);
    }
    args.extend_from_slice(extra);
    let (code, out, err) = arcwise(&args);
    let report = std::fs::read_to_string(&report)
        .ok()
        .map(|t| serde_json::from_str(&t).unwrap());
    (code, report, format!("{out}{err}"))
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
    // The solid Earth tides (IERS 2010 §6.2.1 step 1) are real physics these orbits
    // contain: with them the fits must get better, not worse (measured 7.30 → 6.83 cm
    // median, 15.1 → 13.8 cm worst).
    let tided: Vec<f64> = ids
        .iter()
        .map(|id| {
            let g = "{ field: egm2008, degree: 12, solid_tides: true }";
            fit_rms_m(dir.path(), id, g, COD)
        })
        .collect();
    let (med_t, worst_t) = (
        median(tided.clone()),
        tided.iter().cloned().fold(0.0, f64::max),
    );
    eprintln!("the same with solid tides: median RMS {med_t:.4} m, worst {worst_t:.4} m");
    assert!(
        med_t < med - 0.002,
        "tides: median {med_t} m against {med} m"
    );
    assert!(
        worst_t < worst,
        "tides: worst {worst_t} m against {worst} m"
    );
}

#[test]
fn with_empirical_rtn_terms_they_fit_to_centimetres() {
    // Issue target: median ≤ 0.2 m with the constant empirical RTN accelerations also
    // estimated (measured 3.0 cm median, 5.0 cm worst; with once-per-revolution terms as
    // well 0.4 cm, which on half a revolution is close to fitting the noise).
    let dir = tempfile::tempdir().unwrap();
    let g = "{ field: egm2008, degree: 12 }";
    let extra = ["--estimate", "srp_scale,emp_const_rtn"];
    let rms: Vec<f64> = gps_ids()
        .iter()
        .map(|id| {
            fit(dir.path(), id, g, COD, "0.02", &extra)["rms_km"]
                .as_f64()
                .unwrap()
                * 1e3
        })
        .collect();
    let (med, worst) = (median(rms.clone()), rms.iter().cloned().fold(0.0, f64::max));
    eprintln!("GPS with SRP scale + constant empirical RTN: median {med:.4} m, worst {worst:.4} m");
    assert!(med <= 0.2, "median {med} m");
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
        // No model-error floor here: it would widen both σ and hide a disagreement.
        let none = ["--model-error-km", "0"];
        let a = fit(dir.path(), id, g, COD, "0.0001", &none);
        let b = fit(dir.path(), id, g, GRG, "0.0001", &none);
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

/// The verdict of satellite `id` at the stated accuracy (σ 2 cm) and the default model
/// error of a real-Earth model.
fn verdict(dir: &std::path::Path, id: &str, file: &str) -> String {
    fit(
        dir,
        id,
        "{ field: egm2008, degree: 12 }",
        file,
        "0.00002",
        &[],
    )["verdict"]
        .as_str()
        .unwrap()
        .to_string()
}

#[test]
fn with_the_default_model_error_the_quiet_satellites_are_called_quiet() {
    let dir = tempfile::tempdir().unwrap();
    let ids = gps_ids();
    let flagged: Vec<&String> = ids
        .iter()
        .filter(|id| verdict(dir.path(), id, COD) != "no_anomaly")
        .collect();
    eprintln!(
        "GPS at σ 2 cm with the default model error: {} of {} quiet; flagged: {flagged:?}",
        ids.len() - flagged.len(),
        ids.len()
    );
    assert!(flagged.len() <= 2, "flagged {flagged:?}");
}

/// G05's real positions plus ½·a·t² along a fixed Earth-fixed direction, a = 1e-10 km/s²
/// (23 m after 6 h, thirty times the default floor of ~0.7 m for this arc), as an SP3 file
/// in `dir`.
fn pushed_g05(dir: &std::path::Path) -> std::path::PathBuf {
    let text = std::fs::read_to_string(COD).unwrap();
    let (mut k, mut first): (i32, Option<[f64; 3]>) = (-1, None);
    let mut u = [0.0; 3];
    let mut out = String::new();
    for line in text.lines() {
        if line.starts_with('*') {
            k += 1;
        }
        if let Some(rest) = line.strip_prefix("PG05") {
            let f: Vec<f64> = rest
                .split_whitespace()
                .map(|v| v.parse().unwrap())
                .collect();
            let r = [f[0], f[1], f[2]];
            match first {
                None => first = Some(r),
                Some(r0) if u == [0.0; 3] => {
                    let d = [r[0] - r0[0], r[1] - r0[1], r[2] - r0[2]];
                    let n = (d[0] * d[0] + d[1] * d[1] + d[2] * d[2]).sqrt();
                    u = [d[0] / n, d[1] / n, d[2] / n];
                }
                _ => {}
            }
            let t = 300.0 * f64::from(k);
            let s = 0.5 * 1e-10 * t * t;
            out += &format!(
                "PG05 {:13.6} {:13.6} {:13.6} {:13.6}\n",
                r[0] + s * u[0],
                r[1] + s * u[1],
                r[2] + s * u[2],
                f[3]
            );
            continue;
        }
        out += line;
        out += "\n";
    }
    let pushed = dir.join("pushed.sp3");
    std::fs::write(&pushed, out).unwrap();
    pushed
}

#[test]
fn an_unmodelled_push_on_a_real_orbit_is_still_called_an_anomaly() {
    // The verdict must be able to fail.
    let dir = tempfile::tempdir().unwrap();
    let pushed = pushed_g05(dir.path());
    assert_eq!(verdict(dir.path(), "G05", COD), "no_anomaly");
    assert_eq!(
        verdict(dir.path(), "G05", pushed.to_str().unwrap()),
        "anomaly"
    );
}

/// `arcwise learn` on satellite `id` of `file` at σ 2 cm with the real-Earth model:
/// (exit code, report if written, what was said).
fn learn(dir: &std::path::Path, id: &str, file: &str) -> (i32, Option<serde_json::Value>, String) {
    invoke(
        "learn",
        dir,
        id,
        "{ field: egm2008, degree: 12 }",
        file,
        "0.00002",
        &[],
    )
}

#[test]
fn learn_learns_nothing_on_the_quiet_satellites_and_refuses_the_pushed_one() {
    // Half a GPS revolution (6 h of 12): a quiet verdict stands, with a note that a small
    // force could hide in the orbit's adjustment; an anomalous one cannot be learned from
    // so short an arc, and is refused rather than given an invented force.
    let dir = tempfile::tempdir().unwrap();
    let mut quiet = 0;
    for id in gps_ids() {
        if verdict(dir.path(), &id, COD) != "no_anomaly" {
            continue;
        }
        quiet += 1;
        let (code, report, err) = learn(dir.path(), &id, COD);
        assert_eq!(code, 0, "{id}: {err}");
        let r = report.unwrap();
        assert_eq!(r["outcome"], "no_anomaly", "{id}: {r}");
        assert_eq!(r["terms"], serde_json::json!([]), "{id}: {}", r["terms"]);
        let notes = r["notes"].to_string();
        assert!(notes.contains("less than one revolution"), "{id}: {notes}");
    }
    eprintln!("learn on the quiet GPS satellites: {quiet} runs, nothing learned");
    assert!(quiet >= 29);
    let pushed = pushed_g05(dir.path());
    let (code, _, err) = learn(dir.path(), "G05", pushed.to_str().unwrap());
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("less than one revolution"), "{err}");
}

#[test]
fn a_csv_arc_in_itrf_fits_as_the_sp3_file_does_and_not_when_taken_as_gcrf() {
    let dir = tempfile::tempdir().unwrap();
    let text = std::fs::read_to_string(COD).unwrap();
    let sp3 = propagator::ephemeris::sp3::Sp3::parse(&text, std::path::Path::new(COD)).unwrap();
    let mut csv = String::from("epoch_utc,x_km,y_km,z_km\n");
    for p in sp3.of("G05", std::path::Path::new(COD)).unwrap() {
        csv += &format!(
            "{},{},{},{}\n",
            p.epoch.to_utc_string(),
            p.r_km[0],
            p.r_km[1],
            p.r_km[2]
        );
    }
    let path = dir.path().join("g05-itrf.csv");
    std::fs::write(&path, csv).unwrap();
    let g = "{ field: egm2008, degree: 12 }";
    let csv_path = path.to_str().unwrap();
    let from_sp3 = fit(dir.path(), "G05", g, COD, "0.02", &[])["rms_km"]
        .as_f64()
        .unwrap();
    let itrf = fit(dir.path(), "G05", g, csv_path, "0.02", &["--frame", "ITRF"])["rms_km"]
        .as_f64()
        .unwrap();
    assert!((itrf - from_sp3).abs() < 1e-9, "{itrf} vs {from_sp3} km");
    // Taken as GCRF, the Earth-fixed positions are no orbit at all.
    let wrong = fit(dir.path(), "G05", g, csv_path, "0.02", &[])["rms_km"]
        .as_f64()
        .unwrap();
    assert!(wrong > 1.0, "{wrong} km");
}

#[test]
fn the_arc_and_the_field_share_the_earth_orientation_that_forces_yaml_names() {
    // A copy of the IERS finals2000A excerpt with UT1 − UTC 10 ms later, named in
    // forces.yaml: the SP3 positions must turn into GCRF through it too (not through the
    // shipped table), so the fitted orbit is the shipped one turned by ω·10 ms about the
    // pole (≈ 19 m at GPS radius) and fits as well.
    let dir = tempfile::tempdir().unwrap();
    let src = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/data/eop/finals2000A_2021-04.txt"
    ))
    .unwrap();
    let shifted: String = src
        .lines()
        .map(|l| {
            let ut1: f64 = l[58..68].trim().parse().unwrap();
            format!("{}{:>10.7}{}\n", &l[..58], ut1 + 0.010, &l[68..])
        })
        .collect();
    std::fs::write(dir.path().join("eop-shifted.txt"), shifted).unwrap();
    let g = "{ field: egm2008, degree: 12 }";
    let gs = "{ field: egm2008, degree: 12 }\nearth_orientation: { file: eop-shifted.txt }";
    let (a, b) = (
        fit(dir.path(), "G05", g, COD, "0.02", &[]),
        fit(dir.path(), "G05", gs, COD, "0.02", &[]),
    );
    let r = |j: &serde_json::Value| {
        let v: Vec<f64> = (0..3)
            .map(|i| j["state_first"]["r_km"][i].as_f64().unwrap())
            .collect();
        nalgebra::Vector3::new(v[0], v[1], v[2])
    };
    let (ra, rb) = (r(&a), r(&b));
    let want = 7.292_115e-5 * 0.010 * ra[0].hypot(ra[1]);
    let got = (rb - ra).norm();
    assert!(
        (got / want - 1.0).abs() < 0.05,
        "moved {got} km, expected {want} km"
    );
    for j in [&a, &b] {
        assert!(j["rms_km"].as_f64().unwrap() < 2e-4, "{}", j["rms_km"]);
    }
}
