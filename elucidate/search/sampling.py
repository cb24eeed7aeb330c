"""Sampling phase: annealing chains fed by what the other strategies found.

When the cost-bounded strategies cannot finish, the structures they found
(cheapest approximate cost first) are scored and become the first *elite*:
the best-fitting distinct structures known so far.  Then rounds of
annealing chains (:mod:`.anneal`) run in the worker processes.  Each round
starts half of its chains from the elite (the best first, rotating through
the top structures: intensification) and the other half from fresh starts
(structures further down the cost-bounded list, or random skeletons of an
allowed atom-type distribution: diversification).  Every chain's best
feasible structures join the elite; rounds continue until the time set
aside for the final scoring is reached.

Deterministic: chain ``k`` of a solve always gets seed ``k`` and a start
chosen from the elite as it stood after the previous round, and results
merge in chain order, so the number of processes does not change anything
except the time taken.  Only a time limit that cuts a chain short makes a
run depend on the machine's speed (the result then says it stopped at the
time limit).
"""

from __future__ import annotations

import random
import time
from dataclasses import dataclass, field

from rdkit import Chem

from ..errors import InputError
from ..generate.atomtypes import type_distributions
from ..rank.calibration import load_calibration
from ..rank.scoring import ScoredStructure
from .anneal import AnnealSchedule, ChainSpec, Evaluator, QuickCost, run_chain
from .base import SearchProblem, StrategyReport
from .moves import random_skeleton, skeleton_from_mol
from .plans import SCORE_S
from .workers import run_local

__all__ = ["SamplingOutcome", "sample_structures", "SEED_COUNT", "ELITE_SCHEDULE", "FRESH_SCHEDULE"]

#: Structures of lowest approximate cost scored first, as the first elite.
SEED_COUNT = 240
#: Chains restarted from an elite structure: shorter, cooler.
ELITE_SCHEDULE = AnnealSchedule(steps=500, t_start=1.5, t_end=0.2, proposals=6)
#: Chains from a fresh start: longer, hotter, after a warm-up on the quick cost.
FRESH_SCHEDULE = AnnealSchedule(steps=900, t_start=3.0, t_end=0.25, proposals=6, warmup=4000)
#: Elite structures chains restart from (the best first).
ELITE_WIDTH = 8
#: Seconds kept free at the end for merging and ranking.
_FINISH_S = 0.5


@dataclass
class RoundTrace:
    """State after one round (for the early-stop model and diagnostics)."""

    elapsed: float
    best_energy: float
    best_hits: int  # chains whose best structure is the overall best
    rounds_since_gain: int
    chains: int


@dataclass
class SamplingOutcome:
    scored: list[ScoredStructure]
    scored_pool: dict  # SMILES -> ScoredStructure or None, pool structures scored as seeds
    found_by_sampling: set
    visited: int
    ended: str = "time limit"
    trace: list[RoundTrace] = field(default_factory=list)


def _evaluator(state, local) -> Evaluator:
    ev = local.get("evaluator")
    if ev is None or local.get("owner") is not state:
        problem = state.problem
        ev = Evaluator(problem.peaks, state.cons, problem.prior, *state.weights)
        local["evaluator"] = ev
        local["owner"] = state
    return ev


def _score_chunk(state, local, payload):
    """Worker: full scores of (SMILES, RDKit binary) pairs."""
    out = []
    for smi, binary in payload:
        out.append(state.problem.score(smi, Chem.Mol(binary), smiles_written=False))
    return out


def _chain(state, local, payload):
    """Worker: one annealing chain."""
    spec, deadline = payload
    quick = local.get("quick")
    if quick is None or local.get("quick_owner") is not state:
        quick = QuickCost(state.cons.rule) if state.cons.rule is not None else None
        local["quick"], local["quick_owner"] = quick, state
    return run_chain(spec, _evaluator(state, local), state.cons.accept, state.valences, deadline, quick)


def _neighbour_starts(problem: SearchProblem, k: int = 40) -> list[str]:
    """SMILES of reference structures with the sample's formula, most similar
    spectra first (starting points only, never answers by lookup)."""
    try:
        from ..reference import nearest_spectra
        from ..spectrum.peaks import PeakList

        hits = nearest_spectra(PeakList(tuple(problem.peaks)), formula=problem.formula, k=k,
                               same_formula_only=True, library=problem.library)
    except InputError:  # no reference index to start from: the search does without
        return []
    return [h.smiles for h in hits]


def _start_from(smiles: str):
    mol = Chem.MolFromSmiles(smiles)
    if mol is None:
        return None
    try:
        return skeleton_from_mol(mol)
    except (ValueError, RuntimeError):  # e.g. a reference structure RDKit cannot kekulize
        return None


def _map(executor, state, fn, payloads):
    return executor.map(fn, payloads) if executor is not None else run_local(state, fn, payloads)


def sample_structures(problem: SearchProblem, state, executor, found: dict,
                      reports: list[StrategyReport]) -> SamplingOutcome:
    """Score the cheapest found structures, then anneal until the time is up."""
    t0 = time.monotonic()
    workers = executor.n if executor is not None else 1
    fit_w, prior_w = state.weights
    plaus_w = load_calibration().plausibility_weight

    def energy(s: ScoredStructure) -> float:
        return fit_w * s.fit_cost + prior_w * s.prior + plaus_w * s.plausibility

    # 1. seeds: the cheapest structures of the cost-bounded search, scored
    pool = sorted(((cost, smi, mol) for smi, (cost, mol) in found.items()), key=lambda e: (e[0], e[1]))
    seeds = pool[:SEED_COUNT]
    chunks = [[(smi, mol.ToBinary()) for _c, smi, mol in seeds[k::workers]] for k in range(workers)]
    scored_pool: dict = {}
    elite: dict[str, tuple[float, ScoredStructure]] = {}
    if seeds and time.monotonic() < problem.deadline:
        parts = _map(executor, state, _score_chunk, chunks)
        for k, part in enumerate(parts):
            for (smi, _b), item in zip(chunks[k], part):
                scored_pool[smi] = item
                if item is not None:
                    elite[smi] = (energy(item), item)
    reports.append(StrategyReport("scoring of the cheapest plan structures", len(scored_pool),
                                  time.monotonic() - t0))

    # 2. annealing rounds
    t1 = time.monotonic()
    remaining = max(0, min(len(pool), problem.pool_size) - len(scored_pool))
    reserve = min(0.08 * problem.time_limit, SCORE_S * remaining) + _FINISH_S
    end = problem.deadline - reserve
    dists = list(type_distributions(problem.formula, problem.valences,
                                    charged_nitrogen=problem.charged_nitrogen, accept=state.cons.accept))
    rng = random.Random(0)
    # fresh starts: reference structures of the same formula whose spectra
    # resemble the sample's, then further structures of the cost-bounded list
    fresh_pool = _neighbour_starts(problem) + [smi for _c, smi, _m in pool[len(seeds):]]
    per_round = max(2, 2 * workers)
    chain_index = 0
    found_by_sampling: set[str] = set()
    visited = 0
    trace: list[RoundTrace] = []
    best_energy = min((e for e, _s in elite.values()), default=float("inf"))
    since_gain = 0
    ended = "time limit"
    elite_turn = 0
    fresh_turn = 0
    budget = problem.chains
    while time.monotonic() < end - 0.3:
        if budget is not None and chain_index >= budget:
            ended = "finished"
            break
        ranked = sorted(elite.items(), key=lambda kv: (kv[1][0], kv[0]))
        specs = []
        for c in range(per_round if budget is None else min(per_round, budget - chain_index)):
            seed = chain_index
            start = None
            if c % 2 == 0 and ranked:
                smi = ranked[elite_turn % min(ELITE_WIDTH, len(ranked))][0]
                elite_turn += 1
                start = _start_from(smi)
                schedule = ELITE_SCHEDULE
            else:
                schedule = FRESH_SCHEDULE
                if fresh_turn < len(fresh_pool) and (fresh_turn % 2 == 0 or not dists):
                    start = _start_from(fresh_pool[fresh_turn])
                fresh_turn += 1
                if start is None and dists:
                    start = random_skeleton(dists[rng.randrange(len(dists))], random.Random(seed))
            if start is None:
                chain_index += 1
                continue
            specs.append(ChainSpec(chain_index, seed, start, schedule))
            chain_index += 1
        if not specs:
            break
        results = _map(executor, state, _chain, [(spec, end) for spec in specs])
        round_best = []
        for res in sorted(results, key=lambda r: r.index):
            visited += res.evaluations
            if res.best:
                round_best.append(res.best[0][1].smiles)
            for e, item in res.best:
                if item.smiles not in elite:
                    elite[item.smiles] = (e, item)
                    found_by_sampling.add(item.smiles)
        new_best = min((e for e, _s in elite.values()), default=float("inf"))
        since_gain = 0 if new_best < best_energy - 1e-9 else since_gain + 1
        best_energy = new_best
        best_smiles = min(elite.items(), key=lambda kv: (kv[1][0], kv[0]))[0] if elite else None
        trace.append(RoundTrace(time.monotonic() - problem.start, best_energy,
                                sum(1 for s in round_best if s == best_smiles), since_gain, len(specs)))
        problem.report("annealing", len(elite))
        if any(r.cut for r in results):
            break
    reports.append(StrategyReport("annealing (simulated, restarted from the best so far)", visited,
                                  time.monotonic() - t1, f"{chain_index} chains in {len(trace)} rounds"))
    scored = [item for _e, item in elite.values()]
    return SamplingOutcome(scored, scored_pool, found_by_sampling, visited, ended, trace)
