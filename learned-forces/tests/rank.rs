//! Maneuver hypotheses ranked on simulated arcs.

use learned_forces::expr::Context;
use learned_forces::fit::QuietFit;
use learned_forces::learn::rank::{rank, Hypothesis};
use learned_forces::learn::{linearize, LearnOptions};
use learned_forces::scenario::{ScenarioSpec, TruthTerm};
use propagator::config::{ImpulsiveSpec, ManeuverSpec};
use propagator::solar_system::CenturyClock;
use std::path::Path;

fn hypotheses() -> Vec<Hypothesis> {
    vec![
        Hypothesis::NoManeuver,
        Hypothesis::Impulsive {
            from_s: 3600.0,
            to_s: 82800.0,
        },
        Hypothesis::FiniteBurn {
            from_s: 3600.0,
            to_s: 82800.0,
            max_duration_s: 3600.0,
        },
        Hypothesis::ContinuousAlongTrack,
    ]
}

fn ranked(spec: &ScenarioSpec, path: &Path) -> Vec<learned_forces::learn::rank::Ranked> {
    let sim = spec.simulate(path).unwrap();
    let models = spec.models(path).unwrap();
    let known = models.known.clone();
    let make = move |e: propagator::Epoch| {
        known
            .build(Path::new("forces"), e)
            .map(|l| l.model)
            .map_err(|e| e.to_string())
    };
    let ctx = Context {
        radius_km: 6378.1363,
        rotation_rad_s: 7.292115e-5,
        clock: CenturyClock::new(&sim.train.start()),
    };
    let (_, problem) = linearize(
        &sim.train,
        &make,
        ctx,
        &LearnOptions::default(),
        &mut QuietFit,
    )
    .unwrap();
    rank(&problem, &hypotheses())
}

#[test]
fn an_impulsive_burn_ranks_first_with_its_epoch_and_dv() {
    let p = Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/scenarios/quiet.yaml");
    let mut spec = ScenarioSpec::load(&p).unwrap();
    spec.truth = vec![TruthTerm::Maneuver(ManeuverSpec::Impulsive(
        ImpulsiveSpec {
            epoch_utc: "2031-05-04T10:00:30Z".into(),
            dv_rtn_km_s: Some([0.0, 0.0003, 0.0]),
            dv_eci_km_s: None,
        },
    ))];
    let r = ranked(&spec, &p);
    for h in &r {
        eprintln!(
            "{} BIC {:.1} log10 evidence {:.1} {:?}",
            h.name, h.bic, h.log10_evidence_vs_none, h.params
        );
    }
    assert_eq!(r[0].name, "impulsive");
    let epoch = &r[0].params[0];
    assert!((epoch.value - 36030.0).abs() < 60.0, "{epoch:?}");
    let dvt = &r[0].params[2];
    assert!(
        (dvt.value - 3e-4).abs() < 3.0 * dvt.sigma + 0.05 * 3e-4,
        "{dvt:?}"
    );
}

#[test]
fn the_quiet_arc_ranks_no_maneuver_first() {
    let p = Path::new(env!("CARGO_MANIFEST_DIR")).join("../examples/scenarios/quiet.yaml");
    let spec = ScenarioSpec::load(&p).unwrap();
    let r = ranked(&spec, &p);
    for h in &r {
        eprintln!("{} BIC {:.1}", h.name, h.bic);
    }
    assert_eq!(r[0].name, "no_maneuver");
}
