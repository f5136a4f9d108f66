"""Reference trajectories for arcwise's propagator, from scipy's solve_ivp (DOP853).

An independent implementation of the same force models:
  * zonal gravity as the gradient of U = -mu/r * sum J_n (R/r)^n P_n(z/r), n = 2..6,
    with explicit Legendre polynomials and complex-step differentiation (so neither
    the recursion nor the closed-form gradient of arcwise is reused);
  * drag -1/2 Cd A/m rho |v_rel| v_rel in SI, converted to km/s^2, with
    v_rel = v - omega z x r and a single exponential density.
Writes ROOT/tests/data/reference/trajectories.json. Run: python trajectories.py ROOT
"""
import json
import sys
from pathlib import Path

import numpy as np
import scipy
from scipy.integrate import solve_ivp

MU = 398600.4418          # km^3/s^2 (EGM96)
RE = 6378.1363            # km (EGM96)
OMEGA = 7.292115e-5       # rad/s
# EGM96 normalised C(n,0), n = 2..6 (Lemoine et al. 1998); J_n = -sqrt(2n+1) C(n,0).
CBAR = [-0.484165371736e-3, 0.957254173792e-6, 0.539873863789e-6,
        0.685323475630e-7, -0.149957994714e-6]
J = [-np.sqrt(2 * n + 1) * c for n, c in zip(range(2, 7), CBAR)]


def legendre(n, u):
    return {
        2: (3 * u**2 - 1) / 2,
        3: (5 * u**3 - 3 * u) / 2,
        4: (35 * u**4 - 30 * u**2 + 3) / 8,
        5: (63 * u**5 - 70 * u**3 + 15 * u) / 8,
        6: (231 * u**6 - 315 * u**4 + 105 * u**2 - 5) / 16,
    }[n]


def potential(p, degree):
    r = np.sqrt(p[0] ** 2 + p[1] ** 2 + p[2] ** 2)
    u = p[2] / r
    s = 0.0
    for n in range(2, degree + 1):
        s = s + J[n - 2] * (RE / r) ** n * legendre(n, u)
    return MU / r * (1.0 - s)


def gravity(p, degree):
    h = 1e-30
    g = np.zeros(3)
    for i in range(3):
        q = p.astype(complex)
        q[i] += 1j * h
        g[i] = potential(q, degree).imag / h
    return g


def make_rhs(degree, drag):
    def rhs(t, y):
        r, v = y[:3], y[3:]
        a = gravity(r, degree)
        if drag is not None:
            h = np.linalg.norm(r) - RE
            rho = drag["rho0_kg_m3"] * np.exp(-(h - drag["h0_km"]) / drag["scale_height_km"])
            vrel = v - np.cross([0.0, 0.0, OMEGA], r)
            vrel_m = vrel * 1e3
            a_si = -0.5 * drag["cd"] * drag["area_m2"] / drag["mass_kg"] * rho * np.linalg.norm(vrel_m) * vrel_m
            a = a + a_si / 1e3
        return np.concatenate([v, a])
    return rhs


CASES = [
    {
        "name": "zonal_j2_j6_leo",
        "degree": 6,
        "drag": None,
        # a ≈ 7192 km, e ≈ 0.023, i ≈ 77°: perigee about 650 km up.
        "x0": [7100.0, 0.0, 1300.0, 0.0, 7.35, 1.0],
    },
    {
        "name": "j2_exponential_drag_300km",
        "degree": 2,
        "drag": {"rho0_kg_m3": 2.418e-11, "h0_km": 300.0, "scale_height_km": 53.628,
                 "cd": 2.2, "area_m2": 0.1, "mass_kg": 10.0},
        # Circular 300 km orbit at 51.6 deg, node on the x axis.
        "x0": None,
    },
]


def circular(alt_km, inc_deg):
    a = RE + alt_km
    v = np.sqrt(MU / a)
    i = np.radians(inc_deg)
    return [a, 0.0, 0.0, 0.0, v * np.cos(i), v * np.sin(i)]


def main(root: Path):
    out = {"source": f"scipy {scipy.__version__} solve_ivp DOP853 rtol 1e-13 atol 1e-12 (km, km/s)",
           "mu_km3_s2": MU, "radius_km": RE, "rotation_rad_s": OMEGA, "j": J, "cases": []}
    for case in CASES:
        x0 = case["x0"] or circular(300.0, 51.6)
        times = np.arange(0.0, 86400.0 + 1.0, 3600.0)
        sol = solve_ivp(make_rhs(case["degree"], case["drag"]), (0.0, 86400.0), np.array(x0, dtype=float),
                        method="DOP853", rtol=1e-13, atol=1e-12, t_eval=times)
        assert sol.success, sol.message
        out["cases"].append({
            "name": case["name"], "zonal_degree": case["degree"], "drag": case["drag"],
            "x0": [float(v) for v in x0], "t_s": [float(t) for t in sol.t],
            "states": [[float(v) for v in sol.y[:, k]] for k in range(sol.y.shape[1])],
        })
    path = root / "tests" / "data" / "reference" / "trajectories.json"
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(json.dumps(out, indent=1) + "\n")


if __name__ == "__main__":
    main(Path(sys.argv[1]) if len(sys.argv) > 1 else Path(__file__).resolve().parents[2])
