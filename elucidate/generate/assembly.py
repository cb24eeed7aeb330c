"""Stage 2 of generation: every connected multigraph with a given degree list.

Given the atom types of one distribution (stage 1), this module lists the
bond-order matrices of all connected, loop-free multigraphs (bond orders
1-3) in which each atom spends exactly its degree, visiting every
isomorphism class at least once and most of them once.

Method
------
An orderly row-by-row search (in the tradition of Read, Ann. Discrete Math.
1978, 2, 107, and Faradzev 1978 -- from memory): row ``i`` of the upper
triangle of the bond matrix is filled completely (atom ``i`` is then
*closed*) before row ``i + 1``.  Two symmetry-breaking rules prune labelled
copies of the same graph; both are satisfied by the lexicographically
largest labelling of every graph (row-major order of the upper triangle, over
permutations that keep atom types), so no isomorphism class is ever lost:

1. *Cell order.*  Atoms ``k1 < k2`` beyond row ``i`` that have the same type
   and the same bonds to all closed atoms are interchangeable, so
   ``m[i][k1] >= m[i][k2]``.  The cells stay contiguous and are refined
   after every row.
2. *Adjacent transposition.*  If atoms ``i`` and ``i + 1`` were in one cell
   when row ``i`` started, then row ``i`` is lexicographically no smaller than
   row ``i + 1`` on the columns after ``i + 1``.

Connectivity is enforced as rows close: when atom ``i`` closes, its
component must still contain an open atom (unless it is the last atom).  By
induction the finished graph is connected, and every helper quantity is a
function of the bond matrix, so no graph is produced twice through helper
choices.  Remaining duplicates (automorphisms the two rules do not see) are
removed downstream by canonical SMILES.

The search checks a deadline every few thousand nodes and raises
:class:`SearchInterrupted` when it passes.  It keeps its own stack (no
recursion), so the number of atoms is limited by time, not by Python's
recursion limit.
"""

from __future__ import annotations

import time
from typing import Callable, Iterator, Sequence

__all__ = ["bond_matrices", "SearchInterrupted"]


class SearchInterrupted(Exception):
    """The deadline passed before the search space was exhausted."""


def bond_matrices(
    degrees: Sequence[int],
    types: Sequence[int],
    max_order: Sequence[Sequence[int]] | None = None,
    *,
    deadline: float | None = None,
    row_check: Callable[[int, list[list[int]]], bool] | None = None,
) -> Iterator[list[list[int]]]:
    """Yield bond-order matrices of connected graphs with the given degrees.

    Parameters
    ----------
    degrees : sequence of int
        Sum of bond orders each atom makes to the other atoms.
    types : sequence of int
        Type label per atom; atoms with equal labels are interchangeable.
        Atoms of one type must be contiguous.
    max_order : n x n sequence of int, optional
        Largest bond order allowed between two atoms (0 forbids a bond).
        Defaults to 3 everywhere.
    deadline : float, optional
        ``time.monotonic()`` value after which :class:`SearchInterrupted`
        is raised.
    row_check : callable(i, m) -> bool, optional
        Called when atom ``i`` closes (its bonds are final); returning False
        prunes the branch.  Used for early environment constraints.

    Yields
    ------
    list of lists of int
        The symmetric bond matrix.  The same list object is reused between
        yields: copy it if you keep it.

    Examples
    --------
    Propane's three carbons (degrees 1, 2, 1; the middle one is type 1)::

    >>> [ [row[:] for row in m] for m in bond_matrices([1, 1, 2], [0, 0, 1]) ]
    [[[0, 0, 1], [0, 0, 1], [1, 1, 0]]]
    """
    n = len(degrees)
    if n == 0:
        return
    if n == 1:
        if degrees[0] == 0:
            yield [[0]]
        return
    for k in range(1, n):
        if types[k] < types[k - 1] and types[k] in types[:k]:
            raise ValueError("atoms of one type must be contiguous")
    mo = [list(r) for r in max_order] if max_order is not None else [[3] * n for _ in range(n)]
    for a in range(n):
        mo[a][a] = 0
    m = [[0] * n for _ in range(n)]
    rem = list(degrees)

    # Depth-first search with an explicit stack.  A recursive version nests
    # one frame per matrix cell (about n^2 / 2 of them) and overflows
    # Python's recursion limit near 45 heavy atoms; here the state a recursion
    # would keep in its frames lives in per-row and per-cell arrays, so the
    # depth costs memory only (O(n^2) integers).  Matrices come out in the
    # same order as from the recursive formulation.
    same_r: list[list[bool]] = [[]] * n  # rule-1 cell flags when row i starts
    comp_r: list[list[int]] = [[]] * n  # component label per atom when row i starts
    caps_r: list[list[int]] = [[]] * n  # caps[j]: most bonds row i can put in columns >= j
    tie_r = [False] * n  # rule 2 binds rows i - 1 and i
    saved_r = [0] * n  # rem[i] before row i closed
    lo_a = [[0] * n for _ in range(n)]  # smallest value cell (i, k) may take
    left_a = [[0] * n for _ in range(n)]  # bonds row i had left on entering column k
    tie_a = [[False] * n for _ in range(n)]  # rule-2 tie open on entering column k
    same_r[0] = [False] + [types[k] == types[k - 1] for k in range(1, n)]
    comp_r[0] = list(range(n))
    nodes = 0
    check_every = 4096

    ENTER, FILL, BACK, UP = 0, 1, 2, 3
    state = ENTER
    i = k = left = 0
    tie = False
    mi = caps = same = prev_row = lo_i = left_i = tie_i = None
    while True:
        if state == ENTER:
            # Row i starts: atoms < i are closed.
            nodes += 1
            if deadline is not None and nodes % check_every == 0 and time.monotonic() > deadline:
                raise SearchInterrupted
            if i == n - 1:
                if rem[i] == 0 and (row_check is None or row_check(i, m)):
                    yield m
                state = UP
                continue
            moi = mo[i]
            caps = [0] * (n + 1)
            for j in range(n - 1, i, -1):
                c = rem[j]
                if c > 3:
                    c = 3
                if moi[j] < c:
                    c = moi[j]
                caps[j] = caps[j + 1] + c
            if rem[i] > caps[i + 1]:
                state = UP
                continue
            caps_r[i] = caps
            mi, same, lo_i, left_i, tie_i = m[i], same_r[i], lo_a[i], left_a[i], tie_a[i]
            prev_row = m[i - 1] if tie_r[i] else None
            k, left, tie = i + 1, rem[i], tie_r[i]
            state = FILL
        elif state == UP:
            # Row i is exhausted: revise the last cell of row i - 1.
            if i == 0:
                return
            i -= 1
            rem[i] = saved_r[i]
            mi, caps, same, lo_i, left_i, tie_i = m[i], caps_r[i], same_r[i], lo_a[i], left_a[i], tie_a[i]
            prev_row = m[i - 1] if tie_r[i] else None
            k = n - 1
            state = BACK
        elif state == BACK:
            # Lower the last cell (i, k) that can go lower, clearing those after it.
            state = UP
            while k > i:
                b = mi[k]
                if b > lo_i[k]:
                    b -= 1
                    mi[k] = b
                    m[k][i] = b
                    rem[k] += 1
                    left = left_i[k] - b
                    tie = tie_i[k] and b == prev_row[k]
                    k += 1
                    state = FILL
                    break
                mi[k] = 0
                m[k][i] = 0
                rem[k] += b
                k -= 1
        else:
            # FILL: give columns k.. of row i their largest allowed values.
            others_after = 3 * (n - i - 2)
            while k < n:
                hi = caps[k] - caps[k + 1]
                if left < hi:
                    hi = left
                if k > i + 1 and same[k] and mi[k - 1] < hi:
                    hi = mi[k - 1]
                if tie and prev_row[k] < hi:
                    hi = prev_row[k]
                lo = left - caps[k + 1]
                if lo < 0:
                    lo = 0
                rk = rem[k]
                if rk - lo > others_after:
                    lo = rk - others_after
                if hi < lo:
                    break
                lo_i[k] = lo
                left_i[k] = left
                tie_i[k] = tie
                mi[k] = hi
                m[k][i] = hi
                rem[k] = rk - hi
                left -= hi
                tie = tie and hi == prev_row[k]
                k += 1
            if k < n or left != 0:
                k -= 1
                state = BACK
                continue
            # Row i is complete: close atom i.  Its component must still
            # reach an open atom (connectivity), and the row check must pass.
            saved_r[i] = rem[i]
            rem[i] = 0
            comp = comp_r[i]
            labels = {comp[i]}
            for j in range(n):
                if mi[j]:
                    labels.add(comp[j])
            new_comp = [i if c in labels else c for c in comp]
            ok = any(new_comp[j] == i for j in range(i + 1, n))
            if ok and (row_check is None or row_check(i, m)):
                new_same = same[:]
                for j in range(i + 2, n):
                    if new_same[j] and mi[j] != mi[j - 1]:
                        new_same[j] = False
                same_r[i + 1] = new_same
                comp_r[i + 1] = new_comp
                tie_r[i + 1] = same[i + 1]
                i += 1
                state = ENTER
            else:
                rem[i] = saved_r[i]
                k = n - 1
                state = BACK
