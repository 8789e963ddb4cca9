"""Writes tests/reference/normal.json: the standard normal CDF and erfc from scipy.special
(Debian python3-scipy), used by tests/core/shared/normal.test.ts."""
import json
import os

import numpy as np
import scipy
from scipy import special

xs = sorted(set([float(v) for v in np.concatenate([
    np.linspace(-38.0, 9.0, 95),
    np.array([-1e-8, 0.0, 1e-8, 0.5, 1.0, 1.5, 1.6448536269514722, 1.959963984540054, 2.5, 3.0,
              3.5355339059327378, 3.6, -3.5355339059327378, -3.6, -7.0, -12.0, -20.0]),
])]))
zs = sorted(set([float(v) for v in np.concatenate([
    np.linspace(-3.0, 26.0, 59), np.array([1.4999999, 1.5, 1.5000001, 1e-10, 0.1])])]))

out = {
    "source": f"scipy {scipy.__version__} scipy.special.ndtr and scipy.special.erfc",
    "script": "tests/reference/make_normal.py",
    "tolerance": {"abs": 1e-15, "rel": 1e-13},
    "cases": [{"x": x, "cdf": float(special.ndtr(x))} for x in xs],
    "erfc": [{"z": z, "erfc": float(special.erfc(z))} for z in zs],
}
path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "normal.json")
with open(path, "w") as f:
    json.dump(out, f, indent=1)
print("wrote", path, len(out["cases"]), "cdf cases,", len(out["erfc"]), "erfc cases")
