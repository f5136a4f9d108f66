"""Times the same 1-day J2 + exponential-drag LEO propagation (DP853, rtol 1e-10) with
scipy's solve_ivp and with arcwise, in one run, and prints the ratio.

Run from the repository root: python tools/bench/compare_scipy.py
(needs numpy and scipy; builds arcwise's timing example in release mode).
"""
import json
import subprocess
import time

import numpy as np
from scipy.integrate import solve_ivp

MU, RE, OMEGA = 398600.4418, 6378.1363, 7.292115e-5
J2 = 1.0826266835531513e-3
RHO0, H0, H = 2.418e-11, 300.0, 53.628
B = 0.5 * 2.2 * 0.1 / 10.0  # 1/2 Cd A/m, m^2/kg


def rhs(t, y):
    x, yy, z = y[0], y[1], y[2]
    r2 = x * x + yy * yy + z * z
    r = np.sqrt(r2)
    k = -MU / (r2 * r)
    f = 1.5 * J2 * MU * RE * RE / r**5
    s = 5.0 * z * z / r2
    ax = k * x - f * x * (1 - s)
    ay = k * yy - f * yy * (1 - s)
    az = k * z - f * z * (3 - s)
    rho = RHO0 * np.exp(-(r - RE - H0) / H)
    vx, vy, vz = y[3] + OMEGA * yy, y[4] - OMEGA * x, y[5]
    vn = np.sqrt(vx * vx + vy * vy + vz * vz)
    d = -B * rho * vn * 1e3
    return [y[3], y[4], y[5], ax + d * vx, ay + d * vy, az + d * vz]


def main():
    a = RE + 300.0
    v = np.sqrt(MU / a)
    i = np.radians(51.6)
    y0 = [a, 0.0, 0.0, 0.0, v * np.cos(i), v * np.sin(i)]
    times = []
    for _ in range(3):
        t = time.perf_counter()
        sol = solve_ivp(rhs, (0.0, 86400.0), y0, method="DOP853", rtol=1e-10, atol=1e-10)
        times.append(time.perf_counter() - t)
    scipy_s = sorted(times)[1]
    out = subprocess.run(["cargo", "run", "--quiet", "--release", "--example", "propagation_timing"],
                         check=True, capture_output=True, text=True).stdout
    ours = json.loads(out)
    diff_m = np.linalg.norm(np.array(ours["final_r_km"]) - sol.y[:3, -1]) * 1e3
    print(f"scipy solve_ivp DOP853: {scipy_s * 1e3:.1f} ms ({sol.nfev} evaluations)")
    print(f"arcwise dp853:          {ours['propagation_s'] * 1e3:.3f} ms ({ours['force_evaluations']} evaluations)")
    print(f"speed-up: {scipy_s / ours['propagation_s']:.0f}x   (target >= 100x)")
    print(f"integrator overhead / force time: {ours['overhead_ratio']:.2f}   (target <= 1.5)")
    print(f"final positions differ by {diff_m:.3f} m")


if __name__ == "__main__":
    main()
