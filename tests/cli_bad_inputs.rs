//! The bad-input table for the commands not covered elsewhere (build, learn, simulate,
//! screen, rank, check): each case exits 2 with one clear line and leaves no output.

mod common;
use common::write;
use std::path::Path;
use std::process::Command;

fn arcwise_env(args: &[String], env: &[(&str, &str)]) -> (i32, String) {
    let mut c = Command::new(env!("CARGO_BIN_EXE_arcwise"));
    c.args(args);
    for (k, v) in env {
        c.env(k, v);
    }
    let out = c.output().unwrap();
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

#[test]
fn every_command_refuses_bad_input_clearly() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let sc = Path::new(env!("CARGO_MANIFEST_DIR")).join("examples/scenarios/quiet.yaml");
    let good_learned =
        Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/learned_example.yaml");
    let forces = write(d, "forces.yaml", "gravity: { zonal_degree: 2 }\n");
    let arc = write(d, "arc.csv", "epoch_utc,x_km,y_km,z_km\n2031-05-04T00:00:00Z,7000,0,0\n2031-05-04T00:01:00Z,6990,400,0\n2031-05-04T00:02:00Z,6970,800,0\n");
    let metres = write(
        d,
        "m.csv",
        "epoch_utc,x_km,y_km,z_km\n2031-05-04T00:00:00Z,7000000,0,0\n",
    );
    let tampered = write(
        d,
        "tampered.yaml",
        &std::fs::read_to_string(&good_learned).unwrap().replacen(
            "coefficient: ",
            "coefficient: 9",
            1,
        ),
    );
    let state = write(
        d,
        "s.yaml",
        "epoch_utc: 2031-05-04T00:00:00Z\nr_km: [7000, 0, 0]\nv_km_s: [0, 7.5, 0]\n",
    );
    let hyp_bad = write(d, "h.yaml", "hypotheses: [teleport]\n");
    let empty = write(d, "empty.yaml", "");
    let bad_track = write(
        d,
        "sc.yaml",
        &std::fs::read_to_string(&sc)
            .unwrap()
            .replace("step_s: 60.0", "step_s: -5"),
    );
    let out = d.join("out.any");
    let s = |p: &Path| p.display().to_string();
    type Case<'a> = (&'a str, Vec<String>, Vec<(&'a str, &'a str)>, &'a str);
    let cases: Vec<Case> = vec![
        (
            "build: missing file",
            vec![
                "build".into(),
                s(&d.join("none.yaml")),
                "--out".into(),
                s(&out),
            ],
            vec![],
            "none.yaml",
        ),
        (
            "build: tampered file",
            vec!["build".into(), s(&tampered), "--out".into(), s(&out)],
            vec![],
            "checksum",
        ),
        (
            "build: no toolchain",
            vec!["build".into(), s(&good_learned), "--out".into(), s(&out)],
            vec![("CARGO", "/nonexistent/cargo")],
            "Rust toolchain",
        ),
        (
            "learn: metres",
            vec![
                "learn".into(),
                "--arc".into(),
                s(&metres),
                "--forces".into(),
                s(&forces),
                "--out".into(),
                s(&out),
            ],
            vec![],
            "metres",
        ),
        (
            "learn: too short",
            vec![
                "learn".into(),
                "--arc".into(),
                s(&arc),
                "--forces".into(),
                s(&forces),
                "--out".into(),
                s(&out),
            ],
            vec![],
            "too short",
        ),
        (
            "simulate: empty",
            vec![
                "simulate".into(),
                s(&empty),
                "--out".into(),
                s(&d.join("simout")),
            ],
            vec![],
            "empty",
        ),
        (
            "simulate: bad step",
            vec![
                "simulate".into(),
                s(&bad_track),
                "--out".into(),
                s(&d.join("simout")),
            ],
            vec![],
            "tracking.step_s",
        ),
        (
            "screen: bad threshold",
            vec![
                "screen".into(),
                "--primary".into(),
                s(&state),
                "--secondaries".into(),
                s(&state),
                "--forces".into(),
                s(&forces),
                "--from".into(),
                "2031-05-04T00:00:00Z".into(),
                "--to".into(),
                "2031-05-04T01:00:00Z".into(),
                "--threshold-km".into(),
                "0".into(),
                "--report".into(),
                s(&out),
            ],
            vec![],
            "--threshold-km",
        ),
        (
            "screen: window backwards",
            vec![
                "screen".into(),
                "--primary".into(),
                s(&state),
                "--secondaries".into(),
                s(&state),
                "--forces".into(),
                s(&forces),
                "--from".into(),
                "2031-05-04T01:00:00Z".into(),
                "--to".into(),
                "2031-05-04T00:00:00Z".into(),
                "--threshold-km".into(),
                "5".into(),
                "--report".into(),
                s(&out),
            ],
            vec![],
            "--to must be after --from",
        ),
        (
            "screen: no forces for a state",
            vec![
                "screen".into(),
                "--primary".into(),
                s(&state),
                "--secondaries".into(),
                s(&state),
                "--from".into(),
                "2031-05-04T00:00:00Z".into(),
                "--to".into(),
                "2031-05-04T01:00:00Z".into(),
                "--threshold-km".into(),
                "5".into(),
            ],
            vec![],
            "needs --forces",
        ),
        (
            "rank: unknown hypothesis",
            vec![
                "rank".into(),
                "--arc".into(),
                s(&arc),
                "--forces".into(),
                s(&forces),
                "--hypotheses".into(),
                s(&hyp_bad),
                "--report".into(),
                s(&out),
            ],
            vec![],
            "teleport",
        ),
        (
            "check: tampered file",
            vec![
                "check".into(),
                "--learned".into(),
                s(&tampered),
                "--forces".into(),
                s(&forces),
                "--arc".into(),
                s(&arc),
                "--report".into(),
                s(&out),
            ],
            vec![],
            "checksum",
        ),
    ];
    for (what, args, env, needle) in cases {
        let (code, stderr) = arcwise_env(&args, &env);
        assert_eq!(code, 2, "{what}: {stderr}");
        assert!(
            stderr.contains(needle),
            "{what}: expected `{needle}` in {stderr}"
        );
        assert!(stderr.trim().lines().count() <= 2, "{what}: {stderr}");
        assert!(!out.exists(), "{what}: output left behind");
    }
}
