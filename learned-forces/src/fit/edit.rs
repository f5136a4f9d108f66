//! Robust editing: an observation is judged against a line through its neighbours, so a
//! smooth unmodelled force is not mistaken for outliers.

use super::*;

/// Edits observations beyond `k` robust σ; returns how many were newly edited.
///
/// An outlier is judged against its neighbours: each normalized residual component minus
/// a straight line fitted to the 10 used observations around it (itself left out), so
/// that a smooth systematic signal (an unmodelled force) is not mistaken for outliers
/// and edited away.
pub(super) fn edit(
    problem: &Problem,
    lin: &Linearized,
    used: &mut [bool],
    reasons: &mut [Option<String>],
    k: f64,
) -> usize {
    let n = used.len();
    let z: Vec<[f64; 3]> = lin
        .samples
        .iter()
        .enumerate()
        .map(|(i, s)| {
            let o = &problem.arc.observations[i];
            let d = o.r_km - Vector3::new(s.state[0], s.state[1], s.state[2]);
            [d[0] / o.sigma_km, d[1] / o.sigma_km, d[2] / o.sigma_km]
        })
        .collect();
    let idx: Vec<usize> = (0..n).filter(|&i| used[i]).collect();
    let mut dev = vec![0.0f64; n];
    let mut all = Vec::with_capacity(3 * idx.len());
    const HALF: usize = 5;
    for (p, &i) in idx.iter().enumerate() {
        let lo = p.saturating_sub(HALF);
        let hi = (p + HALF + 1).min(idx.len());
        let others: Vec<usize> = idx[lo..hi].iter().copied().filter(|&j| j != i).collect();
        let mut worst: f64 = 0.0;
        for c in 0..3 {
            let d = (z[i][c] - line_at(&others, &problem.t, |j| z[j][c], problem.t[i])).abs();
            worst = worst.max(d);
            all.push(d);
        }
        dev[i] = worst;
    }
    all.sort_by(|a, b| a.total_cmp(b));
    // |x − line through 10 neighbours| of white noise has a median of about 0.71σ.
    let median = all.get(all.len() / 2).copied().unwrap_or(0.0);
    let scale = (median / 0.71).max(1.0);
    let threshold = k * scale;
    let mut new = 0;
    let max_edits = n / 5;
    let mut edited = used.iter().filter(|u| !**u).count();
    for (p, &i) in idx.iter().enumerate() {
        // Only the worst of a neighbourhood goes per pass: an outlier also pulls the
        // lines of its neighbours, which must not be edited with it.
        let lo = p.saturating_sub(HALF);
        let hi = (p + HALF + 1).min(idx.len());
        let local_max = idx[lo..hi]
            .iter()
            .all(|&j| j == i || dev[j] < dev[i] || (dev[j] == dev[i] && j > i));
        if local_max && dev[i] > threshold && edited < max_edits {
            used[i] = false;
            reasons[i] = Some(format!(
                "residual {:.1}σ from its neighbours, above the {:.1}σ editing threshold",
                dev[i], threshold
            ));
            new += 1;
            edited += 1;
        }
    }
    new
}

/// The least-squares line through `(t[j], y(j))` for `j` in `js`, evaluated at `at`.
fn line_at(js: &[usize], t: &[f64], y: impl Fn(usize) -> f64, at: f64) -> f64 {
    let n = js.len() as f64;
    if js.is_empty() {
        return 0.0;
    }
    let tm = js.iter().map(|&j| t[j]).sum::<f64>() / n;
    let ym = js.iter().map(|&j| y(j)).sum::<f64>() / n;
    let stt: f64 = js.iter().map(|&j| (t[j] - tm).powi(2)).sum();
    if stt <= 0.0 {
        return ym;
    }
    let sty: f64 = js.iter().map(|&j| (t[j] - tm) * (y(j) - ym)).sum();
    ym + sty / stt * (at - tm)
}
