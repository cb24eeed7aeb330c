"""Cheapest placement of carbons under lines with every line covered.

Method
------
Each carbon first takes its cheapest line; covering every line then costs
the minimum extra of a matching of lines to distinct carbons, found with the
Hungarian method (:func:`elucidate.rank.hungarian.solve_assignment`; Kuhn,
Naval Res. Logist. Q. 1955, 2, 83, from memory).  Used as the line term of
the fit-steered search's approximate cost.

When every line is the cheapest line of a carbon of its own (a matching on
the zero entries of the extra costs exists), the extra is exactly 0 and the
Hungarian scan is skipped: with all extra costs >= 0 and an optimum of 0, the
scan's potentials and steps stay exactly 0.0, so it would return the same
sum.
"""

from __future__ import annotations

import math
from typing import Sequence

import numpy as np

from .hungarian import solve_assignment_lists

__all__ = ["cover_cost", "cover_cost_lists", "CoverRow", "min_offset_cover"]


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
    extra = np.where(np.isfinite(mat), mat - base[:, None], _BIG)
    return _cover_extra(extra.tolist(), extra.shape[1], float(base.sum()), not np.all(extra.min(axis=0) == 0.0))


def cover_cost_lists(rows: Sequence[Sequence[float]], n_lines: int) -> float:
    """:func:`cover_cost` of rows given as equally long sequences of floats
    without NaN (+inf allowed), in plain Python: the same value to the last
    bit (the same minima, differences and Hungarian scan; sums by numpy as
    there)."""
    return _prepare([CoverRow(r) for r in rows], n_lines).value()


class CoverRow:
    """One carbon's line costs (a sequence of floats without NaN) reduced for
    :func:`min_offset_cover`: the cheapest cost ``base`` and the extra cost of
    every line over it (``extra``; ``None`` when ``base`` is not finite).
    Immutable in use, so one instance may serve every structure sharing the
    carbon's environment."""

    __slots__ = ("base", "extra")

    def __init__(self, costs: Sequence[float]):
        inf = math.inf
        b = min(costs)
        self.base = b
        self.extra = ([x - b if -inf < x < inf else _BIG for x in costs]
                      if -inf < b < inf else None)


def min_offset_cover(problems: Sequence[tuple[float, Sequence[CoverRow]]], n_lines: int) -> float:
    """``min(offset + cover_cost_lists(rows, n_lines))`` over ``(offset, rows)``
    pairs, the rows as `CoverRow` (``inf`` for no pair), the same float,
    skipping every Hungarian scan that cannot lower the minimum.

    A scan is skipped when ``offset + lower`` already reaches the smallest
    value found, ``lower`` being the summed row minima plus the summed column
    minima of the extra costs (every line takes an entry of its own column,
    so the extra is at least that sum), the latter shrunk by a relative 1e-9,
    far more than the rounding of either sum: the skipped value could not
    have been smaller.
    """
    prepared = [(offset, _prepare(rows, n_lines)) for offset, rows in problems]
    prepared.sort(key=lambda t: t[0] + t[1].lower)
    best = math.inf
    for offset, prep in prepared:
        if offset + prep.lower >= best:
            break
        best = min(best, offset + prep.value())
    return best


_BIG = 1e6
_SHRINK = 1.0 - 1e-9


class _Prepared:
    """Rows reduced to their minima and extra costs (``extra``, carbons x
    lines), with ``lower``, a bound of the cover cost from below."""

    __slots__ = ("extra", "column_min", "base_sum", "lower", "_value")

    def __init__(self, value=None, extra=None, base=None):
        self._value = value
        if value is not None:
            self.lower = value
            return
        self.extra = extra
        self.base_sum = float(np.asarray(base, dtype=float).sum())
        self.column_min = list(map(min, zip(*extra)))
        self.lower = self.base_sum + sum(self.column_min) * _SHRINK

    def value(self) -> float:
        if self._value is None:
            self._value = _cover_extra(self.extra, len(self.column_min), self.base_sum,
                                       any(self.column_min))
        return self._value


def _prepare(rows: Sequence[CoverRow], n_lines: int) -> _Prepared:
    if not rows:
        return _Prepared(0.0 if n_lines == 0 else math.inf)
    for r in rows:
        if r.extra is None:  # a carbon fits no line
            return _Prepared(math.inf)
    base = [r.base for r in rows]
    if n_lines == 0:
        return _Prepared(float(np.array(base).sum()))
    extra = [r.extra for r in rows]
    if len(extra) < len(extra[0]):
        return _Prepared(math.inf)
    return _Prepared(None, extra, base)


def _cover_extra(extra: list, n_l: int, base_sum: float, some_line_costs: bool = True) -> float:
    """The matching part of :func:`cover_cost` on the extra costs (lists);
    ``base_sum``: the summed row minima (numpy's sum); ``some_line_costs``
    False only if every line has a zero entry (else no zero cover exists)."""
    n_c = len(extra)
    if n_c < n_l:
        return math.inf
    if not some_line_costs and _zero_cover(extra, n_l):
        # the optimal extra is exactly 0: every line has a carbon of its own
        # whose cheapest line it is (the Hungarian scan would find it with all
        # potentials and steps 0.0, i.e. add == 0.0)
        return base_sum + 0.0
    pad = [0.0] * (n_c - n_l)
    square = [r + pad for r in extra] if pad else extra
    cols = solve_assignment_lists(square)
    add = float(np.array([square[i][j] for i, j in enumerate(cols)]).sum())
    return math.inf if add >= _BIG else base_sum + add


def _zero_cover(extra: list, n_lines: int) -> bool:
    """Whether every line can take a distinct carbon at zero extra cost
    (bipartite matching on the zero entries; augmenting paths, Kuhn 1955)."""
    zeros = [[c for c, x in enumerate(col) if x == 0.0] for col in zip(*extra)]
    owner: dict[int, int] = {}  # carbon -> line

    def augment(j: int, seen: set) -> bool:
        for c in zeros[j]:
            if c in seen:
                continue
            seen.add(c)
            if c not in owner or augment(owner[c], seen):
                owner[c] = j
                return True
        return False

    for j in range(n_lines):
        if not zeros[j]:
            return False
        # a free carbon directly, else an augmenting path
        for c in zeros[j]:
            if c not in owner:
                owner[c] = j
                break
        else:
            if not augment(j, set()):
                return False
    return True
