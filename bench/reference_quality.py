#!/usr/bin/python3
"""Trustworthiness and continuity of a map by scikit-learn (Debian python3-sklearn), for the
reference's maps in bench/growth.sh: T(k) = sklearn.manifold.trustworthiness(X, Y, k) (Venna
and Kaski 2001), and C(k) the same with the spaces swapped (continuity is trustworthiness
with input and map exchanged; Venna and Kaski, Neural Networks 2006). It holds N x N arrays:
a small-N tool, run as a process of its own so the reference's timed run stays apart.

usage: reference_quality.py POINTS.h5 MAP.h5 --out FILE.json [--k 12] [--dataset /points]
Writes {"trustworthiness_12": T, "continuity_12": C} (the key carries k).
"""
import argparse
import json

import h5py
import numpy as np
from sklearn.manifold import trustworthiness


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("points")
    ap.add_argument("map")
    ap.add_argument("--out", required=True)
    ap.add_argument("--k", type=int, default=12)
    ap.add_argument("--dataset", default="/points")
    a = ap.parse_args()
    with h5py.File(a.points, "r") as f:
        x = np.asarray(f[a.dataset], dtype=np.float64)
    with h5py.File(a.map, "r") as f:
        y = np.asarray(f["coords"], dtype=np.float64)
    out = {f"trustworthiness_{a.k}": trustworthiness(x, y, n_neighbors=a.k),
           f"continuity_{a.k}": trustworthiness(y, x, n_neighbors=a.k)}
    with open(a.out, "w") as f:
        json.dump(out, f)


if __name__ == "__main__":
    main()
