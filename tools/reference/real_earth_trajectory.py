"""A decay-free 1-day LEO trajectory with EGM2008 70x70 + Sun + Moon, from scipy DOP853,
built from the independent pieces of the other reference scripts:

- the field from gravity_field.py (scipy's normalized Legendre functions, the gradient
  of the textbook potential in spherical coordinates), degrees 2..70, plus GM/r^2 with
  the field's own GM;
- GCRF -> ITRF by pyerfa at every evaluation (gcrf_itrf.py: IAU 2006/2000A CIO chain,
  finals2000A EOP from astropy-iers-data interpolated linearly), no interpolation of the
  precession-nutation;
- Sun and Moon from the same analytic series as arcwise (third_body_trajectories.py), so
  the comparison checks the field, the frames and the integration, not the ephemeris;
  the series' Julian centuries are TT (TDB - TT < 2 ms is ignored).

A second trajectory adds the solid Earth tides of IERS Conventions (2010) sec. 6.2.1
step 1 (eq. 6.6, degree 2, Love numbers k2m of Table 6.3, anelastic, with their
imaginary parts): the complex change is formed here with numpy's complex arithmetic and
scipy's Legendre functions and added to the field's C20..S22 at every evaluation.

Epoch 2021-04-28T18:00:00 UTC (inside the IERS tables, no extrapolation); 400 km,
51.6 deg, near-circular; states every hour in GCRF.
Writes ROOT/tests/data/reference/real_earth_trajectory.json."""
import json
import sys
from pathlib import Path

import erfa
import numpy as np
import scipy
from scipy.integrate import solve_ivp

import gcrf_itrf
import gravity_field
import third_body_trajectories as tb

EPOCH = (2021, 4, 28, 18, 0, 0.0)
X0 = [6778.137, 0.0, 0.0, 0.0, 4.7689, 6.0184]
HOURS = 24
K2 = [0.30190 + 0.0j, 0.29830 - 0.00144j, 0.30102 - 0.00130j]


def tidal_change(gm, re, bodies):
    """(dC[2, 0..2], dS[2, 0..2]) from Earth-fixed body positions (km) and GMs."""
    from scipy.special import assoc_legendre_p_all
    d = np.zeros(3, dtype=complex)
    for rb, gmb in bodies:
        rn = np.linalg.norm(rb)
        sphi = rb[2] / rn
        lam = np.arctan2(rb[1], rb[0])
        p = assoc_legendre_p_all(2, 2, sphi, norm=True)[0]
        for m in range(3):
            pbar = np.sqrt(2.0 * (1.0 if m == 0 else 2.0)) * (-1.0) ** m * p[2, m]
            d[m] += K2[m] / 5.0 * gmb / gm * (re / rn) ** 3 * pbar * np.exp(-1j * m * lam)
    return d.real, -d.imag


def main(root: Path):
    gm, re, c, s = gravity_field.read_gfc(
        Path(__file__).resolve().parents[2] / "propagator" / "data" / "egm2008_deg70.gfc")
    rows = gcrf_itrf.eop_rows()
    tai1, tai2 = erfa.utctai(*erfa.dtf2d("UTC", *EPOCH))
    tt1, tt2 = erfa.taitt(tai1, tai2)
    t0 = ((tt1 - 2451545.0) + tt2) / 36525.0

    def rhs_factory(tides):
        def rhs(t, y):
            r = y[:3]
            m = gcrf_itrf.gcrf_to_itrf(rows, tai1, tai2 + t / 86400.0)
            tc = t0 + t / 86400.0 / 36525.0
            sun, moon = tb.sun(tc), tb.moon(tc)
            cc, ss = c, s
            if tides:
                dc, ds = tidal_change(gm, re, [(m @ sun, tb.MU_SUN), (m @ moon, tb.MU_MOON)])
                cc, ss = c.copy(), s.copy()
                cc[2, :3] += dc
                ss[2, :3] += ds
            a = -gm * r / np.linalg.norm(r) ** 3
            a = a + m.T @ gravity_field.acceleration(m @ r, gm, re, cc, ss)
            a = a + tb.third(r, sun, tb.MU_SUN) + tb.third(r, moon, tb.MU_MOON)
            return np.concatenate([y[3:], a])
        return rhs

    times = np.arange(0.0, HOURS * 3600.0 + 1.0, 3600.0)
    runs = {}
    for name, tides in (("states", False), ("states_solid_tides", True)):
        sol = solve_ivp(rhs_factory(tides), (0.0, times[-1]), X0, method="DOP853", rtol=1e-12,
                        atol=1e-12, t_eval=times)
        assert sol.success, sol.message
        runs[name] = [[float(v) for v in sol.y[:, k]] for k in range(sol.y.shape[1])]
    out = {"source": f"scipy {scipy.__version__} solve_ivp DOP853 rtol 1e-12 atol 1e-12; pyerfa "
                     f"{erfa.__version__}; see tools/reference/real_earth_trajectory.py",
           "epoch_utc": "2021-04-28T18:00:00Z", "gm_km3_s2": gm, "x0": X0,
           "t_s": [float(t) for t in times], **runs}
    path = root / "tests" / "data" / "reference" / "real_earth_trajectory.json"
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(json.dumps(out, indent=1) + "\n")


if __name__ == "__main__":
    main(Path(sys.argv[1]) if len(sys.argv) > 1 else Path(__file__).resolve().parents[2])
