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
from ..rank.calibration import better_chance, load_calibration
from ..rank.scoring import ScoredStructure
from .anneal import AnnealSchedule, ChainSpec, Evaluator, QuickCost, run_chain
from .base import SearchProblem, StrategyReport
from .moves import random_skeleton, skeleton_from_mol
from .seeds import repair_to_formula
from .plans import SCORE_S
from .workers import run_local

__all__ = ["SamplingOutcome", "sample_structures", "SEED_COUNT", "ELITE_SCHEDULE", "FRESH_SCHEDULE"]

#: Structures of lowest approximate cost scored first, as the first elite.
SEED_COUNT = 240
#: Chains restarted from an elite structure: shorter, cooler.
ELITE_SCHEDULE = AnnealSchedule(steps=500, t_start=1.5, t_end=0.2, proposals=6)
#: Chains from a fresh start: longer, hotter, after a warm-up on the quick cost.
FRESH_SCHEDULE = AnnealSchedule(steps=900, t_start=3.0, t_end=0.25, proposals=6)
#: Elite structures chains restart from (the best first).
ELITE_WIDTH = 8
#: Chains per round (fixed, so that results do not depend on the number of
#: processes; with two processes each runs two per round).
CHAINS_PER_ROUND = 4
#: Annealing stops early when the calibrated chance that the remaining time
#: would find a better-scoring structure falls below this.
STOP_BELOW = 0.01
#: Seconds kept free at the end for merging and ranking.
_FINISH_S = 0.5


@dataclass
class RoundTrace:
    """State after one round (for the early-stop model and diagnostics)."""

    elapsed: float
    best_energy: float
    best_hits: int  # chains of this round whose best structure is the overall best
    rounds_since_gain: int
    chains: int
    total_hits: int = 0  # chains so far whose best structure is the overall best
    better_chance: float | None = None  # calibrated chance that more time finds a better structure

    def as_list(self) -> list:
        return [round(self.elapsed, 2), round(self.best_energy, 4), self.best_hits, self.rounds_since_gain,
                self.chains, self.total_hits,
                None if self.better_chance is None else round(self.better_chance, 4)]


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
        ev = Evaluator(problem.peaks, state.cons, problem.prior, *state.weights, evidence=problem.evidence)
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


#: Reference spectra whose structures are edited into starting points.
NEIGHBOUR_SEEDS = 40
#: Edits tried per reference structure (different random choices).
EDITS_PER_NEIGHBOUR = 3


#: A chain *yields* when its best structure is new and better than the
#: TOP_FOR_YIELD-th best known before its round.
TOP_FOR_YIELD = 5


def _allocate(size: int, runs: dict, gains: dict, available: dict) -> list[str]:
    """Kinds of start for the next round's chains, shared by measured yield.

    Each kind's yield is estimated as (gains + 1) / (runs + 2) (the mean of
    a Beta(1, 1) prior updated with its chains: Laplace's rule of
    succession, from memory); the round's chains go to the kinds in
    proportion, by largest remainder, at least one to the elite and one to
    a fresh kind while they are available.  Deterministic: counts only.
    """
    kinds = [k for k in ("elite", "analogue", "pool", "random") if available.get(k)]
    if not kinds:
        return []
    rate = {k: (gains[k] + 1.0) / (runs[k] + 2.0) for k in kinds}
    total = sum(rate.values())
    share = {k: size * rate[k] / total for k in kinds}
    out = {k: int(share[k]) for k in kinds}
    fresh = [k for k in kinds if k != "elite"]
    if "elite" in kinds and out["elite"] == 0 and size >= 2:
        out["elite"] = 1
    if fresh and sum(out[k] for k in fresh) == 0 and size >= 2:
        best_fresh = max(fresh, key=lambda k: (rate[k], -kinds.index(k)))
        out[best_fresh] = 1
    while sum(out.values()) > size:
        k = max(kinds, key=lambda k: (out[k] - share[k], kinds.index(k)))
        out[k] -= 1
    while sum(out.values()) < size:
        k = max(kinds, key=lambda k: (share[k] - out[k], -kinds.index(k)))
        out[k] += 1
    return [k for k in kinds for _ in range(out[k])]


def _neighbour_seeds(problem: SearchProblem, state) -> list:
    """Skeletons with the sample's formula made from the structures of the
    most similar reference spectra (:mod:`.seeds`); starting points only,
    never answers by lookup."""
    try:
        from ..reference import nearest_spectra
        from ..spectrum.peaks import PeakList

        hits = nearest_spectra(PeakList(tuple(problem.peaks)), formula=problem.formula, k=NEIGHBOUR_SEEDS,
                               library=problem.library)
    except InputError:  # no reference index to start from: the search does without
        return []
    line_h = [p.hydrogens for p in problem.peaks]
    out = []
    seen = set()
    for n, hit in enumerate(hits):
        base = _start_from(hit.smiles)
        if base is None:
            continue
        for t in range(EDITS_PER_NEIGHBOUR if not hit.same_formula else 1):
            sk = repair_to_formula(base, problem.formula, problem.valences, line_h, state.cons.accept,
                                   random.Random(1000 * n + t))
            if sk is not None and sk.key() not in seen:
                seen.add(sk.key())
                out.append(sk)
    return out


def _evaluate_chunk(state, local, payload):
    """Worker: (energy, SMILES, scored structure or None if it breaks a
    constraint) of each skeleton, or None when it cannot be scored."""
    ev = _evaluator(state, local)
    out = []
    for sk in payload:
        res = ev.evaluate(sk)
        if res is None:
            out.append(None)
            continue
        e, _order = res
        out.append((e.energy, e.smiles, e.scored))
    return out


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
    # fresh starts: reference structures whose spectra resemble the sample's,
    # edited to the sample's formula (best first by full score), then further
    # structures of the cost-bounded list
    t_seed = time.monotonic()
    neighbour_starts = _neighbour_seeds(problem, state)
    if neighbour_starts:
        parts = _map(executor, state, _evaluate_chunk,
                     [neighbour_starts[k::workers] for k in range(workers)])
        evaluated = []
        for k, part in enumerate(parts):
            for sk, out in zip(neighbour_starts[k::workers], part):
                if out is None:
                    continue
                e, smi, item = out
                evaluated.append((e, smi, sk))
                if item is not None and smi not in elite:
                    elite[smi] = (e, item)
        evaluated.sort(key=lambda t: (t[0], t[1]))
        seen_smiles: set[str] = set()
        neighbour_starts = []
        for e, smi, sk in evaluated:
            if smi not in seen_smiles:
                seen_smiles.add(smi)
                neighbour_starts.append(sk)
    reports.append(StrategyReport("reference analogues edited to the formula", len(neighbour_starts),
                                  time.monotonic() - t_seed))
    # starting points by kind; the rounds share their chains among the kinds
    # by measured yield (see _allocate)
    sources = {
        "analogue": list(neighbour_starts),  # reference analogues edited to the formula
        "pool": [smi for _c, smi, _m in pool[len(seeds):]],  # further cost-bounded structures
    }
    taken = {"elite": 0, "analogue": 0, "pool": 0, "random": 0}
    runs = {k: 0 for k in taken}
    gains = {k: 0 for k in taken}
    chain_index = 0
    found_by_sampling: set[str] = set()
    visited = 0
    trace: list[RoundTrace] = []
    best_energy = min((e for e, _s in elite.values()), default=float("inf"))
    since_gain = 0
    ended = "time limit"
    budget = problem.chains
    chain_bests: dict[str, int] = {}
    cal = load_calibration()
    while time.monotonic() < end - 0.3:
        if budget is not None and chain_index >= budget:
            ended = "finished"
            break
        ranked = sorted(elite.items(), key=lambda kv: (kv[1][0], kv[0]))
        size = CHAINS_PER_ROUND if budget is None else min(CHAINS_PER_ROUND, budget - chain_index)
        available = {"elite": bool(ranked), "analogue": taken["analogue"] < len(sources["analogue"]),
                     "pool": taken["pool"] < len(sources["pool"]), "random": bool(dists)}
        kinds = _allocate(size, runs, gains, available)
        specs = []
        spec_kind = {}
        for kind in kinds:
            seed = chain_index
            start = None
            schedule = FRESH_SCHEDULE
            if kind == "elite":
                smi = ranked[taken["elite"] % min(ELITE_WIDTH, len(ranked))][0]
                start = _start_from(smi)
                schedule = ELITE_SCHEDULE
            elif kind in ("analogue", "pool"):
                item = sources[kind][taken[kind]]
                start = _start_from(item) if isinstance(item, str) else item
            elif kind == "random":
                start = random_skeleton(dists[rng.randrange(len(dists))], random.Random(seed))
            taken[kind] += 1
            if start is None:
                chain_index += 1
                continue
            specs.append(ChainSpec(chain_index, seed, start, schedule))
            spec_kind[chain_index] = kind
            chain_index += 1
        if not specs:
            break
        results = _map(executor, state, _chain, [(spec, end) for spec in specs])
        round_best = []
        top = sorted(e for e, _s in elite.values())[:TOP_FOR_YIELD]
        cut_off = top[-1] if len(top) == TOP_FOR_YIELD else float("inf")
        for res in sorted(results, key=lambda r: r.index):
            visited += res.evaluations
            kind = spec_kind[res.index]
            runs[kind] += 1
            if res.best:
                round_best.append(res.best[0][1].smiles)
                chain_bests[res.best[0][1].smiles] = chain_bests.get(res.best[0][1].smiles, 0) + 1
                if res.best[0][0] < cut_off - 1e-9 and res.best[0][1].smiles not in elite:
                    gains[kind] += 1  # a new structure among the best known
            for e, item in res.best:
                if item.smiles not in elite:
                    elite[item.smiles] = (e, item)
                    found_by_sampling.add(item.smiles)
        new_best = min((e for e, _s in elite.values()), default=float("inf"))
        since_gain = 0 if new_best < best_energy - 1e-9 else since_gain + 1
        best_energy = new_best
        best_smiles = min(elite.items(), key=lambda kv: (kv[1][0], kv[0]))[0] if elite else None
        total_hits = chain_bests.get(best_smiles, 0)
        chance = better_chance(since_gain, total_hits, len(trace) + 1, problem.formula.heavy_atoms, cal,
                               correlations=problem.evidence is not None)
        trace.append(RoundTrace(time.monotonic() - problem.start, best_energy,
                                sum(1 for s in round_best if s == best_smiles), since_gain, len(specs),
                                total_hits, chance))
        problem.report("annealing", len(elite))
        if any(r.cut for r in results):
            break
        if budget is None and chance is not None and chance < STOP_BELOW:
            # the calibrated chance that the rest of the time finds a better
            # structure is too small to be worth the wait
            ended = "confident"
            break
    reports.append(StrategyReport("annealing (simulated, restarted from the best so far)", visited,
                                  time.monotonic() - t1, f"{chain_index} chains in {len(trace)} rounds"))
    scored = [item for _e, item in elite.values()]
    return SamplingOutcome(scored, scored_pool, found_by_sampling, visited, ended, trace)
