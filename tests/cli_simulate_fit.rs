//! End-to-end: `arcwise simulate` on the shipped scenarios, then `arcwise fit`, and the
//! bad inputs of both.

mod common;
use common::{arcwise, s};
use std::path::{Path, PathBuf};

fn scenario(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("examples/scenarios")
        .join(name)
}

fn with_field(line: &str, k: usize, value: &str) -> String {
    let mut f: Vec<&str> = line.split(',').collect();
    f[k] = value;
    f.join(",")
}

#[test]
fn simulate_then_fit_gives_the_right_verdicts() {
    let dir = tempfile::tempdir().unwrap();
    for (name, want) in [
        ("quiet.yaml", "no_anomaly"),
        ("venting.yaml", "anomaly"),
        ("storm.yaml", "anomaly"),
    ] {
        let out = dir.path().join(name);
        let (code, stdout, stderr) = arcwise(&["simulate", s(&scenario(name)), "--out", s(&out)]);
        assert_eq!(code, 0, "{stderr}");
        assert!(stdout.contains("training observations"));
        for f in [
            "train.csv",
            "next.csv",
            "truth.oem",
            "forces.yaml",
            "simulate.json",
        ] {
            assert!(out.join(f).exists(), "{name}: {f} missing");
        }
        let rep = out.join("fit.json");
        let plot = out.join("fit.svg");
        let (code, stdout, stderr) = arcwise(&[
            "fit",
            "--arc",
            s(&out.join("train.csv")),
            "--forces",
            s(&out.join("forces.yaml")),
            "--estimate",
            "drag_scale",
            "--report",
            s(&rep),
            "--plot",
            s(&plot),
        ]);
        assert_eq!(code, 0, "{stderr}");
        assert!(
            stdout.contains(&format!("verdict: {want}")),
            "{name}: {stdout}"
        );
        let r: serde_json::Value =
            serde_json::from_str(&std::fs::read_to_string(&rep).unwrap()).unwrap();
        assert_eq!(r["verdict"], want);
        for key in ["rms_km", "chi2", "dof", "p_value", "edited"] {
            assert!(r[key].is_number(), "{name}: {key}");
        }
        assert_eq!(r["parameters"][0]["name"], "drag_scale");
        assert!(r["parameters"][0]["sigma"].as_f64().unwrap() > 0.0);
        assert!(r["state_first"]["epoch_utc"]
            .as_str()
            .unwrap()
            .starts_with("2031-05-04T00:00:00"));
        assert!(r["state_last"]["r_km"].is_array());
        let svg = std::fs::read_to_string(&plot).unwrap();
        assert!(svg.contains("<svg") && svg.contains("T residual (m)"));
        // Deterministic for a seed: simulating again gives the same arc.
        let again = dir.path().join(format!("{name}-again"));
        arcwise(&["simulate", s(&scenario(name)), "--out", s(&again)]);
        assert_eq!(
            std::fs::read(out.join("train.csv")).unwrap(),
            std::fs::read(again.join("train.csv")).unwrap()
        );
    }
}

#[test]
fn bad_arcs_and_options_exit_2_with_one_message_and_no_output() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("q");
    assert_eq!(
        arcwise(&["simulate", s(&scenario("quiet.yaml")), "--out", s(&out)]).0,
        0
    );
    let forces = out.join("forces.yaml");
    let good = std::fs::read_to_string(out.join("train.csv")).unwrap();
    let lines: Vec<&str> = good.lines().collect();
    let write = |name: &str, text: String| {
        let p = dir.path().join(name);
        std::fs::write(&p, text).unwrap();
        p
    };
    let metres = lines
        .iter()
        .enumerate()
        .map(|(i, l)| {
            if i == 0 {
                l.to_string()
            } else {
                let f: Vec<String> = l
                    .split(',')
                    .enumerate()
                    .map(|(k, v)| {
                        if (1..4).contains(&k) {
                            format!("{}", v.parse::<f64>().unwrap() * 1000.0)
                        } else {
                            v.to_string()
                        }
                    })
                    .collect();
                f.join(",")
            }
        })
        .collect::<Vec<_>>()
        .join("\n");
    let cases: Vec<(&str, PathBuf, Vec<&str>, &str)> = vec![
        ("missing", dir.path().join("none.csv"), vec![], "none.csv"),
        ("empty", write("empty.csv", String::new()), vec![], "empty"),
        (
            "wrong columns",
            write("cols.csv", "time,x,y,z\n1,2,3,4\n".into()),
            vec![],
            "unknown column",
        ),
        ("metres", write("m.csv", metres), vec![], "metres"),
        (
            "unsorted",
            write(
                "u.csv",
                format!("{}\n{}\n{}\n{}\n", lines[0], lines[3], lines[2], lines[4]),
            ),
            vec![],
            "earlier",
        ),
        (
            "duplicate",
            write(
                "d.csv",
                format!("{}\n{}\n{}\n{}\n", lines[0], lines[2], lines[2], lines[3]),
            ),
            vec![],
            "duplicate",
        ),
        (
            "NaN",
            write(
                "nan.csv",
                format!("{}\n{}\n", lines[0], with_field(lines[1], 1, "NaN")),
            ),
            vec![],
            "not finite",
        ),
        (
            "infinity",
            write(
                "inf.csv",
                format!("{}\n{}\n", lines[0], with_field(lines[1], 2, "inf")),
            ),
            vec![],
            "not finite",
        ),
        (
            "two points",
            write(
                "two.csv",
                format!("{}\n{}\n{}\n", lines[0], lines[1], lines[2]),
            ),
            vec![],
            "too few",
        ),
        (
            "zero sigma",
            write(
                "z.csv",
                format!(
                    "{}\n{}\n",
                    lines[0],
                    lines[1].rsplit_once(',').unwrap().0.to_string() + ",0"
                ),
            ),
            vec![],
            "sigma_km",
        ),
        (
            "bad estimate",
            out.join("train.csv"),
            vec!["--estimate", "mass"],
            "--estimate",
        ),
        (
            "srp without srp",
            out.join("train.csv"),
            vec!["--estimate", "srp_scale"],
            "no srp",
        ),
    ];
    for (what, arc, extra, needle) in cases {
        let rep = dir.path().join("r.json");
        let mut args = vec![
            "fit",
            "--arc",
            s(&arc),
            "--forces",
            s(&forces),
            "--report",
            s(&rep),
        ];
        args.extend(extra);
        let (code, stdout, stderr) = arcwise(&args);
        assert_eq!(code, 2, "{what}: {stdout}{stderr}");
        assert!(
            stderr.contains(needle),
            "{what}: expected `{needle}` in {stderr}"
        );
        assert_eq!(stderr.lines().count(), 1, "{what}: {stderr}");
        assert!(!rep.exists(), "{what}: report left behind");
    }
    // A scenario with an unknown key.
    let bad = write(
        "bad.yaml",
        std::fs::read_to_string(scenario("quiet.yaml"))
            .unwrap()
            .replace("truth: []", "truth: []\nwind: 3"),
    );
    let (code, _, stderr) = arcwise(&["simulate", s(&bad), "--out", s(&dir.path().join("x"))]);
    assert_eq!(code, 2);
    assert!(
        stderr.contains("wind") && stderr.contains("bad.yaml"),
        "{stderr}"
    );
}

#[test]
fn off_a_terminal_long_work_prints_progress_lines() {
    // stderr is a pipe here, as in a log or CI: no bar, but timed lines (every 5 s by
    // default; every update with ARCWISE_PROGRESS_EVERY_S=0).
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("q");
    let (code, _, err) = arcwise(&["simulate", s(&scenario("quiet.yaml")), "--out", s(&out)]);
    assert_eq!(code, 0, "{err}");
    let o = std::process::Command::new(env!("CARGO_BIN_EXE_arcwise"))
        .args([
            "fit",
            "--arc",
            s(&out.join("train.csv")),
            "--forces",
            s(&out.join("forces.yaml")),
        ])
        .env("ARCWISE_PROGRESS_EVERY_S", "0")
        .output()
        .unwrap();
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(o.status.success(), "{err}");
    assert!(err.lines().any(|l| l.starts_with("fit: stage")), "{err}");
    // Without the override, a run this short prints no progress line at all.
    let o = std::process::Command::new(env!("CARGO_BIN_EXE_arcwise"))
        .args([
            "fit",
            "--arc",
            s(&out.join("train.csv")),
            "--forces",
            s(&out.join("forces.yaml")),
        ])
        .output()
        .unwrap();
    assert!(!String::from_utf8_lossy(&o.stderr).contains("fit: stage"));
}
