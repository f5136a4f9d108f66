//! GCRF ↔ ITRF by the IAU 2006/2000A CIO-based chain (IERS Conventions 2010, ch. 5):
//!
//! r_ITRF = W(xp, yp, s′) · R3(ERA) · Q(X + dX, Y + dY, s) · r_GCRF
//!
//! Q from the celestial intermediate pole X, Y and the CIO locator s (IAU 2006/2000A
//! series), ERA the Earth rotation angle of UT1, W polar motion with the TIO locator s′.
//! The series come from `sofars`, a pure-Rust port of the IAU SOFA routines, used only
//! here. EME2000 (J2000 mean equator and equinox) differs from GCRF by the frame bias
//! (≈ 23 mas, 0.8 m at 7000 km): [`eme2000_to_gcrf`] converts.
//!
//! Evaluating the X, Y, s series costs tens of µs, far too much for every force call.
//! They vary slowly (shortest significant period ~5 days), so they are evaluated once an
//! hour of TT, in chunks built on first use and shared by every thread, and interpolated
//! with a cubic through four nodes: the interpolation adds < 1e-13 rad (< 1 µm at
//! 7000 km; `cip_interpolation_error_is_below_a_micrometre`). ERA, polar motion and the
//! EOP interpolation are exact per call.

use super::eop::{EopTable, EopValues};
use nalgebra::{Matrix3, Vector3};
use std::sync::{Arc, OnceLock};

/// Earth's mean angular velocity, rad/s: the rate of the Earth rotation angle
/// (2π · 1.00273781191135448 per UT1 day; IERS Conventions 2010 eq. 5.15).
pub const EARTH_ROTATION_RAD_S: f64 = 7.292_115_146_706_979e-5;

/// J2000.0 as a Julian Date.
const J2000_JD: f64 = 2_451_545.0;

/// The rotation between GCRF and ITRF at one instant, in its three factors.
#[derive(Clone, Copy, Debug)]
pub struct EarthRotation {
    /// GCRF → celestial intermediate frame (precession–nutation, bias included).
    pub q: Matrix3<f64>,
    /// Earth rotation angle, rad.
    pub era_rad: f64,
    /// Terrestrial intermediate frame → ITRF (polar motion).
    pub w: Matrix3<f64>,
}

impl EarthRotation {
    /// R3(ERA): celestial → terrestrial intermediate frame.
    fn r3(&self) -> Matrix3<f64> {
        let (s, c) = self.era_rad.sin_cos();
        Matrix3::new(c, s, 0.0, -s, c, 0.0, 0.0, 0.0, 1.0)
    }

    /// The whole GCRF → ITRF matrix.
    pub fn gcrf_to_itrf(&self) -> Matrix3<f64> {
        self.w * self.r3() * self.q
    }

    /// A GCRF position (km) and velocity (km/s) in ITRF. The velocity includes the
    /// frame's rotation at the mean rate (length-of-day changes, ≤ 4e-8 relative, and the
    /// slow drift of polar motion and precession are left out: < 1e-9 km/s in LEO).
    pub fn state_to_itrf(
        &self,
        r: &Vector3<f64>,
        v: &Vector3<f64>,
    ) -> (Vector3<f64>, Vector3<f64>) {
        let rq = self.r3() * self.q;
        let r_tirs = rq * r;
        let omega = Vector3::new(0.0, 0.0, EARTH_ROTATION_RAD_S);
        let v_tirs = rq * v - omega.cross(&r_tirs);
        (self.w * r_tirs, self.w * v_tirs)
    }

    /// An ITRF position and velocity back in GCRF (the inverse of [`Self::state_to_itrf`]).
    pub fn state_to_gcrf(
        &self,
        r: &Vector3<f64>,
        v: &Vector3<f64>,
    ) -> (Vector3<f64>, Vector3<f64>) {
        let (r_tirs, v_itrs_tirs) = (self.w.transpose() * r, self.w.transpose() * v);
        let omega = Vector3::new(0.0, 0.0, EARTH_ROTATION_RAD_S);
        let v_tirs = v_itrs_tirs + omega.cross(&r_tirs);
        let rq_t = (self.r3() * self.q).transpose();
        (rq_t * r_tirs, rq_t * v_tirs)
    }
}

/// Earth orientation from an EOP table: GCRF ↔ ITRF at any TT instant.
#[derive(Clone, Debug)]
pub struct EarthOrientation {
    eop: Arc<EopTable>,
}

fn m3(a: [[f64; 3]; 3]) -> Matrix3<f64> {
    Matrix3::new(
        a[0][0], a[0][1], a[0][2], a[1][0], a[1][1], a[1][2], a[2][0], a[2][1], a[2][2],
    )
}

impl EarthOrientation {
    /// Orientation from `eop`.
    pub fn new(eop: Arc<EopTable>) -> Self {
        Self { eop }
    }

    /// Orientation from the shipped IERS table.
    pub fn shipped() -> Result<Self, String> {
        EopTable::shipped().map(Self::new)
    }

    /// The EOP table in use.
    pub fn eop(&self) -> &EopTable {
        &self.eop
    }

    /// The rotation at `tt_s` (TT seconds since J2000.0), X, Y, s interpolated.
    pub fn at(&self, tt_s: f64) -> EarthRotation {
        let e = self.eop.at(tt_s);
        let (x, y, s) = cip_interpolated(tt_s);
        rotation(tt_s, x, y, s, &e)
    }

    /// The rotation with X, Y, s from the full series (slow; the reference for [`Self::at`]).
    pub fn at_exact(&self, tt_s: f64) -> EarthRotation {
        let e = self.eop.at(tt_s);
        let (x, y, s) = cip_exact(tt_s);
        rotation(tt_s, x, y, s, &e)
    }
}

fn rotation(tt_s: f64, x: f64, y: f64, s: f64, e: &EopValues) -> EarthRotation {
    let q = m3(sofars::pnp::c2ixys(x + e.dx_rad, y + e.dy_rad, s));
    let tt_days = tt_s / 86_400.0;
    let era_rad = sofars::erst::era00(J2000_JD, (tt_s + e.ut1_minus_tt_s) / 86_400.0);
    let sp = sofars::pnp::sp00(J2000_JD, tt_days);
    let w = m3(sofars::pnp::pom00(e.xp_rad, e.yp_rad, sp));
    EarthRotation { q, era_rad, w }
}

/// X, Y (rad) of the celestial intermediate pole and the CIO locator s (rad), IAU
/// 2006/2000A series, at `tt_s`.
pub fn cip_exact(tt_s: f64) -> (f64, f64, f64) {
    sofars::pnp::xys06a(J2000_JD, tt_s / 86_400.0)
}

/// Node spacing of the X, Y, s interpolation, s.
const NODE_S: f64 = 3_600.0;
/// Nodes per chunk interval (8 days of hours).
const CHUNK_NODES: usize = 192;
/// Chunks cover TT days from `FIRST_DAY` (1863) for `N_CHUNKS` × 8 days (to 2219).
const FIRST_DAY: i64 = -50_000;
const N_CHUNKS: usize = 16_250;

/// One chunk: nodes −1 … CHUNK_NODES + 1 around its 8 days.
type Chunk = Box<[[f64; 3]; CHUNK_NODES + 3]>;

fn chunks() -> &'static [OnceLock<Chunk>] {
    static CHUNKS: OnceLock<Vec<OnceLock<Chunk>>> = OnceLock::new();
    CHUNKS.get_or_init(|| (0..N_CHUNKS).map(|_| OnceLock::new()).collect())
}

/// [`cip_exact`] by a cubic through the four hourly nodes around `tt_s` (exact series
/// outside 1863–2219).
pub fn cip_interpolated(tt_s: f64) -> (f64, f64, f64) {
    let u = tt_s / NODE_S - (FIRST_DAY as f64) * (86_400.0 / NODE_S);
    let node = u.floor();
    if !(node >= 0.0 && node < (N_CHUNKS * CHUNK_NODES) as f64) {
        return cip_exact(tt_s);
    }
    let node = node as usize;
    let (c, k) = (node / CHUNK_NODES, node % CHUNK_NODES);
    let chunk = chunks()[c].get_or_init(|| {
        let base = FIRST_DAY as f64 * 86_400.0 + (c * CHUNK_NODES) as f64 * NODE_S;
        let mut nodes = Box::new([[0.0; 3]; CHUNK_NODES + 3]);
        for (i, n) in nodes.iter_mut().enumerate() {
            let (x, y, s) = cip_exact(base + (i as f64 - 1.0) * NODE_S);
            *n = [x, y, s];
        }
        nodes
    });
    // Lagrange cubic on nodes k−1, k, k+1, k+2 (array indices k … k+3) at fraction f.
    let f = u - node as f64;
    let w = [
        -f * (f - 1.0) * (f - 2.0) / 6.0,
        (f + 1.0) * (f - 1.0) * (f - 2.0) / 2.0,
        -(f + 1.0) * f * (f - 2.0) / 2.0,
        (f + 1.0) * f * (f - 1.0) / 6.0,
    ];
    let at = |j: usize| (0..4).map(|i| w[i] * chunk[k + i][j]).sum::<f64>();
    (at(0), at(1), at(2))
}

/// The frame bias: EME2000 (J2000 mean equator and equinox, the dynamical frame of
/// older OEMs and TLE-era tools) to GCRF, IAU 2006 values (IERS Conventions 2010
/// eq. 5.21: dα0 = −14.6 mas, ξ0 = −16.617 mas, η0 = −6.8192 mas).
pub fn eme2000_to_gcrf() -> Matrix3<f64> {
    // sofars::pnp::bp06 at J2000 gives the bias matrix rb (GCRS → J2000 mean).
    let (rb, _, _) = sofars::pnp::bp06(J2000_JD, 0.0);
    m3(rb).transpose()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn cip_interpolation_error_is_below_a_micrometre() {
        // Against the full series at 100 instants over 2000–2040 and 400 over 4 days
        // (odd offsets, so no instant falls on a node).
        let mut worst: f64 = 0.0;
        let spread = (0..100).map(|i| i as f64 * 12_623_046.1 + 0.1);
        let dense = (0..400).map(|i| 8.0e8 + i as f64 * 863.7);
        for t in spread.chain(dense) {
            let (a, b) = (cip_interpolated(t), cip_exact(t));
            worst = worst
                .max((a.0 - b.0).abs())
                .max((a.1 - b.1).abs())
                .max((a.2 - b.2).abs());
        }
        eprintln!("worst X, Y, s interpolation error: {worst:.2e} rad");
        assert!(worst < 1e-13, "{worst:e} rad");
    }

    #[test]
    fn state_round_trip_gcrf_itrf_gcrf() {
        let e = EarthOrientation::shipped().unwrap();
        let rot = e.at(7.0e8);
        let (r, v) = (
            Vector3::new(7000.0, -1200.0, 300.0),
            Vector3::new(1.0, 7.2, -0.4),
        );
        let (ri, vi) = rot.state_to_itrf(&r, &v);
        let (rb, vb) = rot.state_to_gcrf(&ri, &vi);
        assert!((rb - r).norm() < 1e-9 && (vb - v).norm() < 1e-12);
        // A point fixed on the equator in ITRF moves at ω·R in GCRF (465 m/s at the
        // surface; common knowledge).
        let (_, vg) = rot.state_to_gcrf(&Vector3::new(6378.137, 0.0, 0.0), &Vector3::zeros());
        assert!((vg.norm() - 0.4651).abs() < 1e-3, "{}", vg.norm());
    }

    #[test]
    fn frame_bias_is_23_mas() {
        // |bias| ≈ sqrt(ξ0² + η0²) in angle about the pole, plus dα0 about z: the matrix
        // differs from identity by ~1e-7 (IERS Conventions 2010 §5.5.4).
        let b = eme2000_to_gcrf();
        let off = (b - Matrix3::identity()).abs().max();
        assert!(off > 5e-8 && off < 1.5e-7, "{off:e}");
    }
}
