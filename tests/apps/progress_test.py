"""End-to-end tests of progress, logs and the run record (README "Long runs: progress and
logs"): progress to a pipe is plain timestamped lines only (checked byte by byte); on a
terminal (a pseudo-terminal from Python's pty module) a live line redrawn in place, coloured
unless NO_COLOR is set; --quiet prints no progress; every --log-json line parses as JSON (Python's
json module) with the documented fields; the run record in the map (read with h5py, Debian
python3-h5py) and the JSON report names this host (Python's socket.gethostname), the threads
asked for, and start and end times inside the test's own clock readings; `inspect` shows it.

Run by ctest as cli.progress_test with env UNFURL_BIN.
"""

import datetime
import json
import os
import pty
import re
import select
import socket
import subprocess
import tempfile
import time

import h5py
import numpy as np

from cli_support import BIN, check, finish, run, swiss_roll

work = tempfile.mkdtemp(prefix="unfurl-progress-test-")


def path(name):
    return os.path.join(work, name)


# A plain log line: UTC time with milliseconds, then "step: text" (README).
STAMP = re.compile(rb"^(\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d\.\d{3})Z ([a-z ]+): (.+)$")
SGR = re.compile(rb"\x1b\[[0-9;]*m")  # a colour (Select Graphic Rendition) sequence, ECMA-48


def utc(text):
    return datetime.datetime.strptime(text, "%Y-%m-%dT%H:%M:%S.%f").replace(
        tzinfo=datetime.timezone.utc).timestamp()


def run_bytes(args, env=None):
    return subprocess.run([BIN, *args], capture_output=True, timeout=300,
                          env={**os.environ, **(env or {})})


def run_on_terminal(args, env):
    """Runs with stderr on a pseudo-terminal; returns (exit code, the bytes it showed)."""
    leader, follower = pty.openpty()
    proc = subprocess.Popen([BIN, *args], stdout=subprocess.DEVNULL, stderr=follower,
                            env={**os.environ, **env})
    os.close(follower)
    shown = b""
    while True:
        ready, _, _ = select.select([leader], [], [], 0.2)
        if ready:
            try:
                chunk = os.read(leader, 65536)
            except OSError:  # the terminal closed with the process
                chunk = b""
            if not chunk and proc.poll() is not None:
                break
            shown += chunk
        elif proc.poll() is not None:
            break
    os.close(leader)
    return proc.wait(timeout=60), shown


n = 8000
np.save(path("roll.npy"), swiss_roll(n, 5))
roll = path("roll.npy")
base = ["embed", roll, "--k", "10", "--landmarks", "64", "--dims", "2", "--score-method",
        "sampled", "--sample", "500"]

# 1. Progress to a pipe: one plain timestamped line per step, periodic lines during long
# steps (the interval shortened to 0.05 s for the test), no control character but newline.
before = time.time()
r = run_bytes(base + ["-o", path("pipe.h5"), "--threads", "2"], {"UNFURL_LOG_INTERVAL": "0.05"})
after = time.time()
check("embed to a pipe: exit 0", r.returncode == 0, r.stderr[-300:].decode("utf-8", "replace"))
controls = sorted({b for b in r.stderr if (b < 0x20 and b != 0x0a) or b == 0x7f})
check("progress to a pipe holds no control characters", not controls, f"bytes {controls}")
lines = r.stderr.decode("utf-8").splitlines()
unstamped = [x for x in r.stderr.splitlines() if not STAMP.match(x)]
check("every line to a pipe is timestamped 'TIME step: text'", lines and not unstamped,
      f"{unstamped[:3]}")
stamps = [utc(STAMP.match(x).group(1).decode()) for x in r.stderr.splitlines() if STAMP.match(x)]
check("the timestamps are in order and inside the run's wall time",
      stamps == sorted(stamps) and all(before - 1 <= s <= after + 1 for s in stamps),
      f"{stamps[:3]} not within {before}..{after}")
finished = [x for x in lines if ": done in " in x]
steps = [x.split(" ", 1)[1].split(":")[0] for x in finished]
check("one 'done' line per step: graph, landmark rows, spectral, scores",
      all(steps.count(s) == 1 for s in ("graph", "landmark rows", "spectral", "scores")), steps)
graph_line = next((x for x in finished if " graph: " in x), "")
check("the graph line counts every query row", f"({n} of {n} query rows)" in graph_line,
      graph_line)
periodic = [x for x in lines if " so far" in x]
check("a long step writes progress lines between its first and last",
      len(periodic) >= 1, f"{len(lines)} lines: {lines[:8]}")
check("stdout still holds the summary", b"wrote " in r.stdout, r.stdout[-200:])

# 2. --quiet: no progress and no notes; the JSON log is still written.
log = path("run.jsonl")
r = run_bytes(base + ["-o", path("quiet.h5"), "--quiet", "--log-json", log,
                      "--json", path("quiet.json")])
check("--quiet: exit 0, nothing on stdout or stderr",
      r.returncode == 0 and r.stdout == b"" and r.stderr == b"",
      f"exit {r.returncode}, stdout {r.stdout[:100]!r}, stderr {r.stderr[:200]!r}")

# 3. --log-json: each line one JSON object with the documented fields.
with open(log, "rb") as f:
    raw = f.read().splitlines()
events = []
bad = []
for line in raw:
    try:
        events.append(json.loads(line))
    except ValueError:
        bad.append(line[:80])
check("--log-json: every line parses as JSON", raw and not bad, f"{bad[:3]}")
kinds = [e.get("event") for e in events]
check("--log-json: run_started first, run_finished last",
      kinds[:1] == ["run_started"] and kinds[-1:] == ["run_finished"], kinds)
check("--log-json: every event has a UTC time",
      all(re.fullmatch(r"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d\.\d{3}Z", e.get("time", ""))
          for e in events), events[:2])
fields = {"step_started": {"step", "total", "unit"},
          "step_finished": {"step", "ok", "seconds", "done", "total", "unit",
                            "peak_memory_bytes"},
          "progress": {"step", "done", "total", "unit", "seconds", "rate", "seconds_left"},
          "note": {"text"}, "run_finished": {"exit_code", "seconds", "peak_memory_bytes"}}
missing = [(e["event"], sorted(fields[e["event"]] - e.keys())) for e in events
           if e.get("event") in fields and not fields[e["event"]] <= e.keys()]
check("--log-json: each event holds its documented fields", not missing, f"{missing[:3]}")
graph_end = [e for e in events if e.get("event") == "step_finished" and e["step"] == "graph"]
check("--log-json: the graph step counted every query row",
      len(graph_end) == 1 and graph_end[0]["done"] == n and graph_end[0]["total"] == n
      and graph_end[0]["ok"] is True, graph_end)
check("--log-json: run_finished says exit 0",
      events and events[-1].get("exit_code") == 0, events[-1:])
check("--log-json: the notes are the summary lines",
      any(e.get("event") == "note" and e["text"].startswith("wrote ") for e in events), kinds)
# A failed run appends its error with the exit code it ends with (66: missing input).
r = run_bytes(["embed", path("absent.npy"), "-o", path("x.h5"), "--log-json", log])
with open(log, "rb") as f:
    tail = [json.loads(x) for x in f.read().splitlines()[len(raw):]]
errors = [e for e in tail if e.get("event") == "error"]
check("--log-json: a failed run appends its error and exit code to the same file",
      r.returncode == 66 and len(errors) == 1 and "absent.npy" in errors[0]["text"]
      and errors[0]["exit_code"] == 66 and tail[-1].get("exit_code") == 66,
      f"exit {r.returncode}, {tail}")
r = run(base + ["-o", path("y.h5"), "--log-json", path("missing/run.jsonl")])
check("--log-json into a missing folder: exit 73 naming the option",
      r.returncode == 73 and "--log-json" in r.stderr and not os.path.exists(path("y.h5")),
      f"exit {r.returncode}: {r.stderr.strip()}")

# 4. The run record in the map and the report.
with h5py.File(path("quiet.h5"), "r") as f:
    record = json.loads(f.attrs["run"])
with open(path("quiet.json")) as f:
    report = json.load(f)
version = subprocess.run([BIN, "--version"], capture_output=True, text=True).stdout.split()[-1]
check("run record: the map's and the report's agree", report.get("run") == record,
      f"{report.get('run')} vs {record}")
check("run record: program version as --version says", record["program_version"] == version,
      f"{record['program_version']} vs {version}")
check("run record: this host", record["host"] == socket.gethostname(),
      f"{record['host']} vs {socket.gethostname()}")
check("run record: threads at least 1", isinstance(record["threads"], int)
      and record["threads"] >= 1, record["threads"])
start, end = utc(record["started"][:-1]), utc(record["finished"][:-1])
check("run record: started <= finished, seconds agree with them",
      start <= end and abs((end - start) - record["seconds"]) < 0.05,
      f"{record['started']} {record['finished']} {record['seconds']}")
check("run record: build options named",
      {"type", "native", "sanitizers", "blas", "compiler"} <= record["build"].keys(),
      record["build"])
names = [s["step"] for s in record["steps"]]
check("run record: a time and a peak memory per step",
      names[:1] == ["graph"] and "scores" in names and all(
          s["seconds"] >= 0 and 0 < s["peak_memory_bytes"] <= record["peak_memory_bytes"]
          for s in record["steps"]), names)
check("run record: the steps fit in the run's time",
      sum(s["seconds"] for s in record["steps"]) <= record["seconds"], record["steps"])
check("run record: not resumed, arguments as typed",
      record["resumed"] is False and record["arguments"][:2] == ["embed", roll], record)
# --threads 2 is what the record says (OpenMP's count as set).
with h5py.File(path("pipe.h5"), "r") as f:
    piped = json.loads(f.attrs["run"])
check("run record: --threads 2 recorded as 2", piped["threads"] == 2, piped["threads"])
t0 = time.time()
r = run(["inspect", path("pipe.h5")])
check("inspect shows the run record",
      r.returncode == 0 and "run record:" in r.stdout and socket.gethostname() in r.stdout
      and "2 threads" in r.stdout and "step graph: done in" in r.stdout,
      f"exit {r.returncode}: {r.stdout[-600:]}")

# 5. A terminal: a live line redrawn in place, coloured; NO_COLOR removes the colour only.
small = ["embed", roll, "--k", "10", "--landmarks", "64", "--no-score"]
code, shown = run_on_terminal(small + ["-o", path("tty.h5")], {"TERM": "xterm"})
check("on a terminal: exit 0, the live line redrawn with carriage returns",
      code == 0 and b"\r\x1b[K" in shown and b"graph" in shown, f"exit {code}, {shown[:200]!r}")
check("on a terminal: colour by default", SGR.search(shown) is not None, f"{shown[:200]!r}")
code, shown = run_on_terminal(small + ["-o", path("tty2.h5")],
                              {"TERM": "xterm", "NO_COLOR": "1"})
check("NO_COLOR: no colour sequences, the live line still redrawn",
      code == 0 and SGR.search(shown) is None and b"\r\x1b[K" in shown,
      f"exit {code}, {shown[:300]!r}")
code, shown = run_on_terminal(small + ["-o", path("tty3.h5"), "--quiet"], {"TERM": "xterm"})
check("--quiet on a terminal: nothing shown", code == 0 and shown == b"", f"{shown[:200]!r}")

finish(work)
