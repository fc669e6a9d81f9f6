"""embed reports short-circuit suspects end to end (and the demo writes its report page): edges planted across the gap of a
narrow-gap Swiss roll (Balasubramanian and Schwartz, Science 2002: a few such edges fold the
map) come back as input rows on stderr, in --json, in the map's /quality/short_circuit_* and
on the report page; the clean roll has none. The graph is SciPy's (cKDTree k-nearest
neighbours, union of both directions), and which edges cross the gap is the roll's analytic
geometry, so neither depends on unfurl."""

import json
import os
import sys
import tempfile

import h5py
import numpy as np
from scipy.spatial import cKDTree

sys.path.insert(0, os.path.dirname(__file__))
from cli_support import check, finish, run, succeeds  # noqa: E402

work = tempfile.mkdtemp(prefix="unfurl-short-circuit-")


def path(name):
    return os.path.join(work, name)


def gap_roll(seed, r0=3.0, gap=1.0, step=0.2, turns=2.0, height=2.0):
    """The Archimedean spiral r = r0 + gap theta / (2 pi) swept along the height: consecutive
    layers lie `gap` apart. A jittered grid of spacing `step` in (arc length, height)."""
    rng = np.random.default_rng(seed)
    b = gap / (2 * np.pi)
    thetas, heights = [], []
    t = 0.0
    while t <= 2 * np.pi * turns:
        for y in np.arange(0.0, height + 1e-9, step):
            thetas.append(t + (rng.random() - 0.5) * 0.5 * step / np.hypot(r0 + b * t, b))
            heights.append(y + (rng.random() - 0.5) * 0.5 * step)
        t += step / np.hypot(r0 + b * t, b)
    theta, h = np.array(thetas), np.array(heights)
    r = r0 + b * theta
    return np.column_stack([r * np.cos(theta), h, r * np.sin(theta)]), theta, h


points, theta, height = gap_roll(3)
n = len(points)
dist, idx = cKDTree(points).query(points, k=7)  # itself and 6 neighbours
edges = {}
for i in range(n):
    for d, j in zip(dist[i, 1:], idx[i, 1:]):
        edges[(min(i, j), max(i, j))] = d
# Analytic geometry: an edge crosses the gap when its ends are half a turn or more apart.
crossing = [e for e in edges if abs(theta[e[0]] - theta[e[1]]) > np.pi]
check("precondition: the k = 6 graph of the roll has no edge across the gap", not crossing,
      f"{crossing[:5]}")


def nearest(t, y):
    return int(np.argmin(np.hypot((theta - t) * 3.0, height - y)))


planted = set()
for t, y in [(1.0, 0.4), (3.0, 1.0), (5.0, 1.6)]:
    a, b = nearest(t, y), nearest(t + 2 * np.pi, y)
    planted.add((min(a, b), max(a, b)))
    edges[(min(a, b), max(a, b))] = float(np.linalg.norm(points[a] - points[b]))
with open(path("edges.csv"), "w") as f:
    f.write("i,j,length\n")
    for (i, j), d in sorted(edges.items()):
        f.write(f"{i},{j},{d:.9g}\n")

r = succeeds("embed a planted edge list", ["embed", path("edges.csv"), "--input-kind", "edges",
                                           "-o", path("planted.h5"), "--json",
                                           path("planted.json"), "--plots-dir",
                                           path("figs")])
warnings = [line for line in r.stderr.splitlines() if "short-circuit suspect" in line]
check("one warning line on stderr counts the 3 suspects",
      len(warnings) == 1 and warnings[0].startswith("warning: 3 short-circuit suspects"),
      r.stderr)
check("the warning names the rows of the planted edges",
      all(any(f"rows {i} and {j}" in w for w in warnings) for (i, j) in planted), r.stderr)
report = json.load(open(path("planted.json"))) if os.path.exists(path("planted.json")) else {}
block = report.get("short_circuits", {})
listed = {tuple(sorted((w["from_row"], w["to_row"]))) for w in block.get("worst", [])}
check("--json counts 3 suspects and lists exactly the planted edges",
      block.get("suspects") == 3 and listed == planted, f"{block} vs {planted}")
check("--json carries the warning", any("short-circuit" in w for w in block.get("warnings", [])))
with h5py.File(path("planted.h5"), "r") as f:
    rows = f["/quality/short_circuit_rows"]
    stored = {tuple(sorted(map(int, row))) for row in rows[()]}
    check("the map's /quality/short_circuit_rows holds the planted edges as input rows",
          stored == planted and int(rows.attrs["suspects"]) == 3, f"{stored}")
    figures = f["/quality/short_circuit_figures"][()]
    check("the map's figures: each length is the planted edge's, each detour > 3x it",
          figures.shape == (3, 5) and
          all(f_[3] > 3 * f_[0] for f_ in figures), f"{figures}")
html = open(path("figs/report.html"), encoding="utf-8").read()
check("the report page's warnings name the suspects", "3 short-circuit suspects" in html)

# The clean roll as points: no suspect, no warning; the map says it checked.
np.savetxt(path("roll.csv"), points, delimiter=",")
r = succeeds("embed the clean roll", ["embed", path("roll.csv"), "--k", "6", "-o",
                                      path("clean.h5"), "--json", path("clean.json")])
check("the clean roll: no short-circuit warning", "short-circuit" not in r.stderr, r.stderr)
clean = json.load(open(path("clean.json"))) if os.path.exists(path("clean.json")) else {}
check("the clean roll: --json counts 0 suspects",
      clean.get("short_circuits", {}).get("suspects") == 0, f"{clean.get('short_circuits')}")
with h5py.File(path("clean.h5"), "r") as f:
    check("the clean roll: the map records 0 suspects",
          f["/quality/short_circuit_rows"].shape == (0, 2) and
          int(f["/quality/short_circuit_rows"].attrs["suspects"]) == 0)
r = run(["embed", path("edges.csv"), "--input-kind", "edges", "-o", path("quiet.h5"),
         "--quiet"])
check("--quiet: no warning line", r.returncode == 0 and r.stderr == "", r.stderr)

# The demo writes its report page beside its map and says where it is.
r = succeeds("demo", ["demo", "--out-dir", path("demo"), "--point-count", "300", "--scenario",
                      "swiss-roll"])
page = os.path.join(path("demo"), "report.html")
check("demo: report.html and its figures are in the output folder",
      os.path.isfile(page) and os.path.isfile(os.path.join(path("demo"), "map.png")),
      f"{os.listdir(path('demo')) if os.path.isdir(path('demo')) else 'no folder'}")
check("demo: its last line names the report page", r.stdout.strip().splitlines()[-1:] != [] and
      page in r.stdout.strip().splitlines()[-1], r.stdout)

finish(work)
