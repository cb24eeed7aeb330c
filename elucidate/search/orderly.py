"""Orderly branch and bound on the approximate cost, with iterative deepening.

The exhaustive generator (:mod:`elucidate.generate`) runs with the
environment rule as its per-atom hook; with steering on, every closed atom
adds its cost (rarity of its environment, and for a carbon the cheapest
line it could sit under) to a running sum, and a partial structure whose
sum exceeds the pass bound is abandoned.  Costs are non-negative, so a
finished pass at bound ``X`` has found every structure whose approximate
cost is at most ``X``: a proof.  The bound grows from pass to pass
(8, 12.8, 20.5, ...) until the pool of structures to score holds enough
structures proven cheapest, or nothing was pruned (the space is exhausted).

This is depth-first branch and bound (Land & Doig, Econometrica 1960, 28,
497; from memory) inside the orderly generation of
:mod:`elucidate.generate.assembly`, with iterative deepening on the bound
(Korf, Artificial Intelligence 1985, 27, 97; from memory).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from rdkit import Chem

from ..generate import enumerate_isomers

__all__ = ["PassState", "PassOutcome", "run_pass", "INITIAL_BOUND", "BOUND_GROWTH"]

#: First approximate-cost bound of the deepening search, and its growth per pass.
INITIAL_BOUND = 8.0
BOUND_GROWTH = 1.6


@dataclass
class PassState:
    """What a pass needs (shared with worker processes by fork)."""

    formula: object
    valences: dict
    charged_nitrogen: bool
    cons: object  # ConstraintSet
    problem: object = None  # the SearchProblem (scoring and annealing in workers)
    weights: tuple[float, float] = (1.0, 1.0)  # calibrated (fit, prior) score weights


@dataclass
class PassOutcome:
    found: dict  # smiles -> (approximate cost, mol or RDKit binary)
    complete: bool
    bound_pruned: int
    distributions: int
    filter_log: list
    checked: int
    rejected: int
    dropped_min: float = math.inf  # lowest cost among structures found but not kept
    n_found: int = 0  # distinct structures found in the pass


def shard_accept(base, shard: int, n: int):
    """Keep every n-th distribution that ``base`` accepts (deterministic order)."""
    seen = [0]

    def accept(dist):
        if base is not None and not base(dist):
            return False
        seen[0] += 1
        return (seen[0] - 1) % n == shard

    return accept


def run_pass(state: PassState, bound: float, limit: float, shard: int, n: int, keep: int,
             as_binary: bool) -> PassOutcome:
    """One branch-and-bound pass at ``bound`` over one shard of distributions.

    Keeps the ``keep`` structures of lowest approximate cost (with their
    molecules, as RDKit binaries when ``as_binary``) and the lowest cost
    among those it let go, so the caller can state an honest bound.
    """
    rule = state.cons.rule
    rule.bound = bound
    rule.bound_pruned = rule.checked = rule.rejected = 0
    run = enumerate_isomers(
        state.formula, valences=state.valences, charged_nitrogen=state.charged_nitrogen,
        filters=state.cons.filters,
        accept_types=shard_accept(state.cons.accept, shard, n) if n > 1 else state.cons.accept,
        row_check_factory=rule, time_limit=max(limit, 1e-3),
    )
    found: dict[str, tuple[float, Chem.Mol]] = {}
    seen: set[str] = set()
    dropped_min = math.inf
    for structure in run:  # each constitution once
        seen.add(structure.smiles)
        # the full approximate cost (lines covered, cheapest Kekulé form) is
        # never below the running sum the branch and bound used
        found[structure.smiles] = (rule.structure_cost(structure.mol), structure.mol)
        if len(found) > 2 * keep:
            ordered = sorted(found.items(), key=lambda kv: (kv[1][0], kv[0]))
            dropped_min = min(dropped_min, ordered[keep][1][0])
            found = dict(ordered[:keep])
    if len(found) > keep:
        ordered = sorted(found.items(), key=lambda kv: (kv[1][0], kv[0]))
        dropped_min = min(dropped_min, ordered[keep][1][0])
        found = dict(ordered[:keep])
    if as_binary:
        found = {smi: (cost, mol.ToBinary()) for smi, (cost, mol) in found.items()}
    return PassOutcome(found, run.complete, rule.bound_pruned, run.distributions, run.filter_log,
                       rule.checked, rule.rejected, dropped_min, len(seen))
