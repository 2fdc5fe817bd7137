#!/usr/bin/python3
"""Writes test/crs/epsg-reference.json: for each carried EPSG code, PROJ's own
forward projection (via pyproj and its EPSG database) of two points inside the
code's area of use, from the code's base geographic CRS. The carried proj4
definitions are checked against these numbers in epsg.test.ts.

Run: /usr/bin/python3 test/crs/make-epsg-reference.py < codes.json
(codes.json is the JSON list printed by carriedEpsgCodes()).
"""
import json, sys
from pyproj import CRS, Transformer

codes = json.load(sys.stdin)
out = []
for code in codes:
    crs = CRS.from_epsg(code)
    entry = {"code": code, "name": crs.name, "geographic": crs.is_geographic, "points": []}
    if not crs.is_geographic:
        a = crs.area_of_use
        t = Transformer.from_crs(crs.geodetic_crs, crs, always_xy=True)
        for fx, fy in ((0.5, 0.5), (0.25, 0.75)):
            lon = a.west + (a.east - a.west) * fx
            lat = a.south + (a.north - a.south) * fy
            x, y = t.transform(lon, lat)
            entry["points"].append([lon, lat, x, y])
    out.append(entry)
json.dump(out, sys.stdout, indent=0)
