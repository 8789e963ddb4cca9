"""Writes tests/reference/grid.json: cell masks of boundary polygons burnt by GDAL's rasterizer
(osgeo.gdal.RasterizeLayer, default rule: a pixel is burnt when its centre is inside), on north-up
grids given by their upper-left corner and cell size. Used by tests/core/geometry/grid.test.ts."""
import json
import os

from osgeo import gdal, ogr, osr

gdal.UseExceptions()


def burn(polygons, x0, y0, cell, nx, ny):
    srs = osr.SpatialReference()
    srs.ImportFromEPSG(32633)
    mem = ogr.GetDriverByName("Memory").CreateDataSource("m")
    layer = mem.CreateLayer("b", srs, ogr.wkbMultiPolygon)
    geom = ogr.Geometry(ogr.wkbMultiPolygon)
    for poly in polygons:
        p = ogr.Geometry(ogr.wkbPolygon)
        for ring in poly:
            r = ogr.Geometry(ogr.wkbLinearRing)
            for x, y in ring:
                r.AddPoint_2D(x, y)
            r.CloseRings()
            p.AddGeometry(r)
        geom.AddGeometry(p)
    feat = ogr.Feature(layer.GetLayerDefn())
    feat.SetGeometry(geom)
    layer.CreateFeature(feat)
    ds = gdal.GetDriverByName("MEM").Create("", nx, ny, 1, gdal.GDT_Byte)
    ds.SetGeoTransform((x0, cell, 0, y0, 0, -cell))
    ds.SetProjection(srs.ExportToWkt())
    gdal.RasterizeLayer(ds, [1], layer, burn_values=[1])
    return [int(v) for v in ds.GetRasterBand(1).ReadAsArray().ravel()]


cases = []
# An irregular field with a hole (a pond), in UTM metres.
field = [[[500013.0, 4980021.0], [500371.5, 4979988.0], [500402.0, 4980240.7], [500230.0, 4980397.3],
          [500061.2, 4980355.0], [500013.0, 4980021.0]],
         [[500180.0, 4980150.0], [500260.0, 4980150.0], [500260.0, 4980230.0], [500180.0, 4980230.0]]]
# A second, separate plot (a MultiPolygon part) and a thin diagonal strip.
plot = [[[500500.0, 4980000.0], [500620.0, 4980030.0], [500560.0, 4980130.0]]]
strip = [[[500440.0, 4980300.0], [500460.0, 4980290.0], [500640.0, 4980400.0], [500620.0, 4980410.0]]]
# Edges through cell centres: which side a centre on an edge falls to must match GDAL.
aligned = [[[105.0, 105.0], [155.0, 105.0], [155.0, 155.0], [105.0, 155.0]]]
diamond = [[[130.0, 95.0], [165.0, 130.0], [130.0, 165.0], [95.0, 130.0]]]
for name, polys, cell in [("edges through centres", [aligned], 10.0), ("diamond, vertices on centres", [diamond], 10.0),
                          ("field with a hole", [field], 10.0), ("field with a hole", [field], 25.0),
                          ("three parts", [field, plot, strip], 10.0), ("triangle", [plot], 7.0)]:
    xs = [v[0] for p in polys for v in p[0]]
    ys = [v[1] for p in polys for v in p[0]]
    import math
    x0 = math.floor(min(xs) / cell) * cell
    y0 = math.ceil(max(ys) / cell) * cell
    nx = max(1, math.ceil((max(xs) - x0) / cell - 1e-9))
    ny = max(1, math.ceil((y0 - min(ys)) / cell - 1e-9))
    cases.append({"name": name, "polygons": polys, "cell": cell, "x0": x0, "y0": y0, "nx": nx, "ny": ny,
                  "mask": burn(polys, x0, y0, cell, nx, ny)})

out = {
    "source": f"GDAL {gdal.__version__} gdal.RasterizeLayer (pixel centre inside polygon)",
    "script": "tests/reference/make_grid.py",
    "tolerance": {"abs": 0},
    "cases": cases,
}
path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "grid.json")
with open(path, "w") as f:
    json.dump(out, f)
print("wrote", path, [(c["name"], c["nx"], c["ny"], sum(c["mask"])) for c in cases])
