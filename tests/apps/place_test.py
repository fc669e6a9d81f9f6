"""End-to-end tests of `unfurl place`: what it refuses (a map without the placement record,
new points of another width, reference points that changed or went missing, bad options, an
output it cannot create), each with the project's exit code (README "Exit codes"), one line
on stderr and no output touched; and that the placed file is a map `score` and `inspect` read.
The preprocessing recorded in the map is applied to the reference and new points alike: the
map's own points placed again land on their map rows with --scale standard too (the
triangulation is the map's own formula; de Silva and Tenenbaum 2004).

Run by ctest as cli.place_test with env UNFURL_BIN. Inputs written with h5py and numpy
(Debian python3-h5py, python3-numpy), outputs read back with h5py.
"""

import os
import tempfile

import h5py
import numpy as np

from cli_support import check, finish, refused, run, succeeds, swiss_roll

work = tempfile.mkdtemp(prefix="unfurl-place-cli-")
out = os.path.join(work, "out")
os.mkdir(out)


def path(name):
    return os.path.join(work, name)


def write(name, points):
    with h5py.File(path(name), "w") as f:
        f["points"] = points
    return path(name)


points = swiss_roll(600, 4)
ref = write("ref.h5", points[:500])
new = write("new.h5", points[500:])
wide = write("wide.h5", np.hstack([points[500:], points[500:, :1]]))
base = ["--k", "8", "--landmarks", "40", "--no-score", "--quiet"]
succeeds("embed with --keep-geodesics", ["embed", ref, "-o", path("map.h5"), "--keep-geodesics",
                                         *base])
succeeds("embed without", ["embed", ref, "-o", path("plain.h5"), *base])
succeeds("embed with --scale standard",
         ["embed", ref, "-o", path("scaled.h5"), "--keep-geodesics", "--scale", "standard",
          *base])

# Refusals: exit code, one line naming the culprit, nothing written under out/.
placed = os.path.join(out, "placed.h5")
refused("map without --keep-geodesics", ["place", "--map", path("plain.h5"), new, "-o", placed],
        65, ["plain.h5", "--keep-geodesics"], out)
refused("new points of another width", ["place", "--map", path("map.h5"), wide, "-o", placed],
        65, ["wide.h5", "4 columns", "3"], out)
refused("--block-rows 0", ["place", "--map", path("map.h5"), new, "-o", placed, "--block-rows",
                           "0"], 64, ["--block-rows"], out)
refused("--k 0", ["place", "--map", path("map.h5"), new, "-o", placed, "--k", "0"], 64,
        ["--k"], out)
refused("--k above the map's points",
        ["place", "--map", path("map.h5"), new, "-o", placed, "--k", "501"], 64, ["k", "500"], out)
refused("output in a missing folder",
        ["place", "--map", path("map.h5"), new, "-o", os.path.join(out, "no", "p.h5")], 73,
        ["p.h5"], out)
refused("missing map", ["place", "--map", path("none.h5"), new, "-o", placed], 66, ["none.h5"],
        out)
refused("not a map", ["place", "--map", new, new, "-o", placed], 65, ["new.h5"], out)

# The placed file is a map like any other.
succeeds("place", ["place", "--map", path("map.h5"), new, "-o", placed, "--json",
                   os.path.join(out, "placed.json")])
with h5py.File(placed, "r") as f:
    check("placed map: one row per new point", f["/coords"].shape == (100, 2),
          str(f["/coords"].shape))
    check("placed map: rows and diagnostics", f["/rows"].shape == (100,) and
          f["/placement/nearest_ratio"].shape == (100,), str(list(f["/placement"])))
# The /placement datasets have the types io/map_record.hpp and README "The map file" document.
with h5py.File(path("map.h5"), "r") as f:
    tri, mu = f["/placement/triangulation"], f["/placement/landmark_mean_squared"]
    check("map: triangulation m x L float64", tri.shape == (2, 40) and tri.dtype == np.float64,
          f"{tri.shape} {tri.dtype}")
    check("map: landmark_mean_squared L float64", mu.shape == (40,) and mu.dtype == np.float64,
          f"{mu.shape} {mu.dtype}")
    check("map: no placed-map diagnostics", "nearest_ratio" not in f["/placement"],
          str(list(f["/placement"])))
with h5py.File(placed, "r") as f:
    ratio, far = f["/placement/nearest_ratio"], f["/placement/far_rows"]
    check("placed map: nearest_ratio float32, far_rows int64",
          ratio.dtype == np.float32 and far.dtype == np.int64 and far.ndim == 1,
          f"{ratio.dtype} {far.dtype} {far.shape}")
    check("placed map: ratio attributes", ratio.attrs["far_ratio"] == 3.0 and
          ratio.attrs["typical_distance"] > 0 and far.attrs["far_ratio"] == 3.0,
          str(dict(ratio.attrs)))
    far_rows = set(far[...].tolist())
    check("placed map: far_rows are the input rows above far_ratio",
          far_rows == set(f["/rows"][...][ratio[...] > 3.0].tolist()), str(sorted(far_rows)))
    with h5py.File(path("map.h5"), "r") as g:
        same_centres = np.array_equal(f["/input/centres"][...], g["/input/centres"][...])
    check("placed map: no triangulation; the map's centres; int64 dropped rows",
          "triangulation" not in f["/placement"] and same_centres and
          f["/input/dropped_nonfinite_rows"].dtype == np.int64,
          str(list(f["/placement"])) + str(list(f["/input"])))

# Blocks and --rows: the same coordinates whatever the block size, rows kept as input rows.
small = os.path.join(out, "small_blocks.h5")
succeeds("place in blocks of 7", ["place", "--map", path("map.h5"), new, "-o", small,
                                  "--block-rows", "7", "--quiet"])
part = os.path.join(out, "part.h5")
succeeds("place --rows 10:95", ["place", "--map", path("map.h5"), new, "-o", part, "--rows",
                                "10:95", "--block-rows", "20", "--quiet"])
with h5py.File(placed, "r") as f, h5py.File(small, "r") as g, h5py.File(part, "r") as h:
    whole = f["/coords"][...]
    check("blocks of 7 give the same bytes", np.array_equal(whole, g["/coords"][...]),
          "coordinates differ")
    check("--rows 10:95 gives those rows", np.array_equal(h["/rows"][...], np.arange(10, 95))
          and np.array_equal(h["/coords"][...], whole[10:95]), str(h["/rows"][:5]))
r = succeeds("score reads the placed map", ["score", placed, "--points", new, "--quiet"])
# --dataset: inspect on main treats a map as a point file with several 2-D datasets.
r = succeeds("inspect reads the placed map", ["inspect", placed, "--dataset", "/coords"])
check("inspect shows the placed coordinates", "100" in r.stdout, r.stdout[-300:])

# The recorded preprocessing: the map's points placed again land on their rows.
again = os.path.join(out, "again.h5")
succeeds("place into a scaled map", ["place", "--map", path("scaled.h5"), ref, "-o", again,
                                     "--quiet"])
with h5py.File(path("scaled.h5"), "r") as f, h5py.File(again, "r") as g:
    m, rows = f["/coords"][...], f["/rows"][...]
    err = np.abs(g["/coords"][...][rows] - m).max() / np.abs(m).max()
check("scaled map: its points placed again return their coordinates", err < 1e-5,
      f"largest difference {err:.2e}")

# A map of part of a file (--rows): its reference points are those rows of the file.
whole = write("whole.h5", points)
succeeds("embed --rows 50:550", ["embed", whole, "--rows", "50:550", "-o", path("part_map.h5"),
                                 "--keep-geodesics", *base])
again = os.path.join(out, "again_part.h5")
succeeds("place into a map of --rows 50:550",
         ["place", "--map", path("part_map.h5"), whole, "--rows", "100:200", "-o", again,
          "--quiet"])
with h5py.File(path("part_map.h5"), "r") as f, h5py.File(again, "r") as g:
    m, rows = f["/coords"][...], f["/rows"][...]
    at = {r: i for i, r in enumerate(rows)}
    mine = np.array([at[r] for r in g["/rows"][...]])
    err = np.abs(g["/coords"][...] - m[mine]).max() / np.abs(m).max()
check("--rows map: its points placed again return their coordinates", err < 1e-5,
      f"largest difference {err:.2e}")

# The reference points changed since the map was made, or went missing.
os.rename(ref, path("ref_moved.h5"))
refused("reference points missing", ["place", "--map", path("map.h5"), new, "-o", placed], 66,
        ["ref.h5", "--reference"], out)
succeeds("--reference names the moved file", ["place", "--map", path("map.h5"), new, "-o",
                                              os.path.join(out, "moved.h5"), "--reference",
                                              path("ref_moved.h5"), "--quiet"])
write("ref.h5", points[:500] + np.float32(0.5))
os.utime(path("ref.h5"), (1e9, 1e9))
refused("reference points changed", ["place", "--map", path("map.h5"), new, "-o", placed], 65,
        ["ref.h5", "not the point file"], out)

finish(work)
