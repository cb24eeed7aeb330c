"""Ridge regression on sparse count features, solved by conjugate gradients.

Solves ``(X^T X + lam * I) w = X^T y`` for a sparse design matrix given in
coordinate form (row index, column index; repeated pairs add up), using the
conjugate-gradient method (Hestenes & Stiefel, *J. Res. Natl. Bur. Stand.*
1952, 49, 409 — from memory) with a Jacobi (diagonal) preconditioner.  Only
numpy is used: the products ``X w`` and ``X^T r`` are two ``np.bincount``
calls.  Ridge regression itself: Hoerl & Kennard, *Technometrics* 1970, 12, 55
(from memory).

Used by the shift-table build for the additive path-feature fallback.
"""

from __future__ import annotations

import numpy as np

__all__ = ["fit_ridge"]


def fit_ridge(rows, cols, y, n_features, lam=2.0, tol=1e-6, max_iter=500):
    """Fit ridge weights for a sparse 0/1-count design matrix.

    Parameters
    ----------
    rows, cols : array of int
        Coordinates of the non-zero design entries (each pair counts 1;
        repeated pairs add).  ``rows`` index ``y``.
    y : array of float
        Targets, one per row.
    n_features : int
        Number of columns.
    lam : float
        Ridge penalty (> 0).
    tol : float
        Relative residual norm at which to stop.
    max_iter : int
        Iteration cap.

    Returns
    -------
    numpy.ndarray
        Weights, shape ``(n_features,)``.
    """
    rows = np.asarray(rows, dtype=np.int64)
    cols = np.asarray(cols, dtype=np.int64)
    y = np.asarray(y, dtype=np.float64)
    n_rows = y.shape[0]
    if lam <= 0:
        raise ValueError("lam must be positive")

    # diagonal of X^T X: sum over rows of (count of column in row)^2
    pair = rows * n_features + cols
    uniq, mult = np.unique(pair, return_counts=True)
    diag = np.bincount(uniq % n_features, weights=mult.astype(np.float64) ** 2,
                       minlength=n_features) + lam
    inv_diag = 1.0 / diag

    def normal_op(w):
        xw = np.bincount(rows, weights=w[cols], minlength=n_rows)
        return np.bincount(cols, weights=xw[rows], minlength=n_features) + lam * w

    b = np.bincount(cols, weights=y[rows], minlength=n_features)
    w = np.zeros(n_features)
    r = b.copy()
    z = inv_diag * r
    p = z.copy()
    rz = r @ z
    b_norm = np.linalg.norm(b) or 1.0
    for _ in range(max_iter):
        ap = normal_op(p)
        alpha = rz / (p @ ap)
        w += alpha * p
        r -= alpha * ap
        if np.linalg.norm(r) <= tol * b_norm:
            break
        z = inv_diag * r
        rz_new = r @ z
        p = z + (rz_new / rz) * p
        rz = rz_new
    return w
