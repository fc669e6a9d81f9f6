"""Point input read by unfurl against the outside reference: files written by h5py and
numpy (Debian's python3-h5py and python3-numpy) in several dtypes, chunkings, compressions,
byte orders and element orders. `unfurl inspect --json FILE` must report numpy's rows, columns and
per-column min/max/mean; points_probe dumps what read_points read so that every value is
compared exactly with numpy's float32 cast (IEEE 754 round to nearest, as C++'s conversion).
Bad inputs must exit with the project's codes (engine/error.hpp) and one-line messages, and
inspect must never create a file.
"""
import json
import os
import shutil
import subprocess
import sys
import tempfile

import h5py
import numpy as np

UNFURL = os.environ["UNFURL_BIN"]
PROBE = os.path.join(os.environ["UNFURL_PROBE_DIR"], "points_probe")
failures = []


def check(ok, what):
    print(("ok   " if ok else "FAIL ") + what)
    if not ok:
        failures.append(what)


def snapshot(folder):
    seen = {}
    for root, _, files in os.walk(folder):
        for name in files:
            path = os.path.join(root, name)
            st = os.stat(path)
            seen[path] = (st.st_size, st.st_mtime_ns)
    return seen


def run(args, cwd):
    return subprocess.run(args, cwd=cwd, capture_output=True, text=True, timeout=120)


def compare(tmp, label, path, expected, extra=()):
    """expected: the numpy array (any dtype) the file holds, rows = points."""
    expected = np.asarray(expected)
    if expected.ndim == 1:
        expected = expected[:, None]
    want = expected.astype(np.float32)
    empty = tempfile.mkdtemp(dir=tmp)
    before = snapshot(tmp)
    # The JSON document goes to a file outside `tmp`: inspect creates no other file.
    report = os.path.join(tempfile.mkdtemp(), "inspect.json")
    r = run([UNFURL, "inspect", path, "--json", report, *extra], cwd=empty)
    check(r.returncode == 0, f"{label}: inspect exit 0 (got {r.returncode}: {r.stderr.strip()})")
    check(snapshot(tmp) == before and not os.listdir(empty), f"{label}: inspect created no file")
    if r.returncode != 0:
        return
    with open(report) as f:
        pts = json.load(f)["points"]
    shutil.rmtree(os.path.dirname(report))
    check((pts["rows"], pts["cols"]) == want.shape,
          f"{label}: shape {pts['rows']} x {pts['cols']} vs numpy {want.shape}")
    mins = np.array([c["min"] for c in pts["columns"]])
    maxs = np.array([c["max"] for c in pts["columns"]])
    means = np.array([c["mean"] for c in pts["columns"]])
    # The reader keeps the values as read (float64) and subtracts each column's centre before
    # narrowing to float32 (io/points_reader.hpp): inspect's figures are of the values as
    # read, within two float32 roundings (2^-23) of the column's spread.
    exact = expected.astype(np.float64)
    spread = np.maximum(exact.max(axis=0) - exact.min(axis=0), 1e-30)
    tol = 2.0 ** -23 * spread
    check(np.all(np.abs(mins - exact.min(axis=0)) <= tol), f"{label}: column minima equal")
    check(np.all(np.abs(maxs - exact.max(axis=0)) <= tol), f"{label}: column maxima equal")
    ref_mean = exact.mean(axis=0)
    scale = np.maximum(np.abs(exact).max(axis=0), 1e-30)
    err = float(np.max(np.abs(means - ref_mean) / scale))
    check(err < 2.0 ** -22, f"{label}: column means, max error {err:.2e} of the column scale (< 2^-22)")

    dump = os.path.join(tmp, "dump.bin")
    p = run([PROBE, path, dump, *extra], cwd=empty)
    check(p.returncode == 0, f"{label}: probe exit 0 ({p.stderr.strip()})")
    if p.returncode != 0:
        return
    raw = open(dump, "rb").read()
    os.remove(dump)
    n, d = (int(v) for v in np.frombuffer(raw[:16], dtype="<u8"))
    values = np.frombuffer(raw[16:16 + 4 * n * d], dtype="<f4").reshape(n, d)
    at = 16 + 4 * n * d + 8 * n
    centres = np.frombuffer(raw[at:at + 8 * d], dtype="<f8")
    # Each value read is the value as numpy holds it minus the column centre, rounded to
    # float32 twice at most (the centre is settled in one pass: v - provisional, then minus
    # the mean difference; |v - provisional| is at most twice the largest centred value):
    # within 3 x 2^-24, bounded here by 2^-22, of the largest centred magnitude of its column.
    ok = values.shape == want.shape and centres.shape == (d,)
    if ok:
        centred = exact - centres
        bound = 2.0 ** -22 * np.maximum(np.abs(centred).max(axis=0), 1e-30)
        ok = bool(np.all(np.abs(values.astype(np.float64) - centred) <= bound))
    check(ok, f"{label}: all {want.size} values equal numpy's minus the centres, within float32")


def expect_failure(tmp, label, args, code, needle):
    empty = tempfile.mkdtemp(dir=tmp)
    before = snapshot(tmp)
    r = run([UNFURL, "inspect", *args], cwd=empty)
    lines = r.stderr.strip().splitlines()
    check(r.returncode == code, f"{label}: exit {r.returncode}, expected {code}")
    check(len(lines) == 1 and needle in lines[0],
          f"{label}: one-line message naming '{needle}': {r.stderr.strip()!r}")
    check(snapshot(tmp) == before and not os.listdir(empty), f"{label}: no file created")


def main():
    rng = np.random.default_rng(20261201)
    with tempfile.TemporaryDirectory() as tmp:
        base = rng.normal(size=(257, 6))
        ints = rng.integers(-120, 120, size=(257, 6))
        h5 = os.path.join(tmp, "many.h5")
        with h5py.File(h5, "w") as f:
            f.attrs["note"] = "reader check"
            f.create_dataset("f32", data=base.astype(np.float32))
            f.create_dataset("deep/f64_gzip", data=base * 1e5, chunks=(16, 6), compression="gzip")
            f.create_dataset("i16", data=ints.astype(">i2"), chunks=(50, 2), shuffle=True,
                             compression="gzip", compression_opts=9)
            f.create_dataset("u8", data=(ints + 120).astype(np.uint8), chunks=(7, 6))
            f.create_dataset("i64", data=ints.astype(np.int64) * 1000003)
            f.create_dataset("u32be", data=(ints + 200).astype(">u4"))
            f.create_dataset("f16", data=base.astype(np.float16))
            f.create_dataset("f64be", data=base.astype(">f8"), chunks=(100, 1))
            f.create_dataset("cube", data=np.zeros((3, 4, 5)))
            f.create_dataset("names", data=np.array([[b"a", b"b"], [b"c", b"d"]]))
            f.create_dataset("labels", data=np.arange(257))
        with h5py.File(h5, "r") as f:
            for name in ["f32", "deep/f64_gzip", "i16", "u8", "i64", "u32be", "f16", "f64be"]:
                compare(tmp, f"h5py {name}", h5, f[name][()], ["--dataset", name])
            compare(tmp, "h5py i16 rows 10:200", h5, f["i16"][10:200], ["--dataset", "/i16", "--rows", "10:200"])
            compare(tmp, "h5py f64_gzip rows 250:", h5, f["deep/f64_gzip"][250:],
                    ["--dataset", "/deep/f64_gzip", "--rows", "250:"])

        single = os.path.join(tmp, "single.h5")
        with h5py.File(single, "w") as f:
            f.create_dataset("points", data=base, chunks=(32, 3), compression="gzip")
            f.create_dataset("labels", data=np.arange(257))
        compare(tmp, "h5py default dataset", single, base)

        # Constant data compresses near deflate's limit (about 1032:1): still points.
        flat = os.path.join(tmp, "flat.h5")
        with h5py.File(flat, "w") as f:
            f.create_dataset("zeros", data=np.zeros((4000, 784), np.float32), chunks=(1000, 784),
                             compression="gzip", compression_opts=9, shuffle=True)
            f.create_dataset("threes", data=np.full((500, 20), 3.0, np.float32), chunks=(100, 20),
                             scaleoffset=0)
        with h5py.File(flat, "r") as f:
            print(f"zeros: {f['zeros'].id.get_storage_size()} bytes stored for {4000 * 784 * 4}")
            compare(tmp, "h5py gzip zeros", flat, f["zeros"][()], ["--dataset", "zeros"])
            compare(tmp, "h5py scale-offset", flat, f["threes"][()], ["--dataset", "threes"])

        for dtype, fortran, version in [("<f4", False, (1, 0)), ("<f8", True, (2, 0)),
                                        (">f8", False, (3, 0)), (">i4", True, (1, 0)),
                                        ("<u2", False, (1, 0)), ("|i1", True, (2, 0)),
                                        ("<i8", False, (1, 0)), (">u8", True, (1, 0))]:
            a = (base * 40).astype(dtype) if dtype[1] == "f" else (ints + (0 if dtype[1] == "i" else 120)).astype(dtype)
            a = np.asfortranarray(a) if fortran else np.ascontiguousarray(a)
            path = os.path.join(tmp, f"a{dtype[1:]}{'F' if fortran else 'C'}.npy")
            with open(path, "wb") as out:
                np.lib.format.write_array(out, a, version=version)
            label = f"numpy {dtype} {'Fortran' if fortran else 'C'} order, format {version[0]}.0"
            compare(tmp, label, path, a)
            compare(tmp, label + " rows 3:100", path, a[3:100], ["--rows", "3:100"])
        np.save(os.path.join(tmp, "line.npy"), base[:, 0])
        compare(tmp, "numpy 1-D as one column", os.path.join(tmp, "line.npy"), base[:, 0])

        for delimiter, ext in [(",", "csv"), ("\t", "tsv"), (";", "csv"), (" ", "txt")]:
            path = os.path.join(tmp, f"t{ord(delimiter)}.{ext}")
            np.savetxt(path, base, delimiter=delimiter, header=delimiter.join("abcdef"),
                       comments="", fmt="%.9g")
            compare(tmp, f"numpy savetxt delimiter {delimiter!r}", path,
                    np.loadtxt(path, delimiter=None if delimiter == " " else delimiter, skiprows=1))

        # Number forms numpy's loadtxt (Python's float()) also parses: a sign, exponents,
        # subnormals, an underflow to zero, surrounding blanks, 17 digits on a 1e6 offset.
        forms = os.path.join(tmp, "forms.csv")
        with open(forms, "w") as out:
            out.write("x;y;z\n")
            out.write("+1.5; 1E3 ;1000000.1234567891\n")
            out.write("-0;4.9e-324;1000000.1234567899\n")
            out.write("1e-400;-2.5e+2;999999.99999999988\n")
            out.write(".5;5.;1000000.0000000001\n")
        compare(tmp, "number forms as numpy parses them", forms,
                np.loadtxt(forms, delimiter=";", skiprows=1))

        # Open data: scikit-learn's bundled digits set (1,797 x 64), converted by
        # datasets-scripts/digits_to_hdf5.py and compared with load_digits itself.
        from sklearn.datasets import load_digits
        script = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..",
                              "datasets-scripts", "digits_to_hdf5.py")
        digits_h5 = os.path.join(tmp, "digits.h5")
        r = run([sys.executable, script, "--out", digits_h5], cwd=tmp)
        check(r.returncode == 0, f"digits_to_hdf5.py exit 0 ({r.stderr.strip()[-200:]})")
        if r.returncode == 0:
            compare(tmp, "digits /images vs load_digits", digits_h5, load_digits().data)

        # Bad inputs: exit codes of engine/error.hpp.
        nan = base.copy()
        nan[40, 2] = np.nan
        np.save(os.path.join(tmp, "nan.npy"), nan)
        cut = open(h5, "rb").read()
        open(os.path.join(tmp, "half.h5"), "wb").write(cut[: len(cut) // 2])
        open(os.path.join(tmp, "noise.h5"), "wb").write(rng.bytes(5000))
        whole = open(os.path.join(tmp, "af4C.npy"), "rb").read()
        open(os.path.join(tmp, "cut.npy"), "wb").write(whole[:-7])
        open(os.path.join(tmp, "ragged.csv"), "w").write("1,2,3\n4,5,6\n7,8\n")
        lzf = os.path.join(tmp, "lzf.h5")  # h5py's own LZF filter, which libhdf5 lacks
        with h5py.File(lzf, "w") as f:
            f.create_dataset("x", data=base, compression="lzf")
        expect_failure(tmp, "filter not available", [lzf], 65, "lzf")
        expect_failure(tmp, "missing file", [os.path.join(tmp, "absent.h5")], 66, "absent.h5")
        expect_failure(tmp, "NaN", [os.path.join(tmp, "nan.npy")], 65, "row 40")
        expect_failure(tmp, "no such dataset", [h5, "--dataset", "/nope"], 66, "/nope")
        expect_failure(tmp, "several 2-D datasets", [h5], 64, "--dataset")
        expect_failure(tmp, "3-D dataset", [h5, "--dataset", "cube"], 65, "3-D")
        expect_failure(tmp, "string dataset", [h5, "--dataset", "names"], 65, "string")
        expect_failure(tmp, "rows outside", [single, "--rows", "200:300"], 64, "--rows")
        expect_failure(tmp, "rows syntax", [single, "--rows", "9-3"], 64, "--rows")
        expect_failure(tmp, "truncated HDF5", [os.path.join(tmp, "half.h5")], 74, "half.h5")
        expect_failure(tmp, "random bytes .h5", [os.path.join(tmp, "noise.h5")], 74, "noise.h5")
        expect_failure(tmp, "truncated NPY", [os.path.join(tmp, "cut.npy")], 74, "truncated")
        expect_failure(tmp, "ragged CSV", [os.path.join(tmp, "ragged.csv")], 65, "line 3")
        # Refused by name, each with exit 65 (bad data): numpy's float() reads the 400-digit
        # number as inf; a NUL byte, CR-only line ends, bytes after the NPY array.
        long_csv = os.path.join(tmp, "long.csv")
        open(long_csv, "w").write("1,2\n3," + "9" * 400 + "\n")
        check(np.isinf(np.loadtxt(long_csv, delimiter=",")[1, 1]), "numpy reads 400 nines as inf")
        expect_failure(tmp, "400-digit number", [long_csv], 65, "line 2, column 2")
        open(os.path.join(tmp, "nul.csv"), "wb").write(b"1,2\n3,\x004\n")
        expect_failure(tmp, "NUL byte", [os.path.join(tmp, "nul.csv")], 65, "NUL byte")
        open(os.path.join(tmp, "cr.csv"), "wb").write(b"1,2\r3,4\r")
        expect_failure(tmp, "CR-only line ends", [os.path.join(tmp, "cr.csv")], 65, "carriage return")
        open(os.path.join(tmp, "tail.npy"), "wb").write(whole + b"\0" * 8)
        expect_failure(tmp, "NPY trailing data", [os.path.join(tmp, "tail.npy")], 65, "trailing data")
        open(os.path.join(tmp, "fake.npy"), "w").write("1,2\n3,4\n")
        expect_failure(tmp, "not an NPY file", [os.path.join(tmp, "fake.npy")], 65, "not an NPY file")

    total = "points_io_check"
    if failures:
        print(f"{total}: {len(failures)} comparison(s) failed")
        sys.exit(1)
    print(f"{total}: every comparison passed")


if __name__ == "__main__":
    main()
