"""Seeded mutation test of the readers behind `unfurl inspect`, `embed` and `score`.

Small valid inputs are written here (HDF5 by h5py 3.7, NPY by numpy 1.24, CSV as text; the map
by `unfurl embed` itself), then damaged in many seeded ways: bytes flipped or overwritten,
the file truncated, runs of bytes inserted or deleted, and header fields edited (HDF5
superblock and object headers at the start of the file, the NPY header dictionary, the CSV
header line). Every damaged file is given to one command (inspect or embed in turn for the
point formats, score for the map), each run under a hard time limit. What must hold (the
project's rule for every bad input, README "Exit codes"): the run ends, by itself, with a
documented exit code (0, 64, 65, 66, 69, 73, 74 or 75), never with a signal, a hang or 70
(an internal error); a missing-input or read error (66, 74) ends with a line naming the
damaged file.
Mutation testing of file readers is common practice, no source.

Run by ctest as cli.damaged_files_test with env UNFURL_BIN. UNFURL_DAMAGED_CASES sets the
number of damaged files per format (1,000 by default; tests/CMakeLists.txt sets fewer for
sanitizer builds, where each run is several times slower). Exits non-zero on any failure.
"""

import concurrent.futures
import os
import random
import subprocess
import sys
import tempfile
import time

import h5py
import numpy as np

BIN = os.path.abspath(os.environ["UNFURL_BIN"])
CASES = int(os.environ.get("UNFURL_DAMAGED_CASES", "1000"))
SEED = 20261202
TIME_LIMIT = 20.0  # seconds per run
# The isolated HDF5 metadata check gives up after this, so a looping library call ends as
# exit 74 well inside TIME_LIMIT.
CHILD_ENV = dict(os.environ, UNFURL_HDF5_CHECK_SECONDS="4")
DOCUMENTED = {0, 64, 65, 66, 69, 73, 74, 75}  # README "Exit codes", 70 excluded
POOL = 3
SECONDS = []  # wall time of each run


def write_inputs(folder):
    """Valid inputs: 80 points on a noisy helix in 3-D (invented for this test)."""
    rng = np.random.default_rng(7)
    t = np.linspace(0.0, 6.0, 80)
    pts = np.column_stack([np.cos(t), np.sin(t), 0.3 * t]) + 0.01 * rng.standard_normal((80, 3))
    paths = {}
    paths["hdf5"] = os.path.join(folder, "p.h5")
    with h5py.File(paths["hdf5"], "w") as f:
        f.attrs["origin"] = "damaged-file test"
        f.attrs["scale"] = np.array([1.0, 2.0, 3.0])
        g = f.create_group("survey")
        d = g.create_dataset("points", data=pts, chunks=(16, 3), compression="gzip",
                             shuffle=True)
        d.attrs["units"] = "metres"
        f.create_dataset("labels", data=np.arange(80, dtype=np.int32))
    paths["npy"] = os.path.join(folder, "p.npy")
    np.save(paths["npy"], pts)
    paths["csv"] = os.path.join(folder, "p.csv")
    with open(paths["csv"], "w") as f:
        f.write("x,y,z\n")
        for row in pts:
            f.write(",".join(repr(float(v)) for v in row) + "\n")
    paths["map"] = os.path.join(folder, "m.h5")
    r = subprocess.run([BIN, "embed", paths["hdf5"], "-o", paths["map"], "--k", "8"],
                       capture_output=True, timeout=120)
    if r.returncode != 0:
        sys.exit("cannot make the map for score: " + r.stderr.decode("utf-8", "replace"))
    return paths


def header_span(kind, data):
    """Where the format's header fields live."""
    if kind == "npy":
        end = data.find(b"\n")
        return max(10, end if end > 0 else 128)
    if kind == "csv":
        end = data.find(b"\n")
        return max(1, end)
    return min(len(data), 1024)  # superblock, root group and first object headers


def mutate(kind, data, rng):
    data = bytearray(data)
    how = rng.choice(["flip", "overwrite", "truncate", "insert", "delete", "header"])
    if how == "flip":
        for _ in range(rng.randint(1, 8)):
            i = rng.randrange(len(data))
            data[i] ^= 1 << rng.randrange(8)
    elif how == "overwrite":
        i = rng.randrange(len(data))
        n = rng.randint(1, 16)
        data[i:i + n] = bytes(rng.randrange(256) for _ in range(min(n, len(data) - i)))
    elif how == "truncate":
        del data[rng.randrange(len(data)):]
    elif how == "insert":
        i = rng.randrange(len(data) + 1)
        data[i:i] = bytes(rng.randrange(256) for _ in range(rng.randint(1, 64)))
    elif how == "delete":
        i = rng.randrange(len(data))
        del data[i:i + rng.randint(1, 64)]
    else:
        span = header_span(kind, data)
        for _ in range(rng.randint(1, 4)):
            i = rng.randrange(min(span, len(data)))
            if kind == "hdf5":
                data[i] = rng.choice([0, 1, 2, 0x7F, 0x80, 0xFF, rng.randrange(256)])
            else:  # text headers: digits, quotes, punctuation and letters the parsers look at
                data[i] = ord(rng.choice("0123456789'\":,{}()<>|fiuTFx ;\t\r\n\0-e."))
    return how, bytes(data)


def run_case(case):
    kind, index, command, path, originals = case
    folder = os.path.dirname(path)
    if command == "inspect":
        args = ["inspect", path]
    elif command == "embed":
        args = ["embed", path, "-o", os.path.join(folder, "out.h5"), "--k", "8"]
    else:
        args = ["score", path, "--points", originals["hdf5"]]
    started = time.monotonic()
    try:
        r = subprocess.run([BIN, *args], capture_output=True, timeout=TIME_LIMIT,
                           env=CHILD_ENV, cwd=folder)
    except subprocess.TimeoutExpired:
        return f"{kind} #{index} {command}: no exit within {TIME_LIMIT} s"
    finally:
        SECONDS.append(time.monotonic() - started)
    err = r.stderr.decode("utf-8", "replace")
    if r.returncode < 0:
        return f"{kind} #{index} {command}: killed by signal {-r.returncode}: {err[-300:]}"
    if r.returncode not in DOCUMENTED:
        return f"{kind} #{index} {command}: exit {r.returncode}: {err.strip()[-300:]}"
    # Reader errors name the damaged file; a later stage refusing what was read (a graph in
    # pieces, too few points for the scores) names the stage or option instead.
    if r.returncode in (66, 74):
        lines = [line for line in err.splitlines() if line.strip()]
        if not lines or os.path.basename(path) not in lines[-1]:
            return f"{kind} #{index} {command}: exit {r.returncode} without naming the file: {err!r}"
    return None


def missing_storage(folder):
    """Storage an h5py file declares but does not have, through the command line: each case
    is named for what it is, with the exit code README "Exit codes" gives it (65 for data
    never written, 74 for a file the input refers to that is missing). Returns failures."""
    out = []
    x = np.arange(60, dtype="f8").reshape(20, 3)
    with h5py.File(os.path.join(folder, "src.h5"), "w") as f:
        f["data"] = x
    lay = h5py.VirtualLayout(shape=(20, 3), dtype="f8")
    lay[:] = h5py.VirtualSource("src.h5", "data", shape=(20, 3))
    with h5py.File(os.path.join(folder, "vds.h5"), "w") as f:
        f.create_virtual_dataset("v", lay)
    os.remove(os.path.join(folder, "src.h5"))
    with h5py.File(os.path.join(folder, "sparse.h5"), "w") as f:
        f.create_dataset("x", shape=(100, 3), chunks=(10, 3), dtype="f8")[0:10] = 1.0
    with h5py.File(os.path.join(folder, "elink.h5"), "w") as f:
        f["x"] = h5py.ExternalLink("absent.h5", "/data")
    with h5py.File(os.path.join(folder, "external.h5"), "w") as f:
        f.create_dataset("x", shape=(20, 3), dtype="f8", external=[("raw.bin", 0, 480)])
    cases = [("vds.h5", "/v", 74, "virtual dataset source file"),
             ("sparse.h5", "/x", 65, "9 of its 10 chunks never written"),
             ("elink.h5", "/x", 74, "external link to missing file"),
             ("external.h5", "/x", 74, "external raw data file")]
    for name, dataset, code, words in cases:
        for command in ["inspect", "embed"]:
            args = [command, os.path.join(folder, name), "--dataset", dataset]
            if command == "embed":
                args += ["-o", os.path.join(folder, "out.h5")]
            r = subprocess.run([BIN, *args], capture_output=True, timeout=TIME_LIMIT, cwd=folder)
            err = r.stderr.decode("utf-8", "replace")
            ok = r.returncode == code and words in err and name in err
            print(("ok   " if ok else "FAIL ") + f"{command} {name}: exit {r.returncode}, {err.strip()}")
            if not ok:
                out.append(f"{command} {name}: expected exit {code} and '{words}'")
    return out


def main():
    failures = []
    counts = {}
    with tempfile.TemporaryDirectory() as tmp:
        failures += missing_storage(tmp)
        originals = write_inputs(tmp)
        rng = random.Random(SEED)
        cases = []
        for kind in ["hdf5", "npy", "csv", "map"]:
            with open(originals[kind], "rb") as f:
                whole = f.read()
            for i in range(CASES):
                how, damaged = mutate("hdf5" if kind == "map" else kind, whole, rng)
                counts[how] = counts.get(how, 0) + 1
                folder = os.path.join(tmp, f"{kind}{i}")
                os.mkdir(folder)
                ext = {"hdf5": ".h5", "map": ".h5", "npy": ".npy", "csv": ".csv"}[kind]
                path = os.path.join(folder, "damaged" + ext)
                with open(path, "wb") as f:
                    f.write(damaged)
                command = "score" if kind == "map" else ("inspect", "embed")[i % 2]
                cases.append((kind, i, command, path, originals))
        exits = {}
        with concurrent.futures.ThreadPoolExecutor(POOL) as pool:
            for case, problem in zip(cases, pool.map(run_case, cases)):
                if problem:
                    failures.append(problem)
                exits[case[0]] = exits.get(case[0], 0) + 1
    print(f"{len(cases)} runs over {CASES} damaged files per format; mutations {counts}")
    SECONDS.sort()
    print(f"seconds per run: median {SECONDS[len(SECONDS) // 2]:.3f}, max {SECONDS[-1]:.2f}, "
          f"{sum(s > 2 for s in SECONDS)} runs over 2 s")
    for problem in failures[:40]:
        print("FAIL " + problem)
    if failures:
        print(f"{len(failures)} of {len(cases)} runs failed")
        return 1
    print("ok   every run ended by itself with a documented exit code")
    return 0


if __name__ == "__main__":
    sys.exit(main())
