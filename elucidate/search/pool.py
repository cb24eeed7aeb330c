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

__all__ = ["score_pool", "MIN_SCORED"]

#: Structures always scored before the pool scoring may stop early.
MIN_SCORED = 200


def score_pool(problem: SearchProblem, found: dict, proof: Proof, already: dict | None = None,
               energy=None, needed: float | None = None):
    """Score the cheapest found structures; returns (scored, proof, number
    scored, whether the time limit cut the scoring).

    ``already`` maps SMILES to scores computed earlier (None when the
    structure could not be scored), which are reused.  With ``needed`` (and
    ``energy``, the calibrated score of a scored structure), scoring stops
    once the structures left cost at least ``needed`` more than the
    best-scoring one so far: the calibrated chance that one of them is the
    answer is then below 1 % (:func:`elucidate.rank.calibration.confident_margin`);
    the bound drops to the first one left, as for a time cut.
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
    best = None  # (energy, approximate cost) of the best-scoring structure so far
    for k, (cost, smi, mol) in enumerate(pool):
        if time.monotonic() > problem.deadline:
            # out of time while scoring: the unscored rest costs at least this
            proof = Proof.after_dropping(proof, pool[k][0])
            cut = True
            break
        if needed is not None and best is not None and k >= MIN_SCORED and cost - best[1] >= needed:
            proof = Proof.after_dropping(proof, cost)
            break
        if smi in already:
            item = already[smi]
        else:
            item = problem.score(Structure(smi, mol).smiles, mol, smiles_written=False)
        n += 1
        if item is not None:
            scored.append(item)
            if energy is not None:
                e = energy(item)
                if best is None or e < best[0]:
                    best = (e, cost)
        problem.report("scoring candidates", len(scored))
    return scored, proof, n, cut
