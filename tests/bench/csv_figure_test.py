"""csv_figure (bench/figure), the bench scripts' figure helper: the fitted growth exponent of a
known power law, a log-log figure that decodes with a PNG reader other than ours
(tests/apps/png_support.py: chunks, CRCs, Python's zlib) and draws the power law as a straight
line, an SVG that parses as XML, and bad requests refused without writing anything."""

import os
import subprocess
import sys
import tempfile
import xml.etree.ElementTree as ET

import numpy as np

sys.path.insert(0, os.path.join(os.path.dirname(__file__), "..", "apps"))
from png_support import PngError, read_png  # noqa: E402

BIN = os.environ["CSV_FIGURE"]
work = tempfile.mkdtemp(prefix="unfurl-csv-figure-")
failures, checks = [], [0]


def check(what, ok, detail=""):
    checks[0] += 1
    print(("ok   " if ok else "FAIL ") + what + ("" if ok else ": " + detail), flush=True)
    if not ok:
        failures.append(what)


def path(name):
    return os.path.join(work, name)


def figure(*args):
    return subprocess.run([BIN, *args], capture_output=True, text=True, timeout=60)


# Two power laws, y = 3 x^2 and y = 5 x, plus a point below the fit's range (x = 1) that
# lies off both laws: a fit that included it would not give the exponents exactly.
with open(path("growth.csv"), "w") as f:
    f.write("method,n,wall_s,note\n")
    f.write("square,1,100,\n")
    for n in [10, 100, 1000, 10000]:
        f.write(f"square,{n},{3 * n**2},\n")
    f.write("linear,1,100,\n")
    for n in [10, 100, 1000, 10000]:
        f.write(f"linear,{n},{5 * n},\n")

r = figure(path("growth.csv"), "-o", path("g.png"), "-o", path("g.svg"), "--x", "n",
           "--y", "wall_s:wall", "--series-by", "method", "--log-x", "--log-y",
           "--fit-from", "10", "--title", "growth")
check("two series, log-log, PNG and SVG: exit 0", r.returncode == 0, r.stderr)
# Analytic: log y = log 3 + 2 log x and log y = log 5 + log x are lines of slopes 2 and 1,
# so the least-squares slopes over x = 10 .. 10,000 are exactly 2 and 1.
slopes = {line.split(": ")[1].split(",")[1].strip(): float(line.split()[1].rstrip(":"))
          for line in r.stdout.splitlines() if line.startswith("exponent")}
check("fitted exponents 2 and 1 (power laws y = 3x^2, y = 5x)",
      abs(slopes.get("square (exponent 2.00)", 0) - 2) < 1e-3
      and abs(slopes.get("linear (exponent 1.00)", 0) - 1) < 1e-3, r.stdout)
try:
    with open(path("g.png"), "rb") as f:
        w, h, _ = read_png(f.read())
    check("PNG decodes (chunks, CRCs, zlib) at the default 900 x 700", (w, h) == (900, 700),
          f"{w} x {h}")
except (PngError, OSError) as e:
    check("PNG decodes", False, str(e))
try:
    root = ET.parse(path("g.svg")).getroot()
    check("SVG parses as XML with an <svg> root", root.tag.endswith("svg"), root.tag)
except (ET.ParseError, OSError) as e:
    check("SVG parses as XML", False, str(e))


def blue_pixels(name):
    """Pixels of exactly the single-series colour, Okabe and Ito's blue #0072B2 (Okabe and
    Ito 2008, "Color Universal Design")."""
    with open(path(name), "rb") as f:
        _, _, rows = read_png(f.read())
    return np.array([(x, y) for y, row in enumerate(rows) for x, c in enumerate(row)
                     if c == (0, 114, 178)], dtype=float)


def line_misfit(p):
    """Largest distance in pixels of the points `p` from their least-squares line y = a x + b."""
    a, b = np.polyfit(p[:, 0], p[:, 1], 1)
    return float(np.max(np.abs(p[:, 1] - (a * p[:, 0] + b)) / np.sqrt(1 + a * a)))


# One series, y = 3 x^2: a straight line on log-log axes (analytic), a strongly bent curve on
# a linear y axis. The marks are dots of radius 4 joined by a line of width 2.
with open(path("square.csv"), "w") as f:
    f.write("n,wall_s\n")
    for n in [10, 30, 100, 300, 1000, 3000, 10000]:
        f.write(f"{n},{3 * n**2}\n")
straight = figure(path("square.csv"), "-o", path("loglog.png"), "--x", "n", "--y", "wall_s",
                  "--log-x", "--log-y")
bent = figure(path("square.csv"), "-o", path("loglin.png"), "--x", "n", "--y", "wall_s",
              "--log-x")
check("single series figures: exit 0", straight.returncode == 0 and bent.returncode == 0,
      straight.stderr + bent.stderr)
try:
    lit_log, lit_lin = blue_pixels("loglog.png"), blue_pixels("loglin.png")
    check("log-log: y = 3x^2 lights pixels within 6 px of one straight line",
          len(lit_log) > 200 and line_misfit(lit_log) < 6, f"misfit {line_misfit(lit_log):.1f}")
    check("control, linear y axis: the same data are far from a straight line (> 60 px)",
          len(lit_lin) > 200 and line_misfit(lit_lin) > 60, f"misfit {line_misfit(lit_lin):.1f}")
except (PngError, OSError, ValueError) as e:
    check("single series PNGs decode", False, str(e))


def refused(what, args, code, names):
    before = sorted(os.listdir(work))
    r = figure(*args)
    lines = r.stderr.strip().splitlines()
    check(f"{what}: exit {code}, one line naming {names}, nothing written",
          r.returncode == code and len(lines) == 1 and all(n in lines[0] for n in names)
          and sorted(os.listdir(work)) == before, f"exit {r.returncode}, {r.stderr!r}")


refused("a column the CSV lacks", [path("growth.csv"), "-o", path("x.png"), "--x", "n",
                                   "--y", "peak_mib"], 64, ["peak_mib", "growth.csv"])
with open(path("bad.csv"), "w") as f:
    f.write("n,wall_s\n10,1.5\n20,fast\n")
refused("a cell that is not a number", [path("bad.csv"), "-o", path("x.png"), "--x", "n",
                                        "--y", "wall_s"], 65, ["bad.csv", "line 3", "wall_s"])
refused("a missing CSV", [path("none.csv"), "-o", path("x.png"), "--x", "n", "--y", "wall_s"],
        66, ["none.csv"])
refused("a figure that is not .png or .svg", [path("growth.csv"), "-o", path("x.jpg"), "--x",
                                              "n", "--y", "wall_s"], 64, ["x.jpg"])

print(f"{checks[0] - len(failures)} of {checks[0]} checks passed (work folder {work})")
if failures:
    sys.exit(1)
subprocess.run(["rm", "-rf", work], check=False)
