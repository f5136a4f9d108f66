//! End-to-end tests of `arcwise propagate`: a good run, and every bad input giving a
//! clear message, exit code 2 and no output file.

mod common;
use common::{arcwise, write};
use std::path::{Path, PathBuf};

const FORCES: &str = r#"
central_body: { mu_km3_s2: 398600.4418, radius_km: 6378.1363, rotation_rad_s: 7.292115e-5 }
gravity: { zonal_degree: 2 }
drag:
  atmosphere: { exponential: { rho0_kg_m3: 3.725e-12, h0_km: 400.0, scale_height_km: 58.515 } }
  cd: 2.2
  area_m2: 0.1
  mass_kg: 10.0
plugins: []
"#;

const STATE: &str = "epoch_utc: \"2031-05-04T12:00:00.000Z\"\nr_km: [6778.1363, 0.0, 0.0]\nv_km_s: [0.0, 4.7, 6.0]\n";

#[test]
fn propagates_to_oem_and_csv_with_a_report() {
    let dir = tempfile::tempdir().unwrap();
    let f = write(dir.path(), "forces.yaml", FORCES);
    let s = write(dir.path(), "state.yaml", STATE);
    for ext in ["oem", "csv"] {
        let out = dir.path().join(format!("eph.{ext}"));
        let rep = dir.path().join(format!("r-{ext}.json"));
        let (code, stdout, stderr) = arcwise(&[
            "propagate",
            "--forces",
            f.to_str().unwrap(),
            "--state",
            s.to_str().unwrap(),
            "--to",
            "2031-05-04T18:00:00Z",
            "--step",
            "600",
            "--out",
            out.to_str().unwrap(),
            "--report",
            rep.to_str().unwrap(),
        ]);
        assert_eq!(code, 0, "{stdout}{stderr}");
        let eph =
            propagator::ephemeris::Ephemeris::load(&out, &propagator::CentralBody::EARTH_EGM96)
                .unwrap();
        assert_eq!(eph.points.len(), 37);
        let r: serde_json::Value =
            serde_json::from_str(&std::fs::read_to_string(&rep).unwrap()).unwrap();
        assert_eq!(r["termination"], "completed");
        assert_eq!(r["final_state"]["epoch_utc"], "2031-05-04T18:00:00.000000Z");
        let last = eph.points.last().unwrap().state;
        assert_eq!(r["final_state"]["r_km"][0].as_f64().unwrap(), last[0]);
    }
}

#[test]
fn bad_inputs_exit_2_with_a_clear_message_and_no_output() {
    let dir = tempfile::tempdir().unwrap();
    let good_f = write(dir.path(), "forces.yaml", FORCES);
    let good_s = write(dir.path(), "state.yaml", STATE);
    let cases: Vec<(&str, PathBuf, PathBuf, &str, &str)> = vec![
        (
            "malformed yaml",
            write(dir.path(), "f1.yaml", "gravity: { zonal_degree: 2"),
            good_s.clone(),
            "2031-05-04T13:00:00Z",
            "f1.yaml",
        ),
        (
            "unknown key",
            write(
                dir.path(),
                "f2.yaml",
                &FORCES.replace("cd: 2.2", "cd: 2.2\n  colour: red"),
            ),
            good_s.clone(),
            "2031-05-04T13:00:00Z",
            "unknown field `colour`",
        ),
        (
            "NaN in state",
            good_f.clone(),
            write(dir.path(), "s1.yaml", &STATE.replace("4.7", ".nan")),
            "2031-05-04T13:00:00Z",
            "non-finite",
        ),
        (
            "bad state epoch",
            good_f.clone(),
            write(
                dir.path(),
                "s2.yaml",
                &STATE.replace("2031-05-04T12:00:00.000Z", "4 May 2031"),
            ),
            "2031-05-04T13:00:00Z",
            "epoch_utc",
        ),
        (
            "bad --to",
            good_f.clone(),
            good_s.clone(),
            "tomorrow",
            "--to",
        ),
        (
            "inside the Earth",
            good_f.clone(),
            write(dir.path(), "s3.yaml", &STATE.replace("6778.1363", "6000.0")),
            "2031-05-04T13:00:00Z",
            "inside the Earth",
        ),
        (
            "metres",
            good_f.clone(),
            write(
                dir.path(),
                "s4.yaml",
                &STATE.replace("6778.1363", "6778136.3"),
            ),
            "2031-05-04T13:00:00Z",
            "metres",
        ),
        (
            "missing file",
            dir.path().join("nope.yaml"),
            good_s.clone(),
            "2031-05-04T13:00:00Z",
            "nope.yaml",
        ),
        (
            "empty file",
            write(dir.path(), "f3.yaml", ""),
            good_s.clone(),
            "2031-05-04T13:00:00Z",
            "empty",
        ),
    ];
    for (what, f, s, to, needle) in cases {
        let out = dir.path().join("out.oem");
        let (code, stdout, stderr) = arcwise(&[
            "propagate",
            "--forces",
            f.to_str().unwrap(),
            "--state",
            s.to_str().unwrap(),
            "--to",
            to,
            "--step",
            "60",
            "--out",
            out.to_str().unwrap(),
        ]);
        assert_eq!(code, 2, "{what}: {stdout}{stderr}");
        assert!(
            stderr.contains(needle),
            "{what}: expected `{needle}` in: {stderr}"
        );
        assert_eq!(
            stderr.lines().count(),
            1,
            "{what}: one clear message: {stderr}"
        );
        assert!(!out.exists(), "{what}: output left behind");
    }
    // An ephemeris as the initial state: unsorted or duplicated epochs are refused.
    let row = |t: &str| format!("2031-05-04T12:{t}Z,6778.1363,0,0,0,4.7,6.0\n");
    let hdr = "epoch_utc,x_km,y_km,z_km,vx_km_s,vy_km_s,vz_km_s\n";
    for (what, body, needle) in [
        (
            "unsorted",
            format!("{hdr}{}{}", row("05:00"), row("01:00")),
            "earlier",
        ),
        (
            "duplicated",
            format!("{hdr}{}{}", row("05:00"), row("05:00")),
            "duplicate epoch",
        ),
    ] {
        let e = write(dir.path(), &format!("{what}.csv"), &body);
        let out = dir.path().join("out.oem");
        let (code, _, stderr) = arcwise(&[
            "propagate",
            "--forces",
            good_f.to_str().unwrap(),
            "--state",
            e.to_str().unwrap(),
            "--to",
            "2031-05-04T13:00:00Z",
            "--step",
            "60",
            "--out",
            out.to_str().unwrap(),
        ]);
        assert_eq!(code, 2, "{what}: {stderr}");
        assert!(
            stderr.contains(needle) && stderr.contains(":3:"),
            "{what}: {stderr}"
        );
        assert!(!out.exists());
    }
    // Usage errors (clap) exit 2 as well.
    let (code, _, _) = arcwise(&["propagate", "--forces", good_f.to_str().unwrap()]);
    assert_eq!(code, 2);
    let (code, _, stderr) = arcwise(&[
        "propagate",
        "--forces",
        good_f.to_str().unwrap(),
        "--state",
        good_s.to_str().unwrap(),
        "--to",
        "2031-05-04T13:00:00Z",
        "--step",
        "60",
        "--out",
        "x.txt",
    ]);
    assert_eq!(code, 2);
    assert!(stderr.contains(".csv or .oem"), "{stderr}");
}

#[test]
fn continues_from_the_last_state_of_an_ephemeris() {
    let dir = tempfile::tempdir().unwrap();
    let f = write(dir.path(), "forces.yaml", FORCES);
    let s = write(dir.path(), "state.yaml", STATE);
    let run = |state: &Path, to: &str, out: &Path| {
        let (code, _, stderr) = arcwise(&[
            "propagate",
            "--forces",
            f.to_str().unwrap(),
            "--state",
            state.to_str().unwrap(),
            "--to",
            to,
            "--step",
            "300",
            "--out",
            out.to_str().unwrap(),
        ]);
        assert_eq!(code, 0, "{stderr}");
        propagator::ephemeris::Ephemeris::load(out, &propagator::CentralBody::EARTH_EGM96).unwrap()
    };
    let whole = run(&s, "2031-05-04T16:00:00Z", &dir.path().join("whole.oem"));
    let first = dir.path().join("first.oem");
    run(&s, "2031-05-04T14:00:00Z", &first);
    let second = run(
        &first,
        "2031-05-04T16:00:00Z",
        &dir.path().join("second.oem"),
    );
    let a = whole.points.last().unwrap();
    let b = second.points.last().unwrap();
    assert_eq!(a.epoch.to_utc_string(), b.epoch.to_utc_string());
    // Two legs restart the step control once: agreement at the tolerance level.
    let d = (a.state - b.state).fixed_rows::<3>(0).norm();
    assert!(d < 1e-6, "{d} km");
}

#[test]
fn maneuvers_srp_and_third_bodies_from_forces_yaml() {
    let dir = tempfile::tempdir().unwrap();
    let extra = "srp: { cr: 1.3, area_m2: 0.1, mass_kg: 10.0, shadow: conical }\nthird_body: [sun, moon]\nmaneuvers:\n  - { impulsive: { epoch_utc: \"2031-05-04T15:00:00Z\", dv_rtn_km_s: [0.0, 0.0005, 0.0] } }\n  - { finite: { start_utc: \"2031-05-04T16:00:00Z\", end_utc: \"2031-05-04T16:30:00Z\", accel_rtn_km_s2: [0.0, 2.0e-9, 0.0] } }\n";
    let f = write(dir.path(), "forces.yaml", &format!("{FORCES}{extra}"));
    let s = write(dir.path(), "state.yaml", STATE);
    let out = dir.path().join("eph.oem");
    let rep = dir.path().join("r.json");
    let (code, stdout, stderr) = arcwise(&[
        "propagate",
        "--forces",
        f.to_str().unwrap(),
        "--state",
        s.to_str().unwrap(),
        "--to",
        "2031-05-04T18:00:00Z",
        "--step",
        "600",
        "--out",
        out.to_str().unwrap(),
        "--report",
        rep.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{stderr}");
    assert!(
        stdout.contains("srp")
            && stdout.contains("third_body_moon")
            && stdout.contains("finite_burn"),
        "{stdout}"
    );
    let r: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&rep).unwrap()).unwrap();
    let m = &r["maneuvers_applied"][0];
    assert_eq!(m["epoch_utc"], "2031-05-04T15:00:00.000000Z");
    let dv: Vec<f64> = m["dv_eci_km_s"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_f64().unwrap())
        .collect();
    let n = (dv[0] * dv[0] + dv[1] * dv[1] + dv[2] * dv[2]).sqrt();
    assert!((n - 0.0005).abs() < 1e-15, "{n}");
}

#[test]
fn decay_is_reported_not_failed() {
    let dir = tempfile::tempdir().unwrap();
    let f = write(
        dir.path(),
        "forces.yaml",
        &FORCES
            .replace(
                "{ exponential: { rho0_kg_m3: 3.725e-12, h0_km: 400.0, scale_height_km: 58.515 } }",
                "table",
            )
            .replace("area_m2: 0.1", "area_m2: 2.0"),
    );
    let s = write(
        dir.path(),
        "state.yaml",
        &STATE
            .replace("6778.1363", "6538.1363")
            .replace("[0.0, 4.7, 6.0]", "[0.0, 4.87, 6.22]"),
    );
    let out = dir.path().join("eph.csv");
    let rep = dir.path().join("r.json");
    let (code, stdout, stderr) = arcwise(&[
        "propagate",
        "--forces",
        f.to_str().unwrap(),
        "--state",
        s.to_str().unwrap(),
        "--to",
        "2031-05-06T12:00:00Z",
        "--step",
        "60",
        "--out",
        out.to_str().unwrap(),
        "--report",
        rep.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{stderr}");
    assert!(stdout.contains("decayed"), "{stdout}");
    let r: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&rep).unwrap()).unwrap();
    assert_eq!(r["termination"], "decayed");
    assert!(r["decay"]["epoch_utc"]
        .as_str()
        .unwrap()
        .starts_with("2031-05-0"));
}

#[test]
fn an_oem_across_an_impulsive_maneuver_is_split_into_segments() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let forces = common::write(
        d,
        "forces.yaml",
        "gravity: { zonal_degree: 2 }\nmaneuvers:\n  - { impulsive: { epoch_utc: \"2031-05-04T01:00:30Z\", dv_rtn_km_s: [0.0, 0.001, 0.0] } }\n",
    );
    let state = common::write(
        d,
        "state.yaml",
        "object_name: KESTREL-3\nobject_id: 2031-042A\nepoch_utc: \"2031-05-04T00:00:00Z\"\nelements: { sma_km: 6878.0, ecc: 0.001, inc_deg: 51.6, raan_deg: 0, argp_deg: 0, true_anomaly_deg: 0 }\n",
    );
    let out = d.join("e.oem");
    let (code, _, err) = common::propagate(&forces, &state, "2031-05-04T02:00:00Z", "60", &out);
    assert_eq!(code, 0, "{err}");
    let text = std::fs::read_to_string(&out).unwrap();
    assert_eq!(text.matches("META_START").count(), 2, "{text}");
    assert!(text.contains("OBJECT_ID = 2031-042A") && text.contains("CREATION_DATE = "));
    let e = propagator::ephemeris::Ephemeris::load(&out, &propagator::CentralBody::EARTH_EGM96)
        .unwrap();
    let k = e.segment_starts[0];
    let (before, after) = (&e.points[k - 1], &e.points[k]);
    assert_eq!(before.epoch, after.epoch);
    assert_eq!(before.epoch.to_utc_string(), "2031-05-04T01:00:30.000000Z");
    assert_eq!(
        before.state.fixed_rows::<3>(0),
        after.state.fixed_rows::<3>(0)
    );
    let dv = (after.state - before.state).fixed_rows::<3>(3).norm();
    assert!((dv - 0.001).abs() < 1e-12, "Δv {dv}");
    // The file is an arc too: the repeated epoch is observed once.
    let (code, _, err) = common::arcwise(&[
        "fit",
        "--arc",
        common::s(&out),
        "--forces",
        common::s(&forces),
    ]);
    assert_eq!(code, 0, "{err}");
}

#[test]
fn writes_its_ephemeris_in_the_frame_asked_for() {
    // An OEM in ITRF or EME2000 names its frame and reads back (rotated to GCRF) as the
    // GCRF run; a CSV in ITRF holds Earth-fixed positions (same radius, other direction,
    // and a velocity without the Earth's rotation). The rotation itself is checked against
    // pyerfa in tests/earth_orientation.rs.
    let dir = tempfile::tempdir().unwrap();
    let f = write(dir.path(), "forces.yaml", FORCES);
    let s = write(dir.path(), "state.yaml", STATE);
    let attempt = |name: &str, frame: &str| {
        let out = dir.path().join(name);
        let (code, stdout, stderr) = arcwise(&[
            "propagate",
            "--forces",
            f.to_str().unwrap(),
            "--state",
            s.to_str().unwrap(),
            "--to",
            "2031-05-04T14:00:00Z",
            "--step",
            "600",
            "--frame",
            frame,
            "--out",
            out.to_str().unwrap(),
        ]);
        (code, format!("{stdout}{stderr}"), out)
    };
    let run = |name: &str, frame: &str| {
        let (code, said, out) = attempt(name, frame);
        assert_eq!(code, 0, "{said}");
        out
    };
    let load = |p: &Path| {
        propagator::ephemeris::Ephemeris::load(p, &propagator::CentralBody::EARTH_EGM96).unwrap()
    };
    let gcrf = load(&run("g.oem", "GCRF"));
    for frame in ["ITRF", "EME2000"] {
        let path = run(&format!("{frame}.oem"), frame);
        let text = std::fs::read_to_string(&path).unwrap();
        assert!(text.contains(&format!("REF_FRAME = {frame}\n")), "{text}");
        let back = load(&path);
        for (a, b) in back.points.iter().zip(&gcrf.points) {
            let d = (a.state - b.state).fixed_rows::<3>(0).norm();
            assert!(d < 1e-8, "{frame}: {d} km");
        }
    }
    let csv = std::fs::read_to_string(run("i.csv", "ITRF")).unwrap();
    let row: Vec<f64> = csv
        .lines()
        .nth(4)
        .unwrap()
        .split(',')
        .skip(1)
        .map(|v| v.parse().unwrap())
        .collect();
    let g = gcrf.points[3].state;
    let (ri, rg) = (
        nalgebra::Vector3::new(row[0], row[1], row[2]),
        g.fixed_rows::<3>(0).into_owned(),
    );
    assert!((ri.norm() - rg.norm()).abs() < 1e-8);
    assert!((ri - rg).norm() > 100.0, "{ri} vs {rg}");
    let (code, err, out) = attempt("t.oem", "TEME");
    assert_eq!(code, 2);
    assert!(err.contains("--frame TEME"), "{err}");
    assert!(!out.exists());
}
