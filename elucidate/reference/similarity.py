"""Similarity of two 13C line lists: a symmetric, multiplicity-aware line-matching score.

The measure
-----------
Two spectra A (``n_A`` lines) and B (``n_B`` lines) are compared line by
line.  Lines are paired one to one; a pair is allowed only when the lines
are closer than the tolerance ``t`` (default 4 ppm) and their multiplicities
agree whenever both are known (a line of unknown multiplicity may pair with
any line).  Each pair earns a weight that falls smoothly with the deviation
``d`` of its two shifts, Tukey's biweight (Beaton & Tukey, *Technometrics*
1974, 16, 147 — from memory)::

    w(d) = (1 - (d/t)^2)^2   for |d| < t,   0 otherwise

so with ``t = 4 ppm`` a pair 0.5 ppm apart earns 0.97, 1 ppm 0.88, 2 ppm
0.56, 3 ppm 0.19 and 4 ppm or more nothing.  The similarity is the best
total weight over all pairings divided by the larger line count::

    S(A, B) = max over pairings of  sum w(d)  /  max(n_A, n_B)

It lies in [0, 1]; it is 1 exactly when both spectra have the same number of
lines and every line has a partner at the same shift (with the same
multiplicity when both sides know it); it is symmetric (``S(A, B) = S(B,
A)``).  A chemist can read it as "the share of the lines of the larger
spectrum that have a close partner in the other one, each counted by how
close".  Carbon counts under a line (intensities) are not used: routine 13C
intensities are not quantitative and symmetry is already visible as fewer
lines.

The pairing
-----------
The best pairing is searched among *order-preserving* pairings: when the
lines of each multiplicity channel (C, CH, CH2, CH3; all lines together when
either spectrum has a line of unknown multiplicity) are sorted by shift,
pairs may not cross.  The rule treats both spectra alike, so the score is
exactly symmetric.  In one dimension this is the optimal one-to-one assignment in
all but contrived configurations: for two pairs that would cross, the
uncrossed pairing is at least as close pair by pair unless one of the
crossed pairs spans all four lines, and then leaving the long pair out is an
order-preserving pairing that loses at most the weight of that long pair
(compared with the Hungarian assignment in ``tests/test_reference.py``).
The order-preserving optimum is a longest-common-subsequence style dynamic
programme (Needleman & Wunsch, *J. Mol. Biol.* 1970, 48, 443 — from memory,
here with zero gap cost and the biweight as match score).  Its rows reduce
to a running maximum, so one row step for a whole batch of reference
spectra is a handful of numpy operations (`batch_scores`).

A cheap upper bound of the best total weight prunes most reference spectra
before the dynamic programme (`upper_bounds`): every reference line can earn
at most the weight of its closest compatible query line, and no pairing has
more pairs than either spectrum has lines.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = [
    "DEFAULT_TOLERANCE",
    "UNKNOWN",
    "LineMatch",
    "line_weight",
    "match_lines",
    "batch_scores",
    "upper_bounds",
]

#: Default tolerance in ppm: pairs of lines this far apart or more earn nothing.
DEFAULT_TOLERANCE = 4.0

#: Channel code of a line of unknown multiplicity (0-3 = attached hydrogens).
UNKNOWN = 4

_PAD_SHIFT = 1.0e6  # padding lines lie far from every real line


def line_weight(deviation, tolerance: float = DEFAULT_TOLERANCE):
    """Weight of a pair of lines ``deviation`` ppm apart (Tukey biweight).

    >>> [round(float(line_weight(d)), 3) for d in (0.0, 1.0, 2.0, 4.0)]
    [1.0, 0.879, 0.562, 0.0]
    """
    d = np.asarray(deviation, dtype=float) / tolerance
    u = 1.0 - d * d
    return np.where(u > 0.0, u * u, 0.0)


def _compatible(h_query, h_ref):
    """Multiplicities may pair: equal, or either unknown (numpy broadcasting)."""
    return (h_query == h_ref) | (h_query == UNKNOWN) | (h_ref == UNKNOWN)


@dataclass(frozen=True)
class LineMatch:
    """The best order-preserving pairing of two line lists.

    Attributes
    ----------
    pairs : tuple of (int, int, float)
        ``(query line, reference line, weight)``; indices into the lists as
        given to `match_lines`, in increasing query order of the channel sort.
    total : float
        Sum of the pair weights.
    similarity : float
        ``total / max(n_query, n_reference)`` in [0, 1].
    mean_deviation : float or None
        Mean absolute shift difference of the pairs in ppm (None: no pair).
    """

    pairs: tuple[tuple[int, int, float], ...]
    total: float
    similarity: float
    mean_deviation: float | None


def _order(shifts, channels, by_channel: bool):
    """Pairing order: by channel then shift, or by shift then channel."""
    if by_channel:
        keys = [(channels[i], shifts[i], i) for i in range(len(shifts))]
    else:
        keys = [(shifts[i], channels[i], i) for i in range(len(shifts))]
    return [k[2] for k in sorted(keys)]


def match_lines(query, reference, tolerance: float = DEFAULT_TOLERANCE) -> LineMatch:
    """Best pairing of two line lists and its similarity (one pair of spectra).

    Parameters
    ----------
    query, reference : sequence of (shift, channel)
        Shift in ppm; channel = attached hydrogens 0-3, or `UNKNOWN` (4).
    tolerance : float
        Pairs this far apart (ppm) or more earn nothing.

    Returns
    -------
    LineMatch

    Examples
    --------
    >>> m = match_lines([(128.5, 1), (30.0, 2)], [(128.9, 1), (60.0, 2), (14.0, 3)])
    >>> [(q, r) for q, r, _ in m.pairs], round(m.similarity, 3)
    ([(0, 0)], 0.327)
    """
    qs = [float(s) for s, _ in query]
    qh = [int(h) for _, h in query]
    rs = [float(s) for s, _ in reference]
    rh = [int(h) for _, h in reference]
    n, m = len(qs), len(rs)
    if n == 0 or m == 0:
        return LineMatch((), 0.0, 0.0, None)
    by_channel = UNKNOWN not in qh and UNKNOWN not in rh
    qo = _order(qs, qh, by_channel)
    ro = _order(rs, rh, by_channel)
    # S[i][j]: best total using the first i query and first j reference lines
    S = [[0.0] * (m + 1) for _ in range(n + 1)]
    W = [[0.0] * m for _ in range(n)]
    for i in range(n):
        a, ha = qs[qo[i]], qh[qo[i]]
        prev, cur, wrow = S[i], S[i + 1], W[i]
        for j in range(m):
            b, hb = rs[ro[j]], rh[ro[j]]
            w = 0.0
            if ha == hb or ha == UNKNOWN or hb == UNKNOWN:
                d = (a - b) / tolerance
                u = 1.0 - d * d
                if u > 0.0:
                    w = u * u
            wrow[j] = w
            best = prev[j + 1]
            if w > 0.0 and prev[j] + w > best:
                best = prev[j] + w
            if cur[j] > best:
                best = cur[j]
            cur[j + 1] = best
    pairs = []
    i, j = n, m
    while i > 0 and j > 0:
        if S[i][j] == S[i - 1][j]:
            i -= 1
        elif S[i][j] == S[i][j - 1]:
            j -= 1
        else:
            pairs.append((qo[i - 1], ro[j - 1], W[i - 1][j - 1]))
            i -= 1
            j -= 1
    pairs.reverse()
    total = S[n][m]
    dev = [abs(qs[q] - rs[r]) for q, r, _ in pairs]
    return LineMatch(
        pairs=tuple(pairs),
        total=total,
        similarity=total / max(n, m),
        mean_deviation=(sum(dev) / len(dev)) if dev else None,
    )


def batch_scores(q_shift, q_chan, r_shift, r_chan, tolerance: float = DEFAULT_TOLERANCE) -> np.ndarray:
    """Best order-preserving total weight of one query against many references.

    Parameters
    ----------
    q_shift, q_chan : (n,) arrays
        Query lines already in the pairing order: sorted by channel then
        shift when both spectra have every multiplicity, else by shift then
        channel.
    r_shift, r_chan : (R, L) arrays
        Reference lines in the same order per row, padded at the end with
        shift ``>= 1e6`` (never within tolerance).
    tolerance : float

    Returns
    -------
    (R,) float array
        The best total weight per reference (divide by the larger line count
        for the similarity).
    """
    R, L = r_shift.shape
    S = np.zeros((R, L + 1))
    T = np.empty((R, L))
    for a, h in zip(np.asarray(q_shift, dtype=float).tolist(), np.asarray(q_chan).tolist()):
        d = (r_shift - a) / tolerance
        u = 1.0 - d * d
        np.maximum(u, 0.0, out=u)
        u *= u
        if h != UNKNOWN:
            u *= (r_chan == h) | (r_chan == UNKNOWN)
        # T[:, j] = max(S[i-1][j+1], S[i-1][j] + w[j]); S[i] = running max of T
        np.add(S[:, :-1], u, out=T)
        # a pair with zero weight is no pair: S[i-1][j] + 0 <= S[i-1][j+1] anyway
        np.maximum(T, S[:, 1:], out=T)
        np.maximum.accumulate(T, axis=1, out=S[:, 1:])
    return S[:, -1].copy()


def upper_bounds(q_shift, q_chan, line_key, line_chan, line_spec, n_spec: int, grid_lo: int,
                 grid_hi: int, tolerance: float = DEFAULT_TOLERANCE) -> np.ndarray:
    """Upper bound of the best total weight of the query against every spectrum.

    Every reference line earns at most the weight of its closest compatible
    query line; the sum over a spectrum's lines bounds its best pairing.

    Parameters
    ----------
    q_shift, q_chan : (n,) arrays
        Query lines (any order).
    line_key : (N,) int array
        Reference line shifts in hundredths of a ppm.
    line_chan : (N,) int array
        Reference line channels (0-3, `UNKNOWN`).
    line_spec : (N,) int array
        Spectrum of each reference line.
    n_spec : int
        Number of spectra.
    grid_lo, grid_hi : int
        Range of ``line_key`` (inclusive), in hundredths of a ppm.
    tolerance : float

    Returns
    -------
    (n_spec,) float array
    """
    size = grid_hi - grid_lo + 1
    grid = np.zeros((UNKNOWN + 1, size))
    half = int(np.ceil(tolerance * 100)) + 1
    for a, h in zip(np.asarray(q_shift, dtype=float).tolist(), np.asarray(q_chan).tolist()):
        centre = int(round(a * 100)) - grid_lo
        lo, hi = max(centre - half, 0), min(centre + half + 1, size)
        if lo >= hi:
            continue
        x = (np.arange(lo, hi) + grid_lo) / 100.0
        w = line_weight(x - a, tolerance)
        rows = range(UNKNOWN + 1) if h == UNKNOWN else (h, UNKNOWN)
        for c in rows:
            np.maximum(grid[c, lo:hi], w, out=grid[c, lo:hi])
    contrib = grid[line_chan, line_key - grid_lo]
    return np.bincount(line_spec, weights=contrib, minlength=n_spec)
