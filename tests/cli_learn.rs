//! End-to-end `arcwise learn`: learned files written, used by `propagate`, identical for
//! 1 and 2 threads, nothing learned on a quiet arc, tampered files refused.

mod common;
use common::{arcwise, s};
use std::path::{Path, PathBuf};

fn simulate(dir: &Path, name: &str) -> PathBuf {
    let out = dir.join(name);
    let sc = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("examples/scenarios")
        .join(format!("{name}.yaml"));
    assert_eq!(arcwise(&["simulate", s(&sc), "--out", s(&out)]).0, 0);
    out
}

#[test]
fn venting_learned_file_is_deterministic_and_usable() {
    let dir = tempfile::tempdir().unwrap();
    let v = simulate(dir.path(), "venting");
    let mut files = Vec::new();
    for threads in ["1", "2"] {
        let out = v.join(format!("learned-{threads}.yaml"));
        let rep = v.join(format!("learn-{threads}.json"));
        let (code, stdout, stderr) = arcwise(&[
            "learn",
            "--arc",
            s(&v.join("train.csv")),
            "--forces",
            s(&v.join("forces.yaml")),
            "--out",
            s(&out),
            "--report",
            s(&rep),
            "--plot",
            s(&v.join("plots")),
            "--generations",
            "4",
            "--threads",
            threads,
            "--seed",
            "7",
        ]);
        assert_eq!(code, 0, "{stderr}");
        assert!(stdout.contains("learned:"), "{stdout}");
        let r: serde_json::Value =
            serde_json::from_str(&std::fs::read_to_string(&rep).unwrap()).unwrap();
        assert_eq!(r["outcome"], "explained", "{stdout}");
        assert!(stdout.contains("outcome: explained"), "{stdout}");
        for key in [
            "verdict_known_forces",
            "verdict_learned",
            "model",
            "rms_km_before",
            "rms_km_after",
            "held_out_rms_km",
            "pareto_front",
            "seeds",
            "timing_scan",
        ] {
            assert!(!r[key].is_null(), "{key}");
        }
        // Every seed agrees on the venting push, and the report says which it chose.
        assert_eq!(r["seeds"]["agreeing"], r["seeds"]["runs"], "{}", r["seeds"]);
        assert!(
            stdout.contains("seeds: 3 of 3 chose the reported model"),
            "{stdout}"
        );
        // The constants carry their unit: the decay's time constant is in seconds.
        assert_eq!(r["constants"][0]["unit"], "s", "{}", r["constants"]);
        // One periodogram and onset scan per physically shaped block.
        assert_eq!(r["timing_scan"].as_array().unwrap().len(), 5);
        assert!(r["rms_km_after"].as_f64().unwrap() * 10.0 < r["rms_km_before"].as_f64().unwrap());
        // The decaying push keeps part of its signature from the initial state.
        let absorbed = r["terms"][0]["absorbed_by_initial_state"].as_f64().unwrap();
        assert!((0.0..0.999).contains(&absorbed), "{absorbed}");
        files.push(std::fs::read(&out).unwrap());
    }
    assert_eq!(files[0], files[1], "1 and 2 threads gave different files");
    for svg in [
        "residuals_before.svg",
        "residuals_after.svg",
        "learned_acceleration.svg",
        "period_scan.svg",
        "onset_scan.svg",
    ] {
        assert!(v.join("plots").join(svg).exists(), "{svg}");
    }
    // The scans name every block they scanned.
    let periods = std::fs::read_to_string(v.join("plots/period_scan.svg")).unwrap();
    assert!(periods.contains("lit * sun") && periods.contains("trial period (hours)"));
    // Residual plots carry the noise band and where the held-out part begins.
    let before = std::fs::read_to_string(v.join("plots/residuals_before.svg")).unwrap();
    assert!(before.contains("stated noise") && before.contains("held-out part begins"));
    // The learned file in forces.yaml `plugins:` is used by propagate.
    let learned = v.join("learned-1.yaml");
    let forces = std::fs::read_to_string(v.join("forces.yaml")).unwrap();
    let f2 = v.join("forces-learned.yaml");
    std::fs::write(&f2, format!("{forces}plugins: [learned-1.yaml]\n")).unwrap();
    let file: serde_yaml::Value =
        serde_yaml::from_str(&std::fs::read_to_string(&learned).unwrap()).unwrap();
    let end = &file["state_at_end"];
    let state = v.join("end.yaml");
    std::fs::write(
        &state,
        format!(
            "epoch_utc: {}\nr_km: {}\nv_km_s: {}\n",
            serde_json::to_string(&end["epoch_utc"]).unwrap(),
            serde_json::to_string(&end["r_km"]).unwrap(),
            serde_json::to_string(&end["v_km_s"]).unwrap()
        ),
    )
    .unwrap();
    let (code, stdout, stderr) = arcwise(&[
        "propagate",
        "--forces",
        s(&f2),
        "--state",
        s(&state),
        "--to",
        "2031-05-05T06:00:00Z",
        "--step",
        "600",
        "--out",
        s(&v.join("p.csv")),
    ]);
    assert_eq!(code, 0, "{stderr}");
    assert!(stdout.contains("learned:"), "{stdout}");
    // Inside the validity window (the arc plus one arc span): no warning.
    assert!(!stderr.contains("validity window"), "{stderr}");
    // Three days past the window with `outside: warn`: one warning on stderr, and the
    // report records it.
    let prep = v.join("p.json");
    let (code, _, stderr) = arcwise(&[
        "propagate",
        "--forces",
        s(&f2),
        "--state",
        s(&state),
        "--to",
        "2031-05-09T00:00:00Z",
        "--step",
        "3600",
        "--out",
        s(&v.join("p-late.csv")),
        "--report",
        s(&prep),
    ]);
    assert_eq!(code, 0, "{stderr}");
    assert_eq!(
        stderr.matches("outside its validity window").count(),
        1,
        "{stderr}"
    );
    let r: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&prep).unwrap()).unwrap();
    let warnings = r["warnings"].as_array().unwrap();
    assert!(
        warnings.len() == 1 && warnings[0].as_str().unwrap().contains("learned:train"),
        "{warnings:?}"
    );
    // check: passes with the learned force (exit 0), fails a tight threshold (exit 1),
    // refuses bad input (exit 2).
    let rep = v.join("check.json");
    let (code, stdout, stderr) = arcwise(&[
        "check",
        "--learned",
        s(&learned),
        "--forces",
        s(&v.join("forces.yaml")),
        "--arc",
        s(&v.join("next.csv")),
        "--report",
        s(&rep),
    ]);
    assert_eq!(code, 0, "{stdout}{stderr}");
    let r: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&rep).unwrap()).unwrap();
    assert_eq!(r["passed"], true);
    // The baseline is the known forces' own fit of the training arc: on this arc it
    // predicts the next 12 h about 1 km off (the learned end state gave it ~30 m).
    let (learned_rms, base_rms) = (
        r["rms_km_learned"].as_f64().unwrap(),
        r["rms_km_base"].as_f64().unwrap(),
    );
    assert!(base_rms > 0.3, "baseline {base_rms} km");
    assert!(learned_rms * 10.0 < base_rms, "{learned_rms} vs {base_rms}");
    let (code, _, _) = arcwise(&[
        "check",
        "--learned",
        s(&learned),
        "--forces",
        s(&v.join("forces.yaml")),
        "--arc",
        s(&v.join("next.csv")),
        "--max-rms-km",
        "0.0001",
    ]);
    assert_eq!(code, 1);
    let (code, _, stderr) = arcwise(&[
        "check",
        "--learned",
        s(&learned),
        "--forces",
        s(&v.join("forces.yaml")),
        "--arc",
        s(&v.join("train.csv")),
    ]);
    assert_eq!(code, 2, "{stderr}");
    assert!(
        stderr.contains("give the arc that follows the training arc"),
        "{stderr}"
    );
    // A tampered learned file is refused, naming the checksum.
    let text = std::fs::read_to_string(&learned).unwrap();
    let bad = text.replacen("coefficient: ", "coefficient: 1", 1);
    std::fs::write(&learned, bad).unwrap();
    let (code, _, stderr) = arcwise(&[
        "propagate",
        "--forces",
        s(&f2),
        "--state",
        s(&state),
        "--to",
        "2031-05-05T06:00:00Z",
        "--step",
        "600",
        "--out",
        s(&v.join("q.csv")),
    ]);
    assert_eq!(code, 2);
    assert!(stderr.contains("checksum"), "{stderr}");
    assert!(!v.join("q.csv").exists());
}

#[test]
fn quiet_arc_learns_nothing_and_exits_0() {
    let dir = tempfile::tempdir().unwrap();
    let q = simulate(dir.path(), "quiet");
    let out = q.join("learned.yaml");
    let (code, stdout, stderr) = arcwise(&[
        "learn",
        "--arc",
        s(&q.join("train.csv")),
        "--forces",
        s(&q.join("forces.yaml")),
        "--out",
        s(&out),
    ]);
    assert_eq!(code, 0, "{stderr}");
    assert!(
        stdout.contains("no_anomaly") && stdout.contains("no terms"),
        "{stdout}"
    );
    let f = learned_forces::learned_file::LearnedFile::load(&out).unwrap();
    assert!(f.terms.is_empty());
    let (code, _, stderr) = arcwise(&[
        "learn",
        "--arc",
        s(&q.join("train.csv")),
        "--forces",
        s(&q.join("forces.yaml")),
        "--out",
        s(&out),
        "--outside",
        "sometimes",
    ]);
    assert_eq!(code, 2);
    assert!(stderr.contains("--outside"));
}

#[test]
fn a_learned_file_records_the_known_models_estimated_parameters_and_check_says_so() {
    // Learned with the drag scale estimated alongside, the terms complement drag at that
    // scale: the file records it (with σ) and a note says to use it; `check`, which
    // predicts with forces.yaml as given, warns on screen and in its report. Without
    // estimates nothing is recorded (older files' content unchanged).
    let dir = tempfile::tempdir().unwrap();
    let v = simulate(dir.path(), "venting");
    let (train, forces) = (v.join("train.csv"), v.join("forces.yaml"));
    let learn = |out: &Path, extra: &[&str]| {
        let mut args = vec![
            "learn",
            "--arc",
            s(&train),
            "--forces",
            s(&forces),
            "--out",
            s(out),
            "--generations",
            "4",
        ];
        args.extend_from_slice(extra);
        let (code, stdout, stderr) = arcwise(&args);
        assert_eq!(code, 0, "{stdout}{stderr}");
        std::fs::read_to_string(out).unwrap()
    };
    let with = v.join("with-scale.yaml");
    let text = learn(&with, &["--estimate", "drag_scale"]);
    let f = learned_forces::learned_file::LearnedFile::parse(&text).unwrap();
    let p = &f.known_parameters;
    assert_eq!(p.len(), 1, "{text}");
    assert_eq!(p[0].name, "drag_scale");
    assert!(
        p[0].value > 0.5 && p[0].value < 2.0 && p[0].sigma > 0.0,
        "{:?}",
        p[0]
    );
    assert!(
        f.notes.iter().any(|n| n.contains("drag_scale =")),
        "{:?}",
        f.notes
    );
    let rep = v.join("check.json");
    let (_, stdout, stderr) = arcwise(&[
        "check",
        "--learned",
        s(&with),
        "--forces",
        s(&v.join("forces.yaml")),
        "--arc",
        s(&v.join("next.csv")),
        "--report",
        s(&rep),
    ]);
    assert!(
        stderr.contains("fitted with drag_scale"),
        "{stdout}{stderr}"
    );
    let r: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&rep).unwrap()).unwrap();
    assert!(r["warnings"].to_string().contains("drag_scale"), "{r}");
    let without = learn(&v.join("plain.yaml"), &[]);
    assert!(!without.contains("known_parameters"), "{without}");
}
