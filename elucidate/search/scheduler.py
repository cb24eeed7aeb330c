"""Run the search strategies of one solve and state what they proved.

Order and time sharing
----------------------
Without steering (no environment table, or no pool to score) the exhaustive
scan runs alone and scores every structure as it comes.

With steering, the cost-bounded strategies run first:

1. *Orderly deepening* (:mod:`.orderly`) for up to 60 % of the generation
   time (70 % of the time limit; the rest is kept for scoring); its first
   pass may take at most 15 %, since a first pass that needs longer seldom
   finishes at all.
2. *Plan search* (:mod:`.plans`) when the orderly passes did not finish:
   it runs until what remains is the time needed to score what it found.
3. *Pool scoring* (:mod:`.pool`): the structures of lowest approximate cost
   are scored with the full predictor and line assignment.

Proofs combine as follows.  Each cost-bounded strategy proves that every
structure it did not list costs at least its bound, so the union of their
lists leaves out only structures costing at least the larger bound.
Structures found but let go (pool limits, time cuts while scoring) lower the
bound to their cost.  The result is stated rounded down.
"""

from __future__ import annotations

import math
import time

from ..generate import enumerate_isomers
from ..generate.atomtypes import type_distributions
from ..rank.calibration import confident_margin, load_calibration
from ..rank.scoring import ScoredStructure
from .base import Proof, SearchOutcome, SearchProblem, StrategyReport, rounded_bound
from .orderly import BOUND_GROWTH, INITIAL_BOUND, PassOutcome, PassState, run_pass
from .plans import SCORE_S, plan_shard
from .pool import score_pool
from .sampling import sample_structures
from .workers import WorkerPool, worker_count

__all__ = ["run_search", "rank_key"]

#: Share of the generation time given to the orderly deepening search before
#: the plan-by-plan search takes over.
ORDERLY_SHARE = 0.6
#: ... of which the first pass (cost bound 8) may take at most this share.
FIRST_PASS_SHARE = 0.15
#: Share of the time limit the steered strategies may use for generation
#: (the rest is reserved for scoring the pool).
GENERATION_SHARE = 0.7
#: With sampling on, the plan search hands over to annealing at this share
#: of the time limit ...
PLAN_SHARE = 0.25
#: ... or when it has found nothing new for this share of the time limit.
PLAN_STALL_SHARE = 0.05
#: With 2D correlations the cost-bounded strategies, which rank by the 13C
#: approximate cost alone, get this fraction of their first-pass, plan and
#: plan-stall shares: the annealing is the strategy whose energy uses the
#: correlations (0.5 before 2026-12-03, measured in docs/correlations.md).
EVIDENCE_SHARE_FACTOR = 0.25


def rank_key(item: ScoredStructure):
    """Stable sort key of scored structures: raw score, then SMILES."""
    return (item.score, item.smiles)


def run_search(problem: SearchProblem) -> SearchOutcome:
    """Search the constrained space of ``problem`` within its time limit."""
    formula = problem.formula
    all_dists = sum(1 for _ in type_distributions(formula, problem.valences,
                                                  charged_nitrogen=problem.charged_nitrogen))
    if problem.mode == "sampling":
        return _sampling_only(problem, all_dists)
    if not problem.steered:
        return _exhaustive_scan(problem, all_dists)
    return _steered(problem, all_dists)


def _sampling_only(problem: SearchProblem, all_dists: int) -> SearchOutcome:
    """Annealing alone, from reference-neighbour and random starts (no proof)."""
    cons = problem.constraints
    cal = load_calibration()
    state = PassState(problem.formula, problem.valences, problem.charged_nitrogen, cons, problem,
                      (cal.fit_weight, cal.prior_weight))
    workers = worker_count(problem.workers)
    executor = WorkerPool(state, workers, problem.pool_size) if workers > 1 else None
    reports: list[StrategyReport] = []
    try:
        sampled = sample_structures(problem, state, executor, {}, reports)
    finally:
        if executor is not None:
            executor.close()
    scored = sorted(sampled.scored, key=rank_key)
    n_dists = sum(1 for _ in type_distributions(problem.formula, problem.valences,
                                                charged_nitrogen=problem.charged_nitrogen, accept=cons.accept))
    log = [("atom-type distributions (DEPT H counts)", all_dists, n_dists),
           ("structures visited by sampling (annealing chains)", sampled.visited, len(scored))]
    status = "sampled" if scored else "stopped at the time limit"
    return SearchOutcome(scored, status, None, sampled.visited, log, {}, reports, sampled.ended,
                         {s.smiles: "annealing" for s in scored}, sampled.trace)


def _base_log(problem: SearchProblem, all_dists: int, last: PassOutcome) -> list:
    rule = problem.constraints.rule
    log = [("atom-type distributions (DEPT H counts)", all_dists, last.distributions)]
    if rule is not None:
        log.append((f"shift environments (closed carbons checked, margin {rule.margin:g} ppm)",
                    last.checked, last.checked - last.rejected))
    log += last.filter_log
    return log


def _exhaustive_scan(problem: SearchProblem, all_dists: int) -> SearchOutcome:
    """Every structure of the constrained space, scored as it is generated."""
    cons = problem.constraints
    rule = cons.rule
    t0 = time.monotonic()
    run = enumerate_isomers(
        problem.formula, valences=problem.valences, charged_nitrogen=problem.charged_nitrogen,
        filters=cons.filters, accept_types=cons.accept, row_check_factory=rule,
        time_limit=max(problem.deadline - time.monotonic(), 1e-3),
    )
    found: dict = {}
    scored: list[ScoredStructure] = []
    for structure in run:
        found[structure.smiles] = (0.0, structure.mol)
        item = problem.score(structure.smiles, structure.mol)
        if item is not None:
            scored.append(item)
            if len(scored) > 4 * problem.keep:
                scored = sorted(scored, key=rank_key)[: problem.keep]
        problem.report("exhaustive generation", len(found))
    last = PassOutcome({}, run.complete, 0, run.distributions, run.filter_log,
                       rule.checked if rule else 0, rule.rejected if rule else 0)
    status = "complete" if run.complete else "stopped at the time limit"
    report = StrategyReport("exhaustive generation", len(found), time.monotonic() - t0,
                            "every constitution, each scored" if run.complete else "cut by the time limit")
    return SearchOutcome(scored, status, None, len(found), _base_log(problem, all_dists, last),
                         {}, [report], "finished" if run.complete else "time limit",
                         {s.smiles: "exhaustive generation" for s in scored})


def _steered(problem: SearchProblem, all_dists: int) -> SearchOutcome:
    cons = problem.constraints
    rule = cons.rule
    rule.steer = True
    start = problem.start
    pool_size = problem.pool_size
    gen_deadline = start + problem.time_limit * GENERATION_SHARE
    bound = INITIAL_BOUND
    workers = worker_count(problem.workers)
    cal = load_calibration()
    state = PassState(problem.formula, problem.valences, problem.charged_nitrogen, cons, problem,
                      (cal.fit_weight, cal.prior_weight))
    executor = WorkerPool(state, workers, pool_size) if workers > 1 else None
    orderly_deadline = start + (gen_deadline - start) * ORDERLY_SHARE
    # with 2D evidence and annealing to follow, the blind cost-bounded shares shrink
    factor = EVIDENCE_SHARE_FACTOR if (problem.evidence is not None and problem.sampling) else 1.0
    first_pass_deadline = start + (gen_deadline - start) * min(FIRST_PASS_SHARE, ORDERLY_SHARE) * factor
    dropped_min = math.inf
    n_found = 0
    runs: list[PassOutcome] = []
    found: dict = {}
    proven_bound = None  # every structure with approximate cost <= this was found
    plan_runs = None  # outcome of the plan search, when it ran
    exhausted = False  # the whole constrained space was searched
    reports: list[StrategyReport] = []
    sampled = None
    needed = (confident_margin(problem.formula.heavy_atoms, cal)
              if problem.mode == "auto" and problem.may_stop_confident else None)
    scored_cache: dict = {}
    confident = False
    t0 = time.monotonic()
    try:
        while True:
            # a first pass that has not finished by then is unlikely to
            # finish at all: hand over to the plan search early
            pass_end = first_pass_deadline if not runs else orderly_deadline
            outcome = (executor.run(bound, pass_end - time.monotonic()) if executor
                       else run_pass(state, bound, pass_end - time.monotonic(), 0, 1, pool_size, False))
            runs.append(outcome)
            dropped_min = min(dropped_min, outcome.dropped_min)
            n_found = max(n_found, outcome.n_found)
            found.update(outcome.found)  # structure costs: the same in every pass
            problem.report("cost-bounded generation", 0)
            if not outcome.complete:
                break
            if outcome.bound_pruned == 0:
                exhausted = True
                break
            proven_bound = bound
            if outcome.n_found >= pool_size:
                break
            if needed is not None and time.monotonic() - start > problem.time_limit * CONFIDENT_AFTER_SHARE \
                    and _margin_after_scoring(problem, found, scored_cache, cal, bound) >= needed:
                # the calibrated chance that the answer lies beyond this bound
                # is below 1 %: deepening further is not worth the wait
                confident = True
                break
            bound *= BOUND_GROWTH
        reports.append(StrategyReport(
            "orderly deepening", n_found, time.monotonic() - t0,
            f"{len(runs)} pass(es), last at approximate cost {bound:.3g}"))
        if not exhausted and not confident and not (proven_bound is not None and n_found >= pool_size) \
                and time.monotonic() < gen_deadline:
            # The orderly passes did not finish in their share of the time:
            # list structures plan by plan in increasing cost (CP-SAT),
            # which proves its own bound whatever time is left, running on
            # until what remains is the time to score the pool it finds.
            t1 = time.monotonic()
            stall = None
            if problem.sampling:
                # the plan search hands over to sampling at this point, or
                # earlier when its yield dries up
                plan_deadline = start + problem.time_limit * PLAN_SHARE * factor
                stall = problem.time_limit * PLAN_STALL_SHARE * factor
            else:
                plan_deadline = max(gen_deadline, start + problem.time_limit - 1.0 - SCORE_S * len(found))
            plan_runs = (executor.run_plans(pool_size, plan_deadline, stall) if executor
                         else plan_shard(state, 0, 1, pool_size, plan_deadline, False, stall))
            reports.append(StrategyReport("environment plans", len(plan_runs.found), time.monotonic() - t1,
                                          f"{plan_runs.plans} plans, {plan_runs.solves} CP-SAT solves"))
            if problem.sampling:
                merged = dict(found)
                for smi, (cost, mol) in plan_runs.found.items():
                    if smi not in merged or cost < merged[smi][0]:
                        merged[smi] = (cost, mol)
                sampled = sample_structures(problem, state, executor, merged, reports)
    finally:
        if executor is not None:
            executor.close()
    if plan_runs is not None:
        for smi, (cost, mol) in plan_runs.found.items():
            known = found.get(smi)
            if known is None or cost < known[0]:  # a plan costs one Kekulé form
                found[smi] = (cost, mol)
        n_found = max(n_found, len(found))
        if plan_runs.exhausted:
            exhausted, proven_bound, dropped_min = True, None, math.inf
        else:
            # every structure outside the plan search's list costs at least its bound
            proven_bound = max(proven_bound if proven_bound is not None else -math.inf, plan_runs.lower, 0.0)
            if dropped_min < math.inf:
                proven_bound = min(proven_bound, max(dropped_min, plan_runs.lower))
                dropped_min = math.inf
    proof = Proof(exhausted, proven_bound)
    if dropped_min < math.inf:
        # structures let go during the passes cost at least this
        proof = Proof.after_dropping(proof, dropped_min)
    t2 = time.monotonic()
    already = dict(scored_cache)
    if sampled is not None:
        already.update(sampled.scored_pool)
    def energy(item):
        return cal.fit_weight * item.fit_cost + cal.prior_weight * item.prior + cal.plausibility_weight * item.plausibility

    scored, proof, n_scored, pool_cut = score_pool(problem, found, proof, already, energy,
                                                   needed)
    reports.append(StrategyReport("full scoring of the cheapest structures", n_scored, time.monotonic() - t2))
    if sampled is not None:
        scored = _merge_scored(scored, sampled.scored)
    if proof.exhausted:
        status, cost_bound = "complete", None
    elif proof.bound is not None:
        status, cost_bound = "complete up to cost", rounded_bound(proof.bound)
    else:
        status, cost_bound = "stopped at the time limit", None
    if sampled is not None and sampled.scored and status != "complete":
        best = min(scored, key=rank_key)
        if best.smiles in sampled.found_by_sampling and best.smiles not in _cheaper_than(found, proof):
            # the best structure lies beyond what the cost-bounded search proved
            status = "sampled"
    log = _base_log(problem, all_dists, runs[-1])
    log.append((f"approximate-cost pool (best {pool_size}; {len(runs)} deepening passes)",
                n_found, min(n_found, pool_size)))
    if plan_runs is not None:
        log.append((f"environment plans in increasing cost (CP-SAT, {plan_runs.solves} solves)",
                    plan_runs.plans, len(plan_runs.found)))
    if sampled is not None:
        log.append(("structures visited by sampling (annealing chains)", sampled.visited, len(sampled.scored)))
        n_found += sampled.visited
    generation_finished = exhausted or (proven_bound is not None and n_found >= pool_size)
    if plan_runs is not None:
        generation_finished = plan_runs.exhausted or len(plan_runs.found) >= pool_size
    ended = "finished" if generation_finished and not pool_cut else "time limit"
    if confident and not pool_cut:
        ended = "confident"
    if sampled is not None:
        ended = sampled.ended
    sources = {}
    plan_found = plan_runs.found if plan_runs is not None else {}
    for item in scored:
        if sampled is not None and item.smiles in sampled.found_by_sampling:
            sources[item.smiles] = "annealing"
        elif item.smiles in plan_found:
            sources[item.smiles] = "environment plans"
        else:
            sources[item.smiles] = "orderly generation"
    return SearchOutcome(scored, status, cost_bound, n_found, log, found, reports, ended, sources,
                         sampled.trace if sampled is not None else [])


#: The cost-bounded search may stop early (confident) only after this share
#: of the time limit: before that, finishing the search (a complete list) is
#: cheap and worth more than the seconds saved.
CONFIDENT_AFTER_SHARE = 0.05
#: Structures of lowest approximate cost scored after each finished orderly
#: pass to decide whether deepening further is worth it.
CHECK_COUNT = 300


def _margin_after_scoring(problem: SearchProblem, found: dict, cache: dict, cal, bound: float) -> float:
    """Proven bound minus the approximate cost of the best-scoring structure
    among the ``CHECK_COUNT`` cheapest found (scored once, cached)."""
    cheapest = sorted(((cost, smi, mol) for smi, (cost, mol) in found.items()), key=lambda e: (e[0], e[1]))
    best = None
    for cost, smi, mol in cheapest[:CHECK_COUNT]:
        if smi not in cache:
            cache[smi] = problem.score(smi, mol, smiles_written=False)
        item = cache[smi]
        if item is None:
            continue
        energy = cal.fit_weight * item.fit_cost + cal.prior_weight * item.prior \
            + cal.plausibility_weight * item.plausibility
        if best is None or (energy, smi) < best[:2]:
            best = (energy, smi, cost)
    return -math.inf if best is None else bound - best[2]


def _merge_scored(a: list[ScoredStructure], b: list[ScoredStructure]) -> list[ScoredStructure]:
    """Union by SMILES (first occurrence wins), deterministic order."""
    out: dict[str, ScoredStructure] = {}
    for item in list(a) + list(b):
        out.setdefault(item.smiles, item)
    return sorted(out.values(), key=rank_key)


def _cheaper_than(found: dict, proof: Proof) -> set[str]:
    """Structures inside the proven region (approximate cost below the bound)."""
    if proof.exhausted:
        return set(found)
    if proof.bound is None:
        return set()
    return {smi for smi, (cost, _m) in found.items() if cost < proof.bound}
