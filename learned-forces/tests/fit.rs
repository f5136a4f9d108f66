//! The orbit fit on simulated arcs: recovery without noise, honest covariance with
//! noise, false alarms and detection, and the variational equations against finite
//! differences of full propagations.

use learned_forces::arc::Arc;
use learned_forces::fit::model::{FitModel, Parameter};
use learned_forces::fit::{fit, FitOptions, FitResult, QuietFit, ResidualValue};
use learned_forces::scenario::{ScenarioSpec, TruthTerm};
use propagator::integrator::{Method, Settings};
use propagator::propagation::{Options, Request, Silent};
use propagator::variational::propagate_with_partials;
use propagator::StateVector;
use std::path::{Path, PathBuf};

fn scenario(name: &str) -> (ScenarioSpec, PathBuf) {
    let p = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("../examples/scenarios")
        .join(name);
    (ScenarioSpec::load(&p).unwrap(), p)
}

fn fit_spec(
    spec: &ScenarioSpec,
    path: &Path,
    estimate: Vec<Parameter>,
) -> (FitResult, StateVector, Arc) {
    let sim = spec.simulate(path).unwrap();
    let models = spec.models(path).unwrap();
    let forces = models
        .known
        .build(Path::new("forces"), sim.train.start())
        .unwrap();
    let model = FitModel::new(forces.model, &estimate, None).unwrap();
    let r = fit(&sim.train, model, &FitOptions::default(), &mut QuietFit).unwrap();
    (r, sim.initial.state, sim.train)
}

#[test]
fn noise_free_arc_recovers_state_and_drag_scale() {
    let (mut spec, path) = scenario("quiet.yaml");
    spec.tracking.sigma_km = 0.0;
    spec.truth = vec![TruthTerm::DragFactor { factor: 1.3 }];
    let (r, truth, _) = fit_spec(&spec, &path, vec![Parameter::DragScale]);
    let dr = (r.x0 - truth).fixed_rows::<3>(0).norm();
    let dv = (r.x0 - truth).fixed_rows::<3>(3).norm();
    let k = r.estimates[0].value;
    eprintln!(
        "noise-free: |Δr0| = {:.3e} m, |Δv0| = {:.3e} m/s, drag scale {k}",
        dr * 1e3,
        dv * 1e3
    );
    assert!(dr < 1e-5, "initial position off by {dr} km");
    assert!(((k - 1.3) / 1.3).abs() < 1e-6, "drag scale {k}");
    assert!(!r.verdict.anomaly || r.rms_km.unwrap() < 1e-6);
}

#[test]
fn covariance_is_honest_over_20_seeds() {
    let (mut spec, path) = scenario("quiet.yaml");
    spec.truth = vec![TruthTerm::DragFactor { factor: 1.3 }];
    let mut sum_sq = [0.0f64; 7];
    for seed in 1..=20u64 {
        spec.tracking.seed = seed;
        let (r, truth, _) = fit_spec(&spec, &path, vec![Parameter::DragScale]);
        for i in 0..6 {
            sum_sq[i] += ((r.x0[i] - truth[i]) / r.x0_sigma[i]).powi(2);
        }
        sum_sq[6] += ((r.estimates[0].value - 1.3) / r.estimates[0].sigma).powi(2);
    }
    let rms: Vec<f64> = sum_sq.iter().map(|s| (s / 20.0).sqrt()).collect();
    eprintln!("RMS of (estimate − truth)/σ over 20 seeds [x y z vx vy vz drag]: {rms:.3?}");
    for (i, v) in rms.iter().enumerate() {
        assert!((0.7..=1.3).contains(v), "component {i}: {v}");
    }
}

#[test]
fn quiet_scenario_false_alarms_at_most_one_in_20() {
    let (mut spec, path) = scenario("quiet.yaml");
    let mut alarms = 0;
    for seed in 1..=20u64 {
        spec.tracking.seed = seed;
        let (r, _, _) = fit_spec(&spec, &path, vec![]);
        if r.verdict.anomaly {
            alarms += 1;
            eprintln!("seed {seed}: {:?}", r.verdict.reasons);
        }
    }
    eprintln!("quiet: {alarms} false alarms in 20");
    assert!(alarms <= 1);
}

#[test]
fn venting_at_1e_9_is_detected_in_every_seed() {
    let (mut spec, path) = scenario("venting.yaml");
    for t in &mut spec.truth {
        if let TruthTerm::DecayingPush {
            accel_rtn_km_s2, ..
        } = t
        {
            *accel_rtn_km_s2 = [0.0, 1e-9, 0.0];
        }
    }
    for seed in 1..=20u64 {
        spec.tracking.seed = seed;
        let (r, _, _) = fit_spec(&spec, &path, vec![]);
        assert!(r.verdict.anomaly, "seed {seed}: missed ({:?})", r.verdict);
    }
}

#[test]
fn stm_and_sensitivities_match_central_differences_over_a_day() {
    let (spec, path) = scenario("storm.yaml");
    let models = spec.models(&path).unwrap();
    let make = || {
        models
            .known
            .build(Path::new("forces"), models.initial.epoch)
            .unwrap()
            .model
    };
    let params = vec![
        Parameter::DragScale,
        Parameter::EmpiricalConstant(1),
        Parameter::EmpiricalCos(0),
        Parameter::EmpiricalLinear(2),
    ];
    let mut fm = FitModel::new(make(), &params, None).unwrap();
    fm.values = vec![1.0, 1e-9, 5e-10, 3e-10];
    let x0 = models.initial.state;
    let options = Options {
        settings: Settings {
            method: Method::Dp853,
            rtol: 1e-13,
            atol: 1e-13,
            ..Settings::default()
        },
        ..Options::default()
    };
    let t_end = 86400.0;
    let run = |fm: &FitModel, x: StateVector| {
        let req = Request {
            x0: x,
            t0_s: 0.0,
            t_end_s: t_end,
            output_times_s: &[t_end],
            stop_times_s: &[],
        };
        propagate_with_partials(fm, &req, &options, &mut Silent)
            .unwrap()
            .remove(0)
    };
    let nominal = run(&fm, x0);
    let mut worst: f64 = 0.0;
    // State columns: steps 1 m and 1 mm/s.
    for j in 0..6 {
        let h = if j < 3 { 1e-3 } else { 1e-6 };
        let (mut xp, mut xm) = (x0, x0);
        xp[j] += h;
        xm[j] -= h;
        let d = (run(&fm, xp).state - run(&fm, xm).state) / (2.0 * h);
        let col = nominal.phi.column(j);
        eprintln!("phi col {j}: {:.2e}", (col - d).norm() / d.norm());
        worst = worst.max((col - d).norm() / d.norm());
    }
    for k in 0..params.len() {
        // Steps large enough that integration noise (rtol 1e-13) stays below 1e-7.
        let h = [1e-3, 1e-10, 1e-10, 1e-8][k];
        let mut fp = FitModel::new(make(), &params, None).unwrap();
        let mut fmn = FitModel::new(make(), &params, None).unwrap();
        fp.values = fm.values.clone();
        fmn.values = fm.values.clone();
        fp.values[k] += h;
        fmn.values[k] -= h;
        let d = (run(&fp, x0).state - run(&fmn, x0).state) / (2.0 * h);
        let col = nominal.sensitivity.column(k);
        let rel = (col - d).norm() / d.norm();
        eprintln!("S col {k}: {rel:.2e}");
        worst = worst.max(rel);
    }
    eprintln!("worst relative difference of Φ and S from central differences: {worst:.2e}");
    assert!(worst < 1e-6, "{worst}");
}

#[test]
fn outliers_are_edited_and_reported() {
    let (spec, path) = scenario("quiet.yaml");
    let mut sim = spec.simulate(&path).unwrap();
    let bad = [100usize, 101, 500, 900, 1300];
    for &i in &bad {
        sim.train.observations[i].as_state_mut().unwrap().r_km[1] += 0.3; // 300 m, 30σ
    }
    let models = spec.models(&path).unwrap();
    let forces = models
        .known
        .build(Path::new("forces"), sim.train.start())
        .unwrap();
    let r = fit(
        &sim.train,
        forces.model.into(),
        &FitOptions::default(),
        &mut QuietFit,
    )
    .unwrap();
    let edited: Vec<usize> = r
        .residuals
        .iter()
        .enumerate()
        .filter(|(_, x)| !x.used)
        .map(|(i, _)| i)
        .collect();
    assert_eq!(edited, bad.to_vec());
    assert!(r.residuals[500].edit_reason.as_ref().unwrap().contains("σ"));
    assert!(!r.verdict.anomaly, "{:?}", r.verdict.reasons);
    let dr = (r.x0 - sim.initial.state).fixed_rows::<3>(0).norm();
    assert!(dr < 0.02, "{dr}");
}

#[test]
fn too_short_or_degenerate_arcs_are_refused_clearly() {
    let (spec, path) = scenario("quiet.yaml");
    let sim = spec.simulate(&path).unwrap();
    let models = spec.models(&path).unwrap();
    let two = Arc {
        observations: sim.train.observations[..2].to_vec(),
        tracking: None,
    };
    let forces = models
        .known
        .build(Path::new("forces"), two.start())
        .unwrap();
    let e = fit(
        &two,
        forces.model.into(),
        &FitOptions::default(),
        &mut QuietFit,
    )
    .unwrap_err()
    .to_string();
    assert!(e.contains("too few"), "{e}");
    // A drag scale without drag in the model.
    let forces = propagator::config::ForcesFile::parse(
        "gravity: { zonal_degree: 2 }\n",
        Path::new("f.yaml"),
    )
    .unwrap()
    .build(Path::new("f.yaml"), sim.train.start())
    .unwrap();
    let e = FitModel::new(forces.model, &[Parameter::DragScale], None)
        .err()
        .unwrap();
    assert!(e.contains("no drag"), "{e}");
}

#[test]
fn velocity_observations_and_tracking_gaps() {
    let (mut spec, path) = scenario("quiet.yaml");
    spec.tracking.velocity = true;
    spec.tracking.pass_s = 600.0;
    spec.tracking.gap_s = 5400.0;
    let (r, truth, arc) = fit_spec(&spec, &path, vec![]);
    assert!(arc.has_velocity());
    assert!(arc.observations.len() < 200, "{}", arc.observations.len());
    assert!(!r.verdict.anomaly, "{:?}", r.verdict.reasons);
    let dr = (r.x0 - truth).fixed_rows::<3>(0).norm();
    assert!(
        dr < 5.0 * r.x0_sigma[..3].iter().map(|s| s * s).sum::<f64>().sqrt(),
        "{dr}"
    );
    assert!(r.residuals.iter().all(|x| matches!(
        x.value,
        ResidualValue::State {
            velocity_km_s: Some(_),
            ..
        }
    )));
}

#[test]
fn a_truth_term_written_as_a_formula_acts_like_the_built_in_one() {
    // The venting push as a formula gives the same arc as the built-in decaying_push.
    let (spec, path) = scenario("venting.yaml");
    let mut f = spec.clone();
    f.truth = vec![TruthTerm::Formula {
        text: "2e-9 * exp(-t / 21600) * T".into(),
    }];
    let a = spec.simulate(&path).unwrap();
    let b = f.simulate(&path).unwrap();
    let worst = a
        .truth
        .points
        .iter()
        .zip(&b.truth.points)
        .map(|(p, q)| (p.state - q.state).fixed_rows::<3>(0).norm())
        .fold(0.0, f64::max);
    assert!(worst < 1e-9, "{worst} km");
    let bad = TruthTerm::Formula {
        text: "exp(-t / k0) * T".into(),
    };
    let mut g = spec.clone();
    g.truth = vec![bad];
    assert!(g
        .simulate(&path)
        .err()
        .unwrap()
        .to_string()
        .contains("k-constants"));
}

/// Fits a noise-free arc with every observation's σ set to `sigma_km`.
fn fit_smooth(spec: &ScenarioSpec, path: &Path, sigma_km: f64) -> FitResult {
    let mut spec = spec.clone();
    spec.tracking.sigma_km = 0.0;
    let sim = spec.simulate(path).unwrap();
    let mut arc = sim.train.clone();
    for o in &mut arc.observations {
        o.as_state_mut().unwrap().sigma_km = sigma_km;
    }
    let forces = spec
        .models(path)
        .unwrap()
        .known
        .build(Path::new("forces"), arc.start())
        .unwrap();
    fit(
        &arc,
        forces.model.into(),
        &FitOptions::default(),
        &mut QuietFit,
    )
    .unwrap()
}

#[test]
fn a_smooth_ephemeris_is_quiet_and_structure_that_matters_still_speaks() {
    // A perfect ephemeris (the quiet scenario without noise) stated at σ = 10 m: the
    // residuals are integration error, far below σ, and correlated as any smooth series
    // is. That must not be called an anomaly.
    let (spec, path) = scenario("quiet.yaml");
    let r = fit_smooth(&spec, &path, 0.01);
    assert!(r.rms_km.unwrap() < 1e-5, "rms {:?} km", r.rms_km);
    assert!(!r.verdict.anomaly, "{:?}", r.verdict.reasons);
    assert!(r.verdict.structure.iter().all(|s| !s.counted));

    // A real unmodelled push, noise-free: its smooth residual is what it is whatever σ
    // says. At 0.2 σ the arc cannot show it; at 0.7 σ it must be flagged by structure
    // alone (χ² is far below its dof there).
    let (vent, path) = scenario("venting.yaml");
    let probe = fit_smooth(&vent, &path, 0.01);
    let rms_axis = probe.rms_km.unwrap() / 3f64.sqrt();
    let below = fit_smooth(&vent, &path, rms_axis / 0.2);
    assert!(!below.verdict.anomaly, "{:?}", below.verdict.reasons);
    let at = fit_smooth(&vent, &path, rms_axis / 0.7);
    eprintln!(
        "smooth venting residual {:.1} m per axis; at 0.7σ: {:?}",
        rms_axis * 1e3,
        at.verdict.reasons
    );
    assert!(at.verdict.anomaly);
    assert!(at.verdict.p_value > 0.01, "χ² alone would have flagged it");
    assert!(at.verdict.reasons.iter().any(|m| m.contains("correlated")));
}

#[test]
fn the_fit_says_why_it_stopped() {
    // A normal fit ends at a solution and says which test ended it; held to one
    // iteration per stage it ends at the limit, not converged, and the verdict says so
    // first (a fit that stopped early must never read as quiet).
    let (spec, path) = scenario("quiet.yaml");
    let sim = spec.simulate(&path).unwrap();
    let models = spec.models(&path).unwrap();
    let build = || {
        models
            .known
            .build(Path::new("forces"), sim.train.start())
            .unwrap()
            .model
    };
    let r = fit(
        &sim.train,
        build().into(),
        &FitOptions::default(),
        &mut QuietFit,
    )
    .unwrap();
    assert!(r.termination.converged(), "{:?}", r.termination);
    let short = FitOptions {
        max_iterations: 1,
        ..FitOptions::default()
    };
    let r = fit(&sim.train, build().into(), &short, &mut QuietFit).unwrap();
    assert_eq!(
        r.termination,
        learned_forces::termination::Termination::IterationLimit
    );
    assert!(r.verdict.anomaly);
    assert!(
        r.verdict.reasons[0].contains("did not converge"),
        "{:?}",
        r.verdict.reasons
    );
}

#[test]
fn a_linear_along_track_drift_is_recovered_and_missed_without_it() {
    // Truth: 2e-10 km/s² per day along T, growing from the arc's start (formula text,
    // t in s). Fitted with `emp_lin_rtn`: the T drift within 3σ of the truth and the
    // R, N ones within 3σ of zero; without it the arc is an anomaly (the gate must fail).
    let (mut spec, path) = scenario("quiet.yaml");
    spec.truth = vec![TruthTerm::Formula {
        text: "2e-10 * (t / 86400) * T".into(),
    }];
    let (bare, _, _) = fit_spec(&spec, &path, vec![]);
    assert!(bare.verdict.anomaly, "{:?}", bare.verdict);
    let words = Parameter::parse_list("emp_lin_rtn").unwrap();
    let (r, _, _) = fit_spec(&spec, &path, words.clone());
    assert!(!r.verdict.anomaly, "{:?}", r.verdict);
    for e in &r.estimates {
        eprintln!("{} = {:.4e} ± {:.2e}", e.parameter.name(), e.value, e.sigma);
    }
    // Along-track is what an arc sees best (radial and normal drifts are weaker there).
    assert!(r.estimates[1].sigma < 2e-11, "σ_T {}", r.estimates[1].sigma);
    for (e, want) in r.estimates.iter().zip([0.0, 2e-10, 0.0]) {
        assert!(
            e.sigma > 0.0 && e.sigma.is_finite(),
            "{} σ {}",
            e.parameter.name(),
            e.sigma
        );
        assert!(
            (e.value - want).abs() < 3.0 * e.sigma,
            "{} = {:.3e} ± {:.1e}, truth {want:e}",
            e.parameter.name(),
            e.value,
            e.sigma
        );
    }
    assert_eq!(r.estimates[1].parameter.name(), "emp_lin_t_km_s2_per_day");
}

#[test]
fn term_parameters_must_come_with_terms_and_in_one_run() {
    // A second run of term parameters would add the terms' acceleration twice: refused,
    // as are term parameters with no terms; one run is accepted, in the given order.
    use learned_forces::expr::{parse, Context, HANDBOOK_ENV};
    use learned_forces::fit::model::ExtraTerms;
    use learned_forces::terms::Terms;
    let (spec, path) = scenario("quiet.yaml");
    let models = spec.models(&path).unwrap();
    let make = || {
        models
            .known
            .build(Path::new("forces"), models.initial.epoch)
            .unwrap()
            .model
    };
    let terms = || ExtraTerms {
        terms: Terms::new(
            vec![parse("exp(-t / k0) * T").unwrap()],
            vec![1e-9],
            vec![20000.0],
        ),
        context: Context {
            radius_km: 6378.1363,
            rotation_rad_s: 7.292115e-5,
            clock: propagator::solar_system::CenturyClock::new(&models.initial.epoch),
            environment: HANDBOOK_ENV,
            host: None,
        },
    };
    use Parameter::*;
    let split = [TermCoefficient(0), DragScale, TermConstant(0)];
    let e = FitModel::new(make(), &split, Some(terms())).err().unwrap();
    assert!(e.contains("one run"), "{e}");
    let e = FitModel::new(make(), &[TermCoefficient(0)], None)
        .err()
        .unwrap();
    assert!(e.contains("need learned terms"), "{e}");
    let ok = [DragScale, TermCoefficient(0), TermConstant(0)];
    let fm = FitModel::new(make(), &ok, Some(terms())).unwrap();
    assert_eq!(fm.parameters(), ok.to_vec());
    // Values start at rest: scale 1, the terms' stored coefficient and constant.
    assert_eq!(fm.values, vec![1.0, 1e-9, 20000.0]);
}
