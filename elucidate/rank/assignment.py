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
    line_h = np.array([-1 if pk.hydrogens is None else pk.hydrogens for pk in peaks])
    cls_h = np.array([c.hydrogens for c in classes])
    compat = (line_h[None, :] == -1) | (line_h[None, :] == cls_h[:, None])
    cost = shift_cost_matrix(obs, [c.shift for c in classes], [c.sigma for c in classes])
    cost[~compat] = np.nan
    split_cap = np.array([min(len(c.atoms) - 1, 2) for c in classes], dtype=np.int64)
    total_split = int(split_cap.sum())

    source, sink = 0, 1
    cnode = 2 + np.arange(nc)
    lnode = 2 + nc + np.arange(nl)
    pc, pl = np.nonzero(compat)
    # Split arcs: a class's first extra line at its own split cost, any
    # further one at SPLIT_COST (costs rise, so the flow takes them in order).
    has_split = np.nonzero(split_cap)[0]
    more_split = np.nonzero(split_cap > 1)[0]
    first_cost = np.array([round(classes[c].split_cost * _SCALE) for c in has_split], np.int64)
    tails = [np.zeros(nc, np.int64), np.zeros(len(has_split) + len(more_split), np.int64),
             cnode[pc], lnode, lnode]
    heads = [cnode, cnode[np.concatenate([has_split, more_split])], lnode[pl], np.full(nl, sink),
             np.full(nl, sink)]
    caps = [np.ones(nc, np.int64), np.concatenate([np.ones(len(has_split), np.int64), split_cap[more_split] - 1]),
            np.ones(len(pc), np.int64), np.ones(nl, np.int64), np.full(nl, nc, np.int64)]
    costs = [np.full(nc, -_FORCE, np.int64),
             np.concatenate([first_cost, np.full(len(more_split), round(SPLIT_COST * _SCALE), np.int64)]),
             np.round(cost[pc, pl] * _SCALE).astype(np.int64),
             np.full(nl, round(-UNFILLED_COST * _SCALE), np.int64),
             np.full(nl, round(OVERLAP_COST * _SCALE), np.int64)]
    if total_split:
        tails.append(np.array([source]))
        heads.append(np.array([sink]))
        caps.append(np.array([total_split]))
        costs.append(np.array([0]))
    first_pair = nc + len(has_split) + len(more_split)

    flow = min_cost_flow.SimpleMinCostFlow()
    arcs = flow.add_arcs_with_capacity_and_unit_cost(
        np.concatenate(tails), np.concatenate(heads), np.concatenate(caps), np.concatenate(costs)
    )
    supply = nc + total_split
    flow.set_nodes_supplies(np.array([source, sink]), np.array([supply, -supply]))
    status = flow.solve()
    if status != flow.OPTIMAL:
        return Assignment((), math.inf, 0, 0, tuple(range(nl)))
    flows = flow.flows(arcs)
    used = np.nonzero(flows[first_pair:first_pair + len(pc)])[0]
    pair_arcs = [(None, int(pc[k]), int(pl[k])) for k in used]

    per_class: dict[int, list[int]] = {}
    for _, c, l in pair_arcs:
        per_class.setdefault(c, []).append(l)
    if len(per_class) < nc:  # some class had no compatible line
        return Assignment((), math.inf, 0, 0, tuple(range(nl)))
    # Decide which entry of each line is its primary one (the best fitting),
    # and which extra entries of a class are splits.
    by_line: dict[int, list[int]] = {}
    for c, ls in per_class.items():
        for l in ls:
            by_line.setdefault(l, []).append(c)
    primary = {l: min(cs, key=lambda c: (cost[c, l], c)) for l, cs in by_line.items()}
    entries = []
    total = 0.0
    overlaps = splits = 0
    for c in sorted(per_class):
        ls = sorted(per_class[c], key=lambda l: (cost[c, l], l))
        for rank_in_class, l in enumerate(ls):
            kind = "primary" if primary[l] == c else "overlap"
            if rank_in_class > 0:
                kind = "split"
                splits += 1
                total += classes[c].split_cost if rank_in_class == 1 else SPLIT_COST
            elif kind == "overlap":
                overlaps += 1
                total += OVERLAP_COST
            total += cost[c, l]
            cls, pk = classes[c], peaks[l]
            entries.append(LineEntry(l, pk.shift, cls.shift, cls.sigma, cls.atoms, kind))
    unfilled = tuple(l for l in range(nl) if l not in by_line)
    total += UNFILLED_COST * len(unfilled)
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
