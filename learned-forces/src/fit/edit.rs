//! Robust editing: an observation is judged against a line through its neighbours, so a
//! smooth unmodelled force is not mistaken for outliers.

use super::*;

/// Edits observations beyond `k` robust σ; returns how many were newly edited.
///
/// An outlier is judged against its neighbours: each normalized residual component minus
/// a straight line fitted to the 10 used observations around it in the same channel
/// (position axis, or a site's kind of measurement; itself left out), so that a smooth
/// systematic signal (an unmodelled force) is not mistaken for outliers and edited away,
/// and a bad range does not take the angles with it.
pub(super) fn edit(
    problem: &Problem,
    lin: &Linearized,
    used: &mut [bool],
    reasons: &mut [Option<String>],
    k: f64,
) -> usize {
    let n = used.len();
    // Each observation's normalized residuals by channel (positions: x, y, z; a
    // measurement: its site and kind), so each kind is judged against its own series.
    let mut rows = Vec::new();
    let z: Vec<Vec<(usize, f64)>> = lin
        .samples
        .iter()
        .enumerate()
        .map(|(i, s)| {
            rows.clear();
            // A measurement that cannot be modelled here was already refused by the
            // linearization that produced these samples.
            let _ = problem.observing.rows(i, &s.state, &mut rows);
            rows.iter()
                .filter_map(|r| r.channel.map(|c| (c, r.z)))
                .collect()
        })
        .collect();
    let mut by_channel: Vec<Vec<usize>> = vec![Vec::new(); problem.observing.channels()];
    for i in (0..n).filter(|&i| used[i]) {
        for (c, _) in &z[i] {
            by_channel[*c].push(i);
        }
    }
    let mut dev = vec![0.0f64; n];
    // The neighbourhood an observation is compared in (its first channel's).
    let mut hood: Vec<(usize, usize, usize)> = vec![(0, 0, 0); n];
    let mut all = Vec::with_capacity(3 * n);
    const HALF: usize = 5;
    for (c, idx) in by_channel.iter().enumerate() {
        for (p, &i) in idx.iter().enumerate() {
            let lo = p.saturating_sub(HALF);
            let hi = (p + HALF + 1).min(idx.len());
            let others: Vec<usize> = idx[lo..hi].iter().copied().filter(|&j| j != i).collect();
            let value = |j: usize| z[j].iter().find(|(cj, _)| *cj == c).map_or(0.0, |v| v.1);
            let d = (value(i) - line_at(&others, &problem.t, value, problem.t[i])).abs();
            dev[i] = dev[i].max(d);
            all.push(d);
            if z[i].first().map(|v| v.0) == Some(c) {
                hood[i] = (c, lo, hi);
            }
        }
    }
    all.sort_by(|a, b| a.total_cmp(b));
    // |x − line through 10 neighbours| of white noise has a median of about 0.71σ.
    let median = all.get(all.len() / 2).copied().unwrap_or(0.0);
    let scale = (median / 0.71).max(1.0);
    let threshold = k * scale;
    let mut new = 0;
    let max_edits = n / 5;
    let mut edited = used.iter().filter(|u| !**u).count();
    for i in 0..n {
        if !used[i] || z[i].is_empty() {
            continue;
        }
        // Only the worst of a neighbourhood goes per pass: an outlier also pulls the
        // lines of its neighbours, which must not be edited with it.
        let (c, lo, hi) = hood[i];
        let local_max = by_channel[c][lo..hi]
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
    // At most one mean spacing beyond the neighbours: across a gap between passes the
    // line's noisy slope would be extrapolated over hours (a lone measurement after a
    // gap was once "118σ from its neighbours").
    let (lo, hi) = js
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &j| {
            (a.min(t[j]), b.max(t[j]))
        });
    let step = (hi - lo) / (n - 1.0).max(1.0);
    ym + sty / stt * (at.clamp(lo - step, hi + step) - tm)
}
