//! Helpers shared by the integration tests.
#![allow(dead_code)] // each test crate uses a different part

pub mod parsers;

use std::path::{Path, PathBuf};
use std::process::Command;

/// Runs the `arcwise` binary; (exit code, stdout, stderr).
pub fn arcwise(args: &[&str]) -> (i32, String, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_arcwise"))
        .args(args)
        .output()
        .expect("the arcwise binary runs");
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

/// A path as the `&str` an argument list wants (test paths are UTF-8).
pub fn s(p: &Path) -> &str {
    p.to_str().expect("test paths are UTF-8")
}

/// Writes `text` to `dir/name` and returns the path.
pub fn write(dir: &Path, name: &str, text: &str) -> PathBuf {
    let p = dir.join(name);
    std::fs::write(&p, text).expect("the test folder is writable");
    p
}

/// Compiles C source (after the standard includes) into `dir/libNAME.so` with `cc`.
pub fn c_plugin(dir: &Path, name: &str, body: &str) -> PathBuf {
    let src = dir.join(format!("{name}.c"));
    std::fs::write(
        &src,
        format!("#include <stdint.h>\n#include <stddef.h>\n#include <math.h>\n{body}"),
    )
    .expect("the test folder is writable");
    let out = dir.join(format!("lib{name}.so"));
    let status = Command::new("cc")
        .args(["-shared", "-fPIC", "-O1", "-o"])
        .arg(&out)
        .arg(&src)
        .arg("-lm")
        .status()
        .expect("a C compiler (cc) is needed for the plugin tests");
    assert!(status.success());
    out
}

/// Metadata of the C test plugins (reference epoch 2031-05-04T12:00:00Z).
pub const C_PLUGIN_META: &str = r#"{\"abi_version\":1,\"name\":\"c_test\",\"frame\":\"ECI\",\"reference_epoch_utc\":\"2031-05-04T12:00:00Z\",\"source_checksum\":\"sha256:aaaa\",\"validity\":null,\"units\":{\"time\":\"s\",\"state\":\"km, km/s\",\"acceleration\":\"km/s^2\"}}"#;

/// A complete C force plugin of ABI `abi` whose acceleration function body is `accel`
/// (arguments `t`, `s[6]`, `out[3]`).
pub fn c_force_source(abi: u32, accel: &str) -> String {
    format!(
        "uint32_t arcwise_plugin_abi_version(void) {{ return {abi}; }}\n\
         const char *arcwise_plugin_metadata(void) {{ return \"{C_PLUGIN_META}\"; }}\n\
         int32_t arcwise_plugin_acceleration(double t, const double s[6], double out[3]) {{ {accel} }}\n"
    )
}

/// Runs `arcwise propagate --forces F --state S --to TO --step STEP --out OUT`.
pub fn propagate(
    forces: &Path,
    state: &Path,
    to: &str,
    step: &str,
    out: &Path,
) -> (i32, String, String) {
    arcwise(&[
        "propagate",
        "--forces",
        s(forces),
        "--state",
        s(state),
        "--to",
        to,
        "--step",
        step,
        "--out",
        s(out),
    ])
}
