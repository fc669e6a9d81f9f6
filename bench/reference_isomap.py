#!/usr/bin/python3
"""Times scikit-learn's Isomap (Debian python3-sklearn), the reference peer for unfurl embed.

Reads the points of an HDF5 file written by `unfurl demo --data-only`, runs Isomap with the
given k and dimensions, and writes the embedding to an HDF5 file for comparison. Run it under
/usr/bin/time -v to read its wall time and peak memory.

usage: reference_isomap.py POINTS.h5 OUT.h5 [--k 10] [--dims 2] [--dataset /points]
"""
import argparse
import time

import h5py
import numpy as np
from sklearn.manifold import Isomap


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("points")
    ap.add_argument("out")
    ap.add_argument("--k", type=int, default=10)
    ap.add_argument("--dims", type=int, default=2)
    ap.add_argument("--dataset", default="/points")
    a = ap.parse_args()
    with h5py.File(a.points, "r") as f:
        x = np.asarray(f[a.dataset], dtype=np.float64)
    t0 = time.perf_counter()
    y = Isomap(n_neighbors=a.k, n_components=a.dims).fit_transform(x)
    seconds = time.perf_counter() - t0
    with h5py.File(a.out, "w") as f:
        f["coords"] = y
    print(f"reference Isomap: {x.shape[0]} x {x.shape[1]}, k={a.k}, {seconds:.2f} s in fit")


if __name__ == "__main__":
    main()
