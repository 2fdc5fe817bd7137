"""Geodesic areas of the features of a GeoJSON FeatureCollection on the WGS 84
ellipsoid, with pyproj's Geod (Karney's geodesic algorithms). Prints JSON:
one entry per feature with its total signed area (m2) and the signed area of
every ring, so a caller can check both the area and the ring orientation
(pyproj gives counter-clockwise rings a positive area).

Usage: /usr/bin/python3 test/reference/geod_area.py FILE.geojson
"""
import json
import sys

from pyproj import Geod


def ring_area(geod, ring):
    lons = [p[0] for p in ring]
    lats = [p[1] for p in ring]
    area, _perimeter = geod.polygon_area_perimeter(lons, lats)
    return area


def main():
    with open(sys.argv[1], encoding="utf-8") as f:
        fc = json.load(f)
    geod = Geod(ellps="WGS84")
    out = []
    for feat in fc["features"]:
        geom = feat["geometry"]
        if geom["type"] == "Polygon":
            polys = [geom["coordinates"]]
        elif geom["type"] == "MultiPolygon":
            polys = geom["coordinates"]
        else:
            polys = []
        rings = []
        total = 0.0
        for poly in polys:
            for k, ring in enumerate(poly):
                a = ring_area(geod, ring)
                rings.append({"hole": k > 0, "area": a})
                total += a
        out.append({"id": feat.get("id"), "area": total, "rings": rings})
    json.dump(out, sys.stdout)


if __name__ == "__main__":
    main()
