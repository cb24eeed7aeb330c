"""2D correlations as evidence about a structure.

Linking
-------
Each cross peak is tied to the observed 13C lines within the matching
tolerances (defaults :data:`H_TOLERANCE` 0.02 ppm for 1H, :data:`C_TOLERANCE`
0.5 ppm for 13C; common practice for peak tables picked from 2D spectra,
no source):

* **HSQC** ``1H / 13C``: the proton sits on a carbon of the 13C line(s)
  within tolerance.  These rows also say which protons exist: every HMBC
  and COSY proton is looked up among the HSQC protons.
* **HMBC** ``1H / 13C``: the carbon(s) carrying that proton (found through
  HSQC) lie 2 or 3 bonds from a carbon of the 13C line(s).
* **H2BC** ``1H / 13C``: as HMBC, exactly 2 bonds.
* **COSY** ``1H / 1H``: the two protons' carbons are bonded (vicinal, 3
  bonds H to H) or are the same carbon (geminal, 2 bonds).

A shift within tolerance of several lines becomes a choice (the check takes
the most favourable one), never an error.  A row that matches no line, an
HMBC/H2BC/COSY proton that no HSQC row carries, and an HSQC row on a line
the DEPT multiplicities give as quaternary are errors naming the row.

Checking a structure
--------------------
The carbons of each line are those the shift assignment put under it
(:mod:`elucidate.rank.assignment`); the distance is the number of bonds of
the shortest path in the molecular graph (from the proton: one more than
between the carbons).  Each row is:

* *satisfied* -- HMBC 2-3 bonds, H2BC 2, COSY 2-3 (H to H), HSQC on a
  protonated carbon: no cost;
* *long range* -- HMBC 4 bonds, COSY 4 bonds (H-C-X-C-H through one atom,
  such as W or allylic coupling): :data:`LONG_RANGE_COST`;
* *violated* -- anything else: :data:`VIOLATION_COST`.

Two lines of close shift are easily swapped by the shift assignment alone
(e.g. two aromatic C-O carbons 1 ppm apart); :meth:`CorrelationEvidence.assign`
therefore improves the assignment jointly: it swaps the lines of two
compatible carbon classes when the correlations gain more than the shift
likelihood loses (best swap first, at most :data:`MAX_SWAPS`, each costing
the shifts less than :data:`MAX_SWAP_COST`, only swaps touching a line of an
unmet row), a local search on the sum of both costs.

The costs are negative log-likelihood ratios on the scale of the shift
misfit (nats), added to the assignment cost: a long-range row is taken to
be about e^2 = 7 times less likely than a 2-3-bond one (4-bond HMBC peaks
are a few percent of a typical table: common practice, no source), and a
violated one about e^6 = 400 times (a misread or artefact row); so one
violated row weighs as much as one carbon about 3 spreads off its
predicted shift, and no single row can veto a structure.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Sequence

from dataclasses import replace

from rdkit import Chem

from ..errors import InputError
from ..rank.likelihood import shift_cost
from ..spectrum.correlations import CorrelationTable, CrossPeak

__all__ = ["LinkedCorrelation", "CorrelationEvidence", "CorrelationCheck", "link_correlations", "check_tolerance",
           "H_TOLERANCE", "C_TOLERANCE", "LONG_RANGE_COST", "VIOLATION_COST"]

#: Default matching tolerance for 1H shifts (ppm).
H_TOLERANCE = 0.02
#: Default matching tolerance for 13C shifts (ppm).
C_TOLERANCE = 0.5
#: Cost of a row met only at long range (HMBC or COSY over 4 bonds).
LONG_RANGE_COST = 2.0
#: Cost of a row the structure does not meet.
VIOLATION_COST = 6.0
#: Line swaps tried in turn to meet more rows (see :meth:`CorrelationEvidence.assign`).
MAX_SWAPS = 3
#: Largest shift-cost increase of one swap: only lines whose predictions fit
#: nearly as well either way are swapped (a larger misfit is no accident of close lines).
MAX_SWAP_COST = 2.5


@dataclass(frozen=True)
class LinkedCorrelation:
    """A cross peak tied to the observed lines.

    ``h_lines``: the lines whose carbons may carry the proton (for COSY
    the first proton); ``c_lines``: the lines of the correlated carbon
    (HSQC: the same as ``h_lines``; COSY: the second proton's lines).
    Indices into the peak list.
    """

    row: CrossPeak
    h_lines: tuple[int, ...]
    c_lines: tuple[int, ...]


@dataclass(frozen=True)
class CorrelationCheck:
    """How one structure meets one cross peak.

    ``bonds``: the shortest path in bonds (HMBC/H2BC proton to carbon,
    COSY proton to proton, HSQC 1) over the allowed line choices, or None
    when no path exists; ``atoms``: the two atoms of that path's ends
    (carbon carrying the proton, correlated carbon), in the scored
    molecule's numbering until the candidate renumbers them.
    """

    row: CrossPeak
    status: str  # "satisfied", "long range" or "violated"
    bonds: int | None
    cost: float
    atoms: tuple[int, int] | None = None

    def describe(self) -> str:
        where = f"{self.bonds} bonds" if self.bonds is not None else "no path"
        return f"{self.row.describe()}: {self.status} ({where})"


def check_tolerance(name: str, tol) -> None:
    """Raise InputError unless ``tol`` is a positive number of ppm below 50."""
    if isinstance(tol, bool) or not isinstance(tol, (int, float)) or not 0 < tol < 50:
        raise InputError(f"{name} must be a positive number of ppm (below 50), got {tol!r}")


def link_correlations(table: CorrelationTable, peaks: Sequence, *, h_tolerance: float = H_TOLERANCE,
                      c_tolerance: float = C_TOLERANCE) -> "CorrelationEvidence":
    """Tie every cross peak of ``table`` to the observed 13C lines.

    Parameters
    ----------
    table : CorrelationTable
    peaks : sequence of Peak
        The observed lines (after solvent removal), in the solve's order.
    h_tolerance, c_tolerance : float
        Matching tolerances in ppm (1H, 13C); must be positive.

    Raises
    ------
    InputError
        A row that matches no line, a proton that no HSQC row carries, an
        HSQC row on a line given as quaternary, or a bad tolerance.
    """
    check_tolerance("1H matching tolerance", h_tolerance)
    check_tolerance("13C matching tolerance", c_tolerance)
    peaks = tuple(peaks)

    def lines_of(row: CrossPeak) -> tuple[int, ...]:
        lines = tuple(i for i, p in enumerate(peaks) if abs(p.shift - row.other) <= c_tolerance + 1e-9)
        if not lines:
            raise InputError(f"{row.where}: {row.describe()} matches no 13C line within {c_tolerance:g} ppm; "
                             "check the 13C shift, add the line to the peak list, or widen the 13C tolerance")
        return lines

    # the protons: every HSQC row puts its proton on the protonated lines near its 13C shift
    hsqc: dict[int, tuple[int, ...]] = {}
    for k, row in enumerate(table.rows):
        if row.experiment == "HSQC":
            hsqc[k] = tuple(i for i in lines_of(row) if peaks[i].hydrogens != 0)
            if not hsqc[k]:
                raise InputError(f"{row.where}: {row.describe()} falls on a line the multiplicities give as C "
                                 "(no hydrogen); fix the multiplicity or the row")

    def carriers(h: float, row: CrossPeak) -> tuple[int, ...]:
        out = sorted({i for k, lines in hsqc.items() if abs(table.rows[k].h_shift - h) <= h_tolerance + 1e-9
                      for i in lines})
        if not out:
            raise InputError(f"{row.where}: no HSQC row has a proton at {h:g} ppm (within {h_tolerance:g}); "
                             "add the HSQC row of that proton, widen the 1H tolerance, or leave out rows of "
                             "protons on O or N (not used)")
        return tuple(out)

    linked = []
    for k, row in enumerate(table.rows):
        if row.experiment == "HSQC":
            linked.append(LinkedCorrelation(row, hsqc[k], hsqc[k]))
        else:
            h_lines = carriers(row.h_shift, row)
            other = carriers(row.other, row) if row.experiment == "COSY" else lines_of(row)
            linked.append(LinkedCorrelation(row, h_lines, other))
    return CorrelationEvidence(tuple(linked), h_tolerance, c_tolerance)


def _status(experiment: str, bonds: int | None) -> tuple[str, float]:
    if bonds is None:
        return "violated", VIOLATION_COST
    if experiment == "HSQC":
        ok, long = (1,), ()
    elif experiment == "HMBC":
        ok, long = (2, 3), (4,)
    elif experiment == "H2BC":
        ok, long = (2,), ()
    else:  # COSY, proton to proton
        ok, long = (2, 3), (4,)
    if bonds in ok:
        return "satisfied", 0.0
    if bonds in long:
        return "long range", LONG_RANGE_COST
    return "violated", VIOLATION_COST


@dataclass(frozen=True)
class CorrelationEvidence:
    """The linked cross peaks of one solve; checks structures against them."""

    rows: tuple[LinkedCorrelation, ...]
    h_tolerance: float = H_TOLERANCE
    c_tolerance: float = C_TOLERANCE

    def __len__(self) -> int:
        return len(self.rows)

    def assign(self, mol: Chem.Mol, assignment, peaks: Sequence):
        """(assignment, correlation cost, checks): the shift-optimal
        ``assignment`` improved by line swaps where the correlations gain
        more than the shifts lose (module docstring); the returned
        assignment's cost includes the shift cost of the swaps."""
        entries = list(assignment.entries)
        dist, hs = Chem.GetDistanceMatrix(mol), [a.GetTotalNumHs() for a in mol.GetAtoms()]
        on_line = _on_line(entries)
        checks = [_check_row(link, on_line, dist, hs) for link in self.rows]
        cost = sum(c.cost for c in checks)
        if cost <= 0 or len(entries) < 2:
            return assignment, cost, tuple(checks)
        touching: dict[int, list[int]] = {}
        for k, link in enumerate(self.rows):
            for i in set(link.h_lines) | set(link.c_lines):
                touching.setdefault(i, []).append(k)
        extra = 0.0
        for _ in range(MAX_SWAPS):
            stake = {i: sum(checks[k].cost for k in ks) for i, ks in touching.items()}
            best = None
            for i, e in enumerate(entries):
                a = e.peak_index
                if stake.get(a, 0.0) <= 0:
                    continue  # a swap must move a carbon of a line with an unmet row
                for j, f in enumerate(entries):
                    b = f.peak_index
                    if a == b or (stake.get(b, 0.0) > 0 and j < i):
                        continue  # pairs of two unmet lines are tried once
                    ha, hb = peaks[a].hydrogens, peaks[b].hydrogens
                    if (hb is not None and hb != hs[e.atoms[0]]) or (ha is not None and ha != hs[f.atoms[0]]):
                        continue
                    delta = (shift_cost(f.observed, e.predicted, e.sigma) + shift_cost(e.observed, f.predicted, f.sigma)
                             - shift_cost(e.observed, e.predicted, e.sigma)
                             - shift_cost(f.observed, f.predicted, f.sigma))
                    if delta >= MAX_SWAP_COST or delta >= stake[a] + stake.get(b, 0.0):
                        continue  # not close lines, or cannot pay off: only the rows touching the two lines change
                    rows = sorted(set(touching.get(a, ())) | set(touching.get(b, ())))
                    at_stake = sum(checks[k].cost for k in rows)
                    if delta >= at_stake:
                        continue
                    trial_line = dict(on_line)
                    trial_line[a] = [x for x in on_line[a] if x not in e.atoms] + list(f.atoms)
                    trial_line[b] = [x for x in on_line[b] if x not in f.atoms] + list(e.atoms)
                    new = {k: _check_row(self.rows[k], trial_line, dist, hs) for k in rows}
                    gain = at_stake - sum(c.cost for c in new.values()) - delta
                    if gain > 1e-9 and (best is None or gain > best[0] + 1e-12):
                        best = (gain, i, j, new, delta, trial_line)
            if best is None:
                break
            _gain, i, j, new, delta, on_line = best
            e, f = entries[i], entries[j]
            entries[i] = replace(e, peak_index=f.peak_index, observed=f.observed)
            entries[j] = replace(f, peak_index=e.peak_index, observed=e.observed)
            for k, c in new.items():
                checks[k] = c
            cost = sum(c.cost for c in checks)
            extra += delta
        if extra == 0.0 and list(assignment.entries) == entries:
            return assignment, cost, tuple(checks)
        entries.sort(key=lambda e: (e.peak_index, e.atoms))
        return replace(assignment, entries=tuple(entries), cost=assignment.cost + extra), cost, tuple(checks)

    def check(self, mol: Chem.Mol, entries) -> tuple[float, tuple[CorrelationCheck, ...]]:
        """(total cost, one check per row) of a structure under a line assignment.

        ``entries``: the assignment's line entries (``peak_index``, ``atoms``
        in ``mol``'s numbering).
        """
        dist, hs = Chem.GetDistanceMatrix(mol), [a.GetTotalNumHs() for a in mol.GetAtoms()]
        on_line = _on_line(entries)
        checks = tuple(_check_row(link, on_line, dist, hs) for link in self.rows)
        return sum(c.cost for c in checks), checks


def _on_line(entries) -> dict[int, list[int]]:
    on_line: dict[int, list[int]] = {}
    for e in entries:
        on_line.setdefault(e.peak_index, []).extend(e.atoms)
    return on_line


def _check_row(link: LinkedCorrelation, on_line: dict, dist, hs) -> CorrelationCheck:
    """One cross peak against the carbons under its lines."""
    exp = link.row.experiment
    carriers = [a for i in link.h_lines for a in on_line.get(i, ()) if hs[a] > 0]
    if exp == "HSQC":
        best = (1, carriers[0], carriers[0]) if carriers else None
    else:
        targets = [a for i in link.c_lines for a in on_line.get(i, ())]
        if exp == "COSY":
            targets = [a for a in targets if hs[a] > 0]
        best = _best_path(exp, carriers, targets, dist, hs)
    status, cost = _status(exp, None if best is None else best[0])
    return CorrelationCheck(link.row, status, None if best is None else best[0], cost,
                            None if best is None else (best[1], best[2]))


def _best_path(exp: str, carriers, targets, dist, hs) -> tuple[int, int, int] | None:
    """(bonds, carrier, other) of the path whose status costs least (then
    fewest bonds, then lowest atoms: deterministic); None without a path.
    The proton adds one bond at each end it sits on (COSY two, else one)."""
    best = None
    for x in carriers:
        for y in targets:
            if x == y:
                if exp != "COSY" or hs[x] < 2:
                    continue
                bonds = 2
            else:
                d = dist[x, y]
                if d > 1e6:
                    continue
                bonds = int(d) + (2 if exp == "COSY" else 1)
            key = (_status(exp, bonds)[1], bonds, x, y)
            if best is None or key < best:
                best = key
    return None if best is None else best[1:]
