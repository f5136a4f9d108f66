// NRLMSISE-00: temperature profiles through spline nodes, hydrostatic densities and the
// mixing and chemistry corrections (the reference release's SPLINE, SPLINT, SPLINI,
// DENSM, DNET, CCOR, CCOR2). Part of the model `nrlmsise00_model.rs`; included
// alongside it, free of `use`.

/// Cubic spline second derivatives (natural where a slope is > 0.99e30; its SPLINE).
fn spline<const N: usize>(x: &[f64; N], y: &[f64; N], yp1: f64, ypn: f64) -> [f64; N] {
    let mut y2 = [0.0; N];
    let mut u = [0.0; N];
    if yp1 <= 0.99e30 {
        y2[0] = -0.5;
        u[0] = (3.0 / (x[1] - x[0])) * ((y[1] - y[0]) / (x[1] - x[0]) - yp1);
    }
    for i in 1..N - 1 {
        let sig = (x[i] - x[i - 1]) / (x[i + 1] - x[i - 1]);
        let p = sig * y2[i - 1] + 2.0;
        y2[i] = (sig - 1.0) / p;
        u[i] = (6.0
            * ((y[i + 1] - y[i]) / (x[i + 1] - x[i]) - (y[i] - y[i - 1]) / (x[i] - x[i - 1]))
            / (x[i + 1] - x[i - 1])
            - sig * u[i - 1])
            / p;
    }
    let (qn, un) = if ypn > 0.99e30 {
        (0.0, 0.0)
    } else {
        let h = x[N - 1] - x[N - 2];
        (0.5, (3.0 / h) * (ypn - (y[N - 1] - y[N - 2]) / h))
    };
    y2[N - 1] = (un - qn * u[N - 2]) / (qn * y2[N - 2] + 1.0);
    for k in (0..N - 1).rev() {
        y2[k] = y2[k] * y2[k + 1] + u[k];
    }
    y2
}

/// The spline's value at `x` (its SPLINT).
fn splint<const N: usize>(xa: &[f64; N], ya: &[f64; N], y2a: &[f64; N], x: f64) -> f64 {
    let (mut klo, mut khi) = (0, N - 1);
    while khi - klo > 1 {
        let k = (khi + klo) / 2;
        if xa[k] > x {
            khi = k;
        } else {
            klo = k;
        }
    }
    let h = xa[khi] - xa[klo];
    let a = (xa[khi] - x) / h;
    let b = (x - xa[klo]) / h;
    a * ya[klo]
        + b * ya[khi]
        + ((a * a * a - a) * y2a[klo] + (b * b * b - b) * y2a[khi]) * h * h / 6.0
}

/// The spline's integral from `xa[0]` to `x` (its SPLINI).
fn splini<const N: usize>(xa: &[f64; N], ya: &[f64; N], y2a: &[f64; N], x: f64) -> f64 {
    let mut yi = 0.0;
    let (mut klo, mut khi) = (0, 1);
    while x > xa[klo] && khi < N {
        let xx = if khi < N - 1 { x.min(xa[khi]) } else { x };
        let h = xa[khi] - xa[klo];
        let a = (xa[khi] - xx) / h;
        let b = (xx - xa[klo]) / h;
        let (a2, b2) = (a * a, b * b);
        yi += ((1.0 - a2) * ya[klo] / 2.0
            + b2 * ya[khi] / 2.0
            + ((-(1.0 + a2 * a2) / 4.0 + a2 / 2.0) * y2a[klo] + (b2 * b2 / 4.0 - b2 / 2.0) * y2a[khi])
                * h
                * h
                / 6.0)
            * h;
        klo += 1;
        khi += 1;
    }
    yi
}

/// A temperature profile between spline nodes: 1/T is a cubic spline in geopotential
/// height, with end gradients `tg` (K/km).
struct SplineProfile<const N: usize> {
    xs: [f64; N],
    ys: [f64; N],
    y2: [f64; N],
    z1: f64,
    zgdif: f64,
    t1: f64,
    /// Node temperatures, K, and end gradients, K/km.
    tn: [f64; N],
    tg: [f64; 2],
}

impl<const N: usize> SplineProfile<N> {
    fn new(pt: &Point, zn: &[f64; N], tn: &[f64; N], tg: [f64; 2]) -> Self {
        let (z1, z2) = (zn[0], zn[N - 1]);
        let (t1, t2) = (tn[0], tn[N - 1]);
        let zgdif = pt.zeta(z2, z1);
        let mut xs = [0.0; N];
        let mut ys = [0.0; N];
        for k in 0..N {
            xs[k] = pt.zeta(zn[k], z1) / zgdif;
            ys[k] = 1.0 / tn[k];
        }
        let yd1 = -tg[0] / (t1 * t1) * zgdif;
        let yd2 = -tg[1] / (t2 * t2) * zgdif * ((pt.re + z2) / (pt.re + z1)).powi(2);
        let y2 = spline(&xs, &ys, yd1, yd2);
        SplineProfile {
            xs,
            ys,
            y2,
            z1,
            zgdif,
            t1,
            tn: *tn,
            tg,
        }
    }

    /// Temperature (K) at `z` km, and the normalised height where the spline was read.
    fn temperature(&self, pt: &Point, z: f64) -> (f64, f64) {
        let x = pt.zeta(z, self.z1) / self.zgdif;
        (1.0 / splint(&self.xs, &self.ys, &self.y2, x), x)
    }

    /// exp(−γ ∫ 1/T): the hydrostatic factor from the profile's top node to `x`, for a
    /// gas of mass `xm` amu, capped as the model caps it.
    fn hydrostatic(&self, pt: &Point, x: f64, xm: f64) -> f64 {
        let glb = pt.gsurf / (1.0 + self.z1 / pt.re).powi(2);
        let gamm = xm * glb * self.zgdif / RGAS;
        let expl = (gamm * splini(&self.xs, &self.ys, &self.y2, x)).min(50.0);
        (-expl).exp()
    }
}

/// Net density of a diffusive `dd` and a mixed `dm` profile (its DNET).
fn dnet(dd: f64, dm: f64, zhm: f64, xmm: f64, xm: f64) -> f64 {
    let a = zhm / (xmm - xm);
    if !(dm > 0.0 && dd > 0.0) {
        if dm == 0.0 {
            return if dd == 0.0 { 1.0 } else { dd };
        }
        if dd == 0.0 {
            return dm;
        }
    }
    let ylog = a * (dm / dd).ln();
    if ylog < -10.0 {
        return dd;
    }
    if ylog > 10.0 {
        return dm;
    }
    dd * (1.0 + ylog.exp()).powf(1.0 / a)
}

/// Chemistry/dissociation correction (its CCOR).
fn ccor(alt: f64, r: f64, h1: f64, zh: f64) -> f64 {
    let e = (alt - zh) / h1;
    if e > 70.0 {
        return 1.0;
    }
    if e < -70.0 {
        return r.exp();
    }
    (r / (1.0 + e.exp())).exp()
}

/// Correction with two scale heights (its CCOR2).
fn ccor2(alt: f64, r: f64, h1: f64, zh: f64, h2: f64) -> f64 {
    let e1 = (alt - zh) / h1;
    let e2 = (alt - zh) / h2;
    if e1 > 70.0 || e2 > 70.0 {
        return 1.0;
    }
    if e1 < -70.0 && e2 < -70.0 {
        return r.exp();
    }
    (r / (1.0 + 0.5 * (e1.exp() + e2.exp()))).exp()
}

/// Density (cm⁻³, from `d0` at 72.5 km) of a gas of mass `xm` and the temperature below
/// 72.5 km (its DENSM).
fn densm(
    pt: &Point,
    alt: f64,
    d0: f64,
    xm: f64,
    meso: (&[f64; 4], [f64; 2]),
    tropo: (&[f64; 5], [f64; 2]),
) -> (f64, f64) {
    let mut d = d0;
    // Stratosphere/mesosphere.
    let z = alt.max(ZN2[3]);
    let profile = SplineProfile::new(pt, &ZN2, meso.0, meso.1);
    let (mut tz, x) = profile.temperature(pt, z);
    d *= (profile.t1 / tz) * profile.hydrostatic(pt, x, xm);
    if alt > ZN3[0] {
        return (d, tz);
    }
    // Troposphere/stratosphere.
    let profile = SplineProfile::new(pt, &ZN3, tropo.0, tropo.1);
    let (t, x) = profile.temperature(pt, alt);
    tz = t;
    d *= (profile.t1 / tz) * profile.hydrostatic(pt, x, xm);
    (d, tz)
}
