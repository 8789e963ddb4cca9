"""Writes tests/reference/gdal.json: what GDAL (Debian gdal-bin `gdalinfo -json` and the osgeo
bindings) reads from the GeoTIFFs that src/io/geotiff.ts writes for the seeded cases in
tests/reference/gdal-case.ts: the EPSG code, the geotransform, size, band count, band descriptions,
no-data value, data type, the TIFF description, and every pixel value of every band (null for
no-data). "many-bands" is a 40-band file (mean, sd, P(exceed) and 37 extra bands). The SHA-256 of each file ties the record to the bytes it was read from.
Used by tests/io/geotiff.test.ts."""
import hashlib
import json
import os
import re
import subprocess
import tempfile

from osgeo import gdal

gdal.UseExceptions()
HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(os.path.dirname(HERE))


def main():
    cases = []
    with tempfile.TemporaryDirectory() as tmp:
        subprocess.run(["npx", "tsx", os.path.join(HERE, "gdal-case.ts"), tmp], cwd=ROOT, check=True)
        for name in ["boundary-threshold", "extent", "many-bands"]:
            path = os.path.join(tmp, f"{name}.tif")
            with open(path, "rb") as f:
                sha = hashlib.sha256(f.read()).hexdigest()
            info = json.loads(subprocess.run(["gdalinfo", "-json", path], check=True, capture_output=True, text=True).stdout)
            wkt = info["coordinateSystem"]["wkt"]
            epsg = re.findall(r'ID\["EPSG",(\d+)\]', wkt)[-1]
            ds = gdal.Open(path)
            bands = []
            for b in range(1, ds.RasterCount + 1):
                band = ds.GetRasterBand(b)
                nodata = band.GetNoDataValue()
                arr = band.ReadAsArray()
                values = [None if v == nodata else float(v) for v in arr.ravel().tolist()]
                bands.append({
                    "description": band.GetDescription(),
                    "noData": nodata,
                    "type": gdal.GetDataTypeName(band.DataType),
                    "values": values,
                })
            cases.append({
                "name": name,
                "sha256": sha,
                "epsg": int(epsg),
                "geoTransform": info["geoTransform"],
                "size": info["size"],
                "areaOrPoint": info["metadata"][""].get("AREA_OR_POINT"),
                "description": info["metadata"][""].get("TIFFTAG_IMAGEDESCRIPTION"),
                "software": info["metadata"][""].get("TIFFTAG_SOFTWARE"),
                "bandCount": len(info["bands"]),
                "bands": bands,
            })
    out = {
        "source": f"GDAL {gdal.__version__} (Debian gdal-bin gdalinfo -json; osgeo.gdal ReadAsArray)",
        "script": "tests/reference/make_gdal.py",
        "tolerance": {"rel": 2e-7, "abs": 1e-6},
        "cases": cases,
    }
    with open(os.path.join(HERE, "gdal.json"), "w") as f:
        json.dump(out, f, indent=1)
        f.write("\n")


if __name__ == "__main__":
    main()
