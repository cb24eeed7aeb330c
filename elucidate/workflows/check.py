"""Verify an expected structure against a 13C peak list.

``elucidate check`` answers the QC question "does this spectrum fit the
structure we expect?" in three steps:

1. **Assignment.**  The expected structure's shifts are predicted and the
   observed lines assigned to its carbons exactly as the ranking does
   (:func:`elucidate.pipeline.rank_structure`: min-cost flow over the
   Student-t error model, which generalises the Hungarian assignment,
   Kuhn 1955).  Every line gets its deviation ``observed - predicted`` and
   the standardised deviation ``z = deviation / sigma``.
2. **Absolute fit.**  Lines no carbon can explain, carbons that have no line
   of their own, and *gross* deviations are flagged.  A deviation is gross
   when its two-sided tail probability under the ranking's error model
   (Student-t with ``NU`` = 3 degrees of freedom, scale ``sigma``; the
   DP4-style model of Smith & Goodman, J. Am. Chem. Soc. 2010, 132, 12946,
   from memory) is below :data:`GROSS_TAIL` = 0.1 %.
3. **Alternatives.**  Isomers of the same formula are ranked on the same
   lines, nearest first: positional isomers of the expected structure (one
   or two substituents moved, :mod:`.regio`), then generated isomers that
   contain the expected structure's ring systems and linkers (its Murcko
   framework: Bemis & Murcko 1996, from memory), then the open formula,
   all within the time limit.  Alternatives must be at least as plausible
   as the expected structure (no implausible motif it lacks).  An isomer fits *clearly better* when the
   likelihood ratio to the expected structure is at least
   :data:`CLEARLY_BETTER_RATIO` (= 19, i.e. a pairwise posterior of 95 %
   with equal priors; ``delta_cost >= ln 19``).

Verdict (see ``docs/workflows.md`` for the justification):

* ``inconsistent`` — the formula differs from the structure's, the
  multiplicities cannot be matched at all, two or more gross deviations, or
  two or more lines no carbon explains;
* ``doubtful`` — one gross deviation, one unexplained line, two or more
  carbons without a line of their own, or an isomer fits clearly better;
* ``consistent`` — none of these.

A verdict is a hypothesis about agreement with a prediction, never a proof
of identity.
"""

from __future__ import annotations

import math
import time
from dataclasses import dataclass
from typing import Callable

from rdkit import Chem, rdBase
from rdkit.Chem import rdMolDescriptors

from ..errors import InputError
from ..formula import Formula, parse_formula
from ..rank.assignment import Assignment
from ..rank.likelihood import NU
from ..constraints.scaffold import murcko_scaffold

__all__ = [
    "PeakFit",
    "Alternative",
    "CheckResult",
    "check_structure",
    "check_to_dict",
    "render_check_text",
    "t_tail",
    "GROSS_TAIL",
    "GROSS_Z",
    "CLEARLY_BETTER_RATIO",
    "VERDICTS",
]

VERDICTS = ("consistent", "doubtful", "inconsistent")

#: Two-sided tail probability below which one line's deviation is gross.
GROSS_TAIL = 0.001
#: Likelihood ratio (alternative : expected) that counts as clearly better.
CLEARLY_BETTER_RATIO = 19.0
_SIGMA_FLOOR = 0.5  # as in elucidate.rank.likelihood


def t_tail(z: float, nu: float = NU) -> float:
    """Two-sided tail probability ``P(|T| > |z|)`` of a Student-t variable.

    Closed forms for ``nu`` = 1, 2, 3 (Abramowitz & Stegun 26.7.3, from
    memory); only these are needed here.

    Examples
    --------
    >>> round(t_tail(3.182), 3)   # the familiar 5 % point of t with 3 df
    0.05
    >>> t_tail(0.0)
    1.0
    """
    t = abs(float(z))
    if nu == 1:
        return 1.0 - 2.0 / math.pi * math.atan(t)
    if nu == 2:
        return 1.0 - t / math.sqrt(2.0 + t * t)
    if nu == 3:
        x = t / math.sqrt(3.0)
        return 1.0 - 2.0 / math.pi * (x / (1.0 + x * x) + math.atan(x))
    raise InputError(f"t_tail supports 1, 2 or 3 degrees of freedom, got {nu}")


def _t_quantile(tail: float, nu: float = NU) -> float:
    lo, hi = 0.0, 1e6
    for _ in range(200):
        mid = 0.5 * (lo + hi)
        if t_tail(mid, nu) > tail:
            lo = mid
        else:
            hi = mid
    return 0.5 * (lo + hi)


#: |z| beyond which a deviation is gross (12.92 for 3 degrees of freedom).
GROSS_Z = round(_t_quantile(GROSS_TAIL), 2)


@dataclass(frozen=True)
class PeakFit:
    """One observed line and what the expected structure puts under it.

    ``atoms`` index the expected SMILES as given; ``kind`` is ``primary``,
    ``overlap`` (a further carbon class under a line already taken),
    ``split`` (a second line of an equivalent set) or ``unexplained`` (no
    carbon of the structure fits this line).
    """

    peak_index: int
    observed: float
    multiplicity: str
    predicted: float | None
    sigma: float | None
    atoms: tuple[int, ...]
    kind: str
    deviation: float | None
    z: float | None
    flag: str | None  # "gross", "unexplained", "no own line" or None


@dataclass(frozen=True)
class Alternative:
    """An isomer that fits the lines better than the expected structure."""

    smiles: str
    cost: float
    delta_cost: float  # expected cost minus this cost (> 0 = fits better)
    pairwise_probability: float  # vs the expected structure, equal priors
    mae_ppm: float
    max_error_ppm: float
    same_scaffold: bool
    clearly_better: bool


@dataclass(frozen=True)
class CheckResult:
    """Everything ``elucidate check`` reports; serialise with :func:`check_to_dict`."""

    smiles: str
    canonical_smiles: str
    formula: Formula
    structure_formula: str
    peaks: object  # PeakList
    verdict: str
    reasons: tuple[str, ...]
    cost: float
    mae_ppm: float
    max_error_ppm: float
    gross: int
    unexplained: int
    no_own_line: int
    fits: tuple[PeakFit, ...]
    alternatives: tuple[Alternative, ...]
    scaffold: str | None
    searched: tuple[tuple[str, int, bool, float], ...]  # (stage, ranked, complete, seconds)
    search_complete: bool
    warnings: tuple[str, ...]
    elapsed_s: float


def _parse_structure(smiles) -> Chem.Mol:
    if isinstance(smiles, Chem.Mol):
        return Chem.Mol(smiles)
    if not isinstance(smiles, str) or not smiles.strip():
        raise InputError(f"--smiles needs the expected structure as SMILES, got {smiles!r}; "
                         "e.g. 'CC(=O)Oc1ccccc1C(=O)O'")
    with rdBase.BlockLogs():  # our one-line error replaces RDKit's parser log
        mol = Chem.MolFromSmiles(smiles.strip())
    if mol is None:
        raise InputError(f"could not parse the expected structure {smiles!r}; check brackets, "
                         "ring-closure digits and valences")
    if len(Chem.GetMolFrags(mol)) > 1:
        raise InputError(f"the expected structure {smiles!r} has several fragments (a '.' in the "
                         "SMILES); give one molecule (salts: the neutral parent)")
    if not any(a.GetSymbol() == "C" for a in mol.GetAtoms()):
        raise InputError(f"the expected structure {smiles!r} has no carbon; a 13C spectrum cannot verify it")
    return mol


def _canon(mol: Chem.Mol) -> str:
    return Chem.MolToSmiles(mol, isomericSmiles=False)


def _mol_formula(mol: Chem.Mol) -> str:
    if Chem.GetFormalCharge(mol) != 0:
        raise InputError("the expected structure carries a net charge; give the neutral molecule "
                         "(zwitterions and nitro groups are fine)")
    return rdMolDescriptors.CalcMolFormula(mol)


def _fits(assignment: Assignment, peaks) -> tuple[PeakFit, ...]:
    out = []
    by_line: dict[int, list] = {}
    for e in assignment.entries:
        by_line.setdefault(e.peak_index, []).append(e)
    for l, pk in enumerate(peaks):
        entries = by_line.get(l, [])
        if not entries:
            out.append(PeakFit(l, pk.shift, pk.multiplicity, None, None, (), "unexplained", None, None,
                               "unexplained"))
            continue
        for e in entries:
            dev = e.observed - e.predicted
            z = dev / max(e.sigma, _SIGMA_FLOOR)
            flag = None
            if t_tail(z) < GROSS_TAIL:
                flag = "gross"
            elif e.kind == "overlap":
                flag = "no own line"
            out.append(PeakFit(l, pk.shift, pk.multiplicity, round(e.predicted, 2), round(e.sigma, 2),
                               e.atoms, e.kind, round(dev, 2), round(z, 2), flag))
    return tuple(out)


def _plausibility_like(expected: Chem.Mol) -> Callable[[Chem.Mol], bool]:
    """Keep structures free of implausible motifs the expected structure lacks.

    Alternatives must be at least as plausible as the expected structure:
    every motif of :data:`~elucidate.constraints.structural.IMPLAUSIBLE_MOTIFS`
    (three- and four-membered rings, peroxides, enols, ...) is forbidden
    unless the expected structure has it too.
    """
    from ..constraints.structural import IMPLAUSIBLE_MOTIFS

    matchers = []
    for motif in IMPLAUSIBLE_MOTIFS:
        has = motif.matcher()
        if not has(expected):
            matchers.append(has)
    return lambda m: not any(has(m) for has in matchers)


def _search_alternatives(formula, peaks, expected: Chem.Mol, expected_cost: float, scaffold: str | None,
                         time_limit: float, keep: int, charged: bool, allow_all: bool,
                         progress: Callable[[str], None] | None):
    """Stages: positional isomers, same scaffold (generator + filter), open formula."""
    from ..pipeline import SolveSettings, rank_structure, solve
    from .regio import positional_isomers
    from ..constraints.scaffold import parse_scaffold

    canon_expected = _canon(expected)
    deadline = time.monotonic() + time_limit
    found: dict[str, tuple[Assignment, bool]] = {}
    log = []
    complete = True
    scaffold_q = parse_scaffold(scaffold) if scaffold else None
    plausible = (lambda m: True) if allow_all else _plausibility_like(expected)

    def consider(smi: str, mol: Chem.Mol | None = None) -> None:
        if smi == canon_expected or smi in found:
            return
        mol = mol if mol is not None else Chem.MolFromSmiles(smi)
        if mol is None or not plausible(mol):
            return
        assignment, _ = rank_structure(mol, peaks.peaks)
        if math.isinf(assignment.cost):
            return
        same = bool(scaffold_q is not None and mol.HasSubstructMatch(scaffold_q))
        found[smi] = (assignment, same)

    # 1. positional isomers of the expected structure (up to two moves)
    if parse_formula(_mol_formula(expected)).hill == formula.hill:
        if progress:
            progress("ranking positional isomers of the expected structure")
        t0 = time.monotonic()
        n = 0
        budget = 0.25 * time_limit
        for smi in positional_isomers(canon_expected, depth=2, time_limit=budget):
            n += 1
            consider(smi)
        spent = time.monotonic() - t0
        log.append(("positional isomers", n, spent < budget, round(spent, 2)))

    stages = []
    if scaffold:
        stages.append(("same scaffold", scaffold, 0.35 * time_limit))
    stages.append(("open formula", None, None))
    for name, scaf, budget in stages:
        left = deadline - time.monotonic()
        if left <= 0.05:
            log.append((name, 0, False, 0.0))
            complete = False
            continue
        budget = min(budget, left) if budget else left
        # near_alternatives=0: an alternative to the expected structure must fit the data as given
        settings = SolveSettings(scaffold=scaf, time_limit=budget, top=keep, keep=keep,
                                 charged_nitrogen=charged, allow_all=allow_all, near_alternatives=0)
        if progress:
            progress(f"searching isomers ({name}, up to {budget:.0f} s)")
        t0 = time.monotonic()
        result = solve(formula, peaks, settings)
        log.append((name, result.candidates_generated, result.complete, round(time.monotonic() - t0, 2)))
        if name == "open formula":
            complete = complete and result.complete
        for cand in result.candidates:
            consider(cand.smiles)
    alts = []
    for smi, (a, same) in found.items():
        delta = expected_cost - a.cost if math.isfinite(expected_cost) else math.inf
        if delta <= 0:
            continue
        prob = 1.0 if math.isinf(delta) else 1.0 / (1.0 + math.exp(-delta))
        alts.append(Alternative(smi, round(float(a.cost), 4),
                                round(float(delta), 4) if math.isfinite(delta) else math.inf,
                                round(prob, 4), round(a.mae, 2), round(a.max_error, 2), same,
                                bool(delta >= math.log(CLEARLY_BETTER_RATIO))))
    alts.sort(key=lambda x: (x.cost, x.smiles))
    return alts, tuple(log), complete


def check_structure(
    smiles,
    peaks,
    *,
    formula: Formula | str | None = None,
    solvent: str | None = None,
    time_limit: float = 30.0,
    alternatives: int = 5,
    search: bool = True,
    allow_all: bool = False,
    progress: Callable[[str], None] | None = None,
) -> CheckResult:
    """Check whether a 13C peak list fits an expected structure.

    Parameters
    ----------
    smiles : str or rdkit.Chem.Mol
        The expected structure; atom indices in the result follow it.
    peaks : PeakList, peak text or path to a peak file
    formula : Formula or str, optional
        Molecular formula from HRMS; defaults to the structure's own.  A
        different formula makes the verdict ``inconsistent`` and the search
        runs on the given formula.
    solvent : str, optional
        Deuterated solvent whose lines are dropped first.
    time_limit : float
        Seconds for the isomer search: positional isomers (up to a quarter),
        same scaffold (35 %), open formula (the rest).
    alternatives : int
        Largest number of better-fitting isomers listed.
    search : bool
        False skips the isomer search (verdict from the absolute fit only).
    allow_all : bool
        Let the search keep implausible motifs (as ``solve --allow-all``).
    progress : callable(str), optional
        Receives short status messages.

    Returns
    -------
    CheckResult
        With ``verdict`` one of :data:`VERDICTS` and the reasons for it.

    Examples
    --------
    >>> r = check_structure("CCC(C)=O", "209.3 C, 36.9 CH2, 29.4 CH3, 7.9 CH3", time_limit=5)
    >>> r.verdict, r.unexplained
    ('consistent', 0)
    """
    from ..pipeline import prepare_peaks, rank_structure

    if not (isinstance(time_limit, (int, float)) and time_limit > 0):
        raise InputError(f"--time-limit must be a positive number of seconds, got {time_limit!r}")
    if not isinstance(alternatives, int) or isinstance(alternatives, bool) or alternatives < 0:
        raise InputError(f"--alternatives must be zero or a positive whole number, got {alternatives!r}")
    start = time.monotonic()
    mol = _parse_structure(smiles)
    own_formula = parse_formula(_mol_formula(mol))
    reasons: list[str] = []
    if formula is None:
        formula = own_formula
    elif isinstance(formula, str):
        formula = parse_formula(formula)
    if formula.hill != own_formula.hill:
        reasons.append(f"formula {formula.hill} differs from the structure's {own_formula.hill}")
    peaks = prepare_peaks(formula, peaks, solvent)
    assignment, _ = rank_structure(mol, peaks.peaks)
    warnings = list(peaks.warnings)

    if math.isinf(assignment.cost):
        reasons.append("the multiplicities cannot be matched to the structure's carbons "
                       "(a carbon class has no line of its multiplicity)")
        fits = tuple(PeakFit(l, pk.shift, pk.multiplicity, None, None, (), "unexplained", None, None,
                             "unexplained") for l, pk in enumerate(peaks.peaks))
    else:
        fits = _fits(assignment, peaks.peaks)
    gross = sum(1 for f in fits if f.flag == "gross")
    unexplained = len(assignment.unfilled) if math.isfinite(assignment.cost) else len(peaks.peaks)
    no_own = sum(1 for f in fits if f.kind == "overlap")

    alts: list[Alternative] = []
    log: tuple = ()
    complete = False
    scaffold = murcko_scaffold(mol)
    if search:
        charged = any(a.GetFormalCharge() for a in mol.GetAtoms())
        alts, log, complete = _search_alternatives(
            formula, peaks, mol, assignment.cost, scaffold, float(time_limit), max(alternatives, 20) * 5,
            charged, allow_all, progress)
        if not complete:
            warnings.append(f"the isomer search stopped at the time limit ({time_limit:g} s); a better "
                            "fitting isomer may exist among those not reached")

    verdict = _verdict(reasons, gross, unexplained, no_own, alts, math.isinf(assignment.cost))
    clearly = [a for a in alts if a.clearly_better]
    if clearly:
        reasons.append(f"{len(clearly)} isomer(s) fit clearly better (likelihood ratio >= "
                       f"{CLEARLY_BETTER_RATIO:g}), best {clearly[0].smiles}")
    if gross:
        reasons.append(f"{gross} line(s) deviate grossly (|z| > {GROSS_Z:g})")
    if unexplained and math.isfinite(assignment.cost):
        reasons.append(f"{unexplained} line(s) explained by no carbon of the structure")
    if no_own >= 2:
        reasons.append(f"{no_own} carbon classes have no line of their own")
    if not reasons:
        reasons.append("every line is explained within the prediction's uncertainty"
                       + (" and no isomer found fits clearly better" if search else ""))
    return CheckResult(
        smiles=smiles if isinstance(smiles, str) else Chem.MolToSmiles(mol),
        canonical_smiles=_canon(mol),
        formula=formula,
        structure_formula=own_formula.hill,
        peaks=peaks,
        verdict=verdict,
        reasons=tuple(reasons),
        cost=round(assignment.cost, 4) if math.isfinite(assignment.cost) else math.inf,
        mae_ppm=assignment.mae,
        max_error_ppm=assignment.max_error,
        gross=gross,
        unexplained=unexplained,
        no_own_line=no_own,
        fits=fits,
        alternatives=tuple(alts[:alternatives]),
        scaffold=scaffold,
        searched=log,
        search_complete=complete,
        warnings=tuple(warnings),
        elapsed_s=time.monotonic() - start,
    )


def _verdict(reasons, gross, unexplained, no_own, alts, unassignable) -> str:
    if reasons or unassignable or gross >= 2 or unexplained >= 2:
        return "inconsistent"
    if gross == 1 or unexplained == 1 or no_own >= 2 or any(a.clearly_better for a in alts):
        return "doubtful"
    return "consistent"


def _num(x, nd=2):
    if x is None or (isinstance(x, float) and not math.isfinite(x)):
        return None
    return round(float(x), nd)


def check_to_dict(result: CheckResult) -> dict:
    """Plain-data (JSON) form of a :class:`CheckResult`.

    Keys: ``workflow`` ("check"), ``smiles``, ``formula``, ``verdict``,
    ``reasons``, ``fit`` (cost, MAE, largest deviation, counts of flagged
    lines), ``assignment`` (one entry per line and carbon class),
    ``alternatives`` (better-fitting isomers, best first), ``search``,
    ``warnings``, ``caution``.
    """
    from ..pipeline import CAUTION

    return {
        "workflow": "check",
        "smiles": result.smiles,
        "canonical_smiles": result.canonical_smiles,
        "formula": result.formula.hill,
        "structure_formula": result.structure_formula,
        "verdict": result.verdict,
        "reasons": list(result.reasons),
        "fit": {
            "cost": _num(result.cost, 4),
            "mae_ppm": _num(result.mae_ppm),
            "max_error_ppm": _num(result.max_error_ppm),
            "gross_deviations": result.gross,
            "unexplained_lines": result.unexplained,
            "carbons_without_own_line": result.no_own_line,
            "gross_z": GROSS_Z,
            "clearly_better_ratio": CLEARLY_BETTER_RATIO,
        },
        "peaks": result.peaks.to_records(),
        "assignment": [
            {
                "peak_index": f.peak_index,
                "observed": _num(f.observed),
                "multiplicity": f.multiplicity,
                "predicted": _num(f.predicted),
                "sigma": _num(f.sigma),
                "deviation": _num(f.deviation),
                "z": _num(f.z),
                "atoms": list(f.atoms),
                "kind": f.kind,
                "flag": f.flag,
            }
            for f in result.fits
        ],
        "alternatives": [
            {
                "rank": i + 1,
                "smiles": a.smiles,
                "cost": _num(a.cost, 4),
                "delta_cost": _num(a.delta_cost, 4),
                "pairwise_probability": _num(a.pairwise_probability, 4),
                "mae_ppm": _num(a.mae_ppm),
                "max_error_ppm": _num(a.max_error_ppm),
                "same_scaffold": a.same_scaffold,
                "clearly_better": a.clearly_better,
            }
            for i, a in enumerate(result.alternatives)
        ],
        "search": {
            "scaffold": result.scaffold,
            "complete": result.search_complete,
            "stages": [{"stage": s, "ranked": n, "complete": c, "seconds": t} for s, n, c, t in result.searched],
        },
        "warnings": list(result.warnings),
        "elapsed_s": _num(result.elapsed_s, 3),
        "caution": CAUTION,
    }


def render_check_text(data: dict) -> str:
    """Human-readable report of :func:`check_to_dict` output."""
    out = [f"Expected structure: {data['smiles']}  ({data['structure_formula']})",
           f"Verdict: {data['verdict'].upper()}  (a hypothesis, not an identification)"]
    for r in data["reasons"]:
        out.append(f"  - {r}")
    fit = data["fit"]
    if fit["cost"] is None:
        out.append("Fit: no assignment possible")
    else:
        out.append(f"Fit: MAE {fit['mae_ppm']} ppm, largest deviation {fit['max_error_ppm']} ppm, "
                   f"cost {fit['cost']}")
    out.append("")
    out.append(f"{'line':>5} {'obs':>8} {'mult':>4} {'pred':>8} {'dev':>7} {'z':>6}  atoms  note")
    for a in data["assignment"]:
        pred = "-" if a["predicted"] is None else f"{a['predicted']:.1f}"
        dev = "-" if a["deviation"] is None else f"{a['deviation']:+.1f}"
        z = "-" if a["z"] is None else f"{a['z']:+.1f}"
        atoms = ",".join(str(x) for x in a["atoms"]) or "-"
        note = a["flag"] or ("" if a["kind"] == "primary" else a["kind"])
        out.append(f"{a['peak_index'] + 1:>5} {a['observed']:>8.1f} {a['multiplicity']:>4} {pred:>8} "
                   f"{dev:>7} {z:>6}  {atoms:<6} {note}")
    out.append("")
    if data["alternatives"]:
        out.append("Isomers fitting better than the expected structure:")
        for a in data["alternatives"]:
            mark = "clearly better" if a["clearly_better"] else "slightly better"
            scaf = "same scaffold" if a["same_scaffold"] else "other scaffold"
            delta = "inf" if a["delta_cost"] is None else a["delta_cost"]
            out.append(f"  {a['rank']:>2}. {a['smiles']}  MAE {a['mae_ppm']} ppm, delta {delta}, "
                       f"p(pair) {a['pairwise_probability']}  [{mark}; {scaf}]")
    elif data["search"]["stages"]:
        out.append("No isomer found that fits better.")
    stages = ", ".join(f"{s['stage']}: {s['ranked']} ranked{'' if s['complete'] else ' (incomplete)'}"
                       for s in data["search"]["stages"])
    if stages:
        out.append(f"Search: {stages}")
    for w in data["warnings"]:
        out.append(f"warning: {w}")
    out.append(data["caution"])
    return "\n".join(out) + "\n"
