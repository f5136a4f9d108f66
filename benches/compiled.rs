//! A learned force evaluated three ways: written by hand in Rust, through the native
//! plugin built by `arcwise build`, and by the in-process compiled evaluator.
//! Targets: native ≤ 1.2× hand-written; in-process ≤ 4× native. The hand-written force is
//! measured twice: inlined into the loop (a lower bound no force in a force model reaches)
//! and through `&dyn Force`, the way the propagator calls every force.

use criterion::{criterion_group, criterion_main, Criterion};
use learned_forces::codegen::build;
use learned_forces::learned_file::*;
use nalgebra::Vector3;
use propagator::force::two_body::TwoBody;
use propagator::force::zonal::Zonal;
use propagator::force::{Force, ForceError};
use propagator::integrator::Method;
use propagator::plugin::loader::PluginForce;
use propagator::propagation::{propagate, Options, Request, Silent};
use propagator::{CentralBody, Epoch, ForceModel, StateVector};
use std::hint::black_box;

const EPOCH: &str = "2031-05-04T00:00:00.000000Z";

/// The venting force written by hand: 2e-9 · exp(−t/21600) · T̂.
struct HandWritten;
impl Force for HandWritten {
    fn name(&self) -> &str {
        "hand"
    }
    fn acceleration(&self, t: f64, x: &StateVector) -> Result<Vector3<f64>, ForceError> {
        let r = Vector3::new(x[0], x[1], x[2]);
        let v = Vector3::new(x[3], x[4], x[5]);
        let rh = r / r.norm();
        let h = r.cross(&v);
        let nh = h / h.norm();
        let th = nh.cross(&rh);
        Ok(th * (2e-9 * (-t / 21600.0).exp()))
    }
}

fn file() -> LearnedFile {
    let mut f = LearnedFile {
        format_version: FORMAT_VERSION,
        name: "bench".into(),
        frame: "ECI".into(),
        epoch_utc: EPOCH.into(),
        earth: EarthEntry {
            radius_km: 6378.1363,
            rotation_rad_s: 7.292115e-5,
        },
        environment: None,
        terms: vec![TermEntry {
            formula: "exp(-t / k0) * T".into(),
            coefficient: 2e-9,
            sigma: 1e-12,
        }],
        constants: vec![ConstantEntry {
            name: "k0".into(),
            value: 21600.0,
            sigma: 10.0,
            unit: Some("s".into()),
        }],
        validity: ValidityEntry {
            start_utc: EPOCH.into(),
            end_utc: "2031-05-05T00:00:00.000000Z".into(),
            min_altitude_km: 300.0,
            max_altitude_km: 800.0,
            outside: OutsidePolicy::Warn,
            time_margin_s: 86400.0,
            altitude_margin_km: 20.0,
        },
        fit: FitEntry {
            observations: 0,
            rms_km_before: Some(0.0),
            rms_km_after: Some(0.0),
            held_out_rms_km: Some(0.0),
            rms_sigma_before: None,
            rms_sigma_after: None,
            held_out_rms_sigma: None,
            chi2: 0.0,
            dof: 0,
        },
        provenance: ProvenanceEntry {
            arc_sha256: "sha256:0".into(),
            forces_sha256: "sha256:0".into(),
            seed: 0,
            tool_version: "bench".into(),
        },
        state_at_end: StateEntry {
            epoch_utc: EPOCH.into(),
            r_km: [7000.0, 0.0, 0.0],
            v_km_s: [0.0, 7.5, 0.0],
        },
        state_at_end_known_forces: None,
        known_parameters: vec![],
        notes: vec![],
        checksum: String::new(),
    };
    f.checksum = f.compute_checksum();
    f
}

/// The same force hand-written in C, built as a plugin with the machine's `cc -O2`: the
/// fair comparison for a plugin, since both pay the C ABI call.
fn hand_written_c_plugin(dir: &std::path::Path) -> Option<std::path::PathBuf> {
    let src = dir.join("hand.c");
    let meta = r#"{\"abi_version\":1,\"name\":\"hand\",\"frame\":\"ECI\",\"reference_epoch_utc\":\"2031-05-04T00:00:00Z\",\"source_checksum\":null,\"validity\":null,\"units\":{\"time\":\"s\",\"state\":\"km, km/s\",\"acceleration\":\"km/s^2\"}}"#;
    let code = format!(
        r#"#include <math.h>
#include <stdint.h>
uint32_t arcwise_plugin_abi_version(void) {{ return 1; }}
const char *arcwise_plugin_metadata(void) {{ return "{meta}"; }}
int32_t arcwise_plugin_acceleration(double t, const double s[6], double out[3]) {{
    double rn = sqrt(s[0]*s[0] + s[1]*s[1] + s[2]*s[2]);
    double rh[3] = {{ s[0]/rn, s[1]/rn, s[2]/rn }};
    double h[3] = {{ s[1]*s[5] - s[2]*s[4], s[2]*s[3] - s[0]*s[5], s[0]*s[4] - s[1]*s[3] }};
    double hn = sqrt(h[0]*h[0] + h[1]*h[1] + h[2]*h[2]);
    double n[3] = {{ h[0]/hn, h[1]/hn, h[2]/hn }};
    double k = 2e-9 * exp(-t / 21600.0);
    out[0] = k * (n[1]*rh[2] - n[2]*rh[1]);
    out[1] = k * (n[2]*rh[0] - n[0]*rh[2]);
    out[2] = k * (n[0]*rh[1] - n[1]*rh[0]);
    return 0;
}}
"#
    );
    std::fs::write(&src, code).ok()?;
    let out = dir.join("libhand.so");
    let ok = std::process::Command::new("cc")
        .args(["-O2", "-shared", "-fPIC", "-o"])
        .arg(&out)
        .arg(&src)
        .arg("-lm")
        .status()
        .ok()?
        .success();
    ok.then_some(out)
}

/// The same force hand-written in Rust as a plugin (plain `extern "C"` functions, no
/// checks), built with the machine's `rustc -C opt-level=3`: the like-for-like comparison
/// for the generated plugin (same language, compiler and ABI; the generated one adds
/// the validity gate, panic containment and the finiteness checks).
fn hand_written_rust_plugin(dir: &std::path::Path) -> Option<std::path::PathBuf> {
    let src = dir.join("hand_rs.rs");
    let meta = r#"{"abi_version":1,"name":"hand_rs","frame":"ECI","reference_epoch_utc":"2031-05-04T00:00:00Z","source_checksum":null,"validity":null,"units":{"time":"s","state":"km, km/s","acceleration":"km/s^2"}}"#;
    let code = format!(
        r#"#[no_mangle]
pub extern "C" fn arcwise_plugin_abi_version() -> u32 {{ 1 }}
#[no_mangle]
pub extern "C" fn arcwise_plugin_metadata() -> *const std::ffi::c_char {{
    concat!({meta:?}, "\0").as_ptr() as *const std::ffi::c_char
}}
/// # Safety
/// 6 readable and 3 writable doubles.
#[no_mangle]
pub unsafe extern "C" fn arcwise_plugin_acceleration(t: f64, s: *const f64, out: *mut f64) -> i32 {{
    let s = unsafe {{ std::slice::from_raw_parts(s, 6) }};
    let o = unsafe {{ std::slice::from_raw_parts_mut(out, 3) }};
    let rn = (s[0] * s[0] + s[1] * s[1] + s[2] * s[2]).sqrt();
    let rh = [s[0] / rn, s[1] / rn, s[2] / rn];
    let h = [s[1] * s[5] - s[2] * s[4], s[2] * s[3] - s[0] * s[5], s[0] * s[4] - s[1] * s[3]];
    let hn = (h[0] * h[0] + h[1] * h[1] + h[2] * h[2]).sqrt();
    let n = [h[0] / hn, h[1] / hn, h[2] / hn];
    let k = 2e-9 * (-t / 21600.0).exp();
    o[0] = k * (n[1] * rh[2] - n[2] * rh[1]);
    o[1] = k * (n[2] * rh[0] - n[0] * rh[2]);
    o[2] = k * (n[0] * rh[1] - n[1] * rh[0]);
    0
}}
"#
    );
    std::fs::write(&src, code).ok()?;
    let out = dir.join("libhand_rs.so");
    let ok = std::process::Command::new("rustc")
        .args([
            "--edition",
            "2021",
            "--crate-type",
            "cdylib",
            "-C",
            "opt-level=3",
            "-o",
        ])
        .arg(&out)
        .arg(&src)
        .status()
        .ok()?
        .success();
    ok.then_some(out)
}

fn bench(c: &mut Criterion) {
    let f = file();
    // A private, freshly created folder (never a predictable name in the shared temp dir).
    let scratch = tempfile::tempdir().expect("temp dir");
    let dir = scratch.path().join("crate");
    let so = build(&f, "bench", &dir).expect("plugin build");
    let reference = Epoch::parse_utc(EPOCH).unwrap();
    let native = PluginForce::load(&so, &reference, Some(&f.checksum)).unwrap();
    let inproc = f.force(&reference).unwrap();
    let x = StateVector::new(6878.0, 100.0, -50.0, 0.1, 4.8, 5.9);
    let hand_c =
        hand_written_c_plugin(&dir).map(|p| PluginForce::load(&p, &reference, None).unwrap());
    let mut g = c.benchmark_group("learned force 2e-9·exp(-t/k0)·T, one evaluation");
    g.bench_function("hand-written Rust", |b| {
        b.iter(|| {
            HandWritten
                .acceleration(black_box(3600.0), black_box(&x))
                .unwrap()
        })
    });
    // As the propagator calls every force: through `&dyn Force`, one indirect call.
    let hand_dyn: &dyn Force = black_box(&HandWritten);
    g.bench_function(
        "hand-written Rust (&dyn Force, as the propagator calls it)",
        |b| {
            b.iter(|| {
                hand_dyn
                    .acceleration(black_box(3600.0), black_box(&x))
                    .unwrap()
            })
        },
    );
    let hand_rs =
        hand_written_rust_plugin(&dir).map(|p| PluginForce::load(&p, &reference, None).unwrap());
    if let Some(h) = &hand_rs {
        g.bench_function("hand-written Rust plugin (same ABI)", |b| {
            b.iter(|| h.acceleration(black_box(3600.0), black_box(&x)).unwrap())
        });
    }
    if let Some(h) = &hand_c {
        g.bench_function("hand-written C plugin (same ABI)", |b| {
            b.iter(|| h.acceleration(black_box(3600.0), black_box(&x)).unwrap())
        });
    }
    g.bench_function("native plugin (arcwise build)", |b| {
        b.iter(|| {
            native
                .acceleration(black_box(3600.0), black_box(&x))
                .unwrap()
        })
    });
    g.bench_function("in-process compiled evaluator", |b| {
        b.iter(|| {
            inproc
                .acceleration(black_box(3600.0), black_box(&x))
                .unwrap()
        })
    });
    g.finish();

    // What the user pays: a 1-day propagation (two-body + J2–J6, DP853 at 1e-10) with the
    // learned force added three ways. The force is one of several in the model, so the
    // call's ABI cost is diluted by the rest of the dynamics.
    let mut g = c.benchmark_group("1-day LEO propagation, J2-J6 + learned force (dp853)");
    g.sample_size(20);
    let with = |extra: Box<dyn Fn(ForceModel) -> ForceModel>| {
        let body = CentralBody::EARTH_EGM96;
        extra(
            ForceModel::new()
                .with(TwoBody {
                    mu_km3_s2: body.mu_km3_s2,
                })
                .with(Zonal::egm96(body.mu_km3_s2, body.radius_km, 6).unwrap()),
        )
    };
    let models: [(&str, ForceModel); 3] = [
        ("hand-written Rust", with(Box::new(|m| m.with(HandWritten)))),
        (
            "native plugin (arcwise build)",
            with(Box::new(|m| {
                m.with(PluginForce::load(&so, &reference, Some(&f.checksum)).unwrap())
            })),
        ),
        (
            "in-process compiled evaluator",
            with(Box::new(|m| m.with(f.force(&reference).unwrap()))),
        ),
    ];
    let options = Options::with_method(Method::Dp853, 1e-10, 1e-10);
    for (label, model) in &models {
        g.bench_function(*label, |b| {
            b.iter(|| {
                let req = Request {
                    x0: x,
                    t0_s: 0.0,
                    t_end_s: 86400.0,
                    output_times_s: &[86400.0],
                    stop_times_s: &[],
                };
                propagate(model, &req, &options, &mut Silent).unwrap()
            })
        });
    }
    g.finish();
    let _ = std::fs::remove_dir_all(&dir);
}

criterion_group!(benches, bench);
criterion_main!(benches);
