"""`unfurl place` against outside references: the analytic Swiss roll, a joint embedding, the
map itself, and classical MDS computed with numpy (de Silva and Tenenbaum 2004: landmark MDS
triangulation is exact for Euclidean distances whose landmarks span the space)."""

import os
import sys
import tempfile

import h5py
import numpy as np

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from reference_support import arc_length, check, failures, swiss_roll, unfurl  # noqa: E402


def write_points(path, points):
    with h5py.File(path, "w") as f:
        f["points"] = points


def coords(path):
    with h5py.File(path, "r") as f:
        return f["/coords"][...].astype(np.float64), f["/rows"][...]


def procrustes(source, target, scale):
    """The rotation/reflection (and scale, when asked) plus translation taking `source` onto
    `target` in the least-squares sense (Schoenemann 1966, the orthogonal Procrustes problem,
    solved by the SVD of the cross-covariance). Returns a function applying it."""
    ms, mt = source.mean(0), target.mean(0)
    u, s, vt = np.linalg.svd((source - ms).T @ (target - mt))
    r = u @ vt
    c = s.sum() / ((source - ms) ** 2).sum() if scale else 1.0
    return lambda x: (x - ms) @ r * c + mt


def classical_mds(points, dims):
    """Torgerson's classical MDS with numpy: B = -1/2 J S J, top eigenvectors times
    sqrt(eigenvalue) (Young and Householder 1938)."""
    s = ((points[:, None, :] - points[None, :, :]) ** 2).sum(-1)
    n = len(points)
    j = np.eye(n) - 1.0 / n
    values, vectors = np.linalg.eigh(-0.5 * j @ s @ j)
    top = np.argsort(values)[::-1][:dims]
    return vectors[:, top] * np.sqrt(values[top])


work = tempfile.mkdtemp(prefix="unfurl-place-")

# 1. Held-out Swiss roll: embed 90%, place 10% (ground truth: DESIGN.md section 6, the
# isometric (arc length, height) coordinates of the roll).
points, t, height = swiss_roll(3000, 7)
truth = np.column_stack([arc_length(t), height])
held = np.arange(3000) % 10 == 0
ref_file, new_file, all_file = (os.path.join(work, n) for n in ("ref.h5", "new.h5", "all.h5"))
write_points(ref_file, points[~held])
write_points(new_file, points[held])
write_points(all_file, points)
map_file, placed_file = os.path.join(work, "map.h5"), os.path.join(work, "placed.h5")
common = ["--k", "10", "--landmarks", "200", "--no-score", "--quiet"]
unfurl("embed", ref_file, "-o", map_file, "--keep-geodesics", *common)
unfurl("place", "--map", map_file, new_file, "-o", placed_file, "--quiet")
ref_map, ref_rows = coords(map_file)
placed, placed_rows = coords(placed_file)
check("placed rows are the new points in order", np.array_equal(placed_rows, np.arange(300)),
      f"{placed_rows[:5]}...")
to_truth = procrustes(ref_map, truth[~held][ref_rows], scale=True)
aligned = to_truth(placed)
r = [np.corrcoef(aligned[:, a], truth[held][:, a])[0, 1] for a in (0, 1)]
check("held-out points follow arc length and height (analytic)", min(r) > 0.99,
      f"correlations {r[0]:.5f}, {r[1]:.5f} (need > 0.99)")

# Joint embedding of all 3000 points with the same options; rigid alignment (geodesic units,
# no scale) fitted on the shared 2700 points. Tolerance: RMS difference of the placed points
# below 2% of the joint map's RMS radius (common practice, no source: landmark MDS maps of
# two samples of one roll differ by a few percent at their edges).
joint_file = os.path.join(work, "joint.h5")
unfurl("embed", all_file, "-o", joint_file, *common)
joint, joint_rows = coords(joint_file)
check("the joint map keeps every point", np.array_equal(joint_rows, np.arange(3000)),
      f"{len(joint_rows)} rows")
original = np.flatnonzero(~held)[ref_rows]  # reference map row -> row of the whole roll
to_joint = procrustes(ref_map, joint[original], scale=False)
diff = to_joint(placed) - joint[held]
radius = np.sqrt(((joint - joint.mean(0)) ** 2).sum(1).mean())
rms = np.sqrt((diff ** 2).sum(1).mean())
check("placed points agree with a joint embedding after Procrustes alignment",
      rms < 0.02 * radius, f"RMS {rms:.4f} vs radius {radius:.3f} ({100 * rms / radius:.2f}%)")

# 2. The map's own points placed again land on their map rows (the triangulation is the
# map's formula and the nearest neighbour of a reference point is itself at distance 0).
again_file = os.path.join(work, "again.h5")
unfurl("place", "--map", map_file, ref_file, "-o", again_file, "--quiet")
again, _ = coords(again_file)
extent = np.abs(ref_map).max()
err = np.abs(again[ref_rows] - ref_map).max() / extent
check("reference points placed again return their map coordinates", err < 1e-5,
      f"largest difference {err:.2e} of the map's extent (float32 precision: 6e-8)")

# 3. A cluster far off the roll is flagged; the held-out points on the roll are not
# (common practice, no source: a point 100 units off a roll of neighbour spacing ~1).
far = points[held][:20] + np.array([100.0, 0.0, 0.0])
mixed_file, mixed_out = os.path.join(work, "mixed.h5"), os.path.join(work, "mixed_placed.h5")
write_points(mixed_file, np.vstack([points[held], far]))
unfurl("place", "--map", map_file, mixed_file, "-o", mixed_out, "--quiet")
with h5py.File(mixed_out, "r") as f:
    flagged = set(f["/placement/far_rows"][...].astype(int))
check("the far cluster is flagged", flagged >= set(range(300, 320)),
      f"{len(flagged & set(range(300, 320)))} of 20 far points flagged")
check("points on the roll are not flagged", not (flagged & set(range(300))),
      f"{len(flagged & set(range(300)))} of 300 on-roll points flagged")

# 4. Euclidean configuration, complete graph (geodesics = Euclidean distances), 12 landmarks
# spanning R^3: map and placed points together are classical MDS of all points (numpy), up
# to a rigid motion (de Silva and Tenenbaum 2004).
rng = np.random.default_rng(3)
base = rng.normal(size=(80, 3)) * np.array([4.0, 2.0, 1.0])
extra = rng.normal(size=(30, 3)) * np.array([3.0, 1.5, 0.8])
e_ref, e_new = os.path.join(work, "e_ref.h5"), os.path.join(work, "e_new.h5")
write_points(e_ref, base)
write_points(e_new, extra)
e_map, e_placed = os.path.join(work, "e_map.h5"), os.path.join(work, "e_placed.h5")
unfurl("embed", e_ref, "-o", e_map, "--k", "79", "--landmarks", "12", "--dims", "3",
       "--keep-geodesics", "--no-score", "--quiet")
unfurl("place", "--map", e_map, e_new, "-o", e_placed, "--k", "80", "--quiet")
m, m_rows = coords(e_map)
p, _ = coords(e_placed)
ours = np.vstack([m, p])
numpy_mds = classical_mds(np.vstack([base[m_rows], extra]), 3)
fit = procrustes(ours, numpy_mds, scale=False)
err = np.abs(fit(ours) - numpy_mds).max() / np.abs(numpy_mds).max()
check("placement reproduces classical MDS of a Euclidean configuration (numpy)", err < 1e-5,
      f"largest difference {err:.2e} of the extent")

print(f"{'FAILED' if failures else 'passed'} (work folder {work})")
if failures:
    sys.exit(1)
os.system(f"rm -rf {work}")
