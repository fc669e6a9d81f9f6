"""Exact T(k) and C(k) of unfurl against scikit-learn's sklearn.manifold.trustworthiness on
the same arrays, timed in one run (the ratio is what to quote: the machine is shared).

Usage: /usr/bin/python3 bench/quality_vs_sklearn.py PROBE_DIR [N] [K]
PROBE_DIR holds quality_probe (a test build: build/tests). Data: scikit-learn's Swiss roll,
mapped to its unrolled coordinates (arc length, height) plus Gaussian noise of 0.5.
scikit-learn holds several N x N arrays (about 13 GB at N = 20,000): check free memory first.
"""
import os
import subprocess
import sys
import tempfile
import time

import numpy as np


def write_points(path, a):
    a = np.ascontiguousarray(a, dtype="<f4")
    with open(path, "wb") as f:
        f.write(np.array(a.shape, dtype="<u8").tobytes())
        f.write(a.tobytes())


def read_points(path):
    with open(path, "rb") as f:
        rows, cols = np.frombuffer(f.read(16), dtype="<u8")
        return np.frombuffer(f.read(), dtype="<f4").reshape(int(rows), int(cols))


def sklearn_child(x_path, y_path, k):
    from sklearn.manifold import trustworthiness
    x = read_points(x_path).astype(np.float64)
    y = read_points(y_path).astype(np.float64)
    t0 = time.perf_counter()
    t = trustworthiness(x, y, n_neighbors=k)
    c = trustworthiness(y, x, n_neighbors=k)
    print(f"{t!r} {c!r} {time.perf_counter() - t0!r}")


def timed_child(cmd):
    # Peak memory from GNU time (%M, KiB) of the child alone: getrusage(RUSAGE_CHILDREN) would
    # count the Python pages a forked child holds before it execs.
    t0 = time.perf_counter()
    r = subprocess.run(["/usr/bin/time", "-f", "%M", *cmd], capture_output=True, text=True,
                       check=True)
    wall = time.perf_counter() - t0
    return r.stdout, wall, int(r.stderr.strip().splitlines()[-1]) / 1024.0  # MiB


def main():
    if len(sys.argv) >= 2 and sys.argv[1] == "--sklearn-child":
        sklearn_child(sys.argv[2], sys.argv[3], int(sys.argv[4]))
        return 0
    probe = os.path.join(sys.argv[1], "quality_probe")
    n = int(sys.argv[2]) if len(sys.argv) > 2 else 20000
    k = int(sys.argv[3]) if len(sys.argv) > 3 else 12
    from sklearn.datasets import make_swiss_roll
    roll, t = make_swiss_roll(n_samples=n, random_state=1)
    arc = 0.5 * (t * np.sqrt(1 + t * t) + np.arcsinh(t))
    rng = np.random.default_rng(2)
    mapped = np.column_stack([arc, roll[:, 1]]) + 0.5 * rng.normal(size=(n, 2))
    with tempfile.TemporaryDirectory() as tmp:
        xp, yp = f"{tmp}/x.bin", f"{tmp}/y.bin"
        write_points(xp, roll)
        write_points(yp, mapped)
        out, unfurl_wall, unfurl_peak = timed_child([probe, "scores", xp, yp, str(k), "exact",
                                                     "2", "1"])
        import json
        s = json.loads(out)["scores"][0]
        out, sk_wall, sk_peak = timed_child([sys.executable, __file__, "--sklearn-child", xp, yp,
                                             str(k)])
        sk_t, sk_c, sk_inner = map(float, out.split())
    print(f"N = {n}, k = {k}")
    print(f"unfurl  exact T = {s['trustworthiness']:.15f} C = {s['continuity']:.15f} "
          f"wall {unfurl_wall:.2f} s, peak RSS {unfurl_peak:.0f} MiB")
    print(f"sklearn       T = {sk_t:.15f} C = {sk_c:.15f} wall {sk_wall:.2f} s "
          f"(T and C calls {sk_inner:.2f} s), peak RSS {sk_peak:.0f} MiB")
    print(f"|dT| = {abs(sk_t - s['trustworthiness']):.2e}, |dC| = "
          f"{abs(sk_c - s['continuity']):.2e}; wall ratio sklearn / unfurl = "
          f"{sk_wall / unfurl_wall:.1f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
