#!/usr/bin/env python3
"""Reference profiles for tests/measure.rs, by scikit-image.

A deterministic 48 x 64 float image (smooth waves plus a bright disc) and
skimage.measure.profile_line(image, src, dst, linewidth, order=1,
mode='reflect', reduce_func=np.mean) along several lines that stay inside the
image, stored with the image in profile_line.json.
Run: python3 tests/reference/profile_line.py
"""
import json
import os

import numpy as np
import skimage
from skimage.measure import profile_line

rows, cols = 48, 64
r, c = np.mgrid[0:rows, 0:cols].astype(float)
image = 0.5 + 0.3 * np.sin(c / 5.0) * np.cos(r / 7.0) + 0.2 * ((r - 20) ** 2 + (c - 30) ** 2 < 80)

lines = [
    ((5.0, 3.0), (40.0, 60.0), 1),
    ((10.0, 10.0), (10.0, 50.0), 3),
    ((30.5, 5.2), (12.3, 55.7), 5),
    ((40.0, 32.0), (8.0, 32.0), 4),
]
out = {"source": "tests/reference/profile_line.py, scikit-image " + skimage.__version__,
       "rows": rows, "cols": cols, "image": image.ravel().tolist(), "profiles": []}
for src, dst, width in lines:
    p = profile_line(image, src, dst, linewidth=width, order=1, mode="reflect", reduce_func=np.mean)
    out["profiles"].append({"src": src, "dst": dst, "linewidth": width, "values": p.tolist()})
with open(os.path.join(os.path.dirname(os.path.abspath(__file__)), "profile_line.json"), "w") as f:
    json.dump(out, f)
print("wrote profile_line.json:", [len(p["values"]) for p in out["profiles"]])
