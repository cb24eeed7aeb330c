"""Optimal assignment (minimum-cost perfect matching) on a square cost matrix.

Method
------
The Hungarian method (Kuhn, Naval Res. Logist. Q. 1955, 2, 83; Munkres,
J. SIAM 1957, 5, 32) in its shortest-augmenting-path form with row and column
potentials (Jonker & Volgenant, Computing 1987, 38, 325; all from memory):
rows are inserted one at a time and each insertion runs a Dijkstra-like scan
over reduced costs, O(n^3) overall.  The inner scan is vectorised with numpy.

Examples
--------
>>> import numpy as np
>>> cost = np.array([[4.0, 1.0, 3.0], [2.0, 0.0, 5.0], [3.0, 2.0, 2.0]])
>>> cols = solve_assignment(cost)
>>> cols.tolist(), float(cost[range(3), cols].sum())
([1, 0, 2], 5.0)
"""

from __future__ import annotations

import numpy as np

__all__ = ["solve_assignment"]


def solve_assignment(cost: np.ndarray) -> np.ndarray:
    """Column assigned to each row in a minimum-cost perfect matching.

    Parameters
    ----------
    cost : (n, n) array of float
        Finite costs; use a large finite number for forbidden pairs.

    Returns
    -------
    (n,) int array
        ``cols[i]`` is the column matched to row ``i``.
    """
    c = np.asarray(cost, dtype=float)
    if c.ndim != 2 or c.shape[0] != c.shape[1]:
        raise ValueError(f"cost matrix must be square, got shape {c.shape}")
    if not np.all(np.isfinite(c)):
        raise ValueError("cost matrix must be finite; use a large number for forbidden pairs")
    n = c.shape[0]
    if n == 0:
        return np.zeros(0, dtype=int)
    # 1-based arrays with a virtual column 0 (classic formulation).
    u = np.zeros(n + 1)
    v = np.zeros(n + 1)
    p = np.zeros(n + 1, dtype=int)  # p[j] = row matched to column j (0 = none)
    way = np.zeros(n + 1, dtype=int)
    big = np.inf
    for i in range(1, n + 1):
        p[0] = i
        j0 = 0
        minv = np.full(n + 1, big)
        used = np.zeros(n + 1, dtype=bool)
        while True:
            used[j0] = True
            i0 = p[j0]
            # reduced costs of row i0 against all free columns
            cur = c[i0 - 1] - u[i0] - v[1:]
            free = ~used[1:]
            better = free & (cur < minv[1:])
            idx = np.nonzero(better)[0] + 1
            minv[idx] = cur[idx - 1]
            way[idx] = j0
            cand = np.where(free, minv[1:], big)
            j1 = int(np.argmin(cand)) + 1
            delta = cand[j1 - 1]
            used_idx = np.nonzero(used)[0]
            u[p[used_idx]] += delta
            v[used_idx] -= delta
            minv[1:][free] -= delta
            j0 = j1
            if p[j0] == 0:
                break
        while True:
            j1 = way[j0]
            p[j0] = p[j1]
            j0 = j1
            if j0 == 0:
                break
    cols = np.zeros(n, dtype=int)
    for j in range(1, n + 1):
        cols[p[j] - 1] = j - 1
    return cols
