"""Whole-spectrum figures and the residual variance through `unfurl embed`, against outside
references. Each check names its source beside it.

Outside references (Debian 12 packages, run by /usr/bin/python3):
  - numpy 1.24 (python3-numpy): numpy.linalg.eigvalsh, the whole spectrum of the centred
    matrix B = -1/2 J S J (classical MDS: Torgerson 1952; Isomap, Tenenbaum, de Silva and
    Langford, Science 290, 2000), and numpy.corrcoef for Pearson's R;
  - SciPy 1.10 (python3-scipy): scipy.sparse.csgraph.shortest_path (Dijkstra) for the
    geodesics, scipy.spatial.distance.pdist for the map distances;
  - scikit-learn 1.2.1 (python3-sklearn): sklearn.neighbors.kneighbors_graph, the same
    symmetrised k-nearest-neighbour graph Isomap uses;
  - h5py 3.7 reads the maps.
The points follow the Swiss roll of DESIGN.md section 6 (the common generator's formula).
Exits non-zero when any comparison fails; prints every comparison.
"""

import json
import os
import sys
import tempfile

import h5py
import numpy as np
from scipy.sparse.csgraph import shortest_path
from scipy.spatial.distance import pdist
from sklearn.neighbors import kneighbors_graph

from reference_support import check, failures, unfurl
from reference_support import swiss_roll as roll_float64

K = 10
# The bound: each figure within 5% (relative) of the whole-spectrum / all-pairs value.
TOLERANCE = 0.05


def swiss_roll(n, seed):
    return roll_float64(n, seed)[0].astype(np.float32)


def geodesics(points):
    # scipy.sparse.csgraph.shortest_path over sklearn's kneighbors_graph(X, k, "distance"),
    # undirected as in Isomap (Tenenbaum et al. 2000).
    knn = kneighbors_graph(points.astype(np.float64), K, mode="distance")
    return shortest_path(knn, method="D", directed=False)


def whole_spectrum(d):
    # Classical MDS (Torgerson 1952): B = -1/2 J S J, S the squared distances; every
    # eigenvalue by numpy.linalg.eigvalsh (LAPACK). Negative mass / positive mass is the
    # non-Euclidean ratio (Schoenberg 1935: B is PSD exactly for Euclidean distances).
    s = d * d
    s = s - s.mean(axis=0) - s.mean(axis=1)[:, None] + s.mean()
    values = np.linalg.eigvalsh(-0.5 * s)[::-1]
    positive = values[values > 0].sum()
    negative = -values[values < 0].sum()
    return values, positive, negative


def relative(got, want):
    return abs(got - want) / abs(want)


def spectrum_case(name, points, d, extra):
    path = os.path.join(work, name + ".h5")
    report = os.path.join(work, name + ".json")
    unfurl("embed", points_file, "-o", path, "--k", str(K), "--dims", "2", "--json", report,
           "--quiet", *extra)
    with open(report) as f:
        doc = json.load(f)
    with h5py.File(path, "r") as f:
        landmarks = f["/landmarks/rows"][()]
        stored = f["/spectrum"][()]
        attrs = dict(f["/spectrum"].attrs)
    sub = d[np.ix_(landmarks, landmarks)]
    values, positive, negative = whole_spectrum(sub)
    spectral = doc["embedding"]["spectral"]
    ratio = spectral["negative_ratio"]
    want = negative / positive
    check(f"{name}: non-Euclidean ratio vs numpy eigvalsh of B ({len(landmarks)} x "
          f"{len(landmarks)}, {spectral['mass_method']})",
          relative(ratio, want) <= TOLERANCE,
          f"{ratio:.5f} +- {spectral['negative_ratio_standard_error']:.5f} vs {want:.5f} "
          f"({100 * relative(ratio, want):.1f}%)")
    shares = doc["quality"]["axis_share"]
    for axis in range(2):
        want_share = values[axis] / positive
        check(f"{name}: axis {axis + 1} share vs numpy eigvalsh", relative(shares[axis],
                                                                           want_share) <= TOLERANCE,
              f"{shares[axis]:.5f} vs {want_share:.5f}")
    check(f"{name}: the map's /spectrum says which eigenvalues it holds",
          attrs.get("which") in ("all", "largest") and int(attrs["count"]) == len(stored),
          f"which = {attrs.get('which')}, count = {attrs.get('count')}, {len(stored)} stored")
    top = values[:len(stored)]
    check(f"{name}: /spectrum holds the largest eigenvalues, descending (numpy eigvalsh)",
          bool(np.all(np.diff(stored) <= 0)) and
          np.allclose(stored[:2], top[:2], rtol=1e-3),
          f"stored {stored[:3]} vs {top[:3]}")
    return doc, path


def residual_case(name, points, d, landmarks):
    path = os.path.join(work, name + ".h5")
    report = os.path.join(work, name + ".json")
    unfurl("embed", points_file, "-o", path, "--k", str(K), "--dims", "2", "--landmarks",
           str(landmarks), "--json", report, "--quiet")
    with open(report) as f:
        curve = json.load(f)["quality"]["residual_variance"]
    with h5py.File(path, "r") as f:
        coords = f["/coords"][()].astype(np.float64)
        rows = f["/rows"][()]
    given = d[np.ix_(rows, rows)][np.triu_indices(len(rows), 1)]
    for dims in (1, 2):
        # Residual variance 1 - R^2 over all pairs (Tenenbaum et al. 2000, note 42): R from
        # numpy.corrcoef of the geodesics and the map distances (scipy pdist, pairs i < j).
        r = np.corrcoef(given, pdist(coords[:, :dims]))[0, 1]
        want = 1 - r * r
        got = curve["by_dims"][dims - 1]
        check(f"{name}: residual variance at {dims} dims vs all pairs (numpy corrcoef)",
              relative(got, want) <= TOLERANCE,
              f"{got:.6f} vs {want:.6f} ({100 * relative(got, want):.1f}%; {curve['pairs']} pairs, "
              f"{curve['drawn']})")


with tempfile.TemporaryDirectory() as work:
    points_file = os.path.join(work, "roll1600.h5")
    roll = swiss_roll(1600, 11)
    with h5py.File(points_file, "w") as f:
        f.create_dataset("points", data=roll)
    d1600 = geodesics(roll)
    # Exact mode above the dense limit: the Lanczos solver and an estimated whole spectrum.
    _, scored_path = spectrum_case("exact-1600", roll, d1600, ["--landmarks", "all"])
    # --no-score skips the estimate (a score): the map and report say "not computed" instead
    # of a ratio, and the map is the scored run's (eigenvalues vs numpy eigvalsh).
    plain_path = os.path.join(work, "exact-1600-plain.h5")
    plain_json = os.path.join(work, "exact-1600-plain.json")
    out = unfurl("embed", points_file, "-o", plain_path, "--k", str(K), "--dims", "2",
                 "--landmarks", "all", "--no-score", "--json", plain_json)
    with open(plain_json) as f:
        spectral = json.load(f)["embedding"]["spectral"]
    with h5py.File(plain_path, "r") as f:
        attrs = dict(f["/spectrum"].attrs)
        stored = f["/spectrum"][()]
        plain_coords = f["/coords"][()]
    with h5py.File(scored_path, "r") as f:
        scored_coords = f["/coords"][()]
    check("exact-1600 --no-score: report and map say the mass is not computed, give no ratio",
          spectral["mass_method"] == "not computed" and "negative_ratio" not in spectral and
          attrs.get("mass_method") == "not computed" and "negative_ratio" not in attrs and
          "positive_mass" not in attrs and spectral["operations"]["mass"] == 0,
          f"{spectral['mass_method']}, attributes {sorted(attrs)}")
    # The most negative eigenvalues are a score too: the solver looks for the top pairs alone.
    check("exact-1600 --no-score: no negative end is computed or listed",
          spectral["eigenvalues_smallest"] == [] and spectral["computed"]["negative"] == 0 and
          len(stored) == 2, f"{spectral['eigenvalues_smallest']}, stored {stored}")
    check("exact-1600 --no-score: the summary line says not computed",
          "non-Euclidean ratio not computed" in out.stdout,
          " | ".join(out.stdout.strip().splitlines()[-2:]))
    inspected = unfurl("inspect", plain_path)
    check("exact-1600 --no-score: inspect says not computed",
          "non-Euclidean ratio: not computed" in inspected.stdout, "")
    values, _, _ = whole_spectrum(d1600)
    check("exact-1600 --no-score: top eigenvalues vs numpy eigvalsh",
          np.allclose(stored[:2], values[:2], rtol=1e-4), f"{stored[:2]} vs {values[:2]}")
    moved = np.abs(plain_coords.astype(np.float64) - scored_coords).max()
    check("exact-1600 --no-score: the map equals the scored run's (float32 rounding)",
          moved <= 1e-5 * np.abs(scored_coords).max(), f"largest move {moved:.3g}")

    points_file = os.path.join(work, "roll2000.h5")
    roll = swiss_roll(2000, 12)
    with h5py.File(points_file, "w") as f:
        f.create_dataset("points", data=roll)
    d2000 = geodesics(roll)
    # 1,000 landmarks: the dense solver, whole spectrum; 1,001: Lanczos, estimated.
    doc, _ = spectrum_case("landmarks-1000", roll, d2000, ["--landmarks", "1000"])
    check("landmarks-1000: mass is exact (dense solver)",
          doc["embedding"]["spectral"]["mass_method"] == "exact",
          doc["embedding"]["spectral"]["mass_method"])
    doc, _ = spectrum_case("landmarks-1001", roll, d2000, ["--landmarks", "1001"])
    check("landmarks-1001: mass is estimated and says so",
          doc["embedding"]["spectral"]["mass_method"] == "estimated" and
          doc["embedding"]["spectral"]["which"] == "largest",
          doc["embedding"]["spectral"]["mass_method"])

    residual_case("residual-10", roll, d2000, 10)
    residual_case("residual-256", roll, d2000, 256)

    # Noise axes. A flat 12 x 12 grid joined to every other point (--k 143): its geodesics are
    # its Euclidean distances, so B has rank 2 (Schoenberg 1935) and a third eigenvalue is
    # float32 rounding only; numpy.linalg.eigvalsh of B from SciPy's shortest_path confirms it
    # before unfurl is asked. With k = 10 a grid's graph paths are not straight and a third
    # eigenvalue of several percent is real distortion, not noise.
    grid = np.array([(i, j, 0.0) for i in range(12) for j in range(12)], np.float32)
    points_file = os.path.join(work, "grid.h5")
    with h5py.File(points_file, "w") as f:
        f.create_dataset("points", data=grid)
    knn = kneighbors_graph(grid.astype(np.float64), 143, mode="distance")
    values, _, _ = whole_spectrum(shortest_path(knn, method="D", directed=False))
    check("grid: numpy eigvalsh puts the third eigenvalue at rounding level",
          abs(values[2]) < 1e-9 * values[0], f"{values[:3]}")
    out = unfurl("embed", points_file, "-o", os.path.join(work, "grid-map.h5"), "--k", "143",
                 "--dims", "3", "--no-score")
    with h5py.File(os.path.join(work, "grid-map.h5"), "r") as f:
        noise = np.atleast_1d(f["/spectrum"].attrs["noise_axes"])
    check("grid --dims 3: warns that axis 3 carries no structure",
          "warning: spectral: axis 3 carries no structure" in out.stdout + out.stderr,
          (out.stdout + out.stderr).strip().splitlines()[-1])
    check("grid --dims 3: /spectrum noise_axes = [3]", list(noise) == [3], str(noise))
    points_file = os.path.join(work, "roll2000.h5")
    out = unfurl("embed", points_file, "-o", os.path.join(work, "roll-map.h5"), "--k", str(K),
                 "--dims", "2", "--landmarks", "256", "--no-score")
    with h5py.File(os.path.join(work, "roll-map.h5"), "r") as f:
        attr = f["/spectrum"].attrs["noise_axes"]
    check("Swiss roll --dims 2: no noise-axis warning",
          "carries no structure" not in out.stdout + out.stderr and
          np.atleast_1d(json.loads(attr) if isinstance(attr, str) else attr).size == 0,
          str(attr))

if failures:
    print(f"{len(failures)} comparison(s) failed")
    sys.exit(1)
print("all comparisons passed")
