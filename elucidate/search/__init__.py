"""Search: from constraints to scored structures, with an honest statement.

Every strategy shares the constraints of the solve
(:class:`elucidate.constraints.bundle.ConstraintSet`: formula, DEPT hydrogen
counts, valences, structure filters, shift environments) and the scorer
(:func:`elucidate.rank.scoring.score_structure`), and reports what it can
prove about the structures it did not list (:class:`.base.Proof`).

Strategies
----------
exhaustive scan
    every constitution, scored as generated (:mod:`elucidate.generate`).
orderly deepening (:mod:`.orderly`)
    branch and bound on the approximate cost inside the orderly generator.
environment plans (:mod:`.plans`)
    CP-SAT plans of first-sphere environments, cheapest first.
pool scoring (:mod:`.pool`)
    full scoring of the cheapest structures found.

:func:`run_search` (:mod:`.scheduler`) runs them in turn within the time
limit and states the result: complete, complete up to an approximate cost,
or stopped at the time limit.
"""

from .base import Proof, SearchOutcome, SearchProblem, StrategyReport
from .scheduler import rank_key, run_search

__all__ = ["SearchProblem", "SearchOutcome", "Proof", "StrategyReport", "run_search", "rank_key"]
