//! The `rho` terminal on an NRLMSISE-00 known model is the host's own drag density (and
//! its derivatives the host's gradient); a learned file that reads it takes the density
//! from the forces file it is used with, refuses one whose drag is another atmosphere,
//! and is refused by `arcwise build` (a native plugin cannot compute the host's density).

use learned_forces::expr::{Context, Density, Terminals};
use learned_forces::learned_file::{EnvironmentEntry, LearnedFile};
use propagator::config::ForcesFile;
use propagator::{Epoch, StateVector};
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

#[test]
fn a_learned_file_reading_the_host_density_needs_an_nrlmsise00_host() {
    let mut file = LearnedFile::load(&root().join("tests/data/learned_example.yaml")).unwrap();
    file.terms[0].formula = "exp(-t / k0) * rho * norm(vrel) * vrel".into();
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
    let file = LearnedFile::parse(&text).unwrap();
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
    // And no native plugin for it.
    let e = learned_forces::codegen::generate(&file, "x").unwrap_err();
    assert!(e.0.contains("cannot compute"), "{}", e.0);
}
