"""Say when the top candidates are hard to tell apart, and which lines decide.

For the best candidate and each close runner-up (probability at least
``ratio`` times the best's), the lines whose predicted shifts differ most
between the two assignments are the ones to look at again, or to confirm
with another experiment (e.g. an HMBC correlation to that carbon).

>>> from types import SimpleNamespace as E
>>> a = [E(peak_index=0, observed=20.0, predicted=21.0), E(peak_index=1, observed=70.0, predicted=69.0)]
>>> b = [E(peak_index=0, observed=20.0, predicted=20.5), E(peak_index=1, observed=70.0, predicted=62.0)]
>>> separating_lines(a, b, n=1)
[(1, 70.0, 69.0, 62.0)]
"""

from __future__ import annotations

from typing import Sequence

__all__ = ["separating_lines", "ambiguity_notes"]


def _per_line(entries) -> dict[int, tuple[float, float]]:
    out: dict[int, list[float]] = {}
    obs: dict[int, float] = {}
    for e in entries:
        out.setdefault(e.peak_index, []).append(e.predicted)
        obs[e.peak_index] = e.observed
    return {k: (obs[k], sum(v) / len(v)) for k, v in out.items()}


def separating_lines(first: Sequence, second: Sequence, n: int = 3) -> list[tuple[int, float, float, float]]:
    """Lines whose predicted shifts differ most between two assignments.

    Returns up to ``n`` tuples ``(peak_index, observed, predicted_first,
    predicted_second)``, largest difference first (ties by line index).
    """
    a, b = _per_line(first), _per_line(second)
    rows = [(k, a[k][0], a[k][1], b[k][1]) for k in sorted(set(a) & set(b))]
    rows.sort(key=lambda r: (-abs(r[2] - r[3]), r[0]))
    return rows[:n]


def ambiguity_notes(candidates: Sequence, ratio: float = 0.1, n_lines: int = 3) -> list[dict]:
    """Notes for runner-ups within ``ratio`` of the best candidate's probability."""
    if len(candidates) < 2:
        return []
    best = candidates[0]
    notes = []
    for rank, other in enumerate(candidates[1:], start=2):
        if best.probability <= 0 or other.probability < ratio * best.probability:
            break
        lines = separating_lines(best.assignment, other.assignment, n_lines)
        notes.append({
            "rank": rank,
            "smiles": other.smiles,
            "probability_ratio": round(other.probability / best.probability, 3),
            "separating_lines": [
                {"peak_index": k, "observed": round(o, 2), "predicted_best": round(p1, 2),
                 "predicted_other": round(p2, 2)}
                for k, o, p1, p2 in lines
            ],
        })
    return notes
