#!/usr/bin/env bash
# Regenerates every outside-reference fixture in tests/reference/*.json.
# Needs Debian's python3-scipy python3-sklearn python3-pyproj (and gdal-bin for raster checks).
# CI never runs this: it only reads the committed JSON.
set -euo pipefail
cd "$(dirname "$0")"
for f in make_*.py; do
  echo "== $f"
  /usr/bin/python3 "$f"
done
