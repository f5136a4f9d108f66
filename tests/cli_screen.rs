//! End-to-end `arcwise screen` on a constructed crossing, with states and an ephemeris.

mod common;
use common::{arcwise, s};
use std::path::Path;

#[test]
fn screen_finds_the_crossing_and_says_it_is_a_screening_aid() {
    let dir = tempfile::tempdir().unwrap();
    let w = |name: &str, text: &str| {
        let p = dir.path().join(name);
        std::fs::write(&p, text).unwrap();
        p
    };
    let forces = w("forces.yaml", "gravity: { zonal_degree: 0 }\n");
    let (a, mu): (f64, f64) = (7000.0, 398_600.441_8);
    let v = (mu / a).sqrt();
    let v2 = (mu / (a + 0.5)).sqrt();
    // Both at the crossing point at 12:00, 0.5 km apart radially.
    let p = w(
        "p.yaml",
        &format!("epoch_utc: 2031-05-04T12:00:00Z\nr_km: [{a}, 0, 0]\nv_km_s: [0, {v}, 0]\n"),
    );
    let q = w(
        "q.yaml",
        &format!(
            "epoch_utc: 2031-05-04T12:00:00Z\nr_km: [{}, 0, 0]\nv_km_s: [0, 0, {v2}]\n",
            a + 0.5
        ),
    );
    let far = w(
        "far.yaml",
        "epoch_utc: 2031-05-04T12:00:00Z\nr_km: [42164, 0, 0]\nv_km_s: [0, 3.0747, 0]\n",
    );
    // The secondary also as an OEM ephemeris.
    let oem = dir.path().join("q.oem");
    let back = arcwise(&[
        "propagate",
        "--forces",
        s(&forces),
        "--state",
        s(&q),
        "--to",
        "2031-05-04T11:00:00Z",
        "--step",
        "30",
        "--out",
        s(&dir.path().join("back.oem")),
    ]);
    assert_eq!(back.0, 0, "{}", back.2);
    // Backward output is written in increasing time; its first state starts the forward leg.
    let eph = propagator::ephemeris::Ephemeris::load(
        &dir.path().join("back.oem"),
        &propagator::CentralBody::EARTH_EGM96,
    )
    .unwrap();
    assert!(eph.points[0]
        .epoch
        .to_utc_string()
        .starts_with("2031-05-04T11:00:00"));
    let x = eph.points[0].state;
    let start = w(
        "start.yaml",
        &format!(
            "epoch_utc: {}\nr_km: [{}, {}, {}]\nv_km_s: [{}, {}, {}]\n",
            eph.points[0].epoch, x[0], x[1], x[2], x[3], x[4], x[5]
        ),
    );
    assert_eq!(
        arcwise(&[
            "propagate",
            "--forces",
            s(&forces),
            "--state",
            s(&start),
            "--to",
            "2031-05-04T13:00:00Z",
            "--step",
            "30",
            "--out",
            s(&oem)
        ])
        .0,
        0
    );
    let rep = dir.path().join("screen.json");
    let (code, stdout, stderr) = arcwise(&[
        "screen",
        "--primary",
        s(&p),
        "--secondaries",
        s(&q),
        s(&far),
        s(&oem),
        "--forces",
        s(&forces),
        "--from",
        "2031-05-04T11:30:00Z",
        "--to",
        "2031-05-04T12:30:00Z",
        "--threshold-km",
        "5",
        "--report",
        s(&rep),
    ]);
    assert_eq!(code, 0, "{stderr}");
    assert!(
        stdout.contains("screening aid") && stdout.contains("space-safety rules"),
        "{stdout}"
    );
    let r: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&rep).unwrap()).unwrap();
    let ap = r["approaches"].as_array().unwrap();
    assert_eq!(ap.len(), 2, "{stdout}");
    for x in ap {
        assert!(
            x["tca_utc"]
                .as_str()
                .unwrap()
                .starts_with("2031-05-04T12:00:00.000"),
            "{x}"
        );
        assert!((x["miss_km"].as_f64().unwrap() - 0.5).abs() < 2e-3, "{x}");
    }
    // Bad input: an ephemeris that does not cover the window.
    let (code, _, stderr) = arcwise(&[
        "screen",
        "--primary",
        s(&p),
        "--secondaries",
        s(&oem),
        "--forces",
        s(&forces),
        "--from",
        "2031-05-04T10:00:00Z",
        "--to",
        "2031-05-04T12:30:00Z",
        "--threshold-km",
        "5",
    ]);
    assert_eq!(code, 2);
    assert!(stderr.contains("does not cover the window"), "{stderr}");
}

#[test]
fn rank_cli_orders_hypotheses_and_reports_them() {
    let dir = tempfile::tempdir().unwrap();
    let sc = Path::new(env!("CARGO_MANIFEST_DIR")).join("examples/scenarios/quiet.yaml");
    let out = dir.path().join("q");
    assert_eq!(arcwise(&["simulate", s(&sc), "--out", s(&out)]).0, 0);
    let h = Path::new(env!("CARGO_MANIFEST_DIR")).join("examples/hypotheses/maneuver_day.yaml");
    let rep = dir.path().join("rank.json");
    let (code, stdout, stderr) = arcwise(&[
        "rank",
        "--arc",
        s(&out.join("train.csv")),
        "--forces",
        s(&out.join("forces.yaml")),
        "--hypotheses",
        s(&h),
        "--report",
        s(&rep),
    ]);
    assert_eq!(code, 0, "{stderr}");
    assert!(stdout.contains("1. no_maneuver"), "{stdout}");
    let r: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&rep).unwrap()).unwrap();
    assert_eq!(r["hypotheses"].as_array().unwrap().len(), 4);
    let bad = dir.path().join("bad.yaml");
    std::fs::write(&bad, "hypotheses:\n  - teleport\n").unwrap();
    let (code, _, stderr) = arcwise(&[
        "rank",
        "--arc",
        s(&out.join("train.csv")),
        "--forces",
        s(&out.join("forces.yaml")),
        "--hypotheses",
        s(&bad),
    ]);
    assert_eq!(code, 2);
    assert!(stderr.contains("teleport"), "{stderr}");
}
