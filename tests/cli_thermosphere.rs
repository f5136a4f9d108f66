//! A geomagnetic storm seen through NRLMSISE-00 (examples/scenarios/thermosphere_storm.yaml:
//! ap 200 for 9 h, 12 h into a 1.5-day 400 km arc, σ 10 m). The known model on the quiet
//! space-weather table must call the arc an anomaly; the same arc fitted with the storm
//! table must not (the gate's must-fail and must-stay-quiet cases), and `learn` on it
//! learns nothing. Both fits estimate the drag scale on top.

mod common;
use common::{arcwise, s, write};
use std::path::Path;

fn root() -> &'static Path {
    Path::new(env!("CARGO_MANIFEST_DIR"))
}

fn fit(dir: &Path, forces: &Path, name: &str) -> (i32, String, String, serde_json::Value) {
    let report = dir.join(format!("{name}.json"));
    let (code, stdout, stderr) = arcwise(&[
        "fit",
        "--arc",
        s(&dir.join("train.csv")),
        "--forces",
        s(forces),
        "--estimate",
        "drag_scale",
        "--report",
        s(&report),
    ]);
    let r = std::fs::read_to_string(&report)
        .ok()
        .and_then(|t| serde_json::from_str(&t).ok())
        .unwrap_or(serde_json::Value::Null);
    (code, stdout, stderr, r)
}

fn forces_with_table(dir: &Path, table: &Path) -> std::path::PathBuf {
    write(
        dir,
        "forces_with_table.yaml",
        &format!(
            "gravity: {{ zonal_degree: 4 }}\ndrag:\n  atmosphere: {{ nrlmsise00: {{ space_weather: {:?} }} }}\n  cd: 2.2\n  area_m2: 0.1\n  mass_kg: 4.0\n",
            s(table)
        ),
    )
}

#[test]
fn a_storm_is_an_anomaly_on_the_quiet_table_and_not_on_the_storm_table() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path();
    let scenario = root().join("examples/scenarios/thermosphere_storm.yaml");
    let (code, _, stderr) = arcwise(&["simulate", s(&scenario), "--out", s(out)]);
    assert_eq!(code, 0, "{stderr}");

    // Must fail: the known model (written by simulate) runs on the quiet table.
    let (code, stdout, stderr, r) = fit(out, &out.join("forces.yaml"), "quiet");
    assert_eq!(code, 0, "{stderr}");
    assert_eq!(r["verdict"], "anomaly", "{stdout}");

    // Must stay quiet: the storm table in the known model explains the arc, and the drag
    // scale comes back at 1 within its σ.
    let storm = root().join("examples/space_weather/storm_ap200.csv");
    let forces = forces_with_table(out, &storm);
    let (code, stdout, stderr, r) = fit(out, &forces, "storm");
    assert_eq!(code, 0, "{stderr}");
    assert_eq!(r["verdict"], "no_anomaly", "{stdout}");
    let p = &r["parameters"][0];
    assert_eq!(p["name"], "drag_scale");
    let (value, sigma) = (p["value"].as_f64().unwrap(), p["sigma"].as_f64().unwrap());
    assert!(sigma > 0.0 && sigma < 0.05, "σ {sigma}");
    assert!(
        (value - 1.0).abs() < 4.0 * sigma,
        "drag_scale {value} ± {sigma}"
    );

    // And `learn` on the storm table must learn nothing: a quiet arc on an NRLMSISE-00
    // known model stays quiet.
    let report = out.join("learn.json");
    let (code, stdout, stderr) = arcwise(&[
        "learn",
        "--arc",
        s(&out.join("train.csv")),
        "--forces",
        s(&forces),
        "--out",
        s(&out.join("learned.yaml")),
        "--report",
        s(&report),
    ]);
    assert_eq!(code, 0, "{stderr}");
    let r: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&report).unwrap()).unwrap();
    assert_eq!(r["outcome"], "no_anomaly", "{stdout}");
    assert_eq!(r["terms"].as_array().map(Vec::len), Some(0), "{stdout}");
}

#[test]
fn a_table_that_does_not_cover_the_arc_is_named() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path();
    let scenario = root().join("examples/scenarios/thermosphere_storm.yaml");
    let (code, _, stderr) = arcwise(&["simulate", s(&scenario), "--out", s(out)]);
    assert_eq!(code, 0, "{stderr}");
    // The first three days only: the arc (from 2026-03-11) is not covered.
    let full =
        std::fs::read_to_string(root().join("examples/space_weather/quiet_ap12.csv")).unwrap();
    let short: Vec<&str> = full
        .lines()
        .take_while(|l| !l.starts_with("2026-03-08"))
        .collect();
    let table = write(out, "short.csv", &(short.join("\n") + "\n"));
    let forces = forces_with_table(out, &table);
    let (code, _, stderr, _) = fit(out, &forces, "short");
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains("short.csv") && stderr.contains("no row for 2026-03-1"),
        "{stderr}"
    );
    assert!(
        stderr.contains("covers 2026-03-05 to 2026-03-07"),
        "{stderr}"
    );
}
