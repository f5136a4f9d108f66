//! Files and builds that cannot be turned against the user: outputs never overwrite
//! inputs, sizes are checked before allocating, atomic writes cannot be redirected,
//! `build` runs nothing another user planted, names never reach generated code raw, and
//! plugins others can change are refused.

mod common;
use common::{arcwise, s, write};
use std::path::Path;
use std::process::Command;

fn quiet_inputs(d: &Path) -> (std::path::PathBuf, std::path::PathBuf) {
    let forces = write(d, "forces.yaml", "gravity: { zonal_degree: 2 }\n");
    let state = write(
        d,
        "state.yaml",
        "epoch_utc: \"2031-05-04T00:00:00Z\"\nelements: { sma_km: 6878.0, ecc: 0.001, inc_deg: 51.6, raan_deg: 0, argp_deg: 0, true_anomaly_deg: 0 }\n",
    );
    (forces, state)
}

#[test]
fn an_output_that_is_an_input_or_another_output_is_refused_and_nothing_is_touched() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let (forces, state) = quiet_inputs(d);
    let arc = d.join("a.csv");
    let (code, _, err) = common::propagate(&forces, &state, "2031-05-04T03:00:00Z", "60", &arc);
    assert_eq!(code, 0, "{err}");
    let before = |p: &Path| std::fs::read(p).unwrap();
    let (arc0, forces0, state0) = (before(&arc), before(&forces), before(&state));
    let cases: Vec<Vec<String>> = vec![
        // learn --arc a.csv --out a.csv
        vec![
            "learn",
            "--arc",
            s(&arc),
            "--forces",
            s(&forces),
            "--out",
            s(&arc),
        ],
        // fit --report forces.yaml
        vec![
            "fit",
            "--arc",
            s(&arc),
            "--forces",
            s(&forces),
            "--report",
            s(&forces),
        ],
        // propagate --out p.csv --report p.csv
        vec![
            "propagate",
            "--forces",
            s(&forces),
            "--state",
            s(&state),
            "--to",
            "2031-05-04T01:00:00Z",
            "--step",
            "60",
            "--out",
            &format!("{}/p.csv", d.display()),
            "--report",
            &format!("{}/./p.csv", d.display()),
        ],
        // propagate --out state.yaml (another spelling of an input)
        vec![
            "propagate",
            "--forces",
            s(&forces),
            "--state",
            s(&state),
            "--to",
            "2031-05-04T01:00:00Z",
            "--step",
            "60",
            "--out",
            &format!("{}/sub/../state.yaml", d.display()),
        ],
        // build l.yaml --out l.yaml
        vec!["build", s(&forces), "--out", s(&forces)],
    ]
    .into_iter()
    .map(|v| v.into_iter().map(String::from).collect())
    .collect();
    std::fs::create_dir(d.join("sub")).unwrap();
    for c in &cases {
        let a: Vec<&str> = c.iter().map(String::as_str).collect();
        let (code, _, err) = arcwise(&a);
        assert_eq!(code, 2, "{c:?}: {err}");
        assert!(
            err.contains("refusing to overwrite an input") || err.contains("are the same file"),
            "{c:?}: {err}"
        );
    }
    assert_eq!(before(&arc), arc0);
    assert_eq!(before(&forces), forces0);
    assert_eq!(before(&state), state0);
    assert!(!d.join("p.csv").exists());
}

#[test]
fn sizes_and_epoch_resolution_are_checked_before_anything_is_allocated() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let (forces, state) = quiet_inputs(d);
    for (step, needle) in [
        ("1e-9", "at least"),
        ("1e-7", "at least"),
        ("0.001", "more than"),
    ] {
        let out = d.join(format!("p{step}.csv"));
        let (code, _, err) = arcwise(&[
            "propagate",
            "--forces",
            s(&forces),
            "--state",
            s(&state),
            "--to",
            "2031-05-05T00:00:00Z",
            "--step",
            step,
            "--out",
            s(&out),
        ]);
        assert_eq!(code, 2, "--step {step}: {err}");
        assert!(err.contains("--step") && err.contains(needle), "{err}");
        assert!(!out.exists());
    }
}

#[test]
fn an_atomic_write_replaces_a_planted_link_instead_of_following_it() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let victim = write(d, "victim.txt", "precious");
    let out = d.join("out.json");
    #[cfg(unix)]
    std::os::unix::fs::symlink(&victim, &out).unwrap();
    propagator::ephemeris::write_atomically(&out, b"{}").unwrap();
    assert_eq!(std::fs::read_to_string(&victim).unwrap(), "precious");
    assert_eq!(std::fs::read_to_string(&out).unwrap(), "{}");
    // No temporary file is left behind, and the result is an ordinary readable file.
    let names: Vec<String> = std::fs::read_dir(d)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .collect();
    assert!(names.iter().all(|n| !n.contains(".tmp")), "{names:?}");
    assert!(propagator::cleanup::pending().is_empty());
    // A write that fails (the target is a folder) leaves nothing behind either.
    std::fs::create_dir(d.join("taken")).unwrap();
    assert!(propagator::ephemeris::write_atomically(&d.join("taken"), b"x").is_err());
    let count = std::fs::read_dir(d).unwrap().count();
    assert_eq!(count, names.len() + 1);
}

/// A learned file to build (the shipped example).
fn learned(d: &Path) -> std::path::PathBuf {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/learned_example.yaml");
    let p = d.join("learned.yaml");
    std::fs::copy(src, &p).unwrap();
    p
}

#[test]
fn build_runs_nothing_planted_in_the_temporary_directory_or_the_source_folder() {
    if Command::new("cargo").arg("--version").output().is_err() {
        eprintln!("skipped: no cargo");
        return;
    }
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    // A hostile temporary directory: a cargo configuration with a rustc wrapper that
    // leaves a marker, and build folders at the names the old code used.
    let tmp = d.join("shared-tmp");
    std::fs::create_dir_all(tmp.join(".cargo")).unwrap();
    let marker = d.join("PWNED");
    let wrapper = write(
        d,
        "wrapper.sh",
        &format!("#!/bin/sh\ntouch {}\nexec \"$@\"\n", marker.display()),
    );
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        std::fs::set_permissions(&wrapper, std::fs::Permissions::from_mode(0o755)).unwrap();
    }
    write(
        &tmp.join(".cargo"),
        "config.toml",
        &format!("[build]\nrustc-wrapper = \"{}\"\n", wrapper.display()),
    );
    let l = learned(d);
    let out = d.join("libx.so");
    let run = |extra: &[&str]| {
        let mut args = vec!["build", s(&l), "--out", s(&out)];
        args.extend_from_slice(extra);
        let o = Command::new(env!("CARGO_BIN_EXE_arcwise"))
            .args(&args)
            .env("TMPDIR", &tmp)
            .current_dir(d)
            .output()
            .unwrap();
        (
            o.status.code().unwrap_or(-1),
            String::from_utf8_lossy(&o.stderr).into_owned(),
        )
    };
    let (code, err) = run(&[]);
    assert_eq!(code, 0, "{err}");
    assert!(out.exists());
    assert!(
        !marker.exists(),
        "cargo ran a wrapper planted in the temporary directory"
    );
    // Nothing is left in the temporary directory.
    let left: Vec<_> = std::fs::read_dir(&tmp)
        .unwrap()
        .map(|e| e.unwrap().file_name())
        .filter(|n| n != ".cargo")
        .collect();
    assert!(left.is_empty(), "{left:?}");
    // A source folder that already exists (planted with a build script) is refused, and
    // its build script never runs.
    let src = d.join("libx.so.src");
    std::fs::create_dir(&src).unwrap();
    write(
        &src,
        "build.rs",
        &format!(
            "fn main() {{ std::fs::write(\"{}\", \"\").unwrap(); }}\n",
            marker.display()
        ),
    );
    let (code, err) = run(&["--keep-source"]);
    assert_eq!(code, 2, "{err}");
    assert!(
        err.contains("already exists") && err.contains("never reused"),
        "{err}"
    );
    assert!(!marker.exists());
}

#[test]
fn names_reach_generated_code_only_escaped() {
    let l = learned_forces::learned_file::LearnedFile::load(
        &Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/learned_example.yaml"),
    )
    .unwrap();
    // A control character in a name is refused outright.
    let e = learned_forces::codegen::generate(&l, "x\n}\nfn evil() {").unwrap_err();
    assert!(e.to_string().contains("control character"), "{e}");
    // A name with quotes and braces is legal, and stays inside a comment or a literal.
    let src = learned_forces::codegen::generate(&l, "a\"b}{ // */").unwrap();
    for line in src.lines().filter(|l| l.contains("a\\\"b")) {
        let t = line.trim_start();
        assert!(t.starts_with("//") || t.starts_with("const META"), "{line}");
    }
}

#[test]
fn a_plugin_others_can_change_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let shared = d.join("shared");
    std::fs::create_dir(&shared).unwrap();
    let so = common::c_plugin(
        &shared,
        "ok",
        &common::c_force_source(1, "out[0] = 0; out[1] = 0; out[2] = 0; return 0;"),
    );
    let reference = propagator::Epoch::parse_utc("2031-05-04T12:00:00Z").unwrap();
    assert!(propagator::plugin::loader::PluginForce::load(&so, &reference, None).is_ok());
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        std::fs::set_permissions(&shared, std::fs::Permissions::from_mode(0o777)).unwrap();
        let e = propagator::plugin::loader::PluginForce::load(&so, &reference, None).unwrap_err();
        assert!(
            e.to_string().contains("folder") && e.to_string().contains("writable"),
            "{e}"
        );
        std::fs::set_permissions(&shared, std::fs::Permissions::from_mode(0o755)).unwrap();
        // Owned by another (non-root) user: only root can arrange that here.
        let me = Command::new("id").arg("-u").output().unwrap();
        if String::from_utf8_lossy(&me.stdout).trim() == "0" {
            let st = Command::new("chown").arg("4242").arg(&so).status().unwrap();
            assert!(st.success());
            let e =
                propagator::plugin::loader::PluginForce::load(&so, &reference, None).unwrap_err();
            assert!(e.to_string().contains("another user"), "{e}");
        }
    }
}

#[test]
fn sigterm_during_a_build_leaves_no_build_folder() {
    if Command::new("cargo").arg("--version").output().is_err() {
        return;
    }
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let tmp = d.join("tmp");
    std::fs::create_dir(&tmp).unwrap();
    let l = learned(d);
    let mut child = Command::new(env!("CARGO_BIN_EXE_arcwise"))
        .args(["build", s(&l), "--out", s(&d.join("libx.so"))])
        .env("TMPDIR", &tmp)
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::null())
        .spawn()
        .unwrap();
    // Wait until the build folder exists, then stop the run.
    let t0 = std::time::Instant::now();
    while std::fs::read_dir(&tmp).unwrap().next().is_none() && t0.elapsed().as_secs() < 30 {
        std::thread::sleep(std::time::Duration::from_millis(20));
    }
    std::thread::sleep(std::time::Duration::from_millis(300));
    let _ = Command::new("kill")
        .arg("-TERM")
        .arg(child.id().to_string())
        .status();
    let status = child.wait().unwrap();
    if status.success() {
        eprintln!("the build finished before the signal; nothing to check");
        return;
    }
    assert_eq!(status.code(), Some(130), "{status:?}");
    let left: Vec<_> = std::fs::read_dir(&tmp).unwrap().collect();
    assert!(left.is_empty(), "{left:?}");
}

#[test]
fn printing_into_a_closed_pipe_ends_quietly() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let (forces, state) = quiet_inputs(d);
    let mut child = Command::new(env!("CARGO_BIN_EXE_arcwise"))
        .args([
            "propagate",
            "--forces",
            s(&forces),
            "--state",
            s(&state),
            "--to",
            "2031-05-04T03:00:00Z",
            "--step",
            "60",
            "--out",
            s(&d.join("p.csv")),
        ])
        .stdout(std::process::Stdio::piped())
        .stderr(std::process::Stdio::piped())
        .spawn()
        .unwrap();
    // Close the reading end before arcwise prints anything (as `| head -0` would).
    drop(child.stdout.take());
    let out = child.wait_with_output().unwrap();
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(!err.contains("panicked"), "{err}");
    assert_ne!(out.status.code(), Some(101), "{err}");
}
