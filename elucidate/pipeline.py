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

from .constraints.bundle import ConstraintSet, build_constraints
from .constraints.correlations import (C_TOLERANCE, H_TOLERANCE, CorrelationEvidence, check_tolerance,
                                      link_correlations)
from .constraints.spectral import SymmetryAllowance
from .errors import InputError
from .formula import Formula, parse_formula
from .generate import WIDE_VALENCES, AtomType
from .rank.assignment import LineEntry
from .rank.calibration import (Calibration, calibrated_scores, listed_basis, listed_chance, listed_is_calibrated,
                               listed_probabilities, load_calibration)
from .datafiles import data_file
from .predict.model import load_default_model
from .rank.scoring import ScoredStructure, StructurePrior, rank_structure, score_structure
from .search import SearchProblem, rank_key, run_search
from .search.statement import assumptions, completeness_sentence, empty_result_warning, how_sentence
from .spectrum.peaks import PeakList, check_against_formula, read_peaks
from .spectrum.solvents import remove_solvent_lines

__all__ = [
    "SolveSettings",
    "Candidate",
    "SolveResult",
    "solve",
    "rank_structure",
    "refine_ranking",
    "explain_constraints",
    "approximate_cost",
]

#: What ranks the kept structures: the search's table scores, or the table + learned trees.
RERANK_MODES = ("table", "trees")

#: Search modes: cost-bounded strategies first and annealing when they cannot
#: finish; cost-bounded only (every statement a proof); annealing only.
SEARCH_MODES = ("auto", "bounded", "sampling")

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
    plausibility_weight: float = 1.0  # weight of the plausibility cost in the raw score (0: off)
    workers: int = 2  # processes for the steered search (results do not depend on it)
    search: str = "auto"  # auto | bounded | sampling (see elucidate.search)
    chains: int | None = None  # annealing chains at most (work budget; reproducible when it, not time, ends the run)
    neighbours: int = 5  # reference spectra most similar to the observed one, listed with the result
    #: when an exhaustive search proves fewer structures than this, list near alternatives (0: never)
    near_alternatives: int = 5
    libraries: tuple[str, ...] = ()  # a lab's own reference libraries (SD or JSON lines), besides the shipped one
    #: matching tolerances (ppm) tying 2D cross peaks to the 13C lines: 1H, 13C
    match_1h: float = H_TOLERANCE
    match_13c: float = C_TOLERANCE
    #: what ranks the structures a search keeps: "table" (the search's own scores) or "trees"
    #: (re-scored with the table corrected by the learned trees; docs/prediction.md)
    rerank: str = "table"

    def __post_init__(self):
        if self.rerank not in RERANK_MODES:
            raise InputError(f"--rerank {self.rerank!r} unknown; use one of {', '.join(RERANK_MODES)}")
        if not (self.time_limit > 0):
            raise InputError(f"--time-limit must be a positive number of seconds, got {self.time_limit}")
        if self.top < 1:
            raise InputError(f"--top must be at least 1, got {self.top}")
        if self.search not in SEARCH_MODES:
            raise InputError(f"--search {self.search!r} unknown; use one of {', '.join(SEARCH_MODES)}")
        if self.chains is not None and self.chains < 1:
            raise InputError(f"--chains must be at least 1, got {self.chains}")
        if self.neighbours < 0:
            raise InputError(f"--neighbours must be 0 or more, got {self.neighbours}")
        if isinstance(self.near_alternatives, bool) or not isinstance(self.near_alternatives, int) \
                or self.near_alternatives < 0:
            raise InputError(f"--near-alternatives must be a whole number >= 0 (0: never list them), "
                             f"got {self.near_alternatives!r}")
        check_tolerance("--match-1h", self.match_1h)
        check_tolerance("--match-13c", self.match_13c)
        if not (isinstance(self.plausibility_weight, (int, float)) and 0 <= self.plausibility_weight < math.inf):
            raise InputError(f"plausibility_weight must be a number >= 0 (0 switches the plausibility cost "
                             f"off), got {self.plausibility_weight!r}")


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
    found_by: str = ""  # the search strategy that found it
    plausibility: float = 0.0  # plausibility part (ring systems, small rings, second spheres) of the raw score
    #: "" when the structure meets every constraint; otherwise which stated assumption it needs set
    #: aside and what it would change (a near alternative, listed after every constrained candidate)
    set_aside: str = ""
    #: one CorrelationCheck per 2D cross peak given (atoms renumbered to the SMILES order)
    correlations: tuple = ()
    #: the 2D-correlation part of ``fit_cost``
    correlation_cost: float = 0.0


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
    #: which model gave ``unlisted_probability`` (words for the report)
    unlisted_basis: str = ""
    #: one sentence: what was searched and how, and why the search ended
    search_how: str = ""
    #: one or two sentences: what is proven about the structures not listed
    completeness_note: str = ""
    #: every assumption the completeness statement holds under
    assumptions: tuple[str, ...] = ()
    #: reference spectra most similar to the observed one (plain dicts, best first)
    reference_neighbours: tuple[dict, ...] = ()
    #: the strategies that ran: (name, structures, seconds, note)
    search_steps: tuple[tuple[str, int, float, str], ...] = ()
    #: why the search ended: "finished", "time limit" or "confident"
    search_ended: str = ""
    #: sampling rounds: (elapsed s, best energy, hits this round, rounds since gain, chains,
    #: chains ending at the best, calibrated chance of a better structure)
    search_trace: tuple[tuple, ...] = ()
    #: the 2D cross peaks given, tied to the lines (empty without a correlation table)
    correlations: tuple = ()

    @property
    def dbe(self) -> int:
        return self.formula.dbe


def prepare_peaks(formula: Formula, peaks_source, solvent: str | None) -> PeakList:
    """Read, clean (solvent lines) and check a peak list against the formula."""
    peaks = peaks_source if isinstance(peaks_source, PeakList) else read_peaks(peaks_source)
    if solvent:
        peaks = remove_solvent_lines(peaks, solvent)
    return check_against_formula(peaks, formula)


def _constraints(formula: Formula, peaks: PeakList, settings: SolveSettings) -> ConstraintSet:
    """The constraints a solve with these settings imposes."""
    return build_constraints(
        formula, peaks.peaks, allow_all=settings.allow_all, require=settings.require, forbid=settings.forbid,
        scaffold=settings.scaffold, max_rings=settings.max_rings, min_ring_size=settings.min_ring_size,
        max_ring_size=settings.max_ring_size, symmetry=settings.symmetry,
        environment_margin=settings.environment_margin,
    )


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
    progress: Callable[[str, int, float, float], None] | None = None,
    correlations=None,
) -> SolveResult:
    """Propose structures for a formula and a 13C peak list.

    The pipeline: prepare the lines (solvent, checks against the formula) ->
    constrain (:func:`_constraints`) -> search (:func:`elucidate.search.run_search`)
    -> rank (calibrated scores and probabilities) -> result.

    Parameters
    ----------
    formula : Formula or str
    peaks : PeakList, peak text or path to a peak file
    settings : SolveSettings, optional
    progress : callable(stage, structures_scored, elapsed_s, seconds_left), optional
        Called now and then while the search runs (at most twice a second).
    correlations : CorrelationTable, path or text, optional
        2D cross peaks (HSQC, HMBC, H2BC, COSY; :mod:`elucidate.spectrum.correlations`),
        tied to the lines within ``settings.match_1h``/``match_13c`` and
        scored as evidence in every search (:mod:`elucidate.constraints.correlations`).

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
    evidence = _evidence(correlations, peaks, settings)
    start = time.monotonic()
    cons = _constraints(formula, peaks, settings)
    library = _library(settings)
    rule = cons.rule
    prior = _structure_prior(rule, settings)
    problem = SearchProblem(
        formula=formula, peaks=peaks.peaks, valences=dict(settings.valences),
        charged_nitrogen=settings.charged_nitrogen, constraints=cons, prior=prior,
        time_limit=settings.time_limit, pool_size=_pool_size(settings), keep=settings.keep,
        workers=settings.workers, start=start, mode=settings.search, chains=settings.chains,
        progress=progress, library=library, evidence=evidence,
    )
    outcome = run_search(problem)

    if settings.rerank == "trees":
        ranked = refine_ranking(outcome.scored, peaks.peaks, prior, evidence, settings.keep,
                                model=_trees_model())
        calibration = load_calibration(data_file(TREES_CALIBRATION))
    else:
        ranked = sorted(outcome.scored, key=rank_key)[: settings.keep]
        calibration = load_calibration()
    status, cost_bound = outcome.status, outcome.cost_bound
    candidates = _finalise(ranked, settings.top, calibration, outcome.sources)
    margin = None
    if candidates and cost_bound is not None and rule is not None:
        margin = cost_bound - outcome.approximate_cost(candidates[0].smiles, rule)
    last = outcome.trace[-1] if outcome.trace else None
    sampling = (last.rounds_since_gain, last.total_hits) if last is not None else None
    listed = listed_chance(status, margin, formula.heavy_atoms, calibration, sampling) if candidates else 0.0
    candidates = [replace(c, probability=listed * c.probability) for c in candidates]
    warnings = list(peaks.warnings)
    if len(candidates) < min(settings.near_alternatives, settings.top):
        near = _near_alternatives(formula, peaks, settings, candidates, start, evidence)
        if near:
            proven = "meet" if status == "complete" else "were found that meet"
            warnings.append(
                f"only {len(candidates)} structure(s) {proven} every constraint; {len(near)} near alternative(s) "
                f"follow, each needing one stated assumption set aside (said beside it; not rated)")
        candidates = candidates + near
    if status != "complete" and candidates:
        if listed_is_calibrated(status, calibration):
            warnings.append(f"the list is not exhaustive; calibrated probability that the answer is not listed: "
                            f"{1.0 - listed:.2f}")
        else:
            warnings.append(f"the list is not exhaustive; probability that the answer is not listed: "
                            f"{1.0 - listed:.2f} ({listed_basis(status, calibration)})")
    if not candidates:
        warnings.append(empty_result_warning(status, settings.time_limit))
    return SolveResult(
        formula=formula,
        peaks=peaks,
        settings=settings,
        complete=status == "complete",
        completeness=(status, cost_bound),
        candidates_generated=outcome.examined,
        elapsed_s=time.monotonic() - start,
        warnings=tuple(warnings),
        candidates=tuple(candidates),
        constraint_log=tuple(outcome.log),
        unlisted_probability=1.0 - listed,
        unlisted_basis=listed_basis(status, calibration),
        search_how=how_sentence(outcome.strategies, outcome.ended, settings.time_limit),
        search_steps=tuple((r.name, r.structures, round(r.seconds, 3), r.note) for r in outcome.strategies),
        search_trace=tuple(tuple(t.as_list()) for t in outcome.trace),
        search_ended=outcome.ended,
        completeness_note=completeness_sentence(status, cost_bound, formula.carbons, settings.time_limit),
        assumptions=tuple(_assumptions(cons, settings, peaks)),
        reference_neighbours=tuple(_neighbours(peaks, formula, settings, library)),
        correlations=evidence.rows if evidence is not None else (),
    )


#: Calibration (score weights) for rankings re-scored with the learned trees.
TREES_CALIBRATION = "calibration_trees.json"


def _trees_model():
    model = load_default_model()
    if model.trees is None:
        raise InputError("--rerank trees needs the learned correction (shift_trees.npz), which is not "
                         "installed; rebuild it with `elucidate build-trees` or use --rerank table")
    return model


def refine_ranking(scored: Sequence[ScoredStructure], peaks, prior, evidence, keep: int,
                   model) -> list[ScoredStructure]:
    """The ``keep`` best structures of a search, re-scored with ``model``.

    Every search strategy scores with the fast environment table
    (:func:`elucidate.predict.model.load_search_model`); the structures it
    keeps are then scored again, in full, with ``model`` (the table
    corrected by the learned trees, :mod:`elucidate.predict.learned`) and
    ranked by that score.  Which structures are listed is the search's
    business; their order, assignments, uncertainties and probabilities
    come from the better predictor.
    """
    out = []
    for s in sorted(scored, key=rank_key)[:keep]:
        mol = Chem.MolFromSmiles(s.smiles)
        again = score_structure(s.smiles, mol, peaks, prior, smiles_written=False, evidence=evidence,
                                model=model) if mol is not None else None
        out.append(again if again is not None else s)
    return sorted(out, key=rank_key)


def _evidence(correlations, peaks: PeakList, settings: SolveSettings) -> CorrelationEvidence | None:
    """The 2D cross peaks tied to the observed lines, or None without any."""
    if correlations is None:
        return None
    if isinstance(correlations, CorrelationEvidence):
        return correlations
    from .spectrum.correlations import CorrelationTable, read_correlations

    table = correlations if isinstance(correlations, CorrelationTable) else read_correlations(correlations)
    return link_correlations(table, peaks.peaks, h_tolerance=settings.match_1h, c_tolerance=settings.match_13c)


_H_NAMES = ("C", "CH", "CH2", "CH3", "CH4")


def _near_alternatives(formula: Formula, peaks: PeakList, settings: SolveSettings,
                       listed: list[Candidate], start: float,
                       evidence: CorrelationEvidence | None = None) -> list[Candidate]:
    """Structures that fit if one stated assumption is set aside, to fill a
    short list up to ``settings.near_alternatives``.

    When the search proves (or finds) only a few structures that meet every
    constraint, a chemist still wants to see what comes next, above all in
    case a DEPT line was misread. The steps, each tried only while the list
    is short: (1) the DEPT multiplicities set aside (the shifts and the
    formula kept); (2) the shift-environment check set aside as well. Each
    alternative says which assumption it needs set aside and, for (1), the
    lines whose multiplicity it would change. They are ranked after every
    constrained candidate with probability 0 (the data as given exclude
    them), so the completeness statement and the listed-answer chance keep
    speaking of the constrained list alone. The extra searches share the
    time limit: together at most a quarter of it, never past it; only an
    exhaustive relaxed search contributes (so the list is deterministic).
    """
    wanted = min(settings.near_alternatives, settings.top) - len(listed)
    have = {c.smiles for c in listed}
    plain = PeakList(tuple(replace(p, hydrogens=None) for p in peaks.peaks), observe_mhz=peaks.observe_mhz)
    steps = []
    with_dept = any(p.hydrogens is not None for p in peaks.peaks)
    if with_dept:
        steps.append(("DEPT multiplicities set aside", plain, settings.environment_margin))
    if settings.environment_margin is not None:
        steps.append((("DEPT multiplicities and " if with_dept else "") + "the shift-environment check set aside",
                      plain, None))
    budget_end = min(start + settings.time_limit, time.monotonic() + 0.25 * settings.time_limit)
    out: list[Candidate] = []
    for label, step_peaks, margin in steps:
        left = budget_end - time.monotonic()
        need = wanted - len(out)
        if need <= 0 or left < 0.5:
            break
        # bounded search: no annealing, so the lab's libraries (read only for its seeds) are not needed
        relaxed = replace(settings, environment_margin=margin, solvent=None, time_limit=left,
                          near_alternatives=0, neighbours=0, libraries=(), search="bounded")
        result = solve(formula, step_peaks, relaxed, correlations=evidence)
        if result.completeness[0] != "complete":
            # only an exhaustive relaxed search gives the same alternatives on every run and machine
            break
        fresh = [c for c in result.candidates if c.smiles not in have]
        # a misread DEPT usually concerns one line: fewest changed lines first, then the relaxed ranking
        changes = [_multiplicity_changes(c, peaks) for c in fresh]
        for k in sorted(range(len(fresh)), key=lambda k: (len(changes[k]), k))[:need]:
            have.add(fresh[k].smiles)
            note = (": " + "; ".join(changes[k])) if changes[k] else ""
            out.append(replace(fresh[k], probability=0.0, set_aside=label + note))
    return out


def _multiplicity_changes(candidate: Candidate, peaks: PeakList) -> list[str]:
    """'line 3 (26.5 ppm) CH2, given CH3' for each line whose given
    multiplicity the candidate's carbons on it contradict."""
    hydrogens = {atom: h for atom, h, _shift, _sigma in candidate.predicted}
    on_line: dict[int, set[int]] = {}
    observed: dict[int, float] = {}
    for e in candidate.assignment:
        on_line.setdefault(e.peak_index, set()).update(hydrogens[a] for a in e.atoms if a in hydrogens)
        observed[e.peak_index] = e.observed
    changes = []
    for i in sorted(on_line):
        given = peaks.peaks[i].hydrogens
        found = sorted(on_line[i])
        if given is not None and found and found != [given]:
            names = " + ".join(_H_NAMES[h] for h in found)
            changes.append(f"line {i + 1} ({observed[i]:.1f} ppm) {names}, given {_H_NAMES[given]}")
    return changes


def _structure_prior(rule, settings: SolveSettings) -> StructurePrior | None:
    """The prior costs of a structure: environment rarity (needs the
    environment table) and plausibility (needs the plausibility table), each
    weighted as the settings say; None when neither applies."""
    rarity = plausibility = None
    if rule is not None and settings.prior_weight > 0:
        def rarity(mol, _t=rule.table, _w=settings.prior_weight):
            return _w * _t.mol_rarity(mol)
    if settings.plausibility_weight > 0:
        from .constraints.plausibility import load_plausibility_table

        table = load_plausibility_table()
        if table is not None:
            def plausibility(mol, _t=table, _w=settings.plausibility_weight):
                return _w * _t.cost(mol)
    if rarity is None and plausibility is None:
        return None
    return StructurePrior(rarity, plausibility)


def _assumptions(cons: ConstraintSet, settings: SolveSettings, peaks: PeakList) -> list[str]:
    return assumptions(
        overlap=settings.symmetry.overlap, split=settings.symmetry.split, allow_all=settings.allow_all,
        filter_names=[f.name for f in cons.filters if f.name.startswith("no ")],
        valences=dict(settings.valences), charged_nitrogen=settings.charged_nitrogen,
        environment_margin=settings.environment_margin if cons.rule is not None else None,
        require=settings.require, forbid=settings.forbid, scaffold=settings.scaffold,
        max_rings=settings.max_rings, min_ring_size=settings.min_ring_size, max_ring_size=settings.max_ring_size,
        multiplicities=peaks.has_multiplicities,
    )


def _library(settings: SolveSettings):
    """The reference library: the shipped index, plus the lab's own files."""
    if not settings.libraries:
        return None
    from .reference import load_reference_libraries

    return load_reference_libraries(settings.libraries, with_default=True)


def _neighbours(peaks: PeakList, formula: Formula, settings: SolveSettings, library) -> list[dict]:
    """The reference spectra most similar to the observed one."""
    if settings.neighbours <= 0:
        return []
    from .reference import nearest_spectra

    return [h.to_dict() for h in nearest_spectra(peaks, formula=formula, k=settings.neighbours, library=library)]


def _pool_size(settings: SolveSettings) -> int:
    """Structures fully scored in a steered search: about 30 % of the time
    limit at ~4 ms per structure, between 200 and 5000."""
    if settings.pool is not None:
        return settings.pool
    return int(min(5000, max(200, settings.time_limit * 0.3 / 0.004)))


def _finalise(ranked: Sequence[ScoredStructure], top: int, calibration: Calibration,
              sources: dict | None = None) -> list[Candidate]:
    """Candidates ordered by calibrated score, with their probabilities
    given that the answer is listed (rank/calibration.py)."""
    if not ranked:
        return []
    scores = calibrated_scores([s.fit_cost for s in ranked], [s.prior for s in ranked], calibration,
                               [s.plausibility for s in ranked])
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
        checks = tuple(replace(c, atoms=None if c.atoms is None else (pos[c.atoms[0]], pos[c.atoms[1]]))
                       for c in s.checks)
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
                fit_cost=round(s.fit_cost, 4),
                found_by=(sources or {}).get(s.smiles, ""),
                plausibility=round(s.plausibility, 4),
                correlations=checks,
                correlation_cost=round(s.correlation, 4),
            )
        )
    return out
