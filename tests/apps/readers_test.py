"""End-to-end checks of the shared text and NPY readers through `unfurl embed`: points, edge
lists and distance matrices obey the same rules and give the same exit codes (README "Exit
codes": 65 bad data, 69 refused for resources), one line on stderr naming the file, and no
output created. Inputs are written here with numpy 1.24 (python3-numpy), a writer other than
ours. Runs in a few seconds. Exits non-zero when any check fails; prints every check.
"""

import hashlib
import os
import subprocess
import sys
import tempfile

import h5py
import numpy as np

BIN = os.environ["UNFURL_BIN"]
failures = []


def check(what, ok, detail=""):
    print(("ok   " if ok else "FAIL ") + what + ("" if ok else ": " + detail))
    if not ok:
        failures.append(what)


def files(folder):
    out = {}
    for name in sorted(os.listdir(folder)):
        with open(os.path.join(folder, name), "rb") as f:
            out[name] = hashlib.sha256(f.read()).hexdigest()
    return out


def refused(what, args, code, names, folder):
    before = files(folder)
    r = subprocess.run([BIN, *args], capture_output=True, timeout=120)
    err = r.stderr.decode("utf-8", "replace")
    lines = err.strip().splitlines()
    ok = (r.returncode == code and len(lines) == 1 and all(n in err for n in names)
          and files(folder) == before)
    check(f"{what}: exit {code}, one line naming {names}, no output", ok,
          f"exit {r.returncode}, stderr {err.strip()!r}")


def grid_edges(side):
    """The edges of a side x side grid graph with unit lengths (a connected planar graph)."""
    edges = []
    for r in range(side):
        for c in range(side):
            v = r * side + c
            if c + 1 < side:
                edges.append((v, v + 1, 1.0))
            if r + 1 < side:
                edges.append((v, v + side, 1.0))
    return edges


def main():
    with tempfile.TemporaryDirectory() as work:
        d = lambda name: os.path.join(work, name)  # noqa: E731
        # The same edge list with each delimiter (and a byte order mark) gives the same map.
        maps = []
        for name, sep in [("comma.csv", ","), ("semicolon.csv", ";"), ("tab.tsv", "\t")]:
            with open(d(name), "w", encoding="utf-8-sig") as f:
                f.write(sep.join(["i", "j", "length"]) + "\n")
                for i, j, length in grid_edges(8):
                    f.write(f"{i}{sep}{j}{sep}{length}\n")
            out = d(name + ".h5")
            r = subprocess.run([BIN, "embed", d(name), "--input-kind", "edges", "-o", out, "--quiet"],
                               capture_output=True, text=True, timeout=120)
            check(f"edge list with {sep!r} embeds", r.returncode == 0, r.stderr.strip())
            if r.returncode == 0:
                with h5py.File(out, "r") as f:
                    maps.append(f["coords"][()])
                os.remove(out)
        check("every delimiter gives the same map",
              len(maps) == 3 and all(np.array_equal(maps[0], m) for m in maps[1:]))

        out = d("map.h5")
        with open(d("huge-id.csv"), "w") as f:
            f.write("0,1,1\n1,2147483646,1\n")
        refused("an edge-list id of 2^31 - 2", ["embed", d("huge-id.csv"), "--input-kind", "edges",
                                                "-o", out], 69, ["huge-id.csv", "renumber"], work)
        np.save(d("matrix.npy"), np.zeros((3, 3)))
        os.rename(d("matrix.npy"), d("matrix.csv"))
        refused("NPY bytes under a .csv name as an edge list",
                ["embed", d("matrix.csv"), "--input-kind", "edges", "-o", out], 65,
                ["matrix.csv", "NPY"], work)
        with open(d("nul.csv"), "wb") as f:
            f.write(b"0,1,1\n1,2\x00,1\n")
        refused("a NUL byte in an edge list", ["embed", d("nul.csv"), "--input-kind", "edges",
                                               "-o", out], 65, ["nul.csv", "line 2", "NUL"], work)
        with open(d("fake.npy"), "w") as f:
            f.write("0,1\n1,0\n")
        for kind in ["points", "distances"]:
            refused(f"text named .npy read as {kind}",
                    ["embed", d("fake.npy"), "--input-kind", kind, "-o", out], 65,
                    ["fake.npy", "not an NPY file"], work)
        with open(d("long.csv"), "w") as f:
            f.write("1,2\n3," + "9" * 400 + "\n")
        refused("a 400-digit number in a point file", ["embed", d("long.csv"), "-o", out], 65,
                ["long.csv", "line 2, column 2"], work)
        with open(d("long-d.csv"), "w") as f:
            f.write("0,1\n" + "9" * 400 + ",0\n")
        refused("a 400-digit number in a distance matrix",
                ["embed", d("long-d.csv"), "--input-kind", "distances", "-o", out], 65,
                ["long-d.csv", "line 2", "field 1"], work)
        trailing = np.lib.format.header_data_from_array_1_0(np.zeros((4, 4)))
        with open(d("tail.npy"), "wb") as f:
            np.lib.format.write_array_header_1_0(f, trailing)
            f.write(np.zeros((4, 4)).tobytes() + b"\0" * 8)
        for kind in ["points", "distances"]:
            refused(f"bytes after the NPY array read as {kind}",
                    ["embed", d("tail.npy"), "--input-kind", kind, "-o", out], 65,
                    ["tail.npy", "trailing data"], work)
    if failures:
        print(f"{len(failures)} check(s) failed: {', '.join(failures)}")
        sys.exit(1)
    print("all checks passed")


if __name__ == "__main__":
    main()
