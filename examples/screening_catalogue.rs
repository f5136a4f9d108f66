//! Screening through the library API: one primary (with its learned force, if a learned
//! file is given) against a catalogue of secondaries, J2, over 7 days, in parallel.
//!
//!     cargo run --release --example screening_catalogue -- [N_SECONDARIES] [LEARNED.yaml]
//!
//! The catalogue here is invented (random LEO orbits, seeded). Covariance-free: a
//! screening aid; collision-avoidance decisions follow the operator's own procedures.

use learned_forces::learned_file::LearnedFile;
use propagator::force::two_body::TwoBody;
use propagator::force::zonal::Zonal;
use propagator::propagation::{output_grid, propagate, Options, Request, Silent};
use propagator::screening::{approaches, Track};
use propagator::{Epoch, ForceModel, StateVector};
use rand_chacha::ChaCha8Rng;
use rand_core::{Rng, SeedableRng};
use rayon::prelude::*;
use std::time::Instant;

const MU: f64 = 398_600.441_8;

fn model() -> ForceModel {
    ForceModel::new()
        .with(TwoBody { mu_km3_s2: MU })
        .with(Zonal::egm96(MU, 6378.1363, 2).unwrap())
}

fn random_orbit(rng: &mut ChaCha8Rng) -> StateVector {
    let mut u = || (rng.next_u64() >> 11) as f64 / (1u64 << 53) as f64;
    let a = 6778.0 + 600.0 * u();
    let (i, raan, arg) = (
        std::f64::consts::PI * u(),
        std::f64::consts::TAU * u(),
        std::f64::consts::TAU * u(),
    );
    let v = (MU / a).sqrt();
    let (sr, cr, si, ci, sa, ca) = (
        raan.sin(),
        raan.cos(),
        i.sin(),
        i.cos(),
        arg.sin(),
        arg.cos(),
    );
    StateVector::new(
        a * (cr * ca - sr * sa * ci),
        a * (sr * ca + cr * sa * ci),
        a * sa * si,
        v * (-cr * sa - sr * ca * ci),
        v * (-sr * sa + cr * ca * ci),
        v * ca * si,
    )
}

/// Samples an object every 30 s over the window.
pub fn track(model: &ForceModel, x0: StateVector, grid: &[f64]) -> Option<Track> {
    let req = Request {
        x0,
        t0_s: 0.0,
        t_end_s: *grid.last()?,
        output_times_s: grid,
        stop_times_s: &[],
    };
    let p = propagate(model, &req, &Options::default(), &mut Silent).ok()?;
    (p.samples.len() == grid.len()).then(|| Track {
        times: grid.to_vec(),
        states: p.samples.into_iter().map(|s| s.1).collect(),
    })
}

fn main() {
    let args: Vec<String> = std::env::args().collect();
    let n: usize = args.get(1).and_then(|s| s.parse().ok()).unwrap_or(1000);
    let epoch = Epoch::parse_utc("2031-05-04T00:00:00Z").unwrap();
    let mut primary_model = model();
    if let Some(path) = args.get(2) {
        let f = LearnedFile::load(std::path::Path::new(path)).expect("a learned-force file");
        primary_model.push(Box::new(f.force(&epoch).expect("a usable learned force")));
    }
    let grid = output_grid(0.0, 7.0 * 86400.0, 30.0);
    let mut rng = ChaCha8Rng::seed_from_u64(2031);
    let primary = track(&primary_model, random_orbit(&mut rng), &grid).expect("primary");
    let catalogue: Vec<StateVector> = (0..n).map(|_| random_orbit(&mut rng)).collect();
    let started = Instant::now();
    let found: Vec<(usize, f64, f64)> = catalogue
        .par_iter()
        .enumerate()
        .flat_map_iter(|(i, x)| {
            let m = model();
            let t = track(&m, *x, &grid);
            t.map(|t| approaches(&primary, &t, 5.0))
                .unwrap_or_default()
                .into_iter()
                .map(move |a| (i, a.tca_s, a.miss_km))
        })
        .collect();
    let secs = started.elapsed().as_secs_f64();
    println!("screened 1 primary against {n} secondaries over 7 days (J2) in {secs:.1} s: {} approaches below 5 km", found.len());
    for (i, t, d) in found.iter().take(10) {
        println!(
            "  secondary {i}: TCA {} miss {d:.3} km",
            epoch.plus_seconds(*t)
        );
    }
    println!("Covariance-free screening: a screening aid only.");
}
