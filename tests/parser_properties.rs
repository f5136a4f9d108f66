//! Property tests of every parser (proptest, with a fixed seed so that a run is
//! reproducible): arbitrary text never panics and is refused with the file named;
//! field-level edits of valid files likewise; and what is accepted is physically sound
//! (an accepted arc is sorted, finite, above the surface and has σ > 0; an accepted
//! force model has positive, finite spacecraft numbers).

mod common;
use common::parsers::{Input, EPOCH};
use proptest::collection::vec;
use proptest::prelude::*;
use proptest::test_runner::{Config, RngAlgorithm, TestRng, TestRunner};
use std::cell::Cell;

fn runner(cases: u32, seed: u8) -> TestRunner {
    let config = Config {
        cases,
        failure_persistence: None,
        ..Config::default()
    };
    TestRunner::new_with_rng(
        config,
        TestRng::from_seed(RngAlgorithm::ChaCha, &[seed; 32]),
    )
}

/// A number as a file might carry it, ordinary or hostile.
fn number() -> impl Strategy<Value = String> {
    prop_oneof![
        4 => (-1e4..1e4f64).prop_map(|x| format!("{x}")),
        1 => (0.0..1e9f64).prop_map(|x| format!("{x:e}")),
        1 => prop::sample::select(vec![
            "nan", "NaN", ".nan", "inf", "-inf", ".inf", "-.inf", "1e309", "-1e309", "0", "-0",
            "1e-320", "7000000", "6378.1363", "", " ", "1,5", "0x10", "1e", "--1",
        ])
        .prop_map(String::from),
    ]
}

/// A token to put in place of one field of a line.
fn token() -> impl Strategy<Value = String> {
    prop_oneof![
        3 => number(),
        1 => prop::sample::select(vec![
            "2031-05-04T00:00:00Z", "2031-05-03T23:59:59Z", "2031-02-30T00:00:00Z",
            "2031-05-04T24:00:00Z", "2031-05-04", "1899-01-01T00:00:00Z", "{", "}", "[", "]",
            ":", ",", "\"", "'", "#", "- x", "null", "~", "true", "é∞", "\u{0}",
            "exp(", "cross(R)", "k9", "1/0",
        ])
        .prop_map(String::from),
    ]
}

/// `text` with field `field` of line `line` (both taken modulo what exists) replaced.
fn edit(text: &str, line: usize, field: usize, with: &str) -> String {
    let mut lines: Vec<String> = text.lines().map(String::from).collect();
    if lines.is_empty() {
        return with.to_string();
    }
    let l = line % lines.len();
    // Fields: runs between separators of CSV, YAML and formula text.
    let target = &lines[l];
    let cuts: Vec<usize> = std::iter::once(0)
        .chain(
            target
                .char_indices()
                .filter(|(_, c)| ",: []{}()*+/".contains(*c))
                .map(|(i, c)| i + c.len_utf8()),
        )
        .collect();
    let start = cuts[field % cuts.len()];
    let end = target[start..]
        .char_indices()
        .find(|(_, c)| ",: []{}()*+/".contains(*c))
        .map(|(i, _)| start + i)
        .unwrap_or(target.len());
    lines[l] = format!("{}{}{}", &target[..start], with, &target[end..]);
    lines.join("\n") + "\n"
}

#[test]
fn arbitrary_text_is_parsed_or_refused_naming_the_file() {
    let text = prop_oneof![
        any::<String>(),
        vec(any::<u8>(), 0..400).prop_map(|b| String::from_utf8_lossy(&b).into_owned()),
    ];
    for (k, kind) in Input::ALL.into_iter().enumerate() {
        runner(300, k as u8)
            .run(&text, |t| {
                kind.check(&t);
                Ok(())
            })
            .unwrap();
    }
}

#[test]
fn edited_fields_of_valid_files_are_parsed_or_refused_naming_the_file() {
    let edits = vec((any::<usize>(), any::<usize>(), token()), 1..4);
    for (k, kind) in Input::ALL.into_iter().enumerate() {
        let valid = kind.valid_example();
        runner(400, 100 + k as u8)
            .run(&edits, |es| {
                let mut t = valid.clone();
                for (line, field, with) in &es {
                    t = edit(&t, *line, *field, with);
                }
                kind.check(&t);
                Ok(())
            })
            .unwrap();
    }
}

#[test]
fn an_accepted_arc_is_sorted_finite_above_the_surface_with_positive_sigma() {
    use learned_forces::arc::{Arc, ArcDefaults};
    use propagator::{CentralBody, Epoch};
    let e0 = Epoch::parse_utc(EPOCH).unwrap();
    // Rows: seconds after the previous row (zero and negative included), position (km,
    // from radius and direction, or a hostile number in place of one component), σ.
    let component = |k: usize| {
        prop_oneof![
            6 => (6400.0..45000.0f64, -std::f64::consts::PI..std::f64::consts::PI, -1.5..1.5f64).prop_map(move |(r, lon, lat)| {
                let c = [lat.cos() * lon.cos(), lat.cos() * lon.sin(), lat.sin()];
                [r * c[0], r * c[1], r * c[2]].map(|x| format!("{x}"))
            }),
            1 => number().prop_map(move |n| {
                let mut c = ["7000".to_string(), "0".into(), "0".into()];
                c[k % 3] = n;
                c
            }),
        ]
    };
    let row = (
        prop_oneof![9 => 1i64..120, 1 => -60i64..=0],
        (0usize..3).prop_flat_map(component),
        prop_oneof![6 => (1e-4..1.0f64).prop_map(|x| format!("{x}")), 1 => number()],
    );
    let body = CentralBody::EARTH_EGM96;
    let (accepted, refused) = (Cell::new(0), Cell::new(0));
    runner(600, 7)
        .run(&vec(row, 1..12), |rows| {
            let mut text = String::from("epoch_utc,x_km,y_km,z_km,sigma_km\n");
            let mut t = 0i64;
            for (dt, [x, y, z], s) in &rows {
                t += dt;
                text += &format!(
                    "{},{x},{y},{z},{s}\n",
                    e0.plus_seconds(t as f64).to_utc_string()
                );
            }
            match Arc::parse(
                &text,
                std::path::Path::new("arc.csv"),
                ArcDefaults::default(),
                &body,
            ) {
                Ok(arc) => {
                    accepted.set(accepted.get() + 1);
                    for w in arc.observations.windows(2) {
                        prop_assert!(w[1].epoch.seconds_since(&w[0].epoch) > 0.0, "{text}");
                    }
                    for o in &arc.observations {
                        // Without sites no measurement file is accepted: states only.
                        let Some(o) = o.as_state() else {
                            return Err(TestCaseError::fail(format!(
                                "a measurement without sites: {text}"
                            )));
                        };
                        prop_assert!(o.r_km.iter().all(|c| c.is_finite()), "{text}");
                        prop_assert!(o.r_km.norm() > body.radius_km - 30.0, "{text}");
                        prop_assert!(o.r_km.norm() < 1e6, "{text}");
                        prop_assert!(o.sigma_km > 0.0 && o.sigma_km.is_finite(), "{text}");
                    }
                }
                Err(e) => {
                    refused.set(refused.get() + 1);
                    let e = e.to_string();
                    // `arc.csv:LINE: …` for a bad row; the file alone for a whole-file fault.
                    let named_line = e
                        .strip_prefix("arc.csv:")
                        .is_some_and(|r| r.starts_with(|c: char| c.is_ascii_digit()));
                    prop_assert!(
                        named_line || e.contains("no observations"),
                        "no line named: {e}"
                    );
                }
            }
            Ok(())
        })
        .unwrap();
    // Both branches were exercised, so the property has teeth.
    assert!(
        accepted.get() > 50 && refused.get() > 50,
        "{accepted:?} {refused:?}"
    );
}

#[test]
fn an_accepted_force_model_has_positive_finite_spacecraft_numbers() {
    use propagator::config::ForcesFile;
    use propagator::Epoch;
    let epoch = Epoch::parse_utc(EPOCH).unwrap();
    let value = prop_oneof![3 => (0.01..100.0f64).prop_map(|x| format!("{x}")), 2 => number()];
    let inputs = (
        value.clone(),
        value.clone(),
        value.clone(),
        value.clone(),
        value,
    );
    let (accepted, refused) = (Cell::new(0), Cell::new(0));
    runner(500, 9)
        .run(&inputs, |(cd, area, mass, cr, rho0)| {
            let text = format!(
                "gravity: {{ zonal_degree: 2 }}\ndrag:\n  atmosphere: {{ exponential: {{ rho0_kg_m3: {rho0}, h0_km: 400.0, scale_height_km: 58.5 }} }}\n  cd: {cd}\n  area_m2: {area}\n  mass_kg: {mass}\nsrp: {{ cr: {cr}, area_m2: {area}, mass_kg: {mass} }}\n"
            );
            let path = std::path::Path::new("forces.yaml");
            let built = ForcesFile::parse(&text, path).and_then(|f| f.build(path, epoch));
            let physical = |s: &str| s.trim().parse::<f64>().is_ok_and(|x| x.is_finite() && x > 0.0);
            match built {
                Ok(_) => {
                    accepted.set(accepted.get() + 1);
                    prop_assert!(
                        [&cd, &area, &mass, &cr, &rho0].iter().all(|s| physical(s)),
                        "accepted a non-physical model:\n{text}"
                    )
                }
                Err(e) => {
                    refused.set(refused.get() + 1);
                    prop_assert!(e.to_string().contains("forces.yaml"), "{e}")
                }
            }
            Ok(())
        })
        .unwrap();
    assert!(
        accepted.get() > 50 && refused.get() > 50,
        "{accepted:?} {refused:?}"
    );
}

#[test]
fn random_formulas_print_and_parse_back_to_the_same_tree() {
    use rand_chacha::ChaCha8Rng;
    use rand_core::SeedableRng;
    runner(500, 11)
        .run(&(any::<u64>(), 1usize..5), |(seed, depth)| {
            let mut rng = ChaCha8Rng::seed_from_u64(seed);
            let tree = learned_forces::expr::random::vector_tree(&mut rng, depth);
            let text = tree.to_string();
            let back = learned_forces::expr::parse(&text)
                .map_err(|e| TestCaseError::fail(format!("{text:?} does not parse back: {e}")))?;
            prop_assert_eq!(&back, &tree, "{}", text);
            Input::Formula.check(&text);
            Ok(())
        })
        .unwrap();
}

#[test]
fn an_accepted_learned_file_has_finite_numbers_and_an_ordered_window() {
    use learned_forces::learned_file::LearnedFile;
    let valid = Input::LearnedResealed.valid_example();
    let edits = vec((any::<usize>(), any::<usize>(), number()), 1..3);
    let (accepted, refused) = (Cell::new(0), Cell::new(0));
    runner(2500, 13)
        .run(&edits, |es| {
            let mut t = valid.clone();
            for (line, field, with) in &es {
                t = edit(&t, *line, *field, with);
            }
            // Resealed, so the mutation reaches the checks behind the checksum.
            let Ok(mut f) = serde_yaml::from_str::<LearnedFile>(&t) else {
                return Ok(());
            };
            match LearnedFile::parse(&f.to_yaml()) {
                Ok(f) => {
                    accepted.set(accepted.get() + 1);
                    let v = &f.validity;
                    let numbers = [
                        f.earth.radius_km,
                        f.earth.rotation_rad_s,
                        v.min_altitude_km,
                        v.max_altitude_km,
                        v.time_margin_s,
                        v.altitude_margin_km,
                    ];
                    prop_assert!(numbers.iter().all(|x| x.is_finite()), "{t}");
                    prop_assert!(v.min_altitude_km <= v.max_altitude_km, "{t}");
                    prop_assert!(
                        f.terms
                            .iter()
                            .all(|k| k.coefficient.is_finite() && k.sigma >= 0.0),
                        "{t}"
                    );
                }
                Err(_) => refused.set(refused.get() + 1),
            }
            Ok(())
        })
        .unwrap();
    assert!(
        accepted.get() > 100 && refused.get() > 100,
        "{accepted:?} {refused:?}"
    );
}
