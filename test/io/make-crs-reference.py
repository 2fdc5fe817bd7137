#!/usr/bin/python3
"""Writes test/io/autzen-crs-reference.json: PROJ's (pyproj) inverse projection
of a few autzen_trim.las positions (international feet) to longitude/latitude
on the file's own geographic CRS, using the WKT record the file carries.
crs.test.ts checks the proj4 definition built from the file's GeoKeys against it.

Run: /usr/bin/python3 test/io/make-crs-reference.py > test/io/autzen-crs-reference.json
"""
import json, os, struct
from pyproj import CRS, Transformer

here = os.path.dirname(os.path.abspath(__file__))
path = os.path.join(here, '..', '..', '..', 'shared', 'fixtures', 'laz-pairs', 'autzen_trim.las')
f = open(path, 'rb').read()
hs = struct.unpack_from('<H', f, 94)[0]
nvlr = struct.unpack_from('<I', f, 100)[0]
minx, miny = struct.unpack_from('<d', f, 187)[0], struct.unpack_from('<d', f, 203)[0]
maxx, maxy = struct.unpack_from('<d', f, 179)[0], struct.unpack_from('<d', f, 195)[0]
p, wkt = hs, None
for _ in range(nvlr):
    uid = f[p + 2:p + 18].split(b'\0')[0]
    rid, ln = struct.unpack_from('<HH', f, p + 18)
    if rid == 2112 and uid == b'LASF_Projection':
        wkt = f[p + 54:p + 54 + ln].split(b'\0')[0].decode('ascii')
    p += 54 + ln
crs = CRS.from_wkt(wkt)
t = Transformer.from_crs(crs, crs.geodetic_crs, always_xy=True)
pts = []
for fx, fy in ((0, 0), (1, 1), (0.5, 0.5), (0.2, 0.8)):
    x, y = minx + (maxx - minx) * fx, miny + (maxy - miny) * fy
    lon, lat = t.transform(x, y)
    pts.append([x, y, lon, lat])
json.dump({"source": "pyproj " + __import__('pyproj').__version__ + " from the autzen_trim.las WKT record",
           "points": pts}, open(1, 'w'), indent=1)
