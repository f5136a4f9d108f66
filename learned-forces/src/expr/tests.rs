use super::num::{cross3, dot3, norm3};
use super::*;
use propagator::solar_system::CenturyClock;
use propagator::StateVector;

fn ctx() -> Context {
    Context {
        radius_km: 6378.1363,
        rotation_rad_s: 7.292115e-5,
        clock: CenturyClock { t0_centuries: 0.31 },
        environment: crate::expr::HANDBOOK_ENV,
        host: None,
    }
}

#[test]
fn parses_prints_and_round_trips() {
    for text in [
        "exp(-t / k0) * T",
        "cos(u) * R + sin(u) * R",
        "rho * norm(vrel) * vrel",
        "2.5e-9 * T - -3 * N",
        "cross(r, v) / norm(cross(r, v))",
        "dot(sun, R) * lit * sun",
        "(h - 400)^2 * exp(-h / 58.5) * T",
        "-(cos(u) * R)",
        "t^(-2) * R",
        "step((t - k0) / k1) * T",
        "sin(2 * pi * t / k0 + k1) * rho * norm(vrel) * vrel",
        "T + -(cos(u) * R)",
        "exp(-t / k0) * T + -2 * N",
        "(((t / k0)^2)^2)^3 * T",
    ] {
        let n = parse(text).unwrap().simplify();
        let printed = n.to_string();
        // Read back, the same tree once simplified (`2 * pi` reads as a product).
        let again = parse(&printed).unwrap().simplify();
        assert_eq!(again, n, "{text} → {printed}");
        assert_eq!(again.to_string(), printed);
    }
}

#[test]
fn type_and_syntax_errors_are_named() {
    for (bad, needle) in [
        ("T * R", "vector × vector"),
        ("t + T", "adding a scalar"),
        ("exp(T)", "needs a scalar"),
        ("t", "must be a vector"),
        ("foo * T", "unknown name `foo`"),
        ("exp(t * T", "expected `)`"),
        ("T / R", "dividing by a vector"),
        ("t^17 * T", "small non-zero"),
        ("", "end of the formula"),
        ("T $", "unexpected `$`"),
        ("step(T) * R", "needs a scalar"),
    ] {
        let e = parse(bad).unwrap_err().to_string();
        assert!(e.contains(needle), "{bad}: {e}");
    }
    let deep = format!("{}T{}", "(".repeat(200), ")".repeat(200));
    assert!(parse(&deep)
        .unwrap_err()
        .to_string()
        .contains("nested deeper"));
}

#[test]
fn formulas_read_as_written_by_hand() {
    let read = |text: &str| parse(text).unwrap().simplify().to_string();
    // Powers fold: ((x²)²)³ = x¹²; past the largest power they stay apart.
    assert_eq!(read("((t^2)^2)^3 * T"), "t^12 * T");
    assert_eq!(read("((t^4)^4)^2 * T"), "(t^16)^2 * T");
    // `a + -b` prints as `a - b`, for numbers and negations alike.
    assert_eq!(read("T + -(cos(u) * R)"), "T - cos(u) * R");
    assert_eq!(read("T + -2 * N"), "T - 2 * N");
    assert_eq!(read("(t + -2) * T"), "(t - 2) * T");
    // π by name, and a full turn as 2π.
    assert_eq!(read("sin(2 * pi * t / k0) * T"), "sin(2 * pi * t / k0) * T");
    assert_eq!(read("cos(pi * t) * T"), "cos(pi * t) * T");
    let n = parse("sin(2 * pi * t / 100) * T").unwrap();
    let p = Terminals::of_state(
        25.0,
        &StateVector::new(7000.0, 0.0, 0.0, 0.0, 7.5, 0.0),
        &ctx(),
    );
    // A quarter period: sin(π/2) = 1, along T.
    assert!((n.eval(&p, &[]).vector()[1] - 1.0).abs() < 1e-12);
}

#[test]
fn simplification_folds_and_drops_identities() {
    let n = parse("(1 * T + 0 * t * R) * exp(0)").unwrap();
    // 0 * t is folded; the vector 0 * R stays (a vector zero has no literal).
    assert_eq!(parse("1 * T * 1").unwrap().simplify().to_string(), "T");
    assert_eq!(parse("--T").unwrap().simplify().to_string(), "T");
    assert_eq!(
        parse("(2 + 3) * T").unwrap().simplify().to_string(),
        "5 * T"
    );
    assert!(n.simplify().complexity() < n.complexity());
}

#[test]
fn terminals_are_the_physics() {
    let c = ctx();
    let x = StateVector::new(6878.0, 10.0, -20.0, 0.01, 5.0, 5.5);
    let p = Terminals::of_state(100.0, &x, &c);
    let v = |s: &str| parse(s).unwrap().eval(&p, &[]).vector();
    // R, T, N are orthonormal and right-handed; T is along the velocity for this orbit.
    let (r, t, n) = (v("R"), v("T"), v("N"));
    assert!((dot3(r, t)).abs() < 1e-15 && (norm3(n) - 1.0).abs() < 1e-15);
    assert!((cross3(r, t)[0] - n[0]).abs() < 1e-15);
    assert!(dot3(t, [x[3], x[4], x[5]]) > 0.0);
    // h = |r| − R; rho from the handbook table at h.
    assert!((p.h - (norm3([6878.0, 10.0, -20.0]) - 6378.1363)).abs() < 1e-12);
    let table = propagator::atmosphere::PiecewiseExponential::handbook();
    use propagator::atmosphere::Atmosphere;
    assert!((p.rho / table.density_kg_m3(p.h).unwrap() - 1.0).abs() < 1e-14);
    // u of a point on the ascending node is 0.
    let node = StateVector::new(7000.0, 0.0, 0.0, 0.0, 5.0, 5.0);
    assert!(Terminals::of_state(0.0, &node, &c).u.abs() < 1e-12);
}

#[test]
fn dual_partials_match_central_differences() {
    let c = ctx();
    let x = StateVector::new(5000.0, -4000.0, 2000.0, 3.0, 4.0, 5.0);
    for text in [
        "exp(-t / k0) * T",
        "cos(u) * R + sin(u) * N",
        "rho * norm(vrel) * vrel",
        "cross(R, sun) * lit / h",
        "step((norm(r) - 6700) / 10) * T",
    ] {
        let n = parse(text).unwrap();
        let params = [21600.0];
        let d = n
            .eval(&Terminals::of_state_dual(1000.0, &x, &c), &params)
            .vector();
        for k in 0..6 {
            let h = if k < 3 { 1e-3 } else { 1e-6 };
            let (mut xp, mut xm) = (x, x);
            xp[k] += h;
            xm[k] -= h;
            let fp = n
                .eval(&Terminals::of_state(1000.0, &xp, &c), &params)
                .vector();
            let fm = n
                .eval(&Terminals::of_state(1000.0, &xm, &c), &params)
                .vector();
            for i in 0..3 {
                let fd = (fp[i] - fm[i]) / (2.0 * h);
                let scale = d
                    .iter()
                    .map(|q| q.d[k].abs())
                    .fold(0.0, f64::max)
                    .max(1e-30);
                assert!(
                    (d[i].d[k] - fd).abs() < 1e-5 * scale + 1e-18,
                    "{text}: ∂{i}/∂x{k} {} vs {fd}",
                    d[i].d[k]
                );
            }
        }
    }
}

#[test]
fn direction_variants_swap_one_terminal_or_one_trig_function() {
    let n = parse("sin(u) * T").unwrap();
    let texts: Vec<String> = n
        .direction_variants()
        .iter()
        .map(|v| v.to_string())
        .collect();
    // sin → cos, and T → each of the five other vector terminals.
    for want in [
        "cos(u) * T",
        "sin(u) * R",
        "sin(u) * N",
        "sin(u) * vrel",
        "sin(u) * v",
        "sin(u) * r",
    ] {
        assert!(texts.iter().any(|t| t == want), "{want} not in {texts:?}");
    }
    assert_eq!(texts.len(), 6, "{texts:?}");
    // Two swaps reach the radial form in quadrature.
    let two: Vec<String> = n
        .direction_variants()
        .iter()
        .flat_map(|v| v.direction_variants())
        .map(|v| v.to_string())
        .collect();
    assert!(two.iter().any(|t| t == "cos(u) * R"));
    // A compound direction may stand for a unit vector.
    let c: Vec<String> = parse("cos(u) * (vrel / norm(vrel))")
        .unwrap()
        .direction_variants()
        .iter()
        .map(|v| v.to_string())
        .collect();
    assert!(c.iter().any(|t| t == "cos(u) * T"), "{c:?}");
    // Nothing to swap in a scalar-only factor times `sun`.
    assert!(parse("exp(-t / 100) * sun")
        .unwrap()
        .direction_variants()
        .is_empty());
}

#[test]
fn canonical_order_puts_radial_before_along_track_and_cos_before_sin() {
    use crate::learn::canonical_key;
    let key = |s: &str| canonical_key(&parse(s).unwrap());
    assert!(key("cos(u) * R") < key("sin(u) * T"));
    // Radial before along-track whatever the phase.
    assert!(key("sin(u) * R") < key("cos(u) * T"));
    assert!(key("sin(u) * R") < key("sin(u) * T"));
    assert!(key("cos(u) * T") < key("sin(u) * T"));
    assert!(key("sin(u) * T") < key("sin(u) * vrel"));
    assert!(key("exp(-t / k0) * T") < key("exp(-t / k0) * v"));
    // The simpler form first.
    assert!(key("cos(u) * T") < key("cos(u) * (vrel / norm(vrel))"));
    // Words that merely contain the letters are not terminals.
    assert!(key("norm(r) * T") != key("norm(v) * T"));
}

#[test]
fn unit_vectors_simplify() {
    for (text, want) in [
        ("rho * norm(R)^2 * T", "rho * T"),
        ("dot(T, T) * N", "N"),
        ("norm(sun) * sun", "sun"),
        ("(1 + dot(R, N)) * R", "R"),
        ("dot(R, sun) * T", "dot(R, sun) * T"),
    ] {
        assert_eq!(parse(text).unwrap().simplify().to_string(), want, "{text}");
    }
}

#[test]
fn a_long_text_of_multibyte_characters_reports_a_position_inside_it() {
    // 3000 'Δ' are 6000 bytes but 3000 characters (a fuzzer-found case).
    let text = "Δ".repeat(3000);
    let e = crate::expr::parse(&text).unwrap_err();
    assert!(e.position <= text.chars().count(), "{e}");
}

#[test]
fn the_smooth_step_switches_on_with_exact_partials() {
    // step(x) = 1 / (1 + e^(−x)) (the logistic function, from memory): 1/2 at 0, its
    // slope 1/4 there, e^x / (1 + e^x)² in general; symmetric: step(−x) = 1 − step(x).
    let c = ctx();
    let n = parse("step((t - 40000) / 600) * T").unwrap();
    let x = StateVector::new(6878.0, 10.0, -20.0, 0.01, 4.8, 5.9);
    let along = |t: f64| {
        let p = Terminals::of_state(t, &x, &c);
        let a = n.eval(&p, &[]).vector();
        dot3(a, p.th)
    };
    assert!((along(40000.0) - 0.5).abs() < 1e-15);
    assert!(along(30000.0) < 1e-7 && along(50000.0) > 1.0 - 1e-7);
    assert!((along(40600.0) + along(39400.0) - 1.0).abs() < 1e-15);
    // The steepest slope, 1/4 per unit of x = 1/(4·600) per second, by central
    // differences in t.
    let slope = (along(40001.0) - along(39999.0)) / 2.0;
    assert!((slope * 2400.0 - 1.0).abs() < 1e-6, "{slope}");
    // Folded when constant, kept when not; and the plugin's code is its formula.
    assert_eq!(
        parse("step(0) * T").unwrap().simplify().to_string(),
        "0.5 * T"
    );
    assert_eq!(Op1::Step.code(Ty::Scalar, "x0"), "logistic(x0)");
    // Far from the switch, on either side, the partials stay finite (e^(−x) overflows
    // there; a naive 1/(1 + e^(−x)) gives a dual number ∞/∞ = NaN).
    for x0 in [-800.0f64, -40.0, 0.3, 40.0, 800.0] {
        let d = num::logistic(num::Dual::var(x0, 0));
        assert!(
            d.v.is_finite() && d.d.iter().all(|v| v.is_finite()),
            "{x0}: {d:?}"
        );
        let exact = (-x0.abs()).exp() / (1.0 + (-x0.abs()).exp()).powi(2);
        assert!(
            (d.d[0] - exact).abs() <= 1e-15 + 1e-12 * exact,
            "{x0}: {d:?}"
        );
    }
}
