//! Every input parser of arcwise behind one signature, shared by the property tests
//! (`tests/parser_properties.rs`), the seeded mutation tests (`tests/hostile_inputs.rs`)
//! and the cargo-fuzz targets (`fuzz/`): text in; `Ok`, or an error that names the file.
//!
//! A parser that panics, or returns an error that does not say which file (or, for a
//! formula, where in the text) is wrong, fails the check of [`Input::check`].

#![allow(dead_code)] // each test crate uses a different part

use learned_forces::arc::{Arc, ArcDefaults};
use learned_forces::learned_file::LearnedFile;
use learned_forces::scenario::ScenarioSpec;
use propagator::config::{ForcesFile, StateFile};
use propagator::ephemeris::{csv, oem, Ephemeris, EphemerisPoint};
use propagator::{CentralBody, Epoch, StateVector};
use std::path::Path;

/// One kind of input file (or text) arcwise reads.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Input {
    /// An observation arc in CSV (`learn`, `fit`, `rank`, `check`).
    ArcCsv,
    /// An observation arc or ephemeris in CCSDS OEM.
    ArcOem,
    /// An ephemeris in CSV (`propagate --from`, `screen` secondaries).
    EphemerisCsv,
    /// `forces.yaml`.
    Forces,
    /// `STATE.yaml`.
    State,
    /// A `simulate` scenario.
    Scenario,
    /// A learned-force file, checksum and all.
    Learned,
    /// A learned-force file whose checksum is recomputed before reading, so that the
    /// mutations reach the checks behind the checksum (formulas, constants, validity).
    LearnedResealed,
    /// One term's formula text.
    Formula,
    /// A `rank` hypotheses file (for a 1-day arc from [`EPOCH`]).
    Hypotheses,
    /// An IERS Earth-orientation file (`earth_orientation: { file: … }`).
    Eop,
    /// An SP3 precise-orbit file, one satellite taken as an arc (`--object G05`).
    Sp3,
    /// A space-weather table (`nrlmsise00: { space_weather: … }`).
    SpaceWeather,
    /// A CCSDS Tracking Data Message (KVN).
    Tdm,
    /// A sites file (tracking sensors).
    Sites,
    /// Measurements in the measurement CSV layout, joined to the radar campaign's sites.
    Measurements,
}

/// The epoch of the examples.
pub const EPOCH: &str = "2031-05-04T00:00:00Z";

impl Input {
    /// Every kind.
    pub const ALL: [Input; 16] = [
        Input::ArcCsv,
        Input::ArcOem,
        Input::EphemerisCsv,
        Input::Forces,
        Input::State,
        Input::Scenario,
        Input::Learned,
        Input::LearnedResealed,
        Input::Formula,
        Input::Hypotheses,
        Input::Eop,
        Input::Sp3,
        Input::SpaceWeather,
        Input::Tdm,
        Input::Sites,
        Input::Measurements,
    ];

    /// The file name errors must carry.
    pub fn file_name(self) -> &'static str {
        match self {
            Input::ArcCsv => "arc.csv",
            Input::ArcOem => "arc.oem",
            Input::EphemerisCsv => "eph.csv",
            Input::Forces => "forces.yaml",
            Input::State => "state.yaml",
            Input::Scenario => "scenario.yaml",
            Input::Learned | Input::LearnedResealed => "learned.yaml",
            Input::Formula => "formula",
            Input::Hypotheses => "hyp.yaml",
            Input::Eop => "eop.txt",
            Input::Sp3 => "orbit.sp3",
            Input::SpaceWeather => "space_weather.csv",
            Input::Tdm => "tracking.tdm",
            Input::Sites => "sites.yaml",
            Input::Measurements => "tracking.csv",
        }
    }

    /// A valid example of this kind.
    pub fn valid_example(self) -> String {
        match self {
            Input::ArcCsv => {
                let mut s = String::from("epoch_utc,x_km,y_km,z_km,sigma_km\n");
                for p in example_ephemeris().points {
                    s += &format!(
                        "{},{},{},{},0.005\n",
                        p.epoch.to_utc_string(),
                        p.state[0],
                        p.state[1],
                        p.state[2]
                    );
                }
                s
            }
            Input::ArcOem => oem::format(&example_ephemeris()),
            Input::EphemerisCsv => csv::format_ephemeris(&example_ephemeris()),
            Input::Forces => FORCES.into(),
            Input::State => STATE.into(),
            Input::Scenario => include_str!("../../examples/scenarios/venting.yaml").into(),
            Input::Learned | Input::LearnedResealed => {
                include_str!("../data/learned_example.yaml").into()
            }
            Input::Formula => {
                "cos(u) * R + 2.5e-3 * cross(r, v) / norm(r)^2 + exp(-t / k0) * T".into()
            }
            Input::Hypotheses => include_str!("../../examples/hypotheses/maneuver_day.yaml").into(),
            Input::Eop => include_str!("../data/eop/finals2000A_2021-04.txt").into(),
            Input::Tdm => include_str!("../data/ccsds/ccsds_tdm_503_b2_figE9.tdm").into(),
            Input::Sites => include_str!("../../examples/sites/three_sites.yaml").into(),
            Input::Measurements => include_str!("../../examples/tracking/radar_pass.csv").into(),
            Input::SpaceWeather => {
                include_str!("../../examples/space_weather/storm_ap200.csv").into()
            }
            Input::Sp3 => include_str!("../data/real/grg21553_18h-22h30.sp3")
                .lines()
                .take(200)
                .collect::<Vec<_>>()
                .join("\n"),
        }
    }

    /// Parses `text` as this kind (with the checks the commands make on reading).
    pub fn parse(self, text: &str) -> Result<(), String> {
        let path = Path::new(self.file_name());
        let body = CentralBody::EARTH_EGM96;
        let epoch = Epoch::parse_utc(EPOCH).map_err(|e| e.to_string())?;
        let s = |e: &dyn std::fmt::Display| e.to_string();
        match self {
            Input::ArcCsv | Input::ArcOem => Arc::parse(text, path, ArcDefaults::default(), &body)
                .map(|_| ())
                .map_err(|e| s(&e)),
            Input::EphemerisCsv => {
                let (e, lines) = csv::parse_ephemeris(text, path).map_err(|e| s(&e))?;
                e.validate(path, &lines, &body).map_err(|e| s(&e))
            }
            Input::Forces => {
                let f = ForcesFile::parse(text, path).map_err(|e| s(&e))?;
                f.build(path, epoch).map(|_| ()).map_err(|e| s(&e))
            }
            Input::State => StateFile::parse(text, path, &body)
                .map(|_| ())
                .map_err(|e| s(&e)),
            Input::Scenario => {
                let sc = ScenarioSpec::parse(text, path).map_err(|e| s(&e))?;
                // Building the models is part of reading the file (no simulation: long).
                sc.models(path).map(|_| ()).map_err(|e| s(&e))
            }
            Input::Learned => learned(text, &epoch),
            Input::LearnedResealed => {
                // Text that is not a learned file at all fails here, as it would anyway.
                let Ok(mut f) = serde_yaml::from_str::<LearnedFile>(text) else {
                    return learned(text, &epoch);
                };
                learned(&f.to_yaml(), &epoch)
            }
            Input::Hypotheses => {
                learned_forces::learn::hypotheses::parse_hypotheses(text, path, &epoch, 86400.0)
                    .map(|_| ())
            }
            Input::Eop => propagator::earth::EopTable::parse(text, self.file_name()).map(|_| ()),
            Input::Sites => propagator::tracking::sites_file::parse(text, path).map(|_| ()),
            Input::Measurements => {
                let sites = propagator::tracking::sites_file::parse(
                    include_str!("../../examples/sites/radar_campaign.yaml"),
                    Path::new("radar_campaign.yaml"),
                )?;
                let defaults = ArcDefaults {
                    sites: Some(sites),
                    ..ArcDefaults::default()
                };
                Arc::parse(text, path, defaults, &body)
                    .map(|_| ())
                    .map_err(|e| s(&e))
            }
            Input::Tdm => propagator::tracking::tdm::read(text, path)
                .map(|_| ())
                .map_err(|e| e.to_string()),
            Input::SpaceWeather => propagator::atmosphere::space_weather::SpaceWeatherTable::parse(
                text,
                self.file_name(),
            )
            .map(|_| ()),
            Input::Sp3 => {
                let defaults = ArcDefaults {
                    object: Some("G05".into()),
                    ..ArcDefaults::default()
                };
                Arc::parse(text, path, defaults, &body)
                    .map(|_| ())
                    .map_err(|e| s(&e))
            }
            Input::Formula => match learned_forces::expr::parse(text) {
                Ok(node) => {
                    // Whatever parses prints back to text that parses to the same tree.
                    let printed = node.to_string();
                    let again = learned_forces::expr::parse(&printed).unwrap_or_else(|e| {
                        panic!("{text:?} printed as {printed:?}, which does not parse: {e}")
                    });
                    assert_eq!(again.to_string(), printed, "round trip of {text:?}");
                    Ok(())
                }
                Err(e) => {
                    assert!(
                        e.position <= text.chars().count(),
                        "error position {} beyond the text {text:?}",
                        e.position
                    );
                    Err(format!("formula: {e}"))
                }
            },
        }
    }

    /// Parses `text` and panics when the parser panicked or its error does not name the
    /// file: the property every parser must have.
    pub fn check(self, text: &str) {
        let r = std::panic::catch_unwind(|| self.parse(text));
        match r {
            Err(_) => panic!("{}: the parser panicked on {text:?}", self.file_name()),
            Ok(Err(e)) => assert!(
                e.contains(self.file_name()),
                "{}: the error does not name the file: {e}",
                self.file_name()
            ),
            Ok(Ok(())) => {}
        }
    }
}

/// A learned file as `check`/`build`/`plugins:` read it: parsed, checked, compiled.
fn learned(text: &str, epoch: &Epoch) -> Result<(), String> {
    let err = |e: String| format!("learned.yaml: {e}");
    let f = LearnedFile::parse(text).map_err(err)?;
    f.force(epoch).map(|_| ()).map_err(err)
}

fn example_ephemeris() -> Ephemeris {
    let e0 = Epoch::parse_utc(EPOCH).unwrap_or_else(|e| panic!("{e}"));
    Ephemeris {
        object_name: "FUZZ-1".into(),
        object_id: "2031-999A".into(),
        segment_starts: vec![],
        frame: Default::default(),
        points: (0..6)
            .map(|k| {
                let a = 0.0011 * 60.0 * k as f64;
                EphemerisPoint {
                    epoch: e0.plus_seconds(60.0 * k as f64),
                    state: StateVector::new(
                        6878.0 * a.cos(),
                        6878.0 * a.sin(),
                        0.0,
                        -7.6 * a.sin(),
                        7.6 * a.cos(),
                        0.0,
                    ),
                }
            })
            .collect(),
    }
}

const FORCES: &str = "central_body: { mu_km3_s2: 398600.4418, radius_km: 6378.1363, rotation_rad_s: 7.292115e-5 }\ngravity: { zonal_degree: 2 }\ndrag:\n  atmosphere: { exponential: { rho0_kg_m3: 3.725e-12, h0_km: 400.0, scale_height_km: 58.515 } }\n  cd: 2.2\n  area_m2: 0.1\n  mass_kg: 10.0\nsrp: { cr: 1.3, area_m2: 0.1, mass_kg: 10.0, shadow: conical }\nthird_body: [sun, moon]\nmaneuvers:\n  - { impulsive: { epoch_utc: \"2031-05-04T15:00:00Z\", dv_rtn_km_s: [0.0, 0.0005, 0.0] } }\nplugins: []\n";

const STATE: &str = "epoch_utc: \"2031-05-04T12:00:00.000Z\"\nelements: { sma_km: 6798.1363, ecc: 0.0008, inc_deg: 51.6, raan_deg: 120.0, argp_deg: 30.0, true_anomaly_deg: 10.0 }\n";
