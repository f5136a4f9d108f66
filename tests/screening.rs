//! Close-approach screening against constructed crossings and a brute-force search.

use propagator::force::two_body::TwoBody;
use propagator::force::zonal::Zonal;
use propagator::propagation::{output_grid, propagate, Options, Request, Silent};
use propagator::screening::{approaches, Track};
use propagator::{ForceModel, StateVector};
use rand_chacha::ChaCha8Rng;
use rand_core::{Rng, SeedableRng};

const MU: f64 = 398_600.441_8;

fn model() -> ForceModel {
    ForceModel::new()
        .with(TwoBody { mu_km3_s2: MU })
        .with(Zonal::egm96(MU, 6378.1363, 2).unwrap())
}

fn run(x0: StateVector, t0: f64, t1: f64, times: &[f64]) -> Vec<StateVector> {
    let req = Request {
        x0,
        t0_s: t0,
        t_end_s: t1,
        output_times_s: times,
        stop_times_s: &[],
    };
    propagate(&model(), &req, &Options::default(), &mut Silent)
        .unwrap()
        .samples
        .into_iter()
        .map(|s| s.1)
        .collect()
}

fn track(x_at_tc: StateVector, tc: f64, span: f64, step: f64) -> Track {
    // Back to t = 0 from the state at tc, then forward over the span.
    let x0 = run(x_at_tc, tc, 0.0, &[0.0])[0];
    let times = output_grid(0.0, span, step);
    Track {
        states: run(x0, 0.0, span, &times),
        times,
    }
}

#[test]
fn constructed_crossing_tca_within_1_ms_and_miss_within_1_m() {
    let a = 7000.0;
    let v = (MU / a).sqrt();
    let tc = 3000.0;
    // Equatorial and polar circular orbits meeting over the x axis, 0.5 km apart radially.
    let p = StateVector::new(a, 0.0, 0.0, 0.0, v, 0.0);
    let s = StateVector::new(a + 0.5, 0.0, 0.0, 0.0, 0.0, (MU / (a + 0.5)).sqrt());
    let (tp, ts) = (track(p, tc, 6000.0, 20.0), track(s, tc, 6000.0, 20.0));
    let found = approaches(&tp, &ts, 5.0);
    assert_eq!(found.len(), 1, "{found:?}");
    // Reference: both propagated to 1 ms steps around tc, the minimum of the range.
    let fine: Vec<f64> = (0..4001).map(|k| tc - 2.0 + k as f64 * 1e-3).collect();
    let (xp, xs) = (
        run(tp.states[0], 0.0, tc + 2.0, &fine),
        run(ts.states[0], 0.0, tc + 2.0, &fine),
    );
    let (k, d) = xp
        .iter()
        .zip(&xs)
        .map(|(a, b)| (a - b).fixed_rows::<3>(0).norm())
        .enumerate()
        .min_by(|a, b| a.1.total_cmp(&b.1))
        .unwrap();
    let f = found[0];
    eprintln!(
        "TCA {:.6} s (reference {:.3}), miss {:.6} km (reference {:.6})",
        f.tca_s, fine[k], f.miss_km, d
    );
    assert!((f.tca_s - fine[k]).abs() < 1e-3);
    assert!((f.miss_km - d).abs() < 1e-3);
    assert!((f.miss_rtn_km[0] - 0.5).abs() < 0.01, "{:?}", f.miss_rtn_km);
    assert!(f.relative_speed_km_s > 10.0);
}

#[test]
fn nothing_missed_against_brute_force_1_s_sampling_on_200_pairs() {
    let mut rng = ChaCha8Rng::seed_from_u64(99);
    let mut u = || (rng.next_u64() >> 11) as f64 / (1u64 << 53) as f64;
    let span = 12.0 * 3600.0;
    let threshold = 150.0;
    let (mut total, mut matched) = (0, 0);
    for _ in 0..200 {
        let mut pair = Vec::new();
        for _ in 0..2 {
            let a = 6900.0 + 40.0 * u();
            let i = std::f64::consts::PI * u();
            let raan = std::f64::consts::TAU * u();
            let arg = std::f64::consts::TAU * u();
            let v = (MU / a).sqrt();
            let (sr, cr, si, ci, sa, ca) = (
                raan.sin(),
                raan.cos(),
                i.sin(),
                i.cos(),
                arg.sin(),
                arg.cos(),
            );
            let r = [
                a * (cr * ca - sr * sa * ci),
                a * (sr * ca + cr * sa * ci),
                a * sa * si,
            ];
            let w = [
                v * (-cr * sa - sr * ca * ci),
                v * (-sr * sa + cr * ca * ci),
                v * ca * si,
            ];
            pair.push(StateVector::new(r[0], r[1], r[2], w[0], w[1], w[2]));
        }
        let coarse = output_grid(0.0, span, 20.0);
        let fine = output_grid(0.0, span, 1.0);
        let tp = Track {
            states: run(pair[0], 0.0, span, &coarse),
            times: coarse.clone(),
        };
        let ts = Track {
            states: run(pair[1], 0.0, span, &coarse),
            times: coarse.clone(),
        };
        let found = approaches(&tp, &ts, threshold);
        let (fp, fs) = (
            run(pair[0], 0.0, span, &fine),
            run(pair[1], 0.0, span, &fine),
        );
        let d: Vec<f64> = fp
            .iter()
            .zip(&fs)
            .map(|(a, b)| (a - b).fixed_rows::<3>(0).norm())
            .collect();
        for k in 1..d.len() - 1 {
            if d[k] < threshold && d[k] <= d[k - 1] && d[k] <= d[k + 1] {
                total += 1;
                assert!(
                    found
                        .iter()
                        .any(|a| (a.tca_s - fine[k]).abs() <= 1.0 && a.miss_km <= d[k] + 1e-3),
                    "missed an approach at t = {} s, {} km (found {found:?})",
                    fine[k],
                    d[k]
                );
                matched += 1;
            }
        }
    }
    eprintln!("brute force found {total} approaches below {threshold} km; all {matched} matched");
    assert!(total > 0);
}
