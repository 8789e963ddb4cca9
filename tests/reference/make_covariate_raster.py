#!/usr/bin/python3
"""Writes tests/reference/covariate_raster_*.tif and covariate_raster.json: covariate rasters written by
GDAL (osgeo, Debian python3-gdal) in two CRSs, with values read back by GDAL at known points.

Each raster is Float32, single band, north-up, with a no-data value: a smooth field plus a few no-data
cells. Recorded per raster:
- "exact": points at cell centres and the value GDAL reads there (band.ReadAsArray of that cell);
- "bilinear": points inside the raster (away from no-data) and the value of GDAL's own bilinear
  resampling there: gdal.Warp of the raster onto a 1 x 1 cell of 1e-3 CRS units centred on the point
  with resampleAlg "bilinear" (at so fine an output cell the warper's bilinear kernel is the plain
  bilinear interpolation between the four cell centres around the point).
Points are given in the raster's own CRS, and also in EPSG:32632 (transformed by osr / PROJ, with the
traditional GIS axis order) for the reprojection check.

Run with Debian's python: /usr/bin/python3 tests/reference/make_covariate_raster.py
"""
import json
import os

import numpy as np
from osgeo import gdal, osr

HERE = os.path.dirname(os.path.abspath(__file__))
gdal.UseExceptions()

NO_DATA = -9999.0
RASTERS = [
    # name, EPSG, upper-left x, y, cell, nx, ny
    ("utm", 32632, 666000.0, 5375500.0, 10.0, 60, 50),
    ("laea", 3035, 4417000.0, 2827000.0, 12.5, 48, 40),
]


def srs(epsg):
    s = osr.SpatialReference()
    s.ImportFromEPSG(epsg)
    s.SetAxisMappingStrategy(osr.OAMS_TRADITIONAL_GIS_ORDER)
    return s


def main():
    rng = np.random.default_rng(20261203)
    doc = {
        "source": f"GDAL {gdal.__version__} (osgeo): rasters written by GTiff, read back by ReadAsArray and resampled by gdal.Warp bilinear; points reprojected by osr (PROJ)",
        "script": "tests/reference/make_covariate_raster.py",
        "tolerance": {"rel": 1e-6, "abs": 1e-6},
        "note": "exact values are float32 cells (compare exactly); bilinear values within 1e-6 relative; reprojected points compare with 2e-3 (proj4js and PROJ agree to well under a millimetre, the field changes by under 1 per metre)",
        "cases": [],
    }
    for name, epsg, x0, y0, cell, nx, ny in RASTERS:
        jj, ii = np.mgrid[0:ny, 0:nx]
        field = (50 + 20 * np.sin(ii / 7.0) * np.cos(jj / 5.0) + 0.3 * ii + 0.2 * jj).astype(np.float32)
        holes = [(3, 4), (10, 20), (30, 40)]
        for j, i in holes:
            field[j, i] = NO_DATA
        path = os.path.join(HERE, f"covariate_raster_{name}.tif")
        ds = gdal.GetDriverByName("GTiff").Create(path, nx, ny, 1, gdal.GDT_Float32)
        ds.SetGeoTransform((x0, cell, 0, y0, 0, -cell))
        ds.SetProjection(srs(epsg).ExportToWkt())
        band = ds.GetRasterBand(1)
        band.SetNoDataValue(NO_DATA)
        band.WriteArray(field)
        ds.FlushCache()
        ds = None

        ds = gdal.Open(path)
        arr = ds.GetRasterBand(1).ReadAsArray()
        exact = []
        for _ in range(20):
            i = int(rng.integers(0, nx))
            j = int(rng.integers(0, ny))
            if (j, i) in holes:
                continue
            exact.append({"x": x0 + (i + 0.5) * cell, "y": y0 - (j + 0.5) * cell, "value": float(arr[j, i])})
        bilinear = []
        while len(bilinear) < 20:
            fx = rng.uniform(1, nx - 1)
            fy = rng.uniform(1, ny - 1)
            i0 = int(np.floor(fx - 0.5))
            j0 = int(np.floor(fy - 0.5))
            if any((j, i) in holes for j in (j0, j0 + 1) for i in (i0, i0 + 1)):
                continue
            x = x0 + fx * cell
            y = y0 - fy * cell
            h = 5e-4
            out = gdal.Warp("", ds, format="MEM", outputBounds=(x - h, y - h, x + h, y + h), width=1, height=1,
                            resampleAlg="bilinear", dstSRS=srs(epsg).ExportToWkt())
            v = float(out.GetRasterBand(1).ReadAsArray()[0, 0])
            bilinear.append({"x": x, "y": y, "value": v})
        holes_xy = [{"x": x0 + (i + 0.5) * cell, "y": y0 - (j + 0.5) * cell} for j, i in holes]
        to_work = osr.CoordinateTransformation(srs(epsg), srs(32632))
        for p in exact + bilinear + holes_xy:
            wx, wy, _ = to_work.TransformPoint(p["x"], p["y"])
            p["workX"] = wx
            p["workY"] = wy
        doc["cases"].append({
            "name": name, "file": f"covariate_raster_{name}.tif", "epsg": epsg,
            "x0": x0, "y0": y0, "cell": cell, "nx": nx, "ny": ny,
            "exact": exact, "bilinear": bilinear, "noData": holes_xy,
        })
        ds = None
    with open(os.path.join(HERE, "covariate_raster.json"), "w") as f:
        json.dump(doc, f, indent=1)
    print(f"wrote {len(doc['cases'])} rasters")


if __name__ == "__main__":
    main()
