//! Fits of tracking arcs (ranges and angles from sites) on simulated radar campaigns:
//! the orbit recovered, the formal σ honest over seeds, the quiet case quiet.

use learned_forces::arc::{Arc, Tracking};
use learned_forces::fit::{fit, FitOptions, FitResult, QuietFit};
use learned_forces::scenario::ScenarioSpec;
use propagator::earth::EarthOrientation;
use propagator::tracking::sites_file;
use propagator::StateVector;
use std::path::{Path, PathBuf};

fn example(rel: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("../examples")
        .join(rel)
}

fn radar_sites() -> std::sync::Arc<Tracking> {
    let p = example("sites/radar_campaign.yaml");
    let sites = sites_file::parse(&std::fs::read_to_string(&p).unwrap(), &p).unwrap();
    std::sync::Arc::new(Tracking {
        sites,
        earth: EarthOrientation::shipped().unwrap(),
    })
}

/// Fits `train` with the scenario's known forces, from the initial orbit it determines.
fn fit_train(spec: &ScenarioSpec, path: &Path, train: &Arc) -> FitResult {
    let forces = spec
        .models(path)
        .unwrap()
        .known
        .build(Path::new("forces"), train.start())
        .unwrap();
    fit(
        train,
        forces.model.into(),
        &FitOptions::default(),
        &mut QuietFit,
    )
    .unwrap()
}

/// The truth at the training arc's first measurement (the fit's epoch, a sampling
/// epoch of the truth ephemeris).
fn truth_at_start(sim: &learned_forces::scenario::Simulated) -> StateVector {
    let start = sim.train.start();
    sim.truth
        .points
        .iter()
        .find(|p| p.epoch.seconds_since(&start).abs() < 1e-6)
        .unwrap()
        .state
}

/// Simulates the radar campaign with `seed` and fits its training arc.
fn radar_fit(seed: u64) -> (FitResult, StateVector, Arc) {
    let path = example("scenarios/radar_quiet.yaml");
    let mut spec = ScenarioSpec::load(&path).unwrap();
    spec.tracking.seed = seed;
    let sim = spec.simulate_with(&path, Some(&radar_sites())).unwrap();
    let r = fit_train(&spec, &path, &sim.train);
    let truth = truth_at_start(&sim);
    (r, truth, sim.train)
}

#[test]
fn one_radar_day_recovers_the_orbit() {
    let (r, truth, arc) = radar_fit(1);
    let dr = (r.x0 - truth).fixed_rows::<3>(0).norm();
    let channels = r.channels(&arc);
    for c in &channels {
        eprintln!(
            "{} {}: {} of {}, rms {:.3e} {} ({:.2} σ)",
            c.site,
            c.kind.info().word,
            c.used,
            c.count,
            c.rms,
            c.kind.info().unit,
            c.rms_sigma
        );
    }
    eprintln!(
        "{} measurements, |Δr0| = {:.1} m (formal {:.1} m), χ² {:.0}/{}, {:?}",
        arc.observations.len(),
        dr * 1e3,
        r.x0_sigma[..3].iter().map(|s| s * s).sum::<f64>().sqrt() * 1e3,
        r.verdict.chi2,
        r.verdict.dof,
        r.verdict.reasons
    );
    assert!(dr < 0.05, "{dr} km");
    assert!(!r.verdict.anomaly);
    // Nothing to edit in clean data: a lone measurement after a gap of hours once was
    // (the neighbours' line extrapolated across the gap).
    assert_eq!(r.edited, 0);
}

#[test]
fn a_bad_range_is_edited_without_the_angles_of_its_epoch() {
    let path = example("scenarios/radar_quiet.yaml");
    let spec = ScenarioSpec::load(&path).unwrap();
    let mut sim = spec.simulate_with(&path, Some(&radar_sites())).unwrap();
    // 2 km (100σ) on one range in the middle of a pass.
    let i = sim.train.observations.len() / 2;
    let i = (i..)
        .find(|&k| {
            sim.train.observations[k]
                .as_tracked()
                .is_some_and(|m| m.kind == propagator::tracking::measurement::Kind::Range)
        })
        .unwrap();
    let epoch = sim.train.observations[i].epoch;
    if let learned_forces::arc::Observed::Tracking(m) = &mut sim.train.observations[i].observed {
        m.value += 2.0;
    }
    let r = fit_train(&spec, &path, &sim.train);
    let edited: Vec<usize> = (0..r.residuals.len())
        .filter(|&k| !r.residuals[k].used)
        .collect();
    assert_eq!(edited, vec![i], "{:?}", edited);
    // The angles of that epoch stay.
    assert!(r.residuals.iter().any(|x| x.epoch == epoch && x.used));
    assert!(!r.verdict.anomaly, "{:?}", r.verdict.reasons);
}

#[test]
fn formal_sigma_matches_the_scatter_and_the_quiet_case_stays_quiet_over_20_seeds() {
    // The must-show of the tracking issue: 3 radars, range σ 20 m and az/el σ 0.02°,
    // 1 day. Over 20 seeds the error of each initial-state component divided by its
    // formal σ must have an RMS of 0.7–1.3 (120 draws: the RMS of N(0,1) lies in 0.87–1.13
    // with 99 % probability), and the verdict must be no_anomaly in ≥ 19 of 20 (α = 1e-3).
    let mut z2 = Vec::new();
    let mut quiet = 0;
    for seed in 1..=20 {
        let (r, truth, _) = radar_fit(seed);
        for c in 0..6 {
            z2.push(((r.x0[c] - truth[c]) / r.x0_sigma[c]).powi(2));
        }
        if !r.verdict.anomaly {
            quiet += 1;
        } else {
            eprintln!("seed {seed}: {:?}", r.verdict.reasons);
        }
    }
    let ratio = (z2.iter().sum::<f64>() / z2.len() as f64).sqrt();
    eprintln!("scatter / formal σ over 20 seeds: {ratio:.3}; quiet in {quiet} of 20");
    assert!((0.7..=1.3).contains(&ratio), "{ratio}");
    assert!(quiet >= 19, "{quiet} of 20");
}

#[test]
fn an_unmodelled_push_seen_by_radar_is_an_anomaly() {
    // The gate must also fail: the venting push (decaying along-track, 2e-8 km/s² at the
    // start) in the radar campaign's geometry.
    let path = example("scenarios/radar_quiet.yaml");
    let mut spec = ScenarioSpec::load(&path).unwrap();
    let vent = ScenarioSpec::load(&example("scenarios/venting.yaml")).unwrap();
    spec.truth = vent.truth.clone();
    for t in &mut spec.truth {
        if let learned_forces::scenario::TruthTerm::DecayingPush { start_utc, .. } = t {
            *start_utc = "2026-03-04T06:00:00.000Z".into();
        }
    }
    let sim = spec.simulate_with(&path, Some(&radar_sites())).unwrap();
    let r = fit_train(&spec, &path, &sim.train);
    eprintln!("venting by radar: {:?}", r.verdict.reasons);
    assert!(r.verdict.anomaly);
}

fn optical_sites() -> std::sync::Arc<Tracking> {
    let p = example("sites/optical_pair.yaml");
    let sites = sites_file::parse(&std::fs::read_to_string(&p).unwrap(), &p).unwrap();
    std::sync::Arc::new(Tracking {
        sites,
        earth: EarthOrientation::shipped().unwrap(),
    })
}

#[test]
fn angles_only_over_two_nights_start_from_gauss_and_converge_without_a_guess() {
    // The must-show: 2 telescopes, RA/Dec σ 1″, night passes of a sunlit object, 2 days;
    // no initial state given. Ten seeds: every fit converges to the truth within 5 formal
    // σ per component and is quiet (α = 1e-3 each: a false alarm in 10 is unlikely).
    let path = example("scenarios/optical_quiet.yaml");
    for seed in 1..=10 {
        let mut spec = ScenarioSpec::load(&path).unwrap();
        spec.tracking.seed = seed;
        let sim = spec.simulate_with(&path, Some(&optical_sites())).unwrap();
        assert!(sim
            .train
            .observations
            .iter()
            .all(|o| o.as_tracked().is_some_and(|m| matches!(
                m.kind,
                propagator::tracking::measurement::Kind::RightAscension
                    | propagator::tracking::measurement::Kind::Declination
            ))));
        let r = fit_train(&spec, &path, &sim.train);
        let truth = truth_at_start(&sim);
        let worst = (0..6)
            .map(|c| ((r.x0[c] - truth[c]) / r.x0_sigma[c]).abs())
            .fold(0.0, f64::max);
        eprintln!(
            "seed {seed}: {} sights, |Δr0| {:.1} m, worst {worst:.1} σ, {:?}",
            sim.train.observations.len() / 2,
            (r.x0 - truth).fixed_rows::<3>(0).norm() * 1e3,
            r.termination
        );
        assert!(r.termination.converged(), "seed {seed}");
        assert!(worst < 5.0, "seed {seed}: {worst} σ");
        assert!(!r.verdict.anomaly, "seed {seed}: {:?}", r.verdict.reasons);
    }
}

#[test]
fn venting_seen_by_radar_only_is_learned() {
    use learned_forces::expr::Context;
    use learned_forces::learn::search::QuietSearch;
    use learned_forces::learn::{learn, LearnOptions};
    let path = example("scenarios/radar_venting.yaml");
    let spec = ScenarioSpec::load(&path).unwrap();
    let sim = spec.simulate_with(&path, Some(&radar_sites())).unwrap();
    let models = spec.models(&path).unwrap();
    let context = Context::of_model(&models.known, &path, &sim.train.start()).unwrap();
    let (spec2, path2) = (spec.clone(), path.clone());
    let make = move |e: propagator::Epoch| {
        Ok(spec2
            .models(&path2)
            .unwrap()
            .known
            .build(&path2, e)
            .unwrap()
            .model)
    };
    let learned = learn(
        &sim.train,
        &make,
        context,
        &LearnOptions::default(),
        &mut QuietFit,
        &QuietSearch,
    )
    .unwrap();
    let chosen = learned.chosen.as_ref().expect("a learned model");
    eprintln!("{} | {:?}", chosen.terms.text(), learned.notes);
    assert!(learned.outcome().is_explained());
    // One decaying term; its time constant within 10 % of the scenario's (the issue's
    // must-show), read from the scenario file rather than restated.
    let tau_true = spec
        .truth
        .iter()
        .find_map(|t| match t {
            learned_forces::scenario::TruthTerm::DecayingPush {
                time_constant_s, ..
            } => Some(*time_constant_s),
            _ => None,
        })
        .unwrap();
    assert_eq!(chosen.terms.nodes.len(), 1, "{}", chosen.terms.text());
    let text = chosen.terms.text();
    assert!(text.contains("exp(") && text.contains("t / k0"), "{text}");
    let tau = chosen.terms.constants[0].abs();
    assert!(
        (tau / tau_true - 1.0).abs() < 0.10,
        "τ {tau} s vs {tau_true} s"
    );
}

#[test]
fn an_impulsive_burn_seen_by_radar_ranks_first_and_a_quiet_radar_day_ranks_no_maneuver() {
    use learned_forces::expr::Context;
    use learned_forces::learn::rank::{rank, Hypothesis};
    use learned_forces::learn::{linearize, LearnOptions};
    use learned_forces::scenario::TruthTerm;
    use propagator::config::{ImpulsiveSpec, ManeuverSpec};
    let path = example("scenarios/radar_quiet.yaml");
    let ranked = |truth: Vec<TruthTerm>| {
        let mut spec = ScenarioSpec::load(&path).unwrap();
        spec.truth = truth;
        let sim = spec.simulate_with(&path, Some(&radar_sites())).unwrap();
        let models = spec.models(&path).unwrap();
        let ctx = Context::of_model(&models.known, &path, &sim.train.start()).unwrap();
        let known = models.known.clone();
        let make = move |e: propagator::Epoch| {
            known
                .build(Path::new("forces"), e)
                .map(|l| l.model)
                .map_err(|e| e.to_string())
        };
        let (_, problem) = linearize(
            &sim.train,
            &make,
            ctx,
            &LearnOptions::default(),
            &mut QuietFit,
        )
        .unwrap();
        let span = sim.train.end().seconds_since(&sim.train.start());
        let hyps = [
            Hypothesis::NoManeuver,
            Hypothesis::Impulsive {
                from_s: 3600.0,
                to_s: span - 3600.0,
            },
            Hypothesis::ContinuousAlongTrack,
        ];
        (rank(&problem, &hyps), sim.train.start())
    };
    // 0.3 m/s along-track at 10:00:30 (between passes: the epoch is bracketed by them).
    let (r, start) = ranked(vec![TruthTerm::Maneuver(ManeuverSpec::Impulsive(
        ImpulsiveSpec {
            epoch_utc: "2026-03-04T10:00:30Z".into(),
            dv_rtn_km_s: Some([0.0, 0.0003, 0.0]),
            dv_eci_km_s: None,
        },
    ))]);
    assert_eq!(
        r[0].name,
        "impulsive",
        "{:?}",
        r.iter().map(|h| &h.name).collect::<Vec<_>>()
    );
    let truth_s = propagator::Epoch::parse_utc("2026-03-04T10:00:30Z")
        .unwrap()
        .seconds_since(&start);
    let dvt = r[0].params.iter().find(|p| p.name == "dv_t_km_s").unwrap();
    eprintln!(
        "radar impulsive: {:?} (truth epoch {truth_s} s)",
        r[0].params
    );
    assert!(
        (dvt.value - 3e-4).abs() < 3.0 * dvt.sigma + 0.05 * 3e-4,
        "{dvt:?}"
    );
    let (quiet, _) = ranked(vec![]);
    assert_eq!(quiet[0].name, "no_maneuver");
}
