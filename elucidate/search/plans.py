"""The plan search as a strategy: environment plans cheapest first.

Per atom-type distribution, a CP-SAT model chooses how many atoms take each
first-sphere environment and which carbon covers each line; plans come
cheapest first and the solver's optimum proves a lower bound on every plan
not yet returned (:mod:`elucidate.generate.planned`, where the method and
its references are described).  With two processes, each takes alternate
distributions (or, with fewer than four distributions, one half of every
distribution's plans).
"""

from __future__ import annotations

from ..generate import _charges_paired
from ..generate.atomtypes import type_distributions
from ..generate.planned import PlanCosts, search_plans

__all__ = ["plan_shard", "SCORE_S"]

#: Seconds to fully score one structure of the pool (predictor + assignment),
#: reserved by the plan search; see docs/performance.md.
SCORE_S = 0.004


def plan_shard(state, shard: int, n: int, keep: int, deadline: float, as_binary: bool,
               stall: float | None = None):
    """The plan search on shard ``shard`` of ``n``: every n-th distribution,
    or, with two processes and fewer than four distributions, one half of
    every distribution's plans."""
    cons = state.cons
    dists = list(type_distributions(state.formula, state.valences, charged_nitrogen=state.charged_nitrogen,
                                    accept=cons.accept))
    half = None
    if n == 2 and len(dists) < 2 * n:
        half = shard  # few distributions: both processes share each one
    elif n > 1:
        dists = [d for k, d in enumerate(dists) if k % n == shard]
    rule = cons.rule
    costs = PlanCosts(rule.line_costs, rule.atom_rarity, rule.line_hydrogens)

    def accept_mol(mol):
        if state.charged_nitrogen and not _charges_paired(mol):
            return False
        return all(f.keep(mol) for f in cons.filters)

    # each process reserves scoring time for its share as if it were all
    out = search_plans(dists, costs, keep=keep, deadline=deadline, accept_mol=accept_mol, half=half,
                       reserve=SCORE_S * n, stall=stall)
    if as_binary:
        out.found = {smi: (c, mol.ToBinary()) for smi, (c, mol) in out.found.items()}
    return out
