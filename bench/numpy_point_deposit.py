#!/usr/bin/python3
"""numpy baseline for bench_projection: point deposit with np.bincount.

Usage: numpy_point_deposit.py FILE N NX NY U_MIN V_MIN PIXEL REPS

FILE holds N float32 u, then N float32 v (kpc), then N float64 weights, raw
little-endian. Pixel (ix, iy) covers [U_MIN + ix PIXEL, U_MIN + (ix+1) PIXEL)
and likewise in v; the map is row-major (iy * NX + ix). Prints the best wall
time of REPS repetitions (seconds), the map total and the number of cells
inside the field. The timed part is the whole deposit from plane
coordinates: pixel indices, field mask, bincount.
"""
import sys
import time

import numpy as np


def main():
    path = sys.argv[1]
    n, nx, ny = int(sys.argv[2]), int(sys.argv[3]), int(sys.argv[4])
    u_min, v_min, pixel = float(sys.argv[5]), float(sys.argv[6]), float(sys.argv[7])
    reps = int(sys.argv[8])
    raw = np.fromfile(path, dtype=np.uint8)
    if raw.size != 16 * n:
        sys.exit("numpy_point_deposit: %s holds %d bytes, expected %d" % (path, raw.size, 16 * n))
    u = raw[: 4 * n].view(np.float32)
    v = raw[4 * n : 8 * n].view(np.float32)
    w = raw[8 * n :].view(np.float64)
    best = float("inf")
    image = None
    inside = 0
    for _ in range(reps):
        t0 = time.perf_counter()
        ix = np.floor((u - u_min) / pixel).astype(np.int64)
        iy = np.floor((v - v_min) / pixel).astype(np.int64)
        m = (ix >= 0) & (ix < nx) & (iy >= 0) & (iy < ny)
        image = np.bincount((iy * nx + ix)[m], weights=w[m], minlength=nx * ny)
        best = min(best, time.perf_counter() - t0)
        inside = int(m.sum())
    print("%.9f %.17g %d" % (best, image.sum(), inside))


if __name__ == "__main__":
    main()
