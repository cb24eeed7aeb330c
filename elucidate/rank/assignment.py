"""Assign observed 13C lines to a candidate's carbons.

Each candidate's carbons are grouped into symmetry classes (topologically
equivalent carbons share one predicted shift).  The assignment puts every
class under a line of compatible multiplicity (a line of unknown
multiplicity takes any class) so that the total cost is minimal, where

* a class under a line costs the negative log-likelihood of the shift error
  (:func:`elucidate.rank.likelihood.shift_cost`);
* every line should carry at least one class; a line left empty costs
  ``UNFILLED_COST``;
* a line may carry further classes (accidental overlap of inequivalent
  carbons) at ``OVERLAP_COST`` each;
* a class of two or more equivalent carbons may also appear under a second
  or third line (diastereotopic or rotamer splitting) at ``SPLIT_COST`` each;
  a class's own ``split_cost`` replaces it for its first extra line (classes
  that rotation about an amide-type bond can split, :mod:`.rotamers`).

Method
------
Without line counts this is a minimum-cost flow problem (source -> class ->
line -> sink, with the costs above on the arcs), solved exactly with OR-Tools'
min-cost-flow solver, which generalises the Hungarian assignment (Kuhn 1955)
to capacities.  With counts on every line, carbons are matched to line
slots one to one with the Hungarian method (:mod:`.hungarian`); the counts
already fix how many carbons stand under each line, and that path charges
only the shift costs (no overlap or split penalty, whatever ``split_cost``).

The penalty sizes are the negative log frequencies of overlap and splitting
in the training spectra (see :mod:`elucidate.constraints.spectral` and, for
rotamer splitting, :mod:`.rotamers`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Sequence

import numpy as np
from ortools.graph.python import min_cost_flow

from ..errors import InputError
from .hungarian import solve_assignment
from .likelihood import shift_cost, shift_cost_matrix

__all__ = [
    "CarbonClass",
    "LineEntry",
    "Assignment",
    "assign_lines",
    "OVERLAP_COST",
    "SPLIT_COST",
    "UNFILLED_COST",
]

# -ln of the per-event frequencies in the training spectra (one overlap in
# 3.51 % of spectra vs none in 95.04 %; one split in 6.42 % vs none in 92.33 %;
# scripts/measure_training_stats.py).
OVERLAP_COST = -math.log(3.51 / 95.04)
SPLIT_COST = -math.log(6.42 / 92.33)
UNFILLED_COST = 25.0
_SCALE = 1000.0
_FORCE = 10**9


@dataclass(frozen=True)
class CarbonClass:
    """Symmetry-equivalent carbons of a candidate with their prediction.

    ``split_cost`` is the cost of the class's first extra line (further extra
    lines cost ``SPLIT_COST``); it lies in [0, SPLIT_COST].  Classes that
    rotamers can split take theirs from :func:`.rotamers.rotamer_split_costs`.
    """

    hydrogens: int
    atoms: tuple[int, ...]
    shift: float
    sigma: float
    split_cost: float = SPLIT_COST

    def __post_init__(self):
        if not 0.0 <= self.split_cost <= SPLIT_COST:
            raise InputError(f"split_cost {self.split_cost!r} of carbon class {self.atoms} is outside "
                             f"[0, SPLIT_COST = {SPLIT_COST:.3f}]; a class may only make splitting cheaper")


@dataclass(frozen=True)
class LineEntry:
    """One class placed under one observed line."""

    peak_index: int
    observed: float
    predicted: float
    sigma: float
    atoms: tuple[int, ...]
    kind: str  # "primary", "overlap" or "split"

    @property
    def error(self) -> float:
        return self.predicted - self.observed


@dataclass(frozen=True)
class Assignment:
    """The optimal placement of a candidate's carbons under the lines."""

    entries: tuple[LineEntry, ...]
    cost: float
    overlaps: int
    splits: int
    unfilled: tuple[int, ...]

    @property
    def mae(self) -> float:
        if not self.entries:
            return float("nan")
        return float(np.mean([abs(e.error) for e in self.entries]))

    @property
    def max_error(self) -> float:
        if not self.entries:
            return float("nan")
        return float(max(abs(e.error) for e in self.entries))


def _compatible(peak, cls: CarbonClass) -> bool:
    return peak.hydrogens is None or peak.hydrogens == cls.hydrogens


def assign_lines(peaks: Sequence, classes: Sequence[CarbonClass]) -> Assignment:
    """Optimal assignment of lines to carbon classes.

    Parameters
    ----------
    peaks : sequence of Peak
        Observed lines (``shift``, ``hydrogens`` or None, ``count`` or None).
    classes : sequence of CarbonClass

    Returns
    -------
    Assignment

    Examples
    --------
    Two CH3 lines, three methyl carbons in two classes:

    >>> from types import SimpleNamespace as P
    >>> peaks = [P(shift=20.0, hydrogens=3, count=None), P(shift=30.0, hydrogens=3, count=None)]
    >>> classes = [CarbonClass(3, (0, 2), 29.0, 2.0), CarbonClass(3, (1,), 21.0, 2.0)]
    >>> [(e.peak_index, e.atoms) for e in assign_lines(peaks, classes).entries]
    [(0, (1,)), (1, (0, 2))]
    """
    if peaks and all(p.count is not None for p in peaks):
        counted = _assign_counted(peaks, classes)
        if counted is not None:
            return counted
    return _assign_flow(peaks, classes)


def _assign_flow(peaks, classes) -> Assignment:
    nc, nl = len(classes), len(peaks)
    obs = np.array([pk.shift for pk in peaks], dtype=float)
    line_h = [-1 if pk.hydrogens is None else pk.hydrogens for pk in peaks]
    # compatible (class, line) pairs, row-major (class first, then line)
    pc, pl = [], []
    for c, cls in enumerate(classes):
        h = cls.hydrogens
        for l, lh in enumerate(line_h):
            if lh == -1 or lh == h:
                pc.append(c)
                pl.append(l)
    cost = shift_cost_matrix(obs, [c.shift for c in classes], [c.sigma for c in classes])
    # arc costs of the compatible pairs (only these entries of ``cost`` are read)
    pair_cost = np.round(cost.ravel()[[c * nl + l for c, l in zip(pc, pl)]] * _SCALE).astype(np.int64).tolist()
    split_cap = [min(len(c.atoms) - 1, 2) for c in classes]
    total_split = sum(split_cap)

    # Network: source 0, sink 1, class c = node 2 + c, line l = node 2 + nc + l.
    # Arcs in this order: source -> class (forced); split arcs, a class's first
    # extra line at its own split cost, any further one at SPLIT_COST (costs
    # rise, so the flow takes them in order); class -> line; line -> sink once
    # (a filled line earns UNFILLED_COST) and again for overlaps; source -> sink
    # for split capacity left unused.  The arrays are built as plain lists
    # (numpy calls cost more than they save at this size).
    has_split = [c for c in range(nc) if split_cap[c]]
    more_split = [c for c in range(nc) if split_cap[c] > 1]
    n_split = len(has_split) + len(more_split)
    lnodes = list(range(2 + nc, 2 + nc + nl))
    tails = [0] * (nc + n_split) + [2 + c for c in pc] + lnodes + lnodes
    heads = (list(range(2, 2 + nc)) + [2 + c for c in has_split] + [2 + c for c in more_split]
             + [2 + nc + l for l in pl] + [1] * (2 * nl))
    caps = ([1] * (nc + len(has_split)) + [split_cap[c] - 1 for c in more_split] + [1] * (len(pc) + nl)
            + [nc] * nl)
    costs = ([-_FORCE] * nc + [round(classes[c].split_cost * _SCALE) for c in has_split]
             + [round(SPLIT_COST * _SCALE)] * len(more_split) + pair_cost
             + [round(-UNFILLED_COST * _SCALE)] * nl + [round(OVERLAP_COST * _SCALE)] * nl)
    if total_split:
        tails.append(0)
        heads.append(1)
        caps.append(total_split)
        costs.append(0)
    first_pair = nc + n_split

    flow = min_cost_flow.SimpleMinCostFlow()
    arcs = flow.add_arcs_with_capacity_and_unit_cost(
        np.array(tails, np.int64), np.array(heads, np.int64), np.array(caps, np.int64),
        np.array(costs, np.int64)
    )
    supply = nc + total_split
    flow.set_nodes_supplies(np.array([0, 1]), np.array([supply, -supply]))
    status = flow.solve()
    if status != flow.OPTIMAL:
        return Assignment((), math.inf, 0, 0, tuple(range(nl)))
    flows = flow.flows(arcs)
    used = np.nonzero(flows[first_pair:first_pair + len(pc)])[0].tolist()

    per_class: dict[int, list[int]] = {}
    for k in used:
        per_class.setdefault(pc[k], []).append(pl[k])
    if len(per_class) < nc:  # some class had no compatible line
        return Assignment((), math.inf, 0, 0, tuple(range(nl)))
    # Decide which entry of each line is its primary one (the best fitting),
    # and which extra entries of a class are splits.
    by_line: dict[int, list[int]] = {}
    for c, ls in per_class.items():
        for l in ls:
            by_line.setdefault(l, []).append(c)
    cm = cost.tolist()
    primary = {l: min(cs, key=lambda c: (cm[c][l], c)) for l, cs in by_line.items()}
    entries = []
    total = 0.0
    overlaps = splits = 0
    for c in sorted(per_class):
        row = cm[c]
        ls = sorted(per_class[c], key=lambda l: (row[l], l))
        cls = classes[c]
        for rank_in_class, l in enumerate(ls):
            kind = "primary" if primary[l] == c else "overlap"
            if rank_in_class > 0:
                kind = "split"
                splits += 1
                total += cls.split_cost if rank_in_class == 1 else SPLIT_COST
            elif kind == "overlap":
                overlaps += 1
                total += OVERLAP_COST
            total += row[l]
            entries.append(LineEntry(l, peaks[l].shift, cls.shift, cls.sigma, cls.atoms, kind))
    unfilled = tuple(l for l in range(nl) if l not in by_line)
    total += UNFILLED_COST * len(unfilled)
    if entries:
        total = np.float64(total)  # the type the sum over numpy costs always had
    entries.sort(key=lambda e: (e.peak_index, e.atoms))
    return Assignment(tuple(entries), total, overlaps, splits, unfilled)


def _assign_counted(peaks, classes) -> Assignment | None:
    """Carbon-level matching when every line states its carbon count."""
    slots = [l for l, pk in enumerate(peaks) for _ in range(pk.count)]
    carbons = [(c, a) for c, cls in enumerate(classes) for a in cls.atoms]
    if len(slots) != len(carbons):
        return None
    big = 1e6
    cost = np.full((len(carbons), len(slots)), big)
    for i, (c, _) in enumerate(carbons):
        cls = classes[c]
        for j, l in enumerate(slots):
            if _compatible(peaks[l], cls):
                cost[i, j] = shift_cost(peaks[l].shift, cls.shift, cls.sigma)
    cols = solve_assignment(cost)
    if np.any(cost[np.arange(len(carbons)), cols] >= big):
        return None
    groups: dict[tuple[int, int], list[int]] = {}
    for i, j in enumerate(cols):
        c, a = carbons[i]
        groups.setdefault((slots[j], c), []).append(a)
    entries = []
    total = float(cost[np.arange(len(carbons)), cols].sum())
    seen_class: set[int] = set()
    splits = 0
    for (l, c), atoms in sorted(groups.items()):
        kind = "primary"
        if c in seen_class:
            kind = "split"
            splits += 1
        seen_class.add(c)
        cls = classes[c]
        entries.append(LineEntry(l, peaks[l].shift, cls.shift, cls.sigma, tuple(sorted(atoms)), kind))
    lines_used = {l for (l, _) in groups}
    classes_per_line = {}
    for (l, c) in groups:
        classes_per_line[l] = classes_per_line.get(l, 0) + 1
    overlaps = sum(v - 1 for v in classes_per_line.values())
    unfilled = tuple(l for l in range(len(peaks)) if l not in lines_used)
    return Assignment(tuple(entries), total, overlaps, splits, unfilled)
