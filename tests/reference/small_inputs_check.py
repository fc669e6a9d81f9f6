"""Scores of a hand-derived 7-point example through `unfurl score`, k = 1 and 2, against the
published formula worked by hand and against sklearn.manifold.trustworthiness (Debian
python3-sklearn 1.2.1; continuity = trustworthiness with the arrays swapped).

The derivation (Venna and Kaski 2001; DESIGN.md section 5):
  T(k) = 1 - 2 / (N k (2N - 3k - 1)) * sum_i sum_{j in U_k(i)} (r(i, j) - k), C likewise with
  the spaces swapped. Input: x_i = 2^i, i = 0..6 on a line. From point i every point on its left
  is nearer than every point on its right (2^i - 2^j < 2^i <= 2^j - 2^i), so i's input order is
  i-1, i-2, ..., 0, i+1, ..., 6 without ties and the input rank is r(i, j) = i - j for j < i and
  j for j > i. Map: the same positions with points 1 and 4 swapped (point a at 2^s(a),
  s = (0 4 2 3 1 5 6)), so map ranks follow the same rule on slots.
  k = 1: map 1-NN / input 1-NN / term (r - 1):
    0: 4 / 1 / r(0,4) = 4 -> 3;  1: 3 / 0 / r(1,3) = 3 -> 2;  2: 4 / 1 / 4 -> 3;  3: 2 / 2 / 0;
    4: 0 / 3 / r(4,0) = 4 -> 3;  5: 1 / 4 / r(5,1) = 4 -> 3;  6: 5 / 5 / 0.   Sum 14.
    T(1) = 1 - 2 / (7 * 1 * 10) * 14 = 0.6.
    C: input 1-NN's map rank - 1: 0: slot 4 from slot 0 -> 3; 1: slot 0 from 4 -> 3;
    2: slot 4 from 2 -> 3; 3: 0; 4: slot 3 from 1 -> 2; 5: slot 1 from 5 -> 3; 6: 0. Sum 14,
    C(1) = 0.6.
  k = 2: map 2-NN / input 2-NN / U terms (r - 2):
    0: {4,2} / {1,2} / 4 -> 2;  1: {3,2} / {0,2} / 3 -> 1;  2: {4,0} / {1,0} / 4 -> 2;
    3: {2,4} / {2,1} / 4 -> 2;  4: {0,2} / {3,2} / 4 -> 2;  5: {1,3} / {4,3} / 4 -> 2;
    6: {5,1} / {5,4} / r(6,1) = 5 -> 3.   Sum 14, T(2) = 1 - 2 / (7 * 2 * 7) * 14 = 5/7.
    C: 0: 1 at map rank 4 -> 2; 1: 0 at 4 -> 2; 2: 1 at 4 -> 2; 3: 1 at 4 -> 2; 4: 3 at 3 -> 1;
    5: 4 at 4 -> 2; 6: 4 at 5 -> 3.  Sum 14, C(2) = 5/7.
Also: `score` with default options on the same 7 points (the score k adapts to 3) exits 0
with T(3) equal to scikit-learn's.
"""
import json
import os
import subprocess
import sys
import tempfile

import numpy as np
from sklearn.manifold import trustworthiness

BIN = os.environ["UNFURL_BIN"]
failures = 0


def check(name, got, want, tol=1e-12):
    global failures
    ok = abs(got - want) <= tol
    failures += 0 if ok else 1
    print(f"{'ok  ' if ok else 'FAIL'} {name}: unfurl {got:.15f} reference {want:.15f}")


def score(tmp, *extra):
    out = f"{tmp}/s.json"
    r = subprocess.run([BIN, "score", f"{tmp}/map.csv", "--points", f"{tmp}/x.csv", "--json", out,
                        "--quiet", *extra], capture_output=True, text=True)
    if r.returncode != 0:
        global failures
        failures += 1
        print(f"FAIL score {extra}: exit {r.returncode}: {r.stderr.strip()}")
        return []
    with open(out) as f:
        return json.load(f)["quality"]["neighbourhoods"]


def main():
    global failures
    x = np.array([[2.0 ** i] for i in range(7)])
    slot = [0, 4, 2, 3, 1, 5, 6]
    y = np.array([[2.0 ** s] for s in slot])
    hand = {1: (0.6, 0.6), 2: (5 / 7, 5 / 7)}
    with tempfile.TemporaryDirectory() as tmp:
        np.savetxt(f"{tmp}/x.csv", x, delimiter=",")
        np.savetxt(f"{tmp}/map.csv", y, delimiter=",")
        for s in score(tmp, "--score-k", "1", "2"):
            k = s["k"]
            check(f"T({k}) vs hand", s["trustworthiness"], hand[k][0])
            check(f"C({k}) vs hand", s["continuity"], hand[k][1])
            # Reference: sklearn.manifold.trustworthiness (and swapped for continuity).
            check(f"T({k}) vs sklearn", s["trustworthiness"], trustworthiness(x, y, n_neighbors=k))
            check(f"C({k}) vs sklearn", s["continuity"], trustworthiness(y, x, n_neighbors=k))
        default = score(tmp)
        ok = len(default) == 1 and default[0]["k"] == 3
        failures += 0 if ok else 1
        print(f"{'ok  ' if ok else 'FAIL'} default score k on 7 points is 3: {default}")
        if ok:
            check("T(3) default vs sklearn", default[0]["trustworthiness"],
                  trustworthiness(x, y, n_neighbors=3))
    print("failures:", failures)
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
