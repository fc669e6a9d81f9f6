"""Checks the geodesic, landmark and spectral stages against SciPy and scikit-learn.

Drives the geodesic_probe program (tests/reference/geodesic_probe.cpp) on files written here:
- Dijkstra rows against scipy.sparse.csgraph.shortest_path (SciPy, Debian python3-scipy) on
  random graphs and on a kNN graph of the Swiss roll;
- exact mode against sklearn.manifold.Isomap (scikit-learn, Debian python3-sklearn) after
  Procrustes alignment (scipy.spatial.procrustes), and against the analytic ground truth of
  the Swiss roll (arc length along the spiral, height: DESIGN.md section 6);
- landmark mode (L = 200) against exact mode;
- identical bytes on 1 and 2 threads;
- the linear baseline against sklearn.decomposition.PCA.
Exits non-zero when any comparison fails.
"""
import os
import subprocess
import sys
import tempfile

import numpy as np
import scipy.sparse
from scipy.sparse.csgraph import connected_components, shortest_path
from scipy.spatial import procrustes
from sklearn.decomposition import PCA
from sklearn.manifold import Isomap
from sklearn.neighbors import kneighbors_graph

PROBE = os.path.join(os.environ.get("UNFURL_PROBE_DIR", "."), "geodesic_probe")
failures = []


def check(name, ok, detail):
    print(f"{'ok  ' if ok else 'FAIL'} {name}: {detail}")
    if not ok:
        failures.append(name)


def probe(*args, threads=2):
    env = dict(os.environ, OMP_NUM_THREADS=str(threads))
    r = subprocess.run([PROBE, *map(str, args)], capture_output=True, text=True, env=env)
    return r


def run_probe(*args, threads=2):
    r = probe(*args, threads=threads)
    if r.returncode != 0:
        print(r.stderr, file=sys.stderr)
        raise SystemExit(f"geodesic_probe {args[0]} failed with exit code {r.returncode}")
    return r.stdout


def write_edges(path, n, coo):
    with open(path, "wb") as f:
        np.array([n, coo.nnz], dtype="<i8").tofile(f)
        coo.row.astype("<u4").tofile(f)
        coo.col.astype("<u4").tofile(f)
        coo.data.astype("<f4").tofile(f)


def read_floats(path, shape):
    return np.fromfile(path, dtype="<f4").reshape(shape)


def random_connected(n, extra, rng):
    # A random spanning tree plus random extra edges, lengths in [0.1, 1.1).
    a = np.arange(1, n)
    b = np.array([rng.integers(0, i) for i in range(1, n)])
    a = np.concatenate([a, rng.integers(0, n, extra)])
    b = np.concatenate([b, rng.integers(0, n, extra)])
    keep = a != b
    a, b = a[keep], b[keep]
    # One entry per ordered pair: SciPy would add the lengths of repeated entries.
    _, first = np.unique(a * n + b, return_index=True)
    a, b = a[first], b[first]
    w = (0.1 + rng.random(a.size)).astype(np.float32)
    return scipy.sparse.coo_matrix((w, (a, b)), shape=(n, n))


def main():
    rng = np.random.default_rng(20261201)
    tmp = tempfile.mkdtemp(prefix="geodesic_check_")
    edges = os.path.join(tmp, "edges.bin")
    out = os.path.join(tmp, "out.bin")

    # 1. Dijkstra rows against SciPy's shortest_path on random graphs.
    for n, extra in [(50, 40), (300, 900), (700, 700)]:
        g = random_connected(n, extra, rng)
        write_edges(edges, n, g)
        run_probe("rows", edges, out)
        ours = read_floats(out, (n, n))
        ref = shortest_path(g.tocsr().astype(np.float64), method="D", directed=False)
        err = np.max(np.abs(ours - ref) / np.maximum(ref, 1e-30))
        # Our sums are float32 along the path, SciPy's float64: a few float32 ulps apart.
        check(f"dijkstra rows, random graph n={n}", err < 2e-6, f"max relative error {err:.2e}")

    # 2. A disconnected graph is refused with the count of unreachable nodes.
    g = scipy.sparse.coo_matrix(([1.0, 1.0, 1.0], ([0, 1, 3], [1, 2, 4])), shape=(5, 5))
    write_edges(edges, 5, g)
    r = probe("rows", edges, out)
    check("disconnected graph refused", r.returncode == 65 and "2 of 5 graph nodes" in r.stderr,
          f"exit {r.returncode}, stderr {r.stderr.strip()!r}")

    # 3. The Swiss roll, N = 2000, from our generator; kNN graph by scikit-learn.
    n = 2000
    run_probe("swiss", n, 7, out)
    both = np.fromfile(out, dtype="<f4")
    x = both[: 3 * n].reshape(n, 3).astype(np.float64)
    truth = both[3 * n:].reshape(n, 2).astype(np.float64)
    knn = kneighbors_graph(x, n_neighbors=10, mode="distance")
    check("swiss roll kNN graph connected", connected_components(knn, directed=False)[0] == 1,
          "one component (scipy connected_components)")
    write_edges(edges, n, knn.tocoo())
    run_probe("rows", edges, out)
    ours = read_floats(out, (n, n))
    # Isomap symmetrises the kNN graph the same way: shortest_path(..., directed=False).
    ref = shortest_path(knn, method="D", directed=False)
    err = np.max(np.abs(ours - ref) / np.maximum(ref, 1e-30))
    check("dijkstra rows, swiss roll kNN graph", err < 2e-6, f"max relative error {err:.2e}")

    # 4. Exact mode against scikit-learn's Isomap, Procrustes-aligned.
    summary = run_probe("exact", edges, out, 2)
    exact_bytes_2_threads = open(out, "rb").read()
    exact = read_floats(out, (n, 2)).astype(np.float64)
    print("     exact mode:", summary.strip()[:200])
    iso = Isomap(n_neighbors=10, n_components=2).fit_transform(x)
    _, _, disparity = procrustes(iso, exact)
    check("exact mode vs sklearn Isomap", disparity < 1e-3, f"Procrustes disparity {disparity:.2e}")
    # Analytic ground truth: (arc length, height) up to a rigid motion (DESIGN.md section 6).
    t1, t2, disparity = procrustes(truth, exact)
    corr = min(abs(np.corrcoef(t1[:, k], t2[:, k])[0, 1]) for k in range(2))
    check("exact mode vs ground truth", corr > 0.99,
          f"lowest per-axis correlation {corr:.4f}, disparity {disparity:.2e}")

    # 5. Landmark mode (L = 200, maxmin) against exact mode.
    summary = run_probe("landmark", edges, out, 2, 200, 1, "maxmin")
    landmark = read_floats(out, (n, 2)).astype(np.float64)
    print("     landmark mode:", summary.strip()[:200])
    _, _, disparity = procrustes(exact, landmark)
    check("landmark (L=200, maxmin) vs exact mode", disparity < 1e-2,
          f"Procrustes disparity {disparity:.2e}")
    run_probe("landmark", edges, out, 2, 200, 1, "random")
    _, _, disparity = procrustes(exact, read_floats(out, (n, 2)))
    check("landmark (L=200, random) vs exact mode", disparity < 1e-2,
          f"Procrustes disparity {disparity:.2e}")

    # 6. Same seed, 1 and 2 threads: identical bytes. Exact mode's 2-thread bytes are those
    # of section 4 (same probe arguments): a third exact run costs about 20 CPU-seconds
    # under the sanitizers and would check nothing more.
    for mode, args in [("exact", [2]), ("landmark", [2, 200, 1, "maxmin"])]:
        files = []
        for threads in (1, 2):
            if mode == "exact" and threads == 2:
                files.append(exact_bytes_2_threads)
                continue
            path = os.path.join(tmp, f"{mode}_{threads}.bin")
            run_probe(mode, edges, path, *args, threads=threads)
            files.append(open(path, "rb").read())
        check(f"{mode} mode bytes, 1 vs 2 threads", files[0] == files[1],
              f"{len(files[0])} bytes each")

    # 7. The linear baseline against scikit-learn's PCA (variances and coordinates).
    points = os.path.join(tmp, "points.bin")
    y = rng.normal(size=(500, 6)) @ rng.normal(size=(6, 6)) + 3.0
    with open(points, "wb") as f:
        np.array(y.shape, dtype="<i8").tofile(f)
        y.astype("<f4").tofile(f)
    spectrum = run_probe("linear", points, out, 3).strip().split("=")[1].strip(",").split(",")
    ours = np.array([float(v) for v in spectrum])
    pca = PCA(n_components=6).fit(y.astype(np.float32).astype(np.float64))
    # explained_variance_ divides by N - 1 (scikit-learn's documentation); unfurl's one PCA
    # convention (engine/detail/pca.hpp) divides by N.
    expected = pca.explained_variance_ * (len(y) - 1) / len(y)
    err = np.max(np.abs(ours - expected) / expected)
    check("linear spectrum vs sklearn PCA explained_variance_ (N-1)/N", err < 1e-5,
          f"max relative error {err:.2e}")
    coords = read_floats(out, (500, 3))
    ref = pca.transform(y.astype(np.float32).astype(np.float64))[:, :3]
    worst = max(min(np.max(np.abs(coords[:, k] - s * ref[:, k])) for s in (1, -1)) for k in range(3))
    check("linear coordinates vs sklearn PCA (up to sign per axis)", worst < 1e-3,
          f"max abs difference {worst:.2e}")

    if failures:
        print(f"{len(failures)} check(s) failed: {', '.join(failures)}")
        return 1
    print("all geodesic checks passed")
    return 0


if __name__ == "__main__":
    sys.exit(main())
