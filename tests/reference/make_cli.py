#!/usr/bin/python3
"""Writes tests/reference/cli.json: what `gapwise predict` must print for a small planar data set,
computed without Gapwise.

- Targets given in longitude/latitude are projected to UTM 33N (EPSG:32633) with PROJ (Debian
  python3-pyproj, always_xy=True); the corners of a 100 m x 60 m UTM rectangle are given back in
  longitude/latitude for a boundary file.
- Simple kriging (known mean) with a nugget plus a Matérn ν = 3/2 structure is scikit-learn's
  GaussianProcessRegressor with the fixed kernel ConstantKernel(sill) * Matern(scale, nu=1.5) +
  WhiteKernel(nugget), optimizer=None, fitted to value − mean: its predictive mean + mean is the
  kriging mean, and its return_std (which includes the WhiteKernel noise at the target) is sd_obs =
  sqrt(sd² + nugget). scikit-learn's Matern uses sqrt(2ν)·d/length_scale, the same scale as Gapwise
  (Rasmussen & Williams 2006, eq. 4.14).
Run with /usr/bin/python3 (Debian's, not a pyenv python).
"""
import json
import math
import os

import numpy as np
import pyproj
import sklearn
from pyproj import Transformer
from sklearn.gaussian_process import GaussianProcessRegressor
from sklearn.gaussian_process.kernels import ConstantKernel, Matern, WhiteKernel

MODEL = {
    "structures": [
        {"type": "nugget", "sill": 1.5},
        {"type": "matern", "sill": 18.0, "scale": 60.0, "nu": 1.5},
    ],
    "trend": {"known": 24.0},
    "crs": {"work": "EPSG:32633"},
}


def samples():
    """A seeded, jittered 6 x 5 grid of nitrate-like values (mg/L) around 500 km E, 5400 km N."""
    rng = np.random.default_rng(20240711)
    rows = []
    k = 0
    for i in range(6):
        for j in range(5):
            k += 1
            x = 500000.0 + 35.0 * i + round(float(rng.uniform(-8, 8)), 1)
            y = 5400000.0 + 40.0 * j + round(float(rng.uniform(-8, 8)), 1)
            v = round(24.0 + 6.0 * math.sin(i / 1.6) + 4.0 * math.cos(j / 1.2) + float(rng.normal(0, 1.0)), 2)
            rows.append({"id": f"W{k}", "x": x, "y": y, "value": v})
    return rows


def main():
    rows = samples()
    X = np.array([[r["x"], r["y"]] for r in rows])
    y = np.array([r["value"] for r in rows])
    to_lonlat = Transformer.from_crs("EPSG:32633", "EPSG:4326", always_xy=True)
    to_utm = Transformer.from_crs("EPSG:4326", "EPSG:32633", always_xy=True)

    # Targets: two planar, two given in lon/lat (rounded to 7 decimals as a user would have them).
    planar = [(500060.0, 5400070.0), (500170.5, 5400150.25)]
    lonlat = []
    for e, n in [(500100.0, 5400030.0), (500020.0, 5400180.0)]:
        lon, lat = to_lonlat.transform(e, n)
        lonlat.append((round(lon, 7), round(lat, 7)))
    targets = [{"crs": "EPSG:32633", "x": e, "y": n, "workX": e, "workY": n} for e, n in planar]
    for lon, lat in lonlat:
        e, n = to_utm.transform(lon, lat)
        targets.append({"crs": "EPSG:4326", "x": lon, "y": lat, "workX": e, "workY": n})

    nug = MODEL["structures"][0]["sill"]
    m = MODEL["structures"][1]
    mean0 = MODEL["trend"]["known"]
    kernel = ConstantKernel(m["sill"], constant_value_bounds="fixed") * Matern(
        length_scale=m["scale"], length_scale_bounds="fixed", nu=m["nu"]
    ) + WhiteKernel(nug, noise_level_bounds="fixed")
    gp = GaussianProcessRegressor(kernel=kernel, optimizer=None, normalize_y=False, alpha=0.0)
    # Centre the coordinates (as Gapwise does) so that the distances keep their digits.
    centre = X.mean(axis=0)
    gp.fit(X - centre, y - mean0)
    W = np.array([[t["workX"], t["workY"]] for t in targets]) - centre
    mu, sd_obs = gp.predict(W, return_std=True)
    for t, a, b in zip(targets, mu, sd_obs):
        t["mean"] = float(a + mean0)
        t["sdObserved"] = float(b)
        t["sd"] = float(math.sqrt(max(b * b - nug, 0.0)))

    # A 100 m x 60 m rectangle in UTM 33N (500000-500100 E, 0-60 N), as lon/lat corners for a boundary file.
    rect = [(500000.0, 0.0), (500100.0, 0.0), (500100.0, 60.0), (500000.0, 60.0), (500000.0, 0.0)]
    boundary = {"utm": rect, "lonlat": [list(to_lonlat.transform(e, n)) for e, n in rect], "areaSquareMetres": 6000.0}

    out = {
        "source": f"scikit-learn {sklearn.__version__} GaussianProcessRegressor (Debian python3-sklearn) with a fixed "
                  f"ConstantKernel*Matern(nu=1.5)+WhiteKernel kernel on value - known mean; PROJ {pyproj.proj_version_str} "
                  f"via pyproj {pyproj.__version__} (Debian python3-pyproj) for the lon/lat targets",
        "script": "tests/reference/make_cli.py",
        "tolerance": {"rel": 1e-8},
        "note": "coordinates in metres (EPSG:32633) or degrees (EPSG:4326); values in mg/L. Measured agreement was "
                "about 1e-12 relative, lon/lat targets included (proj4 and PROJ agree far below a millimetre here).",
        "model": MODEL,
        "samples": rows,
        "boundary": boundary,
        "cases": targets,
    }
    path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "cli.json")
    with open(path, "w") as f:
        json.dump(out, f, indent=1)
        f.write("\n")


if __name__ == "__main__":
    main()
