"""chi2 tail probabilities from scipy.stats.chi2.sf, for the anomaly verdict's statistics.
Writes ROOT/tests/data/reference/chi2_sf.json."""
import json
import sys
from pathlib import Path

import scipy
from scipy.stats import chi2

CASES = [(x, dof) for dof in (1, 2, 5, 20, 100, 1000, 4317) for x in (0.3 * dof, 0.9 * dof, dof, 1.1 * dof, 1.3 * dof, 2.0 * dof + 10)]


def main(root: Path):
    out = {"source": f"scipy {scipy.__version__} scipy.stats.chi2.sf",
           "cases": [{"x": float(x), "dof": dof, "sf": float(chi2.sf(x, dof))} for x, dof in CASES]}
    path = root / "tests" / "data" / "reference" / "chi2_sf.json"
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(json.dumps(out, indent=1) + "\n")


if __name__ == "__main__":
    main(Path(sys.argv[1]) if len(sys.argv) > 1 else Path(__file__).resolve().parents[2])
