//! Hostile inputs for every parser: random bytes and mutated valid files never panic,
//! and errors name the file. (Part of the robustness sweep; seeded, deterministic.)

use learned_forces::learned_file::LearnedFile;
use learned_forces::scenario::ScenarioSpec;
use propagator::config::{ForcesFile, StateFile};
use propagator::ephemeris::{csv, oem, Ephemeris, EphemerisPoint};
use propagator::{CentralBody, Epoch, StateVector};
use rand_chacha::ChaCha8Rng;
use rand_core::{Rng, SeedableRng};
use std::panic::catch_unwind;
use std::path::Path;

fn mutate(rng: &mut ChaCha8Rng, text: &str) -> String {
    let mut chars: Vec<char> = text.chars().collect();
    let alphabet: Vec<char> = "0123456789.-+eE:,[]{}#\n TZ\"'nanNaNinf\u{0}é∞"
        .chars()
        .collect();
    for _ in 0..(1 + rng.next_u64() % 6) {
        if chars.is_empty() {
            chars.push('x');
        }
        let i = (rng.next_u64() as usize) % chars.len();
        match rng.next_u64() % 5 {
            0 => {
                chars.remove(i);
            }
            1 => chars.insert(i, alphabet[(rng.next_u64() as usize) % alphabet.len()]),
            2 => chars[i] = alphabet[(rng.next_u64() as usize) % alphabet.len()],
            3 => {
                // Duplicate or drop a whole line.
                let s: String = chars.iter().collect();
                let mut lines: Vec<&str> = s.lines().collect();
                if !lines.is_empty() {
                    let k = (rng.next_u64() as usize) % lines.len();
                    if rng.next_u64().is_multiple_of(2) {
                        lines.insert(k, lines[k]);
                    } else {
                        lines.remove(k);
                    }
                }
                chars = lines.join("\n").chars().collect();
            }
            _ => {
                let j = (rng.next_u64() as usize) % chars.len();
                chars.swap(i, j);
            }
        }
    }
    chars.into_iter().collect()
}

fn random_bytes(rng: &mut ChaCha8Rng) -> String {
    let n = (rng.next_u64() % 300) as usize;
    let bytes: Vec<u8> = (0..n).map(|_| rng.next_u64() as u8).collect();
    String::from_utf8_lossy(&bytes).into_owned()
}

/// Runs `parse` on 1500 mutations and 300 random strings; no panics; errors name `file`.
fn hammer(
    seed: u64,
    valid: &str,
    file: &str,
    parse: impl Fn(&str) -> Result<(), String> + std::panic::RefUnwindSafe,
) {
    assert!(
        parse(valid).is_ok(),
        "the valid {file} must parse: {:?}",
        parse(valid)
    );
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    for k in 0..1800 {
        let text = if k < 1500 {
            mutate(&mut rng, valid)
        } else {
            random_bytes(&mut rng)
        };
        let r = catch_unwind(|| parse(&text));
        match r {
            Err(_) => panic!("{file}: the parser panicked on {text:?}"),
            Ok(Err(e)) => assert!(
                e.contains(file),
                "{file}: the error does not name the file: {e}"
            ),
            Ok(Ok(())) => {}
        }
    }
}

#[test]
fn csv_and_oem_ephemerides() {
    let e0 = Epoch::parse_utc("2031-05-04T00:00:00Z").unwrap();
    let eph = Ephemeris {
        object_name: "X".into(),
        object_id: "Y".into(),
        points: (0..6)
            .map(|k| EphemerisPoint {
                epoch: e0.plus_seconds(60.0 * k as f64),
                state: StateVector::new(7000.0, k as f64, 0.0, 0.0, 7.5, 0.0),
            })
            .collect(),
    };
    let body = CentralBody::EARTH_EGM96;
    hammer(1, &csv::format_ephemeris(&eph), "arc.csv", |t| {
        let (e, lines) =
            csv::parse_ephemeris(t, Path::new("arc.csv")).map_err(|e| e.to_string())?;
        e.validate(Path::new("arc.csv"), &lines, &body)
            .map_err(|e| e.to_string())
    });
    hammer(2, &oem::format(&eph), "eph.oem", |t| {
        let (e, lines) = oem::parse(t, Path::new("eph.oem")).map_err(|e| e.to_string())?;
        e.validate(Path::new("eph.oem"), &lines, &body)
            .map_err(|e| e.to_string())
    });
}

#[test]
fn forces_state_and_scenario_files() {
    let forces = "central_body: { mu_km3_s2: 398600.4418, radius_km: 6378.1363, rotation_rad_s: 7.292115e-5 }\ngravity: { zonal_degree: 2 }\ndrag:\n  atmosphere: { exponential: { rho0_kg_m3: 3.725e-12, h0_km: 400.0, scale_height_km: 58.515 } }\n  cd: 2.2\n  area_m2: 0.1\n  mass_kg: 10.0\nsrp: { cr: 1.3, area_m2: 0.1, mass_kg: 10.0, shadow: conical }\nthird_body: [sun, moon]\nmaneuvers:\n  - { impulsive: { epoch_utc: \"2031-05-04T15:00:00Z\", dv_rtn_km_s: [0.0, 0.0005, 0.0] } }\nplugins: []\n";
    let epoch = Epoch::parse_utc("2031-05-04T00:00:00Z").unwrap();
    hammer(3, forces, "forces.yaml", |t| {
        let f = ForcesFile::parse(t, Path::new("forces.yaml")).map_err(|e| e.to_string())?;
        f.build(Path::new("forces.yaml"), epoch)
            .map(|_| ())
            .map_err(|e| e.to_string())
    });
    let state = "epoch_utc: \"2031-05-04T12:00:00.000Z\"\nelements: { sma_km: 6798.1363, ecc: 0.0008, inc_deg: 51.6, raan_deg: 120.0, argp_deg: 30.0, true_anomaly_deg: 10.0 }\n";
    hammer(4, state, "state.yaml", |t| {
        StateFile::parse(t, Path::new("state.yaml"), &CentralBody::EARTH_EGM96)
            .map(|_| ())
            .map_err(|e| e.to_string())
    });
    let scenario = std::fs::read_to_string(
        Path::new(env!("CARGO_MANIFEST_DIR")).join("examples/scenarios/venting.yaml"),
    )
    .unwrap();
    hammer(5, &scenario, "venting.yaml", |t| {
        let s = ScenarioSpec::parse(t, Path::new("venting.yaml")).map_err(|e| e.to_string())?;
        // Building the models is part of reading the file (no simulation: that is long).
        s.models(Path::new("venting.yaml"))
            .map(|_| ())
            .map_err(|e| e.to_string())
    });
}

#[test]
fn formulas_and_learned_files() {
    let mut rng = ChaCha8Rng::seed_from_u64(6);
    for text in [
        "exp(-t / k0) * T",
        "cos(u) * R + 2.5e-3 * cross(r, v) / norm(r)^2",
        "rho * norm(vrel) * vrel",
    ] {
        for _ in 0..1500 {
            let m = mutate(&mut rng, text);
            let r = catch_unwind(|| learned_forces::expr::parse(&m).map(|n| n.to_string()));
            assert!(r.is_ok(), "the formula parser panicked on {m:?}");
            if let Ok(Ok(printed)) = r {
                // Whatever parses prints back to something that parses to the same tree.
                let again = learned_forces::expr::parse(&printed).unwrap();
                assert_eq!(again.to_string(), printed);
            }
        }
    }
    // A learned file: every mutation is refused (the checksum covers the content) or parses.
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/data/learned_example.yaml");
    let valid = std::fs::read_to_string(&path).unwrap();
    hammer(7, &valid, "learned.yaml", |t| {
        LearnedFile::parse(t)
            .map(|_| ())
            .map_err(|e| format!("learned.yaml: {e}"))
    });
}
