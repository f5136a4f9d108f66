//! The bad-input matrix: every command, fed each kind of bad input it reads (missing,
//! empty, wrong columns, metres for km, NaN and infinities, unsorted and duplicate epochs,
//! inside the Earth, hyperbolic elements, an arc of two points, zero σ, a tampered
//! learned file, a plugin that returns NaN, …), must exit 2 with one short message that
//! names the culprit, and leave no output file behind. Each command is first run once on
//! the good inputs, so that a refusal in the matrix is the bad input's doing.

mod common;
use common::{arcwise, c_force_source, c_plugin, write};
use std::path::{Path, PathBuf};

/// What a command reads.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Role {
    Arc,
    Forces,
    State,
    Learned,
    Scenario,
    Hypotheses,
    Secondaries,
    /// Tracking measurements (a TDM), read with the sites file.
    Tracking,
    Sites,
}

/// The inputs of one run: a path per role.
#[derive(Clone)]
struct Inputs {
    arc: PathBuf,
    forces: PathBuf,
    state: PathBuf,
    learned: PathBuf,
    scenario: PathBuf,
    hypotheses: PathBuf,
    secondaries: PathBuf,
    tracking: PathBuf,
    sites: PathBuf,
}

impl Inputs {
    fn with(&self, role: Role, path: &Path) -> Inputs {
        let mut i = self.clone();
        let p = path.to_path_buf();
        match role {
            Role::Arc => i.arc = p,
            Role::Forces => i.forces = p,
            Role::State => i.state = p,
            Role::Learned => i.learned = p,
            Role::Scenario => i.scenario = p,
            Role::Hypotheses => i.hypotheses = p,
            Role::Secondaries => i.secondaries = p,
            Role::Tracking => i.tracking = p,
            Role::Sites => i.sites = p,
        }
        i
    }
}

/// Every command, the roles it reads, and its arguments (outputs go into `out`).
fn commands() -> Vec<(&'static str, Vec<Role>)> {
    use Role::*;
    vec![
        ("propagate", vec![Forces, State]),
        ("simulate", vec![Scenario]),
        ("fit", vec![Arc, Forces]),
        ("learn", vec![Arc, Forces]),
        ("build", vec![Learned]),
        ("check", vec![Learned, Forces, Arc]),
        ("screen", vec![State, Secondaries, Forces]),
        ("rank", vec![Arc, Forces, Hypotheses]),
        // `fit` of a tracking arc: measurements and the sites that made them.
        ("fit-tracking", vec![Tracking, Sites]),
    ]
}

fn args(command: &str, i: &Inputs, out: &Path) -> Vec<String> {
    let s = |p: &Path| p.display().to_string();
    let o = |name: &str| s(&out.join(name));
    let v: Vec<String> = match command {
        "propagate" => vec![
            "--forces".into(),
            s(&i.forces),
            "--state".into(),
            s(&i.state),
            "--to".into(),
            "2031-05-05T01:00:00Z".into(),
            "--step".into(),
            "60".into(),
            "--out".into(),
            o("p.csv"),
            "--report".into(),
            o("p.json"),
        ],
        "simulate" => vec![s(&i.scenario), "--out".into(), o("sim")],
        "fit" => vec![
            "--arc".into(),
            s(&i.arc),
            "--forces".into(),
            s(&i.forces),
            "--report".into(),
            o("f.json"),
            "--plot".into(),
            o("f.svg"),
        ],
        "learn" => vec![
            "--arc".into(),
            s(&i.arc),
            "--forces".into(),
            s(&i.forces),
            "--out".into(),
            o("l.yaml"),
            "--report".into(),
            o("l.json"),
            "--generations".into(),
            "1".into(),
            "--population".into(),
            "8".into(),
        ],
        "build" => vec![s(&i.learned), "--out".into(), o("libx.so")],
        "check" => vec![
            "--learned".into(),
            s(&i.learned),
            "--forces".into(),
            s(&i.forces),
            "--arc".into(),
            s(&i.arc),
            "--report".into(),
            o("c.json"),
        ],
        "screen" => vec![
            "--primary".into(),
            s(&i.state),
            "--secondaries".into(),
            s(&i.secondaries),
            "--forces".into(),
            s(&i.forces),
            "--from".into(),
            "2031-05-05T00:00:00Z".into(),
            "--to".into(),
            "2031-05-05T01:00:00Z".into(),
            "--threshold-km".into(),
            "5".into(),
            "--report".into(),
            o("s.json"),
        ],
        "rank" => vec![
            "--arc".into(),
            s(&i.arc),
            "--forces".into(),
            s(&i.forces),
            "--hypotheses".into(),
            s(&i.hypotheses),
            "--report".into(),
            o("r.json"),
        ],
        "fit-tracking" => {
            return [
                "fit",
                "--arc",
                &s(&i.tracking),
                "--sites",
                &s(&i.sites),
                "--forces",
                &s(&i.forces),
                "--report",
                &o("t.json"),
                "--plot",
                &o("t.svg"),
            ]
            .map(String::from)
            .to_vec()
        }
        _ => unreachable!(),
    };
    std::iter::once(command.to_string()).chain(v).collect()
}

/// One bad input: its role, a label, the file, and a word the message must contain.
struct Bad {
    role: Role,
    what: &'static str,
    path: PathBuf,
    needle: String,
}

/// The good inputs, written into `d`: a 2-hour J2 arc from the learned example's end
/// state, the same trajectory as an OEM secondary, and so on.
fn good_inputs(d: &Path) -> Inputs {
    let root = Path::new(env!("CARGO_MANIFEST_DIR"));
    let learned_src = root.join("tests/data/learned_example.yaml");
    let learned = d.join("learned.yaml");
    std::fs::copy(&learned_src, &learned).unwrap();
    let lf = learned_forces::learned_file::LearnedFile::load(&learned).unwrap();
    let e = &lf.state_at_end;
    let state = write(
        d,
        "state.yaml",
        &format!(
            "epoch_utc: \"{}\"\nr_km: [{}, {}, {}]\nv_km_s: [{}, {}, {}]\n",
            e.epoch_utc, e.r_km[0], e.r_km[1], e.r_km[2], e.v_km_s[0], e.v_km_s[1], e.v_km_s[2]
        ),
    );
    let forces = write(d, "forces.yaml", "gravity: { zonal_degree: 2 }\n");
    let arc = d.join("arc.csv");
    let secondaries = d.join("secondary.oem");
    for out in [&arc, &secondaries] {
        let (code, _, err) = arcwise(&[
            "propagate",
            "--forces",
            forces.to_str().unwrap(),
            "--state",
            state.to_str().unwrap(),
            "--to",
            "2031-05-05T02:00:00Z",
            "--step",
            "60",
            "--out",
            out.to_str().unwrap(),
        ]);
        assert_eq!(code, 0, "{err}");
    }
    let hypotheses = write(
        d,
        "hyp.yaml",
        "hypotheses:\n  - no_maneuver\n  - continuous_along_track\n",
    );
    // A radar day (three sites, 2026: inside the shipped Earth-orientation table).
    let sites = root.join("examples/sites/radar_campaign.yaml");
    let trk = d.join("trk");
    let (code, _, err) = arcwise(&[
        "simulate",
        root.join("examples/scenarios/radar_quiet.yaml")
            .to_str()
            .unwrap(),
        "--sites",
        sites.to_str().unwrap(),
        "--out",
        trk.to_str().unwrap(),
    ]);
    assert_eq!(code, 0, "{err}");
    Inputs {
        arc,
        forces,
        state,
        learned,
        scenario: root.join("examples/scenarios/quiet.yaml"),
        hypotheses,
        secondaries,
        tracking: trk.join("train.tdm"),
        sites,
    }
}

fn bad_inputs(d: &Path, good: &Inputs) -> Vec<Bad> {
    use Role::*;
    let read = |p: &Path| std::fs::read_to_string(p).unwrap();
    let arc = read(&good.arc);
    let arc_lines: Vec<&str> = arc.lines().collect();
    let header = arc_lines[0];
    let rows = &arc_lines[1..];
    let state = read(&good.state);
    let learned = read(&good.learned);
    let scenario = read(&good.scenario);
    let oem = read(&good.secondaries);
    let mut bad = Vec::new();
    // Each row: epoch_utc,x,y,z,vx,vy,vz. `map_row` rewrites row k.
    let csv = |rows: Vec<String>| format!("{header}\n{}\n", rows.join("\n"));
    let all = || rows.iter().map(|r| r.to_string()).collect::<Vec<_>>();
    let map_field = |k: usize, f: &dyn Fn(&mut Vec<String>)| {
        let mut r = all();
        let mut fields: Vec<String> = r[k].split(',').map(String::from).collect();
        f(&mut fields);
        r[k] = fields.join(",");
        csv(r)
    };
    add(&mut bad, d, Arc, "missing", "no-such-arc.csv", None);
    add(
        &mut bad,
        d,
        Arc,
        "empty",
        "empty-arc.csv",
        Some(String::new()),
    );
    add(
        &mut bad,
        d,
        Arc,
        "header only",
        "header-arc.csv",
        Some(format!("{header}\n")),
    );
    add(
        &mut bad,
        d,
        Arc,
        "wrong columns",
        "columns-arc.csv",
        Some(arc.replacen(header, "time,a,b,c,d,e,f", 1)),
    );
    add(
        &mut bad,
        d,
        Arc,
        "metres",
        "metres-arc.csv",
        Some(csv(rows
            .iter()
            .map(|r| {
                let f: Vec<String> = r.split(',').map(String::from).collect();
                let m = |s: &str| (s.parse::<f64>().unwrap() * 1000.0).to_string();
                format!(
                    "{},{},{},{},{},{},{}",
                    f[0],
                    m(&f[1]),
                    m(&f[2]),
                    m(&f[3]),
                    f[4],
                    f[5],
                    f[6]
                )
            })
            .collect())),
    );
    add(
        &mut bad,
        d,
        Arc,
        "NaN",
        "nan-arc.csv",
        Some(map_field(5, &|f| f[1] = "NaN".into())),
    );
    add(
        &mut bad,
        d,
        Arc,
        "infinity",
        "inf-arc.csv",
        Some(map_field(7, &|f| f[2] = "inf".into())),
    );
    add(
        &mut bad,
        d,
        Arc,
        "unsorted epochs",
        "unsorted-arc.csv",
        Some({
            let mut r = all();
            r.swap(10, 11);
            csv(r)
        }),
    );
    add(
        &mut bad,
        d,
        Arc,
        "duplicate epoch",
        "duplicate-arc.csv",
        Some({
            let mut r = all();
            r.insert(20, r[20].clone());
            csv(r)
        }),
    );
    add(
        &mut bad,
        d,
        Arc,
        "inside the Earth",
        "inside-arc.csv",
        Some(map_field(3, &|f| {
            for c in f.iter_mut().skip(1).take(3) {
                *c = (c.parse::<f64>().unwrap() * 0.8).to_string();
            }
        })),
    );
    // Position only: two points cannot determine an orbit (fit), let alone a force.
    add(
        &mut bad,
        d,
        Arc,
        "two points",
        "two-arc.csv",
        Some(format!(
            "epoch_utc,x_km,y_km,z_km\n{}\n",
            rows[..2]
                .iter()
                .map(|r| r.split(',').take(4).collect::<Vec<_>>().join(","))
                .collect::<Vec<_>>()
                .join("\n")
        )),
    );
    // A quarter of a revolution with velocities: enough for a fit, too short to learn
    // a force (only a quiet verdict is given on it) or rank maneuvers.
    add(
        &mut bad,
        d,
        Arc,
        "a quarter revolution",
        "short-arc.csv",
        Some(csv(all()[..25].to_vec())),
    );
    add(
        &mut bad,
        d,
        Arc,
        "zero sigma",
        "zero-sigma-arc.csv",
        Some(
            csv(all().iter().map(|r| format!("{r},0")).collect()).replacen(
                header,
                &format!("{header},sigma_km"),
                1,
            ),
        ),
    );
    add(
        &mut bad,
        d,
        Arc,
        "negative sigma",
        "negative-sigma-arc.csv",
        Some(
            csv(all().iter().map(|r| format!("{r},-0.01")).collect()).replacen(
                header,
                &format!("{header},sigma_km"),
                1,
            ),
        ),
    );
    add(
        &mut bad,
        d,
        Arc,
        "unknown format",
        "arc.txt",
        Some(arc.clone()),
    );

    let sp3: String = include_str!("data/real/grg21553_18h-22h30.sp3")
        .lines()
        .take(120)
        .map(|l| format!("{l}\n"))
        .collect();
    add(
        &mut bad,
        d,
        Arc,
        "SP3 in an unsupported time system",
        "glonass-time.sp3",
        Some(sp3.replacen("cc GPS", "cc GLO", 1)),
    );
    add(
        &mut bad,
        d,
        Arc,
        "SP3 without --object (many satellites)",
        "many.sp3",
        Some(sp3),
    );
    add(&mut bad, d, Forces, "missing", "no-such-forces.yaml", None);
    add(
        &mut bad,
        d,
        Forces,
        "empty",
        "empty-forces.yaml",
        Some(String::new()),
    );
    add(
        &mut bad,
        d,
        Forces,
        "malformed",
        "malformed-forces.yaml",
        Some("gravity: { zonal_degree: 2".into()),
    );
    add(
        &mut bad,
        d,
        Forces,
        "unknown key",
        "key-forces.yaml",
        Some("gravity: { zonal_degree: 2 }\ncolour: red\n".into()),
    );
    let drag = |cd: &str, mass: &str| {
        format!("gravity: {{ zonal_degree: 2 }}\ndrag:\n  atmosphere: {{ exponential: {{ rho0_kg_m3: 3.7e-12, h0_km: 400.0, scale_height_km: 58.5 }} }}\n  cd: {cd}\n  area_m2: 1.0\n  mass_kg: {mass}\n")
    };
    add(
        &mut bad,
        d,
        Forces,
        "negative mass",
        "mass-forces.yaml",
        Some(drag("2.2", "-100")),
    );
    add(
        &mut bad,
        d,
        Forces,
        "NaN Cd",
        "cd-forces.yaml",
        Some(drag(".nan", "100")),
    );
    add(
        &mut bad,
        d,
        Forces,
        "zonal degree 99",
        "degree-forces.yaml",
        Some("gravity: { zonal_degree: 99 }\n".into()),
    );
    // Files a forces file refers to: a gravity field (.gfc) and Earth-orientation data.
    // The message must name the referenced file.
    let gfc_head = "begin_of_head\nmodelname TEST\nearth_gravity_constant 0.3986004415E+15\nradius 0.63781363E+07\nmax_degree 3\nnorm fully_normalized\nend_of_head\n";
    let gfc_body = "gfc 0 0 1.0 0.0\ngfc 2 0 -4.84165143790815e-04 0.0\ngfc 2 1 -2.06615509074176e-10 1.38441389137979e-09\ngfc 2 2 2.43938357328313e-06 -1.40027370385934e-06\ngfc 3 0 9.57161207093473e-07 0.0\ngfc 3 1 2.03046201047864e-06 2.48200415856872e-07\ngfc 3 2 9.04787894809528e-07 -6.19005475177618e-07\ngfc 3 3 7.21321757121568e-07 1.41434926192941e-06\n";
    let good_gfc = format!("{gfc_head}{gfc_body}");
    let eop_lines: Vec<&str> = include_str!("data/eop/finals2000A_2021-04.txt")
        .lines()
        .collect();
    let field_cases: Vec<(&'static str, &str, String, String)> = vec![
        (
            "gfc truncated",
            "truncated.gfc",
            good_gfc.lines().take(12).collect::<Vec<_>>().join("\n"),
            "degree: 3".into(),
        ),
        (
            "gfc without end_of_head",
            "nohead.gfc",
            good_gfc.replace("end_of_head\n", ""),
            "degree: 3".into(),
        ),
        (
            "gfc degree above its maximum",
            "small.gfc",
            good_gfc.clone(),
            "degree: 10".into(),
        ),
        (
            "gfc NaN coefficient",
            "nan.gfc",
            good_gfc.replace("9.04787894809528e-07", "nan"),
            "degree: 3".into(),
        ),
        (
            "EOP file with a gap",
            "eop-gap.txt",
            [eop_lines[..5].to_vec(), eop_lines[6..].to_vec()]
                .concat()
                .join("\n"),
            "degree: 3".into(),
        ),
        (
            "EOP file unsorted",
            "eop-unsorted.txt",
            [vec![eop_lines[1], eop_lines[0]], eop_lines[2..].to_vec()]
                .concat()
                .join("\n"),
            "degree: 3".into(),
        ),
    ];
    // Space-weather tables (NRLMSISE-00 drag): bad rows, and a good table that does not
    // cover the arcs (2031): the message must name the table.
    let sw_head = "date,f107,f107a,ap_00,ap_03,ap_06,ap_09,ap_12,ap_15,ap_18,ap_21\n";
    let sw_rows = |days: std::ops::Range<u32>| -> Vec<String> {
        days.map(|d| format!("2031-05-{d:02},150,150,12,12,12,12,12,12,12,12"))
            .collect()
    };
    let rows = sw_rows(1..10);
    let mut gap = rows.clone();
    gap.remove(4);
    let mut unsorted = rows.clone();
    unsorted.swap(2, 3);
    let mut nan = rows.clone();
    nan[3] = nan[3].replacen(",150,", ",NaN,", 1);
    let mut negative = rows.clone();
    negative[3] = negative[3].replacen(",150,", ",-150,", 1);
    let early: Vec<String> = (1..10)
        .map(|d| format!("2026-03-{d:02},150,150,12,12,12,12,12,12,12,12"))
        .collect();
    for (what, name, table) in [
        ("space-weather table with a gap", "sw-gap.csv", gap),
        ("space-weather table unsorted", "sw-unsorted.csv", unsorted),
        ("space-weather table with NaN", "sw-nan.csv", nan),
        (
            "space-weather table with a negative flux",
            "sw-negative.csv",
            negative,
        ),
        (
            "space-weather table not covering the arc",
            "sw-early.csv",
            early,
        ),
    ] {
        write(d, name, &format!("{sw_head}{}\n", table.join("\n")));
        let forces = format!("gravity: {{ zonal_degree: 2 }}\ndrag:\n  atmosphere: {{ nrlmsise00: {{ space_weather: {name} }} }}\n  cd: 2.2\n  area_m2: 1.0\n  mass_kg: 100.0\n");
        bad.push(Bad {
            role: Forces,
            what,
            needle: name.to_string(),
            path: write(d, &format!("forces-{name}.yaml"), &forces),
        });
    }
    for (what, name, content, degree) in field_cases {
        write(d, name, &content);
        let forces = if name.ends_with(".gfc") {
            format!("gravity: {{ field: {name}, {degree} }}\n")
        } else {
            format!(
                "gravity: {{ field: egm2008, {degree} }}\nearth_orientation: {{ file: {name} }}\n"
            )
        };
        bad.push(Bad {
            role: Forces,
            what,
            needle: name.to_string(),
            path: write(d, &format!("forces-{name}.yaml"), &forces),
        });
    }
    add(
        &mut bad,
        d,
        Forces,
        "solid tides without a field",
        "tides-zonal-forces.yaml",
        Some("gravity: { zonal_degree: 2, solid_tides: true }\n".into()),
    );
    write(
        d,
        "mean-tide.gfc",
        &good_gfc.replace("end_of_head", "tide_system mean_tide\nend_of_head"),
    );
    bad.push(Bad {
        role: Forces,
        what: "solid tides on a mean-tide field",
        needle: "mean-tide.gfc".into(),
        path: write(
            d,
            "forces-mean-tide.yaml",
            "gravity: { field: mean-tide.gfc, degree: 3, solid_tides: true }\n",
        ),
    });
    add(
        &mut bad,
        d,
        Forces,
        "plugin missing",
        "plugin-missing-forces.yaml",
        Some("gravity: { zonal_degree: 2 }\nplugins: [no-such-plugin.so]\n".into()),
    );
    let nan_so = c_plugin(
        d,
        "nan",
        &c_force_source(1, "out[0] = NAN; out[1] = 0; out[2] = 0; return 0;"),
    );
    let abi_so = c_plugin(
        d,
        "abi7",
        &c_force_source(7, "out[0] = 0; out[1] = 0; out[2] = 0; return 0;"),
    );
    for (what, so, name) in [
        ("plugin returns NaN", &nan_so, "libnan.so"),
        ("plugin with a wrong ABI", &abi_so, "libabi7.so"),
    ] {
        bad.push(Bad {
            role: Forces,
            what,
            path: write(
                d,
                &format!("{name}.forces.yaml"),
                &format!(
                    "gravity: {{ zonal_degree: 2 }}\nplugins: [{}]\n",
                    so.display()
                ),
            ),
            needle: name.into(),
        });
    }

    let r_line = state
        .lines()
        .find(|l| l.starts_with("r_km"))
        .unwrap()
        .to_string();
    let v_line = state
        .lines()
        .find(|l| l.starts_with("v_km_s"))
        .unwrap()
        .to_string();
    let epoch_line = state.lines().next().unwrap().to_string();
    add(&mut bad, d, State, "missing", "no-such-state.yaml", None);
    add(
        &mut bad,
        d,
        State,
        "empty",
        "empty-state.yaml",
        Some(String::new()),
    );
    add(
        &mut bad,
        d,
        State,
        "NaN",
        "nan-state.yaml",
        Some(format!("{epoch_line}\n{r_line}\nv_km_s: [.nan, 0, 7.5]\n")),
    );
    add(
        &mut bad,
        d,
        State,
        "inside the Earth",
        "inside-state.yaml",
        Some(format!("{epoch_line}\nr_km: [6000, 0, 0]\n{v_line}\n")),
    );
    add(
        &mut bad,
        d,
        State,
        "metres",
        "metres-state.yaml",
        Some(format!("{epoch_line}\nr_km: [6878000, 0, 0]\n{v_line}\n")),
    );
    add(
        &mut bad,
        d,
        State,
        "m/s",
        "mps-state.yaml",
        Some(format!("{epoch_line}\n{r_line}\nv_km_s: [0, 7600, 0]\n")),
    );
    add(&mut bad, d, State, "hyperbolic elements", "hyperbolic-state.yaml", Some(format!("{epoch_line}\nelements: {{ sma_km: -20000, ecc: 1.5, inc_deg: 51.6, raan_deg: 0, argp_deg: 0, true_anomaly_deg: 0 }}\n")));
    add(&mut bad, d, State, "both forms", "both-state.yaml", Some(format!("{state}elements: {{ sma_km: 7000, ecc: 0.001, inc_deg: 51.6, raan_deg: 0, argp_deg: 0, true_anomaly_deg: 0 }}\n")));

    add(
        &mut bad,
        d,
        Learned,
        "missing",
        "no-such-learned.yaml",
        None,
    );
    add(
        &mut bad,
        d,
        Learned,
        "empty",
        "empty-learned.yaml",
        Some(String::new()),
    );
    add(
        &mut bad,
        d,
        Learned,
        "tampered",
        "tampered-learned.yaml",
        Some(learned.replacen("coefficient: ", "coefficient: 9", 1)),
    );
    add(
        &mut bad,
        d,
        Learned,
        "future format",
        "format-learned.yaml",
        Some(learned.replacen("format_version: 1", "format_version: 99", 1)),
    );
    add(
        &mut bad,
        d,
        Learned,
        "resealed NaN window",
        "window-learned.yaml",
        Some({
            let mut f: learned_forces::learned_file::LearnedFile =
                serde_yaml::from_str(&learned).unwrap();
            f.validity.min_altitude_km = f64::NAN;
            f.to_yaml()
        }),
    );
    add(
        &mut bad,
        d,
        Learned,
        "resealed bad formula",
        "formula-learned.yaml",
        Some({
            let mut f: learned_forces::learned_file::LearnedFile =
                serde_yaml::from_str(&learned).unwrap();
            f.terms[0].formula = "exp(-t / k0".into();
            f.to_yaml()
        }),
    );

    add(
        &mut bad,
        d,
        Scenario,
        "missing",
        "no-such-scenario.yaml",
        None,
    );
    add(
        &mut bad,
        d,
        Scenario,
        "empty",
        "empty-scenario.yaml",
        Some(String::new()),
    );
    add(
        &mut bad,
        d,
        Scenario,
        "bad step",
        "step-scenario.yaml",
        Some(scenario.replace("step_s: 60.0", "step_s: -5")),
    );
    // (σ = 0 is allowed: a noise-free simulation, written with σ = 1e-9 km.)
    add(
        &mut bad,
        d,
        Scenario,
        "negative sigma",
        "sigma-scenario.yaml",
        Some(scenario.replace("sigma_km: 0.01", "sigma_km: -0.01")),
    );
    add(
        &mut bad,
        d,
        Scenario,
        "unknown truth term",
        "truth-scenario.yaml",
        Some(scenario.replace("truth: []", "truth: [{ teleport: {} }]")),
    );
    add(
        &mut bad,
        d,
        Scenario,
        "unknown key in a truth term",
        "truth-key-scenario.yaml",
        Some(scenario.replace(
            "truth: []",
            "truth: [{ drag_factor: { factor: 2.0, start_utc: \"2031-05-04T06:00:00Z\" } }]",
        )),
    );
    for (what, name, term) in [
        (
            "zero period of a periodic drag",
            "period-scenario.yaml",
            "{ drag_periodic: { amplitude: 0.5, period_s: 0, phase_deg: 0 } }",
        ),
        (
            "NaN factor of a drag step",
            "step-factor-scenario.yaml",
            "{ drag_step: { at_utc: \"2031-05-04T06:00:00Z\", factor: .nan } }",
        ),
        (
            "negative scale height of the truth's atmosphere",
            "atmosphere-scenario.yaml",
            "{ atmosphere: { exponential: { rho0_kg_m3: 1.0e-12, h0_km: 400, scale_height_km: -60 } } }",
        ),
        (
            "a thrust's start that is not an epoch",
            "thrust-scenario.yaml",
            "{ thrust_from: { start_utc: \"yesterday\", accel_rtn_km_s2: [0, 1.0e-9, 0] } }",
        ),
    ] {
        add(
            &mut bad,
            d,
            Scenario,
            what,
            name,
            Some(scenario.replace("truth: []", &format!("truth: [{term}]"))),
        );
    }
    add(
        &mut bad,
        d,
        Scenario,
        "inside the Earth",
        "inside-scenario.yaml",
        Some(scenario.replace("sma_km: 6928.1363", "sma_km: 6000")),
    );

    add(&mut bad, d, Hypotheses, "missing", "no-such-hyp.yaml", None);
    add(
        &mut bad,
        d,
        Hypotheses,
        "empty",
        "empty-hyp.yaml",
        Some(String::new()),
    );
    add(
        &mut bad,
        d,
        Hypotheses,
        "unknown",
        "unknown-hyp.yaml",
        Some("hypotheses: [teleport]\n".into()),
    );
    add(
        &mut bad,
        d,
        Hypotheses,
        "window backwards",
        "backwards-hyp.yaml",
        Some("hypotheses:\n  - impulsive: { from_utc: \"2031-05-05T01:30:00Z\", to_utc: \"2031-05-05T00:30:00Z\" }\n".into()),
    );
    add(
        &mut bad,
        d,
        Hypotheses,
        "window outside the arc",
        "outside-hyp.yaml",
        Some("hypotheses:\n  - impulsive: { from_utc: \"2031-06-01T00:00:00Z\", to_utc: \"2031-06-02T00:00:00Z\" }\n".into()),
    );

    let data: Vec<&str> = oem.lines().filter(|l| l.starts_with("2031-")).collect();
    add(
        &mut bad,
        d,
        Secondaries,
        "missing",
        "no-such-secondary.oem",
        None,
    );
    add(
        &mut bad,
        d,
        Secondaries,
        "empty",
        "empty-secondary.oem",
        Some(String::new()),
    );
    add(
        &mut bad,
        d,
        Secondaries,
        "unsorted",
        "unsorted-secondary.oem",
        Some(
            oem.replacen(data[4], "@", 1)
                .replacen(data[5], data[4], 1)
                .replacen("@", data[5], 1),
        ),
    );
    add(
        &mut bad,
        d,
        Secondaries,
        "duplicate",
        "duplicate-secondary.oem",
        Some(oem.replacen(data[4], &format!("{}\n{}", data[4], data[4]), 1)),
    );
    add(
        &mut bad,
        d,
        Secondaries,
        "NaN",
        "nan-secondary.oem",
        Some(
            oem.replacen(
                data[6],
                &data[6]
                    .replacen(' ', " NaN ", 1)
                    .split(' ')
                    .filter(|s| !s.is_empty())
                    .take(7)
                    .collect::<Vec<_>>()
                    .join(" "),
                1,
            ),
        ),
    );
    add(
        &mut bad,
        d,
        Secondaries,
        "duplicate header key",
        "dupkey-secondary.oem",
        Some(oem.replacen(
            "TIME_SYSTEM = UTC",
            "TIME_SYSTEM = UTC\nTIME_SYSTEM = TAI",
            1,
        )),
    );
    add(
        &mut bad,
        d,
        Secondaries,
        "control character in OBJECT_NAME",
        "ctrl-secondary.oem",
        Some(oem.replacen("OBJECT_NAME = ", "OBJECT_NAME = A\u{1b}[2J", 1)),
    );

    // Hostile YAML: an alias fan-out (10⁹ nodes from 1 kB), 40-deep nesting, control
    // characters in names, and sizes that would exhaust memory.
    let bomb = |head: &str| {
        let mut b = format!("{head}a0: &a0 [x, x, x, x, x, x, x, x, x, x]\n");
        for i in 1..9 {
            let p = i - 1;
            b.push_str(&format!(
                "a{i}: &a{i} [*a{p}, *a{p}, *a{p}, *a{p}, *a{p}, *a{p}, *a{p}, *a{p}, *a{p}, *a{p}]\n"
            ));
        }
        b
    };
    let deep: String = (0..40)
        .map(|i| format!("{}k{i}:\n", " ".repeat(i)))
        .collect();
    add(
        &mut bad,
        d,
        Forces,
        "YAML alias bomb",
        "bomb-forces.yaml",
        Some(bomb("gravity: { zonal_degree: 2 }\n")),
    );
    add(
        &mut bad,
        d,
        Forces,
        "deep nesting",
        "deep-forces.yaml",
        Some(format!("{deep}{}x: 1\n", " ".repeat(40))),
    );
    add(
        &mut bad,
        d,
        Scenario,
        "YAML alias bomb",
        "bomb-scenario.yaml",
        Some(bomb(&scenario)),
    );
    add(
        &mut bad,
        d,
        Hypotheses,
        "YAML alias bomb",
        "bomb-hyp.yaml",
        Some(bomb("hypotheses: [no_maneuver]\n")),
    );
    add(
        &mut bad,
        d,
        State,
        "newline in object_name",
        "name-state.yaml",
        Some(format!(
            "{state}object_name: \"SAT\\nOBJECT_ID = FORGED\"\n"
        )),
    );
    add(
        &mut bad,
        d,
        Scenario,
        "newline in object_name",
        "name-scenario.yaml",
        Some({
            let named = "object_name: \"X\\nplugins: [evil.so]\"";
            let t = scenario.replacen("object_name: HALCYON-5", named, 1);
            assert!(t.contains(named));
            t
        }),
    );
    add(
        &mut bad,
        d,
        Scenario,
        "60 days at 0.1 s",
        "huge-scenario.yaml",
        Some(
            scenario
                .replace("step_s: 60.0", "step_s: 0.1")
                .replace("train_days: 1.0", "train_days: 60.0"),
        ),
    );
    add(
        &mut bad,
        d,
        Learned,
        "resealed newline in name",
        "name-learned.yaml",
        Some({
            let mut f: learned_forces::learned_file::LearnedFile =
                serde_yaml::from_str(&learned).unwrap();
            f.name = "x\nfn evil() {}".into();
            f.to_yaml()
        }),
    );
    tracking_bad_inputs(&mut bad, d, good);
    bad
}

/// Bad measurement files and sites files.
fn tracking_bad_inputs(bad: &mut Vec<Bad>, d: &Path, good: &Inputs) {
    use Role::*;
    let tdm = std::fs::read_to_string(&good.tracking).unwrap();
    let sites = std::fs::read_to_string(&good.sites).unwrap();
    // The n-th data line with `keyword`, its value replaced.
    let set = |keyword: &str, n: usize, value: &str| {
        let mut k = 0;
        tdm.lines()
            .map(|l| {
                if l.starts_with(&format!("{keyword} = ")) {
                    k += 1;
                    if k == n {
                        let epoch = l.split_whitespace().nth(2).unwrap();
                        return format!("{keyword} = {epoch} {value}\n");
                    }
                }
                format!("{l}\n")
            })
            .collect::<String>()
    };
    for (what, name, text) in [
        ("missing", "no-such.tdm", None),
        ("empty", "empty.tdm", Some(String::new())),
        (
            "unknown TDM keyword",
            "keyword.tdm",
            Some(tdm.replacen("RANGE_UNITS = km", "RANGE_UNITS = km\nFREQ_OFFSET = 0.0", 1)),
        ),
        ("angle out of range", "angle.tdm", Some(set("ANGLE_2", 5, "95.0"))),
        ("elevation below the mask", "mask.tdm", Some(set("ANGLE_2", 7, "2.0"))),
        ("range in metres", "metres.tdm", Some(set("RANGE", 3, "1801712.6"))),
        ("NaN range", "nan.tdm", Some(set("RANGE", 4, "NaN"))),
        (
            "site not in the sites file",
            "site.tdm",
            Some(tdm.replacen("PARTICIPANT_2 = MIDSEA-RADAR", "PARTICIPANT_2 = NOWHERE-RADAR", 1)),
        ),
        (
            "after the Earth-orientation table",
            "eop.tdm",
            Some(tdm.replace("2026-03-04T", "2031-03-04T")),
        ),
        (
            "measurement CSV with an unknown kind",
            "kind.csv",
            Some("epoch_utc,site,measurement,value\n2026-03-04T06:13:50Z,MIDSEA-RADAR,range_m,1801712.6\n".into()),
        ),
    ] {
        add(bad, d, Tracking, what, name, text);
    }
    for (what, name, text) in [
        ("missing", "no-such-sites.yaml", None),
        ("empty", "empty-sites.yaml", Some(String::new())),
        (
            "latitude out of range",
            "lat-sites.yaml",
            Some(sites.replacen("lat_deg: 69.3", "lat_deg: 169.3", 1)),
        ),
        (
            "unknown field",
            "field-sites.yaml",
            Some(sites.replacen("sigma_km: 0.020", "sigma_m: 20", 1)),
        ),
        (
            "σ in metres",
            "sigma-sites.yaml",
            Some(sites.replacen("sigma_km: 0.020", "sigma_km: 200.0", 1)),
        ),
    ] {
        add(bad, d, Sites, what, name, text);
    }
}

/// Writes `text` (or nothing, for a missing file) as `d/name` and lists it as bad input.
fn add(
    bad: &mut Vec<Bad>,
    d: &Path,
    role: Role,
    what: &'static str,
    name: &str,
    text: Option<String>,
) {
    let path = match text {
        Some(t) => write(d, name, &t),
        None => d.join(name),
    };
    bad.push(Bad {
        role,
        what,
        needle: name.to_string(),
        path,
    });
}

/// The paths of every null in a JSON value.
fn null_paths(v: &serde_json::Value, at: String) -> Vec<String> {
    match v {
        serde_json::Value::Null => vec![at],
        serde_json::Value::Array(a) => a
            .iter()
            .enumerate()
            .flat_map(|(i, x)| null_paths(x, format!("{at}[{i}]")))
            .collect(),
        serde_json::Value::Object(o) => o
            .iter()
            .flat_map(|(k, x)| null_paths(x, format!("{at}.{k}")))
            .collect(),
        _ => vec![],
    }
}

/// Every entry of `out`, recursively (a partial output anywhere counts).
fn leftovers(out: &Path) -> Vec<PathBuf> {
    let mut found = Vec::new();
    let mut stack = vec![out.to_path_buf()];
    while let Some(d) = stack.pop() {
        for e in std::fs::read_dir(&d).into_iter().flatten().flatten() {
            let p = e.path();
            if p.is_dir() {
                stack.push(p.clone());
            }
            found.push(p);
        }
    }
    found
}

#[test]
fn every_command_refuses_every_bad_input_it_reads_with_one_message_and_no_output() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let good = good_inputs(d);
    // The good inputs work for every command but `build` (which needs a cargo build;
    // tests/build_plugin.rs covers it): a refusal below is the bad input's doing.
    for (command, _) in commands() {
        if command == "build" {
            continue;
        }
        let out = d.join(format!("good-{command}"));
        std::fs::create_dir(&out).unwrap();
        let a = args(command, &good, &out);
        let a: Vec<&str> = a.iter().map(String::as_str).collect();
        let (code, _, err) = arcwise(&a);
        assert!(
            code == 0 || code == 1,
            "{command} on the good inputs: {code} {err}"
        );
        // Reports carry numbers, never a NaN (which JSON would write as null).
        for f in leftovers(&out) {
            if f.extension().is_some_and(|e| e == "json") {
                let v: serde_json::Value =
                    serde_json::from_str(&std::fs::read_to_string(&f).unwrap()).unwrap();
                // Keys whose null means "none", by design.
                const OPTIONAL: [&str; 8] = [
                    ".decay",
                    ".held_out_rms_km",
                    ".learned_fit",
                    ".model",
                    ".max_rms_km",
                    // A quiet arc: nothing searched, nothing learned.
                    ".held_out_rms_km_known_forces",
                    ".search",
                    ".verdict_learned",
                ];
                let nulls: Vec<String> = null_paths(&v, String::new())
                    .into_iter()
                    .filter(|p| !OPTIONAL.contains(&p.as_str()))
                    .collect();
                assert!(
                    nulls.is_empty(),
                    "{command}: {} has null at {nulls:?}",
                    f.display()
                );
            }
        }
    }
    let bad = bad_inputs(d, &good);
    let mut failures = Vec::new();
    let mut runs = 0;
    for (command, roles) in commands() {
        for b in bad.iter().filter(|b| roles.contains(&b.role)) {
            // `check` compares predictions with whatever next arc it is given; a short
            // one is a weak check, not a bad input (its report says how many points).
            // A fit needs no full revolution either, and `learn` gives a quiet verdict on
            // one (with a note; an anomalous short arc is refused: tests/real_gnss.rs).
            let short = matches!(b.what, "two points" | "a quarter revolution");
            if (command == "check" && short)
                || (matches!(command, "fit" | "learn") && b.what == "a quarter revolution")
            {
                continue;
            }
            runs += 1;
            let out = d.join(format!("out-{runs}"));
            std::fs::create_dir(&out).unwrap();
            let a = args(command, &good.with(b.role, &b.path), &out);
            let a: Vec<&str> = a.iter().map(String::as_str).collect();
            let (code, _, err) = arcwise(&a);
            let lines = err.trim().lines().count();
            let left = leftovers(&out);
            // For the README's troubleshooting table: ARCWISE_PRINT_MATRIX=1 lists them.
            if std::env::var_os("ARCWISE_PRINT_MATRIX").is_some() {
                println!("{command} | {:?} {} | {}", b.role, b.what, err.trim());
            }
            if code != 2 || !err.contains(&b.needle) || lines == 0 || lines > 2 || !left.is_empty()
            {
                failures.push(format!(
                    "{command} / {:?} {}: exit {code}, {lines} lines, left {left:?}:\n{err}",
                    b.role, b.what
                ));
            }
        }
    }
    assert!(runs > 100, "{runs}");
    assert!(
        failures.is_empty(),
        "{} of {runs} cases:\n{}",
        failures.len(),
        failures.join("\n")
    );
}
