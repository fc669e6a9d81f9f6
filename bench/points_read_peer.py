#!/usr/bin/python3
"""Peer timing for point input: the same N x 10 float32 table as CSV, NPY and HDF5 (gzip,
chunked), read by numpy/h5py (Debian's python3-numpy and python3-h5py) and by unfurl's
read_points through tests' points_probe (output to /dev/null). Best of three wall times each;
the ratio is the figure to quote, from one run (absolute times depend on the machine's load).

Usage: points_read_peer.py PROBE [ROWS]    (PROBE: build/tests/points_probe)
"""
import os
import subprocess
import sys
import tempfile
import time

import h5py
import numpy as np


def best_of(fn, n=3):
    times = []
    for _ in range(n):
        t = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t)
    return min(times)


def main():
    probe = sys.argv[1]
    rows = int(sys.argv[2]) if len(sys.argv) > 2 else 1_000_000
    a = np.random.default_rng(3).normal(size=(rows, 10)).astype(np.float32)
    with tempfile.TemporaryDirectory() as tmp:
        csv, npy, h5 = (os.path.join(tmp, n) for n in ("p.csv", "p.npy", "p.h5"))
        np.savetxt(csv, a, delimiter=",", fmt="%.9g")
        np.save(npy, a)
        with h5py.File(h5, "w") as f:
            f.create_dataset("x", data=a, chunks=(4096, 10), compression="gzip", compression_opts=4)

        def ours(path):
            return lambda: subprocess.run([probe, path, os.devnull], check=True)

        peers = [("CSV", lambda: np.loadtxt(csv, delimiter=",", dtype=np.float32), ours(csv)),
                 ("NPY", lambda: np.load(npy), ours(npy)),
                 ("HDF5 gzip", lambda: h5py.File(h5, "r")["x"][()], ours(h5))]
        print(f"{rows} x 10 float32, best of 3 wall times")
        for name, peer, mine in peers:
            tp, tm = best_of(peer), best_of(mine)
            print(f"{name:10s} numpy/h5py {tp:8.3f} s   unfurl {tm:8.3f} s   ratio peer/unfurl {tp / tm:6.2f}")


if __name__ == "__main__":
    main()
