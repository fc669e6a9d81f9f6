"""The command line at the edges of size and range.

- `embed` with default options on 4, 5 and 8 points exits 0 and writes a map of that many
  rows (the graph k, the score k and the dimension k adapt to N; README "Small inputs").
- Below the smallest usable N (embed: 3 points and --dims + 1; score: 3 points) the command
  refuses up front with exit 65 and a message naming only options that command has.
- Data where every row repeats another embed, and the intrinsic dimension is taken on the
  distinct points (JSON points_used = distinct count).
- Values near 1e37: path lengths would pass float32's largest value (3.4e38). The run is
  refused naming the value range, never "unreachable"; with --scale standard it succeeds.
Points are written with numpy 1.24 (Debian python3-numpy), CSV. Exits non-zero on a failure.
"""
import json
import math
import os
import subprocess
import sys
import tempfile

import numpy as np

BIN = os.environ["UNFURL_BIN"]
failures = 0


def check(what, ok, detail=""):
    global failures
    failures += 0 if ok else 1
    print(("ok   " if ok else "FAIL ") + what + ("" if ok else ": " + detail))


def run(*args):
    return subprocess.run([BIN, *map(str, args)], capture_output=True, text=True, timeout=300)


def option_names(command):
    """The options `unfurl COMMAND --help` lists."""
    text = run(command, "--help").stdout
    return {w.strip(",[]") for w in text.split() if w.startswith("--")}


def main():
    rng = np.random.default_rng(5)
    with tempfile.TemporaryDirectory() as tmp:
        embed_options = option_names("embed")
        score_options = option_names("score")
        for n in (4, 5, 8):
            path = f"{tmp}/p{n}.csv"
            np.savetxt(path, rng.random((n, 3)), delimiter=",")
            r = run("embed", path, "-o", f"{tmp}/m{n}.h5", "--json", f"{tmp}/m{n}.json")
            ok = r.returncode == 0
            if ok:
                with open(f"{tmp}/m{n}.json") as f:
                    report = json.load(f)
                ok = report["embedding"]["map"]["rows"] == n
            check(f"embed with default options on {n} points", ok,
                  f"exit {r.returncode}: {r.stderr.strip()}")

        for command, args, options in (
                ("embed", ["-o", f"{tmp}/m2.h5"], embed_options),
                ("score", [], score_options)):
            path = f"{tmp}/p2.csv"
            np.savetxt(path, rng.random((2, 3)), delimiter=",")
            call = [command, path, *args] if command == "embed" else \
                [command, path, "--points", path]
            r = run(*call)
            named = {w.strip(",:;()") for w in r.stderr.split() if w.startswith("--")}
            check(f"{command} on 2 points refused up front (exit 65, one line, own options only)",
                  r.returncode == 65 and len(r.stderr.strip().splitlines()) == 1
                  and named <= options and "needs at least 3" in r.stderr,
                  f"exit {r.returncode}: {r.stderr.strip()} (named {named})")
        r = run("embed", f"{tmp}/p4.csv", "-o", f"{tmp}/m4d.h5", "--dims", "4")
        check("embed --dims 4 on 4 points refused naming --dims", r.returncode == 65
              and "--dims 4" in r.stderr and "at least 5" in r.stderr, r.stderr.strip())

        # Every row twice: 60 distinct points on a curve, each repeated.
        t = np.sort(rng.random(60)) * 3
        distinct = np.c_[np.cos(t), np.sin(t), t]
        np.savetxt(f"{tmp}/twice.csv", np.repeat(distinct, 2, axis=0), delimiter=",")
        r = run("embed", f"{tmp}/twice.csv", "-o", f"{tmp}/twice.h5", "--json",
                f"{tmp}/twice.json")
        ok = r.returncode == 0
        if ok:
            with open(f"{tmp}/twice.json") as f:
                dim = json.load(f)["quality"].get("intrinsic_dimension", {})
            ok = dim.get("points_used") == 60 and dim.get("points") == "distinct"
        check("every row repeated: embed works, dimension on 60 distinct points", ok,
              f"exit {r.returncode}: {r.stderr.strip()}")

        # Swiss roll scaled by 1e37: arc length about 89 x 1e37 > 3.4e38 (float32's largest).
        u = rng.random(300)
        tt = 1.5 * math.pi * (1 + 2 * u)
        roll = np.c_[tt * np.cos(tt), 21 * rng.random(300), tt * np.sin(tt)] * 1e37
        np.savetxt(f"{tmp}/huge.csv", roll, delimiter=",", fmt="%.9g")
        r = run("embed", f"{tmp}/huge.csv", "-o", f"{tmp}/huge.h5")
        check("values near 1e37 refused for the value range, not as unreachable",
              r.returncode == 65 and "float32" in r.stderr and "range" in r.stderr
              and "unreachable" not in r.stderr and "--scale" in r.stderr
              and not os.path.exists(f"{tmp}/huge.h5"), f"exit {r.returncode}: {r.stderr}")
        r = run("embed", f"{tmp}/huge.csv", "-o", f"{tmp}/huge.h5", "--scale", "standard")
        check("values near 1e37 with --scale standard embed", r.returncode == 0, r.stderr)
    print("failures:", failures)
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
