//! Compiled learned forces: the in-process evaluator, the generated native plugin and a
//! direct tree evaluation agree (200 random formulas; the shipped scenario's learned
//! force; inside and outside the validity window); a propagation with the plugin matches
//! the in-process one.

use learned_forces::codegen::{build, runtime};
use learned_forces::expr::compiled::Program;
use learned_forces::expr::random::vector_tree;
use learned_forces::expr::{Context, Terminals};
use learned_forces::learned_file::*;
use propagator::plugin::loader::PluginForce;
use propagator::propagation::{output_grid, propagate, Options, Request, Silent};
use propagator::solar_system::CenturyClock;
use propagator::{Epoch, Force, StateVector};
use rand_chacha::ChaCha8Rng;
use rand_core::SeedableRng;

const EPOCH: &str = "2031-05-04T00:00:00.000000Z";

fn ctx() -> Context {
    Context {
        radius_km: 6378.1363,
        rotation_rad_s: 7.292115e-5,
        clock: CenturyClock::new(&Epoch::parse_utc(EPOCH).unwrap()),
        environment: learned_forces::expr::HANDBOOK_ENV,
        host: None,
    }
}

fn states(n: usize) -> Vec<(f64, StateVector)> {
    (0..n)
        .map(|k| {
            let f = k as f64;
            let (a, i, w) = (6778.0 + 37.0 * (f % 7.0), 0.3 + 0.11 * (f % 13.0), 0.37 * f);
            let v = (398_600.441_8 / a).sqrt();
            (
                f * 613.0,
                StateVector::new(
                    a * w.cos(),
                    a * w.sin() * i.cos(),
                    a * w.sin() * i.sin(),
                    -v * w.sin(),
                    v * w.cos() * i.cos(),
                    v * w.cos() * i.sin(),
                ),
            )
        })
        .collect()
}

fn rel(a: f64, b: f64, scale: f64) -> f64 {
    (a - b).abs() / scale.max(1e-300)
}

#[test]
fn compiled_evaluator_matches_tree_evaluation_on_200_random_formulas() {
    let mut rng = ChaCha8Rng::seed_from_u64(20311204);
    let c = ctx();
    let pts = states(25);
    for k in 0..200 {
        let tree = vector_tree(&mut rng, 4);
        let prog = Program::compile(std::slice::from_ref(&tree), &[1.0], &[]);
        for (t, x) in &pts {
            let p = Terminals::of_state(*t, x, &c);
            let a = tree.eval(&p, &[]).vector();
            let b = prog.eval(&p);
            let scale = a.iter().map(|v| v.abs()).fold(0.0, f64::max);
            for i in 0..3 {
                assert!(
                    rel(a[i], b[i], scale) <= 1e-13,
                    "formula {k} `{tree}`: {a:?} vs {b:?}"
                );
            }
            let pd = Terminals::of_state_dual(*t, x, &c);
            let ad = tree.eval(&pd, &[]).vector();
            let bd = prog.eval(&pd);
            for i in 0..3 {
                let ds = ad[i].d.iter().map(|v| v.abs()).fold(0.0, f64::max);
                for j in 0..6 {
                    assert!(
                        rel(ad[i].d[j], bd[i].d[j], ds) <= 1e-13,
                        "formula {k} partial"
                    );
                }
            }
        }
    }
}

#[test]
fn plugin_runtime_terminals_match_the_library() {
    // The runtime (shared by the library's terminals and every generated plugin) against
    // the propagator's own Sun series, shadow, density table, RTN frame and argument of
    // latitude.
    use propagator::atmosphere::{Atmosphere, PiecewiseExponential};
    use propagator::force::srp::{sunlit_fraction, Shadow};
    use propagator::solar_system::sun_position_km;
    let c = ctx();
    let table = PiecewiseExponential::handbook();
    for (t, x) in states(60) {
        let b = runtime::terminals::<f64>(
            t,
            [x[0], x[1], x[2]],
            [x[3], x[4], x[5]],
            c.radius_km,
            c.rotation_rad_s,
            c.clock.t0_centuries,
            true,
            true,
        );
        let r = nalgebra::Vector3::new(x[0], x[1], x[2]);
        let v = nalgebra::Vector3::new(x[3], x[4], x[5]);
        let m = propagator::frames::eci_to_rtn(&r, &v).unwrap();
        let s = sun_position_km(c.clock.centuries(t));
        let su = s.normalize();
        let w = c.rotation_rad_s;
        let pairs = [
            ([m[(0, 0)], m[(0, 1)], m[(0, 2)]], b.rh),
            ([m[(1, 0)], m[(1, 1)], m[(1, 2)]], b.th),
            ([m[(2, 0)], m[(2, 1)], m[(2, 2)]], b.nh),
            ([x[3] + w * x[1], x[4] - w * x[0], x[5]], b.vrel),
            ([su[0], su[1], su[2]], b.sun),
        ];
        for (p, q) in pairs {
            for i in 0..3 {
                assert!((p[i] - q[i]).abs() <= 1e-15, "{p:?} vs {q:?}");
            }
        }
        let h = r.norm() - c.radius_km;
        let u = learned_forces::fit::model::argument_of_latitude(&x);
        assert!(
            rel(h, b.h, h) <= 1e-15
                && rel(table.density_kg_m3(h).unwrap(), b.rho, b.rho) <= 1e-14
                && (u - b.u).abs() <= 1e-15
                && (sunlit_fraction(&r, &s, c.radius_km, Shadow::Conical) - b.lit).abs() <= 1e-14
        );
        // Dual derivatives of u against central differences of the runtime itself.
        let d = |k: usize| runtime::Dual::var(x[k], k);
        let bd = runtime::terminals::<runtime::Dual>(
            t,
            [d(0), d(1), d(2)],
            [d(3), d(4), d(5)],
            c.radius_km,
            c.rotation_rad_s,
            c.clock.t0_centuries,
            false,
            false,
        );
        for j in 0..6 {
            let hstep = if j < 3 { 1e-3 } else { 1e-6 };
            let at = |dx: f64| {
                let mut y = [x[0], x[1], x[2], x[3], x[4], x[5]];
                y[j] += dx;
                runtime::terminals::<f64>(
                    t,
                    [y[0], y[1], y[2]],
                    [y[3], y[4], y[5]],
                    c.radius_km,
                    c.rotation_rad_s,
                    c.clock.t0_centuries,
                    false,
                    false,
                )
                .u
            };
            let fd = (at(hstep) - at(-hstep)) / (2.0 * hstep);
            // Central differences carry ~1e-10 of rounding at these steps.
            assert!(
                (bd.u.d[j] - fd).abs() <= 1e-6 * fd.abs() + 1e-9,
                "∂u/∂x{j}: {} vs {fd}",
                bd.u.d[j]
            );
        }
    }
}

/// A learned file with `terms` formulas and a validity window of 1 day at 300–800 km.
fn file(terms: Vec<(String, f64)>, outside: OutsidePolicy) -> LearnedFile {
    let mut f = LearnedFile {
        format_version: FORMAT_VERSION,
        name: "random".into(),
        frame: "ECI".into(),
        epoch_utc: EPOCH.into(),
        earth: EarthEntry {
            radius_km: 6378.1363,
            rotation_rad_s: 7.292115e-5,
        },
        environment: None,
        terms: terms
            .into_iter()
            .map(|(formula, coefficient)| TermEntry {
                formula,
                coefficient,
                sigma: 1e-12,
            })
            .collect(),
        constants: vec![],
        validity: ValidityEntry {
            start_utc: EPOCH.into(),
            end_utc: "2031-05-05T00:00:00.000000Z".into(),
            min_altitude_km: 320.0,
            max_altitude_km: 780.0,
            outside,
            time_margin_s: 0.0,
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
            tool_version: "test".into(),
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

#[test]
fn native_plugin_agrees_with_in_process_inside_and_outside_the_window() {
    let mut rng = ChaCha8Rng::seed_from_u64(7);
    let terms: Vec<(String, f64)> = (0..20)
        .map(|k| {
            (
                vector_tree(&mut rng, 3).to_string(),
                1e-9 * (1.0 + k as f64 / 10.0),
            )
        })
        .collect();
    let reference = Epoch::parse_utc(EPOCH).unwrap();
    let dir = tempfile::tempdir().unwrap();
    for policy in [
        OutsidePolicy::Warn,
        OutsidePolicy::Zero,
        OutsidePolicy::Refuse,
    ] {
        let f = file(terms.clone(), policy);
        let so = build(&f, "random", &dir.path().join(format!("{policy:?}"))).unwrap();
        let native = PluginForce::load(&so, &reference, Some(&f.checksum)).unwrap();
        assert!(native.has_partials());
        let inproc = f.force(&reference).unwrap();
        // Times beyond 1 day and states beyond 800 km are outside the window.
        let mut pts = states(40);
        pts.push((90_000.0, StateVector::new(7000.0, 0.0, 0.0, 0.0, 7.5, 0.1)));
        pts.push((1000.0, StateVector::new(7300.0, 0.0, 0.0, 0.0, 7.3, 0.1)));
        for (t, x) in &pts {
            let (a, b) = (native.acceleration(*t, x), inproc.acceleration(*t, x));
            match (a, b) {
                (Ok(a), Ok(b)) => {
                    let scale = b.norm();
                    assert!(
                        (a - b).norm() <= 1e-13 * scale.max(1e-30),
                        "{policy:?} t={t}: {a} vs {b}"
                    );
                    let (pa, pb) = (
                        native.partials(*t, x).unwrap(),
                        inproc.partials(*t, x).unwrap(),
                    );
                    assert!(
                        (pa - pb).abs().max() <= 1e-13 * pb.abs().max().max(1e-40),
                        "{policy:?} partials"
                    );
                }
                (Err(_), Err(_)) => assert_eq!(policy, OutsidePolicy::Refuse),
                (a, b) => panic!("{policy:?} t={t}: plugin {a:?}, in-process {b:?}"),
            }
        }
        // `warn`: both the native plugin (watched by the host) and the in-process force
        // record that they were used outside (the CLI prints and reports it once).
        let warned = |prefix: &str| {
            propagator::notice::all()
                .iter()
                .any(|w| w.starts_with(prefix) && w.contains("outside its validity window"))
        };
        if policy == OutsidePolicy::Warn {
            assert!(warned("plugin `random`"), "{:?}", propagator::notice::all());
            assert!(warned("learned:"), "{:?}", propagator::notice::all());
        }
        // Non-finite inputs are refused by both, whatever the policy (never a zero).
        let x = StateVector::new(7000.0, 0.0, 0.0, 0.0, 7.5, 0.1);
        let mut nan_r = x;
        nan_r[0] = f64::NAN;
        let mut inf_v = x;
        inf_v[4] = f64::INFINITY;
        for (t, x) in [(f64::NAN, x), (100.0, nan_r), (100.0, inf_v)] {
            let a = native.acceleration(t, &x);
            let b = inproc.acceleration(t, &x);
            assert!(
                a.is_err() && b.is_err(),
                "{policy:?} t={t} {x:?}: {a:?} {b:?}"
            );
        }
    }
}

#[test]
fn propagation_with_the_native_plugin_reproduces_in_process_within_1e_9_km() {
    let f = file(
        vec![
            ("exp(-t / 21600) * T".into(), 2e-9),
            ("cos(u) * R".into(), 3e-11),
        ],
        OutsidePolicy::Warn,
    );
    let reference = Epoch::parse_utc(EPOCH).unwrap();
    let dir = tempfile::tempdir().unwrap();
    let so = build(&f, "venting_like", &dir.path().join("crate")).unwrap();
    // Both loaded the way a user names them: in forces.yaml `plugins:`.
    let mut learned = f.clone();
    std::fs::write(dir.path().join("learned.yaml"), learned.to_yaml()).unwrap();
    let load = |name: &str, plugins: String| {
        let path = dir.path().join(name);
        std::fs::write(
            &path,
            format!("gravity: {{ zonal_degree: 2 }}\nplugins: [{plugins}]\n"),
        )
        .unwrap();
        propagator::config::ForcesFile::load(&path)
            .unwrap()
            .build_with(&path, reference, &LearnedResolver)
            .unwrap()
            .model
    };
    let a = load(
        "native.yaml",
        format!(
            "{{ path: {}, source_checksum: \"{}\" }}",
            so.display(),
            f.checksum
        ),
    );
    let b = load("in_process.yaml", "learned.yaml".into());
    assert_eq!(a.names().len(), 3, "{:?}", a.names());
    assert_eq!(b.names().len(), 3, "{:?}", b.names());
    let x0 = StateVector::new(6878.0, 0.0, 0.0, 0.0, 4.8, 5.9);
    let grid = output_grid(0.0, 86400.0, 3600.0);
    let req = Request {
        x0,
        t0_s: 0.0,
        t_end_s: 86400.0,
        output_times_s: &grid,
        stop_times_s: &[],
    };
    let o = Options::default();
    let pa = propagate(&a, &req, &o, &mut Silent).unwrap();
    let pb = propagate(&b, &req, &o, &mut Silent).unwrap();
    let worst = pa
        .samples
        .iter()
        .zip(&pb.samples)
        .map(|(x, y)| (x.1 - y.1).fixed_rows::<3>(0).norm())
        .fold(0.0, f64::max);
    eprintln!("native vs in-process after 1 day: {worst:.3e} km");
    assert!(worst < 1e-9, "{worst}");
}

#[test]
fn the_shipped_scenarios_learned_forces_agree_three_ways() {
    // The venting file as `learn` wrote it, and the storm and small-radial forms as
    // `learn` reports them (README), each with a different outside policy: the direct
    // tree evaluation, the in-process evaluator and the native plugin agree to 1e-13,
    // inside the window and outside it (beyond a day, above 800 km).
    let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR"));
    let venting = LearnedFile::load(&root.join("tests/data/learned_example.yaml")).unwrap();
    let mut storm = file(
        vec![("exp(-((t - k0) / k1)^2) * vrel".into(), 2.6e-13)],
        OutsidePolicy::Zero,
    );
    storm.constants = vec![
        ConstantEntry {
            name: "k0".into(),
            value: 50431.0,
            sigma: 20.0,
            unit: Some("s".into()),
        },
        ConstantEntry {
            name: "k1".into(),
            value: 10801.0,
            sigma: 30.0,
            unit: Some("s".into()),
        },
    ];
    storm.checksum = storm.compute_checksum();
    let radial = file(
        vec![("T".into(), 3e-10), ("cos(u) * R".into(), 3e-11)],
        OutsidePolicy::Refuse,
    );
    let reference = Epoch::parse_utc(EPOCH).unwrap();
    let dir = tempfile::tempdir().unwrap();
    let mut pts = states(40);
    pts.push((90_000.0, StateVector::new(7000.0, 0.0, 0.0, 0.0, 7.5, 0.1)));
    pts.push((1000.0, StateVector::new(7300.0, 0.0, 0.0, 0.0, 7.3, 0.1)));
    for (name, f) in [("venting", venting), ("storm", storm), ("radial", radial)] {
        let so = build(&f, name, &dir.path().join(name)).unwrap();
        let native = PluginForce::load(&so, &reference, Some(&f.checksum)).unwrap();
        let inproc = f.force(&reference).unwrap();
        let (nodes, coefs, params) = f.compile().unwrap();
        for (t, x) in &pts {
            let p = Terminals::of_state(*t, x, &ctx());
            let mut tree = nalgebra::Vector3::zeros();
            for (n, c) in nodes.iter().zip(&coefs) {
                let v = n.eval(&p, &params).vector();
                tree += nalgebra::Vector3::new(v[0], v[1], v[2]) * *c;
            }
            let scale = tree.norm().max(1e-30);
            match (native.acceleration(*t, x), inproc.acceleration(*t, x)) {
                (Ok(a), Ok(b)) => {
                    let outside_zero = f.validity.outside == OutsidePolicy::Zero && b.norm() == 0.0;
                    if !outside_zero {
                        assert!((b - tree).norm() <= 1e-13 * scale, "{name} t={t}");
                    }
                    assert!((a - b).norm() <= 1e-13 * scale, "{name} t={t}: {a} vs {b}");
                }
                (Err(_), Err(_)) => assert_eq!(f.validity.outside, OutsidePolicy::Refuse),
                (a, b) => panic!("{name} t={t}: plugin {a:?}, in-process {b:?}"),
            }
        }
    }
}

/// The environments a known model's drag can give the terminals.
fn environments() -> Vec<learned_forces::expr::Environment> {
    use learned_forces::expr::{Altitude, Density, Environment};
    let f = propagator::CentralBody::EARTH_EGM96.flattening;
    vec![
        Environment {
            density: Density::Ussa1976,
            altitude: Altitude::Geodetic { flattening: f },
        },
        Environment {
            density: Density::Exponential {
                rho0_kg_m3: 3.725e-12,
                h0_km: 400.0,
                scale_height_km: 58.515,
            },
            altitude: Altitude::Spherical,
        },
        Environment {
            density: Density::Table,
            altitude: Altitude::Geodetic { flattening: f },
        },
    ]
}

#[test]
fn the_terminals_read_the_known_models_atmosphere_and_altitude() {
    // `rho` and `h` against the host's own drag atmosphere and altitude model, built
    // from a forces.yaml as a user writes it (Context::of_model), for each atmosphere and
    // both altitude models; and ∂alt/∂r (the ellipsoid normal) against differences.
    use propagator::config::ForcesFile;
    let epoch = Epoch::parse_utc(EPOCH).unwrap();
    for (atmosphere, altitude) in [
        ("ussa1976", "geodetic"),
        ("table", "geodetic"),
        (
            "{ exponential: { rho0_kg_m3: 3.725e-12, h0_km: 400.0, scale_height_km: 58.515 } }",
            "spherical",
        ),
    ] {
        let text = format!("gravity: {{ zonal_degree: 2 }}\ndrag: {{ atmosphere: {atmosphere}, cd: 2.2, area_m2: 1.0, mass_kg: 100.0, altitude: {altitude} }}\n");
        let spec = ForcesFile::parse(&text, std::path::Path::new("f.yaml")).unwrap();
        let c = Context::of_model(&spec, std::path::Path::new("f.yaml"), &epoch).unwrap();
        let drag = spec
            .drag
            .as_ref()
            .unwrap()
            .build(
                &spec.central_body,
                std::path::Path::new("f.yaml"),
                &epoch,
                None,
            )
            .unwrap();
        for (t, x) in states(60) {
            let r = nalgebra::Vector3::new(x[0], x[1], x[2]);
            let p = learned_forces::expr::Terminals::of_state(t, &x, &c);
            let h = drag.altitude.altitude_km(&r, &spec.central_body);
            let rho = drag.atmosphere.density_kg_m3(h).unwrap();
            assert!(
                (p.h - h).abs() < 1e-9,
                "{atmosphere} {altitude}: alt {} vs {h}",
                p.h
            );
            assert!(
                rel(p.rho, rho, rho) < 1e-12,
                "{atmosphere}: rho {} vs {rho}",
                p.rho
            );
            let pd = learned_forces::expr::Terminals::of_state_dual(t, &x, &c);
            for j in 0..3 {
                let mut e = nalgebra::Vector3::zeros();
                e[j] = 1e-3;
                let fd = (drag.altitude.altitude_km(&(r + e), &spec.central_body)
                    - drag.altitude.altitude_km(&(r - e), &spec.central_body))
                    / 2e-3;
                assert!(
                    (pd.h.d[j] - fd).abs() < 1e-7,
                    "∂alt/∂r{j}: {} vs {fd}",
                    pd.h.d[j]
                );
            }
        }
    }
    // Without drag the terminals keep the handbook table and spherical altitude.
    let spec = ForcesFile::parse(
        "gravity: { zonal_degree: 2 }\n",
        std::path::Path::new("f.yaml"),
    )
    .unwrap();
    assert_eq!(
        Context::of_model(&spec, std::path::Path::new("f.yaml"), &epoch)
            .unwrap()
            .environment,
        learned_forces::expr::HANDBOOK_ENV
    );
}

#[test]
fn a_plugin_reads_the_same_atmosphere_and_altitude_as_in_process() {
    // Formulas reading `rho` and `h` under each non-default environment: the native
    // plugin (the runtime with the propagator's USSA1976 table and ellipsoid inlined)
    // against the in-process force, values and partials.
    let reference = Epoch::parse_utc(EPOCH).unwrap();
    let dir = tempfile::tempdir().unwrap();
    let terms = vec![
        ("rho * norm(vrel) * vrel".to_string(), -1e3),
        ("exp(-h / 100) * T".to_string(), 1e-9),
        // The smooth step through the plugin's own code for it.
        ("step((h - 500) / 50) * N".to_string(), 1e-9),
    ];
    for (k, env) in environments().into_iter().enumerate() {
        let mut f = file(terms.clone(), OutsidePolicy::Warn);
        f.environment = learned_forces::learned_file::EnvironmentEntry::of(&env);
        assert!(f.environment.is_some());
        f.checksum = f.compute_checksum();
        // The entry survives the file's own round trip.
        let back = LearnedFile::parse(&f.clone().to_yaml()).unwrap();
        assert_eq!(back.environment().unwrap(), env);
        let so = build(&f, "env", &dir.path().join(format!("e{k}"))).unwrap();
        let native = PluginForce::load(&so, &reference, Some(&f.checksum)).unwrap();
        let inproc = f.force(&reference).unwrap();
        let handbook = {
            let mut g = file(terms.clone(), OutsidePolicy::Warn);
            g.checksum = g.compute_checksum();
            g.force(&reference).unwrap()
        };
        let mut differs_from_handbook = false;
        for (t, x) in states(30) {
            let (a, b) = (
                native.acceleration(t, &x).unwrap(),
                inproc.acceleration(t, &x).unwrap(),
            );
            assert!((a - b).norm() <= 1e-13 * b.norm(), "{env:?}: {a} vs {b}");
            let (pa, pb) = (
                native.partials(t, &x).unwrap(),
                inproc.partials(t, &x).unwrap(),
            );
            assert!(
                (pa - pb).abs().max() <= 1e-12 * pb.abs().max(),
                "{env:?} partials"
            );
            let c = handbook.acceleration(t, &x).unwrap();
            differs_from_handbook |= (b - c).norm() > 1e-3 * c.norm();
        }
        // The gate must be able to fail: the environment changes the force.
        assert!(differs_from_handbook, "{env:?} gave the handbook's values");
    }
}

#[test]
fn a_learned_file_with_an_impossible_environment_is_refused() {
    // Checksummed but impossible values (a hand-made file): refused on reading, naming
    // the key, before anything reaches generated code.
    use learned_forces::learned_file::{AltitudeEntry, DensityEntry, EnvironmentEntry};
    let bad = [
        (
            EnvironmentEntry {
                density: DensityEntry::Table,
                altitude: AltitudeEntry::Geodetic,
                flattening: 5.0,
            },
            "flattening",
        ),
        (
            EnvironmentEntry {
                density: DensityEntry::Exponential {
                    rho0_kg_m3: -1.0,
                    h0_km: 400.0,
                    scale_height_km: 60.0,
                },
                altitude: AltitudeEntry::Spherical,
                flattening: 0.0,
            },
            "rho0_kg_m3",
        ),
        (
            EnvironmentEntry {
                density: DensityEntry::Exponential {
                    rho0_kg_m3: 1e-12,
                    h0_km: f64::NAN,
                    scale_height_km: 60.0,
                },
                altitude: AltitudeEntry::Spherical,
                flattening: 0.0,
            },
            "h0_km",
        ),
    ];
    for (entry, key) in bad {
        let mut f = file(vec![("rho * vrel".into(), 1.0)], OutsidePolicy::Warn);
        f.environment = Some(entry);
        let text = f.to_yaml();
        let e = LearnedFile::parse(&text).unwrap_err();
        assert!(e.contains("environment") && e.contains(key), "{e}");
        assert!(build(&f, "bad", &tempfile::tempdir().unwrap().path().join("b")).is_err());
    }
}

#[test]
fn the_plugin_runtime_is_self_contained() {
    // The runtime's `include!`s (terminals, USSA1976 nodes, ellipsoid height) are inlined
    // into the generated crate, which has no path back to this repository.
    let src = learned_forces::codegen::runtime_source();
    assert!(
        !src.contains("include!("),
        "an include! left in the plugin runtime"
    );
    for item in ["pub struct P<N>", "static TABLE", "fn ellipsoid_height"] {
        assert!(src.contains(item), "{item} missing");
    }
}
