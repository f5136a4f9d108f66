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
        common::propagate(&forces, &start, "2031-05-04T13:00:00Z", "30", &oem).0,
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
    assert_eq!(r["hypotheses"].as_array().unwrap().len(), 5);
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

/// The constructed crossing (0.5 km at 12:00) with J2, the secondary as OEMs sampled
/// every `steps` seconds from 10:00 to 14:00; returns (dir, forces, primary, OEM paths).
fn sparse_crossing(
    steps: &[u32],
) -> (
    tempfile::TempDir,
    std::path::PathBuf,
    std::path::PathBuf,
    Vec<std::path::PathBuf>,
) {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let forces = common::write(d, "forces.yaml", "gravity: { zonal_degree: 2 }\n");
    let (a, mu): (f64, f64) = (7000.0, 398_600.441_8);
    let (v, v2) = ((mu / a).sqrt(), (mu / (a + 0.5)).sqrt());
    let p = common::write(
        d,
        "p.yaml",
        &format!("object_name: PRIMARY-1\nepoch_utc: 2031-05-04T12:00:00Z\nr_km: [{a}, 0, 0]\nv_km_s: [0, {v}, 0]\n"),
    );
    let q = common::write(
        d,
        "q.yaml",
        &format!("object_name: CROSSER-2\nepoch_utc: 2031-05-04T12:00:00Z\nr_km: [{}, 0, 0]\nv_km_s: [0, 0, {v2}]\n", a + 0.5),
    );
    let run = |state: &Path, to: &str, step: u32, out: &Path| {
        let (code, _, err) = common::propagate(&forces, state, to, &step.to_string(), out);
        assert_eq!(code, 0, "{err}");
    };
    // Back to 10:00, then forward to 14:00 at each sampling.
    let back = d.join("back.oem");
    run(&q, "2031-05-04T10:00:00Z", 60, &back);
    let e = propagator::ephemeris::Ephemeris::load(&back, &propagator::CentralBody::EARTH_EGM96)
        .unwrap();
    let x = e.points[0].state;
    let start = common::write(
        d,
        "start.yaml",
        &format!(
            "object_name: CROSSER-2\nepoch_utc: {}\nr_km: [{}, {}, {}]\nv_km_s: [{}, {}, {}]\n",
            e.points[0].epoch, x[0], x[1], x[2], x[3], x[4], x[5]
        ),
    );
    let outs = steps
        .iter()
        .map(|st| {
            let out = d.join(format!("q{st}.oem"));
            run(&start, "2031-05-04T14:00:00Z", *st, &out);
            out
        })
        .collect();
    (dir, forces, p, outs)
}

fn screen(forces: &Path, primary: &Path, secondary: &Path, report: &Path) -> (i32, String, String) {
    arcwise(&[
        "screen",
        "--primary",
        s(primary),
        "--secondaries",
        s(secondary),
        "--forces",
        s(forces),
        "--from",
        "2031-05-04T11:00:00Z",
        "--to",
        "2031-05-04T13:00:00Z",
        "--threshold-km",
        "5",
        "--report",
        s(report),
    ])
}

#[test]
fn sparse_legal_oem_sampling_still_gives_the_right_miss() {
    // 10- and 15-minute sampling is legal in an OEM; cubic Hermite over 600 s at 7000 km
    // is off by kilometres (h⁴/384·n⁴·r), which used to give a 3.9 km miss for 1.5 km.
    let (dir, forces, p, oems) = sparse_crossing(&[60, 600, 900]);
    for oem in &oems {
        let rep = dir.path().join("s.json");
        let (code, out, err) = screen(&forces, &p, oem, &rep);
        assert_eq!(code, 0, "{err}");
        let r: serde_json::Value =
            serde_json::from_str(&std::fs::read_to_string(&rep).unwrap()).unwrap();
        let aps = r["approaches"].as_array().unwrap();
        assert_eq!(aps.len(), 1, "{}: {out}", oem.display());
        let miss = aps[0]["miss_km"].as_f64().unwrap();
        assert!(
            (miss - 0.5).abs() < 0.01,
            "{}: miss {miss} km",
            oem.display()
        );
        assert!(aps[0]["tca_utc"]
            .as_str()
            .unwrap()
            .starts_with("2031-05-04T12:00:00"));
        // Objects are named by their OBJECT_NAME, not by path.
        assert_eq!(aps[0]["secondary_object"], "CROSSER-2");
        assert!(out.contains("CROSSER-2"), "{out}");
    }
    // The range around the TCA, drawn.
    let svg = dir.path().join("s.svg");
    let (code, _, err) = arcwise(&[
        "screen",
        "--primary",
        s(&p),
        "--secondaries",
        s(&oems[1]),
        "--forces",
        s(&forces),
        "--from",
        "2031-05-04T11:00:00Z",
        "--to",
        "2031-05-04T13:00:00Z",
        "--threshold-km",
        "5",
        "--plot",
        s(&svg),
    ]);
    assert_eq!(code, 0, "{err}");
    let text = std::fs::read_to_string(&svg).unwrap();
    assert!(
        text.contains("CROSSER-2") && text.contains("miss 0.5"),
        "plot lacks the approach"
    );
}

#[test]
fn gaps_segments_other_objects_and_the_primary_itself_are_refused() {
    let (dir, forces, p, oems) = sparse_crossing(&[60]);
    let d = dir.path();
    let text = std::fs::read_to_string(&oems[0]).unwrap();
    let (head, data) = text.split_once("META_STOP\n").unwrap();
    let rows: Vec<&str> = data.lines().filter(|l| !l.trim().is_empty()).collect();
    let meta = &head[head.find("META_START").unwrap()..];
    // Two segments 10:00–11:30 and 13:30–14:00: a 2-hour gap inside the window.
    let gap = format!(
        "{head}META_STOP\n{}\n\n{meta}META_STOP\n{}\n",
        rows[..91].join("\n"),
        rows[210..].join("\n")
    );
    let gapped = common::write(d, "gap.oem", &gap);
    let rep = d.join("s.json");
    let (code, _, err) = screen(&forces, &p, &gapped, &rep);
    assert_eq!(code, 2, "{err}");
    assert!(
        err.contains("between OEM segments") && err.contains("gap"),
        "{err}"
    );
    // The same file with another object in the second segment.
    let two = gap.replacen(
        &format!("{meta}META_STOP\n{}", rows[210]),
        &format!(
            "{}META_STOP\n{}",
            meta.replace("CROSSER-2", "OTHER-9"),
            rows[210]
        ),
        1,
    );
    assert!(two.contains("OTHER-9"));
    let (code, _, err) = screen(&forces, &p, &common::write(d, "two.oem", &two), &rep);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("one object per file"), "{err}");
    // The primary against itself, as another file naming the same object.
    let same = common::write(d, "same.yaml", &std::fs::read_to_string(&p).unwrap());
    let (code, _, err) = screen(&forces, &p, &same, &rep);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("against itself"), "{err}");
    let (code, _, err) = screen(&forces, &p, &p, &rep);
    assert_eq!(code, 2, "{err}");
}
