//! The `rho` terminal on an NRLMSISE-00 known model is the host's own drag density (and
//! its derivatives the host's gradient); a learned file that reads it takes the density
//! from the forces file it is used with and refuses one whose drag is another
//! atmosphere; so does its native plugin, which the host hands the density at each call.

use learned_forces::expr::{Context, Density, Terminals};
use learned_forces::learned_file::{EnvironmentEntry, LearnedFile};
use propagator::config::ForcesFile;
use propagator::{Epoch, Force, StateVector};
use std::path::{Path, PathBuf};

fn root() -> &'static Path {
    Path::new(env!("CARGO_MANIFEST_DIR"))
}

fn forces(atmosphere: &str) -> (ForcesFile, PathBuf) {
    // The forces file "lives" in the project root, so the table path is relative to it.
    let path = root().join("forces.yaml");
    let text = format!("gravity: {{ zonal_degree: 2 }}\ndrag: {{ atmosphere: {atmosphere}, cd: 2.2, area_m2: 1.0, mass_kg: 100.0 }}\n");
    (ForcesFile::parse(&text, &path).unwrap(), path)
}

const MSIS: &str = "{ nrlmsise00: { space_weather: examples/space_weather/storm_ap200.csv } }";

#[test]
fn rho_is_the_host_density_with_its_gradient() {
    let epoch = Epoch::parse_utc("2026-03-11T00:00:00Z").unwrap();
    let (spec, path) = forces(MSIS);
    let c = Context::of_model(&spec, &path, &epoch).unwrap();
    assert_eq!(c.environment.density, Density::Host);
    let drag = spec
        .drag
        .as_ref()
        .unwrap()
        .build(&spec.central_body, &path, &epoch, None)
        .unwrap();
    let x = StateVector::new(4100.0, -3900.0, 3800.0, 4.1, 5.2, -2.3);
    let r = nalgebra::Vector3::new(x[0], x[1], x[2]);
    // Through the storm (12:00–21:00 UTC) and outside it.
    for t in [3600.0, 50_000.0, 70_000.0] {
        let p = Terminals::of_state(t, &x, &c);
        let rho = drag.density(t, &r).unwrap();
        assert!(
            (p.rho / rho - 1.0).abs() < 1e-14,
            "t {t}: {} vs {rho}",
            p.rho
        );
        // ∂rho/∂r of the dual terminal against central differences of the host's density
        // (1 m): the vertical gradient carries it to 1 %.
        let d = Terminals::of_state_dual(t, &x, &c);
        for j in 0..3 {
            let mut e = nalgebra::Vector3::zeros();
            e[j] = 1e-3;
            let fd =
                (drag.density(t, &(r + e)).unwrap() - drag.density(t, &(r - e)).unwrap()) / 2e-3;
            let scale = rho / 50.0;
            assert!(
                (d.rho.d[j] - fd).abs() < 0.02 * scale,
                "t {t}, ∂/∂r{j}: {} vs {fd}",
                d.rho.d[j]
            );
        }
    }
}

/// A learned file whose `rho` is the host's NRLMSISE-00 density, valid over the storm
/// table's 11 March 2026.
fn host_density_file() -> LearnedFile {
    let mut file = LearnedFile::load(&root().join("tests/data/learned_example.yaml")).unwrap();
    file.terms[0].formula = "rho * norm(vrel) * vrel".into();
    file.constants.clear();
    // Inside the space-weather table's span (its density is built on the file's axis).
    file.epoch_utc = "2026-03-11T00:00:00.000000Z".into();
    file.validity.start_utc = file.epoch_utc.clone();
    file.validity.end_utc = "2026-03-12T00:00:00.000000Z".into();
    let env = learned_forces::expr::Environment {
        density: Density::Host,
        altitude: learned_forces::expr::Altitude::Spherical,
    };
    file.environment = EnvironmentEntry::of(&env);
    let text = file.to_yaml();
    assert!(text.contains("nrlmsise00"), "{text}");
    LearnedFile::parse(&text).unwrap()
}

#[test]
fn a_learned_file_reading_the_host_density_needs_an_nrlmsise00_host() {
    let file = host_density_file();
    let epoch = Epoch::parse_utc("2026-03-11T00:00:00Z").unwrap();
    // Without a host, and with a host whose drag is another atmosphere: refused.
    let e = file.force(&epoch).err().unwrap();
    assert!(e.contains("NRLMSISE-00"), "{e}");
    let (table, table_path) = forces("table");
    let e = file
        .force_in(&epoch, Some((&table, &table_path)))
        .err()
        .unwrap();
    assert!(e.contains("not nrlmsise00"), "{e}");
    // With an nrlmsise00 host: accepted.
    let (msis, msis_path) = forces(MSIS);
    let ok = file.force_in(&epoch, Some((&msis, &msis_path)));
    assert!(ok.is_ok(), "{:?}", ok.err());
}

#[test]
fn a_native_plugin_is_handed_the_host_density_and_agrees_with_in_process() {
    use propagator::plugin::loader::PluginForce;
    let file = host_density_file();
    let dir = tempfile::tempdir().unwrap();
    let so = learned_forces::codegen::build(&file, "host_rho", &dir.path().join("b")).unwrap();
    // The known model's reference is 6 h after the file's epoch: the plugin's time and
    // the host's drag time differ by that offset, and must each be right.
    let reference = Epoch::parse_utc("2026-03-11T06:00:00Z").unwrap();
    let (msis, msis_path) = forces(MSIS);
    let drag = |spec: &ForcesFile, path: &Path| {
        std::sync::Arc::new(
            spec.drag
                .as_ref()
                .unwrap()
                .build(&spec.central_body, path, &reference, None)
                .unwrap(),
        )
    };
    // Refused without a host drag and with a drag of another atmosphere, naming why.
    let e = PluginForce::load(&so, &reference, Some(&file.checksum)).unwrap_err();
    assert!(
        e.to_string().contains("reads the host's `nrlmsise00`"),
        "{e}"
    );
    let (table, table_path) = forces("table");
    let e = PluginForce::load_in(
        &so,
        &reference,
        Some(&file.checksum),
        Some(drag(&table, &table_path)),
    )
    .unwrap_err();
    assert!(e.to_string().contains("uses `table`"), "{e}");
    let native = PluginForce::load_in(
        &so,
        &reference,
        Some(&file.checksum),
        Some(drag(&msis, &msis_path)),
    )
    .unwrap();
    assert!(native.has_partials());
    assert_eq!(
        native.metadata().host_density.as_deref(),
        Some("nrlmsise00")
    );
    let inproc = file
        .force_in(&reference, Some((&msis, &msis_path)))
        .unwrap();
    let x = StateVector::new(4100.0, -3900.0, 3800.0, 4.1, 5.2, -2.3);
    // a / rho must be the same at every time (the formula is rho·|vrel|·vrel at a fixed
    // state) while rho itself changes through the storm.
    let host = drag(&msis, &msis_path);
    let r = nalgebra::Vector3::new(x[0], x[1], x[2]);
    let mut ratios = vec![];
    let mut densities = vec![];
    // Before, through and after the storm (12:00–21:00 UTC).
    for t in [
        0.0,
        3.0 * 3600.0,
        9.0 * 3600.0,
        12.0 * 3600.0,
        16.0 * 3600.0,
    ] {
        let (a, b) = (
            native.acceleration(t, &x).unwrap(),
            inproc.acceleration(t, &x).unwrap(),
        );
        assert!(b.norm() > 0.0);
        assert!((a - b).norm() <= 1e-13 * b.norm(), "t {t}: {a} vs {b}");
        let (pa, pb) = (
            native.partials(t, &x).unwrap(),
            inproc.partials(t, &x).unwrap(),
        );
        assert!(
            (pa - pb).abs().max() <= 1e-12 * pb.abs().max(),
            "t {t}: partials {pa} vs {pb}"
        );
        let rho = host.density(t, &r).unwrap();
        ratios.push(a.norm() / rho);
        densities.push(rho);
    }
    let spread = |v: &[f64]| {
        let (lo, hi) = v
            .iter()
            .fold((f64::MAX, 0.0f64), |(l, h), x| (l.min(*x), h.max(*x)));
        hi / lo - 1.0
    };
    assert!(spread(&ratios) < 1e-12, "a/rho varies: {ratios:?}");
    // The gate must be able to fail: the storm changes the density the plugin reads.
    assert!(spread(&densities) > 0.2, "{densities:?}");

    // Through a forces file: listed beside nrlmsise00 drag, the plugin is handed that
    // drag's density; beside another atmosphere, the file is refused naming both.
    let weather = root().join("examples/space_weather/storm_ap200.csv");
    let forces_path = dir.path().join("forces.yaml");
    let text = |atmosphere: &str| {
        format!(
            "gravity: {{ zonal_degree: 2 }}\ndrag: {{ atmosphere: {atmosphere}, cd: 2.2, area_m2: 1.0, mass_kg: 100.0 }}\nplugins: [ {{ path: {:?}, source_checksum: {:?} }} ]\n",
            so.display().to_string(),
            file.checksum
        )
    };
    let msis_text = text(&format!(
        "{{ nrlmsise00: {{ space_weather: {:?} }} }}",
        weather.display().to_string()
    ));
    let model = ForcesFile::parse(&msis_text, &forces_path)
        .unwrap()
        .build(&forces_path, reference)
        .unwrap()
        .model;
    let plugin = model
        .forces()
        .iter()
        .find(|f| f.name() == "plugin:host_rho")
        .expect("the plugin in the model");
    let t = 16.0 * 3600.0;
    let (a, b) = (
        plugin.acceleration(t, &x).unwrap(),
        inproc.acceleration(t, &x).unwrap(),
    );
    assert!((a - b).norm() <= 1e-13 * b.norm(), "{a} vs {b}");
    let e = ForcesFile::parse(&text("table"), &forces_path)
        .unwrap()
        .build(&forces_path, reference)
        .err()
        .unwrap()
        .to_string();
    assert!(
        e.contains("forces.yaml") && e.contains("uses `table`"),
        "{e}"
    );
}
