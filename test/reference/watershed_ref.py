"""Reference labels and local maxima from scikit-image and SciPy.

Usage: /usr/bin/python3 watershed_ref.py IN.json OUT.json
IN.json: {"width", "height", "chm": [row-major floats], "markers": [row-major ints],
          "mask": [row-major 0/1], "radius": disc radius in cells}
OUT.json: {"labels": [...], "maxfilter": [...]} where labels come from
skimage.segmentation.watershed(-chm, markers, mask=mask, connectivity=1) and
maxfilter from scipy.ndimage.maximum_filter with a disc footprint
(dx^2 + dy^2 <= radius^2), cells outside the grid counting as -inf.
"""
import json
import sys

import numpy as np
from scipy import ndimage
from skimage.segmentation import watershed


def main():
    with open(sys.argv[1]) as f:
        job = json.load(f)
    w, h = job["width"], job["height"]
    chm = np.asarray(job["chm"], dtype=np.float64).reshape(h, w)
    markers = np.asarray(job["markers"], dtype=np.int32).reshape(h, w)
    mask = np.asarray(job["mask"], dtype=bool).reshape(h, w)
    labels = watershed(-chm, markers, mask=mask, connectivity=1)
    r = float(job["radius"])
    R = int(np.floor(r))
    yy, xx = np.mgrid[-R:R + 1, -R:R + 1]
    footprint = (xx * xx + yy * yy) <= r * r
    filled = np.where(np.isnan(chm), -np.inf, chm)
    mx = ndimage.maximum_filter(filled, footprint=footprint, mode="constant", cval=-np.inf)
    with open(sys.argv[2], "w") as f:
        json.dump({"labels": labels.ravel().tolist(), "maxfilter": mx.ravel().tolist()}, f)


if __name__ == "__main__":
    main()
