// The terminals of the formula language: what a formula can read at a point.
//
// Owned by the formula module and compiled into the plugin runtime by inclusion
// (`codegen/runtime.rs` includes this file; `arcwise build` inlines its text), so the
// library and every generated plugin share one definition. Keep it free of `use`.

/// Terminal values at a point (`learned_forces::expr::Terminals` in the library): the
/// formula language's terminals, each named as formulas write it.
#[derive(Clone, Copy, Debug)]
pub struct P<N> {
    /// `t`: s since the learned file's epoch.
    pub t: f64,
    /// `r`: ECI position, km.
    pub r: [N; 3],
    /// `v`: ECI velocity, km/s.
    pub v: [N; 3],
    /// `vrel`: velocity relative to the co-rotating atmosphere, km/s.
    pub vrel: [N; 3],
    /// `R`: radial unit vector.
    pub rh: [N; 3],
    /// `T`: transverse unit vector (N × R).
    pub th: [N; 3],
    /// `N`: orbit-normal unit vector.
    pub nh: [N; 3],
    /// `h`: altitude of the known model's drag, km.
    pub h: N,
    /// `rho`: density of the known model's atmosphere, kg/m³.
    pub rho: N,
    /// `u`: argument of latitude, rad.
    pub u: N,
    /// `sun`: unit vector to the Sun.
    pub sun: [f64; 3],
    /// `lit`: sunlit fraction, 0–1 (conical shadow).
    pub lit: f64,
}

/// Which terminals to compute (the rest are left at zero); generated code passes
/// constants, so the unused work is compiled away.
#[derive(Clone, Copy)]
pub struct Need {
    pub rtn: bool,
    pub u: bool,
    pub rho: bool,
    pub sun: bool,
    pub lit: bool,
}

pub const ALL: Need = Need {
    rtn: true,
    u: true,
    rho: true,
    sun: true,
    lit: true,
};
