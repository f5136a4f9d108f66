//! Native force plugins: the example drag-sail plugin against the same force compiled
//! in, and every refusal of the loader (with small C plugins built by the test: proof
//! that the ABI is plain C).

mod common;
use drag_sail_plugin::DragSail;
use propagator::force::two_body::TwoBody;
use propagator::force::zonal::Zonal;
use propagator::integrator::{Method, Settings};
use propagator::plugin::loader::PluginForce;
use propagator::propagation::{output_grid, propagate, Options, Request, Silent};
use propagator::{Epoch, Force, ForceModel, StateVector};
use std::path::{Path, PathBuf};

const MU: f64 = 398_600.441_8;
const RE: f64 = 6_378.136_3;

/// The cdylib cargo built beside this test (the plugin crate is a dev-dependency).
fn drag_sail_so() -> PathBuf {
    let exe = std::env::current_exe().unwrap();
    let deps = exe.parent().unwrap();
    let name = format!(
        "{}drag_sail_plugin{}",
        std::env::consts::DLL_PREFIX,
        std::env::consts::DLL_SUFFIX
    );
    let p = deps.join(&name);
    assert!(p.exists(), "{} not built", p.display());
    p
}

fn reference() -> Epoch {
    Epoch::parse_utc(drag_sail_plugin::REFERENCE_EPOCH_UTC).unwrap()
}

fn leo() -> StateVector {
    let a: f64 = RE + 480.0;
    let v = (MU / a).sqrt();
    StateVector::new(a, 0.0, 0.0, 0.0, v * 0.6, v * 0.8)
}

fn base() -> ForceModel {
    ForceModel::new()
        .with(TwoBody { mu_km3_s2: MU })
        .with(Zonal::egm96(MU, RE, 2).unwrap())
}

fn run(model: &ForceModel, t_end: f64, grid: &[f64]) -> Result<Vec<(f64, StateVector)>, String> {
    let options = Options {
        settings: Settings {
            method: Method::Dp853,
            rtol: 1e-12,
            atol: 1e-12,
            ..Settings::default()
        },
        ..Options::default()
    };
    let req = Request {
        x0: leo(),
        t0_s: 0.0,
        t_end_s: t_end,
        output_times_s: grid,
        stop_times_s: &[],
    };
    propagate(model, &req, &options, &mut Silent)
        .map(|p| p.samples)
        .map_err(|e| e.to_string())
}

#[test]
fn plugin_trajectory_is_bit_for_bit_the_compiled_in_one() {
    let plugin = PluginForce::load(&drag_sail_so(), &reference(), None).unwrap();
    assert_eq!(plugin.metadata().name, "skylark_drag_sail");
    assert!(plugin.has_batch());
    let direct = base().with(DragSail::default());
    let mut loaded = base();
    loaded.push(Box::new(plugin));
    let grid = output_grid(0.0, 86400.0, 600.0);
    let a = run(&direct, 86400.0, &grid).unwrap();
    let b = run(&loaded, 86400.0, &grid).unwrap();
    assert_eq!(a.len(), b.len());
    for (x, y) in a.iter().zip(&b) {
        assert_eq!(x.1, y.1, "differs at t = {}", x.0);
    }
    // The sail matters: without it the orbit ends kilometres elsewhere.
    let none = run(&base(), 86400.0, &[86400.0]).unwrap();
    assert!((none[0].1 - a.last().unwrap().1).fixed_rows::<3>(0).norm() > 1.0);
}

#[test]
fn batch_entry_point_matches_single_calls() {
    let plugin = PluginForce::load(&drag_sail_so(), &reference(), None).unwrap();
    let ts: Vec<f64> = (0..50).map(|k| k as f64 * 1000.0).collect();
    let xs: Vec<StateVector> = ts
        .iter()
        .map(|t| {
            let mut x = leo();
            x[1] += t * 1e-3;
            x
        })
        .collect();
    let batch = plugin.accelerations(&ts, &xs).unwrap();
    for ((t, x), b) in ts.iter().zip(&xs).zip(&batch) {
        assert_eq!(plugin.acceleration(*t, x).unwrap(), *b);
    }
}

#[test]
fn time_offsets_between_reference_epochs_are_applied() {
    // Our axis starts 1 h after the plugin's: our t = 0 is its t = 3600 s.
    let later = reference().plus_seconds(3600.0);
    let plugin = PluginForce::load(&drag_sail_so(), &later, None).unwrap();
    let x = leo();
    let direct = DragSail::default()
        .acceleration(3600.0 + 25_000.0, &x)
        .unwrap();
    let via = plugin.acceleration(25_000.0, &x).unwrap();
    assert!((direct - via).norm() <= 1e-15 * direct.norm());
}

/// Builds a C plugin from `body` into `dir`; returns its path.
fn good_c(abi: u32, accel: &str) -> String {
    common::c_force_source(abi, accel)
}

fn load_err(path: &Path, checksum: Option<&str>) -> String {
    PluginForce::load(path, &reference(), checksum)
        .unwrap_err()
        .to_string()
}

#[test]
fn loader_refusals_name_the_file_and_the_reason() {
    let dir = tempfile::tempdir().unwrap();
    let zero = "out[0] = 0; out[1] = 0; out[2] = 1e-9 * s[2] / 7000.0; return 0;";
    // A well-formed C plugin loads.
    let ok = common::c_plugin(dir.path(), "ok", &good_c(1, zero));
    assert!(PluginForce::load(&ok, &reference(), Some("sha256:aaaa")).is_ok());
    // Wrong ABI version.
    let e = load_err(
        &common::c_plugin(dir.path(), "abi2", &good_c(2, zero)),
        None,
    );
    assert!(
        e.contains("ABI version 2") && e.contains("libabi2.so"),
        "{e}"
    );
    // Missing symbol.
    let e = load_err(
        &common::c_plugin(dir.path(), "nosym", "uint32_t arcwise_plugin_abi_version(void) { return 1; }\nconst char *arcwise_plugin_metadata(void) { return \"{}\"; }\n"),
        None,
    );
    assert!(
        e.contains("missing symbol `arcwise_plugin_acceleration`"),
        "{e}"
    );
    // Checksum mismatch.
    let e = load_err(&ok, Some("sha256:bbbb"));
    assert!(
        e.contains("does not match") && e.contains("sha256:aaaa"),
        "{e}"
    );
    // Not a shared library.
    let text = dir.path().join("notes.so");
    std::fs::write(&text, "hello").unwrap();
    let e = load_err(&text, None);
    assert!(e.contains("not a shared library"), "{e}");
    // Group- or world-writable.
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        for mode in [0o775, 0o757] {
            let w = dir.path().join(format!("w{mode:o}.so"));
            std::fs::copy(&ok, &w).unwrap();
            std::fs::set_permissions(&w, std::fs::Permissions::from_mode(mode)).unwrap();
            let e = load_err(&w, None);
            assert!(e.contains("writable by group or others"), "{e}");
        }
    }
    // A missing file; bad metadata.
    assert!(load_err(&dir.path().join("nope.so"), None).contains("cannot find"));
    let bad_meta = common::c_plugin(
        dir.path(),
        "badmeta",
        "uint32_t arcwise_plugin_abi_version(void) { return 1; }\nconst char *arcwise_plugin_metadata(void) { return \"{not json\"; }\nint32_t arcwise_plugin_acceleration(double t, const double s[6], double out[3]) { return 0; }\n",
    );
    assert!(load_err(&bad_meta, None).contains("metadata is not valid"));
}

#[test]
fn a_plugin_failing_mid_propagation_stops_it_with_the_plugin_and_epoch_named() {
    let dir = tempfile::tempdir().unwrap();
    for (name, accel, needle) in [
        (
            "nan",
            "out[0] = t > 3600.0 ? NAN : 0.0; out[1] = 0; out[2] = 0; return 0;",
            "non-finite",
        ),
        (
            "status",
            "out[0] = 0; out[1] = 0; out[2] = 0; return t > 3600.0 ? 3 : 0;",
            "status 3",
        ),
        // A finite but absurd value used to end as an anonymous tolerance failure.
        (
            "huge",
            "out[0] = t > 3600.0 ? 1e300 : 0.0; out[1] = 0; out[2] = 0; return 0;",
            "beyond any physical acceleration",
        ),
    ] {
        let so = common::c_plugin(dir.path(), name, &good_c(1, accel));
        let mut model = base();
        model.push(Box::new(
            PluginForce::load(&so, &reference(), None).unwrap(),
        ));
        let e = run(&model, 7200.0, &[7200.0]).unwrap_err();
        assert!(
            e.contains(needle) && e.contains(&format!("lib{name}.so")) && e.contains("t = 36"),
            "{e}"
        );
    }
}

#[test]
fn forces_yaml_loads_plugins_relative_to_the_file() {
    let dir = tempfile::tempdir().unwrap();
    let so = dir.path().join("sail.so");
    std::fs::copy(drag_sail_so(), &so).unwrap();
    let text = "gravity: { zonal_degree: 2 }\nplugins: [sail.so]\n";
    let path = dir.path().join("forces.yaml");
    let f = propagator::config::ForcesFile::parse(text, &path).unwrap();
    let loaded = f.build(&path, reference()).unwrap();
    assert_eq!(
        loaded.model.names(),
        vec!["two_body", "zonal_j2", "plugin:skylark_drag_sail"]
    );
    let bad = "gravity: { zonal_degree: 2 }\nplugins: [{ path: sail.so, source_checksum: \"sha256:00\" }]\n";
    let e = propagator::config::ForcesFile::parse(bad, &path)
        .unwrap()
        .build(&path, reference())
        .err()
        .unwrap()
        .to_string();
    assert!(
        e.contains("forces.yaml") && e.contains("no source checksum"),
        "{e}"
    );
}

/// The drag of a forces file with `atmosphere`, as the host hands it to plugins.
fn host_drag(atmosphere: &str) -> std::sync::Arc<propagator::force::drag::Drag> {
    let path = Path::new("forces.yaml");
    let text = format!(
        "gravity: {{ zonal_degree: 2 }}\ndrag: {{ atmosphere: {atmosphere}, cd: 2.2, area_m2: 1.0, mass_kg: 100.0 }}\n"
    );
    let spec = propagator::config::ForcesFile::parse(&text, path).unwrap();
    let drag = spec.drag.as_ref().unwrap();
    std::sync::Arc::new(
        drag.build(&spec.central_body, path, &reference(), None)
            .unwrap(),
    )
}

#[test]
fn a_plugin_reading_the_host_density_gets_it_through_the_c_header_layout() {
    // A hand-written C plugin compiled against the shipped header: its `_in` entry point
    // returns the density and gradient it was handed, so the struct layout of
    // `arcwise_environment` is checked against the host's `plugin::Environment`.
    let dir = tempfile::tempdir().unwrap();
    let header =
        Path::new(env!("CARGO_MANIFEST_DIR")).join("propagator/include/arcwise_force_plugin.h");
    let meta = common::C_PLUGIN_META.replace(
        r#"\"validity\":null"#,
        r#"\"validity\":null,\"host_density\":\"nrlmsise00\""#,
    );
    let head = format!(
        "#include \"{}\"\n\
         uint32_t arcwise_plugin_abi_version(void) {{ return 1; }}\n\
         const char *arcwise_plugin_metadata(void) {{ return \"{meta}\"; }}\n\
         int32_t arcwise_plugin_acceleration(double t, const double s[6], double out[3]) {{ return ARCWISE_ERR_NEEDS_HOST_INPUT; }}\n",
        header.display()
    );
    let with_in = format!(
        "{head}int32_t arcwise_plugin_acceleration_in(double t, const double s[6], const arcwise_environment *e, double out[3]) {{\n\
         out[0] = e->density_kg_m3 * 1e3; out[1] = e->density_gradient[0] * 1e3; out[2] = e->density_gradient[2] * 1e3; return 0; }}\n"
    );
    let so = common::c_plugin(dir.path(), "hostrho", &with_in);
    let msis = host_drag("{ nrlmsise00: { f107: 150, f107a: 150, ap: 12 } }");
    let plugin = PluginForce::load_in(&so, &reference(), None, Some(msis.clone())).unwrap();
    let x = leo();
    let r = nalgebra::Vector3::new(x[0], x[1], x[2]);
    let (rho, g) = msis.density_and_gradient(100.0, &r).unwrap();
    let a = plugin.acceleration(100.0, &x).unwrap();
    assert!(rho > 1e-14 && g.norm() > 0.0);
    assert_eq!([a[0], a[1], a[2]], [rho * 1e3, g[0] * 1e3, g[2] * 1e3]);
    // Without a drag, or beside another atmosphere: refused, naming why.
    let e = PluginForce::load(&so, &reference(), None)
        .unwrap_err()
        .to_string();
    assert!(
        e.contains("libhostrho.so") && e.contains("nrlmsise00"),
        "{e}"
    );
    let e = PluginForce::load_in(&so, &reference(), None, Some(host_drag("ussa1976")))
        .unwrap_err()
        .to_string();
    assert!(e.contains("uses `ussa1976`"), "{e}");
    // Metadata asking for the density without the `_in` entry point: refused.
    let without = common::c_plugin(dir.path(), "noin", &head);
    let e = PluginForce::load_in(&without, &reference(), None, Some(msis.clone()))
        .unwrap_err()
        .to_string();
    assert!(e.contains("no `arcwise_plugin_acceleration_in`"), "{e}");
    // A control character in the key never reaches a message.
    let odd = head.replace("nrlmsise00", "nrl\\\\nmsise00");
    let odd = common::c_plugin(dir.path(), "odd", &odd);
    let e = PluginForce::load_in(&odd, &reference(), None, Some(msis))
        .unwrap_err()
        .to_string();
    assert!(e.contains("host_density") && !e.contains('\n'), "{e}");
}
