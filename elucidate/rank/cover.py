"""Cheapest placement of carbons under lines with every line covered.

Method
------
Each carbon first takes its cheapest line; covering every line then costs
the minimum extra of a matching of lines to distinct carbons, found with the
Hungarian method (:func:`elucidate.rank.hungarian.solve_assignment`; Kuhn,
Naval Res. Logist. Q. 1955, 2, 83, from memory).  Used as the line term of
the fit-steered search's approximate cost.
"""

from __future__ import annotations

import math
from typing import Sequence

import numpy as np

from .hungarian import solve_assignment

__all__ = ["cover_cost"]


def cover_cost(rows: Sequence[np.ndarray], n_lines: int) -> float:
    """Cheapest way to put each carbon (a row of line costs) under one line
    so that every line carries at least one carbon.

    Each carbon first takes its cheapest line; covering every line then
    costs the minimum extra of a matching of lines to distinct carbons
    (Hungarian method, :func:`elucidate.rank.hungarian.solve_assignment`).
    ``inf`` when some line cannot be covered.

    >>> import numpy as np
    >>> cover_cost([np.array([0.0, 3.0]), np.array([0.0, 1.0])], 2)
    1.0
    """
    if not rows:
        return 0.0 if n_lines == 0 else math.inf
    mat = np.vstack(rows)  # carbons x lines
    base = mat.min(axis=1)
    if not np.all(np.isfinite(base)):
        return math.inf
    if n_lines == 0:
        return float(base.sum())
    big = 1e6
    extra = np.where(np.isfinite(mat), mat - base[:, None], big)
    n_c, n_l = extra.shape
    if n_c < n_l:
        return math.inf
    square = np.zeros((n_c, n_c))
    square[:, :n_l] = extra
    cols = solve_assignment(square)
    add = float(square[np.arange(n_c), cols].sum())
    return math.inf if add >= big else float(base.sum()) + add
