"""Quality scores against outside references.

- Trustworthiness T(k) and continuity C(k) against scikit-learn's
  sklearn.manifold.trustworthiness (Debian python3-sklearn 1.2.1); continuity is
  trustworthiness with the two arrays swapped, as its docstring's definition implies
  (Venna and Kaski 2001). Agreement to 1e-9 on random and Swiss roll data, several k.
- Ties (duplicate points): scikit-learn 1.2.1 orders the input distance row with
  np.argsort's default (introsort, not stable), so its tie order is unspecified there; the
  tie case is compared with the published formula evaluated by NumPy with a stable argsort
  (ties to the lower index, our documented convention).
- The digits set bundled with scikit-learn (1,797 x 64, integer pixels, many ties; 64
  columns take the float32-product ranks) against its first two principal components,
  compared with the published formula by a stable argsort as the tie case.
- Residual variance 1 - R^2 against scipy.stats.pearsonr on the same pairs (Tenenbaum, de Silva
  and Langford 2000, note 42), geodesics from scipy.sparse.csgraph.shortest_path.
- Levina-Bickel intrinsic dimension against the published formula (NIPS 2004, with the
  inverse averaging of MacKay and Ghahramani) evaluated by NumPy on scikit-learn
  NearestNeighbors distances.
Exits non-zero on any failed comparison and prints every comparison.
"""
import json
import os
import subprocess
import sys
import tempfile

import numpy as np
from scipy.sparse.csgraph import shortest_path
from scipy.stats import pearsonr
from sklearn.datasets import load_digits, make_swiss_roll
from sklearn.manifold import trustworthiness
from sklearn.neighbors import NearestNeighbors, kneighbors_graph

PROBE = os.path.join(os.environ.get("UNFURL_PROBE_DIR", "."), "quality_probe")
failures = 0


def check(name, got, want, tol):
    global failures
    ok = abs(got - want) <= tol
    failures += 0 if ok else 1
    print(f"{'ok  ' if ok else 'FAIL'} {name}: unfurl {got:.15f} reference {want:.15f} "
          f"diff {abs(got - want):.2e} (tol {tol:g})")


def write_points(path, a):
    a = np.ascontiguousarray(a, dtype="<f4")
    with open(path, "wb") as f:
        f.write(np.array(a.shape, dtype="<u8").tobytes())
        f.write(a.tobytes())


def probe(*args, expect=0):
    r = subprocess.run([PROBE, *map(str, args)], capture_output=True, text=True)
    if r.returncode != expect:
        global failures
        failures += 1
        print(f"FAIL probe {args[0]}: exit {r.returncode}, wanted {expect}: {r.stderr.strip()}")
        return None
    return json.loads(r.stdout) if expect == 0 else r.stderr.strip()


def scores_vs_sklearn(tmp, name, x, y, ks):
    x = x.astype(np.float32)
    y = y.astype(np.float32)
    write_points(f"{tmp}/x.bin", x)
    write_points(f"{tmp}/y.bin", y)
    out = probe("scores", f"{tmp}/x.bin", f"{tmp}/y.bin", ",".join(map(str, ks)), "exact", 2, 1)
    if out is None:
        return
    # The same float32 values, in float64 so scikit-learn's distances are not rounded again.
    x64, y64 = x.astype(np.float64), y.astype(np.float64)
    for s in out["scores"]:
        k = s["k"]
        # Reference: sklearn.manifold.trustworthiness (scikit-learn 1.2.1, Debian).
        check(f"{name} T({k}) vs sklearn", s["trustworthiness"],
              trustworthiness(x64, y64, n_neighbors=k), 1e-9)
        # Reference: continuity = sklearn trustworthiness with the arguments swapped.
        check(f"{name} C({k}) vs sklearn swapped", s["continuity"],
              trustworthiness(y64, x64, n_neighbors=k), 1e-9)


def squared_distances(a):
    """All squared distances; by |a|^2 + |b|^2 - 2 a.b, exact in float64 for small integers."""
    if np.array_equal(a, np.round(a)) and np.abs(a).max() * np.abs(a).max() * a.shape[1] < 2**40:
        g = a @ a.T
        n2 = np.diag(g)
        return n2[:, None] + n2[None, :] - 2.0 * g
    return ((a[:, None, :] - a[None, :, :]) ** 2).sum(-1)


def stable_formula(x, y, k):
    """Venna and Kaski's T(k) by NumPy, ties to the lower index (stable argsort)."""
    n = len(x)
    dx = squared_distances(x)
    dy = squared_distances(y)
    np.fill_diagonal(dx, np.inf)
    np.fill_diagonal(dy, np.inf)
    rank_x = np.empty((n, n), dtype=np.int64)
    rank_x[np.arange(n)[:, None], np.argsort(dx, axis=1, kind="stable")] = np.arange(1, n + 1)
    nn_y = np.argsort(dy, axis=1, kind="stable")[:, :k]
    r = rank_x[np.arange(n)[:, None], nn_y] - k
    return 1.0 - r[r > 0].sum() * 2.0 / (n * k * (2.0 * n - 3.0 * k - 1.0))


def scores_vs_formula(tmp, name, x, y, ks):
    write_points(f"{tmp}/x.bin", x)
    write_points(f"{tmp}/y.bin", y)
    out = probe("scores", f"{tmp}/x.bin", f"{tmp}/y.bin", ",".join(map(str, ks)), "exact", 2, 1)
    for s in out["scores"] if out else []:
        k = s["k"]
        # Reference: the published formula with a stable argsort (NumPy), see above.
        check(f"{name} T({k}) vs stable-argsort formula", s["trustworthiness"],
              stable_formula(x.astype(np.float64), y.astype(np.float64), k), 1e-9)
        check(f"{name} C({k}) vs stable-argsort formula", s["continuity"],
              stable_formula(y.astype(np.float64), x.astype(np.float64), k), 1e-9)


def main():
    rng = np.random.default_rng(20261201)
    with tempfile.TemporaryDirectory() as tmp:
        # Random data: a 6-D Gaussian cloud and a noisy linear 2-D map of it.
        x = rng.normal(size=(400, 6))
        y = x @ rng.normal(size=(6, 2)) + 0.3 * rng.normal(size=(400, 2))
        scores_vs_sklearn(tmp, "random 400x6", x, y, [1, 5, 12, 40])
        # Random data in 40-D against a 3-D map (more, longer distance rows).
        x = rng.normal(size=(300, 40))
        scores_vs_sklearn(tmp, "random 300x40", x, x[:, :3], [3, 10])
        # Swiss roll (scikit-learn's generator): the roll against its flattening by dropping
        # the depth axis (folds crushed together), and against its unrolled parameters.
        roll, t = make_swiss_roll(n_samples=1000, random_state=3)
        scores_vs_sklearn(tmp, "swiss roll 1000 vs (x, y)", roll, roll[:, :2], [5, 12, 30])
        unrolled = np.column_stack([t, roll[:, 1]])
        scores_vs_sklearn(tmp, "swiss roll 1000 vs (t, height)", roll, unrolled, [4, 12])

        # Ties: points on an integer grid with duplicates, map a coarser grid.
        x = rng.integers(0, 4, size=(120, 3)).astype(np.float32)
        y = np.floor(x[:, :2] / 2).astype(np.float32)
        scores_vs_formula(tmp, "ties", x, y, [3, 10])

        # Open data in 64-D, where the input ranks come from float32 products: the digits set
        # bundled with scikit-learn (1,797 x 64, integer pixels 0-16, so many tied distances)
        # against its first two principal components (NumPy SVD).
        x = load_digits().data.astype(np.float32)
        centred = x.astype(np.float64) - x.astype(np.float64).mean(axis=0)
        y = (centred @ np.linalg.svd(centred, full_matrices=False)[2][:2].T).astype(np.float32)
        scores_vs_formula(tmp, "digits", x, y, [5, 12, 30])

        # Residual variance over landmark-to-all geodesic rows. Geodesics: SciPy shortest_path
        # on a scikit-learn 10-NN graph of a Swiss roll; map: the unrolled parameters plus a
        # third noise axis, so the curve has 3 points.
        roll, t = make_swiss_roll(n_samples=600, random_state=5)
        graph = kneighbors_graph(roll, 10, mode="distance")
        sources = rng.choice(600, size=25, replace=False)
        geo = shortest_path(graph, directed=False, indices=sources).astype(np.float32)
        assert np.isfinite(geo).all(), "test graph must be connected"
        mp = np.column_stack([t, roll[:, 1], 0.5 * rng.normal(size=600)]).astype(np.float32)
        with open(f"{tmp}/rows.bin", "wb") as f:
            f.write(np.array(geo.shape, dtype="<u8").tobytes())
            f.write(sources.astype("<u4").tobytes())
            f.write(geo.astype("<f4").tobytes())
        write_points(f"{tmp}/map.bin", mp)
        out = probe("residual", f"{tmp}/rows.bin", f"{tmp}/map.bin")
        src = np.repeat(sources, 600)
        dst = np.tile(np.arange(600), len(sources))
        keep = src != dst
        d_geo = geo.astype(np.float64).ravel()[keep]
        m64 = mp.astype(np.float64)
        if out:
            check("residual pairs counted", out["pairs"], keep.sum(), 0)
            for d in range(1, 4):
                d_map = np.sqrt(((m64[src[keep], :d] - m64[dst[keep], :d]) ** 2).sum(1))
                # Reference: scipy.stats.pearsonr on the same pairs.
                check(f"residual variance d={d} vs 1 - pearsonr^2", out["by_dims"][d - 1],
                      1.0 - pearsonr(d_geo, d_map)[0] ** 2, 1e-9)

        # Residual variance over given pairs (input-space Euclidean distances).
        a = rng.integers(0, 600, size=5000)
        b = (a + rng.integers(1, 600, size=5000)) % 600
        dist = np.sqrt(((roll[a] - roll[b]) ** 2).sum(1))
        rec = np.zeros(5000, dtype=[("a", "<u4"), ("b", "<u4"), ("d", "<f8")])
        rec["a"], rec["b"], rec["d"] = a, b, dist
        with open(f"{tmp}/pairs.bin", "wb") as f:
            f.write(np.array([5000], dtype="<u8").tobytes())
            f.write(rec.tobytes())
        out = probe("residual-pairs", f"{tmp}/pairs.bin", f"{tmp}/map.bin")
        if out:
            for d in range(1, 4):
                d_map = np.sqrt(((m64[a, :d] - m64[b, :d]) ** 2).sum(1))
                # Reference: scipy.stats.pearsonr on the same pairs.
                check(f"residual variance (pairs) d={d} vs 1 - pearsonr^2",
                      out["by_dims"][d - 1], 1.0 - pearsonr(dist, d_map)[0] ** 2, 1e-9)

        # Levina-Bickel on scikit-learn NearestNeighbors distances of a 3-D Gaussian.
        x = rng.normal(size=(1500, 3))
        k = 10
        dist, _ = NearestNeighbors(n_neighbors=k).fit(x).kneighbors()
        dist = dist.astype(np.float32)
        write_points(f"{tmp}/knn.bin", dist)
        out = probe("dimension", f"{tmp}/knn.bin", k)
        if out:
            d64 = dist.astype(np.float64)
            inv = np.log(d64[:, -1:] / d64[:, :-1]).sum(1) / (k - 1)
            # Reference: the published formula (Levina and Bickel 2004; inverse averaging by
            # MacKay and Ghahramani 2005) evaluated by NumPy.
            check("Levina-Bickel vs NumPy formula", out["estimate"], 1.0 / inv.mean(), 1e-9)

        # Bad input: k >= N/2 (usage, 64), row counts differ and NaN in the map (data, 65).
        write_points(f"{tmp}/x.bin", rng.normal(size=(20, 3)))
        write_points(f"{tmp}/y.bin", rng.normal(size=(20, 2)))
        write_points(f"{tmp}/short.bin", rng.normal(size=(19, 2)))
        bad = rng.normal(size=(20, 2))
        bad[7, 1] = np.nan
        write_points(f"{tmp}/nan.bin", bad)
        for args, code, word in [
            # The engine names the options-struct field (apps/ shows it as --score-k).
            (("scores", f"{tmp}/x.bin", f"{tmp}/y.bin", "10", "exact", 2, 1), 64,
             "QualityOptions.ks"),
            (("scores", f"{tmp}/x.bin", f"{tmp}/short.bin", "3", "exact", 2, 1), 65, "19"),
            (("scores", f"{tmp}/x.bin", f"{tmp}/nan.bin", "3", "exact", 2, 1), 65, "row 7"),
        ]:
            msg = probe(*args, expect=code)
            if msg is not None:
                ok = word in msg and "\n" not in msg
                failures_add = 0 if ok else 1
                print(f"{'ok  ' if ok else 'FAIL'} bad input exit {code}: {msg}")
                globals()["failures"] += failures_add
    print(f"quality_check: {failures} failure(s)")
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
