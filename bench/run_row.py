#!/usr/bin/python3
"""One CSV row of a bench script (bench/growth.sh, bench/landmark_study.sh) from a finished run:
GNU time's report (wall, CPU = user + sys, peak resident memory), and the figures of the run:
`unfurl embed --json` (stage seconds, T(12), C(12), residual variance at the map's dims,
landmark count and coverage) or flat JSON files whose keys are column names (the reference's).

usage: run_row.py --columns a,b,... --time FILE [--embed-json FILE] [--flat-json FILE ...]
                  [COLUMN=VALUE ...]
Prints the row in the order of --columns; COLUMN=VALUE pairs win over measured values; a column
with no value is left empty.
"""
import argparse
import json

STAGES = ["graph", "components", "node_order", "geodesics", "spectral", "total"]


def gnu_time(path):
    t = {}
    for line in open(path):
        key, _, value = line.strip().rpartition(": ")
        t[key] = value
    clock = [float(p) for p in t["Elapsed (wall clock) time (h:mm:ss or m:ss)"].split(":")]
    wall = sum(v * 60 ** (len(clock) - 1 - i) for i, v in enumerate(clock))
    cpu = float(t["User time (seconds)"]) + float(t["System time (seconds)"])
    peak = float(t["Maximum resident set size (kbytes)"]) / 1024
    return {"wall_s": f"{wall:.2f}", "cpu_s": f"{cpu:.2f}", "peak_mib": f"{peak:.0f}"}


def embed_figures(path):
    doc = json.load(open(path))
    emb = doc["embedding"]
    sec = emb["seconds"]
    out = {f"{s}_s": f"{sec.get(s, 0.0):.2f}" for s in STAGES}
    q = doc.get("quality", {})
    out["quality_s"] = f"{q.get('seconds', 0.0):.2f}"
    for h in q.get("neighbourhoods", []):
        if h["k"] == 12:
            out["trustworthiness_12"] = h["trustworthiness"]
            out["continuity_12"] = h["continuity"]
    dims = doc["parameters"]["dims"]
    rv = q.get("residual_variance", {}).get("by_dims", [])
    if len(rv) >= dims:
        out["residual_variance"] = rv[dims - 1]
    lm = emb.get("landmarks", {})
    if "count" in lm:
        out["landmarks"] = lm["count"]
    elif doc["parameters"].get("landmarks") == "all":
        out["landmarks"] = emb["map"]["rows"]  # exact mode: every node is a landmark
    if "coverage_radius" in lm:
        out["coverage_radius"] = lm["coverage_radius"]
    return out


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--columns", required=True)
    ap.add_argument("--time", required=True)
    ap.add_argument("--embed-json")
    ap.add_argument("--flat-json", action="append", default=[])
    ap.add_argument("given", nargs="*", help="COLUMN=VALUE")
    a = ap.parse_args()
    values = gnu_time(a.time)
    if a.embed_json:
        values.update(embed_figures(a.embed_json))
    for path in a.flat_json:
        values.update(json.load(open(path)))
    for pair in a.given:
        key, sep, value = pair.partition("=")
        if not sep:
            raise SystemExit(f"run_row.py: expected COLUMN=VALUE, got '{pair}'")
        values[key] = value
    columns = a.columns.split(",")
    for pair in a.given:
        if pair.partition("=")[0] not in columns:
            raise SystemExit(f"run_row.py: {pair} names no column of {a.columns}")
    print(",".join(str(values.get(c, "")) for c in columns))


if __name__ == "__main__":
    main()
