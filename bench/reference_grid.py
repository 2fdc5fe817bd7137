"""Reference timings for the grid stages, plain SciPy / scikit-image.

Reads a CHM (float32, row-major), treetop markers (int32, 0 = none, k = top k)
and a crown mask (uint8) written by bench/run.ts, then times
  - skimage.segmentation.watershed on the negated CHM, same markers and mask,
    4-connectivity (connectivity=1), and writes its labels for comparison;
  - scipy.ndimage.maximum_filter with a disc footprint of the given radius
    (cells), the largest treetop window the library used.
Prints one JSON line. Run with /usr/bin/python3 (Debian python3-skimage).
  /usr/bin/python3 bench/reference_grid.py DIR WIDTH HEIGHT RADIUS REPEATS
"""
import json
import os
import sys
import time

import numpy as np
from scipy import ndimage
from skimage.segmentation import watershed


def main():
    d, w, h, radius, repeats = sys.argv[1], int(sys.argv[2]), int(sys.argv[3]), float(sys.argv[4]), int(sys.argv[5])
    chm = np.fromfile(os.path.join(d, 'chm.f32'), dtype=np.float32).reshape(h, w)
    markers = np.fromfile(os.path.join(d, 'markers.i32'), dtype=np.int32).reshape(h, w)
    mask = np.fromfile(os.path.join(d, 'mask.u8'), dtype=np.uint8).reshape(h, w).astype(bool)
    image = -np.nan_to_num(chm, nan=0.0)

    ws_times, labels = [], None
    for _ in range(repeats):
        t0 = time.perf_counter()
        labels = watershed(image, markers, connectivity=1, mask=mask)
        ws_times.append(time.perf_counter() - t0)
    labels.astype(np.int32).tofile(os.path.join(d, 'labels-ref.i32'))

    r = int(np.floor(radius))
    yy, xx = np.mgrid[-r:r + 1, -r:r + 1]
    footprint = (xx * xx + yy * yy) <= radius * radius
    mf_times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        ndimage.maximum_filter(chm, footprint=footprint, mode='constant', cval=-np.inf)
        mf_times.append(time.perf_counter() - t0)

    print(json.dumps({
        'watershedSeconds': float(np.median(ws_times)),
        'maximumFilterSeconds': float(np.median(mf_times)),
        'footprintCells': int(footprint.sum()),
        'numpy': np.__version__,
        'repeats': repeats,
    }))


if __name__ == '__main__':
    main()
