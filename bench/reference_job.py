"""The whole job written plainly with NumPy / SciPy / scikit-image, for the
end-to-end comparison: the same LAS file, the same cell size.

  LAS 1.4 (or 1.0-1.3) point records read with a NumPy structured dtype
  (layout per ASPRS LAS Specification 1.4 R15), noise (classes 7, 18),
  withheld and overlap points left out; DSM = highest return per cell;
  ground = lowest class-2 point per cell; DTM = linear interpolation of the
  ground cells (scipy.interpolate.griddata, Delaunay based), nearest ground
  cell outside their hull; CHM = DSM - DTM, at least 0; treetops = cells
  equal to scipy.ndimage.maximum_filter over a disc window (diameter: the
  combined crown-width curve of Popescu & Wynne 2004 at the 95th percentile
  canopy height), at least 2 m; crowns = skimage.segmentation.watershed of
  the negated CHM from those tops, masked to cells of at least 2 m;
  per-tree height and crown area.

  /usr/bin/python3 bench/reference_job.py FILE.las CELL_SIZE_M
Prints one JSON line with the time and the tree count.
"""
import json
import sys
import time

import numpy as np
from scipy import ndimage
from scipy.interpolate import griddata
from skimage.segmentation import watershed


def read_las(path):
    raw = np.fromfile(path, dtype=np.uint8)
    hdr = raw[:375].tobytes()
    minor = hdr[25]
    offset = int(np.frombuffer(hdr, '<u4', 1, 96)[0])
    fmt = hdr[104] & 0x3F
    rec_len = int(np.frombuffer(hdr, '<u2', 1, 105)[0])
    count = int(np.frombuffer(hdr, '<u4', 1, 107)[0])
    if minor >= 4 and count == 0:
        count = int(np.frombuffer(hdr, '<u8', 1, 247)[0])
    scale = np.frombuffer(hdr, '<f8', 3, 131)
    off = np.frombuffer(hdr, '<f8', 3, 155)
    rec = raw[offset:offset + count * rec_len].reshape(count, rec_len)
    xyz = rec[:, 0:12].copy().view('<i4').reshape(count, 3)
    x = xyz[:, 0] * scale[0] + off[0]
    y = xyz[:, 1] * scale[1] + off[1]
    z = xyz[:, 2] * scale[2] + off[2]
    if fmt >= 6:
        cls = rec[:, 16]
        flags = rec[:, 15]
        drop = (flags & 0x0C) != 0  # withheld, overlap
    else:
        cls = rec[:, 15] & 0x1F
        drop = (rec[:, 15] & 0x80) != 0  # withheld
    keep = ~drop & (cls != 7) & (cls != 18)
    return x[keep], y[keep], z[keep], cls[keep]


def main():
    path, cell = sys.argv[1], float(sys.argv[2])
    t0 = time.perf_counter()
    x, y, z, cls = read_las(path)
    t_read = time.perf_counter()
    ox = np.floor(x.min() / cell) * cell
    oy = np.ceil(y.max() / cell) * cell
    w = int(np.floor((x.max() - ox) / cell)) + 1
    h = int(np.floor((oy - y.min()) / cell)) + 1
    col = np.minimum(((x - ox) / cell).astype(np.int64), w - 1)
    row = np.minimum(((oy - y) / cell).astype(np.int64), h - 1)
    idx = row * w + col

    dsm = np.full(w * h, -np.inf)
    np.maximum.at(dsm, idx, z)
    g = cls == 2
    gmin = np.full(w * h, np.inf)
    np.minimum.at(gmin, idx[g], z[g])
    t_grid = time.perf_counter()

    gc = np.flatnonzero(np.isfinite(gmin))
    pts = np.column_stack(((gc % w + 0.5) * cell + ox, oy - (gc // w + 0.5) * cell))
    cc, rr = np.meshgrid((np.arange(w) + 0.5) * cell + ox, oy - (np.arange(h) + 0.5) * cell)
    dtm = griddata(pts, gmin[gc], (cc, rr), method='linear')
    holes = np.isnan(dtm)
    if holes.any():
        dtm[holes] = griddata(pts, gmin[gc], (cc[holes], rr[holes]), method='nearest')
    t_dtm = time.perf_counter()

    dsm = dsm.reshape(h, w)
    chm = np.where(np.isfinite(dsm), dsm - dtm, 0.0)
    chm = np.maximum(chm, 0.0).astype(np.float32)
    canopy = chm >= 2.0
    hp = float(np.percentile(chm[canopy], 95)) if canopy.any() else 2.0
    window_m = 2.51503 + 0.00901 * hp * hp  # Popescu & Wynne 2004, combined
    radius = max(np.sqrt(2.0), window_m / 2 / cell)
    r = int(np.floor(radius))
    yy, xx = np.mgrid[-r:r + 1, -r:r + 1]
    footprint = (xx * xx + yy * yy) <= radius * radius
    maxf = ndimage.maximum_filter(chm, footprint=footprint, mode='constant', cval=0.0)
    tops = (chm == maxf) & canopy
    markers, n = ndimage.label(tops, structure=np.ones((3, 3)))
    t_tops = time.perf_counter()
    labels = watershed(-chm, markers, connectivity=1, mask=canopy)
    t_ws = time.perf_counter()
    heights = ndimage.maximum(chm, labels, np.arange(1, n + 1)) if n else np.zeros(0)
    areas = np.bincount(labels.ravel(), minlength=n + 1)[1:] * cell * cell
    t_end = time.perf_counter()
    print(json.dumps({
        'seconds': t_end - t0, 'points': int(x.size), 'trees': int(n),
        'meanHeightM': float(np.mean(heights)) if n else 0.0, 'meanCrownAreaM2': float(np.mean(areas)) if n else 0.0,
        'stages': {'read': t_read - t0, 'grid': t_grid - t_read, 'dtm': t_dtm - t_grid, 'treetops': t_tops - t_dtm,
                   'watershed': t_ws - t_tops, 'metrics': t_end - t_ws},
        'grid': [w, h],
    }))


if __name__ == '__main__':
    main()
