"""Which measurement would best tell the top candidates apart.

When several candidates remain plausible, the chemist's question is which
experiment to run next.  For the top candidates this module lists the
measurements whose outcome differs between them, ranked by how much
probability they would separate:

* **HMBC** cross peaks (proton on line *a*, carbon of line *b*) expected in
  some candidates (2-3 bonds) and not in others (4 or more, or no proton on
  line *a*);
* **COSY** cross peaks (protons on lines *a* and *b*) expected in some
  (bonded carbons) and not in others;
* **DEPT** where the multiplicities were not given and the candidates put
  different hydrogen counts on a line;
* **13C** lines whose predicted shifts differ by more than twice their
  uncertainty between candidates (to re-check, or to compare with a
  reference spectrum).

The value of a measurement is the probability mass of the candidate pairs
it separates, ``sum w_i w_j`` over pairs (i, j) whose expected outcomes
differ, with weights ``w_i`` the candidates' probabilities plus
:data:`FLOOR`, renormalised over those compared (so a sure best candidate
still gets the measurement that rules its runner-ups out): the chance that two candidates drawn by their
probabilities would be told apart -- the Gini-Simpson diversity of the
split the measurement makes (Simpson, Nature 1949, 163, 688; from memory).
New experiments (HMBC, COSY, DEPT) come first, by value, then the 13C
lines (already measured: what to re-check); ties break by experiment and
line numbers.
Cross peaks already given in the correlation table are left out.  These are
suggestions on the scale of the predictions: an HMBC peak expected at 3
bonds can be weak, and an absent peak proves less than a present one.
"""

from __future__ import annotations

from itertools import combinations
from typing import Sequence

from rdkit import Chem

from ..errors import InputError
from .ambiguity import multiplicity_name

__all__ = ["next_measurements", "next_measurement_sentence"]

_ORDER = {"HMBC": 0, "COSY": 1, "DEPT": 2, "13C": 3}
#: Weight every compared candidate has besides its probability.
FLOOR = 0.05


def _layout(candidate):
    """(lines -> atoms, atom -> H, atom -> (shift, sigma), distance matrix) of a candidate."""
    mol = Chem.MolFromSmiles(candidate.smiles)
    if mol is None:
        raise InputError(f"candidate SMILES {candidate.smiles!r} cannot be read")
    on_line: dict[int, list[int]] = {}
    for e in candidate.assignment:
        on_line.setdefault(e.peak_index, []).extend(e.atoms)
    hs = {atom: h for atom, h, _s, _g in candidate.predicted}
    pred = {atom: (s, g) for atom, _h, s, g in candidate.predicted}
    return on_line, hs, pred, Chem.GetDistanceMatrix(mol)


def _hmbc(layout, a: int, b: int) -> bool:
    on_line, hs, _pred, dist = layout
    carriers = [x for x in on_line.get(a, ()) if hs.get(x, 0) > 0]
    return any(x != y and dist[x, y] <= 2 for x in carriers for y in on_line.get(b, ()))


def _cosy(layout, a: int, b: int) -> bool:
    on_line, hs, _pred, dist = layout
    xs = [x for x in on_line.get(a, ()) if hs.get(x, 0) > 0]
    ys = [y for y in on_line.get(b, ()) if hs.get(y, 0) > 0]
    return any(dist[x, y] == 1 for x in xs for y in ys)


def next_measurements(peaks, candidates: Sequence, *, given=(), top: int = 5, limit: int = 8) -> list[dict]:
    """Ranked measurements that would separate the top candidates.

    Parameters
    ----------
    peaks : sequence of Peak
    candidates : sequence of Candidate
        Best first; near alternatives (``set_aside``) are not compared.
    given : sequence of LinkedCorrelation
        Cross peaks already measured (left out of the list).
    top : int
        Candidates compared (at least 2 are needed).
    limit : int
        Longest list returned.

    Returns
    -------
    list of dict
        ``experiment``, ``lines`` (1-based), ``shifts``, ``expected_in`` and
        ``not_in`` (ranks; for DEPT and 13C the value per rank in ``by_rank``),
        ``value`` (probability mass separated), ``text``.
    """
    for name, v in (("top", top), ("limit", limit)):
        if isinstance(v, bool) or not isinstance(v, int) or v < 1:
            raise InputError(f"{name}={v!r}: give a positive whole number")
    peaks = list(peaks)
    ranked = [(k + 1, c) for k, c in enumerate(candidates) if not getattr(c, "set_aside", "")][:top]
    if len(ranked) < 2:
        return []
    ranks = [r for r, _c in ranked]
    compared = [c for _r, c in ranked]
    probs = [max(0.0, float(c.probability)) + FLOOR for c in compared]
    total = sum(probs)
    probs = [p / total for p in probs]
    layouts = [_layout(c) for c in compared]
    measured = set()
    for link in given:
        exp = link.row.experiment
        for a in link.h_lines:
            for b in link.c_lines:
                measured.add((exp, a, b))
                if exp == "COSY":
                    measured.add((exp, b, a))

    def value(outcomes) -> float:
        return sum(probs[i] * probs[j] for i, j in combinations(range(len(outcomes)), 2)
                   if outcomes[i] != outcomes[j])

    items = []
    n = len(peaks)
    for a in range(n):
        for b in range(n):
            if ("HMBC", a, b) not in measured:
                out = [_hmbc(lay, a, b) for lay in layouts]
                if any(out) and not all(out):
                    items.append(("HMBC", (a, b), out))
            if a < b and ("COSY", a, b) not in measured:
                out = [_cosy(lay, a, b) for lay in layouts]
                if any(out) and not all(out):
                    items.append(("COSY", (a, b), out))
    for i, p in enumerate(peaks):
        if p.hydrogens is None:
            out = [multiplicity_name(lay[1].get(x, 0) for x in lay[0].get(i, ())) for lay in layouts]
            if len(set(out)) > 1:
                items.append(("DEPT", (i,), out))
        shifts = []
        for lay in layouts:
            atoms = lay[0].get(i, ())
            vals = [lay[2][x] for x in atoms if x in lay[2]]
            shifts.append((sum(s for s, _g in vals) / len(vals), max(g for _s, g in vals)) if vals else None)
        if all(s is not None for s in shifts):
            # separated where two predictions differ by more than twice the larger uncertainty
            groups = []
            for s, g in shifts:
                for k, (s2, g2) in enumerate(groups):
                    if abs(s - s2) <= 2 * max(g, g2):
                        break
                else:
                    groups.append((s, g))
            if len(groups) > 1:
                out = [min(range(len(groups)), key=lambda k: abs(groups[k][0] - s)) for s, _g in shifts]
                items.append(("13C", (i,), out, [round(s, 1) for s, _g in shifts]))
    rows = []
    for item in items:
        exp, lines, out = item[0], item[1], item[2]
        v = value(out)
        if v <= 0:
            continue
        row = {"experiment": exp, "lines": [k + 1 for k in lines], "shifts": [peaks[k].shift for k in lines],
               "value": round(v, 4)}
        if exp in ("HMBC", "COSY"):
            row["expected_in"] = [ranks[k] for k, o in enumerate(out) if o]
            row["not_in"] = [ranks[k] for k, o in enumerate(out) if not o]
            if exp == "HMBC":
                row["text"] = (f"HMBC from the proton on line {lines[0] + 1} ({peaks[lines[0]].shift:g} ppm) to line "
                               f"{lines[1] + 1} ({peaks[lines[1]].shift:g} ppm): expected (2-3 bonds) in rank "
                               f"{_ranks(row['expected_in'])}, not in rank {_ranks(row['not_in'])}")
            else:
                row["text"] = (f"COSY between the protons on lines {lines[0] + 1} ({peaks[lines[0]].shift:g} ppm) and "
                               f"{lines[1] + 1} ({peaks[lines[1]].shift:g} ppm): expected (bonded carbons) in rank "
                               f"{_ranks(row['expected_in'])}, not in rank {_ranks(row['not_in'])}")
        elif exp == "DEPT":
            row["by_rank"] = list(out)
            row["text"] = (f"DEPT-135/90 on line {lines[0] + 1} ({peaks[lines[0]].shift:g} ppm): "
                           + ", ".join(f"{m} in rank {r}" for m, r in zip(out, ranks)))
        else:
            row["by_rank"] = item[3]
            row["text"] = (f"13C line {lines[0] + 1} ({peaks[lines[0]].shift:g} ppm), predicted "
                           + ", ".join(f"{s:g} in rank {r}" for s, r in zip(item[3], ranks))
                           + ": re-check it or compare with a reference spectrum")
        rows.append(row)
    # new experiments first; the 13C lines are measured already (they say what to re-check)
    rows.sort(key=lambda r: (r["experiment"] == "13C", -r["value"], _ORDER[r["experiment"]], r["lines"]))
    return rows[:limit]


def _ranks(ranks: Sequence[int]) -> str:
    return ", ".join(str(r) for r in ranks)


def next_measurement_sentence(rows: Sequence[dict], shown: int = 3) -> str:
    """One short paragraph naming the best few measurements ("" without any)."""
    if not rows:
        return ""
    parts = [r["text"] for r in rows[:shown]]
    return ("To tell the top candidates apart, measure next: " + "; ".join(parts)
            + ". (Expected from the candidates' structures; a weak HMBC peak can be missing.)")
