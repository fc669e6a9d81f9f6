#!/usr/bin/python3
"""Checks the neighbour graph stage (driven through graph_probe) against SciPy and
scikit-learn from Debian's packages: kNN lists, radius graphs, union kNN graphs and
connected components. Exits non-zero on the first failed comparison."""
import gzip
import os
import struct
import subprocess
import sys
import shutil
import tempfile

import numpy as np
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components
from scipy.spatial import cKDTree
from sklearn.neighbors import NearestNeighbors, kneighbors_graph

PROBE = os.path.join(os.environ["UNFURL_PROBE_DIR"], "graph_probe")
WORK = tempfile.mkdtemp(prefix="graph_check_")
FASHION = "/usr/share/datasets/fashion-mnist/t10k-images-idx3-ubyte.gz"
failures = 0


def report(ok, what):
    global failures
    print(("ok   " if ok else "FAIL ") + what, flush=True)
    if not ok:
        failures += 1


def write_points(x, name):
    path = os.path.join(WORK, name)
    x = np.ascontiguousarray(x, dtype="<f4")
    with open(path, "wb") as f:
        f.write(struct.pack("<QQ", *x.shape))
        f.write(x.tobytes())
    return path


def probe(*args, env=None):
    out = os.path.join(WORK, "out.bin")
    subprocess.run([PROBE, *map(str, args), out], check=True, env=env)
    with open(out, "rb") as f:
        return f.read()


def probe_knn(path, k, search):
    raw = probe("knn", path, k, search)
    n, kk = struct.unpack_from("<QQ", raw)
    index = np.frombuffer(raw, "<u4", n * kk, 16).reshape(n, kk)
    dist = np.frombuffer(raw, "<f4", n * kk, 16 + 4 * n * kk).reshape(n, kk)
    return index, dist


def probe_edges(kind, path, param, search, with_lengths=False):
    raw = probe(kind, path, param, search)
    (m,) = struct.unpack_from("<Q", raw)
    pairs = np.frombuffer(raw, "<u4", 2 * m, 8).reshape(m, 2)
    lengths = np.frombuffer(raw, "<f4", m, 8 + 8 * m) if with_lengths else None
    return pairs, lengths


def compare_knn(x, k, label, searches=("tree", "scan")):
    # Reference: scikit-learn NearestNeighbors(algorithm='brute'); kneighbors() without X
    # leaves each point out of its own list by index, as the probe does.
    ref_d, ref_i = NearestNeighbors(n_neighbors=k, algorithm="brute").fit(x).kneighbors()
    path = write_points(x, "knn.bin")
    for search in searches:
        index, dist = probe_knn(path, k, search)
        dist_ok = np.allclose(dist, ref_d, rtol=1e-5, atol=1e-5 * max(1.0, float(ref_d.max())))
        # Tie order aside: a row's index set may differ only among entries tied with its
        # k-th distance.
        mismatched_rows = 0
        for r in range(len(x)):
            a, b = set(index[r]), set(ref_i[r])
            if a == b:
                continue
            kth = ref_d[r, -1]
            tied = {int(j) for j, d in zip(index[r], dist[r]) if abs(d - kth) <= 1e-5 * max(kth, 1.0)}
            tied |= {int(j) for j, d in zip(ref_i[r], ref_d[r]) if abs(d - kth) <= 1e-5 * max(kth, 1.0)}
            if not (a ^ b) <= tied:
                mismatched_rows += 1
        report(dist_ok and mismatched_rows == 0,
               f"kNN {label} k={k} {search}: distances within 1e-5 of scikit-learn brute force, "
               f"{mismatched_rows} rows with other neighbours than ties allow")


def fashion_rows(count):
    # Fashion-MNIST test images (Xiao, Rasul and Vollgraf 2017), IDX format: 16-byte header.
    with gzip.open(FASHION, "rb") as f:
        head = f.read(16)
        _, n, rows, cols = struct.unpack(">IIII", head)
        data = np.frombuffer(f.read(count * rows * cols), np.uint8)
    return data.reshape(count, rows * cols).astype(np.float32)


def main():
    rng = np.random.default_rng(20261201)
    for d, n in ((3, 2000), (50, 1500), (784, 800)):
        compare_knn(rng.standard_normal((n, d)).astype(np.float32), 10, f"random {n}x{d}")
    fm = fashion_rows(3000)
    # Exact duplicate images would tie at 0; drop them so the check is about distances.
    fm = np.unique(fm, axis=0)
    compare_knn(fm, 10, f"Fashion-MNIST {len(fm)}x784", ("scan",))
    # A k-d tree in 784 dimensions visits nearly every leaf; fewer rows keep the check short.
    compare_knn(fm[:1000], 10, "Fashion-MNIST 1000x784")
    # The scan's float products come from whichever kernels OpenBLAS picks for the processor;
    # OPENBLAS_CORETYPE forces older ones (OpenBLAS's documented override for its DYNAMIC_ARCH
    # builds). The certified scan must give the same bytes with every kernel set.
    path = write_points(fm[:1500], "kernels.bin")
    default = probe("knn", path, 10, "scan")
    for core in ("Haswell", "Sandybridge", "Prescott"):
        forced = probe("knn", path, 10, "scan", env=dict(os.environ, OPENBLAS_CORETYPE=core))
        report(forced == default,
               f"kNN Fashion-MNIST 1500x784 scan: OpenBLAS {core} kernels give the same bytes")

    # Radius graphs against SciPy cKDTree.query_pairs (pairs with distance <= r).
    for d, n, r in ((3, 3000, 0.25), (10, 1500, 2.4)):
        x = rng.standard_normal((n, d)).astype(np.float32)
        ref = {tuple(p) for p in cKDTree(x.astype(np.float64)).query_pairs(r)}
        path = write_points(x, "radius.bin")
        for search in ("tree", "scan"):
            pairs, _ = probe_edges("radius", path, r, search)
            got = {tuple(map(int, p)) for p in pairs}
            report(got == ref, f"radius {n}x{d} r={r} {search}: {len(got)} edges, "
                               f"query_pairs {len(ref)}, differ {len(got ^ ref)}")
    # Boundary: distinct integer grid points, radius 1 exactly: every axis neighbour sits on
    # the boundary and must be included (query_pairs is inclusive).
    grid = np.array([(i, j, l) for i in range(12) for j in range(12) for l in range(12)], np.float32)
    grid = grid[rng.permutation(len(grid))[:1200]]
    ref = {tuple(p) for p in cKDTree(grid.astype(np.float64)).query_pairs(1.0)}
    path = write_points(grid, "grid.bin")
    for search in ("tree", "scan"):
        pairs, _ = probe_edges("radius", path, 1.0, search)
        got = {tuple(map(int, p)) for p in pairs}
        report(got == ref, f"radius boundary grid r=1 {search}: {len(got)} edges, query_pairs {len(ref)}")

    # Union kNN graph against scikit-learn kneighbors_graph symmetrised by maximum.
    x = rng.standard_normal((2000, 3)).astype(np.float32)
    a = kneighbors_graph(x, 8, mode="distance")
    a = a.maximum(a.T).tocoo()
    upper = a.row < a.col
    ref = dict(zip(zip(a.row[upper].tolist(), a.col[upper].tolist()), a.data[upper]))
    path = write_points(x, "union.bin")
    for search in ("tree", "scan"):
        pairs, lengths = probe_edges("union", path, 8, search, with_lengths=True)
        got = dict(zip(map(tuple, pairs.tolist()), lengths))
        same_keys = got.keys() == ref.keys()
        close = same_keys and all(abs(got[e] - ref[e]) <= 1e-5 * ref[e] + 1e-6 for e in ref)
        report(same_keys and close, f"union kNN graph 2000x3 k=8 {search}: {len(got)} edges, "
                                    f"kneighbors_graph {len(ref)}, lengths within 1e-5")

    # Components against scipy.sparse.csgraph.connected_components.
    for parts, n in ((1, 500), (2, 500), (60, 3000)):
        cut = np.sort(rng.choice(np.arange(1, n), parts - 1, replace=False)) if parts > 1 else []
        bounds = np.concatenate([[0], cut, [n]]).astype(int)
        perm = rng.permutation(n)  # scatter each block over the ids
        edges = []
        for b0, b1 in zip(bounds[:-1], bounds[1:]):
            members = perm[b0:b1]
            for i in range(1, len(members)):  # a random tree inside the block, plus extras
                edges.append((members[i], members[rng.integers(0, i)]))
            for _ in range(len(members) // 2):
                edges.append(tuple(rng.choice(members, 2)))
        e = np.array(edges, dtype="<u4").reshape(-1, 2)
        path = os.path.join(WORK, "edges.bin")
        with open(path, "wb") as f:
            f.write(struct.pack("<Q", len(e)))
            f.write(np.ascontiguousarray(e[:, 0]).tobytes())
            f.write(np.ascontiguousarray(e[:, 1]).tobytes())
        raw = probe("components", path, n)
        (count,) = struct.unpack_from("<Q", raw)
        labels = np.frombuffer(raw, "<u4", n, 8)
        m = coo_matrix((np.ones(len(e)), (e[:, 0], e[:, 1])), shape=(n, n))
        ref_count, ref_labels = connected_components(m, directed=False)
        # Same partition: the pairs (ours, theirs) form a bijection.
        pairs = set(zip(labels.tolist(), ref_labels.tolist()))
        same = count == ref_count and len(pairs) == ref_count
        report(same, f"components {n} nodes, {parts} planted: {count}, connected_components {ref_count}")

    print(f"graph_check: {failures} failures")
    return 1 if failures else 0


if __name__ == "__main__":
    try:
        code = main()
    finally:
        shutil.rmtree(WORK, ignore_errors=True)
    sys.exit(code)
