//! Ephemeris files: CSV and OEM round trips, and the errors for bad files.

use propagator::ephemeris::{Ephemeris, EphemerisPoint};
use propagator::{CentralBody, Epoch, StateVector};

fn sample() -> Ephemeris {
    let e0 = Epoch::parse_utc("2031-05-04T12:00:00.000Z").unwrap();
    let points = (0..50)
        .map(|k| {
            let f = k as f64;
            EphemerisPoint {
                epoch: e0.plus_seconds(60.0 * f + 0.123456),
                // Awkward values: many digits, negative zero is not needed.
                state: StateVector::new(
                    6778.137 + f / 3.0,
                    -1234.5678901234567 * (1.0 + f * 1e-3),
                    1.0 / 3.0 + f,
                    7.5e-1 / 7.0,
                    -7.123456789012345,
                    1e-7 * f,
                ),
            }
        })
        .collect();
    Ephemeris {
        object_name: "KESTREL-3".into(),
        object_id: "2031-042A".into(),
        points,
        segment_starts: vec![],
        frame: Default::default(),
    }
}

#[test]
fn round_trip_is_bit_for_bit_in_both_formats() {
    let dir = tempfile::tempdir().unwrap();
    let eph = sample();
    for name in ["e.csv", "e.oem"] {
        let p = dir.path().join(name);
        eph.save(&p).unwrap();
        let back = Ephemeris::load(&p, &CentralBody::EARTH_EGM96).unwrap();
        assert_eq!(back.points.len(), eph.points.len());
        for (a, b) in eph.points.iter().zip(&back.points) {
            // States exactly; epochs to the printed microsecond.
            assert_eq!(a.state, b.state, "{name}");
            assert!(a.epoch.seconds_since(&b.epoch).abs() < 0.5e-6, "{name}");
            assert_eq!(a.epoch.to_utc_string(), b.epoch.to_utc_string());
        }
        if name.ends_with("oem") {
            assert_eq!(back.object_name, "KESTREL-3");
        }
    }
}

fn load_text(name: &str, text: &str) -> String {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join(name);
    std::fs::write(&p, text).unwrap();
    Ephemeris::load(&p, &CentralBody::EARTH_EGM96)
        .unwrap_err()
        .to_string()
}

const HDR: &str = "epoch_utc,x_km,y_km,z_km,vx_km_s,vy_km_s,vz_km_s\n";

#[test]
fn bad_csv_files_are_named_by_line() {
    let row = |t: &str| format!("2031-05-04T12:{t}Z,7000,0,0,0,7.5,0\n");
    let cases = [
        (
            format!("{HDR}{}{}", row("01:00"), row("00:00")),
            ":3:",
            "earlier",
        ),
        (
            format!("{HDR}{}{}", row("01:00"), row("01:00")),
            ":3:",
            "duplicate",
        ),
        (
            format!("{HDR}2031-05-04T12:00:00Z,7000,0,nan,0,7.5,0\n"),
            ":2:",
            "not finite",
        ),
        (
            format!("{HDR}2031-05-04T12:00:00Z,7000000,0,0,0,7500,0\n"),
            ":2:",
            "metres",
        ),
        (
            format!("{HDR}2031-05-04T12:00:00Z,6000,0,0,0,7.5,0\n"),
            ":2:",
            "inside the Earth",
        ),
        ("epoch_utc,x_m,y_m,z_m\n".to_string(), ":1:", "metres"),
        (
            format!("{HDR}2031-05-04T12:00:00Z,7000,0,0,0,7.5\n"),
            ":2:",
            "fields",
        ),
        (
            format!("{HDR}not-an-epoch,7000,0,0,0,7.5,0\n"),
            ":2:",
            "epoch_utc",
        ),
        (String::new(), "", "empty"),
        (HDR.to_string(), "", "no states"),
    ];
    for (text, line, needle) in cases {
        let e = load_text("arc.csv", &text);
        assert!(
            e.contains(line) && e.contains(needle),
            "expected `{line}` and `{needle}` in: {e}"
        );
        assert!(e.contains("arc.csv"), "{e}");
    }
}

#[test]
fn bad_oem_files_are_refused() {
    let good = propagator::ephemeris::oem::format(&sample());
    let cases = [
        (good.replace("REF_FRAME = GCRF", "REF_FRAME = TOD"), "TOD"),
        (
            good.replace("CENTER_NAME = EARTH", "CENTER_NAME = MARS"),
            "MARS",
        ),
        (
            good.replace("TIME_SYSTEM = UTC", "TIME_SYSTEM = UT1"),
            "UT1",
        ),
        (good.replace("CCSDS_OEM_VERS = 2.0\n", ""), "CCSDS_OEM_VERS"),
        (good.replace("META_STOP", "MEAT_STOP"), "MEAT_STOP"),
        (
            format!("{good}2031-05-04T11:00:00.000000 7000 0 0 0 7.5 0\n"),
            "earlier",
        ),
    ];
    for (text, needle) in cases {
        let e = load_text("e.oem", &text);
        assert!(e.contains(needle), "expected `{needle}` in: {e}");
    }
}

#[test]
fn oem_time_systems_are_converted() {
    // TAI − UTC = 37 s in 2031 (no leap second announced after 2017; hifitime table).
    let text = propagator::ephemeris::oem::format(&sample())
        .replace("TIME_SYSTEM = UTC", "TIME_SYSTEM = TAI");
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("tai.oem");
    std::fs::write(&p, text).unwrap();
    let tai = Ephemeris::load(&p, &CentralBody::EARTH_EGM96).unwrap();
    let dt = sample().points[0].epoch.seconds_since(&tai.points[0].epoch);
    assert!((dt - 37.0).abs() < 1e-6, "{dt}");
}

#[test]
fn csv_with_a_byte_order_mark_quoted_fields_and_crlf_reads_like_plain_csv() {
    // Spreadsheet exports: a UTF-8 BOM, quoted fields, CRLF line ends.
    let dir = tempfile::tempdir().unwrap();
    let plain = dir.path().join("plain.csv");
    sample().save(&plain).unwrap();
    let text = std::fs::read_to_string(&plain).unwrap();
    let quoted: String = text
        .lines()
        .map(|l| {
            l.split(',')
                .map(|f| format!("\"{f}\""))
                .collect::<Vec<_>>()
                .join(",")
        })
        .map(|l| l + "\r\n")
        .collect();
    let odd = dir.path().join("odd.csv");
    std::fs::write(&odd, format!("\u{feff}{quoted}")).unwrap();
    let a = Ephemeris::load(&plain, &CentralBody::EARTH_EGM96).unwrap();
    let b = Ephemeris::load(&odd, &CentralBody::EARTH_EGM96).unwrap();
    assert_eq!(a.points, b.points);
    // An unknown column is named visibly (quoted, escapes shown), never with an invisible
    // character in the message.
    let e = load_text("bad.csv", "\u{200b}epoch_utc,x_km,y_km,z_km\n");
    assert!(e.contains("\\u{200b}"), "{e}");
}

#[test]
fn the_ccsds_standards_example_oem_reads_and_its_mars_centre_is_refused_for_use() {
    // CCSDS 502.0-B-3 Annex G example (tests/data/ccsds/README.md): two segments of four
    // states with comments between, a maneuver between the segments, Mars-centred.
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/data/ccsds/ccsds_oem_502_b3_figG11.oem");
    let text = std::fs::read_to_string(&path).unwrap();
    let m = propagator::ephemeris::oem::read_message(&text, &path).unwrap();
    assert_eq!(m.ephemeris.object_name, "MARS GLOBAL SURVEYOR");
    assert_eq!(m.ephemeris.object_id, "1996-062A");
    assert_eq!(m.center_name.0, "MARS BARYCENTER");
    assert_eq!(m.ref_frames, vec!["EME2000", "EME2000"]);
    assert_eq!(m.creation_date.as_deref(), Some("1996-11-04T17:22:31"));
    assert_eq!(m.ephemeris.points.len(), 8);
    assert_eq!(m.ephemeris.segment_starts, vec![4]);
    let p = &m.ephemeris.points[4];
    assert_eq!(p.epoch.to_utc_string(), "2019-12-28T21:29:07.267000Z");
    assert_eq!(p.state[1], -63.042);
    assert_eq!(p.state[5], -1.041945);
    // For arcwise's use (an Earth-centred trajectory) it is refused, naming the line.
    let e = Ephemeris::load(&path, &CentralBody::EARTH_EGM96)
        .unwrap_err()
        .to_string();
    assert!(e.contains("MARS BARYCENTER") && e.contains(":8:"), "{e}");
}

#[test]
fn day_of_year_epochs_in_an_oem_read_like_calendar_ones() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("e.oem");
    sample().save(&p).unwrap();
    let text = std::fs::read_to_string(&p).unwrap();
    // 2031-05-04 is day 124 of 2031.
    let doy = dir.path().join("doy.oem");
    std::fs::write(&doy, text.replace("2031-05-04T", "2031-124T")).unwrap();
    let a = Ephemeris::load(&p, &CentralBody::EARTH_EGM96).unwrap();
    let b = Ephemeris::load(&doy, &CentralBody::EARTH_EGM96).unwrap();
    assert_eq!(a.points, b.points);
    assert!(
        text.contains("\nCREATION_DATE = "),
        "CREATION_DATE is required"
    );
}

#[test]
fn oem_states_in_itrf_and_eme2000_are_rotated_to_gcrf_on_reading() {
    // The same states written in three frames read back as the same GCRF states: ITRF
    // through the IAU 2006/2000A chain (checked against pyerfa in earth_orientation.rs),
    // EME2000 through the frame bias (IERS Conventions 2010 §5.5.4: ~23 mas, 0.8 m at
    // 7000 km, from memory).
    use propagator::earth::{orientation::eme2000_to_gcrf, EarthOrientation};
    let eph = sample();
    let gcrf_text = propagator::ephemeris::oem::format(&eph);
    let earth = EarthOrientation::shipped().unwrap();
    let bias_inv = eme2000_to_gcrf().transpose();
    let rewrite = |frame: &str, f: &dyn Fn(&propagator::ephemeris::EphemerisPoint) -> [f64; 6]| {
        let mut e = eph.clone();
        for p in &mut e.points {
            p.state = propagator::StateVector::from(f(p));
        }
        propagator::ephemeris::oem::format(&e)
            .replace("REF_FRAME = GCRF", &format!("REF_FRAME = {frame}"))
    };
    let itrf = rewrite("ITRF2014", &|p| {
        let r = nalgebra::Vector3::new(p.state[0], p.state[1], p.state[2]);
        let v = nalgebra::Vector3::new(p.state[3], p.state[4], p.state[5]);
        let (ri, vi) = earth
            .at(p.epoch.tt_seconds_since_j2000())
            .state_to_itrf(&r, &v);
        [ri[0], ri[1], ri[2], vi[0], vi[1], vi[2]]
    });
    let eme = rewrite("EME2000", &|p| {
        let r = bias_inv * nalgebra::Vector3::new(p.state[0], p.state[1], p.state[2]);
        let v = bias_inv * nalgebra::Vector3::new(p.state[3], p.state[4], p.state[5]);
        [r[0], r[1], r[2], v[0], v[1], v[2]]
    });
    let path = std::path::Path::new("x.oem");
    let (g, _) = propagator::ephemeris::oem::parse(&gcrf_text, path).unwrap();
    for text in [&itrf, &eme] {
        let (e, _) = propagator::ephemeris::oem::parse(text, path).unwrap();
        for (a, b) in e.points.iter().zip(&g.points) {
            let dr = (a.state.fixed_rows::<3>(0) - b.state.fixed_rows::<3>(0)).norm();
            let dv = (a.state.fixed_rows::<3>(3) - b.state.fixed_rows::<3>(3)).norm();
            // The file carries 6 decimals of km and 9 of km/s: rounding only.
            assert!(dr < 2e-6 && dv < 2e-9, "{dr} km, {dv} km/s");
        }
    }
    // And the frames matter: read as if GCRF, the EME2000 states are ~0.8 m off at LEO.
    let (wrong, _) = propagator::ephemeris::oem::parse(
        &eme.replace("REF_FRAME = EME2000", "REF_FRAME = GCRF"),
        path,
    )
    .unwrap();
    let off =
        (wrong.points[0].state.fixed_rows::<3>(0) - g.points[0].state.fixed_rows::<3>(0)).norm();
    assert!(off > 3e-4 && off < 2e-3, "{off} km");
}
