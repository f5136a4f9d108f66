"""Every leap second since 1972 from the IERS table shipped in astropy-iers-data
(Leap_Second.dat, IERS Bulletin C). Writes ROOT/tests/data/reference/leap_seconds.json:
for each change, the UTC date it takes effect (00:00:00) and TAI - UTC from then on;
the leap second itself is 23:59:60 of the day before."""
import json
import sys
from pathlib import Path

import astropy_iers_data
from astropy_iers_data import IERS_LEAP_SECOND_FILE


def main(root: Path):
    rows = []
    for line in Path(IERS_LEAP_SECOND_FILE).read_text().splitlines():
        if not line.strip() or line.lstrip().startswith("#"):
            continue
        mjd, day, month, year, dat = line.split()
        rows.append({"from_utc": f"{int(year):04d}-{int(month):02d}-{int(day):02d}", "tai_minus_utc_s": int(dat)})
    out = {"source": f"astropy-iers-data {astropy_iers_data.__version__}, Leap_Second.dat (IERS Bulletin C)",
           "changes": rows}
    path = root / "tests" / "data" / "reference" / "leap_seconds.json"
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(json.dumps(out, indent=1) + "\n")


if __name__ == "__main__":
    main(Path(sys.argv[1]) if len(sys.argv) > 1 else Path(__file__).resolve().parents[2])
