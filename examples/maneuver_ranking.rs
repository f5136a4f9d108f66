//! Ranking maneuver hypotheses through the library API, as a mission planner's tool
//! would: simulate an arc with a small burn (invented), linearize around the base fit,
//! and rank no maneuver / impulsive / finite burn / continuous thrust.
//!
//!     cargo run --release --example maneuver_ranking

use learned_forces::expr::Context;
use learned_forces::fit::QuietFit;
use learned_forces::learn::rank::{rank, Hypothesis};
use learned_forces::learn::{linearize, LearnOptions};
use learned_forces::scenario::{ScenarioSpec, TruthTerm};
use propagator::config::{ImpulsiveSpec, ManeuverSpec};
use propagator::solar_system::CenturyClock;
use std::path::Path;

fn main() {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("examples/scenarios/quiet.yaml");
    let mut spec = ScenarioSpec::load(&path).expect("scenario");
    // The invented truth: a 0.3 m/s along-track burn nobody announced.
    spec.truth = vec![TruthTerm::Maneuver(ManeuverSpec::Impulsive(
        ImpulsiveSpec {
            epoch_utc: "2031-05-04T10:00:30Z".into(),
            dv_rtn_km_s: Some([0.0, 0.0003, 0.0]),
            dv_eci_km_s: None,
        },
    ))];
    let sim = spec.simulate(&path).expect("simulation");
    let known = spec.models(&path).expect("models").known;
    let k2 = known.clone();
    let make = move |e: propagator::Epoch| {
        k2.build(Path::new("forces"), e)
            .map(|l| l.model)
            .map_err(|e| e.to_string())
    };
    let ctx = Context {
        radius_km: known.central_body.radius_km,
        rotation_rad_s: known.central_body.rotation_rad_s,
        clock: CenturyClock::new(&sim.train.start()),
        environment: learned_forces::expr::HANDBOOK_ENV,
        host: None,
    };
    let (_, problem) = linearize(
        &sim.train,
        &make,
        ctx,
        &LearnOptions::default(),
        &mut QuietFit,
    )
    .expect("base fit");
    let hypotheses = [
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
    ];
    for (i, r) in rank(&problem, &hypotheses).iter().enumerate() {
        println!(
            "{}. {:<24} BIC {:>14.1}  log10 evidence vs none {:>12.1}",
            i + 1,
            r.name,
            r.bic,
            r.log10_evidence_vs_none
        );
        for p in &r.params {
            println!("     {} = {:.6e} ± {:.2e}", p.name, p.value, p.sigma);
        }
    }
    println!("A screening aid: maneuver decisions follow the operator's own procedures.");
}
