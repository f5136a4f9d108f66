//! Statistics for the anomaly verdict: χ² tail probabilities and the Ljung–Box test of
//! residual autocorrelation.

/// ln Γ(x) for x > 0 (Lanczos approximation, g = 7, n = 9; Press et al., *Numerical
/// Recipes*, 3rd ed., §6.1; relative error below 1e-15).
pub fn ln_gamma(x: f64) -> f64 {
    const G: f64 = 7.0;
    const C: [f64; 9] = [
        0.999_999_999_999_809_9,
        676.520_368_121_885_1,
        -1_259.139_216_722_402_8,
        771.323_428_777_653_1,
        -176.615_029_162_140_6,
        12.507_343_278_686_905,
        -0.138_571_095_265_720_12,
        9.984_369_578_019_572e-6,
        1.505_632_735_149_311_6e-7,
    ];
    if x < 0.5 {
        // Reflection.
        return (std::f64::consts::PI / (std::f64::consts::PI * x).sin()).ln() - ln_gamma(1.0 - x);
    }
    let x = x - 1.0;
    let mut a = C[0];
    let t = x + G + 0.5;
    for (i, c) in C.iter().enumerate().skip(1) {
        a += c / (x + i as f64);
    }
    0.5 * (2.0 * std::f64::consts::PI).ln() + (x + 0.5) * t.ln() - t + a.ln()
}

/// Upper regularized incomplete gamma Q(a, x) = Γ(a, x)/Γ(a) (series for x < a + 1,
/// Lentz's continued fraction otherwise; Numerical Recipes §6.2).
pub fn gamma_q(a: f64, x: f64) -> f64 {
    if x <= 0.0 {
        return 1.0;
    }
    let ln_pre = -x + a * x.ln() - ln_gamma(a);
    if x < a + 1.0 {
        let mut sum = 1.0 / a;
        let mut term = sum;
        let mut ap = a;
        for _ in 0..100_000 {
            ap += 1.0;
            term *= x / ap;
            sum += term;
            if term.abs() < sum.abs() * 1e-16 {
                break;
            }
        }
        (1.0 - sum * ln_pre.exp()).clamp(0.0, 1.0)
    } else {
        let tiny = 1e-300;
        let mut b = x + 1.0 - a;
        let mut c = 1.0 / tiny;
        let mut d = 1.0 / b;
        let mut h = d;
        for i in 1..100_000 {
            let an = -(i as f64) * (i as f64 - a);
            b += 2.0;
            d = an * d + b;
            if d.abs() < tiny {
                d = tiny;
            }
            c = b + an / c;
            if c.abs() < tiny {
                c = tiny;
            }
            d = 1.0 / d;
            let del = d * c;
            h *= del;
            if (del - 1.0).abs() < 1e-16 {
                break;
            }
        }
        (ln_pre.exp() * h).clamp(0.0, 1.0)
    }
}

/// P(X ≥ x) for X ~ χ²(dof).
pub fn chi2_sf(x: f64, dof: f64) -> f64 {
    gamma_q(dof / 2.0, x / 2.0)
}

/// The Ljung–Box statistic Q = n(n+2) Σ_{k=1..h} ρ_k²/(n−k) of a series and its
/// p-value under the white-noise hypothesis (Q ~ χ²(h); Ljung & Box 1978, Biometrika 65).
pub fn ljung_box(series: &[f64], lags: usize) -> (f64, f64) {
    let n = series.len();
    if n <= lags + 1 {
        return (0.0, 1.0);
    }
    let mean = series.iter().sum::<f64>() / n as f64;
    let e: Vec<f64> = series.iter().map(|v| v - mean).collect();
    let c0: f64 = e.iter().map(|v| v * v).sum();
    if c0 <= 0.0 {
        return (0.0, 1.0);
    }
    let nf = n as f64;
    let mut q = 0.0;
    for k in 1..=lags {
        let ck: f64 = e[..n - k].iter().zip(&e[k..]).map(|(a, b)| a * b).sum();
        let rho = ck / c0;
        q += rho * rho / (nf - k as f64);
    }
    q *= nf * (nf + 2.0);
    (q, chi2_sf(q, lags as f64))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ln_gamma_of_integers_and_halves() {
        // Γ(n) = (n−1)!, Γ(1/2) = √π (common knowledge).
        assert!((ln_gamma(5.0) - 24f64.ln()).abs() < 1e-13);
        assert!((ln_gamma(0.5) - std::f64::consts::PI.sqrt().ln()).abs() < 1e-13);
        assert!((ln_gamma(101.0) - (1..=100).map(|k| (k as f64).ln()).sum::<f64>()).abs() < 1e-9);
    }

    #[test]
    fn chi2_tail_closed_forms() {
        // χ²(2): sf = exp(−x/2) exactly; χ²(1) at 3.841459 is 0.05 (standard tables).
        for x in [0.1, 1.0, 5.0, 20.0] {
            assert!((chi2_sf(x, 2.0) - (-x / 2.0f64).exp()).abs() < 1e-14);
        }
        assert!((chi2_sf(3.841_458_820_694_124, 1.0) - 0.05).abs() < 1e-10);
        // Large dof: the mean is the median to first order.
        let p = chi2_sf(4320.0, 4320.0);
        assert!((p - 0.4957).abs() < 2e-3, "{p}");
    }

    #[test]
    fn ljung_box_sees_correlation_not_noise() {
        // A deterministic pseudo-random sequence (LCG) and a smoothed version of it.
        let mut s = 12345u64;
        let noise: Vec<f64> = (0..2000)
            .map(|_| {
                s = s
                    .wrapping_mul(6364136223846793005)
                    .wrapping_add(1442695040888963407);
                ((s >> 11) as f64 / (1u64 << 53) as f64) - 0.5
            })
            .collect();
        let smooth: Vec<f64> = noise.windows(5).map(|w| w.iter().sum::<f64>()).collect();
        assert!(ljung_box(&noise, 20).1 > 1e-3);
        assert!(ljung_box(&smooth, 20).1 < 1e-10);
    }
}

#[cfg(test)]
mod reference {
    use super::chi2_sf;

    #[derive(serde::Deserialize)]
    struct Case {
        x: f64,
        dof: f64,
        sf: f64,
    }
    #[derive(serde::Deserialize)]
    struct Ref {
        source: String,
        cases: Vec<Case>,
    }

    #[test]
    fn chi2_tail_matches_scipy() {
        // Reference: scipy.stats.chi2.sf (tools/reference/chi2.py).
        let text = std::fs::read_to_string(concat!(
            env!("CARGO_MANIFEST_DIR"),
            "/../tests/data/reference/chi2_sf.json"
        ))
        .unwrap();
        let r: Ref = serde_json::from_str(&text).unwrap();
        assert!(r.source.contains("scipy"));
        for c in &r.cases {
            let ours = chi2_sf(c.x, c.dof);
            let tol = 1e-9 * c.sf.max(1e-300) + 1e-14;
            assert!(
                (ours - c.sf).abs() <= tol.max(1e-12 * c.sf),
                "x {} dof {}: {ours} vs {}",
                c.x,
                c.dof,
                c.sf
            );
        }
    }
}
