//! `simulate --sites` and `fit` on tracking arcs end to end: a radar day written as a
//! CCSDS TDM and in the measurement CSV layout, fitted from either to the same orbit,
//! with residuals reported per site and kind; what is missing is refused plainly.

mod common;
use common::{arcwise, s};
use std::path::Path;

fn root() -> &'static Path {
    Path::new(env!("CARGO_MANIFEST_DIR"))
}

/// `arcwise simulate` of a shipped scenario with shipped sites, into `out`.
fn simulate_with(scenario: &str, sites: &str, out: &Path, format: &str) {
    let (code, stdout, err) = arcwise(&[
        "simulate",
        s(&root().join("examples/scenarios").join(scenario)),
        "--sites",
        s(&root().join("examples/sites").join(sites)),
        "--format",
        format,
        "--out",
        s(out),
    ]);
    assert_eq!(code, 0, "{err}");
    assert!(stdout.contains("measured by the sites"), "{stdout}");
}

fn simulate(out: &Path, format: &str) {
    simulate_with("radar_quiet.yaml", "radar_campaign.yaml", out, format);
}

/// A state file (in `dir`) holding the simulated truth's first state (the scenario epoch,
/// before the first measurement), from the simulation in `out`.
fn truth_state_file(out: &Path, dir: &Path) -> std::path::PathBuf {
    let oem = std::fs::read_to_string(out.join("truth.oem")).unwrap();
    let f: Vec<&str> = oem
        .lines()
        .find(|l| l.starts_with("2026-"))
        .unwrap()
        .split_whitespace()
        .collect();
    let state = dir.join("state.yaml");
    std::fs::write(
        &state,
        format!(
            "epoch_utc: \"{}Z\"\nr_km: [{}, {}, {}]\nv_km_s: [{}, {}, {}]\n",
            f[0], f[1], f[2], f[3], f[4], f[5], f[6]
        ),
    )
    .unwrap();
    state
}

fn fit(arc: &Path, forces: &Path, report: &Path) -> serde_json::Value {
    let (code, stdout, err) = arcwise(&[
        "fit",
        "--arc",
        s(arc),
        "--forces",
        s(forces),
        "--sites",
        s(&root().join("examples/sites/radar_campaign.yaml")),
        "--report",
        s(report),
    ]);
    assert_eq!(code, 0, "{err}");
    assert!(stdout.contains("NORTHCAPE-RADAR range_km"), "{stdout}");
    serde_json::from_str(&std::fs::read_to_string(report).unwrap()).unwrap()
}

#[test]
fn a_radar_day_as_tdm_and_as_csv_fits_to_the_same_quiet_orbit() {
    let d = tempfile::tempdir().unwrap();
    let (tdm, csv) = (d.path().join("tdm"), d.path().join("csv"));
    simulate(&tdm, "tdm");
    simulate(&csv, "csv");
    let sim: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(tdm.join("simulate.json")).unwrap()).unwrap();
    let n = &sim["measurements"];
    assert!(n["range_km"].as_u64().unwrap() > 300, "{n}");
    assert_eq!(n["range_km"], n["azimuth_deg"]);
    let a = fit(
        &tdm.join("train.tdm"),
        &tdm.join("forces.yaml"),
        &d.path().join("a.json"),
    );
    let b = fit(
        &csv.join("train.csv"),
        &csv.join("forces.yaml"),
        &d.path().join("b.json"),
    );
    assert_eq!(a["verdict"], "no_anomaly", "{}", a["verdict_reasons"]);
    // Both files carry the values to the last digit: the same fit.
    for k in 0..3 {
        let (x, y) = (
            a["state_first"]["r_km"][k].as_f64().unwrap(),
            b["state_first"]["r_km"][k].as_f64().unwrap(),
        );
        assert!((x - y).abs() < 1e-9, "{x} vs {y}");
    }
    // Nine series (three radars × range, azimuth, elevation), each at about 1σ.
    let rows = a["tracking"]["residuals"].as_array().unwrap();
    assert_eq!(rows.len(), 9);
    for r in rows {
        let z = r["rms_sigma"].as_f64().unwrap();
        assert!((0.7..1.3).contains(&z), "{r}");
    }
    assert!(a.get("rms_km").is_none());
}

#[test]
fn measurements_without_sites_are_refused_plainly() {
    let d = tempfile::tempdir().unwrap();
    let out = d.path().join("sim");
    simulate(&out, "tdm");
    let arc = out.join("train.tdm");
    let forces = out.join("forces.yaml");
    let (code, _, err) = arcwise(&["fit", "--arc", s(&arc), "--forces", s(&forces)]);
    assert_eq!(code, 2);
    assert!(
        err.contains("train.tdm") && err.contains("--sites"),
        "{err}"
    );
}

#[test]
fn venting_seen_by_radar_is_learned_and_the_next_passes_check() {
    // The must-show: the venting object observed by radar only; `learn` finds the
    // decaying along-track push with its time constant within 10 % of the scenario's
    // (6 h), and `check` on the next 12 h of radar passes passes.
    let d = tempfile::tempdir().unwrap();
    let out = d.path().join("sim");
    let sites = root().join("examples/sites/radar_campaign.yaml");
    simulate_with("radar_venting.yaml", "radar_campaign.yaml", &out, "tdm");
    let (learned, report) = (d.path().join("l.yaml"), d.path().join("l.json"));
    let (code, stdout, err) = arcwise(&[
        "learn",
        "--arc",
        s(&out.join("train.tdm")),
        "--forces",
        s(&out.join("forces.yaml")),
        "--sites",
        s(&sites),
        "--out",
        s(&learned),
        "--report",
        s(&report),
        "--plot",
        s(&d.path().join("plots")),
    ]);
    assert_eq!(code, 0, "{stdout}\n{err}");
    let j: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&report).unwrap()).unwrap();
    assert_eq!(j["outcome"], "explained");
    let tau = j["constants"][0]["value"].as_f64().unwrap().abs();
    assert!((tau / 21600.0 - 1.0).abs() < 0.10, "τ = {tau} s");
    assert_eq!(j["constants"][0]["unit"], "s");
    // In σ units, not km: measurements give no positions.
    assert!(j.get("rms_km_before").is_none() && j["rms_sigma_after"].as_f64().unwrap() < 1.2);
    // The residual plots are per kind of measurement (normalized), not RTN.
    let before = std::fs::read_to_string(d.path().join("plots/residuals_before.svg")).unwrap();
    assert!(
        before.contains("range_km residual / σ"),
        "residuals_before.svg"
    );
    let check = d.path().join("c.json");
    let (code, stdout, err) = arcwise(&[
        "check",
        "--learned",
        s(&learned),
        "--forces",
        s(&out.join("forces.yaml")),
        "--arc",
        s(&out.join("next.tdm")),
        "--sites",
        s(&sites),
        "--report",
        s(&check),
    ]);
    assert_eq!(code, 0, "{stdout}\n{err}");
    let c: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&check).unwrap()).unwrap();
    assert_eq!(c["passed"], true);
    let (learned_rms, known_rms) = (
        c["rms_sigma_learned"].as_f64().unwrap(),
        c["rms_sigma_base"].as_f64().unwrap(),
    );
    assert!(
        learned_rms < 1.5 && known_rms > 5.0,
        "{learned_rms} vs {known_rms}"
    );
    // The gate must also fail: the known forces alone on these passes are far from noise,
    // so a learned file that adds nothing cannot pass (checked in next_arc's unit tests
    // in σ units); here the cap in km is refused for a tracking arc.
    let (code, _, err) = arcwise(&[
        "check",
        "--learned",
        s(&learned),
        "--forces",
        s(&out.join("forces.yaml")),
        "--arc",
        s(&out.join("next.tdm")),
        "--sites",
        s(&sites),
        "--max-rms-km",
        "0.1",
    ]);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("σ units"), "{err}");
}

#[test]
fn angles_only_fits_from_gauss_and_from_a_given_state_agree() {
    // Two nights of a telescope pair: the fit without a guess (Gauss's method) and the
    // fit from `--initial` (the truth's state at the scenario epoch, 2.7 h before the
    // first sight, carried there by the known forces) reach the same orbit.
    let d = tempfile::tempdir().unwrap();
    let out = d.path().join("sim");
    let sites = root().join("examples/sites/optical_pair.yaml");
    simulate_with("optical_quiet.yaml", "optical_pair.yaml", &out, "tdm");
    let state = truth_state_file(&out, d.path());
    let (arc, forces) = (out.join("train.tdm"), out.join("forces.yaml"));
    let run = |extra: &[&str], report: &Path| {
        let mut a = vec![
            "fit",
            "--arc",
            s(&arc),
            "--forces",
            s(&forces),
            "--sites",
            s(&sites),
            "--report",
            s(report),
        ];
        a.extend_from_slice(extra);
        let (code, stdout, err) = arcwise(&a);
        assert_eq!(code, 0, "{stdout}\n{err}");
        let j: serde_json::Value =
            serde_json::from_str(&std::fs::read_to_string(report).unwrap()).unwrap();
        assert_eq!(j["verdict"], "no_anomaly", "{}", j["verdict_reasons"]);
        j
    };
    let gauss = run(&[], &d.path().join("g.json"));
    let given = run(&["--initial", s(&state)], &d.path().join("i.json"));
    for k in 0..3 {
        let (a, b) = (
            gauss["state_first"]["r_km"][k].as_f64().unwrap(),
            given["state_first"]["r_km"][k].as_f64().unwrap(),
        );
        assert!((a - b).abs() < 1e-3, "{a} vs {b} km");
    }
}

#[test]
fn rank_and_learn_take_a_starting_state_and_refuse_a_missing_one() {
    let d = tempfile::tempdir().unwrap();
    let out = d.path().join("sim");
    simulate(&out, "tdm");
    let state = truth_state_file(&out, d.path());
    let hyp = d.path().join("hyp.yaml");
    std::fs::write(
        &hyp,
        "hypotheses:\n  - no_maneuver\n  - continuous_along_track\n",
    )
    .unwrap();
    let sites = root().join("examples/sites/radar_campaign.yaml");
    let (arc, forces) = (out.join("train.tdm"), out.join("forces.yaml"));
    let (code, stdout, err) = arcwise(&[
        "rank",
        "--arc",
        s(&arc),
        "--forces",
        s(&forces),
        "--sites",
        s(&sites),
        "--hypotheses",
        s(&hyp),
        "--initial",
        s(&state),
    ]);
    assert_eq!(code, 0, "{stdout}\n{err}");
    assert!(
        stdout.contains("the best hypothesis (no_maneuver) explains the arc"),
        "{stdout}"
    );
    let missing = d.path().join("no-state.yaml");
    let (code, _, err) = arcwise(&[
        "learn",
        "--arc",
        s(&arc),
        "--forces",
        s(&forces),
        "--sites",
        s(&sites),
        "--initial",
        s(&missing),
        "--out",
        s(&d.path().join("l.yaml")),
    ]);
    assert_eq!(code, 2);
    assert!(err.contains("no-state.yaml"), "{err}");
    // The starting state is an input: no report may overwrite it (a first version of
    // `fit --initial` left it out of the inputs checked).
    let learned = d.path().join("l2.yaml");
    for command in ["fit", "learn", "rank"] {
        let mut a = vec![
            command,
            "--arc",
            s(&arc),
            "--forces",
            s(&forces),
            "--sites",
            s(&sites),
        ];
        a.extend_from_slice(&["--initial", s(&state), "--report", s(&state)]);
        if command == "learn" {
            a.extend_from_slice(&["--out", s(&learned)]);
        }
        if command == "rank" {
            a.extend_from_slice(&["--hypotheses", s(&hyp)]);
        }
        let (code, _, err) = arcwise(&a);
        assert_eq!(code, 2, "{command}: {err}");
        assert!(
            err.contains("refusing to overwrite an input"),
            "{command}: {err}"
        );
    }
    assert!(std::fs::read_to_string(&state)
        .unwrap()
        .starts_with("epoch_utc"));
}
