"""End-to-end tests of the work folder of `unfurl embed` (README "Long runs: resuming and
signals"): a run stopped by SIGTERM during the landmark rows exits 75, prints the command that
resumes, and leaves whole pieces; that command resumes (and says so); a second stop during the
resumed run; SIGKILL at three moments, and twice while the landmark choice and its rows overlap;
a second SIGINT stopping at once; torn and altered pieces found and recomputed with a warning; a
kill during the residual variance's source rows (made before the landmark rows) and an altered
batch of them recomputed with a warning; a kill during the scores resumed from the saved map and
residual variance without reading the landmark rows; the scores taken back; a new score k
rescoring only; the folder removed after success unless kept.

The reference for every map is an uninterrupted run of the same command with --no-work-dir
(the engine's own path, landmarks picked beside their rows): the resumed map must hold the
same datasets and attributes, byte for byte, except the root attributes of the run record
(seconds*, creation_time, peak_memory_bytes: different in every run by design). Files are read with h5py (Debian python3-h5py), the
independent reader of HDF5. Interrupted runs use 1 thread and the reference 2, so the check
also covers "results do not depend on the thread count".

Size: 200,000 Swiss roll points (the issue's size) with 64 landmarks and no scores, except
where scores are the point: the rows then take a few seconds on this machine, long enough to
stop a run in them, and the dozen runs stay within about a minute. Under the sanitizers
(UNFURL_SANITIZED=1, set by tests/CMakeLists.txt) every run is several times slower, so a
smaller roll gives the rows about as many seconds: the same checks, the same 16 row batches
(a count fixed by the engine, not by the size), a fraction of the time.

Run by ctest as cli.resume_test with env UNFURL_BIN.
"""

import json
import os
import shutil
import signal
import subprocess
import tempfile
import time

import h5py
import numpy as np

from cli_support import BIN, check, finish, run, swiss_roll

work = tempfile.mkdtemp(prefix="unfurl-resume-cli-")


def path(name):
    return os.path.join(work, name)


points = path("roll.npy")
SANITIZED = os.environ.get("UNFURL_SANITIZED", "0") == "1"
SIZE_SANITIZED = 80_000
SIZE = SIZE_SANITIZED if SANITIZED else 200_000
np.save(points, swiss_roll(SIZE, 12))
common = ["--landmarks", "64", "--k", "10", "--seed", "5"]
fast = [*common, "--no-score"]


def embed(out, extra, threads):
    return ["embed", points, "-o", out, *extra, "--threads", str(threads)]


def pieces(folder, step=""):
    if not os.path.isdir(folder):
        return []
    return sorted(n for n in os.listdir(folder) if n.endswith(".h5") and n.startswith(step))


def temporaries(folder):
    return [n for n in os.listdir(folder) if ".part-" in n] if os.path.isdir(folder) else []


def start(args):
    return subprocess.Popen([BIN, *args], stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                            text=True)


def signal_when(proc, ready, sig, what, limit=120):
    """Sends `sig` to `proc` as soon as ready() holds; returns (stdout, stderr, code, seen)."""
    t0 = time.monotonic()
    seen = False
    while proc.poll() is None and time.monotonic() - t0 < limit:
        if ready():
            proc.send_signal(sig)
            seen = True
            break
        time.sleep(0.002)
    out, err = proc.communicate(timeout=limit)
    check(f"{what}: the moment came before the run ended", seen, f"exit {proc.returncode}")
    return out, err, proc.returncode, seen


def exact(value):
    """A value in a form that compares equal only when every byte is: numeric arrays by dtype,
    shape and bytes; strings and object arrays (variable-length strings) by their items."""
    if isinstance(value, np.ndarray):
        if value.dtype == object:
            return ("object", value.shape, tuple(value.ravel().tolist()))
        return (value.dtype.str, value.shape, value.tobytes())
    if isinstance(value, np.generic):
        return (value.dtype.str, value.tobytes())
    return (type(value).__name__, value)


def datasets_and_attributes(file):
    """Every dataset (dtype, shape, bytes) and every attribute of every object, except the
    run record (root attribute run: times, arguments, resumed) and the root attributes
    seconds*, creation_time, peak_memory_bytes."""
    out = {}
    with h5py.File(file, "r") as f:
        def visit(name, obj):
            if isinstance(obj, h5py.Dataset):
                out["data:" + name] = (str(obj.dtype), exact(obj[()]))
            for key, value in obj.attrs.items():
                out[f"attr:{name}@{key}"] = exact(value)
        visit("/", f)
        f.visititems(visit)
    # The run record: wall times, the time the map was made and the peak memory differ
    # between any two runs by design; nothing else is left out.
    # The run record says how the run went (when, how long, with which arguments, from which
    # saved pieces): it differs by design; the map itself must not.
    for key in [k for k in out if k.startswith("attr:/@seconds") or k.startswith("attr:/@run")
                or k in ("attr:/@creation_time", "attr:/@peak_memory_bytes")]:
        del out[key]
    return out


def same_map(what, file, reference):
    a, b = datasets_and_attributes(file), datasets_and_attributes(reference)
    differ = sorted(k for k in a.keys() | b.keys() if a.get(k) != b.get(k))
    check(f"{what}: the map equals the uninterrupted run's (datasets and attributes)",
          not differ, f"differ: {differ[:6]}")


def whole_pieces(what, folder, reference):
    """Every piece opens with h5py; each batch of rows holds, row by row, the same distances
    as the reference map's /landmarks/geodesic row of that landmark (columns in another
    order: compared sorted)."""
    bad = []
    with h5py.File(reference, "r") as ref:
        geodesic = ref["/landmarks/geodesic"][()]
    by_sorted = {np.sort(r).tobytes() for r in geodesic}
    for name in pieces(folder):
        try:
            with h5py.File(os.path.join(folder, name), "r") as f:
                if name.startswith("rows-"):
                    values = f["values"][()]
                    if values.shape != (len(f["sources"]), geodesic.shape[1]):
                        bad.append(f"{name}: shape {values.shape}")
                    elif any(np.sort(r).tobytes() not in by_sorted for r in values):
                        bad.append(f"{name}: a row not among the reference's")
                elif "key" not in f.attrs:
                    bad.append(f"{name}: no key")
        except OSError as e:
            bad.append(f"{name}: {e}")
    check(f"{what}: every piece left is whole ({len(pieces(folder))} pieces)", not bad, str(bad))


# The references: uninterrupted, 2 threads, no work folder; the same with a work folder.
ref = path("ref.h5")
r = run(embed(ref, [*fast, "--no-work-dir", "--keep-geodesics"], 2))
check("reference run: exit 0", r.returncode == 0, r.stderr)
straight = path("straight.h5")
r = run(embed(straight, [*fast, "--keep-geodesics"], 2))
check("straight run with the work folder: exit 0", r.returncode == 0, r.stderr)
same_map("straight run with the work folder", straight, ref)
check("a successful run removes its work folder", not os.path.exists(straight + ".work"),
      str(pieces(straight + ".work")))

# SIGTERM during the landmark rows: exit 75, the resume command, whole pieces; that command
# resumes and says so.
out = path("term.h5")
folder = out + ".work"
args = embed(out, [*fast, "--keep-geodesics"], 1)
o, e, code, _ = signal_when(start(args), lambda: len(pieces(folder, "rows-")) >= 3,
                            signal.SIGTERM, "SIGTERM after 3 row batches")
check("SIGTERM: exit 75", code == 75, f"exit {code}, stderr {e!r}")
check("SIGTERM: no map written", not os.path.exists(out))
lines = e.splitlines()
command = next((lines[i + 1].strip() for i, l in enumerate(lines)
                if l.endswith("resume with:") and i + 1 < len(lines)), "")
check("SIGTERM: stderr gives the command that resumes", command.startswith("cd ") and
      BIN in command and "embed" in command, e)
check("SIGTERM: landmarks and some row batches saved",
      pieces(folder, "landmarks") and 3 <= len(pieces(folder, "rows-")) < 16,
      str(pieces(folder)))
whole_pieces("after SIGTERM", folder, ref)
saved_rows = len(pieces(folder, "rows-"))
r = subprocess.run(command.replace("--threads 1", "--threads 2"), shell=True,
                   capture_output=True, text=True, timeout=300)
check("the printed command resumes: exit 0", r.returncode == 0, r.stderr)
check("the resumed run says so, naming the nodes (no graph read), landmarks and saved batches",
      "resume: taking saved steps from" in r.stdout and "nodes taken" in r.stdout
      and "graph taken" not in r.stdout
      and "landmarks taken" in r.stdout and r.stdout.count("rows-") >= saved_rows, r.stdout)
same_map("resumed after SIGTERM", out, ref)
with h5py.File(out, "r") as f:
    resumed = json.loads(f.attrs["run"])["resumed"]
with h5py.File(ref, "r") as f:
    straight = json.loads(f.attrs["run"])["resumed"]
check("the run record names the pieces taken back (nodes, landmarks, every saved batch)",
      isinstance(resumed, list) and any(p.startswith("nodes") for p in resumed)
      and any(p.startswith("landmarks") for p in resumed)
      and sum(p.startswith("rows-") for p in resumed) >= saved_rows, resumed)
check("a straight run's record says it was not resumed", straight is False, straight)

# A second stop (SIGUSR1, a scheduler's warning) during the resumed run, then a third run.
out = path("twice.h5")
folder = out + ".work"
args = embed(out, [*fast, "--keep-geodesics"], 1)
_, e, code, _ = signal_when(start(args), lambda: len(pieces(folder, "rows-")) >= 2,
                            signal.SIGTERM, "first stop")
check("first stop: exit 75", code == 75, e)
_, e, code, _ = signal_when(start(args), lambda: len(pieces(folder, "rows-")) >= 6,
                            signal.SIGUSR1, "second stop (SIGUSR1) in the resumed run")
check("second stop: exit 75", code == 75, e)
r = run(args)
check("third run: exit 0", r.returncode == 0, r.stderr)
same_map("resumed twice", out, ref)

# SIGKILL at three moments: just after the graph is saved, in the middle of the rows, and
# while a piece is being written (a temporary file present) or, if that moment is missed,
# late in the rows. Every piece left must be whole; the rerun must equal the reference.
out = path("kill.h5")
folder = out + ".work"
args = embed(out, [*fast, "--keep-geodesics"], 1)
old_temporaries = set()
moments = [("after the graph piece", lambda: bool(pieces(folder, "graph"))),
           ("in the middle of the rows", lambda: len(pieces(folder, "rows-")) >= 8),
           ("during a piece write", lambda: bool(set(temporaries(folder)) - old_temporaries)
            or len(pieces(folder, "rows-")) >= 14)]
for what, ready in moments:
    old_temporaries = set(temporaries(folder))  # a killed run's, removed by the next
    _, _, code, _ = signal_when(start(args), ready, signal.SIGKILL, f"SIGKILL {what}")
    check(f"SIGKILL {what}: killed (exit -9)", code == -signal.SIGKILL, f"exit {code}")
    whole_pieces(f"SIGKILL {what}", folder, ref)
r = run(args)
check("after three kills: exit 0", r.returncode == 0, r.stderr)
check("after three kills: resumed", "resume: taking saved steps" in r.stdout, r.stdout)
same_map("resumed after three kills", out, ref)

# SIGKILL while the landmark choice and its rows overlap (2 threads: rows are computed beside
# the choice and saved as their batches complete, the choice as soon as it is made): killed the
# moment the choice piece appears, then again once a batch has been saved after it. Every
# piece left must be whole; the rerun must equal the reference.
out = path("overlap.h5")
folder = out + ".work"
args = embed(out, [*fast, "--keep-geodesics"], 2)
_, _, code, _ = signal_when(start(args), lambda: bool(pieces(folder, "landmarks")),
                            signal.SIGKILL, "SIGKILL as the landmark choice is saved")
check("SIGKILL as the choice is saved: killed", code == -signal.SIGKILL, f"exit {code}")
whole_pieces("SIGKILL as the choice is saved", folder, ref)
shutil.rmtree(folder)
_, _, code, _ = signal_when(start(args), lambda: bool(pieces(folder, "rows-")),
                            signal.SIGKILL, "SIGKILL at the first saved batch")
check("SIGKILL at the first saved batch: killed", code == -signal.SIGKILL, f"exit {code}")
check("SIGKILL at the first saved batch: the choice was saved before any batch",
      bool(pieces(folder, "landmarks")), str(pieces(folder)))
whole_pieces("SIGKILL at the first saved batch", folder, ref)
r = run(args)
check("after the kills in the overlap: exit 0, resumed", r.returncode == 0
      and "landmarks taken" in r.stdout, r.stdout + r.stderr)
same_map("resumed after the kills in the overlap", out, ref)

# A second SIGINT stops at once (exit 130 = 128 + SIGINT), leaving whole pieces. The first
# stop is fast (the next Dijkstra run), so the second must follow closely; two signals
# pending at once merge into one (and a loaded machine may deliver both late), so a few
# gaps are tried, from close to about one Dijkstra run apart.
out = path("int.h5")
folder = out + ".work"
codes = []
for gap in (0.0, 0.002, 0.01, 0.03, 0.06):
    # A fresh folder each try: an earlier try's pieces would send the signal before the
    # process has installed its handlers (it would then die of the signal itself).
    shutil.rmtree(folder, ignore_errors=True)
    proc = start(embed(out, [*fast, "--keep-geodesics"], 1))
    t0 = time.monotonic()
    while (proc.poll() is None and len(pieces(folder, "rows-")) < 2
           and time.monotonic() - t0 < 120):
        time.sleep(0.002)
    proc.send_signal(signal.SIGINT)
    time.sleep(gap)
    proc.send_signal(signal.SIGINT)
    o, e = proc.communicate(timeout=60)
    codes.append(proc.returncode)
    if proc.returncode == 130:
        check("two SIGINTs: one line on stderr saying so", "interrupted again" in e, e)
        break
check("two SIGINTs: exit 130 (stopped at once)", 130 in codes, f"exits {codes}")
whole_pieces("after two SIGINTs", folder, ref)

# Damaged pieces: two row batches, one truncated, one with a byte altered, and the nodes
# piece (short circuits, components, node order) with a byte altered; each found, warned
# about, recomputed (the nodes from the graph piece); the map still equals the reference.
# The folder is kept on request.
out = path("term.h5")  # its folder was removed by the successful resume: make one again
folder = out + ".work"
os.remove(out)
args = embed(out, [*fast, "--keep-geodesics", "--keep-work-dir"], 2)
r = run(args)
check("run with --keep-work-dir: exit 0 and the folder kept",
      r.returncode == 0 and len(pieces(folder, "rows-")) == 16, r.stderr + str(pieces(folder)))
rows = pieces(folder, "rows-")
with open(os.path.join(folder, rows[1]), "r+b") as f:
    f.truncate(os.path.getsize(os.path.join(folder, rows[1])) // 2)
with open(os.path.join(folder, rows[2]), "r+b") as f:
    f.seek(os.path.getsize(os.path.join(folder, rows[2])) // 2)
    b = f.read(1)
    f.seek(-1, 1)
    f.write(bytes([b[0] ^ 0x40]))
nodes = pieces(folder, "nodes.")
check("run with --keep-work-dir: one nodes piece", len(nodes) == 1, str(pieces(folder)))
with open(os.path.join(folder, nodes[0]), "r+b") as f:
    f.seek(os.path.getsize(os.path.join(folder, nodes[0])) * 2 // 3)
    b = f.read(1)
    f.seek(-1, 1)
    f.write(bytes([b[0] ^ 0x40]))
r = run(args)
check("damaged pieces: exit 0", r.returncode == 0, r.stderr)
warned = [l for l in r.stdout.splitlines() if l.startswith("warning: work folder:")]
check("damaged pieces: one warning each, naming the piece and recomputing it",
      len(warned) == 3 and all(any(n in l for l in warned) for n in (rows[1], rows[2], nodes[0]))
      and all("recomputing" in l for l in warned), r.stdout)
check("damaged nodes piece: made again from the graph piece",
      "graph taken" in r.stdout and "nodes taken" not in r.stdout
      and len(pieces(folder, "nodes.")) == 1, r.stdout)
same_map("after damaged pieces", out, ref)

# A kill during the scores: the rerun takes the nodes, the map (spectrum and coordinates) and
# the residual variance back, reads no landmark rows, and scores; its map equals an
# uninterrupted scored run's. A new --score-k then rescores only; the same one takes the
# scores back too.
ref_scored = path("ref-scored.h5")
scored_args = [*common, "--sample", "300"]
r = run(embed(ref_scored, [*scored_args, "--no-work-dir"], 2))
check("scored reference: exit 0", r.returncode == 0, r.stderr)
out = path("scored.h5")
folder = out + ".work"

# First a kill during the residual variance's source rows, which a run with a work folder
# makes before the landmark rows (so that a run killed late in those has them); one saved
# batch is then altered. The next run takes the whole batches back and warns about the altered
# one, which it makes again.
_, _, code, _ = signal_when(start(embed(out, scored_args, 1)),
                            lambda: len(pieces(folder, "residual-rows-")) >= 3, signal.SIGKILL,
                            "SIGKILL during the residual variance's rows")
check("SIGKILL during the residual rows: killed", code == -signal.SIGKILL, f"exit {code}")
early = pieces(folder, "residual-rows-")
check("SIGKILL during the residual rows: some batches saved, no landmark rows yet",
      3 <= len(early) < 16 and not pieces(folder, "rows-"), str(pieces(folder)))
bad = []
for name in early:  # a geodesic row is 0 at its own source (analytic), finite elsewhere
    with h5py.File(os.path.join(folder, name), "r") as f:
        values, sources = f["values"][()], f["sources"][()]
    if (values.shape != (len(sources), SIZE) or not np.isfinite(values).all()
            or any(values[i, s] != 0 for i, s in enumerate(sources))):
        bad.append(name)
check("SIGKILL during the residual rows: every batch left is whole", not bad, str(bad))
altered = early[1]
with open(os.path.join(folder, altered), "r+b") as f:
    f.seek(os.path.getsize(os.path.join(folder, altered)) // 2)
    b = f.read(1)
    f.seek(-1, 1)
    f.write(bytes([b[0] ^ 0x40]))

o, _, code, _ = signal_when(start(embed(out, scored_args, 1)),
                            lambda: bool(pieces(folder, "residual.")), signal.SIGKILL,
                            "SIGKILL once the residual variance is saved (the scores running)")
check("SIGKILL during the scores: killed", code == -signal.SIGKILL, f"exit {code}")
warned = [l for l in o.splitlines() if l.startswith("warning: work folder:")]
check("the altered residual batch: one warning naming it, and made again",
      len(warned) == 1 and altered in warned[0] and "recomputing" in warned[0]
      and len(pieces(folder, "residual-rows-")) == 16 and altered not in pieces(folder), o)
check("the whole residual batches taken back",
      all(f"resume: {n.split('.')[0]} taken" in o for n in early if n != altered), o)
check("SIGKILL during the scores: the map and residual pieces are saved",
      pieces(folder, "map") and pieces(folder, "residual.") and not pieces(folder, "scores"),
      str(pieces(folder)))
r = run(embed(out, [*scored_args, "--keep-work-dir"], 2))
taken = r.stdout
check("resumed in the scores: exit 0", r.returncode == 0, r.stderr)
check("resumed in the scores: nodes, map and residual variance taken, no landmark rows read",
      "nodes taken" in taken and "map taken" in taken and "residual taken" in taken
      and "rows-" not in taken and "scores taken" not in taken, taken)
same_map("resumed in the scores", out, ref_scored)
again = path("again.h5")
r = run(embed(again, [*scored_args, "--keep-work-dir", "--work-dir", folder], 2))
check("the same command again: the scores taken back too",
      r.returncode == 0 and "map taken" in r.stdout and "scores taken" in r.stdout, r.stdout)
same_map("scores taken from the folder", again, ref_scored)
rescored = path("rescored.h5")
r = run(embed(rescored, [*scored_args, "--score-k", "7", "--work-dir", folder], 2))
check("new --score-k: exit 0, the map taken back, the scores made again, the folder removed",
      r.returncode == 0 and "map taken" in r.stdout and "residual taken" in r.stdout
      and "scores taken" not in r.stdout and "rows-" not in r.stdout
      and not os.path.exists(folder), r.stdout + r.stderr)
with h5py.File(rescored, "r") as f, h5py.File(ref_scored, "r") as g:
    check("new --score-k: the same coordinates, scores at k = 7",
          np.array_equal(f["coords"][()], g["coords"][()]) and "k7" in f["quality"]
          and "k7" not in g["quality"], str(list(f["quality"])))

finish(work)
