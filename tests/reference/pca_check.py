#!/usr/bin/python3
"""Checks the engine's one PCA routine (engine/detail/pca.hpp, driven through pca_probe)
against numpy's SVD and scikit-learn's PCA from Debian's packages: the mean, the variances
(population divisor N), the axes up to sign, the stated sign rule, the kept share and the
projections. Exits non-zero on a mismatch."""
import os
import shutil
import subprocess
import sys
import tempfile

import numpy as np
from scipy.linalg import subspace_angles
from sklearn.decomposition import PCA

from reference_support import check, verdict

PROBE = os.path.join(os.environ["UNFURL_PROBE_DIR"], "pca_probe")


def run(x, m, sign, work):
    """sign: "convention", "solver" or "top:LIMIT" (then variances holds m values)."""
    src, out = os.path.join(work, "in.bin"), os.path.join(work, "out.bin")
    with open(src, "wb") as f:
        np.array(x.shape, dtype="<i8").tofile(f)
        np.ascontiguousarray(x, dtype="<f4").tofile(f)
    subprocess.run([PROBE, src, str(m), sign, out], check=True)
    v = np.fromfile(out, dtype="<f8")
    n, d = x.shape
    mean, v = v[:d], v[d:]
    axes, v = v[:m * d].reshape(m, d), v[m * d:]
    k = m if sign.startswith("top:") else d
    variances, kept, proj = v[:k], v[k], v[k + 1:].reshape(n, m)
    return mean, axes, variances, kept, proj


def relative(a, b):
    return float(np.max(np.abs(a - b)) / max(1e-300, np.max(np.abs(b))))


def compare(name, x, m, work):
    n, d = x.shape
    y = x.astype(np.float64)  # the float32 values exactly, as the engine widens them
    mean, axes, variances, kept, proj = run(x, m, "convention", work)
    # numpy: the mean, and the SVD of the centred rows; the covariance eigenvalues with
    # divisor N are the squared singular values over N (numpy.linalg.svd).
    centred = y - y.mean(axis=0)
    _, s, vt = np.linalg.svd(centred, full_matrices=False)
    err = relative(mean, y.mean(axis=0))
    check(f"{name}: mean vs numpy mean", err < 1e-12, f"relative {err:.1e} (limit 1e-12)")
    err = relative(variances, s**2 / n)
    check(f"{name}: variances vs numpy SVD s^2 / N", err < 1e-10, f"relative {err:.1e} (limit 1e-10)")
    # scikit-learn's PCA: explained_variance_ divides by N - 1 (its documentation: "n_samples - 1
    # degrees of freedom"), components_ are unit axes, transform projects the centred rows.
    ref = PCA(n_components=m, svd_solver="full").fit(y)
    err = relative(variances[:m], ref.explained_variance_ * (n - 1) / n)
    check(f"{name}: variances vs scikit-learn explained_variance_ (N-1)/N", err < 1e-10,
          f"relative {err:.1e} (limit 1e-10)")
    err = relative(kept, ref.explained_variance_ratio_.sum())
    check(f"{name}: kept share vs scikit-learn explained_variance_ratio_", err < 1e-10,
          f"relative {err:.1e} (limit 1e-10)")
    signs = np.sign(np.sum(axes * ref.components_, axis=1))
    err = float(np.max(np.abs(axes - signs[:, None] * ref.components_)))
    check(f"{name}: axes vs scikit-learn components_ (up to sign)", err < 1e-8,
          f"max difference {err:.1e} (limit 1e-8)")
    svd_signs = np.sign(np.sum(axes * vt[:m], axis=1))  # scikit-learn flips signs its own way
    err = float(np.max(np.abs(axes - svd_signs[:, None] * vt[:m])))
    check(f"{name}: axes vs numpy SVD right singular vectors (up to sign)", err < 1e-8,
          f"max difference {err:.1e} (limit 1e-8)")
    err = relative(proj, ref.transform(y) * signs)
    check(f"{name}: projections vs scikit-learn transform (same signs)", err < 1e-10,
          f"relative {err:.1e} (limit 1e-10)")
    # The stated sign rule (engine/detail/pca.hpp): each axis's largest-magnitude entry is
    # positive, the first such entry on ties.
    top = axes[np.arange(m), np.argmax(np.abs(axes), axis=1)]
    check(f"{name}: each axis's largest-magnitude entry positive", bool(np.all(top > 0)),
          f"those entries {np.round(top, 4).tolist()}")
    # The solver's own signs: the same axes up to sign, the same variances bit for bit.
    _, axes_solver, variances_solver, _, _ = run(x, m, "solver", work)
    same = np.array_equal(np.abs(axes_solver), np.abs(axes)) and \
        np.array_equal(variances_solver, variances)
    check(f"{name}: solver signs change only signs", same, "axes compared in magnitude")


def compare_top(name, x, m, limit, work):
    """The morton order's fit (fit_pca_top): the top m axes of the rows i * n // s, s = min(n,
    limit) (the rule stated in engine/detail/pca.hpp), against numpy.linalg.eigh of those rows'
    population covariance."""
    n, d = x.shape
    s = min(n, limit)
    rows = x[np.arange(s, dtype=np.int64) * n // s].astype(np.float64)
    mean, axes, variances, kept, proj = run(x, m, f"top:{limit}", work)
    err = relative(mean, rows.mean(axis=0))
    check(f"{name}: mean vs numpy mean of the sampled rows", err < 1e-12,
          f"relative {err:.1e} (limit 1e-12)")
    centred = rows - rows.mean(axis=0)
    values, vectors = np.linalg.eigh(centred.T @ centred / s)  # ascending
    values, vectors = values[::-1], vectors[:, ::-1]
    err = relative(variances, values[:m])
    check(f"{name}: top variances vs numpy.linalg.eigh", err < 1e-10,
          f"relative {err:.1e} (limit 1e-10)")
    err = relative(kept, values[:m].sum() / values.sum())
    check(f"{name}: kept share vs eigh top / trace", err < 1e-10, f"relative {err:.1e} (limit 1e-10)")
    ref = vectors[:, :m].T
    signs = np.sign(np.sum(axes * ref, axis=1))
    err = float(np.max(np.abs(axes - signs[:, None] * ref)))
    check(f"{name}: axes vs numpy.linalg.eigh eigenvectors (up to sign)", err < 1e-8,
          f"max difference {err:.1e} (limit 1e-8)")
    top = axes[np.arange(m), np.argmax(np.abs(axes), axis=1)]
    check(f"{name}: each axis's largest-magnitude entry positive", bool(np.all(top > 0)),
          f"those entries {np.round(top, 4).tolist()}")
    err = relative(proj, (x.astype(np.float64) - mean) @ axes.T)
    check(f"{name}: projections of every row vs numpy", err < 1e-10,
          f"relative {err:.1e} (limit 1e-10)")
    return axes


def main():
    rng = np.random.default_rng(11)
    work = tempfile.mkdtemp(prefix="pca_check_")
    try:
        # Correlated columns with offsets and unequal spreads; 3000 rows span two of the
        # routine's 2048-row blocks.
        mix = rng.standard_normal((7, 7)) * np.linspace(0.3, 4, 7)
        x = (rng.standard_normal((3000, 7)) @ mix + 50.0 * np.arange(7)).astype(np.float32)
        mix_rows = x
        compare("3000 x 7, 3 axes", x, 3, work)
        compare("3000 x 7, all axes", x, 7, work)
        compare("40 x 12, 5 axes", (rng.standard_normal((40, 12)) * np.arange(1, 13)).astype(
            np.float32), 5, work)
        # The sampled top-axes fit. Analytic ground truth: rows z * spread @ q.T with z standard
        # normal and q orthogonal have the population axes q[:, :3] (spreads 10, 7, 5 over 1).
        q, _ = np.linalg.qr(rng.standard_normal((40, 40)))
        spread = np.r_[10.0, 7.0, 5.0, np.ones(37)]
        x = ((rng.standard_normal((20000, 40)) * spread) @ q.T + 3.0).astype(np.float32)
        axes = compare_top("20000 x 40, 3 axes from 2048 rows", x, 3, 2048, work)
        # The sampling error shrinks like 1 / sqrt(rows) over the eigenvalue gaps (Davis-Kahan;
        # from memory): about 0.03 rad here, so 0.1 rad leaves room and still catches a wrong
        # subspace (common practice, no source).
        angles = subspace_angles(axes.T, q[:, :3])
        check("20000 x 40, 2048 rows: subspace angle to the true axes", float(angles.max()) < 0.1,
              f"largest angle {angles.max():.4f} rad (limit 0.1)")
        # With the limit above the row count every row is used: scikit-learn's axes.
        full = compare_top("3000 x 7, 3 axes, limit above n", mix_rows, 3, 10000, work)
        ref = PCA(n_components=3, svd_solver="full").fit(mix_rows.astype(np.float64))
        err = float(np.max(np.abs(np.abs(np.sum(full * ref.components_, axis=1)) - 1.0)))
        check("3000 x 7, limit above n: axes vs scikit-learn components_", err < 1e-10,
              f"max |1 - |cos|| {err:.1e} (limit 1e-10)")
    finally:
        shutil.rmtree(work, ignore_errors=True)
    return verdict("pca")


if __name__ == "__main__":
    sys.exit(main())
