"""Stochastic local search: simulated annealing over constitutions.

For unknowns too large to enumerate, the search walks from constitution to
constitution with the formula-preserving moves of :mod:`.moves` and keeps
what fits best.  Every visited structure is scored with the full scorer
(predicted shifts, optimal line assignment, prior; :mod:`elucidate.rank.scoring`)
under the calibrated weights of the final ranking, so the walk heads
straight for structures whose predicted spectrum fits the observed one,
whatever the size of the space.

Method
------
Simulated annealing (Kirkpatrick, Gelatt & Vecchi, Science 1983, 220, 671;
from memory) with the Metropolis rule: a move from energy ``E`` to ``E'`` is
taken when ``E' <= E``, otherwise with probability ``exp(-(E' - E) / T)``;
the temperature falls geometrically from ``t_start`` to ``t_end`` over the
chain.  The energy is the calibrated score ``a * fit + b * prior + c * plausibility`` plus
``VIOLATION_COST`` for every constraint the structure breaks (a structure
filter, or a carbon whose first-sphere environment the shift rule excludes):
the walk may cross structures outside the constrained space but only those
inside it are kept.  Moves start preferably near carbons whose predicted
shift misses its line (``focus``), so effort goes where the fit is wrong.
Many short chains from different starts (restarts) replace one long one;
the scheduler (:mod:`.scheduler`) feeds them with the best structures every
strategy has found so far.

A chain is deterministic given its seed and start; results are merged in
chain order, so they do not depend on the number of processes.  A chain cut
by the time limit simply stops early.
"""

from __future__ import annotations

import math
import random
import time
from dataclasses import dataclass, field

from rdkit import Chem

from ..rank.cover import CoverRow, min_offset_cover
from ..rank.calibration import load_calibration
from ..rank.scoring import ScoredStructure, score_structure
from .moves import Skeleton, random_move

__all__ = ["AnnealSchedule", "ChainSpec", "ChainResult", "Evaluator", "QuickCost", "run_chain", "VIOLATION_COST"]

#: Energy added per broken constraint while walking (one filter or one
#: excluded carbon environment); about the misfit of one carbon off by
#: 8-10 sigma, enough to keep the walk mostly inside the constrained space.
VIOLATION_COST = 8.0
#: Line covers kept by one quick cost before it starts afresh.
_COVER_MEMO_SIZE = 200_000


@dataclass(frozen=True)
class AnnealSchedule:
    """Length and temperatures of one chain (energies in calibrated score units).

    ``proposals`` moves are drawn per step and the one with the lowest quick
    cost (:class:`QuickCost`) is scored in full; ``warmup`` steps of
    annealing on the quick cost alone come first (cheap: no prediction).
    """

    steps: int = 1200
    t_start: float = 3.0
    t_end: float = 0.25
    proposals: int = 1
    warmup: int = 0


class QuickCost:
    """The approximate cost of a skeleton as it stands (this Kekulé form).

    The same quantity as the cost-bounded search's approximate cost
    (:meth:`elucidate.constraints.environments.EnvironmentRule.structure_cost`)
    for one Kekulé form: per atom the rarity of its first-sphere environment,
    plus the cheapest placement of the carbons under the lines *with every
    line covered* (:func:`elucidate.rank.cover.cover_cost_lists`); a carbon
    whose environment the shift rule excludes costs ``VIOLATION_COST``
    instead of a line.  The covering matters: without it, many carbons can
    all take the one line their environment suits best, and the walk drifts
    into structures with a low sum and a hopeless spectrum.  About ten to
    twenty times cheaper than a full score, it screens moves before they are
    scored.
    """

    def __init__(self, rule):
        self.rule = rule
        self.n_lines = len(rule.line_hydrogens)
        self._atoms: dict = {}
        # line cover per multiset of rows, keyed by the rows' ids: valid while
        # the rows live in ``_atoms``, so both are cleared together, and only
        # between calls (a row of the call in hand is then always in ``_atoms``)
        self._covers: dict = {}

    def atom(self, label: str, h: int, nbs: tuple):
        """(rarity, line-cost row or None) of one atom's environment."""
        key = (label, h, nbs)
        hit = self._atoms.get(key)
        if hit is None:
            rule = self.rule
            rarity = rule.atom_rarity(label, h, list(nbs))
            row = None
            if label == "C":
                vec = rule.line_costs(h, list(nbs))
                if vec is None:
                    rarity += VIOLATION_COST
                    row = [VIOLATION_COST if lh is None or lh == h else math.inf
                           for lh in rule.line_hydrogens]
                else:
                    row = [float(x) if x == x else math.inf for x in vec]
                row = CoverRow(row)
            hit = (rarity, row)
            self._atoms[key] = hit
        return hit

    def __call__(self, sk: Skeleton) -> float:
        labels = [e + ("+" if c > 0 else "-" if c < 0 else "") for e, c in zip(sk.elements, sk.charges)]
        hs = sk.hydrogens
        bonds = sk.bonds
        n = len(labels)
        total = 0.0
        rows = []
        if len(self._atoms) > 500_000 or len(self._covers) > _COVER_MEMO_SIZE:
            self._atoms.clear()
            self._covers.clear()
        for i in range(n):
            row = bonds[i]
            nbs = tuple(sorted((labels[j], hs[j], row[j]) for j in range(n) if row[j]))
            rarity, cover = self.atom(labels[i], hs[i], nbs)
            total += rarity
            if cover is not None:
                rows.append(cover)
        # the cover depends only on the multiset of the carbons' rows, which
        # are shared per environment: chains revisit the same multisets often
        # (about 45 % of calls in a 17-atom run), so keep the values
        key = tuple(sorted(map(id, rows)))
        cover = self._covers.get(key)
        if cover is None:
            cover = self._covers[key] = min(min_offset_cover([(0.0, rows)], self.n_lines), 1e4)
        return total + cover


@dataclass(frozen=True)
class ChainSpec:
    """One chain to run: its index (merge order), seed, start and schedule."""

    index: int
    seed: int
    start: Skeleton
    schedule: AnnealSchedule
    keep: int = 30


@dataclass
class ChainResult:
    """What a chain found: its best feasible structures (energy order)."""

    index: int
    best: list[tuple[float, ScoredStructure]]
    evaluations: int
    proposals: int
    accepted: int
    seconds: float
    cut: bool = False  # stopped by the time limit


@dataclass
class _Eval:
    energy: float
    smiles: str
    feasible: bool
    scored: ScoredStructure | None
    misfit: tuple[float, ...] = field(default=())  # per canonical atom: |error| / sigma of carbons


class Evaluator:
    """Energies of skeletons, remembered by canonical SMILES.

    One per process; the memory only saves time (results do not depend on
    it).  ``fit_weight``/``prior_weight``/``plausibility_weight`` are the
    calibrated score weights (the last from the shipped calibration when
    not given).
    """

    def __init__(self, peaks, constraints, prior, fit_weight: float, prior_weight: float,
                 memory: int = 200_000, plausibility_weight: float | None = None, evidence=None):
        self.peaks = peaks
        self.evidence = evidence
        self.cons = constraints
        self.prior = prior
        self.fit_weight = fit_weight
        self.prior_weight = prior_weight
        self.plausibility_weight = (load_calibration().plausibility_weight if plausibility_weight is None
                                    else plausibility_weight)
        self.memory = memory
        self._memo: dict[str, _Eval] = {}
        self.evaluations = 0

    def energy_of(self, scored: ScoredStructure) -> float:
        return (self.fit_weight * scored.fit_cost + self.prior_weight * scored.prior
                + self.plausibility_weight * scored.plausibility)

    def evaluate(self, sk: Skeleton) -> tuple[_Eval, tuple[int, ...]] | None:
        """(evaluation, canonical position -> skeleton atom) or None when
        RDKit rejects the skeleton or its carbons cannot be placed at all."""
        mol = sk.to_mol()
        if mol is None:
            return None
        smiles = Chem.MolToSmiles(mol, isomericSmiles=False)
        order = tuple(mol.GetPropsAsDict(True, True)["_smilesAtomOutputOrder"])
        hit = self._memo.get(smiles)
        if hit is None:
            hit = self._evaluate_new(smiles)
            if len(self._memo) >= self.memory:
                self._memo.clear()
            self._memo[smiles] = hit
        if math.isinf(hit.energy):
            return None
        return hit, order

    def _evaluate_new(self, smiles: str) -> _Eval:
        self.evaluations += 1
        mol = Chem.MolFromSmiles(smiles)  # canonical atom order: results do not depend on the path
        if mol is None:
            return _Eval(math.inf, smiles, False, None)
        scored = score_structure(smiles, mol, self.peaks, self.prior, smiles_written=False,
                                 evidence=self.evidence)
        if scored is None:
            return _Eval(math.inf, smiles, False, None)
        broken = sum(0 if f.keep(mol) else 1 for f in self.cons.filters)
        if self.cons.env_check is not None and not self.cons.env_check(mol):
            broken += 1
        misfit = [0.0] * mol.GetNumAtoms()
        for e in scored.assignment.entries:
            z = min(abs(e.error) / max(e.sigma, 0.5), 6.0)
            for a in e.atoms:
                misfit[a] = max(misfit[a], z)
        for check in scored.checks:  # moves start more often where a 2D correlation is not met
            if check.cost > 0 and check.atoms is not None:
                for a in check.atoms:
                    misfit[a] = max(misfit[a], 3.0 if check.status == "violated" else 1.5)
        energy = self.energy_of(scored) + VIOLATION_COST * broken
        return _Eval(energy, smiles, broken == 0, scored if broken == 0 else None, tuple(misfit))


def _focus(sk: Skeleton, misfit: tuple[float, ...], order: tuple[int, ...]) -> list[float]:
    """Atom weights for move starts: 1 plus the misfit of the atom and its
    neighbours' carbons (canonical positions mapped back to skeleton atoms)."""
    n = sk.size
    own = [0.0] * n
    for pos, atom in enumerate(order):
        own[atom] = misfit[pos] if pos < len(misfit) else 0.0
    weights = []
    bonds = sk.bonds
    for i in range(n):
        w = 1.0 + own[i]
        row = bonds[i]
        for j in range(n):
            if row[j]:
                w += 0.5 * own[j]
        weights.append(w)
    return weights


def _draw(cur: Skeleton, rng, valences, focus, accept_types, quick: QuickCost | None, k: int):
    """Up to ``k`` valid moves from ``cur``; the one of lowest quick cost (or the first)."""
    best = None
    for _ in range(k):
        kind, nxt = random_move(cur, rng, valences, focus)
        if nxt is None:
            continue
        if kind == "hydrogen move" and not accept_types(tuple(sorted(nxt.types()))):
            continue
        if quick is None:
            return nxt
        q = quick(nxt)
        if best is None or q < best[0]:
            best = (q, nxt)
    return None if best is None else best[1]


def _warm_up(start: Skeleton, rng, valences, accept_types, quick: QuickCost, steps: int,
             deadline: float) -> Skeleton:
    """Annealing on the quick cost alone: a cheap way into good first-sphere environments."""
    cur, cost = start, quick(start)
    best = (cost, cur)
    for step in range(steps):
        if step % 64 == 0 and time.monotonic() > deadline:
            break
        temperature = 2.0 * (0.05 / 2.0) ** (step / max(1, steps - 1))
        kind, nxt = random_move(cur, rng, valences, None)
        if nxt is None:
            continue
        if kind == "hydrogen move" and not accept_types(tuple(sorted(nxt.types()))):
            continue
        c2 = quick(nxt)
        if c2 <= cost or rng.random() < math.exp(-(c2 - cost) / temperature):
            cur, cost = nxt, c2
            if cost < best[0]:
                best = (cost, cur)
    return best[1]


def run_chain(spec: ChainSpec, evaluator: Evaluator, accept_types, valences, deadline: float,
              quick: QuickCost | None = None) -> ChainResult:
    """One annealing chain from ``spec.start``; see the module docstring."""
    t0 = time.monotonic()
    rng = random.Random(spec.seed)
    sched = spec.schedule
    cur = spec.start
    if quick is not None and sched.warmup:
        cur = _warm_up(cur, rng, valences, accept_types, quick, sched.warmup, deadline)
    first = evaluator.evaluate(cur)
    best: dict[str, tuple[float, ScoredStructure]] = {}
    evals0 = evaluator.evaluations
    proposals = accepted = 0
    cut = False
    if first is None:
        return ChainResult(spec.index, [], 0, 0, 0, time.monotonic() - t0)
    ev, order = first
    energy = ev.energy
    focus = _focus(cur, ev.misfit, order)
    if ev.feasible:
        best[ev.smiles] = (ev.energy, ev.scored)
    ratio = sched.t_end / sched.t_start
    for step in range(sched.steps):
        if time.monotonic() > deadline:
            cut = True
            break
        temperature = sched.t_start * ratio ** (step / max(1, sched.steps - 1))
        nxt = _draw(cur, rng, valences, focus, accept_types, quick if sched.proposals > 1 else None,
                    sched.proposals)
        proposals += 1
        if nxt is None:
            continue
        out = evaluator.evaluate(nxt)
        if out is None:
            continue
        ev2, order2 = out
        if ev2.feasible and ev2.smiles not in best:
            best[ev2.smiles] = (ev2.energy, ev2.scored)
            if len(best) > 4 * spec.keep:
                best = dict(sorted(best.items(), key=lambda kv: (kv[1][0], kv[0]))[: spec.keep])
        delta = ev2.energy - energy
        if delta <= 0 or rng.random() < math.exp(-delta / temperature):
            cur, energy = nxt, ev2.energy
            focus = _focus(cur, ev2.misfit, order2)
            accepted += 1
    ranked = sorted(best.items(), key=lambda kv: (kv[1][0], kv[0]))[: spec.keep]
    return ChainResult(spec.index, [v for _k, v in ranked], evaluator.evaluations - evals0, proposals,
                       accepted, time.monotonic() - t0, cut)
