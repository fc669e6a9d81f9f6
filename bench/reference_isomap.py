#!/usr/bin/python3
"""Times scikit-learn's Isomap (Debian python3-sklearn), the reference peer for unfurl embed.

Reads the points of an HDF5 file written by `unfurl demo --data-only`, runs Isomap with the
given k and dimensions, and writes the embedding to an HDF5 file for comparison. Run it under
/usr/bin/time -v to read its wall time and peak memory.

With --figures FILE it also writes, after the timed fit, a JSON object with the fit's seconds
(fit_s) and the map's residual variance (residual_variance): 1 - R^2 of Pearson's correlation
between the geodesic distances Isomap computed (its dist_matrix_) and the map's Euclidean
distances over every pair (Tenenbaum, de Silva and Langford, Science 290, 2000, note 42), in
blocks of rows so the extra memory stays small beside the N x N geodesics.

usage: reference_isomap.py POINTS.h5 OUT.h5 [--k 10] [--dims 2] [--dataset /points]
                           [--figures FILE.json]
"""
import argparse
import json
import time

import h5py
import numpy as np
from sklearn.manifold import Isomap


def residual_variance(geodesic, y, block=256):
    """1 - R^2 over the pairs i < j of the N x N geodesic matrix and the map rows y."""
    n = y.shape[0]
    s = np.zeros(6)  # count, sum g, sum m, sum g^2, sum m^2, sum g m
    for start in range(0, n, block):
        rows = slice(start, min(n, start + block))
        d = np.sqrt(((y[rows, None, :] - y[None, :, :]) ** 2).sum(axis=2))
        g = geodesic[rows]
        upper = np.arange(n)[None, :] > np.arange(start, rows.stop)[:, None]
        g, d = g[upper], d[upper]
        s += [g.size, g.sum(), d.sum(), (g * g).sum(), (d * d).sum(), (g * d).sum()]
    count, sg, sm, sgg, smm, sgm = s
    cov = sgm / count - sg / count * sm / count
    r = cov / np.sqrt((sgg / count - (sg / count) ** 2) * (smm / count - (sm / count) ** 2))
    return 1 - r * r


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("points")
    ap.add_argument("out")
    ap.add_argument("--k", type=int, default=10)
    ap.add_argument("--dims", type=int, default=2)
    ap.add_argument("--dataset", default="/points")
    ap.add_argument("--figures")
    a = ap.parse_args()
    with h5py.File(a.points, "r") as f:
        x = np.asarray(f[a.dataset], dtype=np.float64)
    t0 = time.perf_counter()
    model = Isomap(n_neighbors=a.k, n_components=a.dims)
    y = model.fit_transform(x)
    seconds = time.perf_counter() - t0
    with h5py.File(a.out, "w") as f:
        f["coords"] = y
    print(f"reference Isomap: {x.shape[0]} x {x.shape[1]}, k={a.k}, {seconds:.2f} s in fit")
    if a.figures:
        figures = {"fit_s": round(seconds, 2),
                   "residual_variance": residual_variance(model.dist_matrix_, y)}
        with open(a.figures, "w") as f:
            json.dump(figures, f)


if __name__ == "__main__":
    main()
