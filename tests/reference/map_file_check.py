"""Map file, edge list, distance matrix and CSV interchange, checked against outside readers.

Outside references (Debian 12 packages):
  - h5py 3.7 (python3-h5py) reads the map files unfurl writes, and writes map-shaped files,
    edge lists and distance matrices that unfurl must read; it also reads the version-1 maps
    in tests/data (written by the release at main c42f544, see make_v1_maps.sh) to compare
    with what unfurl's reader makes of them;
  - numpy 1.24 (python3-numpy): numpy.save writes the .npy distance matrices, and
    numpy.float32(text) parses the CSV coordinates (a float32 parse independent of ours).
The expected values of the probe's synthetic map are computed here from the formulas
documented in tests/reference/map_probe.cpp, not taken from the probe's output.
Driven through the map_probe program in $UNFURL_PROBE_DIR. Exits non-zero on any mismatch.
"""

import json
import math
import os
import re
import subprocess
import sys
import tempfile

import h5py
import numpy as np

PROBE = os.path.join(os.environ["UNFURL_PROBE_DIR"], "map_probe")
failures = []
checks = 0


def check(what, ok, detail=""):
    global checks
    checks += 1
    print(("ok   " if ok else "FAIL ") + what + ("" if ok else ": " + detail))
    if not ok:
        failures.append(what)


def probe(*args, expect_ok=True):
    r = subprocess.run([PROBE, *args], capture_output=True, text=True, timeout=120)
    if expect_ok and r.returncode != 0:
        raise SystemExit(f"map_probe {' '.join(args)} failed ({r.returncode}): {r.stderr}")
    return r


def same_array(what, got, want):
    got, want = np.asarray(got), np.asarray(want)
    ok = got.shape == want.shape and np.array_equal(got, want)
    check(what, ok, f"shape {got.shape} vs {want.shape}" if got.shape != want.shape else
          f"first difference at {np.argwhere(got != want)[:1].tolist()}")


def expected_synthetic():
    """The probe's synthetic map, from the formulas in map_probe.cpp (IEEE 754 rounding)."""
    n, m, l = 37, 3, 5
    i = np.arange(n, dtype=np.float32)[:, None]
    k = np.arange(m, dtype=np.float32)[None, :]
    coords = (i * np.float32(0.25) - k * np.float32(1.5)) + \
        (np.arange(n) % 3).astype(np.float32)[:, None] * np.float32(0.125)
    rows = 10 * np.arange(n, dtype=np.int64) + 3
    lrows = rows[7 * np.arange(l)]
    lcoords = np.array([[(j + 1) / 3.0 + kk / 7.0 for kk in range(m)] for j in range(l)])
    geo = np.array([[abs(np.float32(ii) - np.float32(7 * j)) * np.float32(0.5)
                     for ii in range(n)] for j in range(l)], dtype=np.float32)
    spectrum = np.array([10.0 / (j + 1) for j in range(l)])
    return coords.astype(np.float32), rows, lrows, lcoords, geo, spectrum


def check_written_map(tmp):
    """unfurl writes, h5py reads: layout, types and attributes as documented."""
    path = os.path.join(tmp, "written.h5")
    probe("write-map", path, "--geodesic")
    coords, rows, lrows, lcoords, geo, spectrum = expected_synthetic()
    with h5py.File(path, "r") as f:
        check("h5py: /coords is float32 N x m", f["coords"].dtype == np.float32
              and f["coords"].shape == (37, 3))
        same_array("h5py: /coords values", f["coords"][...], coords)
        check("h5py: /rows is int64", f["rows"].dtype == np.int64)
        same_array("h5py: /rows values", f["rows"][...], rows)
        same_array("h5py: /landmarks/rows", f["landmarks/rows"][...], lrows)
        check("h5py: /landmarks/coords is float64", f["landmarks/coords"].dtype == np.float64)
        same_array("h5py: /landmarks/coords", f["landmarks/coords"][...], lcoords)
        check("h5py: /landmarks/geodesic is float32 L x N",
              f["landmarks/geodesic"].dtype == np.float32 and f["landmarks/geodesic"].shape == (5, 37))
        same_array("h5py: /landmarks/geodesic", f["landmarks/geodesic"][...], geo)
        same_array("h5py: /landmarks/nodes", f["landmarks/nodes"][...], 7 * np.arange(5))
        same_array("h5py: /spectrum", f["spectrum"][...], spectrum)
        check("h5py: spectrum descending", bool(np.all(np.diff(f["spectrum"][...]) < 0)))
        t = f["quality/trustworthiness"]
        same_array("h5py: /quality/trustworthiness", t[...], [0.9, 0.8])
        same_array("h5py: trustworthiness attribute k", t.attrs["k"], [5, 10])
        check("h5py: trustworthiness attribute method", t.attrs["method"] == "exact")
        check("h5py: trustworthiness attribute sample_size", int(t.attrs["sample_size"]) == 37)
        check("h5py: /graph/mean_degree scalar", f["graph/mean_degree"].shape == ()
              and f["graph/mean_degree"][()] == 4.5)
        a = f.attrs
        check("h5py: format_version is integer 2",
              isinstance(a["format_version"], np.integer) and a["format_version"] == 2)
        # The record's groups: ids int64 (2^53 + 1 is no float64 whole number), as documented in
        # io/map_record.hpp; values as map_probe.cpp sets them.
        huge = 2**53 + 1
        for name, want in [("graph/dropped_rows", [huge, 5]), ("graph/component_sizes", [37, 2]),
                           ("graph/degree", [4, 6, 9]), ("graph/bridge_rows", [[3, huge]]),
                           ("quality/k6/scored_rows", [1, 4, 36]),
                           ("input/dropped_nonfinite_rows", [huge])]:
            check(f"h5py: /{name} is int64", f[name].dtype == np.int64, str(f[name].dtype))
            check(f"h5py: /{name} values", f[name][()].tolist() == want, repr(f[name][()]))
        same_array("h5py: /graph/bridge_lengths", f["graph/bridge_lengths"][()], [2.5])
        same_array("h5py: /graph/edge_length", f["graph/edge_length"][()], [0.5, 0.75, 1, 1.25, 2])
        t6 = f["quality/k6/trustworthiness"]
        check("h5py: /quality/k6/trustworthiness scalar with attributes",
              t6.shape == () and t6[()] == 0.875 and int(t6.attrs["k"]) == 6
              and t6.attrs["method"] == "sampled" and list(t6.attrs["interval_95"]) == [0.8, 0.9])
        same_array("h5py: /quality/k6/continuity_terms", f["quality/k6/continuity_terms"][()],
                   [0.0, 0.375, 1.0])
        same_array("h5py: /input/centres", f["input/centres"][()], [1.5, 2.5, -0.5])
        check("h5py: program_version is a version string",
              re.fullmatch(r"\d+\.\d+\.\d+", a["program_version"]) is not None,
              repr(a["program_version"]))
        check("h5py: creation_time is UTC ISO 8601",
              re.fullmatch(r"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\dZ", a["creation_time"]) is not None)
        check("h5py: host is a string", isinstance(a["host"], str) and len(a["host"]) > 0)
        check("h5py: peak_memory_bytes > 0", int(a["peak_memory_bytes"]) > 0)
        check("h5py: seed", int(a["seed"]) == 42)
        params = json.loads(a["parameters"])
        check("h5py: parameters JSON", params == {"k": 8, "pick": "maxmin", "radius": 0.75},
              repr(params))
        check("h5py: parameters.k attribute", int(a["parameters.k"]) == 8)
        check("h5py: parameters.pick attribute", a["parameters.pick"] == "maxmin")
        check("h5py: parameters.radius attribute", float(a["parameters.radius"]) == 0.75)
        check("h5py: input identity", json.loads(a["input"])["bytes"] == 1234
              and a["input.path"] == "/data/buoys.h5" and a["input.modified"].endswith("Z"))
        check("h5py: stage_times.geodesic", float(a["stage_times.geodesic"]) == 1.25)


def check_read_map(tmp):
    """h5py writes a map-shaped file (old file format, gzip, mixed attribute types); we read."""
    rng = np.random.default_rng(7)
    n, m, l = 50, 2, 4
    coords = rng.normal(size=(n, m)).astype(np.float32)
    rows = rng.permutation(1000)[:n].astype(np.int64)
    lc = rng.normal(size=(l, m))
    geo = rng.uniform(0, 9, size=(l, n)).astype(np.float32)
    spectrum = np.sort(rng.uniform(1, 5, size=l))[::-1].copy()
    curve = rng.uniform(size=6)
    path = os.path.join(tmp, "from_h5py.h5")
    with h5py.File(path, "w") as f:
        f.create_dataset("coords", data=coords, chunks=(10, 2), compression="gzip")
        f["rows"] = rows
        f["landmarks/rows"] = rows[:l]
        f["landmarks/coords"] = lc
        f["landmarks/geodesic"] = geo
        f["landmarks/nodes"] = np.arange(l, dtype=np.uint32)
        f["spectrum"] = spectrum
        f["quality/continuity"] = curve
        f["quality/continuity"].attrs["k"] = np.int64(12)
        f["quality/continuity"].attrs["method"] = "sampled"
        f.attrs["format_version"] = np.int64(1)
        f.attrs["seed"] = np.int64(-3)
        f.attrs["note"] = "written by h5py"
        f.attrs["label"] = np.bytes_(b"fixed-length")
        f.attrs["scale"] = 0.1
        f.attrs["parameters"] = json.dumps({"k": 12, "dims": 2})
        f.attrs["parameters.k"] = np.int64(12)
        f.attrs["parameters.dims"] = np.int64(2)
    got = json.loads(probe("read-map", path, "--geodesic").stdout)
    check("probe: coords shape", (got["coords"]["rows"], got["coords"]["cols"]) == (n, m))
    same_array("probe: coords values (float32 exact)",
               np.array(got["coords"]["values"], dtype=np.float32).reshape(n, m), coords)
    same_array("probe: rows", got["rows"], rows)
    same_array("probe: landmark rows", got["landmark_rows"], rows[:l])
    same_array("probe: landmark coords", np.array(got["landmark_coords"]).reshape(l, m), lc)
    same_array("probe: geodesic", np.array(got["geodesic"]["values"], dtype=np.float32)
               .reshape(l, n), geo)
    same_array("probe: geodesic sources", got["geodesic"]["sources"], np.arange(l))
    same_array("probe: spectrum", got["spectrum"], spectrum)
    extras = {e["path"]: e for e in got["extras"]}
    check("probe: one extra, /quality/continuity", list(extras) == ["/quality/continuity"],
          repr(list(extras)))
    same_array("probe: continuity values", extras["/quality/continuity"]["values"], curve)
    check("probe: continuity attributes",
          extras["/quality/continuity"]["attributes"] == {"k": 12, "method": "sampled"},
          repr(extras["/quality/continuity"]["attributes"]))
    a = got["attributes"]
    check("probe: integer, str, fixed-length and float attributes",
          a["seed"] == -3 and a["note"] == "written by h5py" and a["label"] == "fixed-length"
          and a["scale"] == 0.1, repr(a))
    check("probe: parameters folded into an object", a["parameters"] == {"k": 12, "dims": 2},
          repr(a.get("parameters")))
    check("probe: no geodesic unless asked",
          "geodesic" not in json.loads(probe("read-map", path).stdout))

    # Rejections: a newer format, a file without /coords.
    with h5py.File(os.path.join(tmp, "newer.h5"), "w") as f:
        f["coords"] = coords
        f["rows"] = rows
        f.attrs["format_version"] = np.int64(7)
    r = probe("read-map", os.path.join(tmp, "newer.h5"), expect_ok=False)
    check("probe: newer format version refused (exit 65)",
          r.returncode == 65 and "format version 7, this reads up to 2" in r.stderr, r.stderr)
    with h5py.File(os.path.join(tmp, "nocoords.h5"), "w") as f:
        f["rows"] = rows
        f.attrs["format_version"] = np.int64(1)
    r = probe("read-map", os.path.join(tmp, "nocoords.h5"), expect_ok=False)
    check("probe: missing /coords refused (exit 66)", r.returncode == 66 and "/coords" in r.stderr,
          r.stderr)


FIXTURES = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "data")
ID_DATASETS = ["graph/dropped_rows", "graph/component_sizes", "graph/degree",
               "input/dropped_nonfinite_rows"]


def attrs_of(obj):
    return {k: (v.tolist() if isinstance(v, np.ndarray) else v.item() if hasattr(v, "item") else v)
            for k, v in obj.attrs.items()}


def check_v1_fixture(tmp, name):
    """A real version-1 map (tests/data/make_v1_maps.sh) read by h5py and by our reader: every
    field the same; copied to version 2 by our writer, h5py sees the documented types and the
    same values."""
    v1 = os.path.join(FIXTURES, name)
    got = json.loads(probe("read-map", v1, "--geodesic").stdout)
    with h5py.File(v1, "r") as f:
        check(f"{name}: h5py sees format_version 1", int(f.attrs["format_version"]) == 1)
        n, m = f["coords"].shape
        same_array(f"{name}: coords", np.array(got["coords"]["values"], dtype=np.float32)
                   .reshape(n, m), f["coords"][()])
        same_array(f"{name}: rows", got["rows"], f["rows"][()])
        same_array(f"{name}: landmark rows", got["landmark_rows"], f["landmarks/rows"][()])
        same_array(f"{name}: landmark coords", np.array(got["landmark_coords"])
                   .reshape(f["landmarks/coords"].shape), f["landmarks/coords"][()])
        if "landmarks/geodesic" in f:
            same_array(f"{name}: geodesic", np.array(got["geodesic"]["values"], dtype=np.float32)
                       .reshape(f["landmarks/geodesic"].shape), f["landmarks/geodesic"][()])
            same_array(f"{name}: geodesic sources", got["geodesic"]["sources"],
                       f["landmarks/nodes"][()])
        same_array(f"{name}: spectrum", got["spectrum"], f["spectrum"][()])
        check(f"{name}: spectrum attributes", got["spectrum_attributes"] == attrs_of(f["spectrum"]),
              repr(got["spectrum_attributes"]))
        g = got["graph"]
        for key in ["dropped_rows", "component_sizes", "degree"]:
            want = f["graph/" + key][()]
            check(f"{name}: /graph/{key} float64 whole numbers -> int64",
                  want.dtype == np.float64 and g[key] == want.astype(np.int64).tolist()
                  and np.array_equal(np.array(g[key], dtype=np.float64), want), repr(g[key]))
        same_array(f"{name}: edge_length", g["edge_length"], f["graph/edge_length"][()])
        want_bridges = f["graph/bridges"][()] if "graph/bridges" in f else np.zeros((0, 3))
        check(f"{name}: bridges B x 3 float64 -> rows and lengths",
              [[float(v) for v in b] for b in g["bridges"]] == want_bridges.tolist(),
              repr(g["bridges"]))
        for s in got["quality"]["by_k"]:
            base = f"quality/k{s['k']}/"
            for score in ["trustworthiness", "continuity", "knn_preservation"]:
                a = attrs_of(f[base + score])
                check(f"{name}: {base}{score} value and attributes",
                      s[score] == f[base + score][()] and s[score + "_95"] == a["interval_95"]
                      and s["method"] == a["method"] and s["sample_size"] == a["sample_size"]
                      and s["interval_method"] == a["interval_method"] and s["k"] == a["k"])
            same_array(f"{name}: {base}scored_rows", s["scored_rows"],
                       f[base + "scored_rows"][()].astype(np.int64))
            for terms in ["trustworthiness_terms", "continuity_terms"]:
                same_array(f"{name}: {base}{terms}", s[terms], f[base + terms][()])
        check(f"{name}: one score per /quality/kK group",
              sorted(f"k{s['k']}" for s in got["quality"]["by_k"])
              == sorted(k for k in f["quality"] if k.startswith("k")))
        r, a = got["quality"]["residual_variance"], attrs_of(f["quality/residual_variance"])
        check(f"{name}: residual variance", r["by_dims"] == f["quality/residual_variance"][()]
              .tolist() and r["pairs"] == a["pairs"] and r["drawn"] == a["drawn"]
              and r["sampled"] == bool(a["sampled"]))
        d, a = got["quality"]["intrinsic_dimension"], attrs_of(f["quality/intrinsic_dimension"])
        check(f"{name}: intrinsic dimension", d["estimate"] == f["quality/intrinsic_dimension"][()]
              and all(d[k] == a[k] for k in ["k", "method", "averaging", "points", "points_used"]))
        x, a = got["quality"]["axis_share"], attrs_of(f["quality/axis_share"])
        check(f"{name}: axis share", x["share"] == f["quality/axis_share"][()].tolist()
              and x["basis"] == a["basis"] and x["standard_error"] == a["standard_error"])
        if "preprocess" in f:
            p, a = got["preprocess"], attrs_of(f["preprocess/centre"])
            check(f"{name}: preprocess attributes", p["scale"] == a["scale"]
                  and p["metric"] == a["metric"] and p["components"] == a["components"]
                  and p["variance_kept"] == a["variance_kept"])
            for key in ["centre", "spread", "pca_mean", "variances"]:
                same_array(f"{name}: /preprocess/{key}", p[key], f["preprocess/" + key][()])
            same_array(f"{name}: /preprocess/axes", p["axes"], f["preprocess/axes"][()].ravel())
        else:
            check(f"{name}: no preprocess", "preprocess" not in got)
        same_array(f"{name}: input centres", got["input"]["centres"], f["input/centres"][()])
        same_array(f"{name}: dropped non-finite rows", got["input"]["dropped_nonfinite_rows"],
                   f["input/dropped_nonfinite_rows"][()].astype(np.int64))
        check(f"{name}: no extras", got["extras"] == [], repr(got["extras"]))

        # Version 2 written from it: the documented types, every value the same.
        v2 = os.path.join(tmp, "v2-" + name)
        probe("copy-map", v1, v2)
        with h5py.File(v2, "r") as h:
            check(f"{name} as v2: format_version 2", int(h.attrs["format_version"]) == 2)
            seen1, seen2 = set(), set()
            f.visit(seen1.add)
            h.visit(seen2.add)
            moved = {"graph/bridges"} if "graph/bridges" in f else set()
            added = {"graph/bridge_rows", "graph/bridge_lengths"} if moved else set()
            check(f"{name} as v2: the same datasets but the bridges", seen2 == (seen1 - moved) | added,
                  repr(sorted(seen1 ^ seen2)))
            for path in sorted(seen1 & seen2):
                if not isinstance(f[path], h5py.Dataset):
                    continue
                ids = path in ID_DATASETS or path.endswith("/scored_rows")
                want_type = np.int64 if ids else f[path].dtype
                check(f"{name} as v2: /{path} type {np.dtype(want_type)}",
                      h[path].dtype == want_type, str(h[path].dtype))
                check(f"{name} as v2: /{path} values", np.array_equal(
                    h[path][()].astype(np.float64) if ids else h[path][()], f[path][()]))
                check(f"{name} as v2: /{path} attributes", attrs_of(h[path]) == attrs_of(f[path]),
                      repr(attrs_of(h[path])))
            if moved:
                same_array(f"{name} as v2: bridge rows", h["graph/bridge_rows"][()],
                           f["graph/bridges"][()][:, :2].astype(np.int64))
                same_array(f"{name} as v2: bridge lengths", h["graph/bridge_lengths"][()],
                           f["graph/bridges"][()][:, 2])
            root1, root2 = attrs_of(f), attrs_of(h)
            stamp = {"format_version", "program_version"}
            check(f"{name} as v2: root attributes kept",
                  {k: v for k, v in root1.items() if k not in stamp}
                  == {k: v for k, v in root2.items() if k not in stamp})


def check_edges(tmp):
    """Edge lists written here (CSV text, h5py) read exactly by the probe."""
    rng = np.random.default_rng(11)
    e = 400
    i = rng.integers(0, 120, size=e)
    j = (i + 1 + rng.integers(0, 50, size=e)) % 130
    length = rng.exponential(2.0, size=e)
    path = os.path.join(tmp, "edges.csv")
    with open(path, "w") as f:
        f.write("# cables between buoys\nfrom,to,metres\n")
        for a, b, w in zip(i, j, length):
            f.write(f"{a},{b},{repr(float(w))}\n")
        f.write("7,7,0.0\n")  # a zero-length self loop: dropped
    got = json.loads(probe("read-edges", path).stdout)
    want32 = length.astype(np.float32)  # numpy's float64 -> float32 rounding
    check("edges csv: count and node count",
          len(got["from"]) == e and got["nodes"] == int(max(i.max(), j.max())) + 1
          and got["dropped_self_loops"] == 1)
    same_array("edges csv: from", got["from"], i)
    same_array("edges csv: to", got["to"], j)
    same_array("edges csv: lengths (float32 exact)", np.array(got["length"], dtype=np.float32),
               want32)

    h5 = os.path.join(tmp, "edges.h5")
    with h5py.File(h5, "w") as f:
        f["edges/i"] = i.astype(np.int32)
        f["edges/j"] = j.astype(np.int64)
        f["edges/length"] = length.astype(np.float32)
        f["table"] = np.column_stack([i, j, length])
    got = json.loads(probe("read-edges", h5).stdout)
    same_array("edges h5py: from", got["from"], i)
    same_array("edges h5py: lengths", np.array(got["length"], dtype=np.float32), want32)
    got = json.loads(probe("read-edges", h5, "--table", "/table").stdout)
    same_array("edges h5py table: to", got["to"], j)
    same_array("edges h5py table: lengths", np.array(got["length"], dtype=np.float32), want32)

    bad = os.path.join(tmp, "bad.csv")
    with open(bad, "w") as f:
        f.write("0,1,1.0\n1,2,-3.0\n")
    r = probe("read-edges", bad, expect_ok=False)
    check("edges: negative length refused with its line (exit 65)",
          r.returncode == 65 and "bad.csv: line 2" in r.stderr, r.stderr)


def check_distances(tmp):
    """Distance matrices from numpy.save, h5py and CSV text, NaN and a sentinel as missing."""
    rng = np.random.default_rng(5)
    n = 30
    pts = rng.normal(size=(n, 3))
    d = np.sqrt(((pts[:, None, :] - pts[None, :, :]) ** 2).sum(-1))
    mask = np.triu(rng.uniform(size=(n, n)) < 0.3, 1)
    mask = mask | mask.T
    d[mask] = np.nan
    want = d.astype(np.float32)
    missing_pairs = int(np.triu(mask, 1).sum())

    def compare(tag, got):
        vals = np.array([np.nan if v is None else v for v in got["values"]],
                        dtype=np.float32).reshape(got["n"], got["n"])
        check(f"{tag}: n and missing pairs", got["n"] == n and got["missing_pairs"] == missing_pairs)
        check(f"{tag}: missing where NaN", bool(np.array_equal(np.isnan(vals), np.isnan(want))))
        same_array(f"{tag}: present values (float32 exact)", vals[~np.isnan(want)],
                   want[~np.isnan(want)])

    for dtype in (np.float64, np.float32):
        p = os.path.join(tmp, f"d_{np.dtype(dtype).name}.npy")
        np.save(p, d.astype(dtype))
        compare(f"distances numpy.save {np.dtype(dtype).name}",
                json.loads(probe("read-distances", p).stdout))
    p = os.path.join(tmp, "d.h5")
    with h5py.File(p, "w") as f:
        f["distances"] = d
    compare("distances h5py", json.loads(probe("read-distances", p).stdout))
    p = os.path.join(tmp, "d.csv")
    with open(p, "w") as f:
        for row in d:
            f.write(",".join("-1" if math.isnan(v) else repr(float(v)) for v in row) + "\n")
    compare("distances csv, sentinel -1",
            json.loads(probe("read-distances", p, "--missing", "-1").stdout))
    asym = d.copy()
    asym[np.isnan(asym)] = 1.0
    asym[3, 8] += 0.5
    p = os.path.join(tmp, "asym.npy")
    np.save(p, asym)
    r = probe("read-distances", p, expect_ok=False)
    check("distances: asymmetry refused naming the pair (exit 65)",
          r.returncode == 65 and "entry (3, 8)" in r.stderr and "entry (8, 3)" in r.stderr,
          r.stderr)
    np.save(os.path.join(tmp, "fortran.npy"), np.asfortranarray(asym))
    r = probe("read-distances", os.path.join(tmp, "fortran.npy"), expect_ok=False)
    # Fortran order is read as numpy reads it (one NPY reader for points and matrices): the
    # same asymmetric pair, with numpy's values for both entries.
    want = (f"entry (3, 8) = {np.float32(asym[3, 8]):.9g}", f"entry (8, 3) = {np.float32(asym[8, 3]):.9g}")
    check("distances: Fortran-order npy read as numpy reads it",
          r.returncode == 65 and all(w in r.stderr for w in want), r.stderr)


def check_csv(tmp):
    """CSV coordinates parse back bit for bit with numpy's own float32 parsing."""
    csv_path, raw_path = os.path.join(tmp, "map.csv"), os.path.join(tmp, "map.raw")
    probe("write-csv", csv_path, raw_path)
    raw = np.fromfile(raw_path, dtype=np.uint8)
    rows, cols = np.frombuffer(raw[:16].tobytes(), dtype="<u8")
    values = np.frombuffer(raw[16:].tobytes(), dtype="<f4").reshape(int(rows), int(cols))
    with open(csv_path) as f:
        lines = f.read().splitlines()
    check("csv: header row,x1..x4", lines[0] == "row,x1,x2,x3,x4", lines[0])
    fields = [line.split(",") for line in lines[1:]]
    check("csv: one line per point, 5 fields", len(fields) == rows
          and all(len(x) == 5 for x in fields))
    same_array("csv: row indices", [int(x[0]) for x in fields], 5 * np.arange(int(rows)))
    parsed = np.array([[np.float32(v) for v in x[1:]] for x in fields], dtype=np.float32)
    same_array("csv: values bit for bit (numpy float32 parse)", parsed.view(np.uint32),
               values.view(np.uint32))
    # Shortest: no token longer than the shortest round-trip digits (numpy's
    # format_float_scientific(unique=True)) written as printf's %e would (two-digit exponent);
    # std::to_chars may pick fixed notation when it is no longer than that.
    longer = [(t, np.format_float_scientific(v, unique=True, trim="-", exp_digits=2))
              for x, row in zip(fields, values) for t, v in zip(x[1:], row)
              if len(t) > len(np.format_float_scientific(v, unique=True, trim="-", exp_digits=2))]
    check("csv: every token is a shortest round-trip form", not longer, repr(longer[:3]))


def main():
    with tempfile.TemporaryDirectory(prefix="unfurl-map-check-") as tmp:
        check_written_map(tmp)
        check_read_map(tmp)
        check_v1_fixture(tmp, "v1-dropped.h5")
        check_v1_fixture(tmp, "v1-bridged.h5")
        check_edges(tmp)
        check_distances(tmp)
        check_csv(tmp)
    print(f"{checks - len(failures)} of {checks} checks passed")
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
