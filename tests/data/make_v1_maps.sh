#!/bin/sh
# How tests/data/v1-dropped.h5 and tests/data/v1-bridged.h5 were made (not run by the tests):
# version-1 map files written by the unfurl release binary built at main c42f544, kept so
# that the version-2 reader is tested against real version-1 files (tests/io/map_file_test.cpp,
# tests/reference/map_file_check.py). Invented points, for these tests only.
#   v1-dropped.h5: 60 rows = 45 on an arc (rows 0-44), 14 in a far cluster (rows 45-58,
#     dropped by --disconnected largest), one NaN row (59, dropped by --drop-nonfinite);
#     scaled and projected (/preprocess), landmark geodesics kept, scored at k = 5.
#   v1-bridged.h5: the 45 arc points (rows 0-44) plus 15 of them shifted 9 units (rows
#     45-59), joined by one bridge.
set -e
UNFURL=${UNFURL:-/work/main/build/apps/unfurl}
/usr/bin/python3 - <<'PY'
import numpy as np, h5py
rng = np.random.default_rng(7)
t = np.linspace(0, 3, 45)
arc = np.stack([np.cos(t) * 4, np.sin(t) * 4, 0.3 * t], 1) + rng.normal(0, 0.05, (45, 3))
far = rng.normal(0, 0.3, (14, 3)) + [40, 40, 40]
nan = np.array([[np.nan, 1.0, 2.0]])
with h5py.File("v1-input.h5", "w") as f:
    f["points"] = np.concatenate([arc, far, nan]).astype(np.float64)
with h5py.File("v1-input-bridge.h5", "w") as f:
    f["points"] = np.concatenate([arc, arc[:15] + [0, 0, 9]])
PY
"$UNFURL" embed v1-input.h5 -o v1-dropped.h5 --drop-nonfinite --disconnected largest \
  --scale standard --pre-pca 2 --landmarks 8 --keep-geodesics --score-k 5 --k 6 --seed 3
"$UNFURL" embed v1-input-bridge.h5 -o v1-bridged.h5 --disconnected bridge --landmarks 6 \
  --score-k 5 --k 6 --seed 3 --quiet
