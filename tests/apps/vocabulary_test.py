"""End-to-end tests of the command-line vocabulary (README "One vocabulary" and "Changes in
this release"): an option word takes a value in every command or in none; renamed options
work under their new names; each old spelling kept for this release still works with one
note on stderr, and is refused beside its new name; `inspect` on a map made by unfurl shows
the map's record and exits 0; `inspect --json FILE` writes the JSON document to FILE.

Run by ctest as cli.vocabulary_test with env UNFURL_BIN. The map's shape and attributes are
read back with h5py 3.7 (Debian python3-h5py), a reader other than ours, and compared with
what inspect reports. Exits non-zero when any check fails.
"""

import json
import os
import re
import sys
import tempfile

import h5py

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
from cli_support import (check, finish, messages, refused, run, snapshot, snapshot_diff,  # noqa: E402
                         succeeds, swiss_roll)

N = 200
COMMANDS = ("embed", "graph", "score", "inspect", "demo", "sweep")


def options_of(command):
    """{option: takes a value} and the text of `unfurl COMMAND --help`: CLI11 prints a
    value's type or name (upper case: TEXT, INT, SIZE, ...) after an option that takes one,
    and nothing after a flag."""
    r = run([command, "--help"])
    out = {}
    for line in r.stdout.splitlines():
        m = re.match(r"\s+(?:-\w,)?(--[\w-]+)(\s+\[?[A-Z])?", line)
        if m:
            out[m.group(1)] = m.group(2) is not None
    return out, r.stdout


def note_lines(r, words):
    lines = [line for line in messages(r.stderr) if line.strip()]
    return len(lines) == 1 and all(w in lines[0] for w in words)


def main():
    work = tempfile.mkdtemp(prefix="unfurl-vocabulary-")

    def d(name):
        return os.path.join(work, name)

    roll = d("roll.h5")
    with h5py.File(roll, "w") as f:
        f["/points"] = swiss_roll(N, 7)

    # 1. One word, one arity: an option that takes a value takes one in every command.
    arity = {}
    for command in COMMANDS:
        options, text = options_of(command)
        check(f"{command} --help lists its options", len(options) > 3, text[:200])
        for name, takes in options.items():
            arity.setdefault(name, {})[command] = takes
    mixed = {n: c for n, c in arity.items() if len(set(c.values())) > 1}
    check("every option word takes a value in all commands or in none", not mixed, str(mixed))
    demo_help = options_of("demo")[1]
    check("demo --help shows --point-count and --out-dir, not the old --points and --out",
          "--point-count" in demo_help and "--out-dir" in demo_help
          and not re.search(r"--points(?![-\w])", demo_help)
          and not re.search(r"--out(?![-\w])", demo_help),
          demo_help)

    # 2. Renamed options under their new names.
    succeeds("demo --point-count --out-dir --data-only",
             ["demo", "--point-count", "60", "--out-dir", d("demo-new"), "--data-only",
              "--quiet"])
    check("demo --out-dir: the scenario file is in the folder",
          os.path.isfile(d("demo-new/ocean-buoys.h5")), str(os.listdir(work)))
    with h5py.File(d("demo-new/ocean-buoys.h5"), "r") as f:
        check("demo --point-count 60: 60 records written", f["/points"].shape[0] == 60,
              str(f["/points"].shape))
    r = succeeds("embed --input-kind points", ["embed", roll, "--input-kind", "points", "-o",
                                                d("map.h5"), "--quiet", "--seed", "5"])
    check("embed under the new spelling: nothing on stderr", r.stderr == "", r.stderr)

    # 3. Old spellings kept for this release: they work, with one note naming the new name.
    r = run(["demo", "--points", "60", "--data-only", "--out-dir", d("demo-old"), "--quiet"])
    check("demo --points (old): exit 0 with one note naming --point-count",
          r.returncode == 0 and note_lines(r, ["--points", "--point-count"]), r.stderr)
    r = run(["demo", "--point-count", "60", "--data-only", "--out", d("demo-old2"), "--quiet"])
    check("demo --out (old): exit 0 with one note naming --out-dir, the folder written",
          r.returncode == 0 and note_lines(r, ["--out", "--out-dir"])
          and os.path.isfile(d("demo-old2/ocean-buoys.h5")), r.stderr)
    r = run(["embed", roll, "--input", "points", "-o", d("map-old.h5"), "--quiet", "--seed", "5"])
    check("embed --input (old): exit 0 with one note naming --input-kind",
          r.returncode == 0 and note_lines(r, ["--input", "--input-kind"]), r.stderr)
    with h5py.File(d("map.h5"), "r") as a, h5py.File(d("map-old.h5"), "r") as b:
        check("embed --input (old) gives the same map as --input-kind",
              (a["/coords"][...] == b["/coords"][...]).all())
    # An old spelling beside its new name is refused, nothing written.
    refused("demo --points beside --point-count",
            ["demo", "--points", "60", "--point-count", "60", "--out-dir", d("both")], 64,
            ["--point"], work)
    refused("demo --out beside --out-dir",
            ["demo", "--out", d("both"), "--out-dir", d("both2")], 64, ["--out"], work)
    refused("embed --input beside --input-kind",
            ["embed", roll, "--input", "points", "--input-kind", "points", "-o", d("m3.h5")],
            64, ["--input"], work)

    # 4. inspect on a map made by unfurl: its record, exit 0.
    with h5py.File(d("map.h5"), "r") as f:
        rows, dims = f["/coords"].shape
        command = f.attrs["command"]
        command = command.decode() if isinstance(command, bytes) else command
        seed = int(f.attrs["seed"])
    r = run(["inspect", d("map.h5")])
    check("inspect on a map: exit 0, nothing on stderr", r.returncode == 0 and r.stderr == "",
          f"exit {r.returncode}; {r.stderr.strip()!r}")
    check("inspect on a map: the record's shape, command and seed",
          f"map: {rows} rows x {dims} dims" in r.stdout and f"command: {command}" in r.stdout
          and f"seed: {seed}" in r.stdout, r.stdout[-1500:])
    before = snapshot(work)
    r = run(["inspect", d("map.h5"), "--json", d("map-record.json")])
    check("inspect MAP --json FILE: exit 0, writes FILE and nothing else",
          r.returncode == 0 and set(snapshot(work)) - set(before) == {"map-record.json"},
          snapshot_diff(before, snapshot(work)) + r.stderr)
    if os.path.isfile(d("map-record.json")):
        with open(d("map-record.json")) as f:
            doc = json.load(f)
        m = doc.get("map", {})
        check("inspect --json FILE on a map: rows, dims, command and seed as h5py reads them",
              (m.get("rows"), m.get("dims")) == (rows, dims)
              and m.get("attributes", {}).get("command") == command
              and m.get("attributes", {}).get("seed") == seed, json.dumps(m)[:500])
    r = run(["inspect", d("map.h5"), "--dataset", "/coords", "--quiet"])
    check("inspect MAP --dataset /coords: reads it as points, exit 0", r.returncode == 0,
          r.stderr)
    refused("inspect MAP --rows 0:5 (a map's record has no rows to choose)",
            ["inspect", d("map.h5"), "--rows", "0:5"], 64, ["--rows", "map.h5"], work)

    # 5. inspect --json: a file now; the old flag (no file) still prints on stdout, with a note.
    r = run(["inspect", roll, "--json", d("roll.json")])
    with open(d("roll.json")) as f:
        pts = json.load(f)["points"]
    check("inspect POINTS --json FILE: exit 0, FILE holds the points' shape",
          r.returncode == 0 and (pts["rows"], pts["cols"]) == (N, 3), str(pts)[:300])
    # The old flag, after the input or before it as the only path: JSON on stdout, one note.
    for what, args in (("inspect POINTS --json (old, no file)", ["inspect", roll, "--json"]),
                       ("inspect --json POINTS (old order: POINTS is the input)",
                        ["inspect", "--json", roll])):
        before = snapshot(work)
        r = run(args)
        try:
            old = json.loads(r.stdout)["points"]
        except (ValueError, KeyError):
            old = {}
        check(f"{what}: JSON on stdout, one note, no file written",
              r.returncode == 0 and (old.get("rows"), old.get("cols")) == (N, 3)
              and note_lines(r, ["--json FILE"]) and snapshot(work) == before,
              r.stderr + snapshot_diff(before, snapshot(work)))
    # Two paths after --json: the first is the JSON file (a new spelling), the second the input.
    r = run(["inspect", "--json", d("first.json"), roll, "--quiet"])
    check("inspect --json OUT POINTS: OUT is the JSON file", r.returncode == 0
          and os.path.isfile(d("first.json")), r.stderr)
    finish(work)


main()
