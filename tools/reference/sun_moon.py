"""Geocentric Sun and Moon positions from JPL DE421 (packages jplephem + de421).

Epochs are UTC; TDB is taken as UTC + 37 s + 32.184 s (TAI - UTC = 37 s from 2017 on,
no leap second announced since; TDB - TT < 2 ms is ignored). Positions are km in the
ICRF, which arcwise treats as its J2000 ECI frame (they differ by < 0.03").
Writes ROOT/tests/data/reference/sun_moon_de421.json. Run: python sun_moon.py ROOT
"""
import json
import sys
from datetime import datetime, timedelta, timezone
from pathlib import Path

import de421
import jplephem
from jplephem.ephem import Ephemeris

J2000_JD = 2451545.0


def epochs():
    # 64 epochs spread over 2020-2040, at irregular times of day.
    start = datetime(2020, 1, 3, 5, 17, 0, tzinfo=timezone.utc)
    return [start + timedelta(days=119.37 * k, seconds=3607 * k) for k in range(64)]


def main(root: Path):
    eph = Ephemeris(de421)
    rows = []
    for e in epochs():
        jd_utc = 2440587.5 + e.timestamp() / 86400.0
        jd_tdb = jd_utc + (37.0 + 32.184) / 86400.0
        moon = eph.position("moon", jd_tdb)            # geocentric
        emb = eph.position("earthmoon", jd_tdb)        # barycentric
        earth = emb - moon * eph.earth_share
        sun = eph.position("sun", jd_tdb) - earth
        rows.append({
            "epoch_utc": e.strftime("%Y-%m-%dT%H:%M:%S.000Z"),
            "sun_km": [float(v) for v in sun.ravel()],
            "moon_km": [float(v) for v in moon.ravel()],
        })
    out = {"source": f"JPL DE421 via jplephem {jplephem.__version__} (de421 2008.1)", "epochs": rows}
    path = root / "tests" / "data" / "reference" / "sun_moon_de421.json"
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(json.dumps(out, indent=1) + "\n")


if __name__ == "__main__":
    main(Path(sys.argv[1]) if len(sys.argv) > 1 else Path(__file__).resolve().parents[2])
