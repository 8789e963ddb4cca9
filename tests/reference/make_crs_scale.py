#!/usr/bin/python3
"""Writes tests/reference/crs_scale.json: Tissot semi-axes (largest and smallest scale factor) of the
projected CRSs Gapwise checks its working CRS with, from PROJ (Debian python3-pyproj,
Proj.get_factors), at places inside and beyond a UTM zone, for a Lambert azimuthal equal-area
projection and for Web Mercator. Run with /usr/bin/python3 (Debian's, not a pyenv python)."""
import json
import os

import pyproj
from pyproj import Proj

CASES = {
    "EPSG:32631": ("+proj=utm +zone=31 +datum=WGS84 +units=m +no_defs",
                   [(3.0, 0.0), (0.0, 0.0), (6.0, 0.0), (10.0, 47.0), (12.0, 0.0), (25.0, 10.0), (45.0, 0.0)]),
    "EPSG:32632": ("+proj=utm +zone=32 +datum=WGS84 +units=m +no_defs", [(11.25, 48.5), (3.0, 56.0), (0.0, 45.0)]),
    "+proj=laea +lat_0=46 +lon_0=5 +x_0=0 +y_0=0 +datum=WGS84 +units=m +no_defs":
        ("+proj=laea +lat_0=46 +lon_0=5 +x_0=0 +y_0=0 +datum=WGS84 +units=m +no_defs", [(0.0, 45.0), (10.0, 47.0), (5.0, 46.0)]),
    "EPSG:3857": ("+proj=merc +a=6378137 +b=6378137 +lat_ts=0 +lon_0=0 +x_0=0 +y_0=0 +k=1 +units=m +nadgrids=@null +wktext +no_defs",
                  [(11.25, 48.5), (0.0, 0.0), (0.0, 60.0)]),
}


def main():
    cases = []
    for crs, (definition, points) in CASES.items():
        p = Proj(definition)
        for lon, lat in points:
            f = p.get_factors(lon, lat)
            cases.append({"crs": crs, "lon": lon, "lat": lat,
                          "a": f.tissot_semimajor, "b": f.tissot_semiminor})
    out = {
        "source": f"PROJ {pyproj.proj_version_str} through pyproj {pyproj.__version__} (Proj.get_factors: tissot_semimajor, tissot_semiminor)",
        "script": "tests/reference/make_crs_scale.py",
        "tolerance": {"abs": 1e-7},
        "cases": cases,
    }
    path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "crs_scale.json")
    with open(path, "w") as fh:
        json.dump(out, fh, indent=1)
        fh.write("\n")


if __name__ == "__main__":
    main()
