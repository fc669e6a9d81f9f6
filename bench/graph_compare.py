#!/usr/bin/python3
"""Times the neighbour graph stage (bench_graph) and scikit-learn's NearestNeighbors on the
same points in one run, and prints the ratios. Writes its data files to a work folder.

usage: /usr/bin/python3 bench/graph_compare.py BUILD_BENCH_DIR [WORK_DIR] [--skip-fashion-reference]

--skip-fashion-reference: time unfurl on Fashion-MNIST but not scikit-learn's brute-force
search, which ran for more than 36 minutes here (see bench/RESULTS.md).
"""
import gzip
import os
import re
import resource
import struct
import subprocess
import sys
import time

import numpy as np
from sklearn.neighbors import NearestNeighbors, kneighbors_graph

FASHION = "/usr/share/datasets/fashion-mnist"


def write_points(x, path):
    x = np.ascontiguousarray(x, dtype="<f4")
    with open(path, "wb") as f:
        f.write(struct.pack("<QQ", *x.shape))
        f.write(x.tobytes())


def idx_images(name):
    with gzip.open(os.path.join(FASHION, name), "rb") as f:
        _, n, rows, cols = struct.unpack(">IIII", f.read(16))
        return np.frombuffer(f.read(), np.uint8).reshape(n, rows * cols).astype(np.float32)


def run_bench(program, name, env):
    """One benchmark under /usr/bin/time -v: (wall seconds per iteration, peak RSS MB,
    CPU seconds of the whole process: user + system, all threads, all iterations)."""
    cmd = ["/usr/bin/time", "-v", program, f"--benchmark_filter={name}"]
    print("$", " ".join(cmd), flush=True)
    p = subprocess.run(cmd, env=env, capture_output=True, text=True, check=True)
    print(p.stdout.strip())
    line = next(l for l in p.stdout.splitlines() if l.startswith(name))
    value, unit = re.search(r"real_time\s+([\d.]+) (\w+)", line).groups()
    seconds = float(value) * {"s": 1.0, "ms": 1e-3}[unit]
    rss = int(re.search(r"Maximum resident set size \(kbytes\): (\d+)", p.stderr).group(1))
    cpu = sum(float(re.search(rf"{k} time \(seconds\): ([\d.]+)", p.stderr).group(1))
              for k in ("User", "System"))
    print(f"  peak {rss / 1024:.0f} MB, CPU {cpu:.1f} s (user + system, all iterations)")
    return seconds, rss / 1024, cpu


def cpu_now():
    r = resource.getrusage(resource.RUSAGE_SELF)
    return r.ru_utime + r.ru_stime


def main():
    args = [a for a in sys.argv[1:] if not a.startswith("--")]
    skip_fashion_reference = "--skip-fashion-reference" in sys.argv
    build, work = args[0], (args[1] if len(args) > 1 else "/tmp/unfurl-bench-graph")
    os.makedirs(work, exist_ok=True)
    rng = np.random.default_rng(1)
    # Swiss roll as DESIGN.md section 6 draws it.
    u, v = rng.random(1_000_000), rng.random(1_000_000)
    t = 1.5 * np.pi * (1 + 2 * u)
    swiss = np.stack([t * np.cos(t), 21 * v, t * np.sin(t)], axis=1).astype(np.float32)
    fashion = np.concatenate([idx_images("train-images-idx3-ubyte.gz"),
                              idx_images("t10k-images-idx3-ubyte.gz")])
    env = dict(os.environ)
    env["UNFURL_BENCH_SWISS"] = os.path.join(work, "swiss-1000000x3.f32")
    env["UNFURL_BENCH_FASHION"] = os.path.join(work, "fashion-70000x784.f32")
    write_points(swiss, env["UNFURL_BENCH_SWISS"])
    write_points(fashion, env["UNFURL_BENCH_FASHION"])
    program = os.path.join(build, "bench", "bench_graph")

    ours_swiss, rss_swiss, _ = run_bench(program, "BM_GraphSwissRoll1M", env)
    start, cpu0 = time.perf_counter(), cpu_now()
    g = kneighbors_graph(swiss, 10, mode="distance", n_jobs=2)
    g = g.maximum(g.T)
    ref_swiss = time.perf_counter() - start
    print(f"scikit-learn kneighbors_graph (kd_tree, n_jobs=2) + maximum(A, A.T), 1M x 3: "
          f"{ref_swiss:.2f} s wall, CPU {cpu_now() - cpu0:.1f} s")

    ours_fashion, rss_fashion, _ = run_bench(program, "BM_GraphFashion70k", env)
    print(f"Swiss roll 1M, k=10: unfurl {ours_swiss:.2f} s (peak {rss_swiss:.0f} MB), "
          f"scikit-learn {ref_swiss:.2f} s, ratio {ref_swiss / ours_swiss:.2f}x")
    if skip_fashion_reference:
        print(f"Fashion-MNIST 70000x784, k=10, scan: unfurl {ours_fashion:.2f} s "
              f"(peak {rss_fashion:.0f} MB); scikit-learn skipped")
        return
    start, cpu0 = time.perf_counter(), cpu_now()
    NearestNeighbors(n_neighbors=10, algorithm="brute", n_jobs=2).fit(fashion).kneighbors()
    ref_fashion = time.perf_counter() - start
    print(f"scikit-learn NearestNeighbors(algorithm='brute', n_jobs=2).kneighbors(), "
          f"70000 x 784: {ref_fashion:.2f} s wall, CPU {cpu_now() - cpu0:.1f} s")

    print(f"Fashion-MNIST 70000x784, k=10, scan: unfurl {ours_fashion:.2f} s "
          f"(peak {rss_fashion:.0f} MB), scikit-learn {ref_fashion:.2f} s, "
          f"ratio {ref_fashion / ours_fashion:.2f}x")


if __name__ == "__main__":
    main()
