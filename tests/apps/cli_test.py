"""End-to-end tests of the unfurl command line: every bad input is refused with a one-line
message naming the file, dataset, row or option at fault and the documented exit code
(64 usage, 65 bad data, 66 missing input, 69 resource refused, 73 cannot create output,
74 I/O error), and leaves every file in the work folder as it was (an earlier good output at
the same path stays byte-identical; no temporary file is left behind).

Run by ctest as cli.cli_test with env UNFURL_BIN. Inputs are written here with h5py 3.7 and
numpy 1.24 (Debian python3-h5py, python3-numpy), so the files under test come from a writer
other than ours. The few success paths checked (--drop-nonfinite, --disconnected largest and
bridge) are compared with SciPy 1.10 (python3-scipy): scipy.spatial.distance.cdist for the
bridge length, scipy.sparse.csgraph.connected_components for connectivity.
N stays at a few hundred points so the script runs in seconds, also under sanitizers.
Exits non-zero when any check fails; prints every check.
"""

import os
import signal
import subprocess
import sys
import tempfile
import time

import h5py
import numpy as np
from scipy.sparse import coo_matrix
from scipy.sparse.csgraph import connected_components
from scipy.spatial.distance import cdist

from cli_support import (BIN, check, failures, finish, messages, refused, run, snapshot,  # noqa: F401
                         snapshot_diff, succeeds, swiss_roll)

N = 300


def write_h5(path, **datasets):
    with h5py.File(path, "w") as f:
        for name, value in datasets.items():
            f.create_dataset(name, data=value)


def write_csv(path, points, header="x,y,z"):
    with open(path, "w") as f:
        f.write(header + "\n")
        for row in points:
            f.write(",".join(repr(float(v)) for v in row) + "\n")


def main():
    work = tempfile.mkdtemp(prefix="unfurl-cli-test-")
    d = lambda name: os.path.join(work, name)  # noqa: E731

    # Inputs.
    points = swiss_roll(N, 7)
    write_h5(d("roll.h5"), points=points, **{"truth/height": points[:, 1].copy()})
    write_csv(d("roll.csv"), points)
    np.save(d("roll.npy"), points)
    write_h5(d("two.h5"), first=points, second=points[:, :2].copy())
    write_h5(d("oned.h5"), values=points[:, 0].copy())
    write_h5(d("empty.h5"), points=np.zeros((0, 3), np.float32))
    with open(d("empty.csv"), "w") as f:
        f.write("x,y,z\n")
    nan_points = points.copy()
    nan_rows = [7, 42, 200]
    nan_points[7, 0] = np.nan
    nan_points[42, 2] = np.inf
    nan_points[200, 1] = np.nan
    write_h5(d("nan.h5"), points=nan_points)
    write_csv(d("ragged.csv"), points[:20])
    with open(d("ragged.csv")) as f:
        lines = f.readlines()
    lines[6] = "1.0,2.0\n"  # data row 5, line 7 of the file
    with open(d("ragged.csv"), "w") as f:
        f.writelines(lines)
    with open(d("roll.h5"), "rb") as f:
        whole = f.read()
    with open(d("truncated.h5"), "wb") as f:
        f.write(whole[: len(whole) // 2])
    with open(d("random.h5"), "wb") as f:
        f.write(np.random.default_rng(3).bytes(4096))
    with open(d("random.bin"), "wb") as f:
        f.write(np.random.default_rng(4).bytes(4096))
    # Two patches far apart: a kNN graph (k = 10) cannot join them.
    far = np.vstack([swiss_roll(180, 11), swiss_roll(120, 12) + np.float32(1000)])
    write_h5(d("far.h5"), points=far)
    with open(d("negative.csv"), "w") as f:
        f.write("0,1,1.0\n1,2,-2.5\n2,0,1.0\n")
    with open(d("nanedge.csv"), "w") as f:
        f.write("0,1,1.0\n1,2,nan\n2,0,1.0\n")
    square = cdist(points[:20], points[:20]).astype(np.float32)
    square[3, 9] += 1.0  # asymmetric pair (3, 9)
    np.save(d("asymmetric.npy"), square)
    write_h5(d("first200.h5"), points=points[:200].copy())
    np.save(d("map250.npy"), np.zeros((250, 2), np.float32))

    # Good outputs made first; every refused command afterwards must leave them as they are.
    os.mkdir(d("out"))
    os.mkdir(d("out/folder.h5"))
    good_map, good_graph, good_json = d("out/map.h5"), d("out/graph.h5"), d("out/score.json")
    succeeds("embed a good map", ["embed", d("roll.h5"), "-o", good_map, "--quiet"])
    succeeds("graph a good graph", ["graph", d("roll.h5"), "-o", good_graph, "--quiet"])
    succeeds("score a good map",
             ["score", good_map, "--points", d("roll.h5"), "--json", good_json, "--quiet"])
    if failures:
        sys.exit("the good runs failed; nothing to compare against")

    # Bad point inputs, for every command that reads points. Each command writes (or would
    # write) to the good output of its kind.
    def commands(source, *extra):
        return {
            "embed": ["embed", source, "-o", good_map, *extra],
            "graph": ["graph", source, "-o", good_graph, *extra],
            "score": ["score", good_map, "--points", source, "--json", good_json, *extra],
            "inspect": ["inspect", source, *extra],
        }

    bad_inputs = [
        ("missing file", d("nothing.h5"), [], 66, ["nothing.h5"]),
        ("no such dataset", d("roll.h5"), ["--dataset", "/nope"], 66, ["/nope"]),
        ("several 2-D datasets", d("two.h5"), [], 64, ["two.h5", "/first", "/second"]),
        ("1-D dataset", d("oned.h5"), ["--dataset", "/values"], 65, ["/values"]),
        # No dataset a command could read as points: a missing input, like a missing dataset.
        ("only a 1-D dataset", d("oned.h5"), [], 66, ["oned.h5", "/values"]),
        ("zero rows HDF5", d("empty.h5"), [], 65, ["empty.h5", "/points", "0 rows"]),
        ("zero rows HDF5, named", d("empty.h5"), ["--dataset", "/points"], 65,
         ["empty.h5", "0 rows"]),
        ("zero rows CSV", d("empty.csv"), [], 65, ["empty.csv"]),
        ("NaN values", d("nan.h5"), [], 65, ["nan.h5", "row 7"]),
        ("ragged CSV", d("ragged.csv"), [], 65, ["ragged.csv", "line 7"]),
        ("truncated HDF5", d("truncated.h5"), [], 74, ["truncated.h5"]),
        # A corrupt file is an I/O error (74), as engine/error.hpp documents IoError.
        ("random bytes named .h5", d("random.h5"), [], 74, ["random.h5"]),
        ("random bytes", d("random.bin"), [], 65, ["random.bin"]),
        ("a folder as input", d("out"), [], 66, ["out"]),
    ]
    for what, source, extra, code, names in bad_inputs:
        for name, args in commands(source, *extra).items():
            refused(f"{name}, {what}", args, code, names, work)

    # --drop-nonfinite: the rows go, and the map lists them.
    dropped_map = d("out/dropped.h5")
    succeeds("embed --drop-nonfinite",
             ["embed", d("nan.h5"), "-o", dropped_map, "--drop-nonfinite", "--quiet"])
    with h5py.File(dropped_map, "r") as f:
        listed = f["/input/dropped_nonfinite_rows"][()].astype(np.int64).tolist()
        rows = f["/rows"][()]
        coords = f["/coords"][()]
    check("--drop-nonfinite: /input/dropped_nonfinite_rows lists the NaN/inf rows",
          listed == nan_rows, f"{listed} vs {nan_rows}")
    want_rows = [i for i in range(N) if i not in nan_rows]
    check("--drop-nonfinite: /rows holds every other row, in order",
          rows.tolist() == want_rows, f"{len(rows)} rows")
    check("--drop-nonfinite: coordinates finite", bool(np.isfinite(coords).all()))
    succeeds("graph --drop-nonfinite",
             ["graph", d("nan.h5"), "-o", d("out/dropped-graph.h5"), "--drop-nonfinite",
              "--quiet"])
    succeeds("inspect --drop-nonfinite", ["inspect", d("nan.h5"), "--drop-nonfinite", "--quiet"])

    # Graph and map options.
    roll = d("roll.h5")
    for name in ("embed", "graph"):
        out = good_map if name == "embed" else good_graph
        base = [name, roll, "-o", out]
        refused(f"{name} --k 0", base + ["--k", "0"], 64, ["--k"], work)
        refused(f"{name} --k N", base + ["--k", str(N)], 64, ["--k"], work)
        refused(f"{name} --k N+5", base + ["--k", str(N + 5)], 64, ["--k"], work)
        refused(f"{name} --radius 0", base + ["--radius", "0"], 64, ["--radius"], work)
        refused(f"{name} --radius -1", base + ["--radius", "-1"], 64, ["--radius"], work)
        refused(f"{name} --radius nan", base + ["--radius", "nan"], 64, ["--radius"], work)
        # The Swiss roll's nearest-neighbour distances are far above 1e-6: no edge at all.
        refused(f"{name} --radius 1e-6 (every point isolated)", base + ["--radius", "1e-6"],
                65, ["--radius"], work)
        refused(f"{name} folder missing", [name, roll, "-o", d("out/none/x.h5")], 73,
                ["none"], work)
        refused(f"{name} output is a folder", [name, roll, "-o", d("out/folder.h5")], 73,
                ["folder.h5"], work)
        refused(f"{name} --json folder missing",
                base + ["--json", d("out/none/x.json")], 73, ["none"], work)
    base = ["embed", roll, "-o", good_map]
    refused("embed --dims 0", base + ["--dims", "0"], 64, ["--dims"], work)
    refused("embed --landmarks 1", base + ["--landmarks", "1"], 64, ["--landmarks"], work)
    refused("embed --landmarks 0", base + ["--landmarks", "0"], 64, ["--landmarks"], work)
    refused("embed --landmarks abc", base + ["--landmarks", "abc"], 64, ["--landmarks", "abc"],
            work)
    refused("embed --landmarks -3", base + ["--landmarks", "-3"], 64, ["--landmarks"], work)
    refused("embed --landmarks N+1", base + ["--landmarks", str(N + 1)], 64, ["--landmarks"],
            work)
    refused("embed --landmarks all over --max-memory",
            base + ["--landmarks", "all", "--max-memory", "64K"], 69,
            ["--landmarks all", "--max-memory"], work)
    refused("embed --max-memory abc", base + ["--landmarks", "all", "--max-memory", "abc"], 64,
            ["--max-memory"], work)
    refused("embed --score-k N/2", base + ["--score-k", str(N // 2)], 64, ["--score-k"], work)
    refused("embed --csv folder missing", base + ["--csv", d("out/none/x.csv")], 73, ["none"],
            work)
    refused("score --score-k N/2",
            ["score", good_map, "--points", roll, "--score-k", str(N // 2)], 64,
            ["--score-k"], work)
    refused("score --json folder missing",
            ["score", good_map, "--points", roll, "--json", d("out/none/s.json")], 73,
            ["none"], work)
    refused("score --score-k 0", ["score", good_map, "--points", roll, "--score-k", "0"], 64,
            ["--score-k"], work)
    nan_map = np.zeros((N, 2), np.float32)
    nan_map[17, 1] = np.nan
    np.save(d("nanmap.npy"), nan_map)
    refused("score, an array map holding NaN", ["score", d("nanmap.npy"), "--points", roll], 65,
            ["nanmap.npy", "row 17"], work)
    refused("score --map-dataset missing",
            ["score", good_map, "--map-dataset", "/nope", "--points", roll], 66, ["/nope"], work)
    refused("score map file missing", ["score", d("nomap.h5"), "--points", roll], 66,
            ["nomap.h5"], work)

    # Disconnected graphs.
    far_src = d("far.h5")
    refused("embed disconnected graph", ["embed", far_src, "-o", good_map], 65,
            ["2 components", "180", "120", "--disconnected"], work)
    largest = d("out/largest.h5")
    succeeds("embed --disconnected largest",
             ["embed", far_src, "-o", largest, "--disconnected", "largest", "--quiet"])
    with h5py.File(largest, "r") as f:
        rows = f["/rows"][()]
        dropped = f["/graph/dropped_rows"][()]
    check("--disconnected largest: /graph/dropped_rows is int64", dropped.dtype == np.int64,
          str(dropped.dtype))
    check("--disconnected largest: the map holds the 180 rows of the larger patch",
          rows.tolist() == list(range(180)), f"{len(rows)} rows")
    check("--disconnected largest: /graph/dropped_rows lists the other 120",
          dropped.tolist() == list(range(180, 300)), f"{len(dropped)} rows")
    # With --rows the ids stay input-file rows, like /rows (they were positions among the rows
    # read up to format version 1).
    window = d("out/largest-window.h5")
    succeeds("embed --disconnected largest --rows 20:300",
             ["embed", far_src, "-o", window, "--disconnected", "largest", "--rows", "20:300",
              "--quiet"])
    with h5py.File(window, "r") as f:
        rows = f["/rows"][()]
        dropped = f["/graph/dropped_rows"][()]
    check("--rows 20:300: /rows and /graph/dropped_rows are file rows",
          rows.tolist() == list(range(20, 180)) and dropped.tolist() == list(range(180, 300)),
          f"rows {rows[:3]}..., dropped {dropped[:3]}...")
    bridged = d("out/bridged.h5")
    succeeds("embed --disconnected bridge",
             ["embed", far_src, "-o", bridged, "--disconnected", "bridge", "--quiet"])
    with h5py.File(bridged, "r") as f:
        rows = f["/rows"][()]
        has_bridges = "/graph/bridge_rows" in f
        bridges = f["/graph/bridge_rows"][()] if has_bridges else np.zeros((0, 2), np.int64)
        lengths = f["/graph/bridge_lengths"][()] if has_bridges else np.zeros(0)
        coords = f["/coords"][()]
    check("--disconnected bridge: /graph/bridge_rows holds one edge as int64 rows",
          bridges.shape == (1, 2) and bridges.dtype == np.int64 and lengths.shape == (1,),
          f"shape {bridges.shape} {bridges.dtype}")
    check("--disconnected bridge: every row is in the map", rows.tolist() == list(range(300)))
    check("--disconnected bridge: coordinates finite", bool(np.isfinite(coords).all()))
    if bridges.shape == (1, 2) and lengths.shape == (1,):
        a, b, length = int(bridges[0, 0]), int(bridges[0, 1]), lengths[0]
        # The shortest edge between the patches, by scipy.spatial.distance.cdist.
        between = cdist(far[:180].astype(np.float64), far[180:].astype(np.float64))
        check("--disconnected bridge: the edge joins the two patches",
              min(a, b) < 180 <= max(a, b), f"{a} -- {b}")
        check("--disconnected bridge: its length is the shortest distance between them "
              "(scipy cdist)", abs(length - between.min()) <= 1e-4 * between.min(),
              f"{length} vs {between.min()}")
        # The kNN graph (k = 10, union) plus the bridge is one component
        # (scipy.sparse.csgraph.connected_components).
        whole = cdist(far.astype(np.float64), far.astype(np.float64))
        nearest = np.argsort(whole, axis=1, kind="stable")[:, 1:11]
        i = np.repeat(np.arange(300), 10).tolist() + [a]
        j = nearest.ravel().tolist() + [b]
        graph = coo_matrix((np.ones(len(i)), (i, j)), shape=(300, 300))
        count, _ = connected_components(graph, directed=False)
        check("--disconnected bridge: kNN graph plus the bridge is one component (scipy)",
              count == 1, f"{count} components")

    # Graph inputs.
    for what, source, kind, names in [
        ("edge list with a negative length", d("negative.csv"), "edges", ["negative.csv", "-2.5"]),
        ("edge list with a NaN length", d("nanedge.csv"), "edges", ["nanedge.csv", "line 2"]),
        ("asymmetric distance matrix", d("asymmetric.npy"), "distances",
         ["asymmetric.npy", "3", "9"]),
        ("missing edge list", d("noedges.csv"), "edges", ["noedges.csv"]),
    ]:
        code = 66 if what.startswith("missing") else 65
        refused(f"embed --input-kind {kind}, {what}",
                ["embed", source, "--input-kind", kind, "-o", good_map], code, names, work)
    with open(d("two-triangles.csv"), "w") as f:
        f.write("0,1,1\n1,2,1\n2,0,1\n3,4,1\n4,5,1\n5,3,1\n")
    refused("embed --input-kind edges, a disconnected edge list",
            ["embed", d("two-triangles.csv"), "--input-kind", "edges", "-o", good_map], 65,
            ["2 components", "--disconnected"], work)
    refused("embed --input-kind edges --disconnected bridge (needs points)",
            ["embed", d("two-triangles.csv"), "--input-kind", "edges", "--disconnected", "bridge",
             "-o", good_map], 64, ["--disconnected", "bridge needs points"], work)
    refused("embed --input-kind graph given a point file",
            ["embed", roll, "--input-kind", "graph", "-o", good_map], 65, ["roll.h5"], work)

    refused("embed --rows beyond the file", ["embed", roll, "--rows", "250:400", "-o", good_map],
            64, ["--rows", "250:400"], work)
    refused("embed --rows backwards", ["embed", roll, "--rows", "20:10", "-o", good_map], 64,
            ["--rows"], work)
    refused("embed --dataset on a CSV file",
            ["embed", d("roll.csv"), "--dataset", "/points", "-o", good_map], 64,
            ["--dataset"], work)
    with open(d("a-file"), "w") as f:
        f.write("not a folder\n")
    refused("demo --out-dir names a file",
            ["demo", "--out-dir", d("a-file"), "--point-count", "50"], 73, ["a-file"], work)

    # Inspect shows a file's description before reading it; bytes of a binary file must not
    # reach the terminal raw (printable ASCII, tabs and newlines only).
    r = run(["inspect", d("random.bin")])
    shown = r.stdout.encode("utf-8", "replace")
    raw = [b for b in shown if b not in (9, 10) and not 32 <= b < 127]
    check("inspect on random bytes: exit 65 and only printable text on stdout",
          r.returncode == 65 and not raw, f"exit {r.returncode}, {len(raw)} raw bytes")

    # SIGTERM during a run: exit 75 and nothing written. Exact mode on 12,000 points takes
    # about 10 s of CPU in a Release build on an idle 2-core machine (4,000 points took only
    # 1 s, too close to the signal), so a signal after 1 s arrives mid-run.
    write_h5(d("big.h5"), points=swiss_roll(12000, 9))
    before = snapshot(work)
    # --no-work-dir: the outputs alone (the work folder a stop keeps: resume_test.py).
    job = subprocess.Popen([BIN, "embed", d("big.h5"), "-o", good_map, "--landmarks", "all",
                            "--no-work-dir"],
                           stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    time.sleep(1.0)
    job.send_signal(signal.SIGTERM)
    out, err = job.communicate(timeout=300)
    after = snapshot(work)
    err = err.decode("utf-8", "replace")
    check("SIGTERM mid-run: exit 75, one line, outputs untouched",
          job.returncode == 75 and len(messages(err)) == 1 and before == after,
          f"exit {job.returncode}, stdout {out[-200:]!r}, stderr {err.strip()!r}, "
          + snapshot_diff(before, after))

    # Score against points of another size.
    refused("score, unfurl map over 300 rows against 200 points",
            ["score", good_map, "--points", d("first200.h5"), "--json", good_json], 65,
            ["map.h5", "first200.h5"], work)
    refused("score, 250-row array against 300 points",
            ["score", d("map250.npy"), "--points", roll, "--json", good_json], 65,
            ["map250.npy", "250", "300"], work)

    # The command line itself.
    refused("unknown option", ["embed", roll, "-o", good_map, "--frobnicate"], 64,
            ["--frobnicate"], work)
    refused("unknown subcommand", ["unroll", roll], 64, ["unroll"], work)
    refused("no subcommand", [], 64, [], work)
    refused("embed without -o", ["embed", roll], 64, ["--out"], work)
    refused("--k abc", ["embed", roll, "-o", good_map, "--k", "abc"], 64, ["--k", "abc"], work)
    refused("--threads -1", ["embed", roll, "-o", good_map, "--threads", "-1"], 64,
            ["--threads"], work)
    for name in ("", "embed", "graph", "score", "inspect", "demo"):
        args = ([name] if name else []) + ["--help"]
        r = run(args)
        check(f"{' '.join(args)}: exit 0 and a usage text on stdout",
              r.returncode == 0 and "Usage" in r.stdout and r.stderr == "",
              f"exit {r.returncode}; stderr {r.stderr.strip()!r}")

    finish(work)


if __name__ == "__main__":  # options_test.py imports the helpers above
    main()
