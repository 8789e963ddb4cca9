#!/usr/bin/python3
"""Writes tests/reference/proj.json: forward and inverse coordinate values from PROJ (Debian
python3-pyproj) for the CRS definitions Gapwise uses (proj strings as listed in epsg-index 2.0.0,
with the OSGB36 grid replaced by its 7-parameter shift exactly as src/io/crs.ts does).
Run with /usr/bin/python3 (Debian's, not a pyenv python)."""
import json
import os

import pyproj
from pyproj import CRS, Transformer

WGS84 = "+proj=longlat +datum=WGS84 +no_defs"
OSGB_SHIFT = "+towgs84=446.448,-125.157,542.06,0.15,0.247,0.842,-20.489"

TARGETS = {
    "EPSG:32633": ("+proj=utm +zone=33 +datum=WGS84 +units=m +no_defs", [(15.5, 52.5), (12.2, 0.4), (17.9, 70.1), (9.0, 48.0)]),
    "EPSG:32632": ("+proj=utm +zone=32 +datum=WGS84 +units=m +no_defs", [(11.25, 48.5), (5.3, 60.39)]),
    "EPSG:32631": ("+proj=utm +zone=31 +datum=WGS84 +units=m +no_defs", [(8.0, 78.2)]),
    "EPSG:32733": ("+proj=utm +zone=33 +south +datum=WGS84 +units=m +no_defs", [(15.5, -33.9), (13.1, -0.3), (17.5, -60.0)]),
    "EPSG:32760": ("+proj=utm +zone=60 +south +datum=WGS84 +units=m +no_defs", [(177.5, -38.2), (174.76, -36.85)]),
    "EPSG:27700": ("+proj=tmerc +lat_0=49 +lon_0=-2 +k=0.9996012717 +x_0=400000 +y_0=-100000 +ellps=airy "
                   + OSGB_SHIFT + " +units=m +no_defs", [(-1.5, 52.5), (-3.19, 55.95), (0.12, 51.5), (-5.7, 50.07)]),
    "EPSG:2193": ("+proj=tmerc +lat_0=0 +lon_0=173 +k=0.9996 +x_0=1600000 +y_0=10000000 +ellps=GRS80 "
                  "+towgs84=0,0,0,0,0,0,0 +units=m +no_defs", [(174.76, -36.85), (172.63, -43.53), (168.35, -46.41)]),
    "EPSG:3035": ("+proj=laea +lat_0=52 +lon_0=10 +x_0=4321000 +y_0=3210000 +ellps=GRS80 +towgs84=0,0,0,0,0,0,0 "
                  "+units=m +no_defs", [(10.0, 52.0), (-9.14, 38.72), (24.94, 60.17), (2.35, 48.86)]),
    "EPSG:3857": ("+proj=merc +a=6378137 +b=6378137 +lat_ts=0 +lon_0=0 +x_0=0 +y_0=0 +k=1 +units=m "
                  "+nadgrids=@null +wktext +no_defs", [(0.0, 0.0), (13.4, 52.5), (-122.42, 37.77), (151.2, -33.87)]),
}


def main():
    cases = []
    src = CRS.from_proj4(WGS84)
    for code, (definition, points) in TARGETS.items():
        dst = CRS.from_proj4(definition)
        fwd = Transformer.from_crs(src, dst, always_xy=True)
        for lon, lat in points:
            x, y = fwd.transform(lon, lat)
            cases.append({"crs": code, "definition": definition, "lon": lon, "lat": lat, "x": x, "y": y})
    out = {
        "source": f"PROJ {pyproj.proj_version_str} via pyproj {pyproj.__version__} (Debian python3-pyproj), "
                  "Transformer.from_crs(WGS 84 proj string, target proj string, always_xy=True)",
        "script": "tests/reference/make_proj.py",
        "tolerance": {"abs": 0.001},
        "note": "x, y in metres; tolerance 1 mm",
        "cases": cases,
    }
    path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "proj.json")
    with open(path, "w") as f:
        json.dump(out, f, indent=1)
        f.write("\n")
    print(f"wrote {len(cases)} cases to {path}")


if __name__ == "__main__":
    main()
