#!/usr/bin/python3
"""Checks the preprocessing stage (driven through graph_probe) against scikit-learn from
Debian's packages: StandardScaler, RobustScaler, normalize and PCA, singly and chained in
unfurl's order (scale, then normalise rows, then project). Exits non-zero on a mismatch."""
import os
import shutil
import struct
import subprocess
import sys
import tempfile

import numpy as np
from sklearn.decomposition import PCA
from sklearn.preprocessing import RobustScaler, StandardScaler, normalize

PROBE = os.path.join(os.environ["UNFURL_PROBE_DIR"], "graph_probe")
WORK = tempfile.mkdtemp(prefix="preprocess_check_")


def write_points(x, path):
    x = np.ascontiguousarray(x, dtype="<f4")
    with open(path, "wb") as f:
        f.write(struct.pack("<QQ", *x.shape))
        f.write(x.tobytes())


def run(x, scale, metric, pca):
    src, out = os.path.join(WORK, "in.bin"), os.path.join(WORK, "out.bin")
    write_points(x, src)
    subprocess.run([PROBE, "preprocess", src, scale, metric, str(pca), out], check=True)
    with open(out, "rb") as f:
        n, d = struct.unpack("<QQ", f.read(16))
        return np.frombuffer(f.read(), "<f4").reshape(n, d).astype(np.float64)


def reference(x, scale, metric, pca):
    y = x.astype(np.float64)
    if scale == "standard":
        y = StandardScaler().fit_transform(y)  # population deviation, as unfurl
    elif scale == "robust":
        y = RobustScaler(quantile_range=(25.0, 75.0)).fit_transform(y)
    if metric == "cosine":
        y = normalize(y)  # rows to unit L2 length
    if pca:
        y = PCA(n_components=pca, svd_solver="full").fit_transform(y)
    return y


def main():
    rng = np.random.default_rng(7)
    # Correlated columns of unequal scale and offset, so every step changes the numbers.
    mix = rng.standard_normal((12, 12)) * np.linspace(0.2, 5, 12)
    x = (rng.standard_normal((1500, 12)) @ mix + np.arange(12) * 10).astype(np.float32)
    failures = 0
    for scale, metric, pca in [("standard", "euclidean", 0), ("robust", "euclidean", 0),
                               ("none", "cosine", 0), ("none", "euclidean", 4),
                               ("standard", "cosine", 5), ("robust", "euclidean", 3)]:
        got, ref = run(x, scale, metric, pca), reference(x, scale, metric, pca)
        if pca:  # principal axes are defined up to sign: align each column's sign
            signs = np.sign(np.sum(got * ref, axis=0))
            got = got * signs
        err = np.max(np.abs(got - ref)) / max(1.0, np.max(np.abs(ref)))
        ok = got.shape == ref.shape and err < 1e-5
        failures += not ok
        print(("ok   " if ok else "FAIL ") +
              f"scale={scale} metric={metric} pca={pca}: max relative deviation {err:.2e} "
              f"from scikit-learn (limit 1e-5)")
    print(f"preprocess_check: {failures} failures")
    return 1 if failures else 0


if __name__ == "__main__":
    try:
        code = main()
    finally:
        shutil.rmtree(WORK, ignore_errors=True)
    sys.exit(code)
