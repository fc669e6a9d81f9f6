"""Float64 and integer inputs keep their precision: `unfurl embed` on a Swiss roll far from
the origin recovers the roll, merges no rows, records the column centres it subtracted, and
`unfurl score` re-applies them.

Outside references (Debian 12 packages, run by /usr/bin/python3):
  - analytic ground truth of the Swiss roll (DESIGN.md section 6): t = 1.5 pi (1 + 2u),
    height 21 u', point (t cos t, height, t sin t); the isometric coordinates are the arc
    length s(t) = 1/2 [t sqrt(1 + t^2) + asinh t] and the height;
  - scipy.stats.spearmanr (SciPy 1.10, python3-scipy) for the rank correlation of each map
    axis with its ground-truth coordinate;
  - numpy 1.24 (python3-numpy) writes the NPY and CSV inputs and computes the column means
    the recorded centres must equal; h5py 3.7 (python3-h5py) writes HDF5 and reads the maps.
Before centring (main at 1f8f95f) this script saw, for the 1e6 offset, |rank correlation|
0.19 (arc length) and 0.22 (height) with 1,220 of 1,500 rows merged as duplicates, and the
1.7e9 offset refused as 1 distinct point. Exits non-zero when any check fails.
"""

import json
import os
import sys
import tempfile

import h5py
import numpy as np
from scipy.stats import spearmanr

from reference_support import arc_length, check, failures, unfurl
from reference_support import swiss_roll as roll_float64

N = 1500


def swiss_roll(seed):
    """DESIGN.md section 6; returns the points and the analytic (arc length, height)."""
    points, t, height = roll_float64(N, seed)
    return points, np.column_stack([arc_length(t), height])


def write(folder, name, data):
    path = os.path.join(folder, name)
    if name.endswith(".npy"):
        np.save(path, data)
    elif name.endswith(".csv"):
        np.savetxt(path, data, delimiter=",", fmt="%.17g")
    else:
        with h5py.File(path, "w") as f:
            f["points"] = data
    return path


def embed_and_check(folder, label, data, truth, name):
    path = write(folder, name, data)
    out = os.path.join(folder, label + ".h5")
    report = os.path.join(folder, label + ".json")
    unfurl("embed", path, "-o", out, "--k", "10", "--json", report)
    with h5py.File(out, "r") as f:
        coords = f["coords"][()]
        rows = f["rows"][()].astype(np.int64)
        centres = f["/input/centres"][()] if "/input/centres" in f else None
    with open(report) as f:
        graph = json.load(f)["embedding"]["graph"]
    check(f"{label}: no merged rows", graph["duplicate_rows"] == 0,
          f"{graph['duplicate_rows']} of {N} rows merged")
    # Each ground-truth coordinate must be followed by one map axis (rank correlation,
    # scipy.stats.spearmanr), whatever the axis order or sign.
    for j, what in enumerate(["arc length", "height"]):
        best = max(abs(spearmanr(coords[:, a], truth[rows, j]).correlation) for a in range(2))
        check(f"{label}: a map axis follows the {what}", best > 0.99, f"|rho| = {best:.4f}")
    # The recorded centres are the column means of the values as read (numpy's mean in
    # float64); relative to the offset they agree to about double precision.
    gap = np.inf if centres is None else np.max(np.abs(centres - data.mean(axis=0)))
    check(f"{label}: /input/centres are the column means", gap <= 1e-9 * np.max(np.abs(data)),
          f"largest gap {gap:.3g}")
    return path, out


def main():
    points, truth = swiss_roll(20261202)
    with tempfile.TemporaryDirectory() as folder:
        # Metres far from the origin (DESIGN.md roll scaled by 1/50 and offset by 1e6).
        metres = points / 50 + 1e6
        for name in ["metres.npy", "metres.csv", "metres.h5"]:
            label = name.replace(".", "_")
            path, out = embed_and_check(folder, label, metres, truth, name)
        # `score` reads the points again, minus the map's centres: it must see them as embed
        # did (trustworthiness of the same map equal to embed's own).
        with open(os.path.join(folder, "metres_h5.json")) as f:
            t_embed = json.load(f)["quality"]["neighbourhoods"][0]["trustworthiness"]
        score_json = os.path.join(folder, "score.json")
        unfurl("score", out, "--points", path, "--json", score_json)
        with open(score_json) as f:
            t_score = json.load(f)["quality"]["neighbourhoods"][0]["trustworthiness"]
        check("score reads the points at full precision (T as embed)", abs(t_score - t_embed) < 1e-6,
              f"embed {t_embed:.6f}, score {t_score:.6f}")
        # `demo` embeds its points uncentred and records zero centres; with the cosine metric
        # (not translation-invariant) `score` must read the points back uncentred too
        # (without the record it saw T = 0.957 against embed's 0.991).
        demo = os.path.join(folder, "demo")
        unfurl("demo", "--scenario", "s-curve", "--point-count", "600", "--out-dir", demo,
               "--metric", "cosine", "--quiet")
        with open(os.path.join(demo, "s-curve-report.json")) as f:
            t_demo = json.load(f)["quality"]["neighbourhoods"][0]["trustworthiness"]
        unfurl("score", os.path.join(demo, "s-curve-map.h5"), "--points",
               os.path.join(demo, "s-curve.h5"), "--json", score_json)
        with open(score_json) as f:
            t_score = json.load(f)["quality"]["neighbourhoods"][0]["trustworthiness"]
        check("score of a demo map (cosine) sees the points as demo did",
              abs(t_score - t_demo) < 1e-6, f"demo {t_demo:.6f}, score {t_score:.6f}")
        # Epoch seconds: an offset of 1.7e9 s, where float32 keeps one value per 128 s.
        epoch = points / 50 + 1.7e9
        embed_and_check(folder, "epoch_npy", epoch, truth, "epoch.npy")
        # Integer input: whole micrometres offset by 1e6 m, as int64.
        micro = np.round(points * 20000).astype(np.int64) + 10**12
        embed_and_check(folder, "int64_npy", micro, truth, "micro.npy")
    if failures:
        print(f"{len(failures)} check(s) failed: {', '.join(failures)}")
        sys.exit(1)
    print("all checks passed")


if __name__ == "__main__":
    main()
