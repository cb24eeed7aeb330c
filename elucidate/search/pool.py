"""Full scoring of the structures of lowest approximate cost.

The cost-bounded strategies hand over what they found with its approximate
cost; the ``pool_size`` cheapest are scored with the full predictor and line
assignment, cheapest first, until the time limit.  Whatever is let go (beyond
the pool, or unscored at the time limit) costs at least the first one let
go, and the proof is lowered to that cost.
"""

from __future__ import annotations

import time

from ..generate import Structure
from .base import Proof, SearchProblem

__all__ = ["score_pool"]


def score_pool(problem: SearchProblem, found: dict, proof: Proof, already: dict | None = None):
    """Score the cheapest found structures; returns (scored, proof, number
    scored, whether the time limit cut the scoring).

    ``already`` maps SMILES to scores computed earlier (None when the
    structure could not be scored), which are reused.
    """
    already = already or {}
    pool = sorted(((cost, smi, mol) for smi, (cost, mol) in found.items()), key=lambda e: (e[0], e[1]))
    if len(pool) > problem.pool_size:
        # not fully scored: everything beyond the pool costs at least this
        proof = Proof.after_dropping(proof, pool[problem.pool_size][0])
        pool = pool[: problem.pool_size]
    scored = []
    n = 0
    cut = False
    for k, (_, smi, mol) in enumerate(pool):
        if time.monotonic() > problem.deadline:
            # out of time while scoring: the unscored rest costs at least this
            proof = Proof.after_dropping(proof, pool[k][0])
            cut = True
            break
        if smi in already:
            item = already[smi]
        else:
            item = problem.score(Structure(smi, mol).smiles, mol, smiles_written=False)
        n += 1
        if item is not None:
            scored.append(item)
        problem.report("scoring candidates", len(scored))
    return scored, proof, n, cut
