"""Say when the top candidates are hard to tell apart, and which lines decide.

For the best candidate and each close runner-up (probability at least
``ratio`` times the best's), the lines whose predicted shifts differ most
between the two assignments are the ones to look at again, or to confirm
with another experiment (e.g. an HMBC correlation to that carbon).

Without multiplicities (13C only), :func:`multiplicity_notes` says so and
lists the lines whose multiplicity differs among the top candidates: what a
DEPT-135/DEPT-90 pair would settle.

>>> from types import SimpleNamespace as E
>>> a = [E(peak_index=0, observed=20.0, predicted=21.0), E(peak_index=1, observed=70.0, predicted=69.0)]
>>> b = [E(peak_index=0, observed=20.0, predicted=20.5), E(peak_index=1, observed=70.0, predicted=62.0)]
>>> separating_lines(a, b, n=1)
[(1, 70.0, 69.0, 62.0)]
"""

from __future__ import annotations

from typing import Sequence

from ..errors import InputError

__all__ = ["separating_lines", "ambiguity_notes", "multiplicity_notes", "multiplicity_name"]

_NAMES = ("C", "CH", "CH2", "CH3")


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


def multiplicity_name(hydrogens) -> str:
    """Name of the multiplicities under one line, e.g. ``CH`` or ``C+CH3``
    (carbons with different H counts overlapping), ``none`` for no carbon.

    >>> multiplicity_name({1}), multiplicity_name([3, 0, 3]), multiplicity_name(())
    ('CH', 'C+CH3', 'none')
    """
    hs = sorted(set(hydrogens))
    return "+".join(_NAMES[h] for h in hs) if hs else "none"


def multiplicity_notes(peaks, candidates, top: int = 5) -> dict | None:
    """Which lines' multiplicities differ among the top candidates, when the
    multiplicities were not given; None when every line has one.

    Parameters
    ----------
    peaks : sequence of Peak
        The observed lines (``hydrogens`` None where unknown).
    candidates : sequence
        Ranked candidates with ``assignment`` (entries with ``peak_index``
        and ``atoms``) and ``predicted`` (``(atom, H, shift, sigma)`` in the
        same atom numbering), best first.
    top : int
        Candidates compared.

    Returns
    -------
    dict or None
        ``given`` ("no" or "partly"), ``lines_without``, ``compared`` (the
        candidates compared), ``lines`` (per differing line: ``peak_index``,
        ``shift``, ``by_rank`` -- the multiplicity each compared candidate
        puts there) and ``statement`` (one or two sentences for a report).

    Examples
    --------
    >>> from types import SimpleNamespace as E
    >>> peaks = [E(shift=128.4, hydrogens=None), E(shift=21.6, hydrogens=None)]
    >>> a = E(assignment=[E(peak_index=0, atoms=(1, 2)), E(peak_index=1, atoms=(0,))],
    ...       predicted=[(0, 3, 21.0, 1.0), (1, 1, 128.0, 1.0), (2, 1, 128.0, 1.0)])
    >>> b = E(assignment=[E(peak_index=0, atoms=(1,)), E(peak_index=1, atoms=(0,))],
    ...       predicted=[(0, 3, 20.0, 1.0), (1, 0, 130.0, 1.0)])
    >>> note = multiplicity_notes(peaks, [a, b])
    >>> note["lines"]
    [{'peak_index': 0, 'shift': 128.4, 'by_rank': ['CH', 'C']}]
    >>> print(note["statement"])
    Multiplicities were not given (13C only), so each carbon's hydrogen count was inferred from the shifts. DEPT-135 and DEPT-90 would settle line 1 (128.4 ppm: CH in rank 1, C in rank 2).
    """
    if isinstance(top, bool) or not isinstance(top, int) or top < 1:
        raise InputError(f"top={top!r}: compare at least one candidate (a positive integer)")
    peaks = list(peaks)
    unknown = [i for i, p in enumerate(peaks) if p.hydrogens is None]
    if not unknown:
        return None
    compared = list(candidates)[:top]
    by_line: dict[int, list[str]] = {i: [] for i in unknown}
    for cand in compared:
        h_of = {atom: h for atom, h, _shift, _sigma in cand.predicted}
        under: dict[int, list[int]] = {}
        for e in cand.assignment:
            under.setdefault(e.peak_index, []).extend(h_of[a] for a in e.atoms)
        for i in unknown:
            by_line[i].append(multiplicity_name(under.get(i, ())))
    lines = [{"peak_index": i, "shift": peaks[i].shift, "by_rank": by_line[i]}
             for i in unknown if len(set(by_line[i])) > 1]
    given = "no" if len(unknown) == len(peaks) else "partly"
    head = ("Multiplicities were not given (13C only), so each carbon's hydrogen count was inferred "
            "from the shifts." if given == "no" else
            f"Multiplicities were not given for {len(unknown)} of {len(peaks)} lines; their carbons' "
            "hydrogen counts were inferred from the shifts.")
    if len(compared) < 2:
        tail = ""
    elif lines:
        parts = []
        for row in lines:
            ranks: dict[str, list[int]] = {}
            for r, name in enumerate(row["by_rank"], 1):
                ranks.setdefault(name, []).append(r)
            said = ", ".join(f"{name} in rank{'s' if len(rs) > 1 else ''} {', '.join(map(str, rs))}"
                             for name, rs in ranks.items())
            parts.append(f"line {row['peak_index'] + 1} ({row['shift']:g} ppm: {said})")
        tail = " DEPT-135 and DEPT-90 would settle " + "; ".join(parts) + "."
    else:
        tail = (f" The top {len(compared)} candidates agree on every line's multiplicity, so DEPT "
                "would not separate them.")
    return {"given": given, "lines_without": len(unknown), "compared": len(compared), "lines": lines,
            "statement": head + tail}
