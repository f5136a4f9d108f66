//! The demo runs end to end (small search budget) and leaves its reports and plots.

use std::process::Command;

#[test]
fn demo_runs_end_to_end() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("demo");
    let o = Command::new(env!("CARGO_BIN_EXE_arcwise"))
        .args(["demo", "--out", out.to_str().unwrap(), "--generations", "3"])
        .output()
        .unwrap();
    let stdout = String::from_utf8_lossy(&o.stdout);
    assert!(
        o.status.success(),
        "{stdout}{}",
        String::from_utf8_lossy(&o.stderr)
    );
    for f in [
        "fit.json",
        "learn.json",
        "learned.yaml",
        "check.json",
        "screen.json",
        "fit_residuals.svg",
        "check.svg",
        "plots/learned_acceleration.svg",
    ] {
        assert!(out.join(f).exists(), "{f} missing");
    }
    assert!(
        stdout.contains("verdict: anomaly")
            && stdout.contains("check passed")
            && stdout.contains("TCA"),
        "{stdout}"
    );
    assert!(stdout.contains("screening aid"));
    let screen: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("screen.json")).unwrap()).unwrap();
    assert_eq!(screen["approaches"].as_array().unwrap().len(), 1);
}
