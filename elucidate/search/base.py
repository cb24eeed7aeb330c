"""What every search strategy shares: the problem, the found structures and
what has been proven about the rest.

Vocabulary
----------
*Approximate cost*: the quick, first-sphere cost of a structure
(:meth:`elucidate.constraints.environments.EnvironmentRule.structure_cost`);
the cost-bounded strategies list structures in increasing approximate cost
and can prove bounds on it.

*Raw score*: the full score of :func:`elucidate.rank.scoring.score_structure`
(shift likelihood of the optimal line assignment plus the prior); the
candidates are ranked on it.

*Proof*: a statement about the structures a search did not list:
``exhausted`` (there are none) or ``bound`` (each costs at least this
approximate cost).  A strategy that samples proves nothing; its structures
are simply added.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, field
from typing import Callable

from rdkit import Chem

from ..constraints.bundle import ConstraintSet
from ..formula import Formula
from ..rank.scoring import ScoredStructure, score_structure

__all__ = ["SearchProblem", "Proof", "StrategyReport", "SearchOutcome", "ProgressFn"]

#: progress(stage, structures scored so far, seconds elapsed, seconds left)
ProgressFn = Callable[[str, int, float, float], None]


@dataclass
class SearchProblem:
    """One solve as the search strategies see it.

    ``prior`` is the (weighted) prior cost of a finished molecule, added to
    its assignment cost; ``pool_size`` is how many structures of lowest
    approximate cost the cost-bounded strategies hand over for full scoring.
    """

    formula: Formula
    peaks: tuple  # Peak objects
    valences: dict
    charged_nitrogen: bool
    constraints: ConstraintSet
    prior: Callable[[Chem.Mol], float] | None
    time_limit: float
    pool_size: int
    keep: int
    workers: int
    start: float = field(default_factory=time.monotonic)
    #: which strategies run: "auto" (cost-bounded first, annealing when
    #: they cannot finish), "bounded" (cost-bounded only) or "sampling"
    #: (annealing only)
    mode: str = "auto"
    #: annealing chains to run at most (a work budget: a search that ends
    #: by it, not by the time limit, is reproducible on any machine)
    chains: int | None = None

    #: reference library for neighbour starts (None: the shipped index)
    library: object = None
    #: 2D correlations checked in every full score (None: none given)
    evidence: object = None

    @property
    def sampling(self) -> bool:
        return self.mode in ("auto", "sampling")
    progress: ProgressFn | None = None
    _last_progress: float = 0.0

    @property
    def deadline(self) -> float:
        return self.start + self.time_limit

    @property
    def steered(self) -> bool:
        """Cost-bounded search (environment table present and a pool to score)."""
        return self.constraints.rule is not None and self.pool_size > 0

    @property
    def may_stop_confident(self) -> bool:
        """Whether the cost-bounded search may stop early because it is
        confident: at least one line carries its multiplicity.  The
        listed-answer model behind that stop is fitted on runs with
        multiplicities; with shifts only the approximate cost separates less
        and the model over-states certainty (held-out 13C-only runs: 4.0 %
        stated against 11.2 % observed for an answer not listed;
        docs/benchmark.md).  The annealing's stop is not affected."""
        return any(p.hydrogens is not None for p in self.peaks)

    def score(self, smiles: str, mol: Chem.Mol, smiles_written: bool = True) -> ScoredStructure | None:
        return score_structure(smiles, mol, self.peaks, self.prior, smiles_written, self.evidence)

    def report(self, stage: str, scored: int, force: bool = False) -> None:
        """Tell the progress callback (at most twice a second)."""
        if self.progress is None:
            return
        now = time.monotonic()
        if force or now - self._last_progress > 0.5:
            self._last_progress = now
            self.progress(stage, scored, now - self.start, max(0.0, self.deadline - now))


@dataclass(frozen=True)
class Proof:
    """What a strategy proved about the structures it did not list."""

    exhausted: bool = False
    bound: float | None = None  # every structure not listed costs at least this

    @staticmethod
    def after_dropping(proof: "Proof", cut: float) -> "Proof":
        """The proof that still holds after letting go of found structures
        costing at least ``cut``: only a search that was exhaustive or proved
        a bound can promise anything about structures it did not list."""
        if proof.exhausted:
            return Proof(False, cut)
        if proof.bound is not None:
            return Proof(False, min(proof.bound, cut))
        return Proof()


@dataclass(frozen=True)
class StrategyReport:
    """One line of 'what was searched and how' for the reports."""

    name: str
    structures: int  # distinct structures it found or visited
    seconds: float
    note: str = ""


@dataclass
class SearchOutcome:
    """Scored structures and the honest statement about the rest.

    status : str
        ``complete`` (the whole constrained space was scored),
        ``complete up to cost`` (every structure whose approximate cost is
        below ``cost_bound`` was scored), ``sampled`` (the best structures
        were found by sampling, beyond what could be proven) or ``stopped at
        the time limit`` (nothing could be proven).
    approx : dict
        Canonical SMILES -> (approximate cost, molecule) of the structures
        found by the cost-bounded strategies.
    """

    scored: list[ScoredStructure]
    status: str
    cost_bound: float | None
    examined: int
    log: list[tuple[str, int, int]]
    approx: dict = field(default_factory=dict)
    strategies: list[StrategyReport] = field(default_factory=list)
    #: why the search ended: "finished", "time limit" or "confident"
    ended: str = "finished"
    #: SMILES -> the strategy that found the structure
    sources: dict = field(default_factory=dict)
    #: sampling rounds (for the early-stop model and diagnostics)
    trace: list = field(default_factory=list)

    def approximate_cost(self, smiles: str, rule) -> float | None:
        """Approximate cost of a listed structure (None without the rule)."""
        if rule is None:
            return None
        entry = self.approx.get(smiles)
        mol = entry[1] if entry is not None else Chem.MolFromSmiles(smiles)
        return rule.structure_cost(mol)


def rounded_bound(bound: float) -> float:
    """A stated bound is rounded down: it must never exceed the proven one."""
    return math.floor(bound * 1000) / 1000
