#!/usr/bin/env python3
"""A plain vectorised NumPy trace of the benchmark's first scene, for
comparison in `catoptric bench`: a 200 mm f/4 paraboloid (R = 1600 mm, vertex
at z = 800 facing -z), an on-axis beam of N rays on a hexagonal lattice, a
screen plane at the focus (z = 0). Steps: sample the disk, intersect the
conic, reflect, hit the screen plane, RMS spot radius. Best of K runs, wall
clock, one process. Prints JSON: {"engine", "rays", "seconds", "rms_um"}.

Usage: python3 pkg-config/bench-numpy.py [--rays N] [--runs K]
"""
import json
import sys
import time

import numpy as np


def hex_disk(n):
    """About n points of a hexagonal lattice inside the unit disk."""
    s = np.sqrt(np.pi / (n * np.sqrt(3) / 2))
    row = s * np.sqrt(3) / 2
    j = np.arange(-int(1 / row), int(1 / row) + 1)
    i = np.arange(-int(1 / s) - 2, int(1 / s) + 3)
    jj, ii = np.meshgrid(j, i, indexing="ij")
    y = jj * row
    x = ii * s + np.where(jj % 2 == 1, 0.5 * s, 0.0)
    keep = x * x + y * y <= 1.0
    return x[keep], y[keep]


def trace(px, py):
    radius, f = 1600.0, 800.0
    c = 1.0 / radius
    # Rays start at z = 300 travelling +z; mirror vertex at z = 800 facing -z.
    ox, oy = 100.0 * px, 100.0 * py
    n = ox.size
    oz = np.full(n, 300.0)
    dx, dy, dz = np.zeros(n), np.zeros(n), np.ones(n)
    # Mirror frame: local z = -global z, origin at the vertex.
    lz, ldz = -(oz - f), -dz
    ly, ldy, lx, ldx = oy, dy, ox, dx
    # Paraboloid (K = -1): c(x² + y²) - 2z = 0.
    a = c * (ldx * ldx + ldy * ldy)
    b = c * (lx * ldx + ly * ldy) - ldz
    cc = c * (lx * lx + ly * ly) - 2.0 * lz
    disc = b * b - a * cc
    q = -(b + np.copysign(np.sqrt(disc), b))
    t = np.where(a != 0, cc / q, -cc / (2 * b))
    hx, hy, hz = lx + t * ldx, ly + t * ldy, lz + t * ldz
    nx, ny, nz = -c * hx, -c * hy, np.ones(n)
    norm = np.sqrt(nx * nx + ny * ny + nz * nz)
    nx, ny, nz = nx / norm, ny / norm, nz / norm
    dn = ldx * nx + ldy * ny + ldz * nz
    rx, ry, rz = ldx - 2 * dn * nx, ldy - 2 * dn * ny, ldz - 2 * dn * nz
    # Back to world (z flips), then to the screen plane z = 0.
    wx, wy, wz = hx, hy, f - hz
    gx, gy, gz = rx, ry, -rz
    s = -wz / gz
    u, v = wx + s * gx, wy + s * gy
    cu, cv = u.mean(), v.mean()
    return np.sqrt(np.mean((u - cu) ** 2 + (v - cv) ** 2))


def main():
    opts = {"rays": 1_000_000, "runs": 3}
    argv = sys.argv[1:]
    for k, v in zip(argv[::2], argv[1::2]):
        if k not in ("--rays", "--runs") or not v.isdigit() or int(v) < 1:
            print(f"bench-numpy: bad option {k} {v}", file=sys.stderr)
            sys.exit(2)
        opts[k[2:]] = int(v)
    best, rms = float("inf"), None
    for _ in range(opts["runs"]):
        t0 = time.perf_counter()
        px, py = hex_disk(opts["rays"])
        rms = trace(px, py)
        best = min(best, time.perf_counter() - t0)
    print(json.dumps({"engine": f"numpy {np.__version__}", "rays": opts["rays"], "seconds": best, "rms_um": rms * 1e3}))


if __name__ == "__main__":
    main()
