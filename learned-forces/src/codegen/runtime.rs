// The self-contained runtime of compiled learned-force plugins.
//
// This file is compiled twice: as `learned_forces::codegen::runtime` (where tests check
// it against the library's own terminals, Sun series and shadow), and, copied verbatim,
// into every generated plugin crate, which has no dependencies. Keep it free of `use`
// of other crates and of anything but core arithmetic.
#![allow(dead_code, clippy::excessive_precision, clippy::needless_range_loop)]

use std::ops::{Add, Div, Mul, Neg, Sub};

/// Arithmetic of the generated code: `f64`, or `Dual` (value and ∂/∂state).
pub trait Num:
    Copy
    + Add<Output = Self>
    + Sub<Output = Self>
    + Mul<Output = Self>
    + Div<Output = Self>
    + Neg<Output = Self>
{
    /// Whether the number carries derivatives (what needs a density's gradient).
    const DERIVATIVES: bool;
    fn cst(v: f64) -> Self;
    fn val(&self) -> f64;
    fn sin(self) -> Self;
    fn cos(self) -> Self;
    fn exp(self) -> Self;
    fn sqrt(self) -> Self;
    fn powi(self, n: i32) -> Self;
    fn atan2(self, x: Self) -> Self;
}

impl Num for f64 {
    const DERIVATIVES: bool = false;
    fn cst(v: f64) -> Self {
        v
    }
    fn val(&self) -> f64 {
        *self
    }
    fn sin(self) -> Self {
        f64::sin(self)
    }
    fn cos(self) -> Self {
        f64::cos(self)
    }
    fn exp(self) -> Self {
        f64::exp(self)
    }
    fn sqrt(self) -> Self {
        f64::sqrt(self)
    }
    fn powi(self, n: i32) -> Self {
        f64::powi(self, n)
    }
    fn atan2(self, x: Self) -> Self {
        f64::atan2(self, x)
    }
}

/// A value with its derivatives with respect to (x, y, z, vx, vy, vz).
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Dual {
    pub v: f64,
    pub d: [f64; 6],
}

impl Dual {
    pub fn var(v: f64, k: usize) -> Dual {
        let mut d = [0.0; 6];
        d[k] = 1.0;
        Dual { v, d }
    }
    fn chain(self, f: f64, df: f64) -> Dual {
        let mut d = self.d;
        for x in &mut d {
            *x *= df;
        }
        Dual { v: f, d }
    }
}

impl Add for Dual {
    type Output = Dual;
    fn add(self, o: Dual) -> Dual {
        let mut d = self.d;
        for k in 0..6 {
            d[k] += o.d[k];
        }
        Dual { v: self.v + o.v, d }
    }
}
impl Sub for Dual {
    type Output = Dual;
    fn sub(self, o: Dual) -> Dual {
        let mut d = self.d;
        for k in 0..6 {
            d[k] -= o.d[k];
        }
        Dual { v: self.v - o.v, d }
    }
}
impl Mul for Dual {
    type Output = Dual;
    fn mul(self, o: Dual) -> Dual {
        let mut d = [0.0; 6];
        for k in 0..6 {
            d[k] = self.d[k] * o.v + self.v * o.d[k];
        }
        Dual { v: self.v * o.v, d }
    }
}
impl Div for Dual {
    type Output = Dual;
    fn div(self, o: Dual) -> Dual {
        let inv = 1.0 / o.v;
        let mut d = [0.0; 6];
        for k in 0..6 {
            d[k] = (self.d[k] - self.v * inv * o.d[k]) * inv;
        }
        Dual { v: self.v * inv, d }
    }
}
impl Neg for Dual {
    type Output = Dual;
    fn neg(self) -> Dual {
        self.chain(-self.v, -1.0)
    }
}
impl Num for Dual {
    const DERIVATIVES: bool = true;
    fn cst(v: f64) -> Self {
        Dual { v, d: [0.0; 6] }
    }
    fn val(&self) -> f64 {
        self.v
    }
    fn sin(self) -> Self {
        self.chain(self.v.sin(), self.v.cos())
    }
    fn cos(self) -> Self {
        self.chain(self.v.cos(), -self.v.sin())
    }
    fn exp(self) -> Self {
        let e = self.v.exp();
        self.chain(e, e)
    }
    fn sqrt(self) -> Self {
        let s = self.v.sqrt();
        self.chain(s, 0.5 / s)
    }
    fn powi(self, n: i32) -> Self {
        self.chain(self.v.powi(n), n as f64 * self.v.powi(n - 1))
    }
    fn atan2(self, x: Self) -> Self {
        let r2 = self.v * self.v + x.v * x.v;
        let mut d = [0.0; 6];
        for k in 0..6 {
            d[k] = (x.v * self.d[k] - self.v * x.d[k]) / r2;
        }
        Dual {
            v: self.v.atan2(x.v),
            d,
        }
    }
}

pub fn add3<N: Num>(a: [N; 3], b: [N; 3]) -> [N; 3] {
    [a[0] + b[0], a[1] + b[1], a[2] + b[2]]
}
pub fn sub3<N: Num>(a: [N; 3], b: [N; 3]) -> [N; 3] {
    [a[0] - b[0], a[1] - b[1], a[2] - b[2]]
}
pub fn scale3<N: Num>(s: N, a: [N; 3]) -> [N; 3] {
    [s * a[0], s * a[1], s * a[2]]
}
pub fn neg3<N: Num>(a: [N; 3]) -> [N; 3] {
    [-a[0], -a[1], -a[2]]
}
pub fn dot3<N: Num>(a: [N; 3], b: [N; 3]) -> N {
    a[0] * b[0] + a[1] * b[1] + a[2] * b[2]
}
pub fn cross3<N: Num>(a: [N; 3], b: [N; 3]) -> [N; 3] {
    [
        a[1] * b[2] - a[2] * b[1],
        a[2] * b[0] - a[0] * b[2],
        a[0] * b[1] - a[1] * b[0],
    ]
}
pub fn norm3<N: Num>(a: [N; 3]) -> N {
    dot3(a, a).sqrt()
}
/// The smooth step 1 / (1 + e^(−x)), written so that neither branch overflows: far from
/// the switch e^(−x) is infinite and a dual number's derivative would be ∞/∞.
pub fn logistic<N: Num>(x: N) -> N {
    if x.val() >= 0.0 {
        N::cst(1.0) / (N::cst(1.0) + (-x).exp())
    } else {
        let e = x.exp();
        e / (N::cst(1.0) + e)
    }
}

// The handbook piecewise-exponential atmosphere (Vallado, Table 8-4, from memory):
// base altitude km, density kg/m³, scale height km.
const HANDBOOK: [(f64, f64, f64); 28] = [
    (0.0, 1.225, 7.249),
    (25.0, 3.899e-2, 6.349),
    (30.0, 1.774e-2, 6.682),
    (40.0, 3.972e-3, 7.554),
    (50.0, 1.057e-3, 8.382),
    (60.0, 3.206e-4, 7.714),
    (70.0, 8.770e-5, 6.549),
    (80.0, 1.905e-5, 5.799),
    (90.0, 3.396e-6, 5.382),
    (100.0, 5.297e-7, 5.877),
    (110.0, 9.661e-8, 7.263),
    (120.0, 2.438e-8, 9.473),
    (130.0, 8.484e-9, 12.636),
    (140.0, 3.845e-9, 16.149),
    (150.0, 2.070e-9, 22.523),
    (180.0, 5.464e-10, 29.740),
    (200.0, 2.789e-10, 37.105),
    (250.0, 7.248e-11, 45.546),
    (300.0, 2.418e-11, 53.628),
    (350.0, 9.518e-12, 53.298),
    (400.0, 3.725e-12, 58.515),
    (450.0, 1.585e-12, 60.828),
    (500.0, 6.967e-13, 63.822),
    (600.0, 1.454e-13, 71.835),
    (700.0, 3.614e-14, 88.667),
    (800.0, 1.170e-14, 124.64),
    (900.0, 5.245e-15, 181.05),
    (1000.0, 3.019e-15, 268.00),
];

/// The handbook table's density at altitude `h` (km); NaN below its lowest band, as the
/// host's table refuses it.
pub fn density<N: Num>(h: N) -> N {
    let hv = h.val();
    if hv.is_nan() || hv < HANDBOOK[0].0 {
        return N::cst(f64::NAN);
    }
    let mut i = 0;
    while i + 1 < HANDBOOK.len() && HANDBOOK[i + 1].0 <= hv {
        i += 1;
    }
    let (h0, rho0, sh) = HANDBOOK[i];
    N::cst(rho0) * (-(h - N::cst(h0)) / N::cst(sh)).exp()
}

// The U.S. Standard Atmosphere 1976 nodes (`TABLE`) and the ellipsoid height
// (`ellipsoid_height`): the propagator's own sources, inlined here by `arcwise build`.
include!("../../../propagator/src/atmosphere/ussa1976_table.rs");
include!("../../../propagator/src/atmosphere/geodetic.rs");

/// USSA1976 density at `h` (km), linear in ln ρ between nodes and extrapolated above
/// 1000 km from the last interval, as the host's `Ussa1976`; NaN below 0 km.
pub fn ussa1976<N: Num>(h: N) -> N {
    let hv = h.val();
    let n = TABLE.len();
    if hv.is_nan() || hv < TABLE[0].0 {
        return N::cst(f64::NAN);
    }
    let i = if hv >= TABLE[n - 1].0 {
        n - 2
    } else {
        TABLE.partition_point(|p| p.0 <= hv) - 1
    };
    let ((h0, l0), (h1, l1)) = (TABLE[i], TABLE[i + 1]);
    let s = (h - N::cst(h0)) / N::cst(h1 - h0);
    (N::cst(l0) + s * N::cst(l1 - l0)).exp()
}

/// What the `rho` terminal means: the known model's atmosphere.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Density {
    /// The handbook piecewise-exponential table (files without an `environment`).
    Table,
    /// U.S. Standard Atmosphere 1976.
    Ussa1976,
    /// ρ0·exp(−(h − h0)/H): kg/m³, km, km.
    Exponential {
        rho0_kg_m3: f64,
        h0_km: f64,
        scale_height_km: f64,
    },
    /// The host's drag density (NRLMSISE-00: position, time and space weather), which
    /// the host supplies at each evaluation (NaN here; see [`host_rho`]).
    Host,
}

/// What the `h` terminal means: the known model's altitude.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum Altitude {
    /// |r| − R.
    Spherical,
    /// Height above the ellipsoid of radius R and this flattening (pole on z).
    Geodetic { flattening: f64 },
}

/// The environment the terminals read, the same as the host model's drag.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Env {
    pub density: Density,
    pub altitude: Altitude,
}

/// The handbook table and spherical altitude: what a file without an `environment` means.
pub const HANDBOOK_ENV: Env = Env {
    density: Density::Table,
    altitude: Altitude::Spherical,
};

impl Env {
    /// Altitude (km) of `r` over an Earth of radius `re` (km).
    pub fn altitude<N: Num>(&self, r: [N; 3], re: f64) -> N {
        match self.altitude {
            Altitude::Spherical => norm3(r) - N::cst(re),
            Altitude::Geodetic { flattening } => {
                // h at the value, ∂h/∂r = the ellipsoid normal: exact first derivatives.
                let rv = [r[0].val(), r[1].val(), r[2].val()];
                let (h, n) = ellipsoid_height(rv, re, flattening);
                let nc = [N::cst(n[0]), N::cst(n[1]), N::cst(n[2])];
                N::cst(h - (n[0] * rv[0] + n[1] * rv[1] + n[2] * rv[2])) + dot3(nc, r)
            }
        }
    }

    /// Density (kg/m³) at altitude `h` (km).
    pub fn density<N: Num>(&self, h: N) -> N {
        match self.density {
            Density::Table => density(h),
            Density::Ussa1976 => ussa1976(h),
            Density::Exponential {
                rho0_kg_m3,
                h0_km,
                scale_height_km,
            } => N::cst(rho0_kg_m3) * (-(h - N::cst(h0_km)) / N::cst(scale_height_km)).exp(),
            Density::Host => N::cst(f64::NAN),
        }
    }
}

/// The host's density `rho` (kg/m³), with its ECI gradient `g` (kg/m³ per km), as a
/// function of the position `r`: the value exactly `rho`, the first derivatives `g`.
pub fn host_rho<N: Num>(rho: f64, g: [f64; 3], r: [N; 3]) -> N {
    // r − r.val() is exactly zero in value and carries r's derivatives.
    let dr = [
        r[0] - N::cst(r[0].val()),
        r[1] - N::cst(r[1].val()),
        r[2] - N::cst(r[2].val()),
    ];
    N::cst(rho) + dot3([N::cst(g[0]), N::cst(g[1]), N::cst(g[2])], dr)
}

const AU_KM: f64 = 149_597_870.7;
const SUN_RADIUS_KM: f64 = 695_700.0;
const OBLIQUITY: f64 = 23.439_291_11 * std::f64::consts::PI / 180.0;

/// Geocentric Sun, km, J2000 ECI (Meeus ch. 25, referred to J2000), `tc` TT centuries.
pub fn sun_km(tc: f64) -> [f64; 3] {
    let t = tc;
    let l0 = 280.466_46 + 36_000.769_83 * t + 0.000_303_2 * t * t;
    let m = (357.529_11 + 35_999.050_29 * t - 0.000_153_7 * t * t).to_radians();
    let e = 0.016_708_634 - 0.000_042_037 * t - 0.000_000_126_7 * t * t;
    let c = (1.914_602 - 0.004_817 * t - 0.000_014 * t * t) * m.sin()
        + (0.019_993 - 0.000_101 * t) * (2.0 * m).sin()
        + 0.000_289 * (3.0 * m).sin();
    let lon = (l0 + c - (1.396_971 * t + 0.000_308_6 * t * t)).to_radians();
    let nu = m + c.to_radians();
    let r = 1.000_001_018 * (1.0 - e * e) / (1.0 + e * nu.cos()) * AU_KM;
    let (se, ce) = OBLIQUITY.sin_cos();
    let (x, y) = (r * lon.cos(), r * lon.sin());
    [x, ce * y, se * y]
}

/// The angle between two vectors as nalgebra computes it (acos of the clamped cosine).
fn angle(a: [f64; 3], b: [f64; 3]) -> f64 {
    let (n1, n2) = (norm3(a), norm3(b));
    if n1 == 0.0 || n2 == 0.0 {
        return 0.0;
    }
    let c = dot3(a, b) / (n1 * n2);
    if c > 1.0 {
        0.0
    } else if c < -1.0 {
        std::f64::consts::PI
    } else {
        c.acos()
    }
}

/// Sunlit fraction, conical shadow (Montenbruck & Gill §3.4.2).
pub fn lit(r: [f64; 3], s: [f64; 3], re: f64) -> f64 {
    let to_sun = sub3(s, r);
    let a = (SUN_RADIUS_KM / norm3(to_sun)).asin();
    let b = (re / norm3(r)).asin();
    let c = angle(neg3(r), to_sun);
    if c >= a + b {
        1.0
    } else if c <= b - a {
        0.0
    } else if c <= a - b {
        1.0 - (b * b) / (a * a)
    } else {
        let x = (c * c + a * a - b * b) / (2.0 * c);
        let y = (a * a - x * x).max(0.0).sqrt();
        let area = a * a * (x / a).clamp(-1.0, 1.0).acos()
            + b * b * ((c - x) / b).clamp(-1.0, 1.0).acos()
            - c * y;
        (1.0 - area / (std::f64::consts::PI * a * a)).clamp(0.0, 1.0)
    }
}

// The terminal set of the formula language (`P`, `Need`, `ALL`): the formula module's
// own source, inlined here by `arcwise build`.
include!("../expr/terminals.rs");

/// Terminals at formula time `t` (s), state (r, v); `t0c` TT centuries at `t = 0`.
/// `need_sun` and `need_lit` skip the Sun series and the shadow when unused.
#[allow(clippy::too_many_arguments)]
pub fn terminals<N: Num>(
    t: f64,
    r: [N; 3],
    v: [N; 3],
    re: f64,
    w: f64,
    t0c: f64,
    need_sun: bool,
    need_lit: bool,
) -> P<N> {
    terminals_for(
        t,
        r,
        v,
        re,
        w,
        t0c,
        Need {
            sun: need_sun,
            lit: need_lit,
            ..ALL
        },
        &HANDBOOK_ENV,
    )
}

/// As [`terminals`], computing only what `need` asks for.
#[allow(clippy::too_many_arguments)]
pub fn terminals_for<N: Num>(
    t: f64,
    r: [N; 3],
    v: [N; 3],
    re: f64,
    w: f64,
    t0c: f64,
    need: Need,
    env: &Env,
) -> P<N> {
    let z = N::cst(0.0);
    let w = N::cst(w);
    let vrel = [v[0] + w * r[1], v[1] - w * r[0], v[2]];
    let rn = norm3(r);
    let (rh, th, nh, u) = if need.rtn || need.u {
        let rh = scale3(N::cst(1.0) / rn, r);
        let hv = cross3(r, v);
        let nh = scale3(N::cst(1.0) / norm3(hv), hv);
        let th = cross3(nh, rh);
        let u = if need.u {
            let node = [-hv[1], hv[0], N::cst(0.0)];
            let nn = norm3(node);
            let nhat = if nn.val() < 1e-10 * norm3(hv).val() {
                [N::cst(1.0), N::cst(0.0), N::cst(0.0)]
            } else {
                scale3(N::cst(1.0) / nn, node)
            };
            dot3(nh, cross3(nhat, r)).atan2(dot3(nhat, r))
        } else {
            z
        };
        (rh, th, nh, u)
    } else {
        ([z; 3], [z; 3], [z; 3], z)
    };
    let h = env.altitude(r, re);
    let (sun, lit_fraction) = if need.sun || need.lit {
        let s = sun_km(t0c + t / (86_400.0 * 36_525.0));
        let sn = norm3(s);
        let rv = [r[0].val(), r[1].val(), r[2].val()];
        (
            [s[0] / sn, s[1] / sn, s[2] / sn],
            if need.lit { lit(rv, s, re) } else { 1.0 },
        )
    } else {
        ([0.0; 3], 1.0)
    };
    let rho = if need.rho { env.density(h) } else { z };
    P {
        t,
        r,
        v,
        vrel,
        rh,
        th,
        nh,
        h,
        rho,
        u,
        sun,
        lit: lit_fraction,
    }
}
