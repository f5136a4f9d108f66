//! Compiling a learned-force file into a native plugin: generated Rust source (the
//! formula as straight-line code over the self-contained [`runtime`], with exact
//! partials by dual numbers), built as a cdylib by the machine's cargo, offline and with
//! no dependencies.

#[path = "runtime.rs"]
pub mod runtime;

use crate::expr::compiled::{Instr, Program};
use crate::learned_file::{LearnedFile, OutsidePolicy};
use propagator::plugin::{Metadata, Units, Validity, ABI_VERSION};
use propagator::Epoch;
use std::fmt::Write as _;
use std::path::{Path, PathBuf};
use std::process::Command;

/// The runtime's source text, copied into every generated crate (see [`runtime_source`]).
pub const RUNTIME_SOURCE: &str = include_str!("runtime.rs");

/// The propagator's self-contained sources the runtime includes, by their `include!`
/// line: the generated crate has no path back to them, so their text replaces the line.
const INCLUDED: [(&str, &str); 3] = [
    (
        "include!(\"../expr/terminals.rs\");",
        include_str!("../expr/terminals.rs"),
    ),
    (
        "include!(\"../../../propagator/src/atmosphere/ussa1976_table.rs\");",
        include_str!("../../../propagator/src/atmosphere/ussa1976_table.rs"),
    ),
    (
        "include!(\"../../../propagator/src/atmosphere/geodetic.rs\");",
        include_str!("../../../propagator/src/atmosphere/geodetic.rs"),
    ),
];

/// The runtime as the generated crate holds it: its `include!`s replaced by the text.
pub fn runtime_source() -> String {
    INCLUDED
        .iter()
        .fold(RUNTIME_SOURCE.to_string(), |src, (line, text)| {
            src.replace(line, text)
        })
}

/// The `Env` literal of the generated code (numbers as exact literals).
fn env_literal(env: &crate::expr::Environment) -> String {
    use crate::expr::{Altitude, Density};
    let density = match env.density {
        Density::Table => "Density::Table".to_string(),
        Density::Ussa1976 => "Density::Ussa1976".to_string(),
        Density::Exponential {
            rho0_kg_m3,
            h0_km,
            scale_height_km,
        } => format!(
            "Density::Exponential {{ rho0_kg_m3: {}, h0_km: {}, scale_height_km: {} }}",
            lit(rho0_kg_m3),
            lit(h0_km),
            lit(scale_height_km)
        ),
        Density::Host => "Density::Host".to_string(),
    };
    let altitude = match env.altitude {
        Altitude::Spherical => "Altitude::Spherical".to_string(),
        Altitude::Geodetic { flattening } => {
            format!("Altitude::Geodetic {{ flattening: {} }}", lit(flattening))
        }
    };
    format!("Env {{ density: {density}, altitude: {altitude} }}")
}

/// Why a plugin could not be built.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("{0}")]
pub struct BuildError(pub String);

fn lit(v: f64) -> String {
    // Debug formatting of f64 is a valid, exactly round-tripping Rust literal.
    let s = format!("{v:?}");
    if s.contains('.') || s.contains('e') || s.contains("inf") || s.contains("NaN") {
        s
    } else {
        format!("{s}.0")
    }
}

/// The body of `fn eval<N: Num>(p: &P<N>) -> [N; 3]`: one `let` per instruction, each
/// the formula table's own code for it ([`crate::expr::ops`]).
pub fn straight_line(program: &Program) -> String {
    let types = program.types();
    let mut s = String::new();
    for (i, ins) in program.instrs.iter().enumerate() {
        let x = |k: usize| format!("x{k}");
        let e = match *ins {
            Instr::Term(t) => t.code().to_string(),
            Instr::Const(c) => format!("N::cst({})", lit(c)),
            Instr::Unary(op, a) => op.code(types[a], &x(a)),
            Instr::Binary(op, a, b) => op.code(types[a], types[b], &x(a), &x(b)),
        };
        let _ = writeln!(s, "    let x{i} = {e};");
    }
    let _ = writeln!(s, "    x{}", program.instrs.len() - 1);
    s
}

/// The plugin metadata for a learned file; `host_density` when its `rho` is the host's
/// NRLMSISE-00 density.
fn metadata(file: &LearnedFile, name: &str, host_density: bool) -> Metadata {
    Metadata {
        host_density: host_density.then(|| "nrlmsise00".to_string()),
        abi_version: ABI_VERSION,
        name: name.to_string(),
        frame: "ECI".into(),
        reference_epoch_utc: file.epoch_utc.clone(),
        source_checksum: Some(file.checksum.clone()),
        validity: Some(Validity {
            start_utc: file.validity.start_utc.clone(),
            end_utc: file.validity.end_utc.clone(),
            min_altitude_km: file.validity.min_altitude_km,
            max_altitude_km: file.validity.max_altitude_km,
            outside: match file.validity.outside {
                OutsidePolicy::Warn => "warn",
                OutsidePolicy::Zero => "zero",
                OutsidePolicy::Refuse => "refuse",
            }
            .into(),
            time_margin_s: file.validity.time_margin_s,
            altitude_margin_km: file.validity.altitude_margin_km,
            radius_km: Some(file.earth.radius_km),
        }),
        units: Units::default(),
    }
}

/// The generated crate's `lib.rs`.
pub fn generate(file: &LearnedFile, name: &str) -> Result<String, BuildError> {
    let (nodes, coefs, params) = file.compile().map_err(BuildError)?;
    let program = Program::compile(&nodes, &coefs, &params);
    let needs = program.needs();
    let env = file.environment().map_err(BuildError)?;
    // The host passes its density through the `_in` entry points (a plugin cannot
    // compute NRLMSISE-00 without the run's Earth orientation and space weather).
    let host = needs.density && env.density == crate::expr::Density::Host;
    let epoch = Epoch::parse_utc(&file.epoch_utc).map_err(|e| BuildError(e.to_string()))?;
    let start =
        Epoch::parse_utc(&file.validity.start_utc).map_err(|e| BuildError(e.to_string()))?;
    let end = Epoch::parse_utc(&file.validity.end_utc).map_err(|e| BuildError(e.to_string()))?;
    let window = (
        start.seconds_since(&epoch),
        end.seconds_since(&epoch) + file.validity.time_margin_s,
    );
    let alt = (
        file.validity.min_altitude_km - file.validity.altitude_margin_km,
        file.validity.max_altitude_km + file.validity.altitude_margin_km,
    );
    let policy = match file.validity.outside {
        OutsidePolicy::Warn => 0,
        OutsidePolicy::Zero => 1,
        OutsidePolicy::Refuse => 2,
    };
    let meta = serde_json::to_string(&metadata(file, name, host))
        .map_err(|e| BuildError(e.to_string()))?;
    // Everything from the file reaches the source only as a checked value, a printed
    // (parsed) formula or an escaped literal: a newline in a name or a formula's text
    // must never become a line of code.
    let formulas: Vec<String> = nodes
        .iter()
        .zip(&coefs)
        .map(|(n, c)| format!("//   {:?}", format!("{c:?} * ({n})")))
        .collect();
    propagator::text::check_name("name", name).map_err(BuildError)?;
    let mut src = String::new();
    let _ = write!(
        src,
        r#"//! arcwise force plugin generated from the learned-force file {name:?}
//! (checksum {checksum:?}). Do not edit: rebuild with `arcwise build`.
//!
//! The force, km/s² in ECI, t in s from {epoch}:
{formulas}
#![allow(clippy::all, unused_parens, unused_variables, unused_mut, non_upper_case_globals)]

#[path = "runtime.rs"]
mod runtime;
use runtime::*;
use std::ffi::c_char;
use std::panic::{{catch_unwind, AssertUnwindSafe}};

const META: &str = concat!({meta:?}, "\0");
const RE: f64 = {re};
const W: f64 = {w};
const T0C: f64 = {t0c};
const WINDOW: (f64, f64) = ({w0}, {w1});
const ALT: (f64, f64) = ({a0}, {a1});
// 0 warn (evaluate), 1 zero, 2 refuse.
const POLICY: u8 = {policy};
// The terminals the formula reads; the others are never computed.
const NEED: Need = Need {{ rtn: {need_rtn}, u: {need_u}, rho: {need_rho}, sun: {need_sun}, lit: {need_lit} }};
// What `rho` and `h` mean: the known model's atmosphere and altitude.
const ENV: Env = {env};
// Whether `rho` is the host's density, passed through the `_in` entry points.
const HOST: bool = {host};

/// What the host passes to the `_in` entry points (`arcwise_environment`).
#[repr(C)]
pub struct Environment {{
    /// kg/m³.
    pub density_kg_m3: f64,
    /// ∂ρ/∂r, kg/m³ per km, ECI.
    pub density_gradient: [f64; 3],
}}

/// The terminals, with the host's density when it passes one.
fn terminals_at<N: Num>(t: f64, r: [N; 3], v: [N; 3], env: Option<&Environment>) -> P<N> {{
    let mut p = terminals_for::<N>(t, r, v, RE, W, T0C, NEED, &ENV);
    if let (true, Some(e)) = (NEED.rho, env) {{
        p.rho = host_rho(e.density_kg_m3, e.density_gradient, p.r);
    }}
    p
}}

fn eval<N: Num>(p: &P<N>) -> [N; 3] {{
{body}}}

fn inside(t: f64, s: &[f64]) -> bool {{
    let h = (s[0] * s[0] + s[1] * s[1] + s[2] * s[2]).sqrt() - RE;
    t >= WINDOW.0 && t <= WINDOW.1 && h >= ALT.0 && h <= ALT.1
}}

/// 0: evaluate; 1: zero; 2: refuse.
fn gate(t: f64, s: &[f64]) -> u8 {{
    if inside(t, s) {{ 0 }} else {{ POLICY }}
}}

#[no_mangle]
pub extern "C" fn arcwise_plugin_abi_version() -> u32 {{
    {abi}
}}

#[no_mangle]
pub extern "C" fn arcwise_plugin_metadata() -> *const c_char {{
    META.as_ptr() as *const c_char
}}

/// True when every value is finite: x·0 is 0 for finite x and NaN otherwise. One
/// branch instead of one per value, which the call's cost can see.
#[inline(always)]
fn all_finite(v: &[f64]) -> bool {{
    v.iter().fold(0.0, |acc, x| acc + x * 0.0) == 0.0
}}

fn inputs_finite(t: f64, s: &[f64]) -> bool {{
    all_finite(s) && (t * 0.0) == 0.0
}}

fn accel(t: f64, s: &[f64], env: Option<&Environment>, out: &mut [f64]) -> i32 {{
    if HOST && env.is_none() {{
        return 5;
    }}
    // Inputs are checked off the fast path only: a non-finite t or position fails the
    // validity gate (NaN compares false), and any non-finite input the force depends on
    // makes the result non-finite, which is checked. What is left is an input the
    // formula does not read, which cannot change its (finite, correct) answer.
    match gate(t, s) {{
        0 => {{}}
        policy => {{
            if !inputs_finite(t, s) {{
                return 4;
            }}
            if policy == 2 {{
                return 1;
            }}
            out[0] = 0.0;
            out[1] = 0.0;
            out[2] = 0.0;
            return 0;
        }}
    }}
    let p = terminals_at::<f64>(t, [s[0], s[1], s[2]], [s[3], s[4], s[5]], env);
    let a = eval(&p);
    // Stored before the check (the ABI leaves `out` unspecified on error), so the
    // stores need not wait for the test.
    out[0] = a[0];
    out[1] = a[1];
    out[2] = a[2];
    if all_finite(&a) {{
        0
    }} else if inputs_finite(t, s) {{
        2
    }} else {{
        4
    }}
}}

/// # Safety
/// `state` points to 6 doubles, `out` to 3 writable doubles.
#[no_mangle]
pub unsafe extern "C" fn arcwise_plugin_acceleration(t: f64, state: *const f64, out: *mut f64) -> i32 {{
    if state.is_null() || out.is_null() {{
        return 4;
    }}
    let s = unsafe {{ std::slice::from_raw_parts(state, 6) }};
    let o = unsafe {{ std::slice::from_raw_parts_mut(out, 3) }};
    catch_unwind(AssertUnwindSafe(|| accel(t, s, None, o))).unwrap_or(3)
}}

/// The host's environment, when `env` points to a finite one.
///
/// # Safety
/// `env` is null or points to an `Environment`.
unsafe fn environment<'a>(env: *const Environment) -> Option<&'a Environment> {{
    let e = unsafe {{ env.as_ref() }}?;
    let g = e.density_gradient;
    all_finite(&[e.density_kg_m3, g[0], g[1], g[2]]).then_some(e)
}}

/// As `arcwise_plugin_acceleration`, with the host's environment.
///
/// # Safety
/// `state` points to 6 doubles, `env` to an `Environment`, `out` to 3 writable doubles.
#[no_mangle]
pub unsafe extern "C" fn arcwise_plugin_acceleration_in(t: f64, state: *const f64, env: *const Environment, out: *mut f64) -> i32 {{
    if state.is_null() || out.is_null() {{
        return 4;
    }}
    let Some(e) = (unsafe {{ environment(env) }}) else {{
        return 4;
    }};
    let s = unsafe {{ std::slice::from_raw_parts(state, 6) }};
    let o = unsafe {{ std::slice::from_raw_parts_mut(out, 3) }};
    catch_unwind(AssertUnwindSafe(|| accel(t, s, Some(e), o))).unwrap_or(3)
}}

/// # Safety
/// `t` points to `n` doubles, `states` to `6 n`, `out` to `3 n` writable doubles.
#[no_mangle]
pub unsafe extern "C" fn arcwise_plugin_acceleration_batch(n: usize, t: *const f64, states: *const f64, out: *mut f64) -> i32 {{
    if n > 0 && (t.is_null() || states.is_null() || out.is_null()) {{
        return 4;
    }}
    for k in 0..n {{
        let code = unsafe {{ arcwise_plugin_acceleration(*t.add(k), states.add(6 * k), out.add(3 * k)) }};
        if code != 0 {{
            return code;
        }}
    }}
    0
}}

/// ∂a/∂(r, v), 3×6 row-major, by dual numbers.
fn partials(t: f64, s: &[f64], env: Option<&Environment>, o: &mut [f64]) -> i32 {{
    if HOST && env.is_none() {{
        return 5;
    }}
    if !inputs_finite(t, s) {{
        return 4;
    }}
    match gate(t, s) {{
        1 => {{
            o.iter_mut().for_each(|x| *x = 0.0);
            return 0;
        }}
        2 => return 1,
        _ => {{}}
    }}
    let d = |k: usize| Dual::var(s[k], k);
    let p = terminals_at::<Dual>(t, [d(0), d(1), d(2)], [d(3), d(4), d(5)], env);
    let a = eval(&p);
    for i in 0..3 {{
        for j in 0..6 {{
            o[i * 6 + j] = a[i].d[j];
        }}
    }}
    if all_finite(o) {{ 0 }} else {{ 2 }}
}}

/// # Safety
/// `state` points to 6 doubles, `out` to 18 writable doubles.
#[no_mangle]
pub unsafe extern "C" fn arcwise_plugin_partials(t: f64, state: *const f64, out: *mut f64) -> i32 {{
    if state.is_null() || out.is_null() {{
        return 4;
    }}
    let s = unsafe {{ std::slice::from_raw_parts(state, 6) }};
    let o = unsafe {{ std::slice::from_raw_parts_mut(out, 18) }};
    catch_unwind(AssertUnwindSafe(|| partials(t, s, None, o))).unwrap_or(3)
}}

/// As `arcwise_plugin_partials`, with the host's environment.
///
/// # Safety
/// `state` points to 6 doubles, `env` to an `Environment`, `out` to 18 writable doubles.
#[no_mangle]
pub unsafe extern "C" fn arcwise_plugin_partials_in(t: f64, state: *const f64, env: *const Environment, out: *mut f64) -> i32 {{
    if state.is_null() || out.is_null() {{
        return 4;
    }}
    let Some(e) = (unsafe {{ environment(env) }}) else {{
        return 4;
    }};
    let s = unsafe {{ std::slice::from_raw_parts(state, 6) }};
    let o = unsafe {{ std::slice::from_raw_parts_mut(out, 18) }};
    catch_unwind(AssertUnwindSafe(|| partials(t, s, Some(e), o))).unwrap_or(3)
}}
"#,
        name = name,
        checksum = file.checksum,
        epoch = epoch.to_utc_string(),
        formulas = if formulas.is_empty() {
            "//   (no terms: zero)".to_string()
        } else {
            formulas.join("\n")
        },
        meta = meta,
        re = lit(file.earth.radius_km),
        w = lit(file.earth.rotation_rad_s),
        t0c = lit(epoch.tt_centuries_since_j2000()),
        w0 = lit(window.0),
        w1 = lit(window.1),
        a0 = lit(alt.0),
        a1 = lit(alt.1),
        policy = policy,
        body = straight_line(&program),
        abi = ABI_VERSION,
        need_sun = needs.sun,
        need_lit = needs.lit,
        need_rtn = needs.rtn,
        need_u = needs.arglat,
        need_rho = needs.density,
        env = env_literal(&env),
        host = host,
    );
    Ok(src)
}

/// The generated crate's `Cargo.toml`.
fn manifest(crate_name: &str) -> String {
    format!(
        r#"# Generated by arcwise build. A standalone crate: no dependencies.
[package]
name = "{crate_name}"
version = "0.1.0"
edition = "2021"
publish = false
# No build script, ever: the folder is private, and a build.rs is code cargo would run.
build = false
autobins = false
autoexamples = false
autotests = false
autobenches = false

[lib]
crate-type = ["cdylib"]
path = "lib.rs"

[profile.release]
opt-level = 3
panic = "unwind"

[workspace]
"#
    )
}

/// Creates `dir` exclusively, readable by the owner only (0700 on Unix): an existing
/// folder, or anything planted at its name, is refused, never reused.
fn create_private_dir(dir: &Path) -> Result<(), BuildError> {
    let mut b = std::fs::DirBuilder::new();
    #[cfg(unix)]
    {
        use std::os::unix::fs::DirBuilderExt;
        b.mode(0o700);
    }
    b.create(dir).map_err(|e| {
        BuildError(if e.kind() == std::io::ErrorKind::AlreadyExists {
            format!(
                "{} already exists: the build folder is never reused (remove it, or choose another path)",
                dir.display()
            )
        } else {
            format!("{}: cannot create the build folder: {e}", dir.display())
        })
    })
}

/// A working folder for cargo with no configuration above it that others could plant:
/// the root of the file system the build folder is on (`/` on Unix, the drive on
/// Windows) — never a shared folder such as the temporary directory.
fn neutral_dir(dir: &Path) -> PathBuf {
    std::fs::canonicalize(dir)
        .ok()
        .and_then(|d| d.ancestors().last().map(Path::to_path_buf))
        .unwrap_or_else(|| PathBuf::from("/"))
}

/// Writes the crate into `dir` — which must not exist: it is created here, private to
/// the user — and builds it; returns the path of the built library.
pub fn build(file: &LearnedFile, name: &str, dir: &Path) -> Result<PathBuf, BuildError> {
    let crate_name: String = name
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() {
                c.to_ascii_lowercase()
            } else {
                '_'
            }
        })
        .collect::<String>();
    let crate_name = format!("arcwise_learned_{}", crate_name.trim_matches('_'));
    create_private_dir(dir)?;
    let _registered = propagator::cleanup::Registered::new(dir);
    let write = |p: &str, text: &str| {
        std::fs::write(dir.join(p), text)
            .map_err(|e| BuildError(format!("{}: {e}", dir.join(p).display())))
    };
    write("Cargo.toml", &manifest(&crate_name))?;
    write("runtime.rs", &runtime_source())?;
    write("lib.rs", &generate(file, name)?)?;
    let cargo = std::env::var("CARGO").unwrap_or_else(|_| "cargo".into());
    // Cargo reads `.cargo/config.toml` from its working folder and every folder above
    // it: run it from the root, so a configuration planted in a shared folder such as
    // the temporary directory (a `rustc-wrapper`, say) is never read.
    let mut command = Command::new(&cargo);
    command
        .current_dir(neutral_dir(dir))
        .args([
            "build",
            "--release",
            "--offline",
            "--quiet",
            "--manifest-path",
        ])
        .arg(dir.join("Cargo.toml"))
        .arg("--target-dir")
        .arg(dir.join("target"))
        .env_remove("CARGO_TARGET_DIR")
        .stdout(std::process::Stdio::piped())
        .stderr(std::process::Stdio::piped());
    // Its own process group, so that a signal to arcwise can stop the whole build
    // (cargo and its rustc processes) before the folder is removed.
    #[cfg(unix)]
    std::os::unix::process::CommandExt::process_group(&mut command, 0);
    let child = command.spawn().map_err(|e| {
        BuildError(format!(
            "cannot run `{cargo}` ({e}): a Rust toolchain is needed to build plugins (install it with rustup); the learned file itself also works in forces.yaml plugins:, evaluated in process"
        ))
    })?;
    let _child_registered = propagator::cleanup::ChildRegistered::new(child.id());
    let output = child
        .wait_with_output()
        .map_err(|e| BuildError(format!("waiting for cargo: {e}")))?;
    if !output.status.success() {
        return Err(BuildError(format!(
            "cargo could not build the plugin in {}:\n{}",
            dir.display(),
            String::from_utf8_lossy(&output.stderr)
        )));
    }
    let lib = format!(
        "{}{}{}",
        std::env::consts::DLL_PREFIX,
        crate_name,
        std::env::consts::DLL_SUFFIX
    );
    let built = dir.join("target").join("release").join(lib);
    if !built.exists() {
        return Err(BuildError(format!(
            "cargo finished but {} is missing",
            built.display()
        )));
    }
    Ok(built)
}
