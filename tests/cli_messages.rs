//! Messages that save users time: failure times in UTC, a learned file accepted as a
//! starting state, a warning when `check` is given another forces file than the one the
//! force was learned with.

mod common;
use common::{arcwise, s, write};
use std::path::Path;

#[test]
fn a_failure_says_when_in_utc() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    // A plugin (reference epoch 12:00 UTC) that returns NaN after 13:00 UTC.
    let so = common::c_plugin(
        d,
        "late_nan",
        &common::c_force_source(
            1,
            "out[0] = t > 3600.0 ? NAN : 0.0; out[1] = 0; out[2] = 0; return 0;",
        ),
    );
    let forces = write(
        d,
        "forces.yaml",
        &format!(
            "gravity: {{ zonal_degree: 2 }}\nplugins: [{}]\n",
            so.display()
        ),
    );
    let state = write(
        d,
        "state.yaml",
        "epoch_utc: \"2031-05-04T00:00:00Z\"\nelements: { sma_km: 6878.0, ecc: 0.001, inc_deg: 51.6, raan_deg: 0, argp_deg: 0, true_anomaly_deg: 0 }\n",
    );
    let (code, _, err) = common::propagate(
        &forces,
        &state,
        "2031-05-04T14:00:00Z",
        "60",
        &d.join("p.csv"),
    );
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("[at 2031-05-04T13:00:"), "{err}");
}

#[test]
fn a_learned_file_is_a_starting_state_and_check_warns_about_another_forces_file() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let learned = d.join("learned.yaml");
    std::fs::copy(
        Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/learned_example.yaml"),
        &learned,
    )
    .unwrap();
    let forces = write(d, "forces.yaml", "gravity: { zonal_degree: 2 }\n");
    let out = d.join("p.csv");
    let (code, _, err) = common::propagate(&forces, &learned, "2031-05-05T02:00:00Z", "60", &out);
    assert_eq!(code, 0, "{err}");
    let first = std::fs::read_to_string(&out).unwrap();
    assert!(
        first
            .lines()
            .nth(1)
            .unwrap()
            .starts_with("2031-05-05T00:00:00"),
        "{first}"
    );
    // check with a forces file that is not the one of the learned file's provenance.
    let (_, _, err) = arcwise(&[
        "check",
        "--learned",
        s(&learned),
        "--forces",
        s(&forces),
        "--arc",
        s(&out),
    ]);
    assert!(
        err.contains("is not the forces file") && err.contains("was learned with"),
        "{err}"
    );
}

#[test]
fn help_shows_defaults_and_allowed_values_readably() {
    let (_, out, _) = arcwise(&["propagate", "--help"]);
    assert!(
        out.contains("[default: 1e-11]") && !out.contains("0.00000000001"),
        "{out}"
    );
    for cmd in ["fit", "learn", "rank"] {
        let (_, out, _) = arcwise(&[cmd, "--help"]);
        assert!(
            out.contains("drag_scale") && out.contains("emp_1rev_rtn"),
            "{cmd}: {out}"
        );
    }
    let (code, _, err) = arcwise(&[
        "fit",
        "--arc",
        "a.csv",
        "--forces",
        "f.yaml",
        "--estimate",
        "drag",
    ]);
    assert_eq!(code, 2);
    assert!(err.contains("drag_scale"), "{err}");
}

#[test]
fn rank_and_screen_draw_what_their_tables_say() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let sim = d.join("q");
    let (code, _, err) = arcwise(&[
        "simulate",
        s(&root.join("examples/scenarios/quiet.yaml")),
        "--out",
        s(&sim),
    ]);
    assert_eq!(code, 0, "{err}");
    let plot = d.join("rank.svg");
    let (code, out, err) = arcwise(&[
        "rank",
        "--arc",
        s(&sim.join("train.csv")),
        "--forces",
        s(&sim.join("forces.yaml")),
        "--hypotheses",
        s(&root.join("examples/hypotheses/maneuver_day.yaml")),
        "--plot",
        s(&plot),
        "--report",
        s(&d.join("rank.json")),
    ]);
    assert_eq!(code, 0, "{err}");
    assert!(
        out.contains("explains the arc") && out.contains("no_maneuver"),
        "{out}"
    );
    let svg = std::fs::read_to_string(&plot).unwrap();
    assert!(
        svg.contains("impulsive") && svg.contains("finite_burn") && svg.contains("fitted timing")
    );
    let r: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(d.join("rank.json")).unwrap()).unwrap();
    assert_eq!(r["best_explains_arc"], true);
    assert!(r["notice"].as_str().unwrap().contains("screening aid"));
}
