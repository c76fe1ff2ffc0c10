#!/usr/bin/python3
"""A plain NumPy/SciPy crest tracker, as a scientist would write one: the
yardstick that `make bench` times crestspeed's whole `track` against.

It reads the whole record with netCDF4, removes the per-cell temporal
mean, marks crest cells where the elevation gradient along x changes sign
from + to - above a threshold, labels connected crest segments per frame,
links each frame's segment tips to the previous frame's by the Hungarian
method with a gate of two cells plus 0.5 m, and writes one row per linked
crest with a finite-difference speed. Usage: numpy_tracker.py IN.nc OUT.csv
"""
import sys
import numpy as np
import netCDF4
from scipy import ndimage
from scipy.optimize import linear_sum_assignment

src, out = sys.argv[1], sys.argv[2]
ds = netCDF4.Dataset(src)
eta = ds.variables["eta"][:].filled(np.nan).astype(np.float32)
t = ds.variables["time"][:].astype(float)
x = ds.variables["x"][:].astype(float)
y = ds.variables["y"][:].astype(float)
ds.close()
dx = x[1] - x[0]
eta -= np.nanmean(eta, axis=0)
thr = 0.1 * 4 * np.nanstd(eta)
gate = 2 * dx + 0.5

rows = []
prev = None  # (xs, ys, ids)
next_id = 0
for k in range(eta.shape[0]):
    e = eta[k]
    gx = np.gradient(e, axis=1)
    crest = (gx[:, :-1] > 0) & (gx[:, 1:] <= 0) & (e[:, :-1] > thr)
    lab, n = ndimage.label(crest, structure=np.ones((3, 3)))
    if n == 0:
        prev = None
        continue
    idx = np.arange(1, n + 1)
    tips = ndimage.maximum_position(e[:, :-1], lab, idx)
    ys_ = np.array([y[p[0]] for p in tips])
    xs_ = np.array([x[p[1]] for p in tips])
    ids = -np.ones(n, dtype=int)
    if prev is not None and len(prev[0]):
        d = np.hypot(xs_[:, None] - prev[0][None, :], ys_[:, None] - prev[1][None, :])
        cost = np.where(d < gate, d, 1e6)
        r, c = linear_sum_assignment(cost)
        for i, j in zip(r, c):
            if cost[i, j] < 1e6:
                ids[i] = prev[2][j]
                v = (xs_[i] - prev[0][j]) / (t[k] - t[k - 1])
                rows.append((ids[i], t[k], xs_[i], ys_[i], v))
    for i in np.where(ids < 0)[0]:
        ids[i] = next_id
        next_id += 1
    prev = (xs_, ys_, ids)

np.savetxt(out, np.array(rows, dtype=float).reshape(-1, 5), delimiter=",",
           header="track_id,time_s,x_m,y_m,speed_mps", comments="", fmt="%.6g")
print(f"{len(rows)} rows, {next_id} tracks")
