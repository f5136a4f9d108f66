use super::*;

/// y′ = cos(t)·y, y(0) = 1: exact y = exp(sin t). Time-dependent, so a wrong node c_i
/// shows at once.
struct Oscillating;
impl OdeSystem for Oscillating {
    fn dim(&self) -> usize {
        1
    }
    fn rhs(&mut self, t: f64, y: &[f64], dy: &mut [f64]) -> Result<(), ForceError> {
        dy[0] = t.cos() * y[0];
        Ok(())
    }
}

/// Planar Kepler problem, μ = 1.
struct Kepler;
impl OdeSystem for Kepler {
    fn dim(&self) -> usize {
        4
    }
    fn rhs(&mut self, _t: f64, y: &[f64], dy: &mut [f64]) -> Result<(), ForceError> {
        let r3 = (y[0] * y[0] + y[1] * y[1]).powf(1.5);
        dy[0] = y[2];
        dy[1] = y[3];
        dy[2] = -y[0] / r3;
        dy[3] = -y[1] / r3;
        Ok(())
    }
}

fn run<S: OdeSystem>(sys: &mut S, settings: Settings, y0: &[f64], t_end: f64) -> (Vec<f64>, Stats) {
    let mut st = AnyStepper::new(&settings, y0.len());
    st.start(sys, 0.0, y0, t_end).unwrap();
    while st.t() < t_end {
        st.step(sys, t_end).unwrap();
    }
    (st.y().to_vec(), st.stats())
}

fn adaptive(method: Method, tol: f64) -> Settings {
    Settings {
        method,
        rtol: tol,
        atol: tol,
        max_step_s: 1e9,
        ..Settings::default()
    }
}

#[test]
fn adaptive_methods_solve_a_time_dependent_problem() {
    for (m, tol, want) in [(Method::Dp54, 1e-10, 1e-8), (Method::Dp853, 1e-12, 1e-10)] {
        let (y, _) = run(&mut Oscillating, adaptive(m, tol), &[1.0], 20.0);
        let exact = 20f64.sin().exp();
        assert!((y[0] - exact).abs() < want, "{m:?}: {} vs {exact}", y[0]);
    }
}

#[test]
fn dense_output_matches_stopping_exactly() {
    // Elliptic orbit e = 0.6; dense output at odd times vs integrations that stop there.
    let y0 = [0.4, 0.0, 0.0, (1.6f64 / 0.4).sqrt()];
    for (m, tol, want) in [(Method::Dp54, 1e-11, 1e-8), (Method::Dp853, 1e-13, 1e-10)] {
        let settings = adaptive(m, tol);
        let mut st = AnyStepper::new(&settings, 4);
        st.start(&mut Kepler, 0.0, &y0, 10.0).unwrap();
        let probes = [0.37, 1.234, 3.1, 5.5, 7.77, 9.99];
        let mut k = 0;
        let mut buf = [0.0; 4];
        while st.t() < 10.0 {
            st.step(&mut Kepler, 10.0).unwrap();
            while k < probes.len() && probes[k] <= st.t() {
                st.dense_at(&mut Kepler, probes[k], &mut buf).unwrap();
                let (direct, _) = run(&mut Kepler, settings, &y0, probes[k]);
                for i in 0..4 {
                    assert!(
                        (buf[i] - direct[i]).abs() < want,
                        "{m:?} t={} comp {i}: {} vs {}",
                        probes[k],
                        buf[i],
                        direct[i]
                    );
                }
                k += 1;
            }
        }
        assert_eq!(k, probes.len());
    }
}

#[test]
fn rk4_converges_at_fourth_order() {
    let y0 = [1.0, 0.0, 0.0, 1.1];
    let reference = run(&mut Kepler, adaptive(Method::Dp853, 1e-14), &y0, 6.0).0;
    let mut errs = Vec::new();
    for h in [0.02, 0.01, 0.005] {
        let s = Settings {
            method: Method::Rk4,
            fixed_step_s: h,
            ..Settings::default()
        };
        let y = run(&mut Kepler, s, &y0, 6.0).0;
        errs.push(((y[0] - reference[0]).powi(2) + (y[1] - reference[1]).powi(2)).sqrt());
    }
    for w in errs.windows(2) {
        let order = (w[0] / w[1]).log2();
        assert!(
            (order - 4.0).abs() < 0.25,
            "observed order {order} ({errs:?})"
        );
    }
}

#[test]
fn dop853_agrees_with_ode_solvers() {
    // An independent implementation with the same tableau: ode_solvers' Dop853.
    use ode_solvers::{Dop853 as OdeDop853, System, Vector4};
    struct K;
    impl System<f64, Vector4<f64>> for K {
        fn system(&self, _t: f64, y: &Vector4<f64>, dy: &mut Vector4<f64>) {
            let r3 = (y[0] * y[0] + y[1] * y[1]).powf(1.5);
            dy[0] = y[2];
            dy[1] = y[3];
            dy[2] = -y[0] / r3;
            dy[3] = -y[1] / r3;
        }
    }
    let y0 = [0.5, 0.0, 0.0, (1.5f64 / 0.5).sqrt()];
    let mut s = OdeDop853::new(
        K,
        0.0,
        20.0,
        20.0,
        Vector4::from_column_slice(&y0),
        1e-12,
        1e-12,
    );
    s.set_output(ode_solvers::OutputType::Sparse);
    s.integrate().unwrap();
    let theirs = *s.y_out().last().unwrap();
    let (ours, _) = run(&mut Kepler, adaptive(Method::Dp853, 1e-12), &y0, 20.0);
    for i in 0..4 {
        assert!(
            (ours[i] - theirs[i]).abs() < 1e-9,
            "comp {i}: {} vs {}",
            ours[i],
            theirs[i]
        );
    }
}

#[test]
fn stop_time_is_hit_exactly_and_backward_works() {
    let y0 = [1.0, 0.0, 0.0, 1.0];
    let (fwd, _) = run(&mut Kepler, adaptive(Method::Dp853, 1e-13), &y0, 2.5);
    let s = adaptive(Method::Dp853, 1e-13);
    let mut st = AnyStepper::new(&s, 4);
    st.start(&mut Kepler, 2.5, &fwd, 0.0).unwrap();
    while st.t() > 0.0 {
        st.step(&mut Kepler, 0.0).unwrap();
    }
    assert_eq!(st.t(), 0.0);
    for i in 0..4 {
        assert!((st.y()[i] - y0[i]).abs() < 1e-10);
    }
}

#[test]
fn failing_rhs_is_an_error_not_a_zero() {
    struct Fails;
    impl OdeSystem for Fails {
        fn dim(&self) -> usize {
            1
        }
        fn rhs(&mut self, t: f64, _y: &[f64], dy: &mut [f64]) -> Result<(), ForceError> {
            if t > 1.0 {
                return Err(ForceError {
                    force: "test".into(),
                    t_s: t,
                    reason: "broken".into(),
                });
            }
            dy[0] = 1.0;
            Ok(())
        }
    }
    for m in [Method::Rk4, Method::Dp54, Method::Dp853] {
        let s = Settings {
            method: m,
            fixed_step_s: 0.1,
            ..Settings::default()
        };
        let mut st = AnyStepper::new(&s, 1);
        st.start(&mut Fails, 0.0, &[0.0], 5.0).unwrap();
        let mut err = None;
        for _ in 0..1000 {
            match st.step(&mut Fails, 5.0) {
                Ok(_) => {}
                Err(e) => {
                    err = Some(e);
                    break;
                }
            }
        }
        assert!(matches!(err, Some(IntegrationError::Force(_))), "{m:?}");
    }
}
