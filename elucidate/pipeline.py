"""The elucidation pipeline: formula + peak list -> ranked, assigned candidates.

Data flows one way::

    formula, peaks -> constraints -> generation -> prediction -> ranking -> result

:func:`solve` is the Python entry point behind ``elucidate solve``; it
returns a :class:`SolveResult` that the report renderers serialise without
recomputing any science.

Results are hypotheses: confirm them with reference standards and orthogonal
methods; forensic and QC decisions follow the lab's accredited procedures.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass, replace
from typing import Callable, Sequence

from rdkit import Chem

from .constraints.environments import (
    environment_row_check_factory,
    kekule_forms,
    load_environment_table,
    mol_environment_keys,
)
from .constraints.spectral import (
    SymmetryAllowance,
    carbon_classes,
    carbon_hydrogen_rule,
    symmetry_filter,
)
from .constraints.structural import implausible_motif_filters, ring_filters, smarts_filters
from .errors import InputError
from .formula import Formula, parse_formula
from .generate import WIDE_VALENCES, AtomType, Structure, StructureFilter, _charges_paired, enumerate_isomers
from .generate.atomtypes import type_distributions
from .predict import predict_mol
from .rank.assignment import Assignment, CarbonClass, LineEntry, assign_lines
from .rank.calibration import Calibration, calibrated_scores, listed_chance, listed_probabilities, load_calibration
from .spectrum.peaks import PeakList, check_against_formula, read_peaks
from .spectrum.solvents import remove_solvent_lines

__all__ = [
    "SolveSettings",
    "Candidate",
    "SolveResult",
    "solve",
    "rank_structure",
    "explain_constraints",
    "approximate_cost",
]

CAUTION = (
    "Results are hypotheses, not identifications: confirm with reference standards and "
    "orthogonal methods (MS/MS, 1H/2D NMR, IR); forensic and QC decisions follow the lab's "
    "accredited procedures and local regulations."
)


@dataclass(frozen=True)
class SolveSettings:
    """Options of a solve run; the same names are used by the CLI and JSON."""

    valences: tuple[tuple[str, tuple[int, ...]], ...] = tuple(WIDE_VALENCES.items())
    charged_nitrogen: bool = False
    allow_all: bool = False
    require: tuple[str, ...] = ()
    forbid: tuple[str, ...] = ()
    scaffold: str | None = None  # SMILES every candidate must contain
    max_rings: int | None = None
    min_ring_size: int | None = None
    max_ring_size: int | None = None
    symmetry: SymmetryAllowance = SymmetryAllowance()
    environment_margin: float | None = 4.0
    solvent: str | None = None
    time_limit: float = 60.0
    top: int = 10
    keep: int = 100
    pool: int | None = None  # structures fully scored in a steered search (None: from the time limit)
    prior_weight: float = 1.0  # weight of the environment-rarity prior in the score
    workers: int = 2  # processes for the steered search (results do not depend on it)

    def __post_init__(self):
        if not (self.time_limit > 0):
            raise InputError(f"--time-limit must be a positive number of seconds, got {self.time_limit}")
        if self.top < 1:
            raise InputError(f"--top must be at least 1, got {self.top}")


@dataclass(frozen=True)
class Candidate:
    """A ranked constitution with its line assignment.

    ``assignment`` atom indices refer to the atoms of ``smiles`` in the order
    they are written.
    """

    smiles: str
    score: float
    probability: float
    mae_ppm: float
    max_error_ppm: float
    assignment: tuple[LineEntry, ...]
    predicted: tuple[tuple[int, int, float, float], ...]  # (atom, H, shift, sigma)
    overlaps: int
    splits: int
    unfilled: tuple[int, ...]
    prior: float = 0.0  # environment-rarity prior part of the raw score
    fit_cost: float = 0.0  # assignment part (shift likelihood, overlap/split) of the raw score


@dataclass(frozen=True)
class SolveResult:
    formula: Formula
    peaks: PeakList
    settings: SolveSettings
    complete: bool
    completeness: tuple[str, float | None]  # (status, cost bound)
    candidates_generated: int
    elapsed_s: float
    warnings: tuple[str, ...]
    candidates: tuple[Candidate, ...]
    constraint_log: tuple[tuple[str, int, int], ...]
    #: calibrated probability that the answer is none of the listed structures
    unlisted_probability: float = 0.0

    @property
    def dbe(self) -> int:
        return self.formula.dbe


@dataclass(frozen=True)
class _Scored:
    score: float
    smiles: str
    assignment: Assignment
    prior: float
    predicted: tuple
    order: tuple[int, ...]  # generator atom index -> SMILES atom index


def rank_structure(mol: Chem.Mol, peaks: Sequence) -> tuple[Assignment, tuple]:
    """Predict a structure's shifts and assign the lines to its carbons."""
    from .rank.assignment import SPLIT_COST
    from .rank.rotamers import rotamer_split_costs

    shifts = {a.index: a for a in predict_mol(mol)}
    split_costs = rotamer_split_costs(mol)  # classes rotamers can split (amide-type C-N)
    classes = []
    for h, groups in carbon_classes(mol).items():
        for atoms in groups:
            preds = [shifts[i] for i in atoms]
            shift = sum(p.shift for p in preds) / len(preds)
            sigma = max(p.sigma for p in preds)
            classes.append(CarbonClass(h, tuple(atoms), shift, sigma, split_costs.get(atoms[0], SPLIT_COST)))
    predicted = tuple((a.index, a.hydrogens, a.shift, a.sigma) for a in shifts.values())
    return assign_lines(peaks, classes), predicted


def _smiles_order(mol: Chem.Mol, smiles_written: bool) -> tuple[int, ...]:
    """Map each atom index of ``mol`` to its position in its canonical SMILES."""
    if not smiles_written:
        Chem.MolToSmiles(mol, isomericSmiles=False)
    order = list(mol.GetPropsAsDict(True, True)["_smilesAtomOutputOrder"])
    pos = [0] * mol.GetNumAtoms()
    for p, a in enumerate(order):
        pos[a] = p
    return tuple(pos)


def prepare_peaks(formula: Formula, peaks_source, solvent: str | None) -> PeakList:
    """Read, clean (solvent lines) and check a peak list against the formula."""
    peaks = peaks_source if isinstance(peaks_source, PeakList) else read_peaks(peaks_source)
    if solvent:
        peaks = remove_solvent_lines(peaks, solvent)
    return check_against_formula(peaks, formula)


@dataclass
class _Constraints:
    accept: Callable
    filters: list[StructureFilter]
    row_check_factory: Callable | None
    env_check: Callable | None  # (mol) -> bool, for explanations


def _constraints(formula: Formula, peaks: PeakList, settings: SolveSettings) -> _Constraints:
    accept = carbon_hydrogen_rule(peaks.peaks, formula.carbons)
    filters: list[StructureFilter] = []
    if not settings.allow_all:
        filters += implausible_motif_filters(only_default=True)
    filters += smarts_filters(settings.require, settings.forbid)
    if settings.scaffold:
        from .constraints.scaffold import scaffold_filter

        filters.append(scaffold_filter(settings.scaffold, formula))
    filters += ring_filters(settings.max_rings, settings.min_ring_size, settings.max_ring_size)
    filters.append(symmetry_filter(peaks.peaks, settings.symmetry))
    factory = env_check = None
    table = load_environment_table() if settings.environment_margin is not None else None
    if table is not None:
        factory = environment_row_check_factory(peaks.peaks, table, settings.environment_margin)

        def env_check(mol):
            for form in kekule_forms(mol):
                keys = mol_environment_keys(form)
                if all(factory.allowed(form.GetAtomWithIdx(i).GetTotalNumHs(), k) for i, k in keys.items()):
                    return True
            return False

    return _Constraints(accept, filters, factory, env_check)


def _mol_types(mol: Chem.Mol) -> tuple[AtomType, ...]:
    types = []
    for atom in mol.GetAtoms():
        h = atom.GetTotalNumHs()
        types.append(AtomType(atom.GetSymbol(), int(atom.GetTotalValence()), h, atom.GetFormalCharge()))
    return tuple(sorted(types))


def explain_constraints(mol: Chem.Mol, formula: Formula, peaks: PeakList,
                        settings: SolveSettings | None = None) -> list[tuple[str, bool]]:
    """Which constraints of a solve a given structure passes.

    Used to check that the defaults do not exclude a known answer, and by
    the verification workflow to say why an expected structure was not
    proposed.
    """
    settings = settings or SolveSettings()
    cons = _constraints(formula, peaks, settings)
    out = [("DEPT hydrogen counts", bool(cons.accept(_mol_types(mol))))]
    for flt in cons.filters:
        out.append((flt.name, bool(flt.keep(mol))))
    if cons.env_check is not None:
        out.append((f"shift environments (margin {settings.environment_margin:g} ppm)", cons.env_check(mol)))
    return out


def approximate_cost(mol: Chem.Mol, formula: Formula, peaks: PeakList,
                     settings: SolveSettings | None = None) -> float | None:
    """The fit-steered search's approximate cost of a given structure (the
    quantity its ``complete up to cost`` bound speaks about); None when the
    environment table is switched off or absent."""
    settings = settings or SolveSettings()
    rule = _constraints(formula, peaks, settings).row_check_factory
    if rule is None:
        return None
    return rule.structure_cost(mol)


def solve(
    formula: Formula | str,
    peaks,
    settings: SolveSettings | None = None,
    *,
    progress: Callable[[int, float], None] | None = None,
) -> SolveResult:
    """Propose structures for a formula and a 13C peak list.

    Parameters
    ----------
    formula : Formula or str
    peaks : PeakList, peak text or path to a peak file
    settings : SolveSettings, optional
    progress : callable(candidates_so_far, elapsed_s), optional

    Returns
    -------
    SolveResult
        Candidates best first; ``complete`` is True only when the whole
        constrained space was searched within the time limit.
    """
    settings = settings or SolveSettings()
    if isinstance(formula, str):
        formula = parse_formula(formula)
    peaks = prepare_peaks(formula, peaks, settings.solvent)
    start = time.monotonic()
    valences = dict(settings.valences)

    cons = _constraints(formula, peaks, settings)

    all_dists = sum(1 for _ in type_distributions(formula, valences, charged_nitrogen=settings.charged_nitrogen))
    rule = cons.row_check_factory
    pool_size = _pool_size(settings)
    steer = rule is not None and pool_size > 0
    if steer:
        rule.steer = True
    prior = None
    if rule is not None and settings.prior_weight > 0:
        def prior(mol, _t=rule.table, _w=settings.prior_weight):
            return _w * _t.mol_rarity(mol)
    # Reserve part of the time for full scoring of the pool.
    gen_deadline = start + settings.time_limit * (0.7 if steer else 1.0)
    last_report = [start]

    def report():
        if progress is not None and time.monotonic() - last_report[0] > 0.5:
            last_report[0] = time.monotonic()
            progress(len(found), last_report[0] - start)

    def enumeration(limit):
        return enumerate_isomers(
            formula, valences=valences, charged_nitrogen=settings.charged_nitrogen,
            filters=cons.filters, accept_types=cons.accept, row_check_factory=rule,
            time_limit=max(limit, 1e-3),
        )

    found: dict[str, tuple[float, Chem.Mol | None]] = {}
    scored: list[_Scored] = []
    proven_bound = None  # every structure with approximate cost <= this was found
    plan_runs = None  # outcome of the plan search, when it ran
    exhausted = False  # the whole constrained space was searched
    if not steer:
        run = enumeration(gen_deadline - time.monotonic())
        for structure in run:
            found[structure.smiles] = (0.0, structure.mol)
            item = _score(structure, peaks, prior)
            if item is not None:
                scored.append(item)
                if len(scored) > 4 * settings.keep:
                    scored = sorted(scored, key=_rank_key)[: settings.keep]
            report()
        exhausted = run.complete
        runs = [_PassOutcome({}, run.complete, 0, run.distributions, run.filter_log,
                             rule.checked if rule else 0, rule.rejected if rule else 0)]
    else:
        # Iterative deepening on the approximate cost: each pass finds every
        # structure whose cost is at most the pass bound (branch and bound),
        # so a finished pass proves that bound; the bound grows until the
        # pool is full or nothing was pruned.  Passes run on `workers`
        # processes, each taking every n-th atom-type distribution; the union
        # does not depend on the split, so results are identical.
        bound = _INITIAL_BOUND
        workers = _worker_count(settings)
        state = _PassState(formula, valences, settings.charged_nitrogen, cons)
        executor = _ShardPool(state, workers, pool_size) if workers > 1 else None
        orderly_deadline = start + (gen_deadline - start) * _ORDERLY_SHARE
        first_pass_deadline = start + (gen_deadline - start) * min(_FIRST_PASS_SHARE, _ORDERLY_SHARE)
        dropped_min = math.inf
        n_found = 0
        runs = []
        try:
            while True:
                # a first pass that has not finished by then is unlikely to
                # finish at all: hand over to the plan search early
                pass_end = first_pass_deadline if not runs else orderly_deadline
                outcome = (executor.run(bound, pass_end - time.monotonic()) if executor
                           else _run_pass(state, bound, pass_end - time.monotonic(), 0, 1, pool_size, False))
                runs.append(outcome)
                dropped_min = min(dropped_min, outcome.dropped_min)
                n_found = max(n_found, outcome.n_found)
                found.update(outcome.found)  # structure costs: the same in every pass
                report()
                if not outcome.complete:
                    break
                if outcome.bound_pruned == 0:
                    exhausted = True
                    break
                proven_bound = bound
                if outcome.n_found >= pool_size:
                    break
                bound *= _BOUND_GROWTH
            if not exhausted and not (proven_bound is not None and n_found >= pool_size) \
                    and time.monotonic() < gen_deadline:
                # The orderly passes did not finish in their share of the time:
                # list structures plan by plan in increasing cost (CP-SAT),
                # which proves its own bound whatever time is left, running on
                # until what remains is the time to score the pool it finds.
                plan_deadline = max(gen_deadline, start + settings.time_limit - 1.0 - _SCORE_S * len(found))
                plan_runs = (executor.run_plans(pool_size, plan_deadline) if executor
                             else _plan_shard(state, 0, 1, pool_size, plan_deadline, False))
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
                proven_bound = max(proven_bound if proven_bound is not None else -math.inf,
                                   plan_runs.lower, 0.0)
                if dropped_min < math.inf:
                    proven_bound = min(proven_bound, max(dropped_min, plan_runs.lower))
                    dropped_min = math.inf
        pool = sorted(((cost, smi, mol) for smi, (cost, mol) in found.items()), key=lambda e: (e[0], e[1]))
        if dropped_min < math.inf:
            # structures let go during the passes cost at least this
            proven_bound = _lower_bound(exhausted, proven_bound, dropped_min)
            exhausted = False
        if len(pool) > pool_size:
            # not fully scored: everything beyond the pool costs at least this
            proven_bound = _lower_bound(exhausted, proven_bound, pool[pool_size][0])
            exhausted = False
            pool = pool[:pool_size]
        hard_deadline = start + settings.time_limit
        for k, (_, smi, mol) in enumerate(pool):
            if time.monotonic() > hard_deadline:
                # out of time while scoring: the unscored rest costs at least this
                proven_bound = _lower_bound(exhausted, proven_bound, pool[k][0])
                exhausted = False
                break
            item = _score(Structure(smi, mol), peaks, prior, False)
            if item is not None:
                scored.append(item)

    ranked = sorted(scored, key=_rank_key)[: settings.keep]
    if exhausted:
        status, cost_bound = "complete", None
    elif proven_bound is not None:
        # rounded down: the stated bound must never exceed the proven one
        status, cost_bound = "complete up to cost", math.floor(proven_bound * 1000) / 1000
    else:
        status, cost_bound = "stopped at the time limit", None
    calibration = load_calibration()
    candidates = _finalise(ranked, settings.top, calibration)
    margin = None
    if candidates and cost_bound is not None and rule is not None:
        entry = found.get(candidates[0].smiles)
        mol = entry[1] if entry is not None else Chem.MolFromSmiles(candidates[0].smiles)
        margin = cost_bound - rule.structure_cost(mol)
    listed = listed_chance(status, margin, formula.heavy_atoms, calibration) if candidates else 0.0
    candidates = [replace(c, probability=listed * c.probability) for c in candidates]
    counter = n_found if steer else len(found)
    warnings = list(peaks.warnings)
    if status == "stopped at the time limit":
        warnings.append(
            f"search stopped at the time limit ({settings.time_limit:g} s): the list is not "
            f"exhaustive; calibrated probability that the answer is not listed: {1.0 - listed:.2f}"
        )
    elif status == "complete up to cost":
        warnings.append(
            f"fit-steered search: every structure not listed has an approximate (environment) cost "
            f"of at least {cost_bound:.3f}; calibrated probability that the answer is not listed: "
            f"{1.0 - listed:.2f}"
        )
    if not candidates:
        warnings.append(
            "no structure fits these constraints; check the formula, the multiplicities, "
            "solvent/impurity lines, or relax options (--allow-all)"
        )
    last = runs[-1]
    log = [("atom-type distributions (DEPT H counts)", all_dists, last.distributions)]
    if rule is not None:
        log.append((f"shift environments (closed carbons checked, margin {settings.environment_margin:g} ppm)",
                    last.checked, last.checked - last.rejected))
    log += last.filter_log
    if steer:
        log.append((f"approximate-cost pool (best {pool_size}; {len(runs)} deepening passes)",
                    counter, min(counter, pool_size)))
        if plan_runs is not None:
            log.append((f"environment plans in increasing cost (CP-SAT, {plan_runs.solves} solves)",
                        plan_runs.plans, len(plan_runs.found)))
    return SolveResult(
        formula=formula,
        peaks=peaks,
        settings=settings,
        complete=status == "complete",
        completeness=(status, cost_bound),
        candidates_generated=counter,
        elapsed_s=time.monotonic() - start,
        warnings=tuple(warnings),
        candidates=tuple(candidates),
        constraint_log=tuple(log),
        unlisted_probability=1.0 - listed,
    )


@dataclass
class _PassState:
    formula: Formula
    valences: dict
    charged_nitrogen: bool
    cons: "_Constraints"


@dataclass
class _PassOutcome:
    found: dict  # smiles -> (approximate cost, mol or None)
    complete: bool
    bound_pruned: int
    distributions: int
    filter_log: list
    checked: int
    rejected: int
    dropped_min: float = math.inf  # lowest cost among structures found but not kept
    n_found: int = 0  # distinct structures found in the pass


def _shard_accept(base, shard: int, n: int):
    """Keep every n-th distribution that ``base`` accepts (deterministic order)."""
    seen = [0]

    def accept(dist):
        if base is not None and not base(dist):
            return False
        seen[0] += 1
        return (seen[0] - 1) % n == shard

    return accept


def _run_pass(state: _PassState, bound: float, limit: float, shard: int, n: int, keep: int,
              as_binary: bool) -> _PassOutcome:
    """One branch-and-bound pass at ``bound`` over one shard of distributions.

    Keeps the ``keep`` structures of lowest approximate cost (with their
    molecules, as RDKit binaries when ``as_binary``) and the lowest cost
    among those it let go, so the caller can state an honest bound.
    """
    rule = state.cons.row_check_factory
    rule.bound = bound
    rule.bound_pruned = rule.checked = rule.rejected = 0
    run = enumerate_isomers(
        state.formula, valences=state.valences, charged_nitrogen=state.charged_nitrogen,
        filters=state.cons.filters,
        accept_types=_shard_accept(state.cons.accept, shard, n) if n > 1 else state.cons.accept,
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
    return _PassOutcome(found, run.complete, rule.bound_pruned, run.distributions, run.filter_log,
                        rule.checked, rule.rejected, dropped_min, len(seen))


_FORK_STATE: _PassState | None = None


def _pass_in_child(args) -> _PassOutcome:
    bound, limit, shard, n, keep = args
    return _run_pass(_FORK_STATE, bound, limit, shard, n, keep, True)


class _ShardPool:
    """Worker processes (fork) that run one pass on their shard each."""

    def __init__(self, state: _PassState, workers: int, keep: int):
        global _FORK_STATE
        import multiprocessing

        _FORK_STATE = state
        self.n = workers
        self.keep = keep
        self.pool = multiprocessing.get_context("fork").Pool(workers)

    def run(self, bound: float, limit: float) -> _PassOutcome:
        parts = self.pool.map(_pass_in_child, [(bound, limit, i, self.n, self.keep) for i in range(self.n)])
        found = _merge_found(parts)
        log = [(name, sum(p.filter_log[i][1] for p in parts), sum(p.filter_log[i][2] for p in parts))
               for i, (name, _, _) in enumerate(parts[0].filter_log)]
        return _PassOutcome(found, all(p.complete for p in parts), sum(p.bound_pruned for p in parts),
                            sum(p.distributions for p in parts), log,
                            sum(p.checked for p in parts), sum(p.rejected for p in parts),
                            min(p.dropped_min for p in parts), sum(p.n_found for p in parts))

    def run_plans(self, keep: int, deadline: float):
        """The plan search shared by the workers (:func:`_plan_shard`); the
        union's bound is the smallest of the parts' bounds."""
        from .generate.planned import PlanSearch

        parts = self.pool.map(_plan_in_child, [(i, self.n, keep, deadline) for i in range(self.n)])
        return PlanSearch(_merge_found(parts), min(p.lower for p in parts), all(p.exhausted for p in parts),
                          sum(p.plans for p in parts), sum(p.solves for p in parts))

    def close(self):
        self.pool.terminate()
        self.pool.join()


def _merge_found(parts) -> dict:
    """Union of workers' ``found`` maps (molecules as RDKit binaries), keeping
    the lower cost when two workers list one structure."""
    found: dict = {}
    for part in parts:
        for smi, (cost, binary) in part.found.items():
            known = found.get(smi)
            if known is None or cost < known[0]:
                found[smi] = (cost, Chem.Mol(binary))
    return found


def _worker_count(settings: SolveSettings) -> int:
    """Processes for the search: ``settings.workers``, or 1 inside a worker process."""
    import multiprocessing

    if multiprocessing.parent_process() is not None:
        return 1
    return max(1, settings.workers)


def _lower_bound(exhausted: bool, proven: float | None, cut: float) -> float | None:
    """Bound that still holds after dropping found structures costing >= ``cut``.

    Only a search that was exhaustive or proved a bound can promise anything
    about the structures it did not list.
    """
    if exhausted:
        return cut
    if proven is not None:
        return min(proven, cut)
    return None


#: Share of the generation time given to the orderly deepening search before
#: the plan-by-plan search takes over.
_ORDERLY_SHARE = 0.6
#: ... of which the first pass (cost bound 8) may take at most this share.
_FIRST_PASS_SHARE = 0.15
#: Seconds to fully score one structure of the pool (predictor + assignment),
#: reserved by the plan search; see docs/performance.md.
_SCORE_S = 0.004


def _plan_shard(state: "_PassState", shard: int, n: int, keep: int, deadline: float, as_binary: bool):
    """The plan search on shard ``shard`` of ``n``: every n-th distribution,
    or, with two processes and fewer than four distributions, one half of
    every distribution's plans."""
    from .generate.planned import PlanCosts, search_plans

    cons = state.cons
    dists = list(type_distributions(state.formula, state.valences, charged_nitrogen=state.charged_nitrogen,
                                    accept=cons.accept))
    half = None
    if n == 2 and len(dists) < 2 * n:
        half = shard  # few distributions: both processes share each one
    elif n > 1:
        dists = [d for k, d in enumerate(dists) if k % n == shard]
    rule = cons.row_check_factory
    costs = PlanCosts(rule.line_costs, rule.atom_rarity, rule.line_hydrogens)

    def accept_mol(mol):
        if state.charged_nitrogen and not _charges_paired(mol):
            return False
        return all(f.keep(mol) for f in cons.filters)

    # each process reserves scoring time for its share as if it were all
    out = search_plans(dists, costs, keep=keep, deadline=deadline, accept_mol=accept_mol, half=half,
                       reserve=_SCORE_S * n)
    if as_binary:
        out.found = {smi: (c, mol.ToBinary()) for smi, (c, mol) in out.found.items()}
    return out


def _plan_in_child(args):
    shard, n, keep, deadline = args
    return _plan_shard(_FORK_STATE, shard, n, keep, deadline, True)


#: First approximate-cost bound of the deepening search, and its growth per pass.
_INITIAL_BOUND = 8.0
_BOUND_GROWTH = 1.6


def _pool_size(settings: SolveSettings) -> int:
    """Structures fully scored in a steered search: about 30 % of the time
    limit at ~4 ms per structure, between 200 and 5000."""
    if settings.pool is not None:
        return settings.pool
    return int(min(5000, max(200, settings.time_limit * 0.3 / 0.004)))


def _rank_key(item: "_Scored"):
    return (item.score, item.smiles)


def _score(structure, peaks, prior, smiles_written: bool = True) -> "_Scored | None":
    """Full score: assignment cost (shift likelihood, overlap/split) plus the
    environment-rarity prior (-log prior probability of the structure)."""
    assignment, predicted = rank_structure(structure.mol, peaks.peaks)
    if math.isinf(assignment.cost):
        return None
    p = prior(structure.mol) if prior is not None else 0.0
    return _Scored(assignment.cost + p, structure.smiles, assignment, p, predicted,
                   _smiles_order(structure.mol, smiles_written))


def _finalise(ranked: Sequence[_Scored], top: int, calibration: Calibration) -> list[Candidate]:
    """Candidates ordered by calibrated score, with their probabilities
    given that the answer is listed (rank/calibration.py)."""
    if not ranked:
        return []
    scores = calibrated_scores([s.score - s.prior for s in ranked], [s.prior for s in ranked], calibration)
    probs = listed_probabilities(scores)
    order = sorted(range(len(ranked)), key=lambda i: (float(scores[i]), ranked[i].smiles))
    out = []
    for k in order[:top]:
        s, w = ranked[k], float(probs[k])
        pos = s.order
        entries = tuple(
            LineEntry(e.peak_index, e.observed, e.predicted, e.sigma,
                      tuple(sorted(pos[a] for a in e.atoms)), e.kind)
            for e in s.assignment.entries
        )
        predicted = tuple(sorted((pos[i], h, sh, sg) for i, h, sh, sg in s.predicted))
        out.append(
            Candidate(
                smiles=s.smiles,
                score=round(float(scores[k]), 4),
                probability=w,
                mae_ppm=s.assignment.mae,
                max_error_ppm=s.assignment.max_error,
                assignment=entries,
                predicted=predicted,
                overlaps=s.assignment.overlaps,
                splits=s.assignment.splits,
                unfilled=s.assignment.unfilled,
                prior=round(s.prior, 4),
                fit_cost=round(s.score - s.prior, 4),
            )
        )
    return out
