"""End-to-end tests of how unfurl writes its outputs (io/atomic_output, apps/): an output that
is an input, another output, a FIFO, a folder, or sits in a missing or read-only folder is
refused before any work with exit 73 and one line naming the option and the file; every
output of a run is committed together, so a signal (SIGINT, SIGTERM, SIGUSR1, SIGHUP) at any
moment gives either exit 0 with all outputs new or exit 75 with all of them byte-identical;
temporary files never outlive the run (and a later run removes those of dead processes); a
full disk names the output and the system's cause with exit 74 and leaves the old map whole.

Run by ctest as cli.outputs_test with env UNFURL_BIN. Expectations are those of POSIX
rename(2), link(2) and stat(2) semantics (same device and inode = same file; a rename
replaces the directory entry, not the file a symlink points through) and the Linux tmpfs
"size=" limit (mount(8), tmpfs(5)): common practice, no further source. Inputs are written
with h5py 3.7 and numpy 1.24 (Debian python3-h5py, python3-numpy), outputs are read back with
h5py. Only files, FIFOs, symlinks and hard links this script makes are used, never a device
node. The disk-full and read-only cases mount tmpfs and need root; they are skipped with a
message otherwise. Exits non-zero when any check fails; prints every check.
"""

import os
import signal
import socket
import stat
import subprocess
import tempfile
import time

import h5py
import numpy as np

from cli_support import (BIN, check, digest, finish, messages, refused, run, snapshot, snapshot_diff,
                         swiss_roll)

N = 300


def temporaries(folder):
    return sorted(n for n in os.listdir(folder) if ".part-" in n)


def map_rows(path):
    with h5py.File(path, "r") as f:
        return f["coords"].shape[0]


def host_tag():
    # FNV-1a (32 bit) of the host name, as io/atomic_output.cpp names its temporary files.
    h = 2166136261
    for b in socket.gethostname().encode():
        h = ((h ^ b) * 16777619) & 0xFFFFFFFF
    return f"{h:08x}"


def catching(pid, sig, limit=10.0):
    """Waits until process `pid` has a handler for `sig` (SigCgt in /proc/PID/status)."""
    end = time.monotonic() + limit
    while time.monotonic() < end:
        try:
            with open(f"/proc/{pid}/status") as f:
                for line in f:
                    if line.startswith("SigCgt:") and int(line.split()[1], 16) >> (sig - 1) & 1:
                        return
        except FileNotFoundError:
            return
        time.sleep(0.001)


def dead_pid():
    p = subprocess.Popen(["true"])
    p.wait()
    return p.pid


def refusals(work, d):
    roll_h5, roll_npy, roll_csv = d("roll.h5"), d("roll.npy"), d("roll.csv")
    embed = lambda *a: ["embed", roll_h5, "--no-score", *a]  # noqa: E731

    refused("embed x.h5 -o x.h5", ["embed", roll_h5, "-o", roll_h5], 73,
            ["-o", "roll.h5", "input"], work)
    refused("graph x.npy -o x.npy", ["graph", roll_npy, "-o", roll_npy], 73,
            ["-o", "roll.npy", "input"], work)
    refused("embed x.csv --csv x.csv", ["embed", roll_csv, "-o", d("m.h5"), "--csv", roll_csv],
            73, ["--csv", "roll.csv", "input"], work)
    refused("-o m.h5 --csv m.h5", embed("-o", d("m.h5"), "--csv", d("m.h5")), 73,
            ["--csv", "-o", "m.h5"], work)
    refused("-o ./m.h5 --json m.h5 (two spellings, neither exists)",
            ["embed", roll_h5, "--no-score", "-o", os.path.join(work, ".", "m.h5"), "--json",
             d("m.h5")], 73, ["--json", "-o", "m.h5"], work)
    refused("score --json naming the points file",
            ["score", roll_npy, "--points", roll_h5, "--json", roll_h5], 73,
            ["--json", "roll.h5", "--points"], work)
    refused("graph --json naming -o", ["graph", roll_h5, "-o", d("g.h5"), "--json", d("g.h5")],
            73, ["--json", "-o", "g.h5"], work)

    os.symlink("roll.h5", d("link-to-input.h5"))
    refused("-o through a symlink to the input", embed("-o", d("link-to-input.h5")), 73,
            ["-o", "link-to-input.h5", "roll.h5"], work)
    os.link(roll_h5, d("hard-link.h5"))
    refused("-o a hard link of the input", embed("-o", d("hard-link.h5")), 73,
            ["-o", "hard-link.h5", "roll.h5"], work)
    os.link(roll_csv, d("hard-link.csv"))
    refused("--csv a hard link of the input CSV",
            ["embed", roll_csv, "--no-score", "-o", d("m.h5"), "--csv", d("hard-link.csv")], 73,
            ["--csv", "hard-link.csv"], work)

    # A FIFO: refused at once, never opened (opening it would block with no reader).
    os.mkfifo(d("fifo.h5"))
    refused("-o a FIFO", embed("-o", d("fifo.h5")), 73, ["-o", "fifo.h5", "FIFO"], work,
            timeout=30)
    refused("--csv a FIFO", embed("-o", d("m.h5"), "--csv", d("fifo.h5")), 73,
            ["--csv", "fifo.h5", "FIFO"], work, timeout=30)
    os.symlink("fifo.h5", d("link-to-fifo.h5"))
    refused("--json through a symlink to a FIFO", embed("-o", d("m.h5"), "--json",
                                                        d("link-to-fifo.h5")), 73,
            ["--json", "link-to-fifo.h5", "FIFO"], work, timeout=30)
    os.mkdir(d("a-folder"))
    refused("-o a folder", embed("-o", d("a-folder")), 73, ["-o", "a-folder", "folder"], work)
    refused("--csv in a missing folder", embed("-o", d("m.h5"), "--csv", d("nowhere/m.csv")), 73,
            ["--csv", "nowhere", "does not exist"], work)
    refused("graph -o in a missing folder", ["graph", roll_h5, "-o", d("nowhere/g.h5")], 73,
            ["-o", "nowhere", "does not exist"], work)
    if os.geteuid() != 0:
        os.mkdir(d("locked"))
        os.chmod(d("locked"), 0o555)
        refused("-o in a folder without write permission", embed("-o", d("locked/m.h5")), 73,
                ["-o", "locked", "not writable"], work)
        os.chmod(d("locked"), 0o755)
    refused("demo --out naming a file the run cannot be a folder of",
            ["demo", "--out-dir", roll_h5, "--point-count", "50"], 73, ["--out-dir", "roll.h5"], work)
    # demo creates its folder, then finds --csv unusable: the new folder goes again.
    refused("demo with a bad --csv leaves no new folder",
            ["demo", "--out-dir", d("demo-new"), "--point-count", "50", "--csv", d("nowhere/d.csv")], 73,
            ["--csv", "nowhere"], work)


def successes(work, d):
    roll_h5 = d("roll.h5")
    # A symlink to a regular file is written through: the link stays, its target is replaced
    # and keeps its permission bits.
    os.mkdir(d("real"))
    with open(d("real/old.h5"), "wb") as f:
        f.write(b"an old map")
    os.chmod(d("real/old.h5"), 0o640)
    os.symlink("real/old.h5", d("via-link.h5"))
    with open(d("kept.csv"), "w") as f:
        f.write("old\n")
    os.chmod(d("kept.csv"), 0o604)
    r = run(["embed", roll_h5, "--no-score", "-o", d("via-link.h5"), "--csv", d("kept.csv")])
    check("symlinked -o: exit 0", r.returncode == 0, r.stderr.strip())
    check("symlinked -o: the link stays a link to the same target",
          os.path.islink(d("via-link.h5")) and os.readlink(d("via-link.h5")) == "real/old.h5")
    check("symlinked -o: the target now holds the map", map_rows(d("real/old.h5")) == N)
    check("symlinked -o: the target keeps mode 0640",
          stat.S_IMODE(os.stat(d("real/old.h5")).st_mode) == 0o640,
          oct(os.stat(d("real/old.h5")).st_mode))
    kept = stat.S_IMODE(os.stat(d("kept.csv")).st_mode)
    check("replaced --csv keeps mode 0604", kept == 0o604, oct(kept))
    check("no temporary file left", not temporaries(work) and not temporaries(d("real")),
          str(temporaries(work) + temporaries(d("real"))))

    # A new file gets 0666 & ~umask (not mkstemp's 0600).
    r = run(["embed", roll_h5, "--no-score", "-o", d("fresh.h5")],
            preexec_fn=lambda: os.umask(0o027))
    mode = stat.S_IMODE(os.stat(d("fresh.h5")).st_mode) if os.path.exists(d("fresh.h5")) else None
    check("new map under umask 027 has mode 0640", r.returncode == 0 and mode == 0o640,
          f"exit {r.returncode}, mode {mode and oct(mode)}")

    # A closed stdout: the report cannot be printed (exit 74, named), and no output file
    # receives descriptor 1 and the report's lines with it.
    r = run(["embed", roll_h5, "--no-score", "-o", d("closed-stdout.h5")],
            preexec_fn=lambda: os.close(1))
    with h5py.File(d("closed-stdout.h5"), "r") as f:
        rows = f["coords"].shape[0]
    check("closed stdout: exit 74 naming standard output, the map is a whole HDF5 file",
          r.returncode == 74 and "standard output" in r.stderr and rows == N,
          f"exit {r.returncode}, stderr {r.stderr.strip()!r}")

    # A dangling symlink is written through too: its target appears, the link stays.
    os.symlink("real/new.csv", d("dangling.csv"))
    r = run(["embed", roll_h5, "--no-score", "-o", d("m2.h5"), "--csv", d("dangling.csv")])
    check("--csv through a dangling symlink creates its target, link stays",
          r.returncode == 0 and os.path.islink(d("dangling.csv"))
          and os.path.isfile(d("real/new.csv")), r.stderr.strip())

    # The longest valid name: the temporary name is shortened, the output keeps its name.
    longest = "c" * (os.pathconf(work, "PC_NAME_MAX") - 4) + ".csv"
    r = run(["embed", roll_h5, "--no-score", "-o", d("m3.h5"), "--csv", d(longest)])
    check(f"--csv of a {len(longest)}-byte name: exit 0, written",
          r.returncode == 0 and os.path.isfile(d(longest)), r.stderr.strip())

    # Stale temporary files: those of dead processes of this host go, others stay.
    gone = dead_pid()
    stale = [f".m4.h5.part-{host_tag()}-{gone}-0", f".m4.h5.part-{gone}-3"]
    alive = [f".m4.h5.part-{host_tag()}-{os.getpid()}-0",  # this script: alive
             f".m4.h5.part-0badc0de-{gone}-0"]  # another host's process
    for name in stale + alive:
        with open(d(name), "wb") as f:
            f.write(b"x" * 1000)
    r = run(["embed", roll_h5, "--no-score", "-o", d("m4.h5")])
    left = set(os.listdir(work))
    check("stale temporaries of a dead pid removed, live and foreign ones kept",
          r.returncode == 0 and not (set(stale) & left) and set(alive) <= left,
          f"exit {r.returncode}; left {sorted(n for n in left if '.part-' in n)}")
    for name in alive:
        os.remove(d(name))


def signals(work, d):
    """A signal at any moment: exit 0 with every output new, or exit 75 with every output
    byte-identical; no temporary file either way."""
    roll_h5 = d("roll.h5")
    outs = {"-o": d("sig.h5"), "--csv": d("sig.csv"), "--json": d("sig.json")}
    # Time one run to spread the signals over it.
    start = time.monotonic()
    r = run(["embed", roll_h5, *sum(([k, v] for k, v in outs.items()), [])])
    length = time.monotonic() - start
    check("timing run: exit 0", r.returncode == 0, r.stderr.strip())
    sigs = [signal.SIGTERM, signal.SIGHUP, signal.SIGINT, signal.SIGUSR1]
    seen = {0: 0, 75: 0}
    for i in range(16):
        for path in outs.values():
            with open(path, "wb") as f:
                f.write(f"old {path}".encode())
        before = {k: digest(v) for k, v in outs.items()}
        sig = sigs[i % len(sigs)]
        # --no-work-dir: the outputs alone (the work folder a stop keeps: resume_test.py).
        job = subprocess.Popen([BIN, "embed", roll_h5, "--no-work-dir",
                                *sum(([k, v] for k, v in outs.items()), [])],
                               stdout=subprocess.PIPE, stderr=subprocess.PIPE)
        # Before main() has installed its handlers, a signal kills as it always does; the
        # clock starts once the process catches the signal.
        catching(job.pid, sig)
        time.sleep(length * (i + 0.5) / 16)
        job.send_signal(sig)
        _, err = job.communicate(timeout=120)
        err = err.decode("utf-8", "replace")
        after = {k: digest(v) for k, v in outs.items()}
        changed = [k for k in outs if before[k] != after[k]]
        if job.returncode == 0:
            ok = len(changed) == len(outs)
        elif job.returncode == 75:
            ok = not changed and len(messages(err)) == 1
        else:
            ok = False
        ok = ok and not temporaries(work)
        seen[job.returncode] = seen.get(job.returncode, 0) + 1
        check(f"{signal.Signals(sig).name} after {length * (i + 0.5) / 16:.2f} s: exit "
              f"{job.returncode}, outputs {'all new' if changed else 'all old'}, no temporaries",
              ok, f"changed {changed}, stderr {err.strip()!r}, temporaries {temporaries(work)}")
    print(f"     signal runs: {seen} (run length {length:.2f} s)")
    check("some signal runs stopped with 75", seen.get(75, 0) > 0, str(seen))

    # SIGTERM and SIGHUP during a long run (exact mode, 6,000 points).
    big = d("big.npy")
    np.save(big, swiss_roll(6000, 9))
    for sig in (signal.SIGTERM, signal.SIGHUP):
        for path in outs.values():
            with open(path, "wb") as f:
                f.write(b"old")
        before = snapshot(work)
        job = subprocess.Popen([BIN, "embed", big, "--landmarks", "all", "--no-work-dir",
                                *sum(([k, v] for k, v in outs.items()), [])],
                               stdout=subprocess.PIPE, stderr=subprocess.PIPE)
        catching(job.pid, sig)
        time.sleep(0.5)
        job.send_signal(sig)
        _, err = job.communicate(timeout=300)
        err = err.decode("utf-8", "replace")
        after = snapshot(work)
        check(f"{signal.Signals(sig).name} mid-run: exit 75, one line, nothing changed, no "
              "temporaries", job.returncode == 75 and len(messages(err)) == 1
              and before == after, f"exit {job.returncode}, stderr {err.strip()!r}, "
              + snapshot_diff(before, after))
    os.remove(big)


def full_disk(work, d):
    """Disk full during the map, CSV or JSON write: exit 74 naming that output and the
    system's cause; the old map stays byte-identical. Needs root to mount tmpfs."""
    if os.geteuid() != 0:
        print("skip disk-full and read-only cases: not root (tmpfs cannot be mounted)")
        return
    roll_h5 = d("roll.h5")
    big = d("wide.h5")
    with h5py.File(big, "w") as f:
        f.create_dataset("points", data=swiss_roll(4000, 5))
    # Sizes of the outputs of this very run, made outside the small disk.
    args = ["embed", big, "--no-score", "--dims", "2"]
    r = run(args + ["-o", d("ref.h5"), "--csv", d("ref.csv"), "--json", d("ref.json")])
    check("reference run for the sizes: exit 0", r.returncode == 0, r.stderr.strip())
    sizes = {k: os.path.getsize(d("ref." + k)) for k in ("h5", "csv", "json")}
    print(f"     output sizes {sizes}")
    page = 4096
    pages = lambda n: (n + page - 1) // page  # noqa: E731
    cases = [
        # room for half the new map (HDF5 1.10 once crashed closing a file on a full disk)
        ("-o", "m.h5", pages(sizes["h5"]) // 2),
        # room for the new map and half the CSV
        ("--csv", "m.csv", pages(sizes["h5"]) + 2 + pages(sizes["csv"]) // 2),
        # room for the new map and the CSV, none for the JSON (same run, same sizes)
        ("--json", "m.json", pages(sizes["h5"]) + pages(sizes["csv"])),
    ]
    mnt = d("small-disk")
    os.mkdir(mnt)
    for option, name, free_pages in cases:
        # The tmpfs holds the old map and a filler that leaves `free_pages` free.
        total = pages(sizes["h5"]) + free_pages + 4
        mounted = subprocess.run(["mount", "-t", "tmpfs", "-o", f"size={total * page}", "tmpfs",
                                  mnt], capture_output=True)
        if mounted.returncode != 0:
            print(f"skip disk-full case {option}: mount failed: {mounted.stderr.decode().strip()}")
            return
        try:
            with open(d("ref.h5"), "rb") as src, open(os.path.join(mnt, "m.h5"), "wb") as dst:
                dst.write(src.read())
            old = digest(os.path.join(mnt, "m.h5"))
            vfs = os.statvfs(mnt)
            filler = vfs.f_bavail * vfs.f_frsize - free_pages * page
            with open(os.path.join(mnt, "filler"), "wb") as f:
                f.write(b"\0" * max(filler, 0))
            out = ["-o", os.path.join(mnt, "m.h5"), "--csv", os.path.join(mnt, "m.csv")]
            if option == "--json":
                out += ["--json", os.path.join(mnt, "m.json")]
            r = run(args + out)
            left = sorted(os.listdir(mnt))
            check(f"disk full during {option}: exit 74, one line naming {name} and the cause, "
                  "old map byte-identical, nothing else left",
                  r.returncode == 74 and len(messages(r.stderr)) == 1 and option in r.stderr
                  and name in r.stderr and "No space left on device" in r.stderr
                  and ".part-" not in r.stderr and digest(os.path.join(mnt, "m.h5")) == old
                  and left == ["filler", "m.h5"],
                  f"exit {r.returncode}, stderr {r.stderr.strip()!r}, left {left}")
            if option == "--json":
                # A report that cannot be printed: stdout on the full disk is exit 74.
                os.remove(os.path.join(mnt, "filler"))
                with open(os.path.join(mnt, "filler"), "wb") as f:
                    f.write(b"\0" * (os.statvfs(mnt).f_bavail * os.statvfs(mnt).f_frsize))
                with open(os.path.join(mnt, "stdout.txt"), "wb") as sink:
                    r = subprocess.run([BIN, "inspect", roll_h5], stdout=sink,
                                       stderr=subprocess.PIPE, timeout=60)
                err = r.stderr.decode("utf-8", "replace")
                check("inspect with stdout on a full disk: exit 74, names standard output",
                      r.returncode == 74 and len(err.splitlines()) == 1
                      and "standard output" in err and "No space left on device" in err,
                      f"exit {r.returncode}, stderr {err.strip()!r}")
        finally:
            subprocess.run(["umount", mnt], check=False)

    # A read-only folder (root passes every permission check, but not a read-only mount).
    mounted = subprocess.run(["mount", "-t", "tmpfs", "-o", "ro,size=1m", "tmpfs", mnt],
                             capture_output=True)
    if mounted.returncode != 0:
        print(f"skip read-only case: mount failed: {mounted.stderr.decode().strip()}")
        return
    try:
        refused("-o in a read-only folder",
                ["embed", roll_h5, "--no-score", "-o", os.path.join(mnt, "m.h5")], 73,
                ["-o", "small-disk", "not writable"], work)
    finally:
        subprocess.run(["umount", mnt], check=False)
    os.rmdir(mnt)


def main():
    work = tempfile.mkdtemp(prefix="unfurl-outputs-test-")
    d = lambda name: os.path.join(work, name)  # noqa: E731
    points = swiss_roll(N, 7)
    with h5py.File(d("roll.h5"), "w") as f:
        f.create_dataset("points", data=points)
    np.save(d("roll.npy"), points)
    with open(d("roll.csv"), "w") as f:
        f.write("x,y,z\n")
        for row in points:
            f.write(",".join(repr(float(v)) for v in row) + "\n")

    refusals(work, d)
    successes(work, d)
    signals(work, d)
    full_disk(work, d)

    finish(work)


if __name__ == "__main__":
    main()
