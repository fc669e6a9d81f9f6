"""What the end-to-end scripts of tests/apps share: running unfurl, counting checks, and
proving that a refused command created, removed or changed nothing (snapshots of a folder by
content, permission bits and symlink target, never opening anything but regular files, so a
FIFO in the folder cannot block). Not a test itself (the ctest glob is *_test.py)."""

import hashlib
import os
import re
import stat
import subprocess
import sys

import numpy as np

BIN = os.environ["UNFURL_BIN"]
failures = []
counts = {"checks": 0}


def check(what, ok, detail=""):
    counts["checks"] += 1
    print(("ok   " if ok else "FAIL ") + what + ("" if ok else ": " + str(detail)), flush=True)
    if not ok:
        failures.append(what)


def finish(work):
    """Prints the tally; exits 1 on any failure (keeping `work`), else removes `work`."""
    print(f"{counts['checks'] - len(failures)} of {counts['checks']} checks passed "
          f"(work folder {work})")
    if failures:
        sys.exit(1)
    subprocess.run(["rm", "-rf", work], check=False)


def run(args, timeout=300, **kw):
    r = subprocess.run([BIN, *args], capture_output=True, timeout=timeout, **kw)
    # Bytes of a damaged input may be echoed; decode them without failing here.
    r.stdout = r.stdout.decode("utf-8", "replace")
    r.stderr = r.stderr.decode("utf-8", "replace")
    return r


# A progress line in a log (README "Long runs: progress and logs"): UTC time, then "step: ".
PROGRESS_LINE = re.compile(r"^\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d\.\d{3}Z [a-z ]+: ")


def messages(stderr):
    """The lines of `stderr` that are messages (errors, notes), not progress lines."""
    return [line for line in stderr.splitlines() if not PROGRESS_LINE.match(line)]


def digest(path):
    with open(path, "rb") as f:
        return hashlib.sha256(f.read()).hexdigest()


def snapshot(folder):
    """Every entry under `folder` (hidden ones too): regular files by SHA-256 and permission
    bits, symlinks by target, other kinds by type."""
    out = {}
    for root, dirs, files in os.walk(folder):
        for name in dirs + files:
            path = os.path.join(root, name)
            key = os.path.relpath(path, folder)
            st = os.lstat(path)
            if stat.S_ISLNK(st.st_mode):
                out[key] = "link -> " + os.readlink(path)
            elif stat.S_ISREG(st.st_mode):
                out[key] = f"{digest(path)} {oct(st.st_mode & 0o7777)}"
            else:
                out[key] = f"type {stat.S_IFMT(st.st_mode):o}"
    return out


def snapshot_diff(before, after):
    added = sorted(set(after) - set(before))
    removed = sorted(set(before) - set(after))
    changed = sorted(k for k in before.keys() & after.keys() if before[k] != after[k])
    return f"added {added}, removed {removed}, changed {changed}"


def refused(what, args, code, names, folder, timeout=300):
    """Runs a command that must fail: exit `code`, one line on stderr holding every string of
    `names`, and no file under `folder` created, removed or changed."""
    before = snapshot(folder)
    try:
        r = run(args, timeout=timeout)
    except subprocess.TimeoutExpired:
        check(f"{what}: ends", False, f"still running after {timeout} s")
        return None
    after = snapshot(folder)
    lines = messages(r.stderr)
    problems = []
    if r.returncode != code:
        problems.append(f"exit {r.returncode}, expected {code}")
    if len(lines) != 1 or not lines[0].strip():
        problems.append(f"stderr has {len(lines)} lines")
    missing = [n for n in names if n not in r.stderr]
    if missing:
        problems.append(f"message lacks {missing}")
    if before != after:
        problems.append("files touched: " + snapshot_diff(before, after))
    check(f"{what}: exit {code}, one line naming {names}, no output", not problems,
          "; ".join(problems) + f"; stderr {r.stderr.strip()!r}")
    return r


def succeeds(what, args):
    r = run(args)
    check(f"{what}: exit 0", r.returncode == 0,
          f"exit {r.returncode}; stderr {r.stderr.strip()!r}")
    return r


def swiss_roll(n, seed):
    # The Swiss roll parametrisation of DESIGN.md section 6 (t = 1.5 pi (1 + 2u), height 21 u').
    rng = np.random.default_rng(seed)
    t = 1.5 * np.pi * (1 + 2 * rng.random(n))
    h = 21 * rng.random(n)
    return np.column_stack([t * np.cos(t), h, t * np.sin(t)]).astype(np.float32)
