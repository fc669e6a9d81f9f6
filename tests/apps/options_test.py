"""End-to-end tests of option checking: an option that a run would not use is refused (exit
64) naming the option, its value as typed and the reason, never ignored or recorded in the
map; numbers are refused as typed (--k -1 says -1, not 2^64 - 1); --seed is a whole number
from 0 to 2^63 - 1 stored as an integer, so a run repeats from its map; `score` refuses points
other than the map's recorded input unless --points-changed-ok; `demo` checks its options and
its memory need before it writes anything. Every refusal is one line on stderr and leaves the
work folder byte-identical (SHA-256 of every file before and after).

Run by ctest as cli.options_test with env UNFURL_BIN. The helpers (run, refused, snapshot,
...) come from cli_support.py; write_h5 from cli_test.py. Inputs are written with h5py 3.7, numpy 1.24 and SciPy 1.10
(Debian python3-h5py, python3-numpy, python3-scipy): a writer other than ours. The seed's
type is read back with h5py: an HDF5 64-bit signed integer attribute holds 0..2^63 - 1
exactly (HDF5 predefined type H5T_STD_I64LE). Exits non-zero when any check fails.
"""

import json
import os
import subprocess
import sys
import tempfile

import h5py
import numpy as np
from scipy.spatial import cKDTree
from scipy.spatial.distance import cdist

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from cli_support import (check, failures, finish, messages, refused, run, snapshot,  # noqa: E402
                         snapshot_diff, succeeds, swiss_roll)
from cli_test import write_h5  # noqa: E402

N = 300


def one_line_naming(what, r, code, names):
    """A run that succeeds or fails as asked with one stderr line holding every name."""
    lines = messages(r.stderr)
    missing = [n for n in names if n not in r.stderr]
    check(what, r.returncode == code and len(lines) == 1 and not missing,
          f"exit {r.returncode}, lines {len(lines)}, lacks {missing}; stderr {r.stderr.strip()!r}")


def main():
    work = tempfile.mkdtemp(prefix="unfurl-options-test-")
    d = lambda name: os.path.join(work, name)  # noqa: E731

    points = swiss_roll(N, 7)
    roll = d("roll.h5")
    write_h5(roll, points=points)
    write_h5(d("other.h5"), points=swiss_roll(N, 8))  # same shape, other points
    np.save(d("roll.npy"), points)
    # A kNN edge list (k = 10, scipy cKDTree) and a distance matrix with missing pairs.
    dist, nearest = cKDTree(points).query(points, k=11)
    with open(d("edges.csv"), "w") as f:
        for i in range(N):
            for j, length in zip(nearest[i, 1:], dist[i, 1:]):
                f.write(f"{i},{j},{length!r}\n")
    table = np.array([[i, j, length] for i in range(N)
                      for j, length in zip(nearest[i, 1:], dist[i, 1:])])
    write_h5(d("edges.h5"), table=table)
    square = cdist(points[:80], points[:80]).astype(np.float32)
    square[square > np.quantile(square, 0.3)] = np.nan  # keep the near pairs only
    np.fill_diagonal(square, 0)
    np.save(d("distances.npy"), square)
    write_h5(d("distances.h5"), matrix=square)

    os.mkdir(d("out"))
    good_map, good_json = d("out/map.h5"), d("out/score.json")
    succeeds("embed a good map", ["embed", roll, "-o", good_map, "--quiet"])
    succeeds("graph a good graph", ["graph", roll, "-o", d("graph.h5"), "--quiet"])
    succeeds("score a good map", ["score", good_map, "--points", roll, "--json", good_json,
                                  "--quiet"])
    if failures:
        sys.exit("the good runs failed; nothing to compare against")

    # 1. Options a given graph does not use, per input kind, each refused with its value.
    graph_inputs = {"edges": d("edges.csv"), "distances": d("distances.npy"),
                    "graph": d("graph.h5")}
    unused_with_graph = [["--rows", "0:10"], ["--drop-nonfinite"], ["--k", "5"],
                         ["--radius", "1.5"], ["--mutual"], ["--search", "tree"],
                         ["--keep-duplicates"], ["--scale", "standard"], ["--metric", "cosine"],
                         ["--pre-pca", "2"], ["--linear"], ["--score-k", "5"],
                         ["--score-method", "exact"], ["--sample", "10"]]
    for kind, source in graph_inputs.items():
        base = ["embed", source, "--input-kind", kind, "-o", good_map]
        for option in unused_with_graph:
            refused(f"embed --input-kind {kind} {' '.join(option)}", base + option, 64,
                    [" ".join(option), f"--input-kind {kind}"], work)
        refused(f"embed --input-kind {kind} --node-order tree-leaves",
                base + ["--node-order", "tree-leaves"], 64,
                ["--node-order tree-leaves", f"--input-kind {kind}"], work)
        if kind != "distances":
            refused(f"embed --input-kind {kind} --missing -1", base + ["--missing", "-1"], 64,
                    ["--missing -1", f"--input-kind {kind}"], work)
    refused("embed --input-kind graph --dataset", ["embed", d("graph.h5"), "--input-kind", "graph",
                                              "--dataset", "/graph", "-o", good_map], 64,
            ["--dataset /graph", "--input-kind graph"], work)
    refused("embed --input-kind graph --format", ["embed", d("graph.h5"), "--input-kind", "graph",
                                             "--format", "hdf5", "-o", good_map], 64,
            ["--format hdf5", "--input-kind graph"], work)
    refused("embed --input-kind edges --dataset on a CSV edge list",
            ["embed", d("edges.csv"), "--input-kind", "edges", "--dataset", "/table", "-o", good_map],
            64, ["--dataset /table", "csv"], work)
    refused("embed --input-kind distances --dataset on an NPY matrix",
            ["embed", d("distances.npy"), "--input-kind", "distances", "--dataset", "/m", "-o",
             good_map], 64, ["--dataset /m", "npy"], work)
    refused("embed points --missing", ["embed", roll, "--missing", "0", "-o", good_map], 64,
            ["--missing 0", "--input-kind points"], work)
    # Options another option makes void.
    base = ["embed", roll, "-o", good_map]
    for option in [["--k", "5"], ["--radius", "2"], ["--mutual"], ["--landmarks", "50"],
                   ["--pick", "random"], ["--node-order", "bfs"], ["--disconnected", "largest"],
                   ["--keep-geodesics"]]:
        refused(f"embed --linear {' '.join(option)}", base + ["--linear"] + option, 64,
                [" ".join(option), "--linear"], work)
    refused("embed --no-score --score-k 5", base + ["--no-score", "--score-k", "5"], 64,
            ["--score-k 5", "--no-score"], work)
    refused("embed --score-method exact --sample 10",
            base + ["--score-method", "exact", "--sample", "10"], 64,
            ["--sample 10", "--score-method exact"], work)
    refused("embed --landmarks all --pick random",
            base + ["--landmarks", "all", "--pick", "random"], 64,
            ["--pick random", "--landmarks all"], work)
    refused("score --score-method exact --sample 10",
            ["score", good_map, "--points", roll, "--score-method", "exact", "--sample", "10",
             "--json", good_json], 64, ["--sample 10", "--score-method exact"], work)

    np.save(d("array.npy"), points[:, :2].copy())
    refused("score --map-dataset on an NPY map",
            ["score", d("array.npy"), "--map-dataset", "/coords", "--points", roll, "--json",
             good_json], 64, ["--map-dataset /coords", "npy"], work)

    # Options that do apply to a graph input are read, not refused.
    succeeds("embed --input-kind edges --dataset names an E x 3 HDF5 table",
             ["embed", d("edges.h5"), "--input-kind", "edges", "--dataset", "/table", "-o",
              d("out/table.h5"), "--quiet"])
    succeeds("embed --input-kind distances --dataset on an HDF5 matrix",
             ["embed", d("distances.h5"), "--input-kind", "distances", "--dataset", "/matrix",
              "-o", d("out/matrix.h5"), "--quiet"])
    succeeds("embed --input-kind edges --format csv --disconnected largest --dims 3 --node-order bfs",
             ["embed", d("edges.csv"), "--input-kind", "edges", "--format", "csv", "--disconnected",
              "largest", "--dims", "3", "--node-order", "bfs", "-o", d("out/edges.h5"),
              "--quiet"])
    with h5py.File(d("out/edges.h5"), "r") as f:
        parameters = json.loads(f.attrs["parameters"])
        rows = f["/rows"][()]
    unrecorded = [key for key in ("k", "radius", "mutual", "search", "keep_duplicates", "rows",
                                  "drop_nonfinite", "scale", "metric", "pre_pca", "score_k")
                  if key in parameters]
    check("embed --input-kind edges: the map records no option the run did not use",
          not unrecorded, f"recorded {unrecorded}")
    check("embed --input-kind edges: the map records the options used (dims 3, largest, bfs)",
          parameters.get("dims") == 3 and parameters.get("disconnected") == "largest"
          and parameters.get("node_order") == "bfs", f"{parameters}")
    check("embed --input-kind edges: the map holds every node", rows.tolist() == list(range(N)),
          f"{len(rows)} rows")

    # 2. Numbers refused as typed.
    for option, value in [("--k", "-1"), ("--k", "0x10"), ("--k", "1e3"), ("--dims", "-2"),
                          ("--sample", "-1"), ("--pre-pca", "-1"), ("--threads", "-3"),
                          ("--threads", "5000"), ("--seed", "-1"),
                          ("--seed", str(2**63)), ("--seed", "99999999999999999999"),
                          ("--seed", "1.5"), ("--max-memory", "99999999999999999999T"),
                          ("--max-memory", "16E"), ("--max-memory", "nan"),
                          ("--max-memory", "0x10"), ("--max-memory", "-8G"),
                          ("--radius", "-1"), ("--radius", "1e400"), ("--radius", "nan"),
                          ("--radius", "0")]:
        r = refused(f"embed {option} {value}", base + [option, value], 64, [option, value],
                    work)
        check(f"embed {option} {value}: no wrapped value in the message",
              "18446744073709551615" not in r.stderr, r.stderr.strip())
    refused("embed --score-k 5 -1", base + ["--score-k", "5", "-1"], 64, ["--score-k", "'-1'"],
            work)
    refused("score --dimension-k -1", ["score", good_map, "--points", roll, "--dimension-k",
                                       "-1"], 64, ["--dimension-k", "-1"], work)
    refused("demo --point-count -5", ["demo", "--out-dir", d("demo"), "--point-count", "-5"], 64,
            ["--point-count", "-5"], work)
    succeeds("embed --k 010 is ten, not octal eight",
             base[:3] + [d("out/k10.h5"), "--k", "010", "--no-score", "--quiet"])
    with h5py.File(d("out/k10.h5"), "r") as f:
        k = json.loads(f.attrs["parameters"])["k"]
    check("embed --k 010: the map records k = 10", k == 10, f"k = {k}")

    # The seed: the largest value is stored as an int64 attribute and repeats the run.
    top = str(2**63 - 1)
    first, again, other = d("out/seed-a.h5"), d("out/seed-b.h5"), d("out/seed-c.h5")
    common = ["--pick", "random", "--landmarks", "40", "--no-score", "--quiet"]
    succeeds("embed --seed 2^63-1", ["embed", roll, "-o", first, "--seed", top] + common)
    with h5py.File(first, "r") as f:
        stored = f.attrs["seed"]
        coords_first = f["/coords"][()]
    check("--seed 2^63-1 is stored as a 64-bit integer attribute with its exact value",
          np.issubdtype(np.asarray(stored).dtype, np.integer) and int(stored) == 2**63 - 1,
          f"{stored!r} ({np.asarray(stored).dtype})")
    succeeds("embed again with the seed read from the map",
             ["embed", roll, "-o", again, "--seed", str(int(stored))] + common)
    succeeds("embed with the seed 0", ["embed", roll, "-o", other, "--seed", "0"] + common)
    with h5py.File(again, "r") as f, h5py.File(other, "r") as g:
        coords_again, coords_other = f["/coords"][()], g["/coords"][()]
    check("the stored seed repeats the map bit for bit", np.array_equal(coords_first, coords_again))
    # The repeat check could fail: another seed picks other random landmarks, another map.
    check("another seed gives another map", not np.array_equal(coords_first, coords_other))

    # 3. Score against the map's recorded input.
    r = refused("score against another point file of the same shape",
                ["score", good_map, "--points", d("other.h5"), "--json", good_json], 65,
                ["--points", "other.h5", "map.h5", "modified", "--points-changed-ok"], work)
    r = refused("score against the same points in another file",
                ["score", good_map, "--points", d("roll.npy"), "--json", good_json], 65,
                ["--points", "roll.npy", "size in bytes", "--points-changed-ok"], work)
    r = run(["score", good_map, "--points", d("other.h5"), "--points-changed-ok", "--json",
             d("out/other.json")])
    one_line_naming("score --points-changed-ok: exit 0 with one note naming the difference", r,
                    0, ["note", "other.h5", "modified"])
    r = run(["score", good_map, "--points", roll, "--json", d("out/same.json")])
    check("score against the recorded input: exit 0, no message on stderr",
          r.returncode == 0 and not messages(r.stderr), f"exit {r.returncode}; {r.stderr.strip()!r}")
    np.save(d("foreign.npy"), points[:, :2].copy())
    r = run(["score", d("foreign.npy"), "--points", roll])
    one_line_naming("score, a foreign array without a record: exit 0 with one note", r, 0,
                    ["note", "foreign.npy", "roll.h5"])

    # 4. demo: refused before anything is written, no folder left.
    demo = ["demo", "--out-dir", d("demo/sub")]
    for value in ("nan", "-1", "inf", "1e400", "0x1p3"):
        refused(f"demo --noise {value}", demo + ["--noise", value], 64, ["--noise", value], work)
    refused("demo --point-count 2^31: memory estimate over the limit",
            demo + ["--point-count", str(2**31)], 69, ["--point-count 2147483648", "about", "TiB"], work)
    refused("demo --data-only --point-count 2e9: memory estimate over the limit",
            demo + ["--data-only", "--point-count", "2000000000"], 69,
            ["--point-count 2000000000", "about", "GiB"], work)
    refused("demo --max-memory 1K: the estimate over --max-memory",
            demo + ["--point-count", "50", "--max-memory", "1K"], 69, ["--max-memory", "about"], work)
    refused("demo --point-count 100 --k 200: refused before the scenario is written",
            demo + ["--point-count", "100", "--k", "200"], 64, ["--k", "200"], work)
    refused("demo --data-only --k 5", demo + ["--data-only", "--k", "5"], 64,
            ["--k 5", "--data-only"], work)
    refused("demo --json", demo + ["--json", d("x.json")], 64, ["--json", "x.json"], work)
    # A folder whose path fits the 4,095-byte limit of Linux (PATH_MAX 4096, limits.h; common
    # practice, no source) while the scenario file inside it does not: the write fails after
    # the folders were made, and the demo removes every folder it made.
    folder = d("long")
    while len(folder) < 4085 - 201:
        folder = os.path.join(folder, "d" * 200)
    folder = os.path.join(folder, "e" * (4085 - len(folder) - 1))
    refused("demo whose scenario file name is too long: no folder left behind",
            ["demo", "--out-dir", folder, "--point-count", "50"], 73, ["ocean-buoys"], work)
    succeeds("demo, small", demo + ["--point-count", "200", "--scenario", "swiss-roll", "--noise",
                                    "0.05", "--quiet"])

    before = snapshot(work)
    r = run(["embed", roll, "-o", good_map, "--input-kind", "edges", "--k", "5"])
    check("nothing changed by the last refusals",
          r.returncode == 64 and before == snapshot(work), snapshot_diff(before, snapshot(work)))
    finish(work)


main()
