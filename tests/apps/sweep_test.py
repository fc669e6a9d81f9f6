"""unfurl sweep end to end: the table, sweep.csv, sweep.json, the figures and report.html on a
Swiss roll; each row's graph against scikit-learn's NearestNeighbors and SciPy's cKDTree and
connected_components (outside references); the recommendation present; bad ranges and a
sweep whose every graph is disconnected refused with one line naming the option, nothing
written."""

import csv
import json
import os
import sys
import tempfile

import numpy as np
from scipy.sparse.csgraph import connected_components
from scipy.spatial import cKDTree
from sklearn.neighbors import NearestNeighbors

sys.path.insert(0, os.path.dirname(__file__))
from cli_support import check, finish, refused, run, succeeds, swiss_roll  # noqa: E402
from png_support import PngError, read_png  # noqa: E402

work = tempfile.mkdtemp(prefix="unfurl-sweep-")
roll = swiss_roll(500, 5)
roll_csv = os.path.join(work, "roll.csv")
np.savetxt(roll_csv, roll, delimiter=",")
out = os.path.join(work, "out", "sweep1")  # two missing levels: sweep creates them
ks = [6, 9, 12]

r = succeeds("sweep --k 6:12:3", ["sweep", roll_csv, "--k", "6:12:3", "--dims", "1:3",
                                  "--landmarks", "40", "--out-dir", out])
check("the table names every setting and PCA",
      all(f"k {k}" in r.stdout for k in ks) and "PCA" in r.stdout, r.stdout)
check("the table marks the recommended setting and prints the recommendation",
      "RECOMMENDED" in r.stdout and "recommendation: k " in r.stdout, r.stdout)
expected = ["map.png", "report.html", "residual_variance.png", "scores.png", "sweep.csv",
            "sweep.json"]
present = sorted(os.listdir(out)) if os.path.isdir(out) else []
check("--out-dir holds sweep.csv, sweep.json, the figures and report.html", present == expected,
      f"{present}")

rows = list(csv.DictReader(open(os.path.join(out, "sweep.csv")))) if present else []
check("sweep.csv: one row per setting and one for PCA",
      [x["rule"] for x in rows] == ["k", "k", "k", "pca"], f"{[x.get('rule') for x in rows]}")
check("sweep.csv: residual variance columns rv_1..rv_3 and T with its interval",
      rows and all(c in rows[0] for c in ["rv_1", "rv_2", "rv_3", "t", "t_low", "t_high", "c"]))
check("sweep.csv: exactly one row recommended", sum(x["recommended"] == "1" for x in rows) == 1)
check("sweep.csv: every setting's graph was checked for short-circuit suspects",
      all(x["suspects"].isdigit() for x in rows[:3]), f"{[x.get('suspects') for x in rows]}")
# A short circuit makes the residual variance jump (Balasubramanian and Schwartz 2002): the
# recommendation lies below the first flagged setting.
flagged = [i for i, x in enumerate(rows[:3]) if x["flags"]]
chosen = [i for i, x in enumerate(rows) if x["recommended"] == "1"]
check("the recommended setting lies below the first flagged one",
      chosen and (not flagged or chosen[0] < flagged[0]), f"flagged {flagged}, chosen {chosen}")

# Each row's graph against scikit-learn's NearestNeighbors (the k-nearest lists, union
# symmetrisation as the graph stage documents) and SciPy's connected_components.
for row, k in zip(rows, ks):
    # Without X, kneighbors_graph leaves each point out of its own neighbours.
    graph = NearestNeighbors(n_neighbors=k).fit(roll).kneighbors_graph(mode="connectivity")
    union = ((graph + graph.T) > 0).astype(np.int8)
    parts, _ = connected_components(union, directed=False)
    check(f"k {k}: edges as scikit-learn's kneighbors_graph, union",
          int(row["edges"]) == union.nnz // 2, f"{row['edges']} vs {union.nnz // 2}")
    check(f"k {k}: components as SciPy's connected_components",
          int(row["components"]) == parts, f"{row['components']} vs {parts}")
    for column in ["t", "t_low", "t_high", "c", "knn", "rv_2"]:
        value = float(row[column]) if row[column] else float("nan")
        check(f"k {k}: {column} is a number in [0, 1]", 0 <= value <= 1, row[column])

doc = json.load(open(os.path.join(out, "sweep.json"))) if present else {}
check("sweep.json: usable, a recommended setting among the rows, the reason in words",
      doc.get("usable") is True and doc.get("recommended", {}).get("setting") in
      [f"k {k}" for k in ks] and len(doc.get("recommendation", "")) > 20, f"{doc.get('recommended')}")
check("sweep.json: the PCA row with its T", (doc.get("linear") or {}).get("setting") == "pca" and
      isinstance(doc["linear"]["trustworthiness"]["value"], float))
for name, size in [("residual_variance.png", (860, 520)), ("scores.png", (860, 520))]:
    try:
        width, height, _ = read_png(open(os.path.join(out, name), "rb").read())
        check(f"{name} decodes at {size[0]}x{size[1]}", (width, height) == size, f"{width}x{height}")
    except (PngError, OSError) as e:
        check(f"{name} decodes", False, str(e))
html = open(os.path.join(out, "report.html"), encoding="utf-8").read() if present else ""
check("report.html holds the recommendation, the three figures and a map per setting and PCA",
      "Recommendation" in html and html.count("data:image/png;base64,") == 3 + len(ks) + 1,
      f"{html.count('data:image/png;base64,')} images")

# Radius settings: each row's edges as SciPy's cKDTree.query_pairs (inclusive).
rout = os.path.join(work, "radius")
r = run(["sweep", roll_csv, "--radius", "4:8:2", "--dims", "2", "--landmarks", "40",
         "--disconnected", "largest", "--out-dir", rout, "--quiet"])
check("sweep --radius 4:8:2: exit 0", r.returncode == 0, r.stderr)
rrows = list(csv.DictReader(open(os.path.join(rout, "sweep.csv")))) if r.returncode == 0 else []
for row, radius in zip(rrows, [4.0, 6.0, 8.0]):
    pairs = len(cKDTree(roll).query_pairs(radius))
    check(f"radius {radius}: edges as cKDTree.query_pairs", int(row["edges"]) == pairs,
          f"{row['edges']} vs {pairs}")

# Bad ranges: one line naming the option, exit 64, nothing created.
bad = os.path.join(work, "bad")
for what, option, value in [("reversed", "--k", "40:5"), ("step zero", "--k", "5:40:0"),
                            ("empty", "--k", ""), ("repeated list", "--k", "5,5"),
                            ("radius without a step", "--radius", "1:2"),
                            ("radius step zero", "--radius", "1:2:0"),
                            ("reversed dims", "--dims", "3:1"), ("k zero", "--k", "0:10:5")]:
    refused(f"{option} {value!r} ({what})", ["sweep", roll_csv, option, value, "--out-dir", bad],
            64, [option], work)
refused("--k beyond the points", ["sweep", roll_csv, "--k", "5:500:5", "--out-dir", bad], 64,
        ["--k"], work)
refused("two --score-k values", ["sweep", roll_csv, "--score-k", "5", "10", "--out-dir", bad], 64,
        ["--score-k"], work)

# Two clusters 1000 apart: every graph disconnected. Each row of the table says so, the
# exit code says no setting was usable, nothing is written.
rng = np.random.default_rng(3)
blobs = np.vstack([rng.normal(size=(100, 2)), rng.normal(size=(100, 2)) + [1000, 0]])
blobs_csv = os.path.join(work, "blobs.csv")
np.savetxt(blobs_csv, blobs, delimiter=",")
r = refused("every graph disconnected", ["sweep", blobs_csv, "--k", "8:16:8", "--dims", "2",
                                         "--out-dir", bad], 65,
            ["no usable setting", "disconnected", "--disconnected"], work)
if r is not None:
    table = [line for line in r.stdout.splitlines() if line.startswith("k ")]
    check("each row of the table says disconnected",
          len(table) == 2 and all("disconnected: " in line for line in table),
          r.stdout)

finish(work)
