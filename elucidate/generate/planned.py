"""Fit-steered generation through *environment plans*, cheapest first.

A structure's approximate cost (see :class:`PlanCosts`) depends only on the
first-sphere environment of each heavy atom: its atom type and the multiset
of (neighbour type, bond order) pairs around it.  So the search is split in
two levels:

1. **Plans.**  For one atom-type distribution (stage 1), a *plan* says how
   many atoms of each type take each environment.  A plan is feasible only
   if bonds balance: the bonds of order ``o`` that type-``A`` atoms make to
   type-``B`` atoms, counted from the ``A`` side, equal the count from the
   ``B`` side (and, for ``A == B``, the count is even); and a connected graph
   needs at least ``n - 1`` bonds.  :class:`PlanStream` returns the plans of
   one distribution cheapest first with a CP-SAT model (Google OR-Tools)
   solved to optimality again and again, each time with a cut that removes
   the plan just returned; the solver's proven objective is a lower bound on
   every plan not yet returned.
2. **Assembly.**  Each plan, in increasing cost, is handed to the orderly
   generator (:func:`elucidate.generate.assembly.bond_matrices`) with the
   atoms *refined* by their planned environment, a bond-order cap per pair of
   refined types, and a per-row check that each closed atom has exactly its
   planned neighbours (and no open atom has more than planned).  Atoms with
   the same type and environment are interchangeable, so the orderly rules
   stay valid.

Every structure (one Kekulé form) belongs to exactly one plan and costs what
its plan costs.  Assembling plans in increasing cost therefore lists
structures in increasing approximate cost, and when the search stops every
structure not listed costs at least the smallest proven bound over the
distributions (:func:`search_plans`): a proof from the solver, not an
estimate.

This is the environment-level relaxation in the spirit of atom-centred
fragment methods for structure generation (e.g. Faulon's signature
approach, J. Chem. Inf. Comput. Sci. 1994, 34, 1204, from memory); the
balance equations are the handshake lemma per pair of atom types.
"""

from __future__ import annotations

import math
import time
from collections import Counter
from dataclasses import dataclass
from typing import Callable, Iterator, Sequence

import numpy as np
from ortools.sat.python import cp_model

from ..rank.cover import cover_cost
from .assembly import SearchInterrupted, bond_matrices
from .atomtypes import AtomType, max_bond_order

__all__ = ["Plan", "PlanCosts", "PlanStream", "PlanSearch", "environment_options", "assemble_plan",
           "search_plans"]

#: Cost resolution of the CP-SAT model (costs are integers in 1/1000).
_SCALE = 1000


@dataclass(frozen=True)
class Plan:
    """How many atoms of each type take each environment, and the plan's cost.

    ``parts`` holds ``(type index, environment, count)``; an environment is a
    sorted tuple of ``(neighbour type index, bond order)``; type indices
    refer to ``types`` (the distinct atom types of the distribution).
    """

    cost: float
    types: tuple[AtomType, ...]
    parts: tuple[tuple[int, tuple[tuple[int, int], ...], int], ...]

    def sort_key(self):
        return (self.cost, self.types, self.parts)


class PlanCosts:
    """Cost of an environment and of a whole plan.

    Parameters
    ----------
    carbon_line_costs : callable(h, neighbours) -> array or None
        For a carbon with ``h`` H and neighbours ``[(label, H, order)]``: the
        cost of placing it under each line (``inf`` where the multiplicity
        forbids it), or None when the environment is excluded outright.
    atom_rarity : callable(label, h, neighbours) -> float
        Prior cost of any heavy atom's environment.

    The approximate cost of a structure is the sum over atoms of the rarity
    term, plus the cheapest way to put each carbon under a line such that
    every line carries at least one carbon (each carbon under its cheapest
    line, plus the minimum extra needed to cover every line: a Hungarian
    assignment of lines to distinct carbons on the extra costs).
    """

    def __init__(self, carbon_line_costs, atom_rarity, line_hydrogens: Sequence[int | None]):
        self._carbon = carbon_line_costs
        self._rarity = atom_rarity
        self.line_hydrogens = tuple(line_hydrogens)
        self.n_lines = len(self.line_hydrogens)
        self._cover_cache: dict = {}

    def environment(self, t: AtomType, nbs: Sequence[tuple[str, int, int]]):
        """(line-cost vector or None for non-carbons, rarity, relaxed cost) of
        one atom, or None when the environment is excluded."""
        rarity = self._rarity(t.label, t.hydrogens, nbs)
        if t.element != "C" or t.charge:
            return None, rarity, rarity
        lc = self._carbon(t.hydrogens, nbs)
        if lc is None:
            return None
        best = float(np.min(lc)) if len(lc) else 0.0
        if not math.isfinite(best):
            return None
        return lc, rarity, rarity + best

    def cover_cost(self, carbons: Sequence[tuple[tuple, int]], vectors: dict) -> float:
        """Cheapest placement of carbons under lines with every line covered.

        ``carbons`` is a sorted tuple of (environment id, count); ``vectors``
        maps an environment id to its line-cost vector.
        """
        key = tuple(carbons)
        hit = self._cover_cache.get(key)
        if hit is None:
            rows = []
            for env_id, count in carbons:
                rows.extend([vectors[env_id]] * count)
            hit = cover_cost(rows, self.n_lines)
            self._cover_cache[key] = hit
        return hit


def environment_options(types: Sequence[AtomType], counts: Sequence[int],
                        max_order: Callable[[AtomType, AtomType], int]) -> list[list[tuple]]:
    """Every neighbour multiset each atom type could have.

    Returns, per type index, a list of environments (sorted tuples of
    (neighbour type index, bond order)) whose orders sum to the type's
    degree, with no more neighbours of a type than there are other atoms of
    it, and bond orders within both atoms' degrees and ``max_order``.
    """
    out = []
    for ti, t in enumerate(types):
        items = []
        for ui, u in enumerate(types):
            avail = counts[ui] - (1 if ui == ti else 0)
            if avail <= 0:
                continue
            for o in range(1, 4):
                if o <= t.degree and o <= u.degree and o <= max_order(t, u):
                    items.append((ui, o, avail))
        envs = []

        def rec(k: int, left: int, acc: list, used: Counter):
            if left == 0:
                envs.append(tuple(acc))
                return
            for j in range(k, len(items)):
                ui, o, avail = items[j]
                if o > left or used[ui] >= avail:
                    continue
                used[ui] += 1
                acc.append((ui, o))
                rec(j, left - o, acc, used)
                acc.pop()
                used[ui] -= 1

        if t.degree == 0:
            envs.append(())
        else:
            rec(0, t.degree, [], Counter())
        out.append(envs)
    return out


def _costed_options(types, counts, costs, max_order):
    """Per type: the environments the hard rules allow, with their costs,
    cheapest first: ``(environment, line-cost vector or None, rarity, relaxed cost)``."""
    envs = environment_options(types, counts, max_order)
    opts = []
    for ti, t in enumerate(types):
        row = []
        for env in envs[ti]:
            nbs = [(types[u].label, types[u].hydrogens, o) for u, o in env]
            got = costs.environment(t, nbs)
            if got is None:
                continue
            row.append((env, *got))
        row.sort(key=lambda r: (r[3], r[0]))
        opts.append(row)
    return opts


def _finish(types, opts, chosen, costs):
    """The :class:`Plan` of chosen ((type, option), count) pairs, with its exact cost."""
    parts = []
    rarity = 0.0
    carbons = []
    vectors = {}
    for (ti, k), c in chosen:
        env, vec, r, _relaxed = opts[ti][k]
        parts.append((ti, env, c))
        rarity += r * c
        if vec is not None:
            carbons.append(((ti, k), c))
            vectors[(ti, k)] = vec
    cost = rarity + costs.cover_cost(tuple(sorted(carbons)), vectors)
    return Plan(round(cost, 9), tuple(types), tuple(sorted(parts)))


class PlanStream:
    """The plans of one distribution, cheapest first, by repeated CP-SAT solves.

    Model: an integer count per (type, environment) summing to the type's
    atom count; the bond-balance equalities (per pair of types and bond
    order; even counts within a type); at least ``n - 1`` bonds; and for each
    line a choice of the environment whose atom carries it (a line can only
    go to a carbon environment its multiplicity allows, and an environment
    carries at most as many lines as it has atoms).  The objective is the
    plan's approximate cost in 1/1000 units, every term rounded down: the
    rarity and cheapest-line cost of every atom plus the extra cost of the
    lines' chosen carriers over their cheapest line (the exact covering cost
    of :meth:`PlanCosts.cover_cost`).

    After each optimal solution a cut removes that plan (some environment
    must lose an atom), so successive solves return plans in increasing
    cost, and the solver's proven objective bound is a lower bound on every
    plan not yet returned (Google OR-Tools CP-SAT; the k-best-by-cuts
    scheme is textbook integer programming).
    """

    def __init__(self, dist: Sequence[AtomType], costs: PlanCosts, *,
                 max_order: Callable[[AtomType, AtomType], int] | None = None):
        max_order = max_order or max_bond_order
        counts_by_type = Counter(dist)
        self.types = types = tuple(sorted(counts_by_type))
        counts = [counts_by_type[t] for t in types]
        opts = _costed_options(types, counts, costs, max_order)
        self.costs = costs
        self.exhausted = any(not row for row in opts)
        self.solves = 0
        self.opts = opts
        self.model = None
        self._counts = counts
        self._n = len(dist)
        # floor: every atom at least its type's cheapest environment, and the
        # (distinct) atom under each line at least its cheapest way to be there
        self.lower = math.inf
        if not self.exhausted:
            floor = sum(c * row[0][3] for c, row in zip(counts, opts))
            for li in range(costs.n_lines):
                extra = math.inf
                for row in opts:
                    for _e, vec, rarity, _relaxed in row:
                        if vec is not None:
                            extra = min(extra, rarity + float(vec[li]) - row[0][3])
                floor += max(extra, 0.0)
            self.lower = floor
            self.exhausted = math.isinf(floor)  # some line has no possible carrier

    def _build(self) -> None:
        """The CP-SAT model, built on first use (many streams never need it)."""
        types, counts, opts, costs = self.types, self._counts, self.opts, self.costs
        n = self._n
        model = cp_model.CpModel()
        x = []
        for ti, row in enumerate(opts):
            xs = [model.NewIntVar(0, counts[ti], f"x{ti}_{k}") for k in range(len(row))]
            model.Add(sum(xs) == counts[ti])
            x.append(xs)
        for a in range(len(types)):
            for b in range(a, len(types)):
                for o in (1, 2, 3):
                    lhs = [(v, env.count((b, o))) for v, (env, *_r) in zip(x[a], opts[a]) if env.count((b, o))]
                    if a == b:
                        if lhs:
                            half = model.NewIntVar(0, 4 * counts[a], f"h{a}_{o}")
                            model.Add(sum(c * v for v, c in lhs) == 2 * half)
                        continue
                    rhs = [(v, env.count((a, o))) for v, (env, *_r) in zip(x[b], opts[b]) if env.count((a, o))]
                    if lhs or rhs:
                        model.Add(sum(c * v for v, c in lhs) == sum(c * v for v, c in rhs))
        model.Add(sum(len(env) * v for xs, row in zip(x, opts) for v, (env, *_r) in zip(xs, row)) >= 2 * (n - 1))
        terms = []
        for xs, row in zip(x, opts):
            for v, (_e, _vec, _r, relaxed) in zip(xs, row):
                terms.append(int(math.floor(relaxed * _SCALE)) * v)
        carriers = {}
        for li in range(costs.n_lines):
            lits = []
            for ti, row in enumerate(opts):
                for k, (_e, vec, _r, _relaxed) in enumerate(row):
                    if vec is None or not math.isfinite(float(vec[li])):
                        continue
                    y = model.NewBoolVar(f"y{li}_{ti}_{k}")
                    lits.append(y)
                    carriers.setdefault((ti, k), []).append(y)
                    extra = float(vec[li]) - float(np.min(vec))
                    if extra > 0:
                        terms.append(int(math.floor(extra * _SCALE)) * y)
            if not lits:
                self.exhausted = True
                self.lower = math.inf
                self.model = model
                return
            model.AddExactlyOne(lits)
        for (ti, k), ys in carriers.items():
            model.Add(sum(ys) <= x[ti][k])
        model.Minimize(sum(terms))
        self.model = model
        self.x = x

    def split(self, half: int, warmup: int = 8, deadline: float | None = None) -> list[Plan]:
        """Keep one of two halves of the plans, so two processes can share a
        distribution; returns the first plans that fall in this half.

        Both halves first list the same ``warmup`` cheapest plans; the pivot
        is the environment count of the cheapest plan that divides those
        most evenly, and half 0 keeps the plans with at least that count,
        half 1 the others.  Every plan falls in exactly one half, and both
        halves make the same (deterministic) choice.
        """
        plans = []
        for _ in range(warmup):
            plan = self.next(deadline)
            if plan is None:
                break
            plans.append(plan)
        if self.exhausted or len(plans) < warmup:
            # finished, or out of time: half 0 carries on alone
            if half:
                self.exhausted, self.lower = True, math.inf
                return []
            return plans

        def count(plan, ti, env):
            return sum(c for t, e, c in plan.parts if t == ti and e == env)

        best = None
        for ti, env, c in plans[0].parts:
            inside = sum(1 for p in plans if count(p, ti, env) >= c)
            score = abs(2 * inside - len(plans))
            if best is None or score < best[0]:
                best = (score, ti, env, c)
        _score, ti, env, c = best
        k = next(j for j, row in enumerate(self.opts[ti]) if row[0] == env)
        if half == 0:
            self.model.Add(self.x[ti][k] >= c)
        else:
            self.model.Add(self.x[ti][k] <= c - 1)
        return [p for p in plans if (count(p, ti, env) >= c) == (half == 0)]

    def next(self, deadline: float | None = None) -> "Plan | None":
        """The cheapest plan not yet returned; None when there is none or
        time ran out (then :attr:`exhausted` tells which, and :attr:`lower`
        holds the proven lower bound on every plan not yet returned)."""
        if self.exhausted:
            return None
        if self.model is None:
            self._build()
            if self.exhausted:
                return None
        solver = cp_model.CpSolver()
        solver.parameters.num_workers = 1
        solver.parameters.random_seed = 0
        # measured on bench-sized models (25 successive plans, 3 formulas):
        # presolve, probing and the generic LP cut families cost more than
        # they save on these small, repeatedly re-solved models (2x faster
        # without them)
        solver.parameters.cp_model_presolve = False
        solver.parameters.cp_model_probing_level = 0
        solver.parameters.add_cg_cuts = False
        solver.parameters.add_mir_cuts = False
        solver.parameters.add_zero_half_cuts = False
        solver.parameters.add_clique_cuts = False
        if deadline is not None:
            solver.parameters.max_time_in_seconds = max(deadline - time.monotonic(), 0.01)
        status = solver.Solve(self.model)
        self.solves += 1
        if status == cp_model.INFEASIBLE:
            self.exhausted = True
            self.lower = math.inf
            return None
        if status != cp_model.OPTIMAL:
            self.lower = max(self.lower, solver.BestObjectiveBound() / _SCALE)
            return None
        self.lower = max(self.lower, solver.ObjectiveValue() / _SCALE)
        chosen = []
        for ti, xs in enumerate(self.x):
            for k, v in enumerate(xs):
                c = solver.Value(v)
                if c:
                    chosen.append(((ti, k), c))
        # cut: some environment of this plan must lose an atom
        lits = []
        for (ti, k), c in chosen:
            b = self.model.NewBoolVar("")
            self.model.Add(self.x[ti][k] <= c - 1).OnlyEnforceIf(b)
            lits.append(b)
        self.model.AddBoolOr(lits)
        return _finish(self.types, self.opts, chosen, self.costs)


def assemble_plan(plan: Plan, *, max_order: Callable[[AtomType, AtomType], int] | None = None,
                  deadline: float | None = None) -> Iterator[tuple[tuple[AtomType, ...], list[list[int]]]]:
    """Every connected bond matrix realising ``plan`` (atoms in refined order).

    Yields ``(atom types per atom, bond matrix)``; the matrix object is reused.
    Raises :class:`SearchInterrupted` at ``deadline``.
    """
    types = plan.types
    atom_type: list[int] = []
    atom_env: list[tuple] = []
    refined: list[int] = []
    for r, (ti, env, count) in enumerate(plan.parts):
        for _ in range(count):
            atom_type.append(ti)
            atom_env.append(env)
            refined.append(r)
    n = len(atom_type)
    need = [Counter(env) for env in atom_env]
    caps = [[0] * n for _ in range(n)]
    for a in range(n):
        for b in range(n):
            if a == b:
                continue
            best = 0
            for o in (3, 2, 1):
                if need[a][(atom_type[b], o)] and need[b][(atom_type[a], o)]:
                    if max_order is None or o <= max_order(types[atom_type[a]], types[atom_type[b]]):
                        best = o
                        break
            caps[a][b] = best
    degrees = [types[t].degree for t in atom_type]

    def row_check(i: int, m) -> bool:
        row = m[i]
        got = Counter((atom_type[j], row[j]) for j in range(n) if row[j])
        if got != need[i]:
            return False
        # no open atom may already hold more bonds of a kind than planned
        for j in range(i + 1, n):
            have: Counter = Counter()
            mj = m[j]
            for k in range(i + 1):
                if mj[k]:
                    have[(atom_type[k], mj[k])] += 1
            nj = need[j]
            for key, c in have.items():
                if c > nj[key]:
                    return False
        return True

    per_atom = tuple(types[t] for t in atom_type)
    for matrix in bond_matrices(degrees, refined, caps, deadline=deadline, row_check=row_check):
        yield per_atom, matrix




@dataclass
class PlanSearch:
    """Outcome of :func:`search_plans`.

    ``found`` maps canonical SMILES to (approximate cost, molecule);
    ``lower`` is a proven lower bound on the approximate cost of every
    structure not in ``found`` (``inf`` when the whole space was searched).
    """

    found: dict
    lower: float
    exhausted: bool
    plans: int
    solves: int


def search_plans(dists: Sequence[Sequence[AtomType]], costs: PlanCosts, *, keep: int,
                 deadline: float | None = None, accept_mol: Callable | None = None,
                 half: int | None = None, reserve: float = 0.0,
                 max_order: Callable[[AtomType, AtomType], int] | None = None,
                 stall: float | None = None) -> PlanSearch:
    """Structures of the given distributions in increasing approximate cost.

    One :class:`PlanStream` per distribution; the globally cheapest pending
    plan is assembled next (a k-way merge), until ``keep`` structures are
    found, every stream is exhausted, or ``deadline`` passes.  Structures
    are kept when ``accept_mol(mol)`` (structure filters) holds.  With
    ``half`` (0 or 1) every stream keeps only that half of its plans
    (:meth:`PlanStream.split`), so two processes can share the work.
    ``reserve`` seconds per structure found are kept free before
    ``deadline`` (for the caller to score them).  With ``stall``, the
    search also stops when ``stall`` seconds pass without a new structure
    (its yield has dried up; the bound proven so far still holds).
    """
    import heapq
    from collections import deque

    from .molecule import build_mol, canonical_smiles

    max_order = max_order or max_bond_order
    streams = [PlanStream(d, costs, max_order=max_order) for d in dists]
    queued = [deque() for _ in streams]
    # a stream enters the merge with its floor (no plan yet): it is only
    # started when that floor comes up, so cheap distributions go first
    heap: list = [(st.lower, i, None) for i, st in enumerate(streams) if not st.exhausted]
    heapq.heapify(heap)
    started = [False] * len(streams)
    found: dict = {}
    plans = 0

    last_found = [time.monotonic()]

    def until():
        limit = None if deadline is None else deadline - reserve * len(found)
        if stall is not None:
            dry = last_found[0] + stall
            limit = dry if limit is None else min(limit, dry)
        return limit

    try:
        while heap and len(found) < keep:
            limit = until()
            if limit is not None and time.monotonic() > limit:
                break
            cost, i, plan = heap[0]
            if plan is None:
                heapq.heappop(heap)
                st = streams[i]
                if not started[i]:
                    started[i] = True
                    if half is not None:
                        queued[i].extend(st.split(half, deadline=until()))
                nxt = queued[i].popleft() if queued[i] else st.next(until())
                if nxt is not None:
                    heapq.heappush(heap, (nxt.cost, i, nxt))
                elif not st.exhausted:  # out of time before its first plan
                    heapq.heappush(heap, (st.lower, i, None))
                    break
                continue
            for types, matrix in assemble_plan(plan, max_order=max_order, deadline=until()):
                mol = build_mol(types, matrix)
                if mol is None:
                    continue
                smi = canonical_smiles(mol)
                if smi in found or (accept_mol is not None and not accept_mol(mol)):
                    continue
                found[smi] = (cost, mol)
                last_found[0] = time.monotonic()
            heapq.heappop(heap)
            plans += 1
            nxt = queued[i].popleft() if queued[i] else streams[i].next(until())
            if nxt is not None:
                heapq.heappush(heap, (nxt.cost, i, nxt))
    except SearchInterrupted:
        pass  # the plan at the top of the heap was not finished: it stays pending
    pending = [c for c, _i, _p in heap] + [p.cost for q in queued for p in q]
    lower = min([st.lower for st in streams if not st.exhausted] + pending, default=math.inf)
    # (a stream's lower is its floor until it starts, then the solver's bound)
    exhausted = not pending and all(st.exhausted for st in streams)
    return PlanSearch(found, lower, exhausted, plans, sum(st.solves for st in streams))
