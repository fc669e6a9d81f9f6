"""What the reference checks share: the comparison tally, running unfurl, and the Swiss roll
of DESIGN.md section 6. Not a check itself (the ctest glob is *_check.py)."""

import os
import subprocess
import time

import numpy as np

BIN = os.environ["UNFURL_BIN"]
failures = []


def check(what, ok, detail):
    print(("ok   " if ok else "FAIL ") + what + ": " + detail)
    if not ok:
        failures.append(what)


def verdict(name):
    """Prints the tally of the checks and returns the script's exit code."""
    if failures:
        print(f"{len(failures)} check(s) failed: {', '.join(failures)}")
        return 1
    print(f"all {name} checks passed")
    return 0


def unfurl(*args):
    """Runs unfurl; stops the script on a non-zero exit. Prints the run's wall time."""
    started = time.time()
    r = subprocess.run([BIN, *args], capture_output=True, text=True, timeout=600)
    if r.returncode != 0:
        raise SystemExit(f"unfurl {' '.join(args)} failed ({r.returncode}): {r.stderr}")
    print(f"     (unfurl {' '.join(os.path.basename(a) for a in args)}: "
          f"{time.time() - started:.1f} s)")
    return r


def swiss_roll(n, seed):
    """DESIGN.md section 6 (the common generator's formula): t = 1.5 pi (1 + 2u), height 21 u',
    point (t cos t, height, t sin t). Returns the float64 points, t and the height."""
    rng = np.random.default_rng(seed)
    t = 1.5 * np.pi * (1 + 2 * rng.random(n))
    height = 21 * rng.random(n)
    return np.column_stack([t * np.cos(t), height, t * np.sin(t)]), t, height


def arc_length(t):
    """Arc length of the spiral from 0 to t, analytic: 1/2 [t sqrt(1 + t^2) + asinh t]."""
    return 0.5 * (t * np.sqrt(1 + t * t) + np.arcsinh(t))
